"""What the envelope chart draws besides the polygon: sequence paths and the CG uncertainty.

Both come from core and can take a while on a big ledger (a sequence path
is one roll-up pass plus the check of every state; tolerances are read item
by item), so `chart_extras` runs in a worker thread and the App hands the
result to the envelopes view. Pure: no widgets.

- Sequences: every `[[sequence]]` that starts from the active loadout, as
  `core.checks.check_ledger` checks it: the path of states and, per
  envelope, the state with the least margin (the chart's "worst step").
- Uncertainty: when items carry tolerances, the first-order covariance of
  [mass, x, y, z] (`core.uncertainty.propagate`) of the rows on board; the
  chart draws its 2σ ellipse (`io.report_control.uncertainty_region`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from steelyard.core.limits.checks import SequenceCheck, check_ledger
from steelyard.core.errors import SteelyardError
from steelyard.core.loading.loadout import State
from steelyard.core.document.model import Ledger
from steelyard.core.control.uncertainty import parse_tolerances, propagate
from steelyard.io.report.control import has_tolerances, uncertainty_region

#: the uncertainty region is this many standard deviations wide (holds 86.5 % of a 2-D normal)
REGION_SIGMAS = 2.0


@dataclass(frozen=True, eq=False)
class ChartExtras:
    """Sequences and uncertainty for one ledger under one loadout."""

    ledger: Ledger
    loadout: str | None
    sequences: tuple[SequenceCheck, ...] = ()
    sequence_error: str | None = None
    covariance: np.ndarray | None = None  # (4, 4) of [mass, x, y, z], SI
    sigma: np.ndarray | None = None  # (4,) standard deviations of [mass, x, y, z]
    uncertainty_error: str | None = None

    def worst_state(self, seq: SequenceCheck, envelope: str) -> int | None:
        """The path state with the least margin against `envelope` (None: it does not apply)."""
        for f in seq.findings:
            if f.kind == "envelope" and f.name == envelope and f.applies:
                return f.state
        return None

    def region(self, axis: str, cg: float, mass: float) -> np.ndarray | None:
        """The 2σ ellipse of (CG on `axis`, mass) around the current point, SI rows [cg, mass]."""
        if self.covariance is None or not (np.isfinite(cg) and np.isfinite(mass)):
            return None
        if not np.any(self.covariance):
            return None
        return uncertainty_region(self.covariance, cg, mass, axis, k=REGION_SIGMAS)


def _sequences(ledger: Ledger, loadout: str | None) -> tuple[tuple[SequenceCheck, ...], str | None]:
    if loadout is None or not ledger.sequences:
        return (), None
    try:
        report = check_ledger(ledger, loadout)
    except SteelyardError as exc:
        return (), str(exc)
    return tuple(report.sequences), None


def _uncertainty(ledger: Ledger, state: State | None):
    if state is None or not has_tolerances(ledger):
        return None, None, None
    try:
        ms, rs, _mb, _rb = parse_tolerances(ledger)
        off = ~(state.mass > 0)  # a row not on board carries no tolerance
        ms[off], rs[off] = 0.0, 0.0
        spread = propagate(state.mass, state.cg, ms, rs)
    except SteelyardError as exc:
        return None, None, str(exc)
    cov = spread.covariance
    return cov, np.sqrt(np.clip(np.diag(cov), 0.0, None)), None


def chart_extras(ledger: Ledger, loadout: str | None, state: State | None) -> ChartExtras:
    """Everything the chart adds for `ledger` under `loadout` (call in a worker thread)."""
    seqs, seq_error = _sequences(ledger, loadout)
    cov, sigma, unc_error = _uncertainty(ledger, state)
    return ChartExtras(ledger, loadout, seqs, seq_error, cov, sigma, unc_error)
