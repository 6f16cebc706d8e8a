"""Every sub-command answers to the name its help lists (a hyphenated name included).

`steelyard NAME --help` must reach the command: a bare `steelyard git-setup`
once fell through to "open this file" because module names use "_" and
command names "-".
"""

from __future__ import annotations

import pytest

from steelyard.cli.main import _commands, _names
from support.cli import run_cli

NAMES = [mod.NAME for mod in _commands()]


def test_the_name_set_matches_the_command_modules():
    assert set(NAMES) == _names()


@pytest.mark.parametrize("name", NAMES)
def test_each_command_answers_to_its_name(name):
    rc, out, err = run_cli(name, "--help")
    assert rc == 0 and out.startswith("usage: steelyard " + name), (rc, out[:80], err)
