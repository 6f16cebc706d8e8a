"""The fields of each set-up form, and typed text <-> the TOML value the file holds.

Each field is labelled with the file's own key (`max_mass`, `loadouts`), so a
message from the reader ("limit 'mtow': max_mass: ...") names the field as the
user sees it, and docs/format.md describes it under the same word. A field's
text is first read as a TOML value (`25`, `"25 kg"`, `["a", "b"]`, `{ xx = 1 }`)
and, failing that, leniently by its kind: `25 kg` becomes the string
"25 kg", `takeoff, landing` a list of names, `xx = 1, yy = 2` a table.
Whatever the result, the reader's checks decide (tui.state.setup_tables).
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass

from steelyard.core.document.model import Ledger
from steelyard.io.ledger.toml_write import value as toml_value


@dataclass(frozen=True)
class Field:
    key: str  # the file's key
    kind: str  # "text" | "value" | "names" | "values" | "table" | "rows"
    hint: str  # what to type; {m} {l} {i} are the file's mass, length, inertia units


SCOPE = (Field("conditions", "names", "optional: ramp, takeoff, landing, zero-fuel"),
         Field("loadouts", "names", "optional: loadout names (none: all)"),
         Field("sequences", "names", "optional: sequence names"))

FIELDS: dict[str, tuple[Field, ...]] = {
    "loadout": (Field("name", "text", "unique name, e.g. cruise"),
                Field("base", "text", "optional: the loadout this one starts from"),
                Field("condition", "text", "optional: ramp, takeoff or landing"),
                Field("off", "names", "optional: removable item ids left off"),
                Field("on", "names", "optional: removable item ids fitted again")),
    "envelope": (Field("name", "text", "unique name, e.g. normal"),
                 Field("axis", "text", "x, y or z: the CG axis it limits"),
                 Field("units", "text", "optional: %mac when the CG numbers are %MAC"),
                 *SCOPE,
                 Field("points", "rows", "one vertex a line: CG [{l}], mass [{m}]")),
    "limit": (Field("name", "text", "unique name, e.g. max-takeoff-mass"),
              *SCOPE,
              Field("max_mass", "value", "most mass [{m}], or 25 kg"),
              Field("min_mass", "value", "least mass [{m}]"),
              Field("max_inertia", "table", "xx = 1.2, zz = 3 [{i}]"),
              Field("min_inertia", "table", "xx = 0.5 [{i}]"),
              Field("max_cg_offset", "value", "largest CG offset from a line [{l}]"),
              Field("axis", "text", "x, y or z: the line's direction"),
              Field("through", "values", "the line's 2 coordinates on the other axes [{l}]")),
    "allocation": (Field("group", "text", "group path; empty for the whole vehicle"),
                   Field("mass", "value", "not-to-exceed mass [{m}], or 40 kg")),
    "mac": (Field("lemac", "value", "station of the MAC's leading edge [{l}]"),
            Field("length", "value", "length of the MAC [{l}]")),
    "fuel": (Field("groups", "names", "groups whose variable items are fuel"),
             Field("items", "names", "variable item ids that are fuel")),
    "growth": (Field("categories", "rows", "one a line: category = fraction (0.15 or \"15 %\")"),),
}

TITLES = {"loadout": "Loadout", "envelope": "Envelope", "limit": "Limit", "allocation": "Allocation",
          "mac": "MAC", "fuel": "Fuel", "growth": "Growth allowance"}


def hint(field: Field, ledger: Ledger) -> str:
    u = ledger.units
    return field.hint.format(m=u.mass, l=u.length, i=u.inertia)


def _toml(text: str) -> tuple[bool, object]:
    try:
        return True, tomllib.loads(f"v = {text}")["v"]
    except tomllib.TOMLDecodeError:
        return False, None


def _lenient(text: str) -> object:
    """A number if TOML reads one, else the text itself (so `25 kg` is the string "25 kg")."""
    ok, v = _toml(text)
    return v if ok else text


def parse(field: Field, text: str) -> object | None:
    """The value the file would hold for what was typed; None: the key is left out."""
    text = text.strip()
    if not text:
        return None
    if field.kind == "text":
        ok, v = _toml(text)
        return v if ok and isinstance(v, str) and text[0] in "\"'" else text
    if field.kind == "value":
        return _lenient(text)
    ok, v = _toml(text)
    if field.kind in ("names", "values"):
        if ok and isinstance(v, list):
            return v
        if field.kind == "names" and ok and isinstance(v, str):
            return [v]
        parts = [p.strip() for p in text.split(",")]
        return parts if field.kind == "names" else [_lenient(p) for p in parts]
    if field.kind == "table":
        if ok and isinstance(v, dict):
            return v
        ok, v = _toml("{ " + text + " }")
        return v if ok else text  # the reader says what is wrong with the text
    raise ValueError(field.kind)


def shown(field: Field, v: object) -> str:
    """The text a field shows for a value the file holds."""
    if v is None:
        return ""
    if field.kind == "text" and isinstance(v, str):
        return v
    if field.kind == "value" and isinstance(v, str):
        return v
    if field.kind == "names" and isinstance(v, list) and all(_plain_name(x) for x in v):
        return ", ".join(v)
    if field.kind == "values" and isinstance(v, list):
        return ", ".join(x if isinstance(x, str) and "," not in x else toml_value(x) for x in v)
    if field.kind == "table" and isinstance(v, dict) and v:
        return toml_value(v)[2:-2]
    return toml_value(v)


def _plain_name(x: object) -> bool:
    return isinstance(x, str) and x == x.strip() and x != "" and not any(c in x for c in ",\"'[]")


# ------------------------------------------------------------------ the rows of envelopes and growth


class RowsError(ValueError):
    """A line of a rows field that cannot be read: `line` (1-based) and what is wrong."""

    def __init__(self, line: int, message: str) -> None:
        super().__init__(message)
        self.line = line


def parse_points(text: str) -> list:
    """`cg, mass` a line (blank lines skipped) -> [[cg, mass], ...] as the file holds them."""
    out = []
    for n, line in enumerate(text.splitlines(), start=1):
        line = line.strip()
        if not line:
            continue
        ok, v = _toml(line if line.startswith("[") else f"[{line}]")
        if not ok:
            parts = [p.strip() for p in line.strip("[]").split(",")]
            v = [_lenient(p) for p in parts]
        if not isinstance(v, list) or len(v) != 2:
            raise RowsError(n, f"line {n}: write CG, mass (two values), got {line!r}")
        out.append(v)
    return out


def points_text(points: list) -> str:
    return "\n".join(", ".join(toml_value(x) if not isinstance(x, str) else x for x in p) for p in points)


def parse_categories(text: str) -> dict:
    """`category = fraction` a line -> the [growth] table."""
    out: dict = {}
    for n, line in enumerate(text.splitlines(), start=1):
        line = line.strip()
        if not line:
            continue
        try:
            t = tomllib.loads(line)
        except tomllib.TOMLDecodeError:
            name, sep, rest = line.partition("=")
            if not sep or not name.strip():
                raise RowsError(n, f"line {n}: write category = fraction, got {line!r}") from None
            t = {name.strip().strip("\"'"): _lenient(rest.strip()) if rest.strip() else ""}
        for k, v in t.items():
            if k in out:
                raise RowsError(n, f"line {n}: category {k!r} is given twice")
            out[k] = v
    return out


def categories_text(table: dict) -> str:
    from steelyard.io.ledger.toml_write import key

    return "\n".join(f"{key(k)} = {toml_value(v)}" for k, v in table.items())
