"""Files: TOML in and out, durability (atomic save, lock, journal), exchange formats, reports.

May import core; never textual. Rich only in report rendering (a test pins what io may pull in).
"""
