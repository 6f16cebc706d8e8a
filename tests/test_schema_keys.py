"""Unknown keys are named with their item and field, also now that a known table is checked in one set operation.

Reference: the keys as written in each test document (common practice: an
error names the first unknown key in file order, with the item it sits in).
"""

from __future__ import annotations

import pytest

from steelyard.core.document.schema import check_document
from steelyard.core.errors import SteelyardError


def _items(n: int, extra: dict | None = None, at: int = 3) -> dict:
    items = [{"id": f"p{k}", "mass": 1.0, "cg": [0.0, 0.0, 0.0],
              "inertia": {"xx": 1.0, "yy": 1.0, "zz": 1.0, "xy": 0.0, "xz": 0.0, "yz": 0.0}} for k in range(n)]
    if extra:
        items[at].update(extra)
    return {"steelyard": 1, "item": items}


def test_known_keys_pass():
    check_document(_items(10))


def test_unknown_item_key_names_the_item_and_the_key():
    with pytest.raises(SteelyardError) as exc:
        check_document(_items(10, {"masss": 2.0}))
    assert exc.value.subject == "item 'p3'"
    assert exc.value.field == "masss"
    assert "did you mean" in str(exc.value) and "'mass'" in str(exc.value)


def test_the_first_unknown_key_in_file_order_is_named():
    doc = _items(5)
    doc["item"][1] = {"id": "p1", "zeta": 1, "mass": 1.0, "alpha": 2, "cg": [0.0, 0.0, 0.0]}
    with pytest.raises(SteelyardError) as exc:
        check_document(doc)
    assert exc.value.field == "zeta"


def test_unknown_key_inside_a_known_sub_table():
    doc = {"steelyard": 1, "sequence": [{"name": "s1", "step": [{"add": "a"}]},
                                         {"name": "s2", "step": [{"add": "a"}, {"remove": "b", "colour": 1}]}]}
    with pytest.raises(SteelyardError) as exc:
        check_document(doc)
    assert exc.value.subject == "sequence 's2'"
    assert exc.value.field == "step 2 colour"


def test_an_item_without_a_name_is_named_by_position():
    doc = _items(3)
    doc["item"][2] = {"mass": 1.0, "bogus": 1}
    with pytest.raises(SteelyardError) as exc:
        check_document(doc)
    assert exc.value.subject == "item #3"
