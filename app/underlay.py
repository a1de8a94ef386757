"""The underlay in the app: a photographed sketch behind the canvas, to trace over.

The image and its calibration live in the scheme's ``"underlay"`` block
(:mod:`kinestat.core.underlay`), so they are saved, loaded and undone with the scheme:
every change here (load, scale, straighten, move, opacity, lock, hide, remove) is one
undoable step on the document.

* :class:`UnderlayItem` shows the image in the scene under everything else; its
  transform is the block's pixel -> scheme similarity with the scene's y flip.
* :class:`PickTool` collects two clicks on the canvas: for the scale, then the real
  distance between them is typed on the canvas (Enter applies it); for straightening, the
  picked line is made horizontal at once.  :class:`MoveTool` drags the image.
* :class:`UnderlayController` keeps the item in step with the document, resolves the
  image path (relative to the scheme file's folder; an unsaved scheme uses the folder of
  the first image loaded), says clearly when the image file is missing (status line and a
  non-modal notice; everything else keeps working) and rewrites the relative path when the
  scheme is saved into another folder.

Calibration maths (scale ``d / |q - p|``, rotation that levels the picked line) is
:mod:`kinestat.core.underlay`'s; picking maps a canvas point to an image pixel with its
inverse transform.
"""
from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path
from typing import Callable

from PySide6.QtCore import QObject, QPointF, QRectF, Qt, QTimer, Signal
from PySide6.QtGui import QImageReader, QPixmap, QTransform
from PySide6.QtWidgets import QGraphicsPixmapItem, QMessageBox

from kinestat.core.io import SchemeError
from kinestat.core.underlay import (BLOCK_KEY, CalibrationError, Underlay, missing_image_message,
                                    relative_image_path, resolve_image, underlay_of, with_underlay)

from . import drawing as dr
from .document import new_gesture
from .tools import Tool, _fmt, paint_label, parse_entry

#: below every scheme item (members are at z 10, the mechanism shape at 5)
Z_UNDERLAY = -100
#: image formats the underlay takes (QImageReader format names)
FORMATS = {b"png": "PNG", b"jpeg": "JPEG", b"jpg": "JPEG"}
IMAGE_FILTER = "Sketch image (*.png *.jpg *.jpeg);;All files (*)"
#: a new image first fills this share of the visible canvas
FIRST_FILL = 0.8


class UnderlayError(ValueError):
    """An image that cannot be used as an underlay (the message names the file)."""


def read_image(path: Path):
    """The image at ``path`` as a QImage (orientation from the photo's EXIF tag applied)."""
    reader = QImageReader(str(path))
    reader.setAutoTransform(True)
    fmt = bytes(reader.format()).lower()
    if not Path(path).is_file():
        raise UnderlayError(f"{path}: no such file")
    if fmt not in FORMATS:
        raise UnderlayError(f"{Path(path).name}: not a PNG or JPEG image"
                            + (f" (it reads as {fmt.decode()})" if fmt else ""))
    img = reader.read()
    if img.isNull():
        raise UnderlayError(f"{Path(path).name}: the image cannot be read ({reader.errorString()})")
    return img


def scene_transform(u: Underlay) -> QTransform:
    """Image pixel -> scene point: the block's similarity, then the scene's y flip."""
    (a, b, tx), (c, d, ty) = u.matrix()
    # QTransform maps x' = m11 u + m21 v + dx, y' = m12 u + m22 v + dy; scene y = -scheme y
    return QTransform(a, -c, b, -d, tx, -ty)


class UnderlayItem(QGraphicsPixmapItem):
    """The image, drawn under the scheme; it takes no mouse events."""

    def __init__(self, pixmap: QPixmap):
        super().__init__(pixmap)
        self.setZValue(Z_UNDERLAY)
        self.setTransformationMode(Qt.SmoothTransformation)
        self.setAcceptedMouseButtons(Qt.NoButton)
        self.setShapeMode(QGraphicsPixmapItem.BoundingRectShape)

    def show_underlay(self, u: Underlay) -> None:
        self.setTransform(scene_transform(u))
        self.setOpacity(u.opacity)
        self.setVisible(u.visible)


