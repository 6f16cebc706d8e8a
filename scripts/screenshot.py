"""Regenerate docs/screenshot.svg: the editor's main screen, exported by the app itself.

Runs the editor headless on the bundled demo at 100x32 with the "takeoff"
loadout, lets it settle, and calls the App's own `save_screenshot`.

Run: python scripts/screenshot.py [OUT.svg] [--size 80x24]
"""

from __future__ import annotations

import argparse
import asyncio
from pathlib import Path

from steelyard.tui.app import SteelyardApp

ROOT = Path(__file__).resolve().parents[1]


async def shoot(out: Path, size: tuple[int, int], loadout: str | None, ledger: str | None = None) -> Path:
    app = SteelyardApp(ledger)
    async with app.run_test(size=size) as pilot:
        while app.session is None:
            await pilot.pause(0.05)
        if loadout is not None:
            app.session.set_loadout(loadout)
            app.refresh_views()
        await app.workers.wait_for_complete()
        await pilot.pause(0.2)
        app.clear_notifications()
        await pilot.pause(0.1)
        app.save_screenshot(filename=out.name, path=str(out.parent))
    return out


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("out", nargs="?", default=str(ROOT / "docs" / "screenshot.svg"))
    p.add_argument("--size", default="100x32", help="columns x rows (default 100x32)")
    p.add_argument("--loadout", default="takeoff", help="loadout to show (default takeoff; '' for none)")
    p.add_argument("--ledger", help="a ledger file instead of the bundled demo")
    args = p.parse_args(argv)
    cols, rows = (int(v) for v in args.size.lower().split("x"))
    out = asyncio.run(shoot(Path(args.out), (cols, rows), args.loadout or None, args.ledger))
    print(f"wrote {out}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
