"""The motion strip: how an unstable scheme moves, animated and scrubbable on the canvas.

The strip (a bottom dock of the main window) appears while the verdict is "unstable".  It
offers a mode picker (one canonical mode or a weighted combination), play / pause, loop or
back-and-forth, the speed, and a scrubber over every traced position with the drawn
position and the ends of the path (dead centre, members touching, end of range) marked.

:class:`MotionController` keeps it in step with the document: the path is traced by
:func:`.motion_data.compute_motion` on a worker thread (inline when ``sync``), cached per
scheme revision and mode, and drawn by :class:`.motion_overlay.MotionOverlay`.  The
animation never writes to the document; "Adopt this position" is one undoable edit.
Editing the scheme while a mode plays restarts the motion on the new scheme.
"""
from __future__ import annotations

from collections import OrderedDict
from dataclasses import replace
from pathlib import Path

from PySide6.QtCore import QEvent, QObject, QPointF, QRectF, QRunnable, Qt, QThreadPool, QTimer, Signal
from PySide6.QtGui import QBrush, QColor, QPainter, QPolygonF
from PySide6.QtWidgets import (QCheckBox, QComboBox, QDockWidget, QFileDialog, QHBoxLayout, QLabel, QLineEdit,
                               QMessageBox, QProgressDialog, QPushButton, QSizePolicy, QSlider, QStyle,
                               QStyleOptionSlider, QToolButton, QVBoxLayout, QWidget)

from . import drawing as dr
from .motion_data import STEPS, MotionData, ModeSpec, compute_motion, frame_label
from .motion_export import GIF_NOTE, existing_frames, export_frames, mode_words
from .motion_overlay import MotionOverlay
from .qt_compat import keep_none_alive

keep_none_alive()

#: playback rate at speed 1x (frames per second) and the timer period
FPS = 30
TICK_MS = 1000 // FPS
SPEEDS = (0.25, 0.5, 1.0, 2.0, 4.0)
REPEATS = ("back and forth", "loop")
#: a new scheme is fitted to its whole path when the path is at most this many times the drawing
FIT_PATH_RATIO = 2.0
#: traced paths kept (scheme revision x mode)
CACHE_SIZE = 12
MARK_COLOURS = {"dead centre": dr.PALETTE.mechanism, "clash": dr.PALETTE.warning, "limit": dr.PALETTE.muted,
                "drawn": dr.PALETTE.ink, "bifurcation": dr.PALETTE.hover}
MARK_SYMBOLS = {"drawn": "\u25c6 drawn position", "dead centre": "\u25b2 dead centre",
                "clash": "\u2716 members touch", "limit": "\u258c end of traced range",
                "bifurcation": "| bifurcation passed"}


# ---------------------------------------------------------------------- widgets
class MotionScrubber(QSlider):
    """A slider over the frame index with the path's marks drawn under the groove."""

    def __init__(self, parent=None):
        super().__init__(Qt.Horizontal, parent)
        self.marks = []
        self.setMinimumHeight(34)
        self.setMinimumWidth(240)
        self.setMouseTracking(True)
        self.setPageStep(10)
        self.setFocusPolicy(Qt.StrongFocus)

    def set_marks(self, marks) -> None:
        self.marks = list(marks)
        self.update()

    def x_of(self, value: int) -> float:
        opt = QStyleOptionSlider()
        self.initStyleOption(opt)
        st = self.style()
        groove = st.subControlRect(QStyle.CC_Slider, opt, QStyle.SC_SliderGroove, self)
        handle = st.subControlRect(QStyle.CC_Slider, opt, QStyle.SC_SliderHandle, self)
        span = max(groove.width() - handle.width(), 1)
        return groove.x() + handle.width() / 2 + QStyle.sliderPositionFromValue(self.minimum(), self.maximum(),
                                                                                int(value), span)

    def paintEvent(self, ev):  # noqa: N802
        super().paintEvent(ev)
        if not self.marks or self.maximum() <= self.minimum():
            return
        p = QPainter(self)
        p.setRenderHint(QPainter.Antialiasing, True)
        y = self.height() - 6.0
        for m in self.marks:
            x = self.x_of(m.frame)
            colour = MARK_COLOURS.get(m.kind, dr.PALETTE.muted)
            p.setPen(dr.pen(colour, 1.4))
            p.setBrush(QBrush(QColor(colour)))
            if m.kind == "drawn":
                p.drawPolygon(QPolygonF([QPointF(x, y - 5), QPointF(x + 4, y), QPointF(x, y + 5), QPointF(x - 4, y)]))
            elif m.kind == "dead centre":
                p.drawPolygon(QPolygonF([QPointF(x, y - 6), QPointF(x + 5, y + 4), QPointF(x - 5, y + 4)]))
                p.drawLine(QPointF(x, 2), QPointF(x, y - 6))
            elif m.kind == "clash":
                p.drawLine(QPointF(x - 4, y - 4), QPointF(x + 4, y + 4))
                p.drawLine(QPointF(x - 4, y + 4), QPointF(x + 4, y - 4))
            elif m.kind == "limit":
                p.drawRect(QRectF(x - 1.5, y - 5, 3, 10))
            else:
                p.drawLine(QPointF(x, y - 5), QPointF(x, y + 5))
        p.end()

    def mouseMoveEvent(self, ev):  # noqa: N802
        x = ev.position().x()
        near = [m.text for m in self.marks if abs(self.x_of(m.frame) - x) <= 6]
        self.setToolTip("\n".join(near) if near else "Drag to move the mechanism along its path")
        super().mouseMoveEvent(ev)


