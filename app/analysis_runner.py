"""Live re-analysis: throttle edits with a QTimer, classify a snapshot, drop stale results.

After a change the runner waits ``interval_ms`` (a single-shot timer that is *not*
restarted by further changes, so a long drag still gets a verdict every interval), takes the
current immutable scheme as the snapshot and classifies it: inline when the scheme is small,
on a one-thread ``QThreadPool`` when it is big.  Only one job runs at a time; a result whose
revision is older than the document's is dropped and the newest snapshot goes next.
``sync=True`` classifies at once on every change (tests).
"""
from __future__ import annotations

import threading
import time

from PySide6.QtCore import QObject, QRunnable, QThreadPool, QTimer, Signal

from kinestat.core.model import Scheme


_recent: list[tuple[Scheme, object]] = []
_recent_lock = threading.Lock()


def classify_scheme(scheme: Scheme):
    """The engine's verdict, or None for a scheme with no members (nothing to classify).

    The last few results are kept by snapshot identity (schemes are immutable), so the views
    that build on the verdict (redundancy, primary structure, remedies) reuse the one the
    live runner already computed instead of classifying the same snapshot again.
    """
    if not scheme.members:
        return None
    with _recent_lock:
        for s, res in _recent:
            if s is scheme:
                return res
    from kinestat.core.classify import classify

    res = classify(scheme)
    with _recent_lock:
        _recent.insert(0, (scheme, res))
        del _recent[4:]
    return res


class _Signals(QObject):
    done = Signal(int, object, object, float, object)  # revision, result, error, seconds, thread id


class _Job(QRunnable):
    def __init__(self, revision: int, scheme: Scheme, signals: _Signals, compute=classify_scheme):
        super().__init__()
        self.revision, self.scheme, self.signals, self.compute = revision, scheme, signals, compute
        self.setAutoDelete(True)

    def run(self) -> None:
        t0 = time.perf_counter()
        try:
            res, err = self.compute(self.scheme), None
        except Exception as exc:  # noqa: BLE001 - reported to the user, never a crash
            res, err = None, exc
        self.signals.done.emit(self.revision, res, err, time.perf_counter() - t0, threading.get_ident())


class AnalysisRunner(QObject):
    """Keeps ``result`` in step with ``doc.scheme``."""

    #: revision, Classification (None for an empty scheme)
    result_ready = Signal(int, object)
    #: revision, message
    failed = Signal(int, str)
    #: a newer scheme is waiting for its verdict
    pending = Signal()
    #: revision sent to the background thread
    started = Signal(int)

    def __init__(self, doc, parent: QObject | None = None, *, sync: bool = False, interval_ms: int = 90,
                 thread_members: int = 120, compute=classify_scheme):
        super().__init__(parent)
        self.doc = doc
        self.sync = sync
        #: scheme -> result, run on each snapshot (the engine's verdict unless told otherwise)
        self.compute = compute
        #: members above which the engine runs off the GUI thread
        self.thread_members = thread_members
        self.result = None
        self.result_revision = -1
        self.error: str | None = None
        self.runs = 0
        self.dropped = 0
        self.last_seconds = 0.0
        #: thread id of the last background job (None until one ran)
        self.worker_thread: int | None = None
        self._busy = False
        #: the scheme behind ``result`` (to skip re-analysis when only non-mechanical fields change)
        self._last_scheme: Scheme | None = None
        self._pending_schemes: dict[int, Scheme] = {}
        self._timer = QTimer(self)
        self._timer.setSingleShot(True)
        self._timer.setInterval(interval_ms)
        self._timer.timeout.connect(self._start)
        self._pool = QThreadPool(self)
        self._pool.setMaxThreadCount(1)
        self._signals = _Signals(self)
        self._signals.done.connect(self._on_done)
        doc.changed.connect(self._on_changed)

    # ------------------------------------------------------------------
    def is_current(self) -> bool:
        return self.result_revision == self.doc.revision

    def _on_changed(self, _change=None) -> None:
        if self.sync:
            self.run_now()
            return
        self.pending.emit()
        if not self._timer.isActive():
            self._timer.start()

    def _reuse(self, rev: int, scheme: Scheme) -> bool:
        """Publish the last result again when an edit left the mechanics unchanged
        (the title, units, notes or the underlay image): no analysis needed."""
        last = self._last_scheme
        if last is None or self.error is not None or self.result_revision < 0:
            return False
        if not (last.nodes == scheme.nodes and last.members == scheme.members
                and last.supports == scheme.supports):
            return False
        self.result_revision = rev
        self.result_ready.emit(rev, self.result)
        return True

    def run_now(self) -> None:
        """Classify the current scheme on this thread and publish the result."""
        self._timer.stop()
        rev, scheme = self.doc.revision, self.doc.scheme
        if self._reuse(rev, scheme):
            return
        t0 = time.perf_counter()
        try:
            res, err = self.compute(scheme), None
        except Exception as exc:  # noqa: BLE001
            res, err = None, exc
        self._finish(rev, res, err, time.perf_counter() - t0)

    def _start(self) -> None:
        if self._busy:
            return  # the finishing job starts the next one
        rev, scheme = self.doc.revision, self.doc.scheme
        if rev == self.result_revision or self._reuse(rev, scheme):
            return
        if len(scheme.members) < self.thread_members:
            self.run_now()
            return
        self._busy = True
        self._pending_schemes[rev] = scheme
        self._pool.start(_Job(rev, scheme, self._signals, self.compute))
        self.started.emit(rev)

    def _on_done(self, rev: int, res, err, seconds: float, thread_id) -> None:
        self._busy = False
        self.worker_thread = thread_id
        self._finish(rev, res, err, seconds)
        if self.doc.revision != self.result_revision and not self._timer.isActive():
            self._timer.start()

    def _finish(self, rev: int, res, err, seconds: float) -> None:
        self.runs += 1
        self.last_seconds = seconds
        analysed = self._pending_schemes.pop(rev, None)
        if rev != self.doc.revision:
            self.dropped += 1
            return
        self._last_scheme = analysed if analysed is not None else self.doc.scheme
        self.result_revision = rev
        if err is not None:
            self.result = None
            self.error = f"{type(err).__name__}: {err}"
            self.failed.emit(rev, self.error)
            return
        self.error = None
        self.result = res
        self.result_ready.emit(rev, res)

    def wait_idle(self, timeout_ms: int = 10000) -> bool:
        """Block until the pool is idle (benchmarks, shutdown)."""
        return self._pool.waitForDone(timeout_ms)
