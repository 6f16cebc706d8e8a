"""Own inertia kept sparse (only the rows that have one) means the same as the dense column.

Reference: each item's own tensor from `Item.own_tensor` (the single-item
formula), placed row by row into an (n, 3, 3) array of zeros; and the roll-up
of that dense column (the parallel-axis sum over all rows, common practice).
"""

from __future__ import annotations

import pickle

import numpy as np

from steelyard.core.document.model import Item, ItemArrays, Shape
from steelyard.core.physics.rollup import rollup


def _dense(items) -> np.ndarray:
    out = np.zeros((len(items), 3, 3))
    for i, it in enumerate(items):
        out[i] = it.own_tensor()
    return out


ITEMS = [Item("a", 2.0, (0.0, 0.0, 0.0)),
         Item("b", 3.0, (1.0, 0.0, 0.0), inertia=(1.0, 2.0, 2.5, 0.1, 0.0, 0.2)),
         Item("c", 1.0, (0.0, 2.0, 0.0)),
         Item("d", 4.0, (0.0, 0.0, 3.0), shape=Shape("box", {"size": (1.0, 2.0, 3.0)}), rotate=(("z", 30.0),))]


def test_sparse_column_is_the_dense_one():
    a = ItemArrays.from_items(ITEMS)
    assert a.dense_own is None and a.own_rows.tolist() == [1, 3]
    assert np.array_equal(a.own, _dense(ITEMS))


def test_edits_keep_the_sparse_column_right():
    a = ItemArrays.from_items(ITEMS)
    edits = [(0, ITEMS[0].evolve(inertia=(1.0, 1.0, 1.0, 0.0, 0.0, 0.0))),  # a row gains a tensor
             (1, ITEMS[1].evolve(inertia=(3.0, 3.0, 3.0, 0.0, 0.0, 0.0))),  # a row's tensor changes
             (3, ITEMS[3].evolve(shape=None, rotate=())),  # a row loses its tensor
             (2, ITEMS[2].evolve(mass=5.0))]  # no tensor before or after
    items = list(ITEMS)
    for i, item in edits:
        a = a.with_row(i, item)
        items[i] = item
        assert np.array_equal(a.own, _dense(items))
        assert np.all(np.diff(a.own_rows) > 0)  # still ascending
    assert a.own_rows.tolist() == [0, 1]
    assert np.array_equal(a.unit_mass, [it.mass for it in items])


def test_rollup_adds_sparse_rows_by_index():
    a = ItemArrays.from_items(ITEMS)
    mass = a.unit_mass * a.quantity
    dense = rollup(mass, a.cg, _dense(ITEMS))
    rows, values = a.own_sparse()
    sparse = rollup(mass, a.cg, values, own_rows=rows)
    assert sparse.mass == dense.mass
    np.testing.assert_allclose(sparse.inertia_cg, dense.inertia_cg, rtol=1e-15, atol=1e-15)
    np.testing.assert_allclose(sparse.cg, dense.cg, rtol=0, atol=0)


def test_dense_built_columns_give_sparse_rows_and_pickle():
    own = _dense(ITEMS)
    a = ItemArrays(np.ones(4), np.ones(4), np.zeros((4, 3)), own, np.zeros(4, dtype=bool))
    rows, values = a.own_sparse()
    assert rows.tolist() == [1, 3] and np.array_equal(values, own[[1, 3]])
    b = pickle.loads(pickle.dumps(ItemArrays.from_items(ITEMS)))
    assert np.array_equal(b.own, own) and b.own_rows.tolist() == [1, 3]