class MotionStrip(QWidget):
    """The controls (no logic: :class:`MotionController` drives them)."""

    def __init__(self, parent=None):
        super().__init__(parent)
        lay = QVBoxLayout(self)
        lay.setContentsMargins(8, 4, 8, 4)
        lay.setSpacing(2)
        self.banner_label = QLabel("")
        self.banner_label.setWordWrap(True)
        self.banner_label.setStyleSheet(f"color: {dr.PALETTE.ink}; background: #fff4e5; border: 1px solid "
                                        f"{dr.PALETTE.mechanism}; border-radius: 3px; padding: 2px 6px;"
                                        " font-weight: 600;")
        self.banner_label.setVisible(False)
        lay.addWidget(self.banner_label)
        row = QHBoxLayout()
        row.setSpacing(6)
        row.addWidget(QLabel("Show"))
        self.mode_combo = QComboBox()
        self.mode_combo.setToolTip("Which mechanism to move: one mode, or a combination of the modes")
        self.mode_combo.setSizeAdjustPolicy(QComboBox.AdjustToContents)
        row.addWidget(self.mode_combo)
        self.weights_edit = QLineEdit()
        self.weights_edit.setPlaceholderText("weights, e.g. 1, 0.5")
        self.weights_edit.setToolTip("One weight per mode, separated by commas; Enter to trace")
        self.weights_edit.setMaximumWidth(150)
        self.weights_edit.setVisible(False)
        row.addWidget(self.weights_edit)
        self.play_button = QToolButton()
        self.play_button.setText("\u25b6 Play")
        self.play_button.setMinimumWidth(76)
        self.play_button.setToolTip("Play or pause the motion (the document is never changed)")
        row.addWidget(self.play_button)
        self.repeat_combo = QComboBox()
        self.repeat_combo.addItems([r.capitalize() for r in REPEATS])
        self.repeat_combo.setToolTip("At the end of the path: turn back, or start again")
        row.addWidget(self.repeat_combo)
        self.speed_combo = QComboBox()
        self.speed_combo.addItems([f"{s:g}\u00d7" for s in SPEEDS])
        self.speed_combo.setCurrentIndex(SPEEDS.index(1.0))
        self.speed_combo.setToolTip(f"Playback speed (1\u00d7 = {FPS} positions a second)")
        row.addWidget(self.speed_combo)
        self.scrubber = MotionScrubber()
        self.scrubber.setSizePolicy(QSizePolicy.Expanding, QSizePolicy.Fixed)
        row.addWidget(self.scrubber, 1)
        self.frame_label = QLabel("")
        self.frame_label.setMinimumWidth(300)
        row.addWidget(self.frame_label)
        lay.addLayout(row)
        row2 = QHBoxLayout()
        row2.setSpacing(8)
        self.status_label = QLabel("")
        self.status_label.setWordWrap(True)
        self.status_label.setTextInteractionFlags(Qt.TextSelectableByMouse)
        row2.addWidget(self.status_label, 1)
        self.legend_label = QLabel("")
        self.legend_label.setStyleSheet(f"color: {dr.PALETTE.muted};")
        row2.addWidget(self.legend_label)
        self.canvas_check = QCheckBox("On canvas")
        self.canvas_check.setChecked(True)
        self.canvas_check.setToolTip("Draw the moving mechanism over the canvas (the drawing fades to a ghost)")
        row2.addWidget(self.canvas_check)
        self.fit_button = QPushButton("Fit path")
        self.fit_button.setToolTip("Zoom so that the whole traced path is in view")
        row2.addWidget(self.fit_button)
        self.adopt_button = QPushButton("Adopt this position")
        self.adopt_button.setToolTip("Move the nodes to the position shown (one step you can undo)")
        row2.addWidget(self.adopt_button)
        self.export_button = QPushButton("Export frames\u2026")
        self.export_button.setToolTip("Save every position as a numbered PNG series for a review record. " + GIF_NOTE)
        row2.addWidget(self.export_button)
        lay.addLayout(row2)

    def set_playing(self, on: bool) -> None:
        self.play_button.setText("\u275a\u275a Pause" if on else "\u25b6 Play")


