"""The envelopes view: status and margins in words and numbers, the chart, the caution.

Status is always written out (INSIDE / OUTSIDE, which limit, how far; an
envelope or limit whose scope leaves the loadout out says so, as `check`
does), then the [[limit]]s and the room left; the
chart repeats it as a picture. `ChartExtras` (computed off-thread, see
`chart_extras`) adds the active loadout's burn or drop sequences (the path
and its least-margin state) and the 2σ CG uncertainty region.
"""

from __future__ import annotations

import numpy as np
from rich.text import Text
from textual.containers import Vertical
from textual.widgets import Static

from steelyard.core.caution import CAUTION
from steelyard.core.display import AXIS_NAMES, DisplayUnits, fmt, pretty_unit
from steelyard.core.errors import SteelyardError
from steelyard.core.limits.limit_words import limit_line, room_line, scope_words
from steelyard.core.limits.rules import envelope_points, envelope_specs
from steelyard.core.document.model import Ledger
from steelyard.core.physics.rollup import MassProperties
from steelyard.core.limits.status import AXIS_INDEX
from steelyard.tui.widgets.chart import EnvelopeChart
from steelyard.tui.widgets.chart_extras import REGION_SIGMAS, ChartExtras
from steelyard.tui.state.session import Totals
from steelyard.tui.state.shown import NOT_APPLICABLE, axis_label, limit_words, margin_words, status_word
from steelyard.tui.text import clean


def status_text(totals: Totals, ledger: Ledger, du: DisplayUnits) -> Text:
    t = Text()
    if totals.error is not None:
        t.append("No envelope status: " + clean(totals.error))
        return t
    if not ledger.envelopes:
        t.append("This ledger has no CG envelopes.")
        for f in totals.limits:
            t.append("\n" + clean(limit_line(f, du)))
        if totals.limits:
            t.append("\n" + clean(room_line(totals.room, du)), style="bold")
        return t
    lu, mu = pretty_unit(du.length), pretty_unit(du.mass)
    scopes = _scopes(ledger)
    for r in totals.envelopes:
        t.append(clean(r.name), style="bold")
        t.append(f" ({r.axis}): ")
        if not totals.applies(r.name):
            t.append(NOT_APPLICABLE, style="bold")
            t.append(clean(f" (it limits {scope_words(scopes.get(r.name))} only)") + "\n")
            continue
        t.append(status_word(r), style="bold")
        t.append(f" — CG {du.num(r.cg, 'length')} {lu}; ")
        if r.lo is None:
            t.append("the mass is outside the envelope's mass range")
        else:
            lo_w, hi_w = limit_words(ledger.frame, r.axis)
            t.append(f"limits {lo_w} {du.num(r.lo, 'length')} / {hi_w} {du.num(r.hi, 'length')} {lu}; ")
            t.append(margin_words(r, ledger.frame, du))
        if r.mass_margin is not None:
            t.append(f"; {du.num(r.mass_margin, 'mass')} {mu} more at this CG before its top")
        t.append("\n")
    for f in totals.limits:
        t.append(clean(limit_line(f, du)) + "\n")
    t.append(clean(room_line(totals.room, du)), style="bold")
    return t


def _scopes(ledger: Ledger) -> dict:
    """Each envelope's scope tags (None: every state), as the check reads them."""
    try:
        return {e.name: e.applies_to for e in envelope_specs(ledger)}
    except SteelyardError:
        return {}


def sequence_text(extras: ChartExtras | None, choice: int, env_name: str | None, du: DisplayUnits) -> Text:
    """One or two lines on the charted sequence: its least-margin state against the charted envelope."""
    t = Text()
    if extras is None:
        return t
    if extras.sequence_error is not None:
        t.append("Sequences cannot be shown: " + clean(extras.sequence_error))
        return t
    seqs = extras.sequences
    if not seqs:
        return t
    seq = seqs[choice % len(seqs)]
    t.append(f"Sequence {clean(seq.name)}", style="bold")
    if len(seqs) > 1:
        t.append(f" ({choice % len(seqs) + 1} of {len(seqs)}; b: next)", style="dim")
    t.append(f": {len(seq.path)} states, {len(seq.steps)} steps")
    f = next((f for f in seq.findings if f.kind == "envelope" and f.name == env_name and f.applies), None)
    if f is None or f.state is None:
        t.append("; this envelope does not apply to it")
        return t
    lu = pretty_unit(du.length)
    where = "the start" if not f.step else f"step {f.step} ({clean(seq.steps[f.step - 1].label)})"
    t.append(f"; least margin at {where}: ")
    t.append("INSIDE" if f.ok else "OUTSIDE", style="bold")
    if f.margin is not None:
        t.append(f" {du.num(abs(f.margin), 'length')} {lu} {'to' if f.margin >= 0 else 'PAST'} the nearer limit")
    if f.broken_states:
        t.append(f"; {f.broken_states} states outside, steps {f.first_broken_step}–{f.last_broken_step}")
    return t


