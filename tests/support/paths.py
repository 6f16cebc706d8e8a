"""Where the repository's shipped files are."""

from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
FIXTURES = ROOT / "fixtures"
TRAINER = FIXTURES / "trainer.toml"
DEMO = ROOT / "src" / "steelyard" / "demo" / "demo.toml"
