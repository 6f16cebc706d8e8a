"""A ledger read at a revision is still this ledger: no derived output may replace its working copy.

`steelyard export f.toml@HEAD --json f.toml` once replaced the working ledger
with JSON (the guard compared the output with the literal text "f.toml@HEAD").
"""

from __future__ import annotations

import hashlib

from support.cli import run_cli
from support.git_repo import commit, init_repo

TEXT = 'steelyard = 1\n[[item]]\nid = "a"\nmass = 1.0\ncg = [0.0, 0.0, 0.0]\n'


def test_export_of_a_revision_refuses_to_replace_the_working_ledger(tmp_path):
    repo = init_repo(tmp_path / "r")
    commit(repo, {"f.toml": TEXT}, "one", "2026-01-01T00:00:00+00:00")
    f = repo / "f.toml"
    before = hashlib.sha256(f.read_bytes()).hexdigest()
    for fmt in ("--json", "--csv"):
        rc, out, err = run_cli("export", f"{f}@HEAD", fmt, f)
        assert rc == 2 and len(err.strip().splitlines()) == 1 and "input" in err, (rc, err)
    assert hashlib.sha256(f.read_bytes()).hexdigest() == before  # untouched, byte for byte
    rc, out, err = run_cli("export", f"{f}@HEAD", "--json", repo / "out.json")
    assert rc == 0, err  # elsewhere it works
