"""The ledger table's id, name and group widths: measured once per ledger, in the load worker.

Reference: the longest id, name and group of the file as the stdlib tomllib
reads it (a missing name or group is empty), and, after an edit, of the
edited items as this test builds them.
"""

from __future__ import annotations

import sys
import tomllib
from pathlib import Path

from steelyard.io.ledger.file import open_ledger
from steelyard.tui.widgets import ledger_table
from steelyard.tui.widgets.ledger_table import widest_texts
from support.paths import FIXTURES
from support.tui import copy_fixture, editor, settle

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "perf"))
from make_ledger import ledger_text  # noqa: E402


def _longest(items: list[dict]) -> tuple[int, int, int]:
    return (max(len(it["id"]) for it in items), max(len(it.get("name", "")) for it in items),
            max(len(it.get("group", "")) for it in items))


def test_widest_texts_match_the_file(tmp_path):
    files = [FIXTURES / "trainer.toml", FIXTURES / "cargo-drone.toml", tmp_path / "gen.toml"]
    files[-1].write_text(ledger_text(800, seed=4))
    for path in files:
        items = open_ledger(path, cache=False).ledger.items
        assert widest_texts(items) == _longest(tomllib.loads(path.read_text())["item"]), path.name
    assert widest_texts(()) == (2, 4, 5)  # no items: the headings' own widths


async def test_the_table_measures_a_ledger_once_and_again_after_an_edit(tmp_path, monkeypatch):
    calls = []
    real = ledger_table.widest_texts

    def counted(items):
        calls.append(items)
        return real(items)

    path = copy_fixture(tmp_path, FIXTURES / "cargo-drone.toml")
    async with editor(path, size=(120, 40)) as (app, pilot):
        await settle(pilot, app)
        table = app.main.table
        monkeypatch.setattr(ledger_table, "widest_texts", counted)
        table.refresh(layout=True)
        await settle(pilot, app)
        assert calls == []  # the ledger's widths are already known
        ledger = app.session.ledger
        item = ledger.items[3]
        longer = "x" * (_longest(tomllib.loads(path.read_text())["item"])[1] + 7)
        app._apply(ledger.with_item(item.evolve(name=longer)), action="edit", item=item.id, summary="longer name")
        await settle(pilot, app)
        assert table._text_widths()[1] == len(longer)  # the new items were measured: the name column follows
        assert calls and calls[-1] is app.session.ledger.items
