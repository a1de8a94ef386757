"""The PDF check report: what a checker files with a scheme.

:func:`write_report` writes an A4 report with Qt's own PDF writer (``QPdfWriter``), drawing
the scheme with :func:`kinestat.app.drawing.paint_scheme`, the same code the canvas uses, so
the report and the screen never disagree.  Content, in order:

* a title block: scheme title, file name, date, units, sizes, tool version, and a short
  content hash of the canonical scheme JSON (:func:`content_hash`) so a later reader can
  tell which version of the scheme was checked;
* the verdict in words and the rank result (Pellegrino & Calladine 1986 split into the
  structure's own part and the supports' part);
* the drawing with member and node ids;
* the hand count term by term (Maxwell's rule, or the frame count with its equations of
  condition; the closed-loop rule where it applies) beside the rank result, and the
  explanation in words when they differ;
* warnings and notes;
* where they apply: mechanism positions with the rigid bodies and their instant centres,
  the redundancy per member as a bar chart, critical members, a proposed primary
  structure and remedies;
* the nodes, supports and members in tables.

Every page carries the concept-stage caution and "page k of n".  The numbers all come from
:func:`kinestat.core.report_data.check_json`, the object ``kinestat check --json`` prints,
so a report never says something the check does not.

Needs a ``QGuiApplication`` (``kinestat report`` makes one, offscreen when there is no
display).  Coordinates are device pixels of a 96 dpi page: the drawing code's pixel sizes
then look on paper as they do on a screen at 100 %.
"""
from __future__ import annotations

import datetime as _dt
import hashlib
import json
import math
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable, Sequence

from PySide6.QtCore import QMarginsF, QPointF, QRectF, Qt
from PySide6.QtGui import (QBrush, QColor, QFont, QFontMetricsF, QPageLayout, QPageSize, QPainter,
                           QPdfWriter, QPen, QPolygonF)

from kinestat.core.io import scheme_to_dict
from kinestat.core.model import Scheme, arc_points

from .drawing import (CAUTION, PALETTE, ModelTransform, draw_verdict_marker, paint_scheme, pen,
                      scheme_bounds, verdict_colour)
from .qt_compat import keep_none_alive

#: page resolution: drawing-code pixels are 96 dpi pixels
DPI = 96
#: length of the printed content hash (hex digits of SHA-256)
HASH_DIGITS = 12
#: at most this many mechanism modes get a page of positions
MAX_MOTION_MODES = 3
#: tracing budget per direction for the report's positions
MOTION_STEPS = 160
#: rows of the self-stress table; releases of an alternative primary structure spelled out
MAX_STATE_ROWS = 30
MAX_LISTED_RELEASES = 12
#: single remedies listed
MAX_REMEDIES = 10
#: above this many members the positions are not traced (first-order shape only)
MOTION_MAX_MEMBERS = 400

INK = "#1d2733"
MUTED = "#6b7785"
RULE = "#b9c3cf"
FILL = "#eef1f4"
WHITE = "#ffffff"
#: body colours (Okabe-Ito, without the mechanism vermillion); bodies are also labelled B1, B2...
#: mechanism positions: panels per row and panel height
STRIP_COLUMNS = 3
STRIP_PANEL_H = 165.0
#: the strip shows a direction of motion until a node has travelled this many scheme sizes
STRIP_TRAVEL = 0.6
BODY_COLOURS = ("#0072b2", "#009e73", "#cc79a7", "#e69f00", "#56b4e9", "#000000", "#8a6d3b")


# ---------------------------------------------------------------------- content hash
def canonical_json(scheme: Scheme) -> str:
    """The scheme as canonical JSON: file-format keys sorted, nodes and members sorted by id,
    supports by node, no whitespace; independent of the order items were drawn in."""
    d = scheme_to_dict(scheme)
    d["nodes"] = sorted(d["nodes"], key=lambda n: n["id"])
    d["members"] = sorted(d["members"], key=lambda m: m["id"])
    d["supports"] = sorted(d["supports"], key=lambda s: s["node"])
    return json.dumps(d, sort_keys=True, separators=(",", ":"), ensure_ascii=False)


def content_hash(scheme: Scheme, digits: int = HASH_DIGITS) -> str:
    """First ``digits`` hex digits of the SHA-256 of :func:`canonical_json` (FIPS 180-4)."""
    return hashlib.sha256(canonical_json(scheme).encode("utf-8")).hexdigest()[:digits]


def _version() -> str:
    try:
        from importlib.metadata import version

        return version("kinestat")
    except Exception:  # noqa: BLE001 - an uninstalled checkout still writes reports
        return "development"


# ---------------------------------------------------------------------- facts
@dataclass
class MotionView:
    """One mechanism mode as the report shows it."""

    index: int
    kind: str                     # "rigid-body" | "internal"
    motion: str                   # "finite" | "infinitesimal" | "first order"
    frames: list[dict]            # node id -> (x, y), along the path
    start: int
    ended: dict
    bodies: list                  # core.bodies.Piece at the drawn position
    fixed_members: list[str]
    driver: str | None
    note: str


@dataclass
class Facts:
    """Everything the report prints (no Qt)."""

    scheme: Scheme
    source_name: str
    when: _dt.datetime
    hash: str
    version: str
    check: dict
    classification: object
    motion: list[MotionView] = field(default_factory=list)
    motion_note: str = ""
    #: core.primary.PrimaryResult (indeterminate schemes) or None
    primary: object = None
    #: core.remedies.RemedyResult (unstable schemes) or None
    remedies: object = None
    #: why a section could not be made (section -> words)
    skipped: dict = field(default_factory=dict)


def gather(scheme: Scheme, source_name: str | None = None, *, classification=None,
           when: _dt.datetime | None = None, extras: bool = True) -> Facts:
    """Classify ``scheme`` and collect what the report prints."""
    from kinestat.core.classify import classify
    from kinestat.core.report_data import check_json

    c = classification if classification is not None else classify(scheme)
    check = check_json(scheme, extras=extras, result=c)
    f = Facts(scheme, source_name or "(not saved)", when or _dt.datetime.now().astimezone(),
              content_hash(scheme), _version(), check, c)
    if c.verdict == "unstable" and extras:
        f.motion, f.motion_note = _motion_views(scheme, c)
    if extras and c.verdict == "indeterminate":
        try:
            from kinestat.core.primary import primary_structure

            f.primary = primary_structure(scheme, c)
        except Exception as exc:  # noqa: BLE001 - a report is still worth filing without it
            f.skipped["primary"] = f"{type(exc).__name__}: {exc}"
    if extras and c.verdict == "unstable":
        try:
            from kinestat.core.remedies import remedies

            f.remedies = remedies(scheme, c)
        except Exception as exc:  # noqa: BLE001
            f.skipped["remedies"] = f"{type(exc).__name__}: {exc}"
    return f


def changed_items(before: Scheme, after: Scheme) -> tuple[list[str], list[str], list[str]]:
    """(members added or changed, members removed, nodes whose position, hinge or support changed)."""
    members = [mid for mid, m in after.members.items() if before.members.get(mid) != m]
    removed = [mid for mid in before.members if mid not in after.members]
    nodes = [nid for nid, n in after.nodes.items()
             if before.nodes.get(nid) != n or before.supports.get(nid) != after.supports.get(nid)]
    nodes += [nid for nid in before.supports if nid not in after.nodes]
    return members, removed, nodes


