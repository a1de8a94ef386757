"""The verdict panel: the current verdict in plain words, where the mechanisms and
self-stress sit (inside the structure / at the supports), the hand count term by term next
to the rank result, the engine's explanations, and warnings that highlight items."""
from __future__ import annotations

from PySide6.QtCore import QPointF, Qt, Signal
from PySide6.QtGui import QPainter, QPixmap
from PySide6.QtWidgets import (QFrame, QGridLayout, QLabel, QListWidget, QListWidgetItem, QScrollArea,
                               QSizePolicy, QVBoxLayout, QWidget)

from . import drawing as dr

_TERM_NAMES = (("joints", "joints j"), ("members", "members m"), ("reactions", "reactions r"),
               ("releases", "releases c"))


def marker_pixmap(verdict: str | None, size: int = 22, dpr: float = 2.0) -> QPixmap:
    pm = QPixmap(int(size * dpr), int(size * dpr))
    pm.setDevicePixelRatio(dpr)
    pm.fill(Qt.transparent)
    p = QPainter(pm)
    p.setRenderHint(QPainter.Antialiasing)
    dr.draw_verdict_marker(p, verdict, QPointF(size / 2, size / 2), size * 0.38)
    p.end()
    return pm


def _heading(text: str) -> QLabel:
    lab = QLabel(text)
    lab.setStyleSheet(f"color: {dr.PALETTE.muted}; font-weight: 600; margin-top: 8px;")
    return lab