# ====================================================================== tools
class PickTool(Tool):
    """Two clicks on the canvas; ``purpose`` is "scale" (then a typed distance) or "straighten"."""

    name = "underlay_pick"
    cursor = Qt.CrossCursor

    def __init__(self, ctx, controller: "UnderlayController", purpose: str):
        super().__init__(ctx)
        self.ctl = controller
        self.purpose = purpose
        self.points: list[tuple[float, float]] = []
        self.cursor_at: tuple[float, float] | None = None

    def hint(self) -> str:
        if self.purpose == "scale":
            if len(self.points) < 2:
                return (f"Set the underlay's scale: click point {len(self.points) + 1} of 2 on the image "
                        "(two points whose real distance you know); Esc cancels")
            return "Type the real distance between the two points and press Enter (Esc cancels)"
        return (f"Straighten the underlay: click point {len(self.points) + 1} of 2 on a line that should "
                "be horizontal; Esc cancels")

    def cancel(self) -> None:
        self.points = []
        self.cursor_at = None

    def press(self, ev, x, y) -> None:
        if ev.button() != Qt.LeftButton or len(self.points) >= 2:
            return
        self.points.append((x, y))
        if len(self.points) == 2:
            if math.dist(*self.points) == 0:
                self.points.pop()
                self.ctx.message("The second point is the first one again: pick a point elsewhere")
                return
            if self.purpose == "straighten":
                self.ctl.finish_straighten(*self.points)
                return
        self.ctx.message(self.hint())

    def move(self, ev, x, y) -> None:
        self.cursor_at = (x, y)

    def key(self, ev) -> bool:
        if ev.key() == Qt.Key_Escape:
            self.ctl.end_pick("Underlay calibration cancelled")
            return True
        return False

    def accepts_entry(self) -> bool:
        return self.purpose == "scale" and len(self.points) == 2

    def entry_label(self) -> str:
        return f"real distance ({self.doc.scheme.units}):"

    def typed(self, text: str) -> bool:
        try:
            d = float(text.replace(",", "."))
        except ValueError:
            self.ctx.message(f'Distance "{text}": not a number; type it again')
            return False
        return self.ctl.finish_scale(self.points[0], self.points[1], d)

    def paint_overlay(self, painter, view) -> None:
        pal = dr.PALETTE
        pts = [view.map_model(*p) for p in self.points]
        if len(self.points) == 1 and self.cursor_at is not None:
            pts.append(view.map_model(*self.cursor_at))
        painter.setBrush(Qt.NoBrush)
        if len(pts) == 2:
            painter.setPen(dr.pen(pal.mechanism, 1.6, Qt.DashLine))
            painter.drawLine(pts[0], pts[1])
        painter.setPen(dr.pen(pal.mechanism, 1.8))
        for p in pts[:len(self.points)]:
            painter.drawEllipse(p, 6.0, 6.0)
            painter.drawLine(QPointF(p.x() - 10, p.y()), QPointF(p.x() + 10, p.y()))
            painter.drawLine(QPointF(p.x(), p.y() - 10), QPointF(p.x(), p.y() + 10))
        if len(pts) == 2:
            a = self.points[0]
            b = self.points[1] if len(self.points) == 2 else self.cursor_at
            now = math.dist(a, b)
            units = self.doc.scheme.units
            if self.purpose == "scale":
                text = f"now {_fmt(now)} {units}" + ("  \u2014 type the real distance, Enter" if len(self.points) == 2 else "")
            else:
                text = f"{math.degrees(math.atan2(b[1] - a[1], b[0] - a[0])):.2f}\u00b0 from horizontal"
            paint_label(painter, pts[1], text, pal.mechanism)


