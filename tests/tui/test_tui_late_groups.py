"""A big ledger's group rows come after the table's first paint (flows/file.LATE_GROUPS).

Reference: the fixture's own group paths as the stdlib tomllib reads them
(every group shows once as a group row); the order of rows is the table's
contract (docs/tui.md: group rows above their items, cursor starts on the first row).
"""

from __future__ import annotations

import tomllib

import steelyard.tui.flows.file as file_flows
from support.paths import TRAINER
from support.tui import copy_fixture, editor, settle


async def test_group_rows_follow_the_first_paint_and_the_cursor_stays_on_top(tmp_path, monkeypatch):
    monkeypatch.setattr(file_flows, "LATE_GROUPS", 1)  # the fixture counts as big
    path = copy_fixture(tmp_path)
    tops = {g.split("/")[0] for g in (it.get("group", "") for it in tomllib.loads(TRAINER.read_text())["item"]) if g}
    async with editor(path) as (app, pilot):
        await settle(pilot, app)
        table = app.main.table
        shown = {g.path for g in table.groups}
        assert tops <= shown  # every top-level group of the file has its row
        assert table.cursor == 0 and int(table.rows[0]) < 0  # the first row is a group row, and the cursor on it
        assert table.current_group is not None
