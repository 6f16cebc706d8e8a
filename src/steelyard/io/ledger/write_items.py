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

import numpy as np

from steelyard.core.document.model import FileUnits, Item
from steelyard.core.physics.inertia import COMPONENTS  # noqa: F401 - the order of `six`
from steelyard.core.units import unit_factor
from steelyard.io.ledger.toml_write import _NEEDS_ESCAPE, _SHORT_HI, _SHORT_LO, number, string, value

_MORE = ("cg_table", "growth", "loaded", "maturity", "removable", "tolerance", "user")


def numbers(xs: list, factor: float) -> list[str]:
    """`[number(x, factor) for x in xs]`, the same texts."""
    if factor == 1.0 or not xs:
        return list(map(number, xs))
    a = np.array(xs, dtype=float)
    with np.errstate(all="ignore"):
        v = a / factor
        rows = np.flatnonzero((np.abs(v) >= _SHORT_LO) & (np.abs(v) < _SHORT_HI))  # NaN, inf: not in range
        texts = (("%.14g\n" * len(rows)) % tuple(v[rows].tolist())).split("\n")[:-1]  # f"{v:.14g}" each
        c = np.fromiter(map(float, texts), float, len(texts))
        exact = c * factor == a[rows]
    out: list = [None] * len(xs)
    for i, t in zip(rows[exact].tolist(), [t for t, e in zip(texts, exact.tolist()) if e]):
        # repr(float(t)): t has <= 14 significant digits, so it is its float's shortest text
        # (15 digits always read back); positional in both in this range; repr adds ".0"
        out[i] = t if "." in t else t + ".0"
    for i in [i for i, t in enumerate(out) if t is None]:
        out[i] = number(xs[i], factor)
    return out


def _templated(it: Item) -> bool:
    return not (it.given_units or it.shape is not None or it.rotate or it.density is not None)


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


def items_text(items, u: FileUnits) -> list[str]:
    """`"\\n".join(item_lines(it, u))` of every item."""
    from steelyard.io.ledger.write import item_lines

    plain = [it for it in items if _templated(it)]
    fm, fl, fi = unit_factor(u.mass, "mass"), unit_factor(u.length, "length"), unit_factor(u.inertia, "inertia")
    mass = numbers([it.mass for it in plain], fm)
    cgs = [numbers([it.cg[k] for it in plain], fl) for k in range(3)]
    own = [it for it in plain if it.inertia is not None]
    six = [numbers([it.inertia[k] for it in own], fi) for k in range(6)]
    xx, yy, zz, xy, xz, yz = six  # COMPONENTS order
    six_of = {id(it): j for j, it in enumerate(own)}
    out = []
    j = 0
    for it in items:
        if not _templated(it):
            out.append("\n".join(item_lines(it, u)))
            continue
        text = item_head(it)
        text += f"\nmass = {mass[j]}\ncg = [{cgs[0][j]}, {cgs[1][j]}, {cgs[2][j]}]"
        j += 1
        if it.quantity != 1:
            text += f"\nquantity = {it.quantity}"
        if it.inertia is not None:
            k = six_of[id(it)]
            text += (f"\ninertia = {{ xx = {xx[k]}, yy = {yy[k]}, zz = {zz[k]}, xy = {xy[k]}, xz = {xz[k]}, "
                     f"yz = {yz[k]} }}")
        if it.variable:
            text += "\nvariable = true"
        for key in _MORE:
            v = getattr(it, key)
            if key == "removable":
                v = v or None
            if v is not None:
                text += f"\n{key} = {value(v)}"
        out.append(text)
    return out
