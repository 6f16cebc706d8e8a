"""One [[assembly]] table -> a placement: where another ledger's datum lands and how it is turned.

The order is the contract's (docs/assemblies.md): a point p of the assembly
(SI, its own frame) lands at  p_parent = at + R·M·A·p,  where A aligns the
assembly's axes with the parent's by their [frame] labels, M negates the
`mirror` axis (a parent axis), R is `rotate` (turns about the parent's fixed
axes, left to right, as on shapes) and `at` is in the parent's length units.
Own inertia transforms as T·I·Tᵀ with T = R·M·A (a reflection included).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from steelyard.core.document.model import OPPOSITE, Frame, FileUnits, Ledger
from steelyard.core.errors import SteelyardError, UnitError, said
from steelyard.core.physics.rotation import AXES, rotation_matrix
from steelyard.core.units import field_to_si

KEYS = ("id", "file", "group", "at", "mirror", "rotate", "user")


@dataclass(frozen=True)
class Placement:
    """An [[assembly]] entry read: SI, in the parent's frame."""

    id: str
    file: str
    group: str
    at: np.ndarray  # (3,) m
    mirror: str | None
    rotate: tuple[tuple[str, float], ...]

    def matrix(self, child: Frame, parent: Frame) -> np.ndarray:
        """T = R·M·A for an assembly whose file has frame `child`."""
        m = np.eye(3)
        if self.mirror is not None:
            m[AXES[self.mirror], AXES[self.mirror]] = -1.0
        return rotation_matrix(self.rotate) @ m @ alignment(child, parent)


def alignment(child: Frame, parent: Frame) -> np.ndarray:
    """A: the parent's coordinates of each assembly axis, matched by the directions the frames name.

    Column i is assembly axis i in parent axes: the parent axis that points
    the same way (+1), or the opposite way (-1). Both frames are checked
    right-handed when read, so every direction matches exactly once.
    """
    a = np.zeros((3, 3))
    for i in range(3):
        d = child.direction(i)
        for j in range(3):
            e = parent.direction(j)
            if e == d:
                a[j, i] = 1.0
            elif e == OPPOSITE[d]:
                a[j, i] = -1.0
        if not a[:, i].any():
            raise SteelyardError(f"assembly axis {'xyz'[i]} points {d}, which no axis of the parent's frame "
                                 "lines up with", subject="frame")
    if round(abs(np.linalg.det(a))) != 1:
        raise SteelyardError("the two files' [frame] labels do not make three distinct axes", subject="frame")
    return a


def _subject(entry: object, k: int) -> str:
    if isinstance(entry, Mapping) and isinstance(entry.get("id"), str) and entry["id"]:
        return f"assembly {said(entry['id'])}"
    return f"assembly #{k}"


def read_placement(entry: Mapping, k: int, units: FileUnits) -> Placement:
    """Check one [[assembly]] table (as written) and read it; errors name the assembly and field."""
    subject = _subject(entry, k)

    def fail(field: str, message: str) -> SteelyardError:
        return SteelyardError(message, subject=subject, field=field)

    ident = entry.get("id")
    if type(ident) is not str or not ident.strip():
        raise fail("id", "required: a non-empty string")
    if "/" in ident:
        raise fail("id", f"must not contain '/' (it separates an assembly's id from its items' ids): {said(ident)}")
    path = entry.get("file")
    if type(path) is not str or not path.strip():
        raise fail("file", "required: the path of another ledger file, relative to this one")
    group = entry.get("group", "")
    if type(group) is not str:
        raise fail("group", f"must be a group path string, got {said(group)}")
    at = entry.get("at")
    if type(at) is not list or len(at) != 3:
        raise fail("at", f"required: [x, y, z] where the assembly's datum lands, got {said(at)}")
    xyz = []
    for v in at:
        if type(v) is bool or type(v) not in (int, float, str):
            raise fail("at", f"must be three numbers, got {said(at)}")
        try:
            x = field_to_si(v, "length", units.length, subject=subject, field="at")
        except UnitError as exc:
            raise exc.located(subject=subject, field="at")
        if not np.isfinite(x):
            raise fail("at", f"must be finite, got {said(v)}")
        xyz.append(x)
    mirror = entry.get("mirror")
    if mirror is not None and mirror not in AXES:
        raise fail("mirror", f"must be x, y or z (the parent axis to negate), got {said(mirror)}")
    turns = entry.get("rotate", [])
    if type(turns) is not list:
        raise fail("rotate", f"must be a list of [axis, degrees] turns, got {said(turns)}")
    rotate = []
    for t in turns:
        if (type(t) is not list or len(t) != 2 or t[0] not in AXES or type(t[1]) not in (int, float)
                or not np.isfinite(t[1])):
            raise fail("rotate", f"each turn must be [\"x\"|\"y\"|\"z\", degrees], got {said(t)}")
        rotate.append((t[0], float(t[1])))
    if "user" in entry and type(entry["user"]) is not dict:
        raise fail("user", "must be a table")
    return Placement(ident, path, group.strip("/"), np.array(xyz), mirror, tuple(rotate))


def read_placements(ledger: Ledger, own_ids) -> list[Placement]:
    """Every [[assembly]] of `ledger`, checked: unique ids, none equal to an item's id."""
    out: list[Placement] = []
    seen: set[str] = set()
    for k, entry in enumerate(ledger.assemblies, start=1):
        if not isinstance(entry, Mapping):
            raise SteelyardError("must be a table", subject=f"assembly #{k}")
        p = read_placement(entry, k, ledger.units)
        if p.id in seen:
            raise SteelyardError("duplicate assembly id", subject=f"assembly {said(p.id)}", field="id")
        if p.id in own_ids:
            raise SteelyardError("an item of this file has the same id; ids of items and assemblies must differ",
                                 subject=f"assembly {said(p.id)}", field="id")
        seen.add(p.id)
        out.append(p)
    return out
