"""Fixtures for the editor's tests; the helpers themselves are in tests/support (support.tui, support.tmux)."""

import shutil

import pytest

from support.tmux import Tmux


@pytest.fixture
def tmux():
    """A private tmux server for one test; its sessions are killed afterwards."""
    assert shutil.which("tmux"), "tmux is needed for this test (apt-get install tmux)"
    server = Tmux()
    try:
        yield server
    finally:
        server.close()
