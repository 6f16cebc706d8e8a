"""Mass-properties control: growth allowance and allocations, uncertainty, weighing.

May import: core.document, core.physics, core.loading, core's foundations.
"""