# ---------------------------------------------------------------------- background tracing
class _Signals(QObject):
    done = Signal(object, object, object)  # key, MotionData or None, error text or None


class _Job(QRunnable):
    def __init__(self, key, scheme, steps: int, signals: _Signals):
        super().__init__()
        self.key, self.scheme, self.steps, self.signals = key, scheme, steps, signals
        self.setAutoDelete(True)

    def run(self) -> None:
        self.signals.done.emit(self.key, *trace_safely(self.scheme, self.key, self.steps))


def trace_safely(scheme, key, steps: int):
    """(MotionData, None) or (None, words): never raises."""
    rev, spec = key
    try:
        return compute_motion(scheme, spec, rev, steps), None
    except ValueError as exc:
        return None, str(exc)
    except Exception as exc:  # noqa: BLE001 - shown to the user, never a crash
        return None, f"the positions could not be traced ({type(exc).__name__}: {exc})"


# ---------------------------------------------------------------------- the controller
class MotionController(QObject):
    """Drives the strip and the overlay from the document and the verdict."""

    #: a path is on show (MotionData)
    path_ready = Signal(object)
    #: the frame on show changed
    frame_changed = Signal(int)

    def __init__(self, doc, scene, view, parent=None, *, sync: bool = False, steps: int = STEPS,
                 debounce_ms: int = 150, message=None):
        super().__init__(parent)
        self.doc, self.scene, self.view = doc, scene, view
        self.sync = sync
        self.steps = steps
        self.message = message or (lambda text: None)
        self.strip = MotionStrip()
        self.overlay = MotionOverlay(scene, self)
        self.dock: QDockWidget | None = None
        self.active = False
        self.data: MotionData | None = None
        self.spec = ModeSpec()
        self.mechanisms = 0
        self.frame = 0
        self.playing = False
        #: resume playing when the next path arrives (on open, and after an edit while playing)
        self.want_play = False
        self.error: str | None = None
        self.jobs_started = 0
        self._direction = 1
        self._acc = 0.0
        self._repeat_chosen = False
        #: fit the view when the first path of an opened scheme arrives
        self._fit_pending = False
        self._setting = False
        self._busy = False
        self.cache: OrderedDict = OrderedDict()
        self._timer = QTimer(self)
        self._timer.setInterval(TICK_MS)
        self._timer.timeout.connect(self._tick)
        self._debounce = QTimer(self)
        self._debounce.setSingleShot(True)
        self._debounce.setInterval(debounce_ms)
        self._debounce.timeout.connect(self._start_job)
        self._pool = QThreadPool(self)
        self._pool.setMaxThreadCount(1)
        self._signals = _Signals(self)
        self._signals.done.connect(self._on_done)
        st = self.strip
        st.play_button.clicked.connect(self.toggle_play)
        st.mode_combo.activated.connect(self._on_mode_picked)
        st.weights_edit.editingFinished.connect(self._on_weights)
        st.repeat_combo.activated.connect(self._on_repeat_picked)
        st.scrubber.valueChanged.connect(self._on_scrub)
        st.scrubber.sliderPressed.connect(self.pause)
        st.canvas_check.toggled.connect(self._on_canvas_toggled)
        st.fit_button.clicked.connect(self.fit_path)
        st.adopt_button.clicked.connect(self.adopt)
        st.export_button.clicked.connect(self.export_dialog)
        doc.changed.connect(self._on_doc_changed)
        self._enable(False)

    # ------------------------------------------------------------------ verdict and edits
    def on_result(self, rev: int, c) -> None:
        """A verdict for revision ``rev``: show the strip for an unstable scheme, hide it otherwise."""
        if rev != self.doc.revision:
            return
        if c is None or getattr(c, "verdict", None) != "unstable":
            self._set_active(False)
            return
        m = int(getattr(c, "mechanisms", 1) or 1)
        if m != self.mechanisms:
            self.mechanisms = m
            if self.spec.weights is not None and len(self.spec.weights) != m or self.spec.mode > m:
                self.spec = ModeSpec()
            self._fill_modes(None)
        self._set_active(True)
        self.request()

    def on_failed(self, rev: int, _message: str) -> None:
        self._set_active(False)

    def _set_active(self, on: bool) -> None:
        self.active = on
        if self.dock is not None:
            self.dock.setVisible(on)
        if not on:
            self._stop()
            self._debounce.stop()
            self.data = None
            self.overlay.set_data(None, None)
            self._enable(False)

    def _on_doc_changed(self, change) -> None:
        replaced = change is None  # opened, new or restored: start over, playing if there is a drawing
        if replaced:
            self._repeat_chosen = False
            self._fit_pending = True
        if self.data is not None and self.data.revision == self.doc.revision:
            # a synchronous verdict already brought this revision's path (its signal ran first)
            if replaced:
                self.want_play = bool(self.doc.scheme.members)
                if self.spec != ModeSpec():
                    self.spec = ModeSpec()
                    self.request()
                    return
                self.strip.repeat_combo.setCurrentIndex(REPEATS.index("loop" if self.data.cycle else "back and forth"))
                if self.want_play and not self.playing:
                    self.play()
            return
        if replaced:
            self.want_play = bool(self.doc.scheme.members)
            self.spec = ModeSpec()
            self.mechanisms = 0
        else:
            self.want_play = self.want_play or self.playing
        self._stop()
        self._debounce.stop()
        if self.data is not None:
            self.data = None
            self.overlay.set_data(None, None)
        self._enable(False)
        if self.active:
            self.strip.status_label.setText("Scheme changed: the motion restarts on the new scheme\u2026")

    # ------------------------------------------------------------------ tracing
    def current_key(self):
        return (self.doc.revision, self.spec)

    def request(self) -> None:
        """Show the path of the current scheme and mode: from the cache, or trace it."""
        key = self.current_key()
        if key in self.cache:
            self.cache.move_to_end(key)
            self._show(self.cache[key])
            return
        self.error = None
        self.strip.status_label.setText("Tracing the motion\u2026")
        if self.sync:
            self._run_inline(key)
        else:
            self._debounce.start()

    def _run_inline(self, key) -> None:
        self.jobs_started += 1
        data, err = trace_safely(self.doc.scheme, key, self.steps)
        self._on_done(key, data, err)

    def _start_job(self) -> None:
        if self._busy or not self.active:
            return
        key = self.current_key()
        if key in self.cache:
            self._show(self.cache[key])
            return
        self._busy = True
        self.jobs_started += 1
        self._pool.start(_Job(key, self.doc.scheme, self.steps, self._signals))

    def _on_done(self, key, data, err) -> None:
        self._busy = False
        if data is not None:
            self.cache[key] = data
            while len(self.cache) > CACHE_SIZE:
                self.cache.popitem(last=False)
        if not self.active:
            return
        if key != self.current_key():
            if not self.sync:
                self._debounce.start()  # the newest scheme goes next
            return
        if data is None:
            self._show_error(err)
        else:
            self._show(data)

    def wait_idle(self, timeout_ms: int = 10000) -> bool:
        return self._pool.waitForDone(timeout_ms)

    # ------------------------------------------------------------------ showing a path
    def _show(self, data: MotionData) -> None:
        st = self.strip
        self.data = data
        self.error = None
        if len(data.modes) != self.mechanisms or st.mode_combo.count() == 0:
            self.mechanisms = len(data.modes)
        self._fill_modes(data)
        self._setting = True
        st.scrubber.setRange(0, data.frames - 1)
        st.scrubber.setValue(data.start)
        self._setting = False
        st.scrubber.set_marks(data.marks)
        kinds = []
        for m in data.marks:
            if m.kind not in kinds:
                kinds.append(m.kind)
        st.legend_label.setText("   ".join(MARK_SYMBOLS[k] for k in kinds if k in MARK_SYMBOLS))
        if not self._repeat_chosen:
            st.repeat_combo.setCurrentIndex(REPEATS.index("loop" if data.cycle else "back and forth"))
        self._direction = 1
        self.overlay.set_data(self.doc.scheme, data)
        self.overlay.set_shown(st.canvas_check.isChecked())
        self.frame = data.start
        self._enable(True)
        st.banner_label.setVisible(data.linearised)
        st.banner_label.setText("Infinitesimal mechanism, shown LINEARISED: the amplitude has no physical "
                                "meaning (the scheme locks at second order); this is not a finite path."
                                if data.linearised else "")
        st.adopt_button.setEnabled(False)
        st.adopt_button.setToolTip("Move the nodes to the position shown (one step you can undo)" if not data.linearised
                                   else "Not for a linearised mechanism: its positions are not on the real motion")
        st.status_label.setText(self._status_words(data))
        self._update_frame_label()
        if self._fit_pending:
            self._fit_pending = False
            QTimer.singleShot(0, self.fit_new)  # once the strip has taken its room
        self.path_ready.emit(data)
        if self.want_play and data.frames > 1:
            self.play()

    def _status_words(self, d: MotionData) -> str:
        parts = [mode_words(d) + f", {d.frames} positions"]
        if not d.linearised:
            parts.append(f"forward: {d.ended.get('forward')}, backward: {d.ended.get('backward')}")
            if d.residual is not None:
                parts.append(f"residual {d.residual:.1e} of the size")
        parts.append(f"{len(d.bodies)} moving bod{'y' if len(d.bodies) == 1 else 'ies'}")
        if d.note and not d.linearised:  # the banner says what a linearised note would
            parts.append(d.note)
        return " \u00b7 ".join(parts)

    def _show_error(self, err: str) -> None:
        self.error = err
        self.data = None
        self.overlay.set_data(None, None)
        self._enable(False)
        self.strip.mode_combo.setEnabled(True)
        self.strip.status_label.setText(f"<span style='color:{dr.PALETTE.mechanism}'>Cannot animate: {err}</span>")

    def _enable(self, on: bool) -> None:
        st = self.strip
        for w in (st.play_button, st.repeat_combo, st.speed_combo, st.scrubber, st.fit_button, st.export_button):
            w.setEnabled(on)
        st.adopt_button.setEnabled(on and self.data is not None and not self.data.linearised
                                   and self.frame != self.data.start)
        if not on:
            self.strip.banner_label.setVisible(False)
            self.strip.frame_label.setText("")
            self.strip.scrubber.set_marks([])

    def _fill_modes(self, data: MotionData | None) -> None:
        cb = self.strip.mode_combo
        kinds = dict(data.modes) if data is not None else {}
        n = self.mechanisms
        cb.blockSignals(True)
        cb.clear()
        for k in range(1, n + 1):
            cb.addItem(f"Mode {k}" + (f" ({kinds[k]})" if k in kinds else ""), k)
        if n > 1:
            cb.addItem("Combination of modes\u2026", 0)
        cb.setCurrentIndex(cb.count() - 1 if self.spec.weights is not None else max(self.spec.mode - 1, 0))
        cb.blockSignals(False)
        self.strip.weights_edit.setVisible(self.spec.weights is not None)

    # ------------------------------------------------------------------ the user's choices
    def set_spec(self, spec: ModeSpec) -> None:
        """Trace another mode (or combination) of the current scheme; keeps playing if it was."""
        self.want_play = self.want_play or self.playing
        self._stop()
        self.spec = spec
        self._fill_modes(self.data)
        self.request()

    def _on_mode_picked(self, index: int) -> None:
        k = self.strip.mode_combo.itemData(index)
        if k == 0:
            ed = self.strip.weights_edit
            ed.setVisible(True)
            if not ed.text().strip():
                ed.setText(", ".join(["1"] * self.mechanisms))
            self._on_weights()
            ed.setFocus()
        else:
            self.set_spec(ModeSpec(mode=int(k)))

    def _on_weights(self) -> None:
        text = self.strip.weights_edit.text()
        try:
            w = tuple(float(t) for t in text.replace(";", ",").split(",") if t.strip())
        except ValueError:
            self._show_error(f'mode weights: "{text}" is not a list of numbers separated by commas')
            return
        if len(w) != self.mechanisms:
            self._show_error(f"mode weights: {self.mechanisms} weight(s) expected, one per mode; got {len(w)}")
            return
        if not any(w):
            self._show_error("mode weights: all zero, nothing moves")
            return
        if self.spec.weights != w:
            self.set_spec(ModeSpec(weights=w))

    def _on_repeat_picked(self, _index: int) -> None:
        self._repeat_chosen = True

    def repeat(self) -> str:
        return REPEATS[self.strip.repeat_combo.currentIndex()]

    def speed(self) -> float:
        return SPEEDS[self.strip.speed_combo.currentIndex()]

    def _on_canvas_toggled(self, on: bool) -> None:
        self.overlay.set_shown(on)

    # ------------------------------------------------------------------ playback
    def toggle_play(self) -> None:
        if self.playing:
            self.pause()
        else:
            self.play()

    def play(self) -> None:
        if self.data is None or self.data.frames < 2:
            return
        self.want_play = True
        self.playing = True
        self._acc = 0.0
        self._timer.start()
        self.strip.set_playing(True)

    def pause(self) -> None:
        self.want_play = False
        self._stop()

    def _stop(self) -> None:
        self.playing = False
        self._timer.stop()
        self.strip.set_playing(False)

    def next_frame(self, k: int) -> int:
        """The frame after ``k`` in the current repeat mode (updates the direction of travel)."""
        d = self.data
        last = d.frames - 1
        if last < 1:
            return k
        if self.repeat() == "loop":
            if d.cycle:
                return (k + 1) % last  # the closing frame is the drawn one again
            return 0 if k >= last else k + 1
        nk = k + self._direction
        if nk > last or nk < 0:
            self._direction = -self._direction
            nk = k + self._direction
        return nk

    def _tick(self) -> None:
        if self.data is None:
            self._stop()
            return
        self._acc += self.speed()
        n = int(self._acc)
        self._acc -= n
        k = self.frame
        for _ in range(n):
            k = self.next_frame(k)
        if n:
            self.set_frame(k)

    def _on_scrub(self, value: int) -> None:
        if self._setting:
            return
        self.pause()
        self.set_frame(value)

    def set_frame(self, k: int) -> None:
        """Move the mechanism to frame ``k`` of the path (overlay only, never the document)."""
        d = self.data
        if d is None:
            return
        k = int(min(max(k, 0), d.frames - 1))
        self.frame = k
        self.overlay.set_frame(k)
        sc = self.strip.scrubber
        if sc.value() != k:
            self._setting = True
            sc.setValue(k)
            self._setting = False
        self._update_frame_label()
        self.strip.adopt_button.setEnabled(not d.linearised and k != d.start)
        self.frame_changed.emit(k)

    def _update_frame_label(self) -> None:
        d = self.data
        if d is None:
            return
        self.strip.frame_label.setText(f"{self.frame + 1}/{d.frames}: {frame_label(d, self.frame)}")

    # ------------------------------------------------------------------ commands
    def adopt(self) -> bool:
        """Move the nodes to the position shown, as one undoable edit."""
        d = self.data
        if d is None or d.linearised or self.frame == d.start:
            return False
        s = self.doc.scheme
        nodes = dict(s.nodes)
        for i, nid in enumerate(d.node_ids):
            if d.moving_nodes[i] and nid in nodes:
                x, y = d.P[self.frame, i]
                nodes[nid] = replace(nodes[nid], x=float(x), y=float(y))
        self.pause()
        done = self.doc.commit("Adopt mechanism position", replace(s, nodes=nodes))
        if done:
            self.message("Nodes moved to the position shown (Undo puts them back)")
        return done

    def path_rect(self) -> QRectF:
        x0, y0, x1, y1 = dr.scheme_bounds(self.doc.scheme)
        if self.data is not None:
            a0, b0, a1, b1 = self.data.bounds()
            x0, y0, x1, y1 = min(x0, a0), min(y0, b0), max(x1, a1), max(y1, b1)
        return QRectF(QPointF(x0, -y1), QPointF(x1, -y0))

    def fit_path(self) -> None:
        r = self.path_rect()
        vp = self.view.viewport().rect()
        m = 70.0
        s = min((vp.width() - 2 * m) / max(r.width(), 1e-6), (vp.height() - 2 * m) / max(r.height(), 1e-6))
        self.view.set_scale(s)
        self.view.centerOn(r.center())

    def fit_new(self) -> None:
        """Fit a newly opened scheme: to its whole path when that stays near the drawing (a crank
        turning), else to the drawing (a long slide would shrink it to nothing)."""
        if self.data is None:
            return
        x0, y0, x1, y1 = dr.scheme_bounds(self.doc.scheme)
        r = self.path_rect()
        size = max(x1 - x0, y1 - y0, 1e-9)
        if max(r.width(), r.height()) <= FIT_PATH_RATIO * size:
            self.fit_path()
        else:
            self.view.fit()

    def export_to(self, folder, *, prefix: str = "motion", width: int = 1280, height: int = 800,
                  progress=None) -> list[Path]:
        """Write the path on show as a numbered PNG series (see :mod:`.motion_export`)."""
        if self.data is None:
            raise ValueError("no motion on show")
        src = self.doc.path.name if self.doc.path else ""
        return export_frames(folder, self.doc.scheme, self.data, prefix=prefix, width=width, height=height,
                             source=src, progress=progress)

    def export_dialog(self) -> None:
        if self.data is None:
            return
        win = self.strip.window()
        start = str(self.doc.path.parent) if self.doc.path else ""
        folder = QFileDialog.getExistingDirectory(win, "Export the motion as numbered PNG frames", start)
        if not folder:
            return
        old = existing_frames(Path(folder), "motion")
        if old and QMessageBox.question(
                win, "Replace frames",
                f"{len(old)} frame(s) of an earlier motion export are in this folder. Replace them?",
                QMessageBox.Yes | QMessageBox.No, QMessageBox.No) != QMessageBox.Yes:
            return
        self.pause()
        dlg = QProgressDialog("Writing frames\u2026", "Stop", 0, self.data.frames, win)
        dlg.setWindowModality(Qt.WindowModal)
        dlg.setMinimumDuration(300)

        def progress(done, total):
            dlg.setValue(done)
            return not dlg.wasCanceled()

        try:
            paths = self.export_to(folder, progress=progress)
        except OSError as exc:
            dlg.close()
            QMessageBox.critical(win, "Cannot export", f"{folder}: {exc}")
            return
        dlg.close()
        QMessageBox.information(win, "Motion exported",
                                f"{len(paths)} frames written to {folder} ({paths[0].name} \u2026 {paths[-1].name}) "
                                f"with motion_record.txt.\n\n{GIF_NOTE}")

    # ------------------------------------------------------------------ window close
    def eventFilter(self, obj, ev):  # noqa: N802
        if ev.type() == QEvent.Close:
            self._stop()
            self.wait_idle(10000)
        return False


def install_motion_strip(window, *, sync: bool = False) -> MotionController:
    """Add the motion strip to the main window as a bottom dock and wire it to the verdict."""
    ctl = MotionController(window.doc, window.scene, window.view, window, sync=sync,
                           message=getattr(window, "_message", None))
    dock = QDockWidget("Motion", window)
    dock.setObjectName("motion_dock")
    dock.setWidget(ctl.strip)
    dock.setFeatures(QDockWidget.DockWidgetMovable | QDockWidget.DockWidgetFloatable)
    window.setCorner(Qt.BottomRightCorner, Qt.RightDockWidgetArea)
    window.addDockWidget(Qt.BottomDockWidgetArea, dock)
    dock.hide()
    ctl.dock = dock
    window.runner.result_ready.connect(ctl.on_result)
    window.runner.failed.connect(ctl.on_failed)
    window.installEventFilter(ctl)
    if window.runner.is_current():
        ctl.on_result(window.doc.revision, window.runner.result)
    return ctl
