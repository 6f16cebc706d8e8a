import os
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = ROOT / "fixtures"

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


@pytest.fixture
def fixtures_dir() -> Path:
    return FIXTURES
