"""The `[[item]]` blocks of a whole ledger, their numbers spelled a column at a time.

`write.item_lines` spells each number with `toml_write.number`, one call per
number: at 100,000 items in non-SI file units that is 700,000 calls, most of
them answered by the 14-digit rounding (see `number`). Here that rounding is
done for a whole column at once (one C formatting call, numpy to check that
each reads back exactly); a value it does not settle goes through `number`
itself. Items with what the template does not write (given units, a shape,
rotations, a density) go through `item_lines`. The text is byte for byte
`item_lines`' (tests/test_write_items.py).
"""

from __future__ import annotations

import math
from operator import attrgetter, itemgetter

import numpy as np

from steelyard.core.document.model import NO_UNITS, FileUnits, Item
from steelyard.core.physics.inertia import COMPONENTS
from steelyard.core.units import unit_factor
from steelyard.io.ledger.toml_write import _NEEDS_ESCAPE, _SHORT_HI, number, string, value
from steelyard.io.ledger.write_given import given_texts

_MORE = ("cg_table", "growth", "loaded", "maturity", "removable", "tolerance", "user")


#: `numbers` settles |x / factor| in [_BULK_LO, _SHORT_HI) and |x| >= _BULK_LO with one rounding (see there)
_BULK_LO = 1e-290


def numbers(xs: list, factor: float, given: tuple[list[str], np.ndarray] | None = None) -> list[str]:
    """`[number(x, factor) for x in xs]`, the same texts.

    `given`: (texts, their float values) the caller has for these numbers (a CSV's
    cells): each one shown to be the answer is taken as it is (write_given).

    `number` takes the 14-digit rounding c of v = x / factor when it reads back
    exactly (c * factor == x) and 1e-3 <= |v| < 1e13; below 1e-3 it runs its
    full search. The search gives c there too whenever c reads back exactly and
    x and v are normal floats: the exact candidates all lie within a few ulps of
    v, so c is the only one of <= 14 significant digits, and any other's text
    has one digit more at least while its exponent can differ only across a
    power of ten, which no candidate within a few ulps of a 14-digit c straddles:
    c's text, repr(c), is the shortest, whatever the notation. So here every
    value in that range is settled in bulk (one C formatting call, numpy to
    check the read-back, repr by map); the rest go through `number` itself.
    """
    if factor == 1.0 or not xs:
        return list(map(number, xs))
    if given is not None:
        out, rest = given_texts(np.array(xs, dtype=float), factor, *given)
        if rest.size:
            for i, t in zip(rest.tolist(), numbers([xs[i] for i in rest.tolist()], factor)):
                out[i] = t
        return out
    a = np.array(xs, dtype=float)
    n = len(a)
    with np.errstate(all="ignore"):
        v = a / factor
        texts = (("%.14g\n" * n) % tuple(v.tolist())).split("\n")[:-1]  # f"{v:.14g}" each, one C call
        c = np.fromiter(map(float, texts), float, n)
        av = np.abs(v)
        settled = (av >= _BULK_LO) & (av < _SHORT_HI) & (np.abs(a) >= _BULK_LO) & (c * factor == a)
    # t is repr(float(t)) (no shorter decimal reads as the same float, as any two decimals of <= 14
    # digits lie further apart than an ulp), except that repr writes a whole number with ".0"
    out = [t if "." in t or "e" in t else t + ".0" for t in texts]
    rest = np.flatnonzero(~settled)
    if rest.size:
        finite = np.isfinite(a[rest]) & np.isfinite(v[rest]) & (a[rest] != 0.0)
        for i, t in zip(rest[finite].tolist(), searched(a[rest[finite]], v[rest[finite]], factor)):
            out[i] = t
        for i in rest[~finite].tolist():
            out[i] = number(xs[i], factor)
    return out


#: the decimal roundings `toml_write._search` tries, and how many ulps either side of v / factor
_DIGITS = range(6, 18)
_ULPS = 3


