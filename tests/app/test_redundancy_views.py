"""The redundancy, primary-structure and remedies views, and the document dropping an
example's "expected" block on the first edit."""
from __future__ import annotations

import json
import math

import pytest
import sympy as sp
from PySide6.QtCore import QPoint, Qt
from PySide6.QtGui import QColor

from app_helpers import make_window, vp

from kinestat.app import drawing as dr
from kinestat.app.document import Document, new_gesture
from kinestat.core.classify import classify
from kinestat.core.io import dumps, load
from kinestat.core.model import Member, Node, Scheme, Support
from kinestat.core.redundancy import redundancy
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
    saved = json.loads(dumps(doc.scheme))
    assert "expected" not in saved and saved["notes"] == s.extra["notes"]
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


# --------------------------------------------------------------------------- helpers
@pytest.fixture
def win(qtbot, tmp_path):
    w = make_window(qtbot, tmp_path)
    yield w
    for other in w.insight.opened:
        other.doc.undo_stack.setClean()
        other.close()


def open_view(qtbot, w, name: str, example_name: str | None = None, scheme: Scheme | None = None):
    if example_name is not None:
        assert w.open_path(example(example_name), as_example=True)
    elif scheme is not None:
        w.doc.replace_scheme(scheme)
    w.insight.show_view(name)
    qtbot.waitUntil(lambda: w.insight.runners[name].is_current(), timeout=10000)
    w.view.fit()
    return w.insight.views[name]


def table_values(view) -> dict[str, float]:
    out = {}
    for r in range(view.table.rowCount()):
        kind, key = view.table.item(r, 0).data(Qt.UserRole)
        if kind == "member":
            out[key] = float(view.table.item(r, 1).data(Qt.DisplayRole))
    return out


def table_status(view) -> dict[str, str]:
    return {view.table.item(r, 0).data(Qt.UserRole)[1]: view.table.item(r, 2).text()
            for r in range(view.table.rowCount())}


def fan() -> Scheme:
    """Three bars from Q to three pins: the middle one vertical, the outer ones at 45 degrees."""
    s = Scheme(title="three-bar fan")
    for nid, x, y in (("A", -2.0, 2.0), ("B", 0.0, 2.0), ("C", 2.0, 2.0), ("Q", 0.0, 0.0)):
        s = s.with_node(Node(nid, x, y))
    for mid, a in (("a", "A"), ("b", "B"), ("c", "C")):
        s = s.with_member(Member(mid, a, "Q", "bar"))
    for nid in "ABC":
        s = s.with_support(Support(nid, "pin"))
    return s


def canvas_colour_near(w, x, y, colour: str, radius: int = 18) -> bool:
    """Is some pixel of ``colour`` within ``radius`` pixels of model point (x, y) on the canvas?"""
    img = w.view.viewport().grab().toImage()
    c = QColor(colour)
    p = vp(w.view, x, y)
    for dx in range(-radius, radius + 1):
        for dy in range(-radius, radius + 1):
            q = QPoint(p.x() + dx, p.y() + dy)
            if 0 <= q.x() < img.width() and 0 <= q.y() < img.height():
                pc = img.pixelColor(q)
                if abs(pc.red() - c.red()) + abs(pc.green() - c.green()) + abs(pc.blue() - c.blue()) < 30:
                    return True
    return False


def mid_of(s: Scheme, mid: str) -> tuple[float, float]:
    m = s.members[mid]
    (x0, y0), (x1, y1) = s.node_xy(m.start), s.node_xy(m.end)
    return (x0 + x1) / 2, (y0 + y1) / 2


# --------------------------------------------------------------------------- redundancy view
def test_redundancy_view_shows_the_engine_values_and_they_sum_to_s(qtbot, win):
    view = open_view(qtbot, win, "redundancy", "tower_doubly_braced")
    shown = table_values(view)
    core = redundancy(win.doc.scheme).members
    assert set(shown) == set(core)
    for mid, v in core.items():
        assert shown[mid] == pytest.approx(v, abs=5e-4)
    # the trace of the redundancy matrix is s (von Scheven, Ramm & Bischoff 2021); s = 3 by
    # Maxwell's rule b + r - 2j = 15 + 4 - 16 (Maxwell 1864)
    assert sum(shown.values()) == pytest.approx(3.0, abs=5e-3)
    assert all(0.0 <= v <= 1.0 for v in shown.values())
    assert "degree 3" in view.summary_label.text()


