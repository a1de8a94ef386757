"""File > Check report (PDF)...: write the check report off the GUI thread, then offer to open it.

The report (:func:`kinestat.app.report.write_report`) traces mechanisms and computes
redundancy, which takes seconds on bigger schemes, so it runs on a worker thread on a
snapshot of the scheme (schemes are immutable: edits made meanwhile do not reach the
report).  A progress dialog says that it is working; the file is written atomically (a
temporary file renamed over the target when complete), so a failure leaves any earlier
report as it was.
"""
from __future__ import annotations

import threading
from pathlib import Path

from PySide6.QtCore import QObject, Qt, QUrl, Signal
from PySide6.QtGui import QDesktopServices
from PySide6.QtWidgets import QFileDialog, QMessageBox, QProgressDialog

PDF_FILTER = "PDF report (*.pdf)"


class _Done(QObject):
    #: path, ReportInfo or None, error message or None
    finished = Signal(object, object, object)


class ReportAction(QObject):
    """The menu action, the worker thread and the "open it?" question."""

    #: emitted on the GUI thread when a report is written (ReportInfo) or failed (None)
    done = Signal(object)

    def __init__(self, win):
        super().__init__(win)
        self.win = win
        self.action = win._action("Check &report (PDF)\u2026", self.ask_and_write,
                                  tip="Write the check report (verdict, count, drawing, mechanisms, redundancy) as a PDF")
        self._signals = _Done(self)
        self._signals.finished.connect(self._finished)
        self._thread: threading.Thread | None = None
        self.progress: QProgressDialog | None = None
        self.last_info = None
        self.last_error: str | None = None
        #: replaced by tests: called with the ReportInfo after a report is written
        self.offer_open = self._offer_open

    def busy(self) -> bool:
        return self._thread is not None and self._thread.is_alive()

    def default_path(self) -> Path:
        d = self.win.doc
        if d.path is not None:
            return Path(d.path).with_suffix(".pdf")
        stem = "".join(c if c.isalnum() or c in "-_ " else "_" for c in (d.scheme.title or "scheme")).strip()
        return Path(f"{stem or 'scheme'}_check.pdf")

    def ask_and_write(self) -> bool:
        if self.busy():
            self.win._message("A check report is being written already")
            return False
        name, _ = QFileDialog.getSaveFileName(self.win, "Check report (PDF)", str(self.default_path()), PDF_FILTER)
        if not name:
            return False
        return self.write(Path(name if name.lower().endswith(".pdf") else name + ".pdf"))

    def write(self, path: Path) -> bool:
        """Start writing the report of the current scheme to ``path`` (returns at once)."""
        win = self.win
        if self.busy():
            win._message("A check report is being written already")
            return False
        path = Path(path)
        if not path.parent.is_dir():
            win.show_error("Cannot write the report", f"{path}: folder {path.parent} does not exist")
            return False
        if win.doc.path is not None and path.resolve() == Path(win.doc.path).resolve():
            win.show_error("Cannot write the report", f"{path}: the report would overwrite the scheme file")
            return False
        scheme = win.doc.scheme
        source = Path(win.doc.path).name if win.doc.path else None
        c = win.runner.result if win.runner.is_current() else None
        self.progress = QProgressDialog("Writing the check report\u2026", "", 0, 0, win)
        self.progress.setWindowTitle("Check report")
        self.progress.setCancelButton(None)
        self.progress.setWindowModality(Qt.WindowModal)
        self.progress.setMinimumDuration(400)
        self.progress.setValue(0)  # starts the 400 ms count: quick reports never flash a dialog
        win._message(f"Writing the check report to {path.name}\u2026")

        def work() -> None:
            from .report import write_report

            try:
                info, err = write_report(scheme, path, source, classification=c), None
            except OSError as exc:
                info, err = None, f"{path}: cannot be written ({exc.strerror or exc})"
            except Exception as exc:  # noqa: BLE001 - reported to the user, never a crash
                info, err = None, f"{type(exc).__name__}: {exc}"
            self._signals.finished.emit(path, info, err)

        self._thread = threading.Thread(target=work, name="kinestat-report", daemon=True)
        self._thread.start()
        return True

    def _finished(self, path: Path, info, err) -> None:
        if self.progress is not None:
            self.progress.reset()
            self.progress.deleteLater()
            self.progress = None
        self._thread = None
        self.last_info, self.last_error = info, err
        if err is not None:
            self.win._message(f"Check report failed: {err}")
            self.win.show_error("Cannot write the report", err)
        else:
            self.win._message(f"Check report written: {path.name}, {info.pages} page(s), {info.verdict}, "
                              f"scheme hash {info.hash}")
            self.offer_open(info)
        self.done.emit(info)

    def _offer_open(self, info) -> None:
        r = QMessageBox.question(self.win, "Check report written",
                                 f"{info.path}\n{info.pages} page(s); verdict: {info.verdict}; scheme hash {info.hash}."
                                 "\n\nOpen it now?", QMessageBox.Open | QMessageBox.Close, QMessageBox.Open)
        if r == QMessageBox.Open:
            QDesktopServices.openUrl(QUrl.fromLocalFile(str(Path(info.path).resolve())))

    def wait(self, timeout: float = 60.0) -> bool:
        """Block until the worker is done (shutdown, benchmarks)."""
        t = self._thread
        if t is not None:
            t.join(timeout)
        return t is None or not t.is_alive()