def searched(x: np.ndarray, v: np.ndarray, factor: float) -> list[str]:
    """`toml_write._search(x, v, factor)` of each finite, non-zero x (v = x / factor, finite), in bulk.

    The same candidates (v's roundings to 6..17 digits, v, and 3 floats either
    side of it), each made in bulk (one C formatting call per digit count,
    numpy's nextafter); the same rank (exact, else within one ulp of x, else
    nearest; then the shortest text, then the text itself) taken per value over
    its ~19 candidates.
    """
    m = len(x)
    cands = []
    for d in _DIGITS:
        texts = ((f"%.{d}g\n" * m) % tuple(v.tolist())).split("\n")[:-1]
        cands.append(np.fromiter(map(float, texts), float, m))
    cands.append(v)
    up = down = v
    with np.errstate(over="ignore"):  # the largest finite float's neighbour is inf: a candidate that loses
        for _ in range(_ULPS):
            up, down = np.nextafter(up, np.inf), np.nextafter(down, -np.inf)
            cands += [up, down]
    c = np.stack(cands, axis=1)  # (m, k)
    with np.errstate(all="ignore"):
        err = np.abs(c * factor - x[:, None])
    one_ulp = np.fromiter(map(math.ulp, x.tolist()), float, m)[:, None]
    grade = np.where(err == 0, 0, np.where(err <= one_ulp, 1, 2))
    key_err = np.where(grade == 2, err, 0.0)
    # the rank's first two keys in numpy: per row, the finite candidates of the best grade, then of
    # the least error among those; only they need a text (v is finite: every row keeps one)
    grade = np.where(np.isfinite(c), grade, 3)
    best = grade == grade.min(axis=1, keepdims=True)
    key_err = np.where(best, key_err, np.inf)
    best &= key_err == key_err.min(axis=1, keepdims=True)
    at = np.flatnonzero(best.ravel())
    out: list = [None] * m
    # finite floats' repr always has '.' or 'e': `_float_text` is repr; then the shortest, then the least
    for j, t in zip((at // c.shape[1]).tolist(), map(repr, c.ravel()[at].tolist())):
        o = out[j]
        if o is None or len(t) < len(o) or (len(t) == len(o) and t < o):
            out[j] = t
    return out


def _templated(it: Item) -> bool:
    return not (it.given_units or it.shape is not None or it.rotate or it.density is not None)


#: what `_templated` looks at, and what an item the template writes holds there: an empty mapping,
#: no shape, no rotation, no density (equal only to the empty ones, as Mapping, tuple and the
#: dataclasses compare)
_ODD_OF = attrgetter("given_units", "shape", "rotate", "density")
_PLAIN = (NO_UNITS, None, (), None)


def item_head(it: Item) -> str:
    """An item's header line and its id, name and group lines, as `item_lines` writes them."""
    s = it.id
    text = f'[[item]]\nid = "{s}"' if _NEEDS_ESCAPE.search(s) is None else f"[[item]]\nid = {string(s)}"
    s = it.name
    if s:
        text += f'\nname = "{s}"' if _NEEDS_ESCAPE.search(s) is None else f"\nname = {string(s)}"
    s = it.group
    if s:
        text += f'\ngroup = "{s}"' if _NEEDS_ESCAPE.search(s) is None else f"\ngroup = {string(s)}"
    return text


def _strings(texts: list[str], lead: str) -> list[str]:
    """`lead + string(t)` of each text, "" for an empty one when `lead` starts a line of its own."""
    if _NEEDS_ESCAPE.search("".join(texts)) is None:  # no text needs an escape: quote them as they are
        quoted = [f'{lead}"{t}"' for t in texts]
    else:
        quoted = [lead + string(t) for t in texts]
    if lead.startswith("\n") and "" in texts:  # name, group: written only when not empty
        return [q if t else "" for q, t in zip(quoted, texts)]
    return quoted


#: what an item without any key beyond v1 holds in them (`removable` may be False or None)
_NO_MORE = (None,) * len(_MORE)
_NO_MORE_REMOVABLE = tuple(False if k == "removable" else None for k in _MORE)
_MORE_OF = attrgetter(*_MORE)


def _more_text(it: Item) -> str:
    text = ""
    for key in _MORE:
        v = getattr(it, key)
        if key == "removable":
            v = v or None
        if v is not None:
            text += f"\n{key} = {value(v)}"
    return text


def _given(given: dict | None, key: str, rows) -> tuple | None:
    """given[key] (texts, values[, plain], one per item) at `rows` (ints, a list or an array; all when
    None), or None."""
    g = given.get(key) if given else None
    if g is None or rows is None:
        return g
    if not isinstance(rows, np.ndarray):
        rows = np.asarray(rows, dtype=np.intp)
    texts = list(itemgetter(*rows.tolist())(g[0])) if len(rows) > 1 else [g[0][i] for i in rows.tolist()]
    return (texts, *(np.asarray(x)[rows] for x in g[1:]))


def items_text(items, u: FileUnits, given: dict | None = None) -> list[str]:
    """`"\\n".join(item_lines(it, u))` of every item.

    Items the template writes are spelled a field at a time: each field's
    texts as one column (attribute getters and formatting mapped in C), the
    columns then joined item by item. The rest go through `item_lines`.
    `given`: "mass", "cg.0".."cg.2", "inertia.xx".. (COMPONENTS) -> (texts,
    float values), one per item, that may already say those numbers (`numbers`).
    """
    from steelyard.io.ledger.write import item_lines

    items = list(items)
    # no item holds what the template does not write (the usual case): seen in one C-level count
    held = list(map(_ODD_OF, items))
    odd = [] if held.count(_PLAIN) == len(held) else [k for k, it in enumerate(items) if not _templated(it)]
    del held
    at = set(odd)
    plain = [it for k, it in enumerate(items) if k not in at] if odd else items
    kept = [k for k in range(len(items)) if k not in at] if odd else None
    n = len(plain)
    cg = list(zip(*map(attrgetter("cg"), plain))) if n else [(), (), ()]  # x, y, z columns
    inertia = list(map(attrgetter("inertia"), plain))
    rows = [k for k, six in enumerate(inertia) if six is not None]
    held = list(map(_MORE_OF, plain))
    more = ([] if held.count(_NO_MORE_REMOVABLE) + held.count(_NO_MORE) == n else
            [k for k, h in enumerate(held) if h != _NO_MORE_REMOVABLE and h != _NO_MORE])
    del held
    texts = columns_text(
        u, list(map(attrgetter("id"), plain)), list(map(attrgetter("name"), plain)),
        list(map(attrgetter("group"), plain)), list(map(attrgetter("mass"), plain)), cg,
        list(map(attrgetter("quantity"), plain)), rows, list(zip(*(inertia[k] for k in rows))),
        list(map(attrgetter("variable"), plain)), {k: _more_text(plain[k]) for k in more}, given, kept)
    if not odd:
        return texts
    out, j = [], 0
    for k, it in enumerate(items):
        if k in at:
            out.append("\n".join(item_lines(it, u)))
        else:
            out.append(texts[j])
            j += 1
    return out


def columns_text(u: FileUnits, ids: list[str], names: list[str], groups: list[str], mass: list[float],
                 cg: list, quantity: list[int], rows: list[int], six: list, variable: list[bool],
                 more: dict[int, str], given: dict | None = None, kept: list[int] | None = None) -> list[str]:
    """The `[[item]]` block of each of n items the template writes, from their fields as columns.

    `cg`: the x, y and z columns; `rows`: the items (ascending) with an own inertia, `six` its
    six columns (COMPONENTS order, one value per row in `rows`); `more`: item -> the text of its
    keys beyond v1 (`_more_text`), for the items that have any. Values are SI, as in an Item.
    `given` as in `items_text`, `kept` the items' rows in it (None: row k is item k).
    An import writes a new ledger's items with this straight from the CSV's columns.
    """
    n = len(ids)
    fm, fl, fi = unit_factor(u.mass, "mass"), unit_factor(u.length, "length"), unit_factor(u.inertia, "inertia")
    # one template per item, "{}" for each column: a text column that needs no escape is quoted in it
    template, args = "", []
    for texts, lead in ((ids, "[[item]]\nid = "), (names, "\nname = "), (groups, "\ngroup = ")):
        piece, column = _text_column(texts, lead)
        template += piece
        if column is not None:
            args.append(column)
    template += "\nmass = {}\ncg = [{}, {}, {}]"
    args.append(numbers(mass, fm, _given(given, "mass", kept)))
    args.extend(numbers(cg[k], fl, _given(given, f"cg.{k}", kept)) for k in range(3))
    extra = []
    if quantity.count(1) != n:
        extra.append([f"\nquantity = {q}" if q != 1 else "" for q in quantity])
    if rows:
        at_rows = np.asarray(rows if kept is None else [kept[k] for k in rows], dtype=np.intp)
        texts = [numbers(six[j], fi, _given(given, f"inertia.{c}", at_rows)) for j, c in enumerate(COMPONENTS)]
        col = [""] * n
        for k, text in zip(rows, map("\ninertia = {{ xx = {}, yy = {}, zz = {}, xy = {}, xz = {}, yz = {} }}".format,
                                     *texts)):
            col[k] = text
        extra.append(col)
    if any(variable):
        extra.append(["\nvariable = true" if v else "" for v in variable])
    if more:
        col = [""] * n
        for k, text in more.items():
            col[k] = text
        extra.append(col)
    template += "{}" * len(extra)
    return list(map(template.format, *args, *extra)) if n else []


def _text_column(texts: list[str], lead: str) -> tuple[str, list[str] | None]:
    """(template piece, its column): `_strings(texts, lead)` as "{}", or, when no text needs an escape
    and none is left out, `lead` and the quotes in the template around the texts themselves; a
    column of only empty names or groups (written only when not empty) is left out: ("", None)."""
    skips = lead.startswith("\n")
    if skips and texts.count("") == len(texts):
        return "", None
    if not (skips and "" in texts) and _NEEDS_ESCAPE.search("".join(texts)) is None:
        return lead + '"{}"', texts
    return "{}", _strings(texts, lead)
