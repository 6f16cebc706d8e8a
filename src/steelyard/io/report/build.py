"""The review report: everything a reviewer needs about a ledger, gathered once.

`build_report` collects the figures (weight statement by group, basic vs
predicted, each chosen loadout against each envelope, the envelope charts as
text, sequences, the change log since a baseline, a weighing if the ledger
has one, its mass history when it is in git) into a `Report`; `report_html`
and `report_md` only lay it out, so both formats always say the same thing. Numbers stay SI here; the renderers
convert with the report's display units.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np

from steelyard.core.caution import CAUTION
from steelyard.core.display import AXIS_NAMES, DisplayUnits, pretty_unit
from steelyard.core.errors import SteelyardError
from steelyard.core.physics.groups import GroupTotal, subtotals
from steelyard.core.control.growth import growth_fractions
from steelyard.core.loading.loadout import resolve
from steelyard.core.document.model import Ledger
from steelyard.core.physics.rollup import MassProperties, check_finite_rollup, rollup_state
from steelyard.core.limits.checks import StateCheck, check_rollup
from steelyard.core.limits.envelope import evaluate
from steelyard.core.limits.status import AXIS_INDEX, EnvelopeResult, envelope_results
from steelyard.io.report.chart import MARKS, text_chart
from steelyard.io.report.text import clean
from steelyard.io.report.control import DEFAULT_SAMPLES, DEFAULT_SEED, control_record, has_growth, uncertainty_region
from steelyard.io.report.weighing import weigh_ledger, weighing_record
from steelyard.io.report.trend import trend_section

#: items listed one by one up to this many; past it the report says how many it left out
ITEM_ROWS = 2000
#: uncertainty regions on the charts are k-sigma ellipses (86.5 % under the normal approximation)
REGION_SIGMA = 2.0
#: a sequence path is drawn through at most about this many of its states
CHART_PATH_POINTS = 2000
PATH_MARKS = "abcdefghjkmnpqrstuvwxyz"


@dataclass(frozen=True)
class LoadoutResult:
    name: str | None
    label: str
    mark: str
    mp: MassProperties
    envelopes: list[EnvelopeResult]
    control: dict  # control_record of this loading ({} without growth, allocations, tolerances)
    check: StateCheck | None = None  # envelopes and [[limit]]s against this state, scoped as `check` scopes them

    def monte_carlo(self, envelope: str) -> dict | None:
        mc = (self.control.get("uncertainty") or {}).get("monte_carlo")
        return next((e for e in mc["envelopes"] if e["name"] == envelope), None) if mc else None


@dataclass(frozen=True)
class Chart:
    envelope: str
    axis: str
    lines: list[str]  # the chart as text (Markdown shows it under the picture)
    legend: list[tuple[str, str]]  # (mark, text)
    # the same figures as numbers, display units, for the vector chart (io.report.svg_envelope)
    polygon: np.ndarray = field(default_factory=lambda: np.zeros((0, 2)))  # (k, 2) [cg, mass]
    points: tuple = ()  # (mark, label, cg, mass, inside) per loading
    regions: tuple = ()  # (k, 2) uncertainty outlines
    paths: tuple = ()  # (mark, name, loadout, (n, 2) rows) per sequence
    x_label: str = "CG"
    y_label: str = "mass"


@dataclass(frozen=True)
class Report:
    source: str
    generated: str
    units: DisplayUnits
    ledger: Ledger
    empty: MassProperties  # variable items empty: the basis of the weight statement
    groups: list[GroupTotal]
    control: dict
    loadouts: list[LoadoutResult]
    charts: list[Chart]
    sequences: dict  # {"names": [...], "note": str | None, "rows": [...], "paths": [core.sequence.Path]}
    changes: list[dict]
    since: str | None
    weighing: dict | None
    caution: str = CAUTION
    items_left_out: int = 0
    fractions: np.ndarray = field(default_factory=lambda: np.zeros(0))
    trend: object | None = None  # core.history.trend.Trend: the ledger's history in git, if it has one


def parse_time(text: str, *, what: str = "--since") -> dt.datetime:
    """An ISO 8601 date or date-time as an aware UTC time (a time without zone is taken as UTC)."""
    try:
        value = dt.datetime.fromisoformat(str(text).strip())
    except ValueError:
        raise SteelyardError(f"cannot read {text!r} as a date or time (e.g. 2026-03-01 or "
                             "2026-03-01T14:30Z)", field=what) from None
    return _utc(value)


def _utc(value) -> dt.datetime:
    if isinstance(value, dt.datetime):
        return value.replace(tzinfo=dt.timezone.utc) if value.tzinfo is None else value.astimezone(dt.timezone.utc)
    if isinstance(value, dt.date):
        return dt.datetime(value.year, value.month, value.day, tzinfo=dt.timezone.utc)
    return parse_time(str(value), what="time")


def changes_since(ledger: Ledger, since: dt.datetime | None) -> list[dict]:
    """Change-log entries (file order) at or after `since`; an unreadable time is kept, marked."""
    out = []
    for entry in ledger.changes:
        if not isinstance(entry, dict):
            continue
        row = {k: entry.get(k) for k in ("time", "author", "action", "item", "summary", "reason", "request")}
        try:
            when = _utc(entry.get("time")) if entry.get("time") is not None else None
        except SteelyardError:
            when = None
        if since is not None and when is not None and when < since:
            continue
        row["time_readable"] = when is not None
        out.append(row)
    return out


def _state_label(path, i: int) -> str:
    """Where along a sequence state i lies: "start", or its step's label (and progress of a burn)."""
    if i == 0 or path.step[i] == 0:
        return "start"
    step = path.steps[int(path.step[i]) - 1]
    done = float(path.progress[i])
    return step.label if step.kind != "burn" or done >= 1.0 else f"{step.label} ({100 * done:.0f} %)"


