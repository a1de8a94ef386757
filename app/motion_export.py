"""The mechanism animation as a numbered PNG series, for a review record.

Qt has no writer for animated GIF, so every position along the path becomes one PNG
(``motion_0001.png`` ... in path order) and a short text record lists what the frames
show.  Every frame carries the scheme's title, the mode, where the frame is along the path,
the concept-stage caution and, for an infinitesimal mechanism, the "linearised" label.
All frames share one scale.  Files are written atomically; nothing else in the folder is
touched except older frames of the same series.
"""
from __future__ import annotations

import re
from pathlib import Path
from typing import Callable

from PySide6.QtCore import QPointF, QRectF, Qt
from PySide6.QtGui import QColor, QFont, QImage, QPainter

from kinestat.core.io import atomic_target, atomic_write_text
from kinestat.core.model import Scheme

from . import drawing as dr
from .motion_data import MotionData, frame_label
from .motion_overlay import BODY_W, GHOST_OPACITY, Lines, _Anchors, body_colour, node_glyphs, paint_marks, trail_path

GIF_NOTE = ("Qt cannot write animated GIF: the animation is saved as a numbered PNG series "
            "(join the frames with a video or GIF tool if one file is wanted).")


def mode_words(data: MotionData) -> str:
    """"Mode 2 (internal)" or "combination 1, 0.5"; with the motion kind."""
    if data.mode is not None:
        kind = dict(data.modes).get(data.mode, "")
        what = f"Mode {data.mode}" + (f" ({kind})" if kind else "")
    else:
        what = data.spec.label().capitalize()
    kind = "infinitesimal mechanism, shown linearised" if data.linearised else f"{data.motion} motion"
    return f"{what} \u2014 {kind}"


def series_names(prefix: str, n: int) -> list[str]:
    return [f"{prefix}_{k:04d}.png" for k in range(1, n + 1)]


class FramePainter:
    """Paints frame ``k`` of a path into a rectangle, all frames on one scale."""

    def __init__(self, scheme: Scheme, data: MotionData, width: int, height: int):
        self.scheme, self.data = scheme, data
        self.width, self.height = width, height
        self.base = max(11.0, min(width, height) / 60)
        self.k = max(1.0, self.base / 12.0)
        lh = self.base * 1.5
        self.header = QRectF(0, 0, width, 2 * lh + self.base * 0.6)
        self.footer = QRectF(0, height - lh - self.base * 0.5, width, lh + self.base * 0.5)
        self.area = QRectF(0, self.header.bottom(), width, self.footer.top() - self.header.bottom())
        x0, y0, x1, y1 = dr.scheme_bounds(scheme)
        a0, b0, a1, b1 = data.bounds()
        bounds = (min(x0, a0), min(y0, b0), max(x1, a1), max(y1, b1))
        self.T = dr.ModelTransform.fit(bounds, self.area, margin=max(40.0, 0.07 * min(width, height)))
        self.glyphs = node_glyphs(scheme)
        self.anchors = _Anchors(scheme, data)
        self.trails = trail_path(data, self.T.map)
        self.still = self.lines(data.start, data.still_members)

    def lines(self, k: int, members) -> Lines:
        T = self.T
        return Lines(self.scheme, self.data, k, members, T.scale, T.ox, -T.scale, T.oy)

    def paint(self, p: QPainter, k: int) -> None:
        s, d, T, pal = self.scheme, self.data, self.T, dr.PALETTE
        p.save()
        p.setRenderHint(QPainter.Antialiasing, True)
        p.setRenderHint(QPainter.TextAntialiasing, True)
        p.fillRect(QRectF(0, 0, self.width, self.height), QColor(pal.paper))
        # the drawn shape as a ghost
        p.save()
        p.setClipRect(self.area)
        p.setOpacity(GHOST_OPACITY)
        dr.paint_scheme(p, s, None, self.area, transform=T, caption=False, caution=False, show_mode=False,
                        background=False)
        p.restore()
        p.save()
        p.setClipRect(self.area)
        p.setPen(dr.pen(pal.mechanism, self.k, Qt.DotLine, alpha=170))
        p.setBrush(Qt.NoBrush)
        p.drawPath(self.trails)
        self.still.paint(p, dr.pen(pal.ink, 1.6 * self.k))
        style = Qt.DashLine if d.linearised else Qt.SolidLine
        for j, b in enumerate(d.bodies):
            self.lines(k, b.members).paint(p, dr.pen(body_colour(j), BODY_W * self.k, style))
        paint_marks(p, s, d, k, T.map, self.area, self.glyphs, self.anchors, self.k)
        p.restore()
        self._texts(p, k)
        p.restore()

    def _texts(self, p: QPainter, k: int) -> None:
        s, d, pal, base = self.scheme, self.data, dr.PALETTE, self.base
        lh = base * 1.5
        bold = QFont()
        bold.setPixelSize(int(base))
        bold.setBold(True)
        plain = QFont(bold)
        plain.setBold(False)
        p.setPen(dr.pen(pal.ink))
        p.setFont(bold)
        p.drawText(QRectF(base, base * 0.3, self.width - 2 * base, lh), int(Qt.AlignLeft | Qt.AlignVCenter),
                   s.title or "Untitled scheme")
        p.setFont(plain)
        p.drawText(QRectF(base, base * 0.3, self.width - 2 * base, lh), int(Qt.AlignRight | Qt.AlignVCenter),
                   f"frame {k + 1} of {d.frames}")
        p.drawText(QRectF(base, base * 0.3 + lh, self.width - 2 * base, lh), int(Qt.AlignLeft | Qt.AlignVCenter),
                   f"{mode_words(d)} \u2014 {frame_label(d, k)}")
        p.setPen(dr.pen(pal.grid_major))
        p.drawLine(self.header.bottomLeft() + QPointF(base, 0), self.header.bottomRight() - QPointF(base, 0))
        small = QFont(plain)
        small.setPixelSize(max(9, int(base * 0.85)))
        small.setItalic(True)
        p.setFont(small)
        p.setPen(dr.pen(pal.muted))
        p.drawText(self.footer.adjusted(base, 0, -base, 0), int(Qt.AlignLeft | Qt.AlignVCenter), dr.CAUTION)

    def image(self, k: int) -> QImage:
        img = QImage(self.width, self.height, QImage.Format_ARGB32_Premultiplied)
        img.fill(QColor(dr.PALETTE.paper))
        p = QPainter(img)
        self.paint(p, k)
        p.end()
        return img


