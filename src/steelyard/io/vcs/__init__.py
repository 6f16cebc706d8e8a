"""Reading ledgers as committed in git: `FILE@REV` and a file's history.

Git is run as a program (never through a shell): `git -C <folder>` with
explicit arguments, LC_ALL=C and a timeout, every failure one
`SteelyardError` line naming what the user typed. `git.py` runs it,
`revision.py` parses `FILE@REV` and reads one file at one commit (a
`Revision` can name another file at the same commit, for assemblies),
`history.py` lists the commits that changed some paths and reads many blobs
through one `git cat-file --batch`, and `ledger_at.py` turns those bytes into
ledgers with the same strict reader as a file on disk. Nothing here writes.
"""
