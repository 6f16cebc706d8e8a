"""Suite-wide set-up: the hypothesis profile, which tests are slow, how many workers.

Shared builders and helpers live in tests/support (imported as `support`);
fixtures used by many files live here.
"""

import os
from pathlib import Path

import pytest

from support.paths import FIXTURES

# The person's saved display units (io/user_settings.py) never reach the suite: a file that does
# not exist means the defaults. A test that wants settings points STEELYARD_SETTINGS at its own file.
os.environ["STEELYARD_SETTINGS"] = os.path.join(os.path.dirname(__file__), "support", "no-such-settings.toml")

# hypothesis: a fixed, CI-affordable profile; STEELYARD_FUZZ=release for long runs
try:
    from hypothesis import HealthCheck, settings

    settings.register_profile("ci", max_examples=100, deadline=None,
                              suppress_health_check=[HealthCheck.too_slow])
    settings.register_profile("release", max_examples=5000, deadline=None,
                              suppress_health_check=[HealthCheck.too_slow])
    settings.load_profile(os.environ.get("STEELYARD_FUZZ", "ci"))
except ImportError:  # pragma: no cover
    pass

# Modules whose hypothesis tests are fuzzing at scale (hundreds to thousands of
# generated files each): slow. Their fixed cases (known crashers) stay in the
# default run. Other slow tests carry @pytest.mark.slow in their own files.
FUZZ_MODULES = ("test_fuzz_valid.py", "test_fuzz_broken.py")


@pytest.hookimpl(tryfirst=True)
def pytest_collection_modifyitems(config, items):
    for item in items:
        if item.path.name in FUZZ_MODULES and getattr(getattr(item, "obj", None), "is_hypothesis_test", False):
            item.add_marker(pytest.mark.slow)


def _only_files_named(config) -> bool:
    """True when every path on the command line is a test file or test id, not a folder."""
    paths = [a.split("::")[0] for a in config.args]
    return bool(paths) and not any(Path(p).is_dir() for p in paths)


def _marker_given(config) -> bool:
    return any(a == "-m" or (a.startswith("-m") and not a.startswith("--")) for a in config.invocation_params.args)


def pytest_configure(config):
    """Named files run in full: addopts' `-m 'not slow'` is for runs of folders (the whole suite).

    `python3 -m pytest tests/test_atomic_kill.py` runs that slow test instead of
    deselecting it and exiting with 5; an explicit `-m` still decides.
    """
    if _only_files_named(config) and not _marker_given(config):
        config.option.markexpr = ""


def pytest_xdist_auto_num_workers(config):
    """`-n auto` (in addopts): all cores for a run of folders, one process for named test files.

    Starting workers costs more than it saves when a developer runs one file or
    one test, and the machine may be shared. PYTEST_XDIST_AUTO_NUM_WORKERS or an
    explicit `-n N` still decide.
    """
    if os.environ.get("PYTEST_XDIST_AUTO_NUM_WORKERS"):
        return None
    return 0 if _only_files_named(config) else None


def pytest_terminal_summary(terminalreporter, config):
    """Say so when slow tests were left out, so a green default run is not taken for the whole suite."""
    if config.getoption("markexpr") == "not slow" and not hasattr(config, "workerinput"):
        terminalreporter.write_line("slow tests (marked `slow`) were not run: `python3 -m pytest -m slow` runs them, "
                                    "`python3 -m pytest -m \"\"` runs everything")


@pytest.fixture
def fixtures_dir() -> Path:
    return FIXTURES


_CACHE_DIRS = iter(range(1 << 62))


@pytest.fixture(autouse=True)
def _ledger_cache_dir(tmp_path_factory, monkeypatch):
    """Each test has its own, empty read cache (io.ledger.cache): never the person's own cache folder,
    and never an entry another test left. The folder is made only if a read writes to it."""
    folder = tmp_path_factory.getbasetemp() / "ledger-cache" / str(next(_CACHE_DIRS))
    monkeypatch.setenv("STEELYARD_CACHE_DIR", str(folder))


@pytest.fixture
def alone_on_the_disk():
    """For a test that fsyncs in a storm: never beside a test of the real program in tmux (support.serial)."""
    from support.serial import one_at_a_time

    with one_at_a_time():
        yield
