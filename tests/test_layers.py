"""The layer boundary (DESIGN.md): imports point downward only.

core is pure (no textual, rich, file I/O); io may use core; neither may reach
the terminal layers. Two independent checks: what a fresh interpreter has in
sys.modules after importing every module of a subpackage (catches indirect
imports through third-party code), and the import statements themselves,
parsed with the standard library's ast over every file (catches imports that
only run inside functions).
"""

import ast
import pathlib

import pytest

import steelyard
from support.cli import run_headless, run_python

SRC = pathlib.Path(steelyard.__file__).resolve().parent

CORE_SUBPACKAGES = ["document", "physics", "loading", "limits", "control", "history", "assembly"]
IO_SUBPACKAGES = ["ledger", "durability", "exchange", "report", "vcs"]

# Prints how many steelyard modules it imported, then the terminal-stack modules sys.modules holds.
CODE = """
import sys, pkgutil, importlib
import steelyard.{pkg} as pkg
for m in pkgutil.walk_packages(pkg.__path__, "steelyard.{pkg}."):
    importlib.import_module(m.name)
mine = [n for n in sys.modules if n == "steelyard.{pkg}" or n.startswith("steelyard.{pkg}.")]
bad = sorted(n for n in sys.modules if n.split(".")[0] in ("textual", "rich"))
print(len(mine))
print(",".join(bad))
"""


def _terminal_modules(pkg: str) -> tuple[int, list[str]]:
    """In a fresh interpreter: (steelyard modules imported under pkg, textual/rich modules loaded)."""
    rc, out, err = run_python(CODE.format(pkg=pkg))
    assert rc == 0, err
    count, bad = out.splitlines()
    return int(count), [n for n in bad.split(",") if n]


@pytest.mark.parametrize("pkg", ["core", "io"])
def test_core_and_io_do_not_import_textual_or_rich(pkg):
    """Neither imports Textual; rich only in io.report (reports and the trend chart are rich text),
    which the per-subpackage tests below hold to that."""
    _count, bad = _terminal_modules(pkg)
    if pkg == "io":
        bad = [n for n in bad if n.split(".")[0] != "rich"]
    assert bad == []


@pytest.mark.parametrize("sub", CORE_SUBPACKAGES)
def test_each_core_subpackage_imports_neither_textual_nor_rich(sub):
    count, bad = _terminal_modules(f"core.{sub}")
    assert count >= 2, "the subpackage and at least one module in it were imported"
    assert bad == []


@pytest.mark.parametrize("sub", IO_SUBPACKAGES)
def test_each_io_subpackage_imports_no_textual_and_rich_only_for_reports(sub):
    count, bad = _terminal_modules(f"io.{sub}")
    assert count >= 2, "the subpackage and at least one module in it were imported"
    assert not [n for n in bad if n.split(".")[0] == "textual"]
    if sub != "report":  # io/__init__.py: rich only in report rendering
        assert bad == []


def test_the_subpackage_lists_cover_every_subpackage():
    # a new subpackage must be added to the lists above, or it would go unchecked
    for layer, listed in (("core", CORE_SUBPACKAGES), ("io", IO_SUBPACKAGES)):
        found = sorted(p.parent.name for p in (SRC / layer).glob("*/__init__.py"))
        assert found == sorted(listed), layer


# --------------------------------------------------------------------------- import statements


def imported_names(path: pathlib.Path, text: str | None = None) -> list[str]:
    """Every module a file imports: import statements anywhere in it (relative ones resolved against
    its package) and constant names given to importlib.import_module / __import__.
    `text` stands in for the file's content (the file need not exist then)."""
    tree = ast.parse(path.read_text() if text is None else text, filename=str(path))
    package = ".".join(path.relative_to(SRC.parent).with_suffix("").parts)
    if path.name != "__init__.py":
        package = package.rsplit(".", 1)[0]
    names = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            names += [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - node.level + 1]
                module = ".".join(base + ([node.module] if node.module else []))
            else:
                module = node.module or ""
            names.append(module)
            names += [f"{module}.{a.name}" for a in node.names]  # `from steelyard import tui`
        elif isinstance(node, ast.Call) and node.args and isinstance(node.args[0], ast.Constant):
            func = node.func
            called = func.attr if isinstance(func, ast.Attribute) else getattr(func, "id", "")
            if called in ("import_module", "__import__") and isinstance(node.args[0].value, str):
                names.append(node.args[0].value)
    return names


def _reaches(name: str, layers: tuple[str, ...]) -> bool:
    return any(name == f"steelyard.{layer}" or name.startswith(f"steelyard.{layer}.") for layer in layers)


@pytest.mark.parametrize("layer, forbidden", [("core", ("io", "tui", "cli")), ("io", ("tui", "cli"))])
def test_imports_point_downward_only(layer, forbidden):
    files = sorted((SRC / layer).rglob("*.py"))
    assert len(files) > 10  # the layer is there to be checked
    wrong = [f"{p.relative_to(SRC)} imports {name}" for p in files for name in imported_names(p)
             if _reaches(name, forbidden)]
    assert wrong == []


@pytest.mark.parametrize("statement, layer", [
    ("import steelyard.tui.app", "tui"),
    ("from steelyard.cli import main", "cli"),
    ("from steelyard import io", "io"),
    ("from ...tui import app", "tui"),  # relative, from core/physics: steelyard.tui
    ("def f():\n    import steelyard.io.ledger.read", "io"),  # only runs when called
    ("import importlib\nimportlib.import_module('steelyard.cli.main')", "cli"),
])
def test_the_import_parser_sees_every_form(statement, layer):
    # the check above must be able to fail: each form of importing a higher layer is seen
    probe = SRC / "core" / "physics" / "probe.py"  # never written: the text stands in for it
    assert any(_reaches(n, (layer,)) for n in imported_names(probe, statement))
    assert not any(_reaches(n, ("tui", "cli", "io")) for n in imported_names(probe, "from ..units import ureg"))


# --------------------------------------------------------------------------- file access and the CLI


def test_core_does_no_file_io():
    # common practice for a pure core: no open()/pathlib/os file access in core modules
    for path in (SRC / "core").rglob("*.py"):
        text = path.read_text()
        for banned in ("open(", "import pathlib", "from pathlib", "import os\n", "import tomllib", "import json"):
            assert banned not in text, f"{path.name} uses {banned!r}"


def test_headless_rollup_does_not_import_textual(tmp_path):
    from steelyard.io.ledger.demo import demo_path

    rc, _, err = run_headless("rollup", demo_path(), "--json")
    assert rc == 0, err
    assert err.strip().endswith("CLEAN")
