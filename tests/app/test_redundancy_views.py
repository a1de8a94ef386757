"""The redundancy, primary-structure and remedies views, and the document dropping an
example's "expected" block on the first edit."""
from __future__ import annotations

from kinestat.app.document import Document, new_gesture
from kinestat.core.io import load
from kinestat.examples import example_paths


def example(name: str):
    return next(p for p in example_paths() if p.stem == name)


# --------------------------------------------------------------------------- expected block
def test_first_edit_drops_the_expected_block_and_undo_brings_it_back(qtbot):
    s = load(example("tower_doubly_braced"))
    # the file states its own verdict (Maxwell 1864 hand count in its "expected" block)
    assert s.extra["expected"]["self_stress"] == 3
    doc = Document(s)
    doc.commit("Remove diagonal", s.without_members(["x1"]))
    assert "expected" not in doc.scheme.extra
    assert doc.scheme.extra.get("notes") == s.extra["notes"]  # other blocks stay
    doc.commit("Remove diagonal", doc.scheme.without_members(["x3"]))
    assert doc.undo_stack.count() == 2
    doc.undo_stack.undo()
    assert "expected" not in doc.scheme.extra
    doc.undo_stack.undo()
    assert doc.scheme.extra["expected"] == s.extra["expected"]
    doc.undo_stack.redo()
    assert "expected" not in doc.scheme.extra


def test_a_drag_back_to_the_start_keeps_the_expected_block(qtbot):
    s = load(example("tower_doubly_braced"))
    doc = Document(s)
    g = new_gesture()
    x, y = s.node_xy("L3")
    doc.move_nodes({"L3": (x + 0.5, y)}, gesture=g)
    assert "expected" not in doc.scheme.extra
    doc.move_nodes({"L3": (x, y)}, gesture=g)
    assert doc.undo_stack.count() == 0
    assert doc.scheme.extra["expected"] == s.extra["expected"]