def existing_frames(folder: Path, prefix: str) -> list[Path]:
    """Frames of an earlier series with the same prefix in ``folder``."""
    pat = re.compile(rf"{re.escape(prefix)}_\d{{4,}}\.png$")
    return sorted(p for p in Path(folder).iterdir() if pat.match(p.name))


def record_text(scheme: Scheme, data: MotionData, names: list[str], source: str = "") -> str:
    """The text record that goes with a PNG series."""
    lines = ["kinestat mechanism animation", ""]
    lines.append(f"scheme: {scheme.title or 'untitled'}" + (f" ({source})" if source else ""))
    lines.append(f"shown: {mode_words(data)}")
    lines.append(f"frames: {len(names)} ({names[0]} to {names[-1]}), drawn position at frame {data.start + 1}")
    if data.linearised:
        lines.append("infinitesimal mechanism: shown linearised; the amplitude has no physical meaning "
                     "(the scheme locks at second order or higher); this is not a finite path")
    else:
        lines.append(f"ended: forward {data.ended.get('forward')}, backward {data.ended.get('backward')}")
        if data.residual is not None:
            lines.append(f"largest constraint residual along the path: {data.residual:.2e} of the model size")
    if data.reason:
        lines.append(f"why: {data.reason}")
    if data.note:
        lines.append(f"note: {data.note}")
    tiny = 1e-12 * max(scheme.size(), 1.0)

    def num(v: float) -> str:
        return f"{0.0 if abs(v) <= tiny else v:.4g}"

    for b in data.bodies:
        cx, cy = b.centres[data.start]
        dx, dy = b.directions[data.start]
        where = (f"instant centre ({num(cx)}, {num(cy)})" if cx == cx
                 else f"translates along ({num(dx)}, {num(dy)})")
        lines.append(f"body {b.label} ({', '.join(b.members)}): at the drawn position {where}")
    if data.still_members:
        lines.append(f"members that do not move: {len(data.still_members)}")
    lines += ["", GIF_NOTE, "", dr.CAUTION, ""]
    return "\n".join(lines)


def export_frames(folder, scheme: Scheme, data: MotionData, *, prefix: str = "motion", width: int = 1280,
                  height: int = 800, source: str = "",
                  progress: Callable[[int, int], bool] | None = None) -> list[Path]:
    """Write every frame of ``data`` as ``<prefix>_0001.png`` ... plus ``<prefix>_record.txt``.

    Older frames of the same series are removed once the new ones are written.
    ``progress(done, total)`` may return False to stop (the frames written so far stay and
    the record says nothing).  Returns the PNG paths written.  Raises ``OSError``.
    """
    folder = Path(folder)
    if not folder.is_dir():
        raise OSError(f"{folder}: no such folder")
    names = series_names(prefix, data.frames)
    old = set(existing_frames(folder, prefix))
    fp = FramePainter(scheme, data, width, height)
    written: list[Path] = []
    for k, name in enumerate(names):
        target = folder / name
        with atomic_target(target) as tmp:
            if not fp.image(k).save(str(tmp), "PNG"):
                raise OSError(f"cannot write PNG to {target}")
        written.append(target)
        if progress is not None and progress(k + 1, len(names)) is False:
            return written
    for p in old - set(written):
        p.unlink(missing_ok=True)
    atomic_write_text(folder / f"{prefix}_record.txt", record_text(scheme, data, names, source))
    return written