def _motion_views(scheme: Scheme, c) -> tuple[list[MotionView], str]:
    """Traced positions of the first modes (core.motion), or first-order shapes when tracing
    is not possible; never raises."""
    views: list[MotionView] = []
    if len(scheme.members) <= MOTION_MAX_MEMBERS:
        try:
            from kinestat.core.constraints import ConstraintModel
            from kinestat.core.motion import trace
            from kinestat.core.secondorder import assess

            model = ConstraintModel(scheme)
            verdict = assess(model)
            if verdict.motion != "none":
                n = 1
                k = 1
                while k <= n and k <= MAX_MOTION_MODES:
                    path = trace(scheme, mode=k, steps=MOTION_STEPS, model=model, verdict=verdict)
                    n = len(path.modes)
                    kind = path.modes[k - 1].kind if path.modes else "internal"
                    views.append(MotionView(k, kind, path.motion, path.frames, path.start, path.ended,
                                            path.bodies, path.fixed_members, path.driver, path.note))
                    k += 1
                more = n - len(views)
                note = f"{more} further mode(s) not drawn." if more > 0 else ""
                return views, note
        except Exception as exc:  # noqa: BLE001 - the report falls back to the first-order shape
            views = []
            note = f"positions could not be traced ({type(exc).__name__}: {exc}); first-order shapes shown"
        else:
            note = ("the exact constraints show no mechanism (a near-singular geometry); the rank test's "
                    "first-order shapes are shown")
    else:
        note = f"more than {MOTION_MAX_MEMBERS} members: positions not traced; first-order shapes shown"
    amp = 0.1 * scheme.size()
    for k, mode in enumerate(c.modes[:MAX_MOTION_MODES], start=1):
        frames = []
        for a in (-1.0, 0.0, 1.0):
            fr = {}
            for nid, n in scheme.nodes.items():
                dx, dy = mode.displacements.get(nid, (0.0, 0.0))
                fr[nid] = (n.x + a * amp * dx, n.y + a * amp * dy)
            frames.append(fr)
        views.append(MotionView(k, mode.kind, "first order", frames, 1, {}, [], [], None,
                                "first-order shape, amplitude arbitrary"))
    return views, note


# ---------------------------------------------------------------------- type and layout
class Style:
    """Fonts of the report (sizes in points; the writer maps them to its resolution)."""

    def __init__(self, device):
        self.device = device
        base = QFont()
        base.setStyleHint(QFont.SansSerif)
        for tag in ("liga", "clig"):  # plain letters, so that the PDF's text searches as typed
            base.setFeature(QFont.Tag(tag), 0)
        self.body = QFont(base)
        self.body.setPointSizeF(8.8)
        self.small = QFont(base)
        self.small.setPointSizeF(7.4)
        self.italic = QFont(self.small)
        self.italic.setItalic(True)
        self.bold = QFont(self.body)
        self.bold.setBold(True)
        self.h1 = QFont(base)
        self.h1.setPointSizeF(10.5)
        self.h1.setBold(True)
        self.title = QFont(base)
        self.title.setPointSizeF(15.0)
        self.title.setBold(True)
        self.verdict = QFont(base)
        self.verdict.setPointSizeF(12.5)
        self.verdict.setBold(True)
        self.mono = QFont(base)
        self.mono.setFamily("DejaVu Sans Mono")
        self.mono.setStyleHint(QFont.Monospace)
        self.mono.setPointSizeF(8.4)
        self.label = QFont(base)
        self.label.setPointSizeF(6.6)

    def metrics(self, font: QFont) -> QFontMetricsF:
        return QFontMetricsF(font, self.device)

    def text_height(self, text: str, font: QFont, width: float) -> float:
        r = self.metrics(font).boundingRect(QRectF(0, 0, max(width, 1.0), 1e6),
                                            int(Qt.TextWordWrap | Qt.AlignLeft), text)
        return max(r.height(), self.metrics(font).height())


class Block:
    """Something of a fixed height that paints itself into a rectangle of the page."""

    height: float = 0.0
    gap: float = 6.0
    #: a heading: keep on the page of the block after it
    keep_with_next: bool = False

    def paint(self, p: QPainter, r: QRectF) -> None:  # pragma: no cover - interface
        raise NotImplementedError


class Text(Block):
    def __init__(self, style: Style, text: str, width: float, font: QFont | None = None,
                 colour: str = INK, indent: float = 0.0, gap: float = 4.0, marker: str | None = None,
                 keep: bool = False):
        self.keep_with_next = keep
        self.text, self.font, self.colour = text, font or style.body, colour
        self.indent, self.gap, self.marker = indent, gap, marker
        self.height = style.text_height(text, self.font, width - indent)

    def paint(self, p, r):
        p.setFont(self.font)
        p.setPen(QColor(self.colour))
        if self.marker:
            p.drawText(QRectF(r.left(), r.top(), self.indent, r.height()), int(Qt.AlignLeft | Qt.AlignTop),
                       self.marker)
        p.drawText(QRectF(r.left() + self.indent, r.top(), r.width() - self.indent, r.height()),
                   int(Qt.TextWordWrap | Qt.AlignLeft | Qt.AlignTop), self.text)


class Heading(Block):
    keep_with_next = True

    def __init__(self, style: Style, text: str):
        self.text, self.font = text, style.h1
        self.height = style.metrics(self.font).height() + 5
        self.gap = 5.0

    def paint(self, p, r):
        p.setFont(self.font)
        p.setPen(QColor(INK))
        p.drawText(QRectF(r.left(), r.top(), r.width(), r.height() - 4), int(Qt.AlignLeft | Qt.AlignVCenter),
                   self.text)
        p.setPen(pen(RULE, 0.8))
        p.drawLine(QPointF(r.left(), r.bottom()), QPointF(r.right(), r.bottom()))


class Figure(Block):
    def __init__(self, height: float, painter_fn: Callable[[QPainter, QRectF], None], gap: float = 8.0):
        self.height, self.fn, self.gap = height, painter_fn, gap

    def paint(self, p, r):
        p.save()
        p.setClipRect(r)
        self.fn(p, r)
        p.restore()


class Cell:
    """A table cell: text (wrapped) or a painter of a given height."""

    def __init__(self, text: str = "", font: QFont | None = None, colour: str = INK,
                 fn: Callable[[QPainter, QRectF], None] | None = None, height: float = 0.0,
                 align=Qt.AlignLeft):
        self.text, self.font, self.colour, self.fn, self.fixed, self.align = text, font, colour, fn, height, align


class Table:
    """Rows of cells under a header row; split over pages between rows, header repeated."""

    PAD = 3.0

    def __init__(self, style: Style, width: float, columns: Sequence[tuple],
                 rows: Sequence[Sequence], font: QFont | None = None, zebra: bool = True):
        cols = [(c[0], c[1], c[2] if len(c) > 2 else Qt.AlignLeft) for c in columns]
        total = sum(w for _, w, _ in cols)
        self.style, self.width = style, width
        self.widths = [width * w / total for _, w, _ in cols]
        self.font = font or style.body
        self.zebra = zebra
        self.header = self._row([Cell(n, style.bold, align=a) for n, _, a in cols], header=True)
        self.rows = [self._row([c if isinstance(c, Cell) else Cell(str(c), align=a)
                                for c, (_, _, a) in zip(row, cols)]) for row in rows]
        for k, row in enumerate(self.rows):
            row.index = k

    def _row(self, cells, header=False) -> "TableRow":
        h = 0.0
        for c, w in zip(cells, self.widths):
            if c.fn is not None:
                h = max(h, c.fixed)
            else:
                h = max(h, self.style.text_height(c.text, c.font or self.font, w - 2 * self.PAD))
        return TableRow(self, cells, h + 2 * self.PAD, header)


class TableRow(Block):
    gap = 0.0

    def __init__(self, table: Table, cells, height: float, header: bool):
        self.table, self.cells, self.height, self.header = table, cells, height, header
        self.index = 0
        self.last = False

    def paint(self, p, r):
        t = self.table
        if self.header:
            p.fillRect(r, QColor(FILL))
        elif t.zebra and self.index % 2 == 1:
            p.fillRect(r, QColor("#f7f8fa"))
        x = r.left()
        for c, w in zip(self.cells, t.widths):
            cr = QRectF(x + t.PAD, r.top() + t.PAD, w - 2 * t.PAD, r.height() - 2 * t.PAD)
            if c.fn is not None:
                p.save()
                c.fn(p, cr)
                p.restore()
            else:
                p.setFont(c.font or t.font)
                p.setPen(QColor(c.colour))
                p.drawText(cr, int(Qt.TextWordWrap | c.align | Qt.AlignTop), c.text)
            x += w
        p.setPen(pen(RULE, 0.8 if self.header or self.last else 0.5))
        p.drawLine(QPointF(r.left(), r.bottom()), QPointF(r.right(), r.bottom()))
        if self.header:
            p.drawLine(QPointF(r.left(), r.top()), QPointF(r.right(), r.top()))