def test_three_bar_fan_values_match_the_closed_form(qtbot, win):
    view = open_view(qtbot, win, "redundancy", scheme=fan())
    # exact: self-stress S = (1, -sqrt2, 1) (equilibrium of Q), F = diag(L sqrt2, L, L sqrt2);
    # R_ii = F_ii S_i^2 / (S^T F S) (von Scheven, Ramm & Bischoff 2021), worked with sympy
    r2 = sp.sqrt(2)
    S = [1, -r2, 1]
    F = [2 * r2, 2, 2 * r2]
    total = sum(f * x * x for f, x in zip(F, S))
    exact = {mid: sp.nsimplify(F[k] * S[k] ** 2 / total) for k, mid in enumerate("abc")}
    assert sp.simplify(exact["b"] - (r2 - 1)) == 0
    shown = table_values(view)
    for mid, v in exact.items():
        assert shown[mid] == pytest.approx(float(v), abs=5e-4)
    # hovering the middle bar shows its value
    qtbot.mouseMove(win.view.viewport(), vp(win.view, 0.0, 1.0))
    qtbot.waitUntil(lambda: view.hover_member == "b", timeout=3000)
    assert f"{float(exact['b']):.3f}" in view.member_words("b")


def test_critical_members_are_marked_in_the_table_and_on_the_canvas(qtbot, win):
    view = open_view(qtbot, win, "redundancy", "footbridge_warren")
    status = table_status(view)
    members = win.doc.scheme.members
    # a statically determinate truss loses its stability when any one bar goes (common practice)
    assert all("critical" in status[mid] for mid in members)
    assert all(v == 0.0 for v in table_values(view).values())
    view = open_view(qtbot, win, "redundancy", "tower_doubly_braced")
    status = table_status(view)
    # a panel braced with both diagonals stays triangulated without any one of its bars,
    # and the pinned feet still hold it (common practice)
    assert not any("critical" in status[mid] for mid in win.doc.scheme.members)
    # a frame whose girder is the only member reaching a column top: removing the girder
    # leaves the column a bar pinned at its foot only, free to swing (common practice)
    view = open_view(qtbot, win, "redundancy", "yard_gantry")
    status = table_status(view)
    assert "critical" in status["g1"] and "critical" in status["g2"]
    assert "critical" not in status["c2"]
    s = win.doc.scheme
    assert canvas_colour_near(win, *mid_of(s, "g1"), dr.PALETTE.unstable)
    assert not canvas_colour_near(win, *mid_of(s, "c2"), dr.PALETTE.unstable)


def test_state_picker_shows_each_state_with_the_sign_of_its_forces(qtbot, win):
    view = open_view(qtbot, win, "redundancy", "tower_doubly_braced")
    assert view.state_combo.count() == 1 + 3
    for k in range(3):
        view.select_state(k)
        st = view.current_state()
        d1, d2 = f"x{2 * k + 1}", f"x{2 * k + 2}"
        assert {d1, d2} <= set(st.members)
        # one braced 2 m x 3 m panel: at a corner, the diagonal's force balances the leg and the
        # chord, N_leg = -N_diag * 3/sqrt13 and N_chord = -N_diag * 2/sqrt13 (joint equilibrium)
        nd = st.forces[d1]["N"]
        assert st.forces[d2]["N"] == pytest.approx(nd)
        for leg in (f"l{k + 1}", f"r{k + 1}"):
            assert st.forces[leg]["N"] == pytest.approx(-nd * 3 / math.sqrt(13))
        words = view.state_label.text()
        sign_d = "tension" if nd > 0 else "compression"
        other = "compression" if nd > 0 else "tension"
        assert f"{sign_d}: {d1}, {d2}" in words and f"{other}: " in words
        assert f"l{k + 1}" in words.split(f"{other}: ")[1]
    view.select_state(-1)
    assert view.current_state() is None


# --------------------------------------------------------------------------- primary structure
def truss_count(s: Scheme) -> int:
    """Maxwell's rule for a pin-jointed truss: b + r - 2j (Maxwell 1864)."""
    r = sum(len(sup.fixes) for sup in s.supports.values())
    return len(s.members) + r - 2 * len(s.nodes)