class MoveTool(Tool):
    """Drag the underlay image (one drag is one undo step), or click a point of it and type
    where that point belongs ("x,y", Enter)."""

    name = "underlay_move"
    cursor = Qt.SizeAllCursor

    def __init__(self, ctx, controller: "UnderlayController"):
        super().__init__(ctx)
        self.ctl = controller
        self._drag: tuple[int, tuple[float, float], Underlay] | None = None
        self._moved = False
        #: image pixel clicked last (the point a typed "x,y" places)
        self.anchor: tuple[float, float] | None = None

    def hint(self) -> str:
        return ("Drag the underlay image to move it, or click a point of it and type where it belongs "
                "(x,y) and Enter; Esc ends")

    def cancel(self) -> None:
        self._drag = None
        self.anchor = None

    def press(self, ev, x, y) -> None:
        u = self.ctl.underlay()
        if ev.button() != Qt.LeftButton or u is None:
            return
        if u.locked:
            self.ctx.message("The underlay is locked: unlock it to move it")
            return
        self._drag = (new_gesture(), (x, y), u)
        self._moved = False

    def move(self, ev, x, y) -> None:
        if self._drag is None or not ev.buttons() & Qt.LeftButton:
            return
        g, (x0, y0), u0 = self._drag
        if not self._moved and math.hypot(x - x0, y - y0) < 3 * self.view.units_per_px():
            return
        self._moved = True
        moved = replace(u0, origin=(u0.origin[0] + x - x0, u0.origin[1] + y - y0))
        self.ctl.commit("Move underlay", moved, gesture=g)

    def release(self, ev, x, y) -> None:
        if self._drag is not None and not self._moved:
            self.anchor = self._drag[2].to_image(*self._drag[1])
            self.ctx.message("Type where this point of the image belongs (x,y) and press Enter")
        elif self._moved:
            self.anchor = None
        self._drag = None

    def accepts_entry(self) -> bool:
        return self.anchor is not None

    def entry_label(self) -> str:
        return f"put the point at x,y ({self.doc.scheme.units}):"

    def typed(self, text: str) -> bool:
        try:
            vals = parse_entry(text)
        except ValueError:
            vals = []
        if len(vals) != 2:
            self.ctx.message(f'"{text}": type the point as x,y (for example 0,0)')
            return False
        return self.ctl.place(self.anchor, (vals[0], vals[1]))

    def key(self, ev) -> bool:
        if ev.key() == Qt.Key_Escape:
            self.ctl.end_pick("")
            return True
        return False

    def paint_overlay(self, painter, view) -> None:
        u = self.ctl.underlay()
        if self.anchor is None or u is None:
            return
        x, y = u.to_scheme(*self.anchor)
        p = view.map_model(x, y)
        painter.setBrush(Qt.NoBrush)
        painter.setPen(dr.pen(dr.PALETTE.mechanism, 1.8))
        painter.drawEllipse(p, 6.0, 6.0)
        painter.drawLine(QPointF(p.x() - 10, p.y()), QPointF(p.x() + 10, p.y()))
        painter.drawLine(QPointF(p.x(), p.y() - 10), QPointF(p.x(), p.y() + 10))
        paint_label(painter, p, f"now x = {_fmt(x)}  y = {_fmt(y)}  \u2014 type x,y, Enter", dr.PALETTE.mechanism)