@dataclass
class Sheet:
    """Page geometry (device pixels)."""

    width: float
    height: float
    border: float = 30.0
    pad: float = 16.0
    header_h: float = 26.0
    footer_h: float = 34.0

    @property
    def left(self) -> float:
        return self.border + self.pad

    @property
    def content_width(self) -> float:
        return self.width - 2 * (self.border + self.pad)

    @property
    def top(self) -> float:
        return self.border + self.header_h + 8

    @property
    def bottom(self) -> float:
        return self.height - self.border - self.footer_h - 6


class Flow:
    """Stacks blocks down the pages; a block that does not fit starts a new page."""

    def __init__(self, sheet: Sheet, first_top: float):
        self.sheet = sheet
        self.pages: list[list[tuple[Block, QRectF]]] = [[]]
        self.y = first_top
        self._pending: list[Block] = []

    def _room(self) -> float:
        return self.sheet.bottom - self.y

    def new_page(self) -> None:
        if self.pages[-1] or self._pending:
            self.pages.append([])
        self.y = self.sheet.top

    def _place(self, b: Block) -> None:
        r = QRectF(self.sheet.left, self.y, self.sheet.content_width, b.height)
        self.pages[-1].append((b, r))
        self.y += b.height + b.gap

    def add(self, b: Block) -> None:
        if b.keep_with_next:
            self._pending.append(b)
            return
        lead = self._pending
        self._pending = []
        need = sum(x.height + x.gap for x in lead) + min(b.height, self.sheet.bottom - self.sheet.top)
        if need > self._room() and self.pages[-1]:
            self.new_page()
        for x in lead:
            self._place(x)
        if b.height > self._room() and isinstance(b, Figure):
            b.height = max(self._room(), 40.0)
        self._place(b)

    def add_table(self, t: Table, continued: str = "") -> None:
        if not t.rows:
            return
        first = True
        for k, row in enumerate(t.rows):
            row.last = k == len(t.rows) - 1
            if first:
                need = t.header.height + row.height
                lead = self._pending
                self._pending = []
                if sum(x.height + x.gap for x in lead) + need > self._room() and self.pages[-1]:
                    self.new_page()
                for x in lead:
                    self._place(x)
                self._place(t.header)
                first = False
            elif row.height > self._room():
                self.new_page()
                if continued:
                    self._place(Text(t.style, continued, t.width, t.style.italic, MUTED, gap=2))
                self._place(t.header)
            self._place(row)
        self.y += 6

    def finish(self) -> list[list[tuple[Block, QRectF]]]:
        for x in self._pending:
            self._place(x)
        self._pending = []
        return self.pages


# ---------------------------------------------------------------------- words
VERDICT_WORDS = {
    "unstable": ("The scheme can move without any member changing length or bending: it cannot carry "
                 "general loads as drawn."),
    "determinate": ("The scheme is stable and statically determinate: equilibrium alone gives every member "
                    "force and reaction, and a support settlement or a misfit causes no force."),
    "indeterminate": ("The scheme is stable and statically indeterminate: equilibrium leaves {s} force(s) "
                      "unknown, which need compatibility (a force or a displacement method) to find; "
                      "settlements, misfits and temperature cause forces."),
}


def verdict_words(check: dict) -> str:
    v = check["verdict"]
    return VERDICT_WORDS.get(v, v).format(s=check["self_stress"], m=check["mechanisms"])


def count_agrees(check: dict) -> bool:
    """The hand count tells the whole story when (m, s) = (max(0, -D), max(0, D))."""
    d = check["count"]["value"]
    return check["mechanisms"] == max(0, -d) and check["self_stress"] == max(0, d)


def _fmt(x: float) -> str:
    if abs(x) < 5e-13:
        x = 0.0
    return f"{x:.4g}"


def _ids(items, limit: int = 12) -> str:
    """Ids joined by commas; a long list is cut after ``limit`` with the total."""
    items = list(items)
    if len(items) <= limit:
        return ", ".join(items)
    return ", ".join(items[:limit]) + f", … ({len(items)} in all)"


def _support_words(scheme: Scheme, nid: str) -> str:
    s = scheme.supports.get(nid)
    if s is None:
        return ""
    txt = s.kind
    if s.kind == "custom":
        txt += " (" + ", ".join(s.fixes) + ")"
    if s.angle != 90.0 or s.kind == "roller":
        txt += f", reaction at {_fmt(s.angle)}°"
    return txt


def _release_words(m) -> str:
    parts = []
    for end, words in (("start", m.releases_start), ("end", m.releases_end)):
        if words:
            parts.append(f"{end}: " + ", ".join(w for w in ("moment", "shear", "axial") if w in words))
    return "; ".join(parts)