def test_primary_alternatives_step_and_open_as_a_new_stable_drawing(qtbot, win):
    view = open_view(qtbot, win, "primary", "tower_doubly_braced")
    original = win.doc.scheme
    steps_before = win.doc.undo_stack.count()
    choices = view.structures()
    assert len(choices) >= 2
    assert view.list.count() == 3  # s = 3 releases (Maxwell 1864: 15 + 4 - 16)
    seen = [view.current().key()]
    while view.next_button.isEnabled():
        qtbot.mouseClick(view.next_button, Qt.LeftButton)
        assert view.which_label.text().startswith(f"Choice {view.index + 1} of {len(choices)}")
        seen.append(view.current().key())
    assert len(set(seen)) == len(choices)  # every alternative is a different set of releases
    qtbot.mouseClick(view.prev_button, Qt.LeftButton)
    ps = view.current()
    assert view.list.count() == len(ps.releases) == 3
    # picking a release shows the state of self-stress it frees
    view.list.setCurrentRow(0)
    assert view.chosen_state() is not None and "Freed state" in view.state_label.text()
    qtbot.mouseClick(view.open_button, Qt.LeftButton)
    assert len(win.insight.opened) == 1
    other = win.insight.opened[0]
    qtbot.waitExposed(other)
    released = other.doc.scheme
    c = classify(released)
    # the primary structure is stable and statically determinate ...
    assert c.mechanisms == 0 and c.self_stress == 0
    assert other.verdict_text() == "Stable — statically determinate"
    # ... and passes Maxwell's count for a truss exactly (b + r - 2j = 0, Maxwell 1864)
    assert truss_count(released) == 0
    # the original drawing is untouched
    assert win.doc.scheme is original and win.doc.undo_stack.count() == steps_before
    assert classify(win.doc.scheme).self_stress == 3
    # in the new drawing the releases are one undoable step from a copy of the original
    assert other.doc.undo_stack.count() == 1
    other.doc.undo_stack.undo()
    assert other.doc.scheme.members == original.members and other.doc.scheme.supports == original.supports
    other.doc.undo_stack.redo()
    assert truss_count(other.doc.scheme) == 0


def test_primary_releases_are_drawn_on_the_canvas(qtbot, win):
    view = open_view(qtbot, win, "primary", "yard_gantry")
    ps = view.current()
    assert [r.kind for r in ps.releases] == ["reaction"] * 3  # reactions are preferred first
    s = win.doc.scheme
    # the released supports carry the numbered mark in the mechanism colour
    for rel in ps.releases:
        assert canvas_colour_near(win, *s.node_xy(rel.item), dr.PALETTE.mechanism, radius=60)
    win.insight.docks["primary"].hide()
    qtbot.waitUntil(lambda: not win.insight.overlay.active("primary"), timeout=2000)
    assert not canvas_colour_near(win, *s.node_xy(ps.releases[0].item), dr.PALETTE.mechanism, radius=60)


def test_unstable_scheme_has_no_primary_structure(qtbot, win):
    view = open_view(qtbot, win, "primary", "storage_rack_unbraced")
    assert view.current() is None and not view.open_button.isEnabled()
    assert "unstable" in view.summary_label.text().lower()


# --------------------------------------------------------------------------- remedies
def list_rect(lst, k):
    return lst.visualItemRect(lst.item(k))


def test_apply_a_remedy_from_the_list_makes_it_stable_and_undo_restores(qtbot, win):
    panel = open_view(qtbot, win, "remedies", "braced_bay_missing_diagonal")
    assert win.verdict_text().startswith("Unstable")
    rems = panel.remedies()
    k = next(i for i, r in enumerate(rems) if r.kind == "bar")
    a, b = rems[k].change["add_bar"]
    # hovering previews the change: the new bar drawn in the preview colour, nothing edited
    lst = panel.list
    lst.scrollToItem(lst.item(k))
    qtbot.wait(20)  # let the list lay out and scroll
    qtbot.mouseMove(lst.viewport(), list_rect(lst, k).center())
    qtbot.waitUntil(lambda: panel.hovered_row == k and panel.preview is not None, timeout=3000)
    assert panel.preview.after is rems[k].scheme
    assert set(panel.preview.change.members) and win.doc.undo_stack.count() == 0
    s = win.doc.scheme
    (xa, ya), (xb, yb) = s.node_xy(a), s.node_xy(b)
    assert canvas_colour_near(win, (xa + xb) / 2, (ya + yb) / 2, dr.PALETTE.preview, radius=6)
    # leaving the list ends the preview (nothing is picked yet)
    qtbot.mouseMove(panel.apply_button)
    qtbot.waitUntil(lambda: panel.preview is None, timeout=3000)
    assert not win.insight.overlay.active("remedy")
    # apply it from the list
    qtbot.mouseClick(lst.viewport(), Qt.LeftButton, pos=list_rect(lst, k).center())
    qtbot.mouseClick(panel.apply_button, Qt.LeftButton)
    assert win.doc.undo_stack.count() == 1
    new = [m for m in win.doc.scheme.members.values() if {m.start, m.end} == {a, b}]
    assert len(new) == 1 and new[0].kind == "bar"
    # a diagonal in the open panel triangulates it: Maxwell's count gives b + r - 2j = 9 + 4 - 12 = 1,
    # all of it self-stress once the mechanism is gone (Maxwell 1864; common practice)
    assert truss_count(win.doc.scheme) == 1
    assert win.verdict_text() == "Stable — indeterminate to degree 1"
    qtbot.waitUntil(lambda: panel.result is not None and panel.result.result.mechanisms == 0, timeout=5000)
    assert "stable" in panel.summary_label.text().lower()
    # undo with the keyboard: unstable again
    qtbot.keyClick(win.view, Qt.Key_Z, Qt.ControlModifier)
    assert not any({m.start, m.end} == {a, b} for m in win.doc.scheme.members.values())
    assert win.verdict_text().startswith("Unstable")
    qtbot.waitUntil(lambda: panel.result is not None and panel.result.result.mechanisms == 1, timeout=5000)