# ====================================================================== controller
class UnderlayController(QObject):
    """Keeps the underlay item in step with the document and runs the underlay actions."""

    #: the underlay, its image or its calibration changed (panels refresh)
    changed = Signal()

    def __init__(self, doc, scene, view, ctx, *, message: Callable[[str], None] = lambda t: None,
                 set_tool: Callable[[str], None] | None = None, parent_widget=None):
        super().__init__(doc)
        self.doc, self.scene, self.view, self.ctx = doc, scene, view, ctx
        self.message = message
        self._set_tool = set_tool
        self.parent_widget = parent_widget
        self.item: UnderlayItem | None = None
        #: the image file the item shows, and the message when the image is missing
        self.shown_file: Path | None = None
        self.image_size: tuple[int, int] | None = None
        self.missing: str | None = None
        #: non-modal notice about a missing image (kept so it is not stacked)
        self.notice: QMessageBox | None = None
        #: folder an unsaved scheme's image path is relative to
        self._unsaved_base: Path | None = None
        self._synced: tuple | None = None
        self._tool: Tool | None = None
        self._prev_tool = "select"
        scene.underlay_item = None
        doc.changed.connect(self._on_doc_changed)
        doc.path_changed.connect(self.sync)

    # ------------------------------------------------------------------ state
    def underlay(self) -> Underlay | None:
        try:
            return underlay_of(self.doc.scheme)
        except SchemeError:
            return None

    def base_dir(self) -> Path:
        if self.doc.path is not None:
            return Path(self.doc.path).resolve().parent
        return self._unsaved_base or Path.cwd()

    def _scheme_file(self) -> Path:
        """The scheme file the image path is relative to (a stand-in while unsaved)."""
        return Path(self.doc.path) if self.doc.path is not None else self.base_dir() / "untitled.json"

    def image_file(self, u: Underlay | None = None) -> Path | None:
        u = u or self.underlay()
        return None if u is None else resolve_image(self._scheme_file(), u)

    def describe(self) -> str:
        """One line for the panel and the status bar."""
        u = self.underlay()
        if u is None:
            return "No underlay"
        if self.missing:
            return f"Image missing: {u.image}"
        size = f" ({self.image_size[0]} x {self.image_size[1]} px)" if self.image_size else ""
        return (f"{u.image}{size}: 1 px = {u.scale:.6g} {self.doc.scheme.units}, "
                f"rotated {u.rotation_deg:.3f}\u00b0")

    # ------------------------------------------------------------------ sync with the document
    def _on_doc_changed(self, change) -> None:
        if change is None:
            self._unsaved_base = None if self.doc.path is None else self._unsaved_base
        self.sync()

    def sync(self, *_args) -> None:
        raw = self.doc.scheme.extra.get(BLOCK_KEY)
        key = (raw, self.doc.path, self._unsaved_base)
        if self._synced is not None and all(a is b or a == b for a, b in zip(self._synced, key)):
            return  # every edit of the drawing passes here: keep it cheap
        self._synced = key
        u = self.underlay()
        if u is None:
            self._drop_item()
            self.missing = None
            self._close_notice()
            self.changed.emit()
            return
        path = self.image_file(u)
        if path != self.shown_file or self.item is None:
            self._drop_item()
            problem = missing_image_message(self._scheme_file(), u)
            img = None
            if problem is None:
                try:
                    img = read_image(path)
                except UnderlayError as exc:
                    problem = (f'underlay image "{u.image}" cannot be used ({exc}); the scheme is unchanged '
                               "and the underlay keeps its calibration: pick the image again")
            if problem is not None:
                was = self.missing
                self.missing = problem
                self.shown_file = None
                if was != problem:
                    self._announce_missing(problem)
                self.changed.emit()
                return
            self.missing = None
            self._close_notice()
            self.item = UnderlayItem(QPixmap.fromImage(img))
            self.image_size = (img.width(), img.height())
            self.shown_file = path
            self.scene.addItem(self.item)
            self.scene.underlay_item = self.item
        self.item.show_underlay(u)
        self.changed.emit()

    def _drop_item(self) -> None:
        if self.item is not None:
            self.scene.removeItem(self.item)
        self.item = None
        self.scene.underlay_item = None
        self.shown_file = None
        self.image_size = None

    def _announce_missing(self, text: str) -> None:
        line = text[0].upper() + text[1:]
        self.message(line)
        # and again once the action that opened the scheme has posted its own status line
        QTimer.singleShot(0, lambda: self.missing == text and self.message(line))
        if self.notice is None:
            self.notice = QMessageBox(QMessageBox.Warning, "Underlay image missing", "", QMessageBox.Ok,
                                      self.parent_widget)
            self.notice.setModal(False)
            self.notice.setWindowModality(Qt.NonModal)
        self.notice.setText(text[0].upper() + text[1:] + ".")
        self.notice.setInformativeText("Underlay > Relink image\u2026 picks the file again; "
                                       "the drawing and its verdict are not affected.")
        self.notice.show()

    def _close_notice(self) -> None:
        if self.notice is not None and self.notice.isVisible():
            self.notice.hide()

    # ------------------------------------------------------------------ edits (one undo step each)
    def commit(self, text: str, u: Underlay | None, gesture: int | None = None) -> bool:
        return self.doc.commit(text, with_underlay(self.doc.scheme, u), gesture)

    def _editable(self, what: str) -> Underlay | None:
        u = self.underlay()
        if u is None:
            self.message(f"{what}: load an underlay image first (Underlay > Load image\u2026)")
            return None
        if u.locked:
            self.message(f"{what}: the underlay is locked; unlock it first")
            return None
        if self.missing:
            self.message(f"{what}: the underlay image is missing; relink it first")
            return None
        return u

    def load_image(self, path: str | Path) -> bool:
        """A new underlay from an image file, filling most of the visible canvas."""
        path = Path(path).resolve()
        try:
            img = read_image(path)
        except UnderlayError as exc:
            self._error("Cannot load the underlay", str(exc))
            return False
        if self.doc.path is None and self._unsaved_base is None:
            self._unsaved_base = path.parent
        try:
            rel = relative_image_path(path, self._scheme_file())
        except CalibrationError as exc:
            self._error("Cannot load the underlay", str(exc))
            return False
        vp = self.view.viewport().rect()
        r = self.view.mapToScene(vp).boundingRect()
        w, h = max(img.width(), 1), max(img.height(), 1)
        k = FIRST_FILL * min(r.width() / w, r.height() / h)
        cx, cy = r.center().x(), -r.center().y()
        u = Underlay(rel, scale=k, origin=(cx - k * w / 2, cy + k * h / 2))
        self.commit(f"Load underlay {path.name}", u)
        self.message(f"Underlay {path.name} loaded ({w} x {h} px): set its scale from two points "
                     "(Underlay > Set scale) and straighten it if needed")
        return True

    def relink_image(self, path: str | Path) -> bool:
        """Point the underlay at another image file, keeping its calibration."""
        u = self.underlay()
        if u is None:
            return self.load_image(path)
        path = Path(path).resolve()
        try:
            img = read_image(path)
            rel = relative_image_path(path, self._scheme_file())
        except (UnderlayError, CalibrationError) as exc:
            self._error("Cannot relink the underlay", str(exc))
            return False
        self.commit("Relink underlay image", replace(u, image=rel))
        self.message(f"Underlay image is now {rel} ({img.width()} x {img.height()} px), calibration kept")
        return True

    def relink_for(self, scheme_file: str | Path) -> bool:
        """Before saving as ``scheme_file``: make the image path relative to its folder."""
        u = self.underlay()
        if u is None:
            return False
        try:
            rel = relative_image_path(self.image_file(u), scheme_file)
        except CalibrationError as exc:
            self.message(str(exc))
            return False
        if rel == u.image:
            return False
        return self.commit("Relink underlay image", replace(u, image=rel))

    def _calibrate(self, what: str, step: str, build, said) -> bool:
        """One calibration step: ``build(underlay)`` gives the new underlay (or raises
        CalibrationError), ``said(new)`` the status line."""
        u = self._editable(what)
        if u is None:
            return False
        try:
            new = build(u)
        except CalibrationError as exc:
            self.message(f"{what}: {exc}")
            return False
        self.commit(step, new)
        self.message(said(new))
        return True

    def apply_scale(self, p_model, q_model, distance: float) -> bool:
        """Scale from two canvas points (scheme coordinates) that are ``distance`` apart."""
        units = self.doc.scheme.units
        return self._calibrate(
            "Set the underlay's scale", "Set underlay scale",
            lambda u: u.with_scale_from_points(u.to_image(*p_model), u.to_image(*q_model), distance),
            lambda new: (f"Underlay scale set: 1 px = {new.scale:.6g} {units} "
                         f"({_fmt(distance)} {units} between the picked points)"))

    def apply_straighten(self, p_model, q_model) -> bool:
        """Rotate the image so the picked line (two canvas points) is horizontal."""
        return self._calibrate(
            "Straighten the underlay", "Straighten underlay",
            lambda u: u.with_rotation_from_line(u.to_image(*p_model), u.to_image(*q_model)),
            lambda new: f"Underlay straightened: rotated {new.rotation_deg:.3f}\u00b0")

    def place(self, pixel, at) -> bool:
        """Move the image so that image ``pixel`` lies at scheme point ``at``."""
        units = self.doc.scheme.units
        return self._calibrate(
            "Move the underlay", "Place underlay", lambda u: u.placed(pixel, at),
            lambda new: f"Underlay placed: the picked point is at x = {_fmt(at[0])}, y = {_fmt(at[1])} {units}")

    def set_opacity(self, opacity: float, gesture: int | None = None) -> bool:
        u = self.underlay()
        if u is None:
            return False
        opacity = min(max(float(opacity), 0.0), 1.0)
        return self.commit("Underlay opacity", replace(u, opacity=round(opacity, 4)), gesture)

    def set_locked(self, on: bool) -> bool:
        u = self.underlay()
        return u is not None and self.commit("Lock underlay" if on else "Unlock underlay", replace(u, locked=bool(on)))

    def set_visible(self, on: bool) -> bool:
        u = self.underlay()
        return u is not None and self.commit("Show underlay" if on else "Hide underlay", replace(u, visible=bool(on)))

    def remove(self) -> bool:
        if self.underlay() is None:
            return False
        return self.commit("Remove underlay", None)

    # ------------------------------------------------------------------ picking on the canvas
    def start_pick(self, purpose: str) -> bool:
        """Start picking two points for "scale" or "straighten", or start "move"."""
        what = {"scale": "Set the underlay's scale", "straighten": "Straighten the underlay",
                "move": "Move the underlay"}[purpose]
        if self._editable(what) is None:
            return False
        if self.item is not None and not self.item.isVisible():
            self.message(f"{what}: the underlay is hidden; show it first")
            return False
        cur = self.view.tool
        if cur is not None and cur is not self._tool:
            self._prev_tool = cur.name or "select"
            cur.deactivate()
        tool = MoveTool(self.ctx, self) if purpose == "move" else PickTool(self.ctx, self, purpose)
        self._tool = tool
        self.view.entry = ""
        self.view.tool = tool
        tool.activate()
        self.view.viewport().update()
        return True

    def finish_scale(self, p, q, distance: float) -> bool:
        """The typed distance for the two picked points: back to the previous tool, then scale
        (a distance that is not positive keeps the points for another try)."""
        if not (math.isfinite(distance) and distance > 0):
            self.message(f"Distance {distance:g}: must be a positive number; type it again")
            return False
        self.end_pick(None)
        return self.apply_scale(p, q, distance)

    def finish_straighten(self, p, q) -> bool:
        self.end_pick(None)
        return self.apply_straighten(p, q)

    def end_pick(self, text: str | None) -> None:
        """Leave the pick / move tool for the tool used before it."""
        if self._tool is not None and self.view.tool is self._tool:
            self._tool = None
            self.view.entry = ""
            if self._set_tool is not None:
                self._set_tool(self._prev_tool)
            else:
                self.view.tool = None
            if text:
                self.message(text)
        self.view.viewport().update()

    # ------------------------------------------------------------------ view
    def scene_rect(self) -> QRectF | None:
        """Scene rectangle of the shown image (for fit to view), or None."""
        if self.item is None or not self.item.isVisible():
            return None
        return self.item.sceneBoundingRect()

    def _error(self, title: str, text: str) -> None:
        self.message(text)
        if self.parent_widget is not None:
            QMessageBox.warning(self.parent_widget, title, text)
