"""The ledger document: every table the file format defines, as frozen types.

May import: numpy and core's foundations (errors, units) and core.physics.
"""
