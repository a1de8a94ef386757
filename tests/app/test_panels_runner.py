"""The verdict panel, the properties panel, warnings that highlight, the mechanism overlay,
generators, and the analysis runner (debounce, thread, stale results)."""
from __future__ import annotations

import threading

import pytest
from PySide6.QtCore import Qt

from app_helpers import click, draw_chain, make_window

from kinestat.app import edits
from kinestat.app.analysis_runner import AnalysisRunner
from kinestat.app.document import Document
from kinestat.app.generators import frame, truss
from kinestat.core.model import Member, Node, Scheme, Support


@pytest.fixture
def win(qtbot, tmp_path):
    return make_window(qtbot, tmp_path)


def test_verdict_panel_hand_count_terms_next_to_rank(qtbot, win):
    draw_chain(qtbot, win, "bar", [(0, 0), (2, 2), (4, 0), (0, 0)])
    win.set_tool("pin")
    click(qtbot, win.view, 0, 0)
    win.set_tool("roller")
    click(qtbot, win.view, 4, 0)
    vp = win.verdict
    # simple triangle truss on pin + roller: Maxwell's rule b + r = 2j (3 + 3 = 6), determinate
    assert vp.verdict_label.text() == "Stable — statically determinate"
    assert vp.term_labels["joints"].text() == "3"
    assert vp.term_labels["members"].text() == "3"
    assert vp.term_labels["reactions"].text() == "3"
    assert vp.rank_labels["mechanisms"].text() == "0" and vp.rank_labels["self_stress"].text() == "0"
    assert "agrees" in vp.agree_label.text()


def test_verdict_panel_split_inside_and_supports(qtbot, win):
    # a rigid triangle with one roller: 2 rigid-body motions not stopped by the supports
    draw_chain(qtbot, win, "bar", [(0, 0), (2, 2), (4, 0), (0, 0)])
    win.set_tool("roller")
    click(qtbot, win.view, 0, 0)
    assert win.verdict_text() == "Unstable — 2 mechanisms"
    assert "Inside the structure: 0 mechanisms" in win.verdict.split_label.text()
    assert "at the supports: 2" in win.verdict.split_label.text()
    assert win.scene.mode_item.displaced


def test_warning_click_highlights_items(qtbot, win):
    draw_chain(qtbot, win, "beam", [(0, 0), (3, 0)])
    s, nid = edits.add_node(win.doc.scheme, 6, 2)  # a node no member reaches
    win.doc.commit("Add node", s)
    texts = win.verdict.warning_texts()
    assert any(nid in t for t in texts)
    lw = win.verdict.warnings
    item = next(lw.item(k) for k in range(lw.count()) if nid in lw.item(k).text())
    rect = lw.visualItemRect(item)
    qtbot.mouseClick(lw.viewport(), Qt.LeftButton, pos=rect.center())
    assert nid in win.scene.highlighted and win.scene.node_items[nid].highlighted
    assert win.doc.selected_nodes == {nid}
    # the next edit clears the highlight
    win.doc.move_nodes({nid: (6.0, 3.0)})
    assert not win.scene.highlighted


def test_properties_panel_edits_exactly(qtbot, win):
    draw_chain(qtbot, win, "beam", [(0, 0), (3, 0)])
    s = win.doc.scheme
    n1 = edits.node_at(s, 3, 0)
    win.doc.select(nodes=[n1])
    p = win.props
    p.node_x.setValue(3.25)
    assert win.doc.scheme.node_xy(n1) == (3.25, 0.0)
    p.support_kind.setCurrentText("guided")
    assert win.doc.scheme.supports[n1].kind == "guided"
    p.support_angle.setValue(45.0)
    assert win.doc.scheme.supports[n1].angle == 45.0
    p.node_hinge.setChecked(True)
    assert win.doc.scheme.nodes[n1].hinge
    (mid,) = win.doc.scheme.members
    win.doc.select(members=[mid])
    p.release_boxes[("start", "moment")].setChecked(True)
    assert win.doc.scheme.members[mid].releases_start == {"moment"}
    p.member_kind.setCurrentText("bar")
    m = win.doc.scheme.members[mid]
    assert m.kind == "bar" and not m.releases_start  # a bar is pin-ended: no releases kept
    assert not p.release_boxes[("start", "moment")].isEnabled()
    steps = win.doc.undo_stack.count()
    for _ in range(6):
        win.doc.undo_stack.undo()
    assert win.doc.undo_stack.count() == steps and win.doc.scheme.node_xy(n1) == (3.0, 0.0)
    assert n1 not in win.doc.scheme.supports


def test_generated_frame_degree(qtbot, win):
    # each closed rigid ring is 3 times indeterminate; fixed bases close the rings with the
    # ground: degree 3 x bays x storeys (common practice for multi-storey frames)
    win._insert(frame(3, 2, 5.0, 3.0, "fixed"), "frame")
    assert win.verdict_text() == "Stable — indeterminate to degree 18"
    assert len(win.doc.scheme.members) == 4 * 2 + 3 * 2
    win.doc.undo_stack.undo()
    assert not win.doc.scheme.members
    # pinned bases release one moment each: 3 x 3 x 2 - 4 = 14
    win._insert(frame(3, 2, 5.0, 3.0, "pin"), "frame")
    assert win.verdict_text() == "Stable — indeterminate to degree 14"


@pytest.mark.parametrize("pattern", ["pratt", "howe", "warren", "warren_verticals"])
@pytest.mark.parametrize("panels", [2, 4, 6])
def test_generated_trusses_are_determinate(pattern, panels):
    from kinestat.core.classify import classify

    s = truss(pattern, 12.0, 2.0, panels)
    b, j = len(s.members), len(s.nodes)
    # Maxwell's rule for a simple plane truss on pin + roller: b + 3 = 2j
    assert b + 3 == 2 * j
    c = classify(s)
    assert c.verdict == "determinate"