# ---------------------------------------------------------------------- the document
class Report:
    """Lays out and paints one report."""

    def __init__(self, facts: Facts, writer: QPdfWriter):
        self.f = facts
        self.w = writer
        self.st = Style(writer)
        self.sheet = Sheet(float(writer.width()), float(writer.height()))
        self.cw = self.sheet.content_width
        self.title = facts.scheme.title or Path(facts.source_name).stem or "Untitled scheme"

    # ------------------------------------------------------------------ sections
    def build(self) -> list[list[tuple[Block, QRectF]]]:
        st, cw, f = self.st, self.cw, self.f
        tb_h = self._title_block_height()
        flow = Flow(self.sheet, self.sheet.border + self.sheet.pad + tb_h + 10)
        self.flow = flow
        self.section = 0
        self._verdict_section()
        self._drawing_section()
        self._count_section()
        self._warnings_section()
        if f.classification.verdict == "unstable":
            self._motion_section()
        if f.check.get("redundancy") is not None or f.check.get("redundancy_note"):
            self._redundancy_section()
        if f.check.get("critical") is not None:
            self._critical_section()
        if f.primary is not None or "primary" in f.skipped:
            self._primary_section()
        if f.remedies is not None or "remedies" in f.skipped:
            self._remedies_section()
        self._tables_section()
        return flow.finish()

    def _frame(self, p: QPainter, r: QRectF, caption: str = "") -> None:
        """The thin frame of a drawing panel, with its caption in the top left corner."""
        p.setPen(pen(RULE, 0.8))
        p.setBrush(Qt.NoBrush)
        p.drawRect(r.adjusted(0.4, 0.4, -0.4, -0.4))
        if caption:
            p.setFont(self.st.small)
            p.setPen(QColor(MUTED))
            p.drawText(r.adjusted(6, 4, -6, -4), int(Qt.AlignLeft | Qt.AlignTop), caption)

    def _drawing_height(self, share: float, pad: float, low: float, high: float, tall: float) -> float:
        """Height of a drawing of the scheme ``share`` of the page wide (a taller cap for tall schemes)."""
        x0, y0, x1, y1 = scheme_bounds(self.f.scheme)
        aspect = (y1 - y0 + 1e-9) / (x1 - x0 + 1e-9)
        return min(max(self.cw * share * aspect + pad, low), high if aspect <= 1 else tall)

    def _opening(self, title: str, key: str):
        """Heading of an optional section, and its result (None: says why and the section ends)."""
        self._h(title)
        res = getattr(self.f, key)
        if res is None:
            self._p(f"Not available: {self.f.skipped.get(key, '')}")
        return res

    def _h(self, text: str) -> None:
        self.section += 1
        self.flow.add(Heading(self.st, f"{self.section}  {text}"))

    def _p(self, text: str, font=None, colour=INK, indent=0.0, marker=None, gap=4.0, keep=False) -> None:
        self.flow.add(Text(self.st, text, self.cw, font, colour, indent, gap, marker, keep))

    def _verdict_section(self):
        ck, st = self.f.check, self.st
        self._h("Verdict")
        empty = not self.f.scheme.members
        verdict = None if empty else ck["verdict"]
        colour = verdict_colour(verdict)
        vh = st.metrics(st.verdict).height() + 6

        def banner(p, r):
            draw_verdict_marker(p, verdict, QPointF(r.left() + 9, r.center().y()), 7.0)
            p.setFont(st.verdict)
            p.setPen(QColor(colour))
            p.drawText(QRectF(r.left() + 24, r.top(), r.width() - 24, r.height()), int(Qt.AlignLeft | Qt.AlignVCenter),
                       "No members to check" if empty else ck["summary"])

        self.flow.add(Figure(vh, banner, gap=4))
        if empty:
            self._p(f"The scheme has no members, so there is nothing to classify (the rank test on an empty "
                    f"system reads: {ck['summary']}).")
        else:
            self._p(verdict_words(ck))
        inner, sup = ck["internal"], ck["supports"]
        if sup["mechanisms"] < 0:
            at_sup = f"the supports also stop {-sup['mechanisms']} of those mechanism(s)"
            if sup["self_stress"]:
                at_sup += f" and add s = {sup['self_stress']}"
        else:
            at_sup = f"at the supports: m = {sup['mechanisms']}, s = {sup['self_stress']}"
        self._p(f"Rank result: m = {ck['mechanisms']} mechanism(s), s = {ck['self_stress']} state(s) of "
                f"self-stress. Inside the structure (without its supports, rigid-body motions aside): "
                f"m = {inner['mechanisms']}, s = {inner['self_stress']}; {at_sup}.")
        motion = ck.get("motion")
        if motion and motion != "none":
            words = {"finite": " (the mechanism moves through finite positions).",
                     "infinitesimal": " (the scheme moves only to first order and locks at a higher order; "
                                      "it is still unfit to carry load: large deflections and forces)."}
            reason = (ck.get("motion_detail") or {}).get("reason")
            self._p(f"Motion: {motion}" + words.get(motion, ".") + (f" Why: {reason}." if reason else ""))
        crit = ck.get("critical") or []
        if crit and len(crit) < len(self.f.scheme.members):
            self._p("Critical members (removing one adds a mechanism): " + _ids(crit, 20) + ".")

    def _drawing_section(self):
        f, st = self.f, self.st
        self._h("Drawing")
        h = self._drawing_height(1.0, 80.0, 240.0, 470.0, 620.0)
        c = f.classification

        def draw(p, r):
            p.fillRect(r, QColor(PALETTE.paper))
            paint_scheme(p, f.scheme, c, r, caption=False, caution=False, show_ids=True, background=False)
            self._frame(p, r)

        self.flow.add(Figure(h, draw, gap=3))
        legend = (f"Member ids beside each member, node ids beside each node; units {f.scheme.units}. "
                  "Dot: rigid joint; small ring: pinned bar joint; large ring: full hinge; ring on a member: "
                  "moment release; two strokes: shear release; sleeve: axial release.")
        if c.verdict == "unstable" and c.modes:
            legend += " Dashed: the first mechanism, scale arbitrary."
        self._p(legend, st.small, MUTED, gap=8)

    def _count_section(self):
        ck, st, cw = self.f.check, self.st, self.cw
        cnt = ck["count"]
        t = cnt["terms"]
        self._h("Hand count and rank result")
        if cnt["form"] == "truss":
            rule = "Maxwell's rule for a pin-jointed truss, D = m + r - 2j"
            terms = [("j", "joints", t["joints"]), ("m", "members (bars)", t["members"]),
                     ("r", "reaction components", t["reactions"])]
        else:
            rule = "frame count, D = 3m + r - 3j - c"
            terms = [("j", "joints", t["joints"]), ("m", "members", t["members"]),
                     ("r", "reaction components", t["reactions"]),
                     ("c", "equations of condition (releases)", t["releases"])]
        self._p(rule + ":", st.bold, keep=True)
        rk = ck["rank"]
        left = [[Cell(sym, st.mono), w, Cell(str(v), st.mono, align=Qt.AlignRight)] for sym, w, v in terms]
        left.append([Cell("D", st.mono), Cell("hand count", st.bold),
                     Cell(str(cnt["value"]), st.mono, align=Qt.AlignRight)])
        right = [["rows (equilibrium equations)", Cell(str(rk["rows"]), st.mono, align=Qt.AlignRight)],
                 ["columns (forces and reactions)", Cell(str(rk["cols"]), st.mono, align=Qt.AlignRight)],
                 ["rank", Cell(str(rk["rank"]), st.mono, align=Qt.AlignRight)],
                 ["m  mechanisms", Cell(str(ck["mechanisms"]), st.mono, align=Qt.AlignRight)],
                 ["s  states of self-stress", Cell(str(ck["self_stress"]), st.mono, align=Qt.AlignRight)],
                 [Cell("s - m", st.bold), Cell(str(ck["self_stress"] - ck["mechanisms"]), st.mono,
                                                 align=Qt.AlignRight)]]
        half = (cw - 18) / 2
        tl = Table(st, half, [("term", 1.0), ("hand count", 5.0), ("value", 1.3, Qt.AlignRight)], left)
        tr = Table(st, half, [("rank result", 5.5), ("value", 1.3, Qt.AlignRight)], right)
        h = max(tl.header.height + sum(r.height for r in tl.rows), tr.header.height + sum(r.height for r in tr.rows))

        def two(p, r, tl=tl, tr=tr):
            for tab, x in ((tl, r.left()), (tr, r.left() + half + 18)):
                y = r.top()
                for k, row in enumerate([tab.header] + tab.rows):
                    row.last = k == len(tab.rows)
                    row.paint(p, QRectF(x, y, half, row.height))
                    y += row.height

        self.flow.add(Figure(h + 2, two, gap=6))
        self._p(cnt["formula"], st.mono, gap=6)
        if cnt.get("closed_loop"):
            cl = cnt["closed_loop"]
            self._p("Closed-loop rule (C independent closed loops through the ground, R support releases "
                    "relative to full fixity):", keep=True, gap=2)
            self._p(cl["formula"], st.mono)
        detail = cnt.get("release_detail") or []
        if detail:
            self._p("Equations of condition, item by item:", st.bold, keep=True)
            tab = Table(st, cw, [("release", 6.0), ("c", 0.8, Qt.AlignRight), ("", 0.3), ("items", 3.0)],
                        [[d["what"], Cell(str(d["value"]), st.mono, align=Qt.AlignRight), "", ", ".join(d["items"])]
                         for d in detail])
            self.flow.add_table(tab, "Equations of condition (continued)")
        if count_agrees(ck):
            self._p(f"The hand count agrees with the rank result: D = {cnt['value']} and "
                    f"(m, s) = ({ck['mechanisms']}, {ck['self_stress']}).")
        else:
            self._p(f"The hand count and the rank result differ: the count gives D = {cnt['value']}, the rank "
                    f"gives m = {ck['mechanisms']} and s = {ck['self_stress']} (the count always equals s - m, so "
                    "it cannot show a mechanism offset by a redundancy). Why:", st.bold, keep=True)
            for e in ck["explanations"] or ["(no named cause found; see the warnings)"]:
                self._p(e, indent=14, marker="–")
        if count_agrees(ck) and ck["explanations"]:
            for e in ck["explanations"]:
                self._p(e, indent=14, marker="–")

    def _warnings_section(self):
        ck, st = self.f.check, self.st
        self._h("Warnings and notes")
        ws = ck.get("warnings") or []
        items = ck.get("warning_items") or [[] for _ in ws]
        if not ws:
            self._p("No warnings.")
        for k, w in enumerate(ws):
            it = items[k] if k < len(items) else []
            self._p(w + (f"  [{', '.join(it)}]" if it else ""), indent=14, marker="!")
        for r in ck.get("remarks") or []:
            self._p(r, indent=14, marker="•", colour=MUTED)

    # ------------------------------------------------------------------ motion
    def _motion_section(self):
        f, st, cw = self.f, self.st, self.cw
        self._h("Mechanism positions, bodies and instant centres")
        if not f.motion:
            self._p("No mechanism shape is available. " + f.motion_note)
            return
        self._p("Each moving rigid body is drawn in its own colour and labelled B1, B2...; its instant centre "
                "(the point it turns about at the drawn position) is marked I1, I2... Members drawn grey stay "
                "still. The strip shows positions along the motion on one scale, with the paths of the nodes.",
                st.small, MUTED)
        for v in f.motion:
            self._p(f"Mode {v.index} ({v.kind}): {v.motion} motion" +
                    (f"; driver {v.driver}" if v.driver else "") +
                    (f"; ends: forward {v.ended.get('forward')}, backward {v.ended.get('backward')}"
                     if v.ended and v.motion == "finite" else "") + ".", st.bold, keep=True)
            if v.note:
                self._p(v.note, st.small, MUTED, keep=True)
            self.flow.add(Figure(300, lambda p, r, v=v: self._paint_bodies(p, r, v), gap=4))
            if len(v.frames) > 1:
                rows = math.ceil(len(self._pick_frames(v)) / STRIP_COLUMNS)
                for row in range(rows):
                    self.flow.add(Figure(STRIP_PANEL_H, lambda p, r, v=v, row=row: self._paint_strip(p, r, v, row),
                                         gap=8 if row < rows - 1 else 6))
            if v.bodies:
                rows = []
                for k, b in enumerate(v.bodies, start=1):
                    if b.centre is not None:
                        where = f"I{k} at ({_fmt(b.centre[0])}, {_fmt(b.centre[1])}) {f.scheme.units}"
                    else:
                        where = (f"I{k} at infinity: translation along ({_fmt(b.direction[0])}, "
                                 f"{_fmt(b.direction[1])})")
                    rows.append([Cell(f"B{k}", st.bold, BODY_COLOURS[(k - 1) % len(BODY_COLOURS)]),
                                 ", ".join(b.members), where])
                if v.fixed_members:
                    rows.append([Cell("still", st.bold, MUTED), ", ".join(v.fixed_members), "does not move"])
                self.flow.add_table(Table(st, cw, [("body", 0.8), ("members", 4.0), ("instant centre", 4.2)], rows),
                                    f"Bodies of mode {v.index} (continued)")
        if f.motion_note:
            self._p(f.motion_note, st.small, MUTED)

    def _frame_bounds(self, frames: list[dict]) -> tuple[float, float, float, float]:
        """Bounds of the scheme over several positions."""
        xs, ys = [], []
        for fr in frames:
            x0, y0, x1, y1 = scheme_bounds(self.f.scheme, fr)
            xs += [x0, x1]
            ys += [y0, y1]
        return (min(xs), min(ys), max(xs), max(ys))

    def _member_line(self, T: ModelTransform, mid: str) -> QPolygonF:
        """A member of the drawn scheme in device coordinates (an arc for a curved member)."""
        s = self.f.scheme
        m = s.members[mid]
        pts = arc_points(s.node_xy(m.start), s.node_xy(m.end), m.rise) if m.rise else \
            [s.node_xy(m.start), s.node_xy(m.end)]
        return QPolygonF([T.map(x, y) for x, y in pts])

    def _paint_bodies(self, p: QPainter, r: QRectF, v: MotionView) -> None:
        s = self.f.scheme
        p.fillRect(r, QColor(PALETTE.paper))
        size = s.size()
        x0, y0, x1, y1 = scheme_bounds(s)
        cx, cy = (x0 + x1) / 2, (y0 + y1) / 2
        near = [b.centre for b in v.bodies if b.centre is not None
                and math.hypot(b.centre[0] - cx, b.centre[1] - cy) <= 1.5 * size]
        T = ModelTransform.fit(scheme_bounds(s, extra=near), r, margin=34.0)
        # bodies under the drawing: a wide tinted stroke per body
        for k, b in enumerate(v.bodies, start=1):
            col = QColor(BODY_COLOURS[(k - 1) % len(BODY_COLOURS)])
            col.setAlphaF(0.35)
            pn = QPen(col, 9.0, Qt.SolidLine, Qt.RoundCap, Qt.RoundJoin)
            pn.setCosmetic(True)
            p.setPen(pn)
            for mid in b.members:
                p.drawPolyline(self._member_line(T, mid))
        if v.fixed_members:
            grey = QColor(MUTED)
            grey.setAlphaF(0.25)
            pn = QPen(grey, 7.0, Qt.SolidLine, Qt.RoundCap)
            pn.setCosmetic(True)
            p.setPen(pn)
            for mid in v.fixed_members:
                p.drawPolyline(self._member_line(T, mid))
        paint_scheme(p, s, None, r, transform=T, caption=False, caution=False, show_ids=True,
                     show_mode=False, background=False)
        # body labels and instant centres
        p.setFont(self.st.bold)
        for k, b in enumerate(v.bodies, start=1):
            colour = BODY_COLOURS[(k - 1) % len(BODY_COLOURS)]
            mids = [s.members[mid] for mid in b.members]
            mx = sum((s.node_xy(m.start)[0] + s.node_xy(m.end)[0]) / 2 for m in mids) / len(mids)
            my = sum((s.node_xy(m.start)[1] + s.node_xy(m.end)[1]) / 2 for m in mids) / len(mids)
            # label at the member midpoint nearest the group's centroid
            best = min(mids, key=lambda m: math.hypot((s.node_xy(m.start)[0] + s.node_xy(m.end)[0]) / 2 - mx,
                                                      (s.node_xy(m.start)[1] + s.node_xy(m.end)[1]) / 2 - my))
            a, c = T.map(*s.node_xy(best.start)), T.map(*s.node_xy(best.end))
            mid = (a + c) / 2
            self._tag(p, mid + QPointF(-10, -16), f"B{k}", colour)
            if b.centre is not None:
                q = T.map(*b.centre)
                if r.adjusted(4, 4, -4, -4).contains(q):
                    self._centre_mark(p, q, colour)
                    self._tag(p, q + QPointF(7, 5), f"I{k}", colour)
                else:
                    self._edge_arrow(p, r, T.map(cx, cy), q, f"I{k}", colour)
            elif b.direction is not None:
                d = b.direction
                q = mid + QPointF(14, 14)
                self._arrow(p, q, q + QPointF(22 * d[0], -22 * d[1]), colour)
                self._tag(p, q + QPointF(24 * d[0] + 4, -24 * d[1] + 4), f"I{k}∞", colour)
        self._frame(p, r, "drawn position: bodies and instant centres")

    def _paint_strip(self, p: QPainter, r: QRectF, v: MotionView, row: int) -> None:
        """One row of the positions along the motion, every panel on one scale, with the node paths."""
        s = self.f.scheme
        picks = self._pick_frames(v)
        gap = 8.0
        w = (r.width() - gap * (STRIP_COLUMNS - 1)) / STRIP_COLUMNS
        if v.ended.get("forward") == "full cycle":
            shown = v.frames
        else:
            shown = v.frames[min(i for i, _ in picks):max(i for i, _ in picks) + 1]
        T = ModelTransform.fit(self._frame_bounds(shown), QRectF(0, 0, w, STRIP_PANEL_H - 16), margin=24.0)
        for col, (i, label) in enumerate(picks[row * STRIP_COLUMNS:(row + 1) * STRIP_COLUMNS]):
            pr = QRectF(r.left() + col * (w + gap), r.top(), w, STRIP_PANEL_H)
            Tj = ModelTransform(T.scale, T.ox + pr.left(), T.oy + pr.top())
            p.save()
            p.setClipRect(pr)
            p.fillRect(pr, QColor(PALETTE.paper))
            p.setPen(pen(PALETTE.mechanism, 0.7, Qt.DotLine))
            for nid in s.nodes:
                pts = QPolygonF([Tj.map(*fr[nid]) for fr in shown if nid in fr])
                if pts.size() > 1:
                    p.drawPolyline(pts)
            paint_scheme(p, s, None, pr, positions=v.frames[i], transform=Tj, caption=False, caution=False,
                         show_mode=False, background=False, crossings=False)
            p.restore()
            self._frame(p, pr)
            p.setFont(self.st.label)
            p.setPen(QColor(MUTED))
            p.drawText(QRectF(pr.left() + 4, pr.bottom() - 15, pr.width() - 8, 13),
                       int(Qt.AlignHCenter | Qt.AlignVCenter), label)

    def _pick_frames(self, v: MotionView) -> list[tuple[int, str]]:
        """Frames for the strip: ends and midpoints of each direction, the drawn position between;
        a direction is cut where a node has travelled STRIP_TRAVEL model sizes (an open slide or
        a long swing would otherwise shrink the drawing to nothing)."""
        n = len(v.frames)
        if n <= 1:
            return [(0, "drawn position")]
        if v.ended.get("forward") == "full cycle":
            idx = [round(k * (n - 1) / 4) for k in range(4)]
            return [(i, "drawn position" if i == 0 else f"{round(100 * i / (n - 1))} % of the cycle") for i in idx]
        if v.motion in ("infinitesimal", "first order"):
            return [(0, "minus (linearised)"), (v.start, "drawn position"), (n - 1, "plus (linearised)")]
        limit = STRIP_TRAVEL * self.f.scheme.size()
        ref = v.frames[v.start]

        def travel(i):
            fr = v.frames[i]
            return max((math.hypot(fr[k][0] - x, fr[k][1] - y) for k, (x, y) in ref.items() if k in fr), default=0.0)

        lo = v.start
        while lo > 0 and travel(lo - 1) <= limit:
            lo -= 1
        hi = v.start
        while hi < n - 1 and travel(hi + 1) <= limit:
            hi += 1
        cut = f"cut at {STRIP_TRAVEL:g} × the scheme size"
        out = []
        if lo < v.start:
            out.append((lo, f"backward end: {v.ended.get('backward', '')}" if lo == 0 else f"backward, {cut}"))
            if v.start - lo > 3:
                out.append(((lo + v.start) // 2, "backward"))
        out.append((v.start, "drawn position"))
        if hi > v.start:
            if hi - v.start > 3:
                out.append(((v.start + hi) // 2, "forward"))
            out.append((hi, f"forward end: {v.ended.get('forward', '')}" if hi == n - 1 else f"forward, {cut}"))
        return out

    def _tag(self, p: QPainter, at: QPointF, text: str, colour: str) -> None:
        fm = self.st.metrics(p.font())
        w, h = fm.horizontalAdvance(text) + 6, fm.height() + 1
        box = QRectF(at.x(), at.y() - h + 3, w, h)
        p.setPen(pen(colour, 0.9))
        p.setBrush(QBrush(QColor(WHITE)))
        p.drawRoundedRect(box, 2, 2)
        ink = QColor(colour)
        if ink.lightnessF() > 0.45:
            ink = ink.darker(150)
        p.setPen(ink)
        p.drawText(box, int(Qt.AlignCenter), text)

    @staticmethod
    def _centre_mark(p: QPainter, q: QPointF, colour: str) -> None:
        p.setPen(pen(colour, 1.3))
        p.setBrush(QBrush(QColor(WHITE)))
        p.drawEllipse(q, 4.5, 4.5)
        p.drawLine(q + QPointF(-8, 0), q + QPointF(8, 0))
        p.drawLine(q + QPointF(0, -8), q + QPointF(0, 8))

    @staticmethod
    def _arrow(p: QPainter, a: QPointF, b: QPointF, colour: str) -> None:
        p.setPen(pen(colour, 1.3))
        p.drawLine(a, b)
        ang = math.atan2(b.y() - a.y(), b.x() - a.x())
        for da in (2.6, -2.6):
            p.drawLine(b, b + QPointF(6 * math.cos(ang + da), 6 * math.sin(ang + da)))

    def _edge_arrow(self, p, r, centre: QPointF, q: QPointF, label: str, colour: str) -> None:
        """An instant centre outside the panel: an arrow at the panel edge pointing to it."""
        inner = r.adjusted(18, 18, -18, -18)
        dx, dy = q.x() - centre.x(), q.y() - centre.y()
        t = 1.0
        if dx:
            t = min(t, ((inner.right() if dx > 0 else inner.left()) - centre.x()) / dx)
        if dy:
            t = min(t, ((inner.bottom() if dy > 0 else inner.top()) - centre.y()) / dy)
        e = QPointF(centre.x() + t * dx, centre.y() + t * dy)
        L = math.hypot(dx, dy) or 1.0
        a = e - QPointF(20 * dx / L, 20 * dy / L)
        self._arrow(p, a, e, colour)
        self._tag(p, a + QPointF(-14, -6), f"{label} (off the panel)", colour)

    # ------------------------------------------------------------------ redundancy
    def _redundancy_section(self):
        ck, st, cw = self.f.check, self.st, self.cw
        red = ck.get("redundancy")
        if red is None:
            self._h("Redundancy per member")
            self._p(ck.get("redundancy_note") or "Redundancy not computed.")
            return
        if not ck["self_stress"]:
            return
        self._h("Redundancy per member")
        self._p("The share of the indeterminacy each member holds: the diagonal of the redundancy matrix "
                "R = F S (Sᵀ F S)⁻¹ Sᵀ (von Scheven, Ramm & Bischoff 2021), summed over the "
                f"member's forces; the shares add up to s = {ck['self_stress']}. 0: equilibrium alone gives "
                "the member's forces (not redundant); 1: a fully redundant bar. A beam can "
                "hold up to 3, split here into its axial, single-curvature and double-curvature parts. "
                "The shares depend on the relative stiffnesses (defaults where the file gives none).",
                st.small, MUTED)
        if red.get("reactions"):
            self._p(f"Reactions: {red['reactions']}.", st.small, MUTED)
        members = red.get("members") or {}
        modes = red.get("members_modes") or {}
        removal = (ck.get("removal") or {}).get("members") or {}
        top = max([1.0] + [float(v) for v in members.values()])
        shades = {"axial": "#1d4f7a", "single_curvature": "#4f8fc0", "double_curvature": "#a9cbe6"}
        legend_h = 16.0

        def legend(p, r):
            x = r.left()
            p.setFont(st.small)
            for key, words in (("axial", "axial"), ("single_curvature", "single curvature"),
                               ("double_curvature", "double curvature")):
                p.fillRect(QRectF(x, r.top() + 4, 14, 8), QColor(shades[key]))
                p.setPen(QColor(INK))
                p.drawText(QRectF(x + 18, r.top(), 140, r.height()), int(Qt.AlignLeft | Qt.AlignVCenter), words)
                x += 130
            p.setPen(QColor(MUTED))
            p.drawText(QRectF(x, r.top(), r.right() - x, r.height()), int(Qt.AlignRight | Qt.AlignVCenter),
                       f"bar length: share, full scale {_fmt(top)}")

        self.flow.add(Figure(legend_h, legend, gap=2))

        def bar(mid):
            parts = modes.get(mid) or {"axial": members.get(mid, 0.0)}

            def fn(p, r, parts=parts):
                x = r.left()
                span = r.width()
                for key in ("axial", "single_curvature", "double_curvature"):
                    v = max(0.0, float(parts.get(key, 0.0)))
                    w = span * v / top
                    if w > 0:
                        p.fillRect(QRectF(x, r.top() + 1, w, r.height() - 2), QColor(shades[key]))
                    x += w
                p.setPen(pen(RULE, 0.6, Qt.DashLine))
                x1 = r.left() + span / top
                p.drawLine(QPointF(x1, r.top() - 2), QPointF(x1, r.bottom() + 2))
                p.setPen(pen(INK, 0.6))
                p.drawLine(QPointF(r.left(), r.top() - 2), QPointF(r.left(), r.bottom() + 2))
            return Cell(fn=fn, height=9.0)

        rows = []
        for mid, m in self.f.scheme.members.items():
            if mid not in members:
                continue
            status = (removal.get(mid) or {}).get("status", "")
            rows.append([Cell(mid, st.bold), m.kind, bar(mid),
                         Cell(f"{float(members[mid]):.3f}", st.mono, align=Qt.AlignRight), "",
                         Cell(status, st.body, verdict_colour("unstable") if status == "critical" else INK)])
        self.flow.add_table(Table(st, cw, [("member", 1.1), ("kind", 0.8), ("share (bar chart)", 6.0),
                                           ("share", 1.0, Qt.AlignRight), ("", 0.3),
                                           ("if removed", 1.5)], rows,
                                  font=st.body), "Redundancy per member (continued)")
        self._p(f"Sum over the members: {_fmt(float(red.get('total', 0.0)))} (= s).", st.small, MUTED)
        states = ck.get("self_stress_states") or []
        if states:
            self._p("States of self-stress (local form: each is a smallest set of forces in equilibrium "
                    "without load; tension positive):", st.bold, keep=True)
            rows = []
            for k, sst in enumerate(states[:MAX_STATE_ROWS], start=1):
                rows.append([Cell(f"S{k}", st.bold), _ids(sst.get("members", [])),
                             _ids(sst.get("supports", [])) or "–",
                             _ids(sst.get("tension", [])) or "–", _ids(sst.get("compression", [])) or "–"])
            self.flow.add_table(Table(st, cw, [("state", 0.8), ("members", 3.2), ("supports", 1.6),
                                               ("tension", 2.0), ("compression", 2.0)], rows),
                                "States of self-stress (continued)")
            if len(states) > MAX_STATE_ROWS or ck["self_stress"] > len(states):
                self._p(f"First {min(len(states), MAX_STATE_ROWS)} of {ck['self_stress']} states listed; "
                        "kinestat check --json lists more.", st.small, MUTED)
        if ck.get("redundancy_note"):
            self._p(ck["redundancy_note"], st.small, MUTED)

    def _critical_section(self):
        f, ck, st, cw = self.f, self.f.check, self.st, self.cw
        crit = list(ck.get("critical") or [])
        crit_s = list(ck.get("critical_supports") or [])
        removal = ck.get("removal") or {}
        self._h("Critical members and restraints")
        self._p("A member or a support restraint is critical when removing it alone adds a mechanism; "
                "each claim is checked by analysing the scheme without it.", st.small, MUTED)
        n = len(f.scheme.members)
        if crit and len(crit) == n:
            self._p(f"Every member is critical ({n} of {n}): no member can be lost without a mechanism.")
        elif crit:
            self._p(f"Critical members ({len(crit)} of {n}): " + ", ".join(crit) + ".")
        else:
            self._p("No member is critical: the scheme stays free of new mechanisms when any one member is lost.")
        if crit and len(crit) < n:
            h = self._drawing_height(0.7, 60.0, 170.0, 300.0, 400.0)

            def draw(p, r, crit=crit):
                p.fillRect(r, QColor(PALETTE.paper))
                paint_scheme(p, f.scheme, None, r, caption=False, caution=False, show_ids=True,
                             show_mode=False, background=False, highlight=crit)
                self._frame(p, r, "critical members highlighted")

            self.flow.add(Figure(h, draw, gap=6))
        if crit_s:
            self._p("Critical support restraints: " + ", ".join(crit_s) + ".")
        rows = []
        # when every member is critical the member rows would only repeat that sentence
        keys = ("restraints",) if crit and len(crit) == n else ("members", "restraints")
        for key in keys:
            for item, rc in (removal.get(key) or {}).items():
                if rc.get("status") == "critical":
                    rows.append([Cell(item, st.bold), rc.get("description", ""),
                                 Cell(f"{rc.get('mechanisms_after', '')}", st.mono, align=Qt.AlignRight), "",
                                 _ids(rc.get("moving_nodes", []), 8)])
        if rows:
            self.flow.add_table(Table(st, cw, [("item", 1.2), ("what removing it does", 5.0),
                                               ("m after", 1.0, Qt.AlignRight), ("", 0.3),
                                               ("nodes that then move", 2.8)],
                                      rows), "Critical items (continued)")

    # ------------------------------------------------------------------ primary structure, remedies
    def _changed_drawing(self, edited: Scheme, caption: str, height: float | None = None) -> None:
        """The edited scheme with what changed highlighted and removed members dashed."""
        before = self.f.scheme
        members, removed, nodes = changed_items(before, edited)
        st = self.st
        h = height or self._drawing_height(0.7, 60.0, 170.0, 300.0, 400.0)

        def draw(p, r):
            p.fillRect(r, QColor(PALETTE.paper))
            T = ModelTransform.fit(scheme_bounds(before), r, margin=max(36.0, 0.08 * min(r.width(), r.height())))
            paint_scheme(p, edited, None, r, transform=T, caption=False, caution=False, show_ids=True,
                         show_mode=False, background=False, highlight=members + nodes)
            for mid in removed:
                m = before.members[mid]
                a, b = T.map(*before.node_xy(m.start)), T.map(*before.node_xy(m.end))
                p.setPen(pen(MUTED, 1.2, Qt.DashLine))
                p.drawLine(a, b)
                c = (a + b) / 2
                p.setPen(pen(PALETTE.mechanism, 1.6))
                p.drawLine(c + QPointF(-5, -5), c + QPointF(5, 5))
                p.drawLine(c + QPointF(-5, 5), c + QPointF(5, -5))
                p.setFont(st.label)
                p.setPen(QColor(MUTED))
                p.drawText(c + QPointF(7, -5), f"{mid} cut")
            self._frame(p, r, caption)

        self.flow.add(Figure(h, draw, gap=6))

    def _primary_section(self):
        st, cw = self.st, self.cw
        res = self._opening("A primary structure", "primary")
        if res is None:
            return
        self._p("Releases that leave the scheme stable and statically determinate: the redundants of a "
                "force-method hand analysis. Each set is the complement of a column basis of the "
                "equilibrium matrix and was re-analysed (m = 0, s = 0) before it is shown.", st.small, MUTED)
        ps = res.primary
        if ps is None:
            self._p(res.note or "No primary structure was found.")
            return
        if not ps.releases:
            self._p(res.note)
            return
        self._p(f"Proposed ({ps.preference}): {res.note}.", st.bold, keep=True)
        rows = []
        for k, rel in enumerate(ps.releases, start=1):
            st_k = ps.states[k - 1] if k - 1 < len(ps.states) else None
            rows.append([Cell(f"X{k}", st.bold), rel.kind, rel.description,
                         _ids(st_k.members) if st_k is not None else ""])
        self.flow.add_table(Table(st, cw, [("redundant", 1.0), ("release", 1.2), ("what", 4.2),
                                           ("its state of self-stress (members)", 3.2)], rows),
                            "Primary structure (continued)")
        self._changed_drawing(ps.scheme, "primary structure: released items highlighted, cut members dashed")
        if res.alternatives:
            self._p("Other primary structures (each verified the same way):", st.bold, keep=True)
            for alt in res.alternatives:
                if len(alt.releases) <= MAX_LISTED_RELEASES:
                    what = "; ".join(r.description for r in alt.releases)
                else:
                    kinds: dict[str, int] = {}
                    for r in alt.releases:
                        kinds[r.kind] = kinds.get(r.kind, 0) + 1
                    what = f"{len(alt.releases)} releases (" + ", ".join(f"{v} {k}" for k, v in kinds.items()) + \
                        "; kinestat primary lists them)"
                self._p(f"{alt.preference}: {what}.", indent=14, marker="–")

    def _remedies_section(self):
        st, cw = self.st, self.cw
        res = self._opening("Remedies", "remedies")
        if res is None:
            return
        self._p("Single changes that remove mechanisms, each re-analysed before it is listed; ranked by the "
                "mechanisms removed, then by the size of the change. These are starting points for the "
                "designer, not designs.", st.small, MUTED)
        small = res.smallest_set
        if small is not None and small.changes:
            words = "change removes" if len(small.changes) == 1 else "changes remove"
            self._p(f"A smallest set found: {len(small.changes)} {words} all {res.mechanisms} "
                    f"mechanism(s), leaving m = {small.mechanisms_after}, s = {small.self_stress_after}"
                    + (f" (at least {small.lower_bound} are needed)" if small.lower_bound != len(small.changes)
                       else "") + ":", st.bold, keep=True)
            for cd in small.changes:
                self._p(cd.description, indent=14, marker="–", keep=True)
            self._changed_drawing(small.scheme, "after the smallest set of changes: changed items highlighted")
        if res.remedies:
            rows = [[Cell(str(k), st.bold), r.description,
                     Cell(str(r.mechanisms_removed), st.mono, align=Qt.AlignRight),
                     Cell(f"{r.mechanisms_after} / {r.self_stress_after}", st.mono, align=Qt.AlignRight)]
                    for k, r in enumerate(res.remedies[:MAX_REMEDIES], start=1)]
            self._p("Single changes:", st.bold, keep=True)
            self.flow.add_table(Table(st, cw, [("#", 0.4), ("change", 6.5), ("removes", 1.0, Qt.AlignRight),
                                               ("m / s after", 1.3, Qt.AlignRight)], rows),
                                "Single changes (continued)")
        if res.note:
            self._p(res.note + ".", st.small, MUTED)

    # ------------------------------------------------------------------ tables
    def _tables_section(self):
        s, st, cw = self.f.scheme, self.st, self.cw
        self._h("Nodes, supports and members")
        rows = [[Cell(nd.id, st.bold), Cell(_fmt(nd.x), st.mono, align=Qt.AlignRight),
                 Cell(_fmt(nd.y), st.mono, align=Qt.AlignRight), "", "full hinge" if nd.hinge else "",
                 _support_words(s, nd.id)] for nd in s.nodes.values()]
        self.flow.add_table(Table(st, cw, [("node", 1.2), (f"x ({s.units})", 1.3, Qt.AlignRight),
                                           (f"y ({s.units})", 1.3, Qt.AlignRight), ("", 0.4),
                                           ("joint", 1.5), ("support", 3.5)], rows), "Nodes (continued)")
        rows = [[Cell(m.id, st.bold), m.kind, m.start, m.end, _release_words(m),
                 Cell(_fmt(m.rise), st.mono, align=Qt.AlignRight) if m.rise else ""] for m in s.members.values()]
        self.flow.add_table(Table(st, cw, [("member", 1.2), ("kind", 0.9), ("start", 1.0), ("end", 1.0),
                                           ("releases", 3.6), (f"rise ({s.units})", 0.9, Qt.AlignRight)], rows), "Members (continued)")

    # ------------------------------------------------------------------ page furniture
    def _title_block_height(self) -> float:
        return 118.0

    def _paint_title_block(self, p: QPainter) -> None:
        f, st, sh = self.f, self.st, self.sheet
        r = QRectF(sh.left, sh.border + sh.pad, self.cw, self._title_block_height())
        p.setPen(pen(INK, 1.0))
        p.setBrush(Qt.NoBrush)
        p.drawRect(r)
        title_h = 40.0
        p.setFont(st.small)
        p.setPen(QColor(MUTED))
        p.drawText(QRectF(r.left() + 8, r.top() + 3, r.width() - 16, 14), int(Qt.AlignLeft | Qt.AlignVCenter),
                   "KINESTAT CHECK REPORT  ·  stability and determinacy of a 2D framing scheme")
        p.setFont(st.title)
        p.setPen(QColor(INK))
        fm = st.metrics(st.title)
        p.drawText(QRectF(r.left() + 8, r.top() + 15, r.width() - 16, title_h - 12),
                   int(Qt.AlignLeft | Qt.AlignVCenter), fm.elidedText(self.title, Qt.ElideRight, r.width() - 16))
        y = r.top() + title_h + 4
        p.setPen(pen(INK, 0.8))
        p.drawLine(QPointF(r.left(), y), QPointF(r.right(), y))
        s = f.scheme
        cells = [
            [("file", f.source_name), ("checked", f.when.strftime("%Y-%m-%d %H:%M %Z").strip()),
             ("units", s.units)],
            [("scheme hash (SHA-256)", f.hash), ("size", f"{len(s.nodes)} nodes, {len(s.members)} members, "
                                                 f"{len(s.supports)} supports"), ("kinestat", f.version)],
        ]
        widths = [0.44, 0.38, 0.18]
        row_h = (r.bottom() - y) / len(cells)
        for k, row in enumerate(cells):
            x = r.left()
            yy = y + k * row_h
            if k:
                p.setPen(pen(INK, 0.6))
                p.drawLine(QPointF(r.left(), yy), QPointF(r.right(), yy))
            for j, (label, value) in enumerate(row):
                w = r.width() * widths[j]
                if j:
                    p.setPen(pen(INK, 0.6))
                    p.drawLine(QPointF(x, yy), QPointF(x, yy + row_h))
                p.setFont(st.label)
                p.setPen(QColor(MUTED))
                p.drawText(QRectF(x + 6, yy + 2, w - 12, 11), int(Qt.AlignLeft | Qt.AlignVCenter), label.upper())
                font = st.mono if label.startswith("scheme hash") else st.body
                p.setFont(font)
                p.setPen(QColor(INK))
                p.drawText(QRectF(x + 6, yy + 13, w - 12, row_h - 15), int(Qt.AlignLeft | Qt.AlignVCenter),
                           st.metrics(font).elidedText(value, Qt.ElideMiddle, w - 12))
                x += w

    def _paint_furniture(self, p: QPainter, k: int, n: int) -> None:
        st, sh = self.st, self.sheet
        b = sh.border
        p.setPen(pen(INK, 1.1))
        p.setBrush(Qt.NoBrush)
        p.drawRect(QRectF(b, b, sh.width - 2 * b, sh.height - 2 * b))
        if k > 1:
            y = b + sh.header_h
            p.setPen(pen(RULE, 0.8))
            p.drawLine(QPointF(sh.left, y), QPointF(sh.left + self.cw, y))
            p.setFont(st.small)
            p.setPen(QColor(MUTED))
            fm = st.metrics(st.small)
            p.drawText(QRectF(sh.left, b, self.cw * 0.7, sh.header_h), int(Qt.AlignLeft | Qt.AlignVCenter),
                       fm.elidedText(f"kinestat check report  ·  {self.title}", Qt.ElideRight, self.cw * 0.7))
            p.drawText(QRectF(sh.left + self.cw * 0.5, b, self.cw * 0.5, sh.header_h),
                       int(Qt.AlignRight | Qt.AlignVCenter), f"scheme {self.f.hash}  ·  {self.f.when:%Y-%m-%d}")
        fy = sh.height - b - sh.footer_h
        p.setPen(pen(INK, 0.8))
        p.drawLine(QPointF(b, fy), QPointF(sh.width - b, fy))
        p.setFont(st.italic)
        p.setPen(QColor(INK))
        p.drawText(QRectF(sh.left, fy, self.cw - 90, sh.footer_h), int(Qt.AlignLeft | Qt.AlignVCenter | Qt.TextWordWrap),
                   CAUTION)
        p.setFont(st.body)
        p.drawText(QRectF(sh.left + self.cw - 90, fy, 90, sh.footer_h), int(Qt.AlignRight | Qt.AlignVCenter),
                   f"page {k} of {n}")

    def paint(self, pages) -> None:
        p = QPainter(self.w)
        if not p.isActive():
            raise OSError("the PDF writer could not start")
        try:
            p.setRenderHint(QPainter.Antialiasing, True)
            p.setRenderHint(QPainter.TextAntialiasing, True)
            n = len(pages)
            for k, blocks in enumerate(pages, start=1):
                if k > 1:
                    self.w.newPage()
                if k == 1:
                    self._paint_title_block(p)
                self._paint_furniture(p, k, n)
                for b, r in blocks:
                    p.save()
                    b.paint(p, r)
                    p.restore()
        finally:
            p.end()


# ---------------------------------------------------------------------- entry point
@dataclass(frozen=True)
class ReportInfo:
    path: Path
    pages: int
    hash: str
    verdict: str


def _writer(path: str, facts: Facts, title: str) -> QPdfWriter:
    w = QPdfWriter(path)
    w.setResolution(DPI)
    w.setPageLayout(QPageLayout(QPageSize(QPageSize.A4), QPageLayout.Portrait, QMarginsF(0, 0, 0, 0)))
    w.setTitle(f"kinestat check report: {title}")
    w.setCreator(f"kinestat {facts.version}")
    return w


def write_report(scheme: Scheme, path, source_name: str | None = None, *, classification=None,
                 when: _dt.datetime | None = None, extras: bool = True) -> ReportInfo:
    """Write the PDF check report of ``scheme`` to ``path`` atomically.

    ``source_name`` is the file name shown in the title block (``None``: an unsaved scheme).
    ``classification`` may pass the app's current :func:`kinestat.core.classify.classify`
    result to save a second analysis.  Needs a ``QGuiApplication``.  Raises ``OSError`` when
    the file cannot be written (the target is then left as it was).
    """
    from PySide6.QtGui import QGuiApplication

    if QGuiApplication.instance() is None:
        raise RuntimeError("write_report needs a QGuiApplication (kinestat report makes one)")
    keep_none_alive()  # PySide6 6.12 on CPython 3.11: see qt_compat
    target = Path(path)
    facts = gather(scheme, source_name, classification=classification, when=when, extras=extras)
    from kinestat.core.io import atomic_target

    with atomic_target(target) as tmp:
        writer = _writer(tmp, facts, scheme.title or facts.source_name)
        rep = Report(facts, writer)
        pages = rep.build()
        rep.paint(pages)  # QPainter.end() completes the document
        rep = writer = None  # the writer closes its file when it is destroyed
        if os.path.getsize(tmp) == 0:
            raise OSError(f"cannot write the PDF to {target}")
    return ReportInfo(target, len(pages), facts.hash, facts.check["verdict"])
