"""Words and numbers the panels share: axis labels, margins, signed deltas.

Pure formatting of values core computed; status is always spelled out
(INSIDE / OUTSIDE), never left to a colour.
"""

from __future__ import annotations

from steelyard.core.display import AXIS_NAMES, STATION_WORDS, DisplayUnits, fmt, pretty_unit
from steelyard.core.document.model import OPPOSITE, Frame
from steelyard.core.limits.status import AXIS_INDEX, EnvelopeResult


def usual_frame(frame: Frame) -> bool:
    """x aft, y right, z up: the frame in which station / butt line / water line apply."""
    return (frame.x, frame.y, frame.z) == ("aft", "right", "up")


def axis_label(frame: Frame, k: int) -> str:
    """'x (+aft, station)' or 'y (+left)'."""
    word = f", {STATION_WORDS[AXIS_NAMES[k]]}" if usual_frame(frame) else ""
    return f"{AXIS_NAMES[k]} (+{frame.direction(k)}{word})"


#: the caution in one line, for places with room for one line (the full text is on the envelopes view)
SHORT_CAUTION = "Planning aid only; loading decisions rest on approved weight & balance data."


def _system(system) -> str | None:
    """The system of a UnitChoice, or a system name as given (None, "si", "us")."""
    return getattr(system, "system", system)


def unit_label(du: DisplayUnits, system) -> str:
    name = {None: "file units", "si": "SI", "us": "US customary"}[_system(system)]
    if getattr(system, "mass", None) or getattr(system, "length", None) or getattr(system, "inertia", None):
        name += " (units chosen)"
    return f"{name}: {pretty_unit(du.mass)}, {pretty_unit(du.length)}, {pretty_unit(du.inertia)}"


def signed(x: float | None, digits: int = 4) -> str:
    if x is None or x != x:
        return "—"
    text = fmt(x, digits)
    return text if text.startswith("-") else f"+{text}"


def limit_words(frame: Frame, axis: str) -> tuple[str, str]:
    """Names of the low and high CG limits on an axis, e.g. ('fwd', 'aft') for x pointing aft."""
    hi = frame.direction(AXIS_INDEX[axis])
    return OPPOSITE[hi], hi


def nearer_limit(r: EnvelopeResult, frame: Frame) -> str | None:
    if r.lo is None or r.hi is None:
        return None
    lo_word, hi_word = limit_words(frame, r.axis)
    return lo_word if (r.cg - r.lo) <= (r.hi - r.cg) else hi_word


def status_word(r: EnvelopeResult) -> str:
    if r.inside:
        return "INSIDE"
    if r.lo is None:
        return "OUTSIDE (mass out of range)"
    return "OUTSIDE"


def margin_words(r: EnvelopeResult, frame: Frame, du: DisplayUnits) -> str:
    """'1.5100 in to the aft limit' / '0.2100 in past the aft limit' / 'no limits at this mass'."""
    lu = pretty_unit(du.length)
    side = nearer_limit(r, frame)
    if r.margin is None or side is None:
        return "no CG limits at this mass"
    amount = f"{du.num(abs(r.margin), 'length')} {lu}"
    return f"{amount} to {side} limit" if r.margin >= 0 else f"{amount} PAST {side} limit"


#: an envelope whose conditions / loadouts / sequences leave this state out (as `steelyard check` says)
NOT_APPLICABLE = "does not apply to this loadout"


def envelope_line(r: EnvelopeResult, frame: Frame, du: DisplayUnits, applies: bool = True) -> str:
    """One envelope in a few words for the ledger view's summary."""
    if not applies:
        return f"{r.name}: {NOT_APPLICABLE}"
    if r.lo is None:
        return f"{r.name} OUTSIDE: the mass is outside its range"
    return f"{r.name} {status_word(r)} {margin_words(r, frame, du)}"


def short_units(du: DisplayUnits, system) -> str:
    name = {None: "file", "si": "SI", "us": "US"}[_system(system)]
    return f"{pretty_unit(du.mass)}, {pretty_unit(du.length)} ({name})"
