"""Mass properties: inertia tensor algebra, rotations, shapes, the roll-up, group subtotals.

May import: numpy, core's foundations, core.document.
"""