def _sequence_api():
    """(sequence_specs, sequence_path, check_finite_path): imported here, where a report needs them."""
    from steelyard.core.limits.checks import check_finite_path
    from steelyard.core.loading.sequence import sequence_specs
    from steelyard.core.loading.sequence_path import sequence_path

    return sequence_specs, sequence_path, check_finite_path


def _sequences(ledger: Ledger) -> dict:
    """Each sequence against each envelope: states outside, least margin and where it falls."""
    if not ledger.sequences:
        return {"names": [], "note": None, "rows": [], "paths": []}
    api = _sequence_api()
    specs, sequence_path, check_finite_path = api
    rows, paths = [], []
    for spec in specs(ledger):
        path = sequence_path(ledger, spec.name)
        check_finite_path(ledger, path)
        paths.append(path)
        for env in ledger.envelopes:
            st = evaluate(env.array, path.cg[:, AXIS_INDEX[env.axis]], path.mass)
            margin = np.where(np.isfinite(st.margin), st.margin, -np.inf)
            least = int(np.argmin(margin))
            outside = ~st.inside
            rows.append({"sequence": spec.name, "loadout": spec.loadout, "states": len(path),
                         "envelope": env.name, "axis": env.axis, "outside": int(outside.sum()),
                         "least_margin_m": float(margin[least]) if np.isfinite(margin[least]) else None,
                         "least_at": _state_label(path, least),
                         "first_outside_at": _state_label(path, int(np.argmax(outside))) if outside.any() else None,
                         "end_mass_kg": float(path.mass[-1]), "end_cg_m": path.cg[-1].tolist()})
    return {"names": [p.name for p in paths], "note": None, "rows": rows, "paths": paths}


def _result(ledger: Ledger, name: str | None, mark: str, samples: int, seed: int) -> LoadoutResult:
    state = resolve(ledger, name)
    mp = rollup_state(state)
    label = name if name is not None else "(variable items empty)"
    return LoadoutResult(name, label, mark, mp, envelope_results(ledger, mp),
                         control_record(ledger, state, samples=samples, seed=seed), check_rollup(ledger, name, mp))