class VerdictPanel(QScrollArea):
    """Scrolls when the explanations are long; the warnings list keeps a useful height."""

    #: ids of the items a clicked warning concerns
    highlight_requested = Signal(tuple)

    def __init__(self, parent=None):
        super().__init__(parent)
        self.classification = None
        inner = QWidget()
        self.setWidget(inner)
        self.setWidgetResizable(True)
        self.setFrameShape(QFrame.NoFrame)
        self.setHorizontalScrollBarPolicy(Qt.ScrollBarAlwaysOff)
        lay = QVBoxLayout(inner)
        lay.setContentsMargins(10, 8, 10, 8)
        lay.setSpacing(3)
        top = QGridLayout()
        self.marker = QLabel()
        self.marker.setFixedSize(26, 26)
        self.verdict_label = QLabel("Draw members to start")
        self.verdict_label.setObjectName("verdict")
        self.verdict_label.setWordWrap(True)
        self.verdict_label.setMinimumHeight(self.verdict_label.fontMetrics().height() * 3)
        self.verdict_label.setStyleSheet("font-size: 13pt; font-weight: 600;")
        top.addWidget(self.marker, 0, 0, Qt.AlignTop)
        top.addWidget(self.verdict_label, 0, 1)
        top.setColumnStretch(1, 1)
        lay.addLayout(top)
        self.state_label = QLabel("")
        self.state_label.setStyleSheet(f"color: {dr.PALETTE.muted};")
        lay.addWidget(self.state_label)
        self.split_label = QLabel("")
        self.split_label.setWordWrap(True)
        lay.addWidget(self.split_label)

        lay.addWidget(_heading("Hand count and rank"))
        grid = QGridLayout()
        grid.setHorizontalSpacing(14)
        grid.setVerticalSpacing(1)
        def column(names, col: int) -> dict[str, QLabel]:
            labels = {}
            for row, (key, name) in enumerate(names):
                grid.addWidget(QLabel(name), row, col)
                v = QLabel("–")
                v.setAlignment(Qt.AlignRight)
                v.setMinimumWidth(44)
                labels[key] = v
                grid.addWidget(v, row, col + 1)
            return labels

        self.term_labels: dict[str, QLabel] = column(_TERM_NAMES, 0)
        self.rank_labels: dict[str, QLabel] = column(
            (("mechanisms", "mechanisms m"), ("self_stress", "self-stress s"),
             ("difference", "s \u2212 m"), ("rank", "matrix rank")), 2)
        grid.setColumnStretch(4, 1)
        lay.addLayout(grid)
        self.formula_label = QLabel("")
        self.formula_label.setWordWrap(True)
        self.formula_label.setTextInteractionFlags(Qt.TextSelectableByMouse)
        self.formula_label.setStyleSheet("font-family: monospace;")
        lay.addWidget(self.formula_label)
        self.agree_label = QLabel("")
        self.agree_label.setWordWrap(True)
        lay.addWidget(self.agree_label)

        lay.addWidget(_heading("Why"))
        self.explain_label = QLabel("")
        self.explain_label.setWordWrap(True)
        self.explain_label.setTextInteractionFlags(Qt.TextSelectableByMouse)
        lay.addWidget(self.explain_label)

        lay.addWidget(_heading("Warnings (click to show)"))
        self.warnings = QListWidget()
        self.warnings.setWordWrap(True)
        self.warnings.setFrameShape(QFrame.NoFrame)
        self.warnings.setSizePolicy(QSizePolicy.Preferred, QSizePolicy.Expanding)
        self.warnings.setMinimumHeight(90)
        self.warnings.itemClicked.connect(self._on_warning_clicked)
        self.warnings.currentItemChanged.connect(lambda cur, _prev: cur and self._on_warning_clicked(cur))
        lay.addWidget(self.warnings, 1)
        caution = QLabel(dr.CAUTION)
        caution.setWordWrap(True)
        caution.setStyleSheet(f"color: {dr.PALETTE.muted}; font-style: italic; font-size: 9pt;")
        lay.addWidget(caution)
        self.show_result(None, empty=True)

    # ------------------------------------------------------------------
    def set_pending(self, pending: bool) -> None:
        self.state_label.setText("updating\u2026" if pending else "")

    def show_error(self, message: str) -> None:
        self.classification = None
        self.marker.setPixmap(marker_pixmap(None))
        self.verdict_label.setText("Could not analyse this scheme")
        self.split_label.setText(message)
        self.state_label.setText("")

    def show_result(self, c, empty: bool = False) -> None:
        self.classification = c
        self.state_label.setText("")
        self.warnings.clear()
        if c is None:
            self.marker.setPixmap(marker_pixmap(None))
            self.verdict_label.setText("Draw members to start" if empty else "Not analysed yet")
            self.split_label.setText("Pick Beam (B) or Bar (T) and click point to point; add supports "
                                     "with Pin (P), Roller (R), Fixed (F) or Guided (G)." if empty else "")
            for v in list(self.term_labels.values()) + list(self.rank_labels.values()):
                v.setText("–")
            self.formula_label.setText("")
            self.agree_label.setText("")
            self.explain_label.setText("")
            return
        self.marker.setPixmap(marker_pixmap(c.verdict))
        self.verdict_label.setText(c.summary())
        self.verdict_label.setStyleSheet(f"font-size: 13pt; font-weight: 600; color: {dr.verdict_colour(c.verdict)};")
        self.split_label.setText(self._split_words(c))
        cnt = c.count
        for key, lab in self.term_labels.items():
            lab.setText(str(cnt.terms.get(key, "–")))
        self.rank_labels["mechanisms"].setText(str(c.mechanisms))
        self.rank_labels["self_stress"].setText(str(c.self_stress))
        self.rank_labels["difference"].setText(str(c.self_stress - c.mechanisms))
        rank = getattr(getattr(c, "rank", None), "rank", None)
        self.rank_labels["rank"].setText("–" if rank is None else str(rank))
        self.formula_label.setText(f"{cnt.form} count: {cnt.formula}")
        diff = c.self_stress - c.mechanisms
        if cnt.value == diff and not (c.mechanisms and c.self_stress):
            self.agree_label.setText(f"The hand count ({cnt.value}) agrees with the rank result.")
        else:
            self.agree_label.setText(
                f"The hand count gives {cnt.value}, but the rank result has m = {c.mechanisms} "
                f"mechanism(s) and s = {c.self_stress} state(s) of self-stress: the count alone misleads here.")
        self.explain_label.setText("\n\n".join(c.explanations) if c.explanations else "Nothing unusual.")
        for f in c.warnings:
            it = QListWidgetItem(f.text)
            it.setData(Qt.UserRole, tuple(f.items))
            it.setToolTip("Items: " + ", ".join(f.items) if f.items else f.text)
            self.warnings.addItem(it)
        if not c.warnings:
            it = QListWidgetItem("None")
            it.setFlags(Qt.NoItemFlags)
            self.warnings.addItem(it)

    @staticmethod
    def _split_words(c) -> str:
        """Where the mechanisms / redundants sit: inside the structure or at the supports."""
        def n(k, word):
            return f"{k} {word}{'s' if k != 1 else ''}"
        if c.verdict == "unstable":
            at_sup = max(0, min(c.rigid_body_mechanisms, c.mechanisms))
            inside = c.mechanisms - at_sup
            text = (f"Inside the structure: {n(inside, 'mechanism')}; at the supports: {at_sup} "
                    f"(rigid-body motion{'s' if at_sup != 1 else ''} the supports do not stop).")
            if c.internal_mechanisms != inside:
                text += (f" On its own, without supports, the structure has "
                         f"{n(c.internal_mechanisms, 'internal mechanism')}.")
            if c.self_stress:
                text += f" Also {n(c.self_stress, 'state')} of self-stress."
            return text
        inside = c.internal_self_stress
        at_sup = c.self_stress - inside
        if c.verdict == "determinate":
            return "No mechanisms; no redundant members or reactions."
        return f"Redundants inside the structure: {inside}; at the supports: {at_sup}."

    def _on_warning_clicked(self, item: QListWidgetItem) -> None:
        ids = item.data(Qt.UserRole)
        if ids:
            self.highlight_requested.emit(tuple(ids))

    def warning_texts(self) -> list[str]:
        return [self.warnings.item(k).text() for k in range(self.warnings.count())
                if self.warnings.item(k).data(Qt.UserRole) is not None]
