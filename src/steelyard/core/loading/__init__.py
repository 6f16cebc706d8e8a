"""How the vehicle is loaded: loadouts, tank CG tables, burn and drop sequences.

May import: core.document, core.physics, core's foundations.
"""