def _chart(ledger: Ledger, env, results: list[LoadoutResult], du: DisplayUnits, sequences=()) -> Chart:
    k = "xyz".index(env.axis)
    poly = np.column_stack([du.l(env.array[:, 0]), du.m(env.array[:, 1])])
    points, regions, legend = [], [], []
    for r in results:
        status = next(e for e in r.envelopes if e.name == env.name)
        points.append((r.mark, du.l(r.mp.cg[k]), du.m(r.mp.mass)))
        cov = (r.control.get("uncertainty") or {}).get("covariance")
        if cov is not None and r.mp.mass > 0:
            reg = uncertainty_region(cov, r.mp.cg[k], r.mp.mass, env.axis, REGION_SIGMA)
            regions.append(np.column_stack([du.l(reg[:, 0]), du.m(reg[:, 1])]))
        out = r.check is not None and any(f.kind == "envelope" and f.name == env.name and not f.applies
                                          for f in r.check.findings)
        legend.append((r.mark, f"{r.label}: {'does not apply' if out else 'inside' if status.inside else 'OUTSIDE'}"))
    if regions:
        legend.append(("┄", f"{REGION_SIGMA:g}-sigma uncertainty region of each loading (normal approximation)"))
    paths, ends = [], []
    for j, path in enumerate(sequences):
        mark = PATH_MARKS[j % len(PATH_MARKS)]
        step = max(1, len(path) // CHART_PATH_POINTS)
        keep = np.r_[np.arange(0, len(path), step), len(path) - 1]
        paths.append(np.column_stack([du.l(path.cg[keep, k]), du.m(path.mass[keep])]))
        ends.append((mark, du.l(path.cg[-1, k]), du.m(path.mass[-1])))
        legend.append((mark, f"end of sequence {path.name!r}; the dotted line is its path from loadout "
                             f"{path.loadout!r}"))
    axis_word = f"CG {AXIS_NAMES[k]} (+{ledger.frame.direction(k)}) [{pretty_unit(du.length)}]"
    # loadings drawn last: where a sequence ends on a loading, the loading's mark shows
    y_word = f"mass [{pretty_unit(du.mass)}]"
    lines = text_chart(poly, ends + points, regions, paths, x_label=axis_word, y_label=y_word)
    loadings = tuple((r.mark, r.label, x, w, next(e for e in r.envelopes if e.name == env.name).inside)
                     for r, (_m, x, w) in zip(results, points))
    runs = tuple((m, p.name, p.loadout, rows) for (m, _x, _w), p, rows in zip(ends, sequences, paths))
    return Chart(env.name, env.axis, lines, [(m, clean(t)) for m, t in legend], poly, loadings, tuple(regions),
                 runs, axis_word, y_word)


def build_report(ledger: Ledger, *, source: str, loadouts: list[str | None], system: str | None = None,
                 since: dt.datetime | None = None, samples: int = DEFAULT_SAMPLES,
                 seed: int = DEFAULT_SEED, now: dt.datetime | None = None) -> Report:
    """All figures of the report. `loadouts`: names, None for the vehicle with variable items empty."""
    du = DisplayUnits.choose(ledger.units, system)
    empty_state = resolve(ledger, None)
    empty = rollup_state(empty_state)
    try:
        check_finite_rollup(empty, ledger)  # before the subtotals: figures beyond a float are one error line
    except SteelyardError as exc:
        raise exc.located(file=source)
    groups = subtotals([it.group for it in ledger.items], empty_state.mass, empty_state.cg, empty_state.own)
    try:
        results = [_result(ledger, name, MARKS[k % len(MARKS)], samples, seed) for k, name in enumerate(loadouts)]
        control = control_record(ledger, empty_state, samples=0)
        sequences = _sequences(ledger)
        charts = ([_chart(ledger, env, results, du, sequences["paths"]) for env in ledger.envelopes]
                  if results or sequences["paths"] else [])
    except SteelyardError as exc:
        raise exc.located(file=source)
    weighing = weighing_record(weigh_ledger(ledger, source=source)) if ledger.weighing is not None else None
    when = (now or dt.datetime.now(dt.timezone.utc)).strftime("%Y-%m-%d %H:%M UTC")
    return Report(source=source, generated=when, units=du, ledger=ledger, empty=empty, groups=groups,
                  control=control, loadouts=results, charts=charts, sequences=sequences,
                  changes=changes_since(ledger, since),
                  since=None if since is None else since.strftime("%Y-%m-%d %H:%M UTC"), weighing=weighing,
                  items_left_out=max(0, len(ledger.items) - ITEM_ROWS),
                  fractions=growth_fractions(ledger) if has_growth(ledger) else np.zeros(len(ledger.items)),
                  trend=trend_section(source))