def test_pratt_and_howe_diagonals_mirror(qtbot):
    p, h = truss("pratt", 8.0, 2.0, 4), truss("howe", 8.0, 2.0, 4)

    def diagonals(s):
        out = set()
        for m in s.members.values():
            (x0, y0), (x1, y1) = s.node_xy(m.start), s.node_xy(m.end)
            if x0 != x1 and y0 != y1:
                lo, hi = ((x0, y0), (x1, y1)) if y0 < y1 else ((x1, y1), (x0, y0))
                out.add((lo, hi))
        return out

    # Pratt: in the left half a diagonal's low end is nearer mid-span than its high end
    for lo, hi in diagonals(p):
        assert abs(lo[0] - 4.0) < abs(hi[0] - 4.0)
    for lo, hi in diagonals(h):
        assert abs(lo[0] - 4.0) > abs(hi[0] - 4.0)


def _two_bar(y):
    s = Scheme()
    for nid, x, yy in (("A", 0, 0), ("C", 2, y), ("B", 4, 0)):
        s = s.with_node(Node(nid, x, yy))
    s = s.with_member(Member("m1", "A", "C", "bar")).with_member(Member("m2", "C", "B", "bar"))
    return s.with_support(Support("A", "pin")).with_support(Support("B", "pin"))


def test_runner_throttles_and_runs_big_models_off_the_gui_thread(qtbot):
    doc = Document(frame(20, 8, 5.0, 3.0))  # 20x8 frame: 328 members
    runner = AnalysisRunner(doc, doc, interval_ms=30, thread_members=100)
    with qtbot.waitSignal(runner.result_ready, timeout=20000) as blocker:
        for k in range(10):
            doc.move_nodes({"n20_8": (100.0 + 0.1 * k, 24.0)})
    assert blocker.args[0] == doc.revision
    assert runner.runs == 1
    assert runner.worker_thread is not None and runner.worker_thread != threading.get_ident()
    # fixed-base 20x8 frame: degree 3 x 20 x 8 = 480
    assert blocker.args[1].self_stress == 480


def test_runner_drops_stale_results(qtbot):
    doc = Document(frame(20, 8, 5.0, 3.0))
    runner = AnalysisRunner(doc, doc, interval_ms=1, thread_members=100)
    got = []
    runner.result_ready.connect(lambda rev, c: got.append(rev))
    # the second edit arrives while the first job runs
    runner.started.connect(lambda rev: rev == 1 and doc.move_nodes({"n20_8": (102.0, 24.0)}))
    doc.move_nodes({"n20_8": (101.0, 24.0)})
    qtbot.waitUntil(lambda: runner.result_revision == doc.revision, timeout=20000)
    assert runner.dropped == 1 and runner.runs == 2
    assert got == [doc.revision] == [2]


def test_runner_sync_mode_small_models_inline(qtbot):
    doc = Document(_two_bar(1.0))
    runner = AnalysisRunner(doc, doc, sync=True)
    doc.move_nodes({"C": (2.0, 0.0)})
    assert runner.result_revision == doc.revision
    assert runner.result.verdict == "unstable"  # collinear bars (Maxwell 1864)
    doc.move_nodes({"C": (2.0, 0.5)})
    assert runner.result.verdict == "determinate"


def test_title_and_units_are_one_step_each(qtbot, win):
    p = win.props
    win.doc.clear_selection()
    p.title_edit.setFocus()
    qtbot.keyClicks(p.title_edit, "Shed")
    qtbot.keyClick(p.title_edit, Qt.Key_Return)
    assert win.doc.scheme.title == "Shed" and win.doc.undo_stack.count() == 1
    edit = p.units_combo.lineEdit()
    edit.selectAll()
    qtbot.keyClicks(edit, "ft")
    qtbot.keyClick(edit, Qt.Key_Return)
    assert win.doc.scheme.units == "ft" and win.doc.undo_stack.count() == 2
    assert "ft" in win.units_label.text()


def test_title_only_edit_reuses_the_verdict(qtbot):
    """A change that leaves nodes, members and supports as they were (here the title) publishes
    the previous classification again instead of re-running the engine; a real edit re-runs it.
    The verdict itself is the frame count 3m + r - 3j = 9 + 6 - 12 = 3 of a fixed portal
    (common practice)."""
    from dataclasses import replace

    nodes = {k: Node(k, x, y) for k, (x, y) in {"A": (0, 0), "B": (0, 3), "C": (4, 3), "D": (4, 0)}.items()}
    members = {f"c{k}": Member(f"c{k}", a, b) for k, (a, b) in enumerate([("A", "B"), ("B", "C"), ("C", "D")])}
    supports = {"A": Support("A", "fixed"), "D": Support("D", "fixed")}
    doc = Document()
    runner = AnalysisRunner(doc, sync=True)
    doc.replace_scheme(Scheme(nodes, members, supports, "portal"))
    runs = runner.runs
    assert runner.result.self_stress == 3
    doc.replace_scheme(replace(doc.scheme, title="portal, renamed"))
    assert runner.runs == runs and runner.is_current() and runner.result.self_stress == 3
    # one fixed foot left: a bent cantilever, 3m + r - 3j = 9 + 3 - 12 = 0, determinate
    doc.replace_scheme(doc.scheme.without_support("D"))
    assert runner.runs == runs + 1 and runner.result.verdict == "determinate"
