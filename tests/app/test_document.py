"""The document: changes as ids with before/after values, undo/redo restoring the same ids,
one undo step per gesture, the canvas items following the model."""
from __future__ import annotations

from kinestat.app import edits
from kinestat.app.canvas_scene import CanvasScene
from kinestat.app.document import Change, Document, diff, new_gesture
from kinestat.core.model import Member, Node, Scheme, Support


def portal() -> Scheme:
    s = Scheme()
    for nid, x, y in (("A", 0, 0), ("B", 0, 3), ("C", 4, 3), ("D", 4, 0)):
        s = s.with_node(Node(nid, x, y))
    for mid, a, b in (("c1", "A", "B"), ("b1", "B", "C"), ("c2", "C", "D")):
        s = s.with_member(Member(mid, a, b))
    return s.with_support(Support("A", "fixed")).with_support(Support("D", "fixed"))


def test_diff_holds_only_what_changed_and_inverts():
    a = portal()
    b = edits.set_hinge(a, "B", True).without_support("D")
    ch = diff(a, b)
    assert set(ch.nodes) == {"B"} and set(ch.supports) == {"D"} and not ch.members
    assert ch.supports["D"] == (a.supports["D"], None)
    assert ch.apply(a) == b
    assert ch.inverted().apply(b) == a


def test_then_composes_and_cancels():
    a = portal()
    b = a.moved({"B": (0.0, 4.0)})
    c = b.moved({"B": (0.0, 3.0)})
    assert diff(a, b).then(diff(b, c)).is_empty()
    d = c.moved({"C": (5.0, 3.0)})
    both = diff(a, b).then(diff(b, d))
    assert set(both.nodes) == {"C"}


def test_undo_redo_restores_the_same_ids(qtbot):
    doc = Document(portal())
    s, nid = edits.split_member(doc.scheme, "b1", 2.0, 3.0)
    doc.commit("Split", s)
    new_members = set(doc.scheme.members) - {"c1", "b1", "c2"}
    doc.undo_stack.undo()
    assert set(doc.scheme.members) == {"c1", "b1", "c2"} and nid not in doc.scheme.nodes
    doc.undo_stack.redo()
    assert nid in doc.scheme.nodes and set(doc.scheme.members) - {"c1", "b1", "c2"} == new_members


def test_a_gesture_is_one_undo_step_and_a_round_trip_leaves_none(qtbot):
    doc = Document(portal())
    g = new_gesture()
    for k in range(1, 11):
        doc.move_nodes({"B": (0.1 * k, 3.0)}, gesture=g)
    assert doc.undo_stack.count() == 1
    assert doc.scheme.node_xy("B") == (1.0, 3.0)
    doc.undo_stack.undo()
    assert doc.scheme.node_xy("B") == (0.0, 3.0)
    doc.undo_stack.redo()
    g2 = new_gesture()
    doc.move_nodes({"C": (5.0, 3.0)}, gesture=g2)
    doc.move_nodes({"C": (4.0, 3.0)}, gesture=g2)  # back where it started
    assert doc.undo_stack.count() == 1  # the empty gesture left no step


def test_scene_items_follow_changes_by_id(qtbot):
    doc = Document(portal())
    scene = CanvasScene(doc)
    assert set(scene.node_items) == set("ABCD") and set(scene.member_items) == {"c1", "b1", "c2"}
    assert set(scene.support_items) == {"A", "D"}
    doc.move_nodes({"B": (1.0, 3.0)})
    pos = scene.node_items["B"].pos()
    assert (pos.x(), pos.y()) == (1.0, -3.0)
    r = scene.member_items["c1"].path().boundingRect()
    assert (r.left(), r.right(), r.top(), r.bottom()) == (0.0, 1.0, -3.0, 0.0)
    doc.commit("Delete", edits.delete(doc.scheme, node_ids=["D"]))
    assert "D" not in scene.node_items and "c2" not in scene.member_items and "D" not in scene.support_items
    doc.undo_stack.undo()
    assert "D" in scene.node_items and "c2" in scene.member_items and "D" in scene.support_items
    doc.select(nodes=["A"])
    assert scene.node_items["A"].selected and scene.support_items["A"].selected
    doc.commit("Release", edits.set_release(doc.scheme, "b1", "C", "moment", True))
    assert ("b1", "C") in scene.release_items
    doc.undo_stack.undo()
    assert ("b1", "C") not in scene.release_items


def test_replace_scheme_clears_history_and_marks_restored_drawings_modified(qtbot):
    doc = Document()
    doc.commit("Portal", portal())
    assert doc.undo_stack.count() == 1
    doc.replace_scheme(portal())
    assert doc.undo_stack.count() == 0 and not doc.is_modified()
    doc.replace_scheme(portal(), clean=False)
    assert doc.is_modified()


def test_selection_drops_deleted_items(qtbot):
    doc = Document(portal())
    doc.select(nodes=["B"], members=["b1"])
    doc.commit("Delete", edits.delete(doc.scheme, member_ids=["b1"]))
    assert doc.selected_members == frozenset() and doc.selected_nodes == {"B"}
    assert Change().is_empty()
