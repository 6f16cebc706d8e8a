"""The editor tests share `tui_helpers` (pytest runs with --import-mode=importlib,
which does not put test folders on sys.path, so this folder is added here)."""

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
