"""Fixtures for the editor's tests; the helpers themselves are in tests/support (support.tui, support.tmux)."""

import shutil

import pytest

from support.serial import one_at_a_time
from support.tmux import Tmux


@pytest.fixture
def tmux():
    """A private tmux server for one test; its sessions are killed afterwards. Never beside another
    such test or an fsync storm (support.serial): the real program's answers would come late."""
    assert shutil.which("tmux"), "tmux is needed for this test (apt-get install tmux)"
    with one_at_a_time():
        server = Tmux()
        try:
            yield server
        finally:
            server.close()