def test_smallest_set_removes_every_mechanism_in_one_step(qtbot, win):
    panel = open_view(qtbot, win, "remedies", "storage_rack_unbraced")
    c0 = classify(win.doc.scheme)
    assert c0.mechanisms == 2
    qtbot.mouseClick(panel.smallest_button, Qt.LeftButton)
    assert win.doc.undo_stack.count() == 1
    assert classify(win.doc.scheme).mechanisms == 0
    assert win.verdict_text().startswith("Stable")
    win.doc.undo_stack.undo()
    assert win.verdict_text() == "Unstable — 2 mechanisms"


def test_remedies_are_not_applied_from_an_out_of_date_list(qtbot, tmp_path):
    w = make_window(qtbot, tmp_path, sync=False)
    w.open_path(example("braced_bay_missing_diagonal"), as_example=True)
    w.insight.show_view("remedies")
    panel = w.insight.remedies
    runner = w.insight.runners["remedies"]
    qtbot.waitUntil(lambda: runner.is_current() and panel.result is not None, timeout=10000)
    x, y = w.doc.scheme.node_xy("E")
    w.doc.move_nodes({"E": (x + 0.25, y)})
    assert panel.is_stale() and not panel.apply_button.isEnabled()
    assert not panel.apply(0)
    qtbot.waitUntil(lambda: runner.is_current(), timeout=10000)
    assert not panel.is_stale() and panel.apply_button.isEnabled()


def test_a_failing_analysis_is_reported_not_raised(qtbot, win):
    from dataclasses import replace

    s = load(example("tower_doubly_braced"))
    bad = s.with_member(replace(s.members["x1"], axial_stiffness=-1.0))
    view = open_view(qtbot, win, "redundancy", scheme=bad)
    # a member with a negative stiffness has no flexibility: the message names member and field
    assert view.summary_label.text() == "Could not work out the redundancy"
    assert 'member "x1"' in view.status_label.text() and "stiffness.axial" in view.status_label.text()
    assert view.table.rowCount() == 0 and not win.insight.overlay.active("redundancy")


# --------------------------------------------------------------------------- background work
def test_views_work_only_while_their_dock_shows(qtbot, win):
    open_view(qtbot, win, "redundancy", "tower_doubly_braced")
    runners = win.insight.runners
    assert runners["redundancy"].active and not runners["primary"].active and not runners["remedies"].active
    runs = {k: r.runs for k, r in runners.items()}
    x, y = win.doc.scheme.node_xy("L3")
    win.doc.move_nodes({"L3": (x + 0.2, y)})
    assert runners["redundancy"].runs == runs["redundancy"] + 1 and runners["redundancy"].is_current()
    assert runners["primary"].runs == runs["primary"] and runners["remedies"].runs == runs["remedies"]
    win.insight.show_view("primary")  # catches up at once when shown
    assert runners["primary"].is_current() and not runners["redundancy"].active


def test_big_schemes_are_analysed_off_the_gui_thread_and_stale_results_dropped(qtbot, tmp_path):
    import threading

    from catalogue import strip_truss

    s = strip_truss(40)
    for i in range(40):  # the second diagonal in every panel: s = 40 (one per panel, common practice)
        s = s.with_member(Member(f"x{i}", f"t{i}", f"b{i + 1}", "bar"))
    w = make_window(qtbot, tmp_path, sync=False)
    runner = w.insight.runners["redundancy"]
    got = []
    runner.result_ready.connect(lambda rev, res: got.append(rev))
    # the drawing changes while the first job runs: that result is dropped, the next one shown
    runner.started.connect(lambda rev: len(got) == 0 and runner.dropped == 0 and w.doc.move_nodes(
        {"t39": (w.doc.scheme.node_xy("t39")[0] + 0.1, w.doc.scheme.node_xy("t39")[1])}))
    w.doc.replace_scheme(s)
    w.insight.show_view("redundancy")
    qtbot.waitUntil(lambda: runner.is_current() and w.insight.redundancy.result is not None, timeout=30000)
    assert runner.dropped == 1 and got == [w.doc.revision]
    assert runner.worker_thread is not None and runner.worker_thread != threading.get_ident()
    red = w.insight.redundancy.result.redundancy
    assert red.self_stress == 40 and red.total == pytest.approx(40.0, abs=1e-6)
    w.doc.undo_stack.setClean()
