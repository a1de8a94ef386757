"""What the redundancy, primary-structure and remedies panels share.

The document, the canvas overlay the panel paints on, the last result with the revision it
describes (a result is stale once the drawing has changed since), and the two heading
lines: a bold summary and a muted status line.
"""
from __future__ import annotations

from PySide6.QtWidgets import QLabel, QVBoxLayout, QWidget

from . import drawing as dr
from .canvas_overlay import Overlay


class InsightPanel(QWidget):
    #: the summary line when the analysis failed
    error_title = "Could not analyse this scheme"

    def __init__(self, doc, overlay: Overlay, parent=None):
        super().__init__(parent)
        self.doc = doc
        self.overlay = overlay
        self.result = None
        self.result_revision = -1
        #: the panel's dock is showing (the overlay is painted only then)
        self.shown = True
        self.box = QVBoxLayout(self)
        self.box.setContentsMargins(8, 6, 8, 6)
        self.box.setSpacing(4)
        self.summary_label = QLabel("")
        self.summary_label.setWordWrap(True)
        self.summary_label.setStyleSheet("font-weight: 600;")
        self.box.addWidget(self.summary_label)
        self.status_label = QLabel("")
        self.status_label.setWordWrap(True)
        self.status_label.setStyleSheet(f"color: {dr.PALETTE.muted};")
        self.box.addWidget(self.status_label)

    def is_stale(self) -> bool:
        """The drawing has changed since the result shown was worked out."""
        return self.result is not None and self.result_revision != self.doc.revision

    def take(self, res, revision: int | None) -> None:
        """Keep ``res`` as the result of ``revision`` (the current one when None)."""
        self.result = res
        self.result_revision = self.doc.revision if revision is None else revision
        self.status_label.setText("")

    def show_error(self, message: str) -> None:
        """The analysis failed: say so, and show nothing of an older result."""
        self.result = None
        self.summary_label.setText(self.error_title)
        self.status_label.setText(message)
        self.refill()

    def refill(self) -> None:
        """Fill the panel (and the canvas) from ``self.result``."""

    def empty_words(self, what: str) -> str:
        return f"Draw or open {what}." if not self.doc.scheme.members else "Not analysed yet."
