"""The editor opens an unchanged ledger from the read cache, and never saves from it.

A save after a cached open reads the file afresh and compares (io.ledger.file.confirmed_fresh):
the file written is the one a session without the cache writes. The reference for "the same
ledger" is the standard library's tomllib reading of the two saved files.
"""

from __future__ import annotations

import tomllib
from dataclasses import replace

from steelyard.io.ledger import cache, file as file_mod
from support.tui import answer_reason, copy_fixture, cursor_to, editor, settle


async def _duplicate_and_save(path) -> None:
    async with editor(path) as (app, pilot):
        await cursor_to(app, pilot, "wing-l")
        await pilot.press("d")  # duplicate: one change to save
        await settle(pilot, app)
        await pilot.press("ctrl+s")
        await answer_reason(app, pilot)
        await settle(pilot, app)
        return app.session.loaded


async def test_second_open_is_a_cache_hit_and_its_save_equals_an_uncached_one(tmp_path, monkeypatch):
    monkeypatch.delenv("STEELYARD_NO_CACHE", raising=False)
    cached_path = copy_fixture(tmp_path, name="cached.toml")
    plain_path = copy_fixture(tmp_path, name="plain.toml")
    assert file_mod.open_ledger(cached_path, cache=True).from_cache is False  # a miss: stores the entry
    async with editor(cached_path) as (app, pilot):
        assert app.session.loaded.from_cache  # the editor's read came from the cache
    loaded = await _duplicate_and_save(cached_path)
    assert loaded is not None and not loaded.from_cache  # after the save: the file's own reading
    monkeypatch.setenv("STEELYARD_NO_CACHE", "1")
    await _duplicate_and_save(plain_path)
    # the change log records who and when: compare what the two files say about items and tables
    cached_doc, plain_doc = (tomllib.loads(p.read_text()) for p in (cached_path, plain_path))
    assert cached_doc["item"] == plain_doc["item"]
    assert {k: v for k, v in cached_doc.items() if k != "change"} == \
        {k: v for k, v in plain_doc.items() if k != "change"}


async def test_a_cache_that_lies_is_caught_before_the_save_and_nothing_is_written(tmp_path, monkeypatch):
    monkeypatch.delenv("STEELYARD_NO_CACHE", raising=False)
    path = copy_fixture(tmp_path)
    before = path.read_bytes()
    real = cache.lookup

    def lying(*a, **kw):  # a hit whose ledger is not the file's: one item's mass doubled
        hit = real(*a, **kw)
        if hit is None:
            return None
        items = list(hit.ledger.items)
        items[0] = replace(items[0], mass=items[0].mass * 2)
        return replace(hit, ledger=hit.ledger.evolve(items=tuple(items)))

    file_mod.open_ledger(path, cache=True)  # store the entry
    monkeypatch.setattr(cache, "lookup", lying)
    async with editor(path) as (app, pilot):
        assert app.session.loaded.from_cache
        await cursor_to(app, pilot, "wing-l")
        await pilot.press("d")
        await settle(pilot, app)
        await pilot.press("ctrl+s")
        await answer_reason(app, pilot)
        notes: list[str] = []
        for _ in range(100):  # the save reads the file afresh in a worker first
            await pilot.pause(0.05)
            notes = [n.message for n in app._notifications]
            if notes:
                break
        assert any("read cache gave another ledger" in n and str(path) in n for n in notes), notes
        assert app.session.dirty  # the edit is still there, unsaved
    assert path.read_bytes() == before
