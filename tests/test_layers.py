"""The layer boundary (DESIGN.md): core and io never pull in the terminal stack."""

import subprocess
import sys

import pytest

CODE = """
import sys, pkgutil, importlib
import steelyard.{pkg} as pkg
for m in pkgutil.walk_packages(pkg.__path__, "steelyard.{pkg}."):
    importlib.import_module(m.name)
bad = sorted(n for n in sys.modules if n.split(".")[0] in ("textual", "rich"))
print(",".join(bad))
"""


@pytest.mark.parametrize("pkg", ["core", "io"])
def test_core_and_io_do_not_import_textual_or_rich(pkg):
    out = subprocess.run([sys.executable, "-c", CODE.format(pkg=pkg)], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


def test_core_does_no_file_io():
    # common practice for a pure core: no open()/pathlib/os file access in core modules
    import pathlib

    import steelyard.core as core

    for path in pathlib.Path(core.__path__[0]).rglob("*.py"):
        text = path.read_text()
        for banned in ("open(", "import pathlib", "from pathlib", "import os\n", "import tomllib", "import json"):
            assert banned not in text, f"{path.name} uses {banned!r}"


def test_headless_rollup_does_not_import_textual(tmp_path):
    code = ("import sys; from steelyard.cli.main import main; "
            "rc = main(['rollup', sys.argv[1], '--json']); "
            "print('TEXTUAL' if 'textual' in sys.modules else 'CLEAN', file=sys.stderr); sys.exit(rc)")
    from steelyard.io.ledger.demo import demo_path

    out = subprocess.run([sys.executable, "-c", code, str(demo_path())], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr
    assert out.stderr.strip().endswith("CLEAN")