def uncertainty_text(extras: ChartExtras | None, du: DisplayUnits) -> Text:
    t = Text()
    if extras is None:
        return t
    if extras.uncertainty_error is not None:
        t.append("No CG uncertainty: " + clean(extras.uncertainty_error))
    elif extras.sigma is not None:
        lu = pretty_unit(du.length)
        t.append("CG uncertainty ", style="bold")
        t.append(f"(items' tolerances, first order): σ mass {du.num(extras.sigma[0], 'mass')} {pretty_unit(du.mass)}, "
                 + ", ".join(f"σ {AXIS_NAMES[k]} {du.num(extras.sigma[1 + k], 'length')}" for k in range(3))
                 + f" {lu}; ░ = {REGION_SIGMAS:g}σ region")
    return t


class EnvelopePanel(Vertical, can_focus=True):
    """Which envelope the chart shows is view state (`choice`); the rest is pushed in."""

    def __init__(self, **kw) -> None:
        super().__init__(**kw)
        self.choice = 0
        self.sequence_choice = 0

    def compose(self):
        yield Static("", id="envelope-status")
        yield Static("", id="envelope-choice")
        yield Static("", id="envelope-extras")
        yield EnvelopeChart(id="envelope-chart")
        yield Static(Text(CAUTION, style="italic"), id="envelope-caution")

    def next_envelope(self, step: int, count: int) -> None:
        if count:
            self.choice = (self.choice + step) % count

    def next_sequence(self, step: int = 1) -> None:
        self.sequence_choice += step

    def show(self, totals: Totals, ledger: Ledger, du: DisplayUnits,
             others: list[tuple[str, MassProperties]], path: np.ndarray | None = None,
             worst: int | None = None, extras: ChartExtras | None = None) -> None:
        """`path` (p, 2) [cg, mass] SI and `worst` draw a path directly; `extras` picks them itself."""
        self.query_one("#envelope-status", Static).update(status_text(totals, ledger, du))
        chart = self.query_one(EnvelopeChart)
        choice = self.query_one("#envelope-choice", Static)
        lines = self.query_one("#envelope-extras", Static)
        if not ledger.envelopes:
            choice.update("")
            lines.update("")
            chart.display = False
            return
        chart.display = True
        self.choice %= len(ledger.envelopes)
        env = ledger.envelopes[self.choice]
        k = AXIS_INDEX[env.axis]
        try:
            pts = np.asarray(envelope_points(ledger, env), dtype=float).reshape(-1, 2)
        except SteelyardError:
            pts = env.array  # the status lines above already name the problem
        polygon = np.column_stack([du.l(pts[:, 0]), du.m(pts[:, 1])])
        point = None
        mp = totals.mp
        if mp is not None and mp.mass > 0 and np.isfinite(mp.cg[k]):
            point = (du.l(float(mp.cg[k])), du.m(mp.mass))
        other = [(clean(name), du.l(float(o.cg[k])), du.m(o.mass)) for name, o in others]
        more = f" ({self.choice + 1} of {len(ledger.envelopes)}; n / p: next / previous)" if len(
            ledger.envelopes) > 1 else ""
        choice.update(Text(f"Chart: {clean(env.name)}", style="bold") + Text(more, style="dim"))
        region = None
        if extras is not None:
            if extras.sequences:
                seq = extras.sequences[self.sequence_choice % len(extras.sequences)]
                path = np.column_stack([seq.path.cg[:, k], seq.path.mass])
                worst = extras.worst_state(seq, env.name)
            if point is not None:
                region = extras.region(env.axis, float(mp.cg[k]), float(mp.mass))
        shown = [x for x in (sequence_text(extras, self.sequence_choice, env.name, du),
                             uncertainty_text(extras, du)) if x.plain]
        lines.update(Text("\n").join(shown) if shown else "")
        lines.display = bool(shown)
        if path is not None:
            path = np.column_stack([du.l(path[:, 0]), du.m(path[:, 1])])
        if region is not None:
            region = np.column_stack([du.l(region[:, 0]), du.m(region[:, 1])])
        chart.set_data(polygon, point, other, path, worst,
                       x_label=f"CG {axis_label(ledger.frame, k)} [{pretty_unit(du.length)}]",
                       y_label=f"mass [{pretty_unit(du.mass)}]", region=region,
                       region_label=f"{REGION_SIGMAS:g}σ CG region (tolerances)")
