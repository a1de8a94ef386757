"""Underlay: a photographed or scanned sketch shown behind the scheme, and its calibration.

An image pixel ``(u, v)`` (``u`` to the right, ``v`` down, ``(0, 0)`` the top-left corner of
the image) maps to scheme coordinates ``(x, y)`` (``y`` up) by a similarity transform::

    [x, y] = origin + scale * R(rotation_deg) @ [u, -v]

with ``R(a)`` the counter-clockwise rotation by ``a`` degrees, ``scale`` in scheme units per
pixel and ``origin`` the scheme position of the image's top-left corner.

Calibration (plane similarity, elementary geometry):

* scale from two picked pixels ``p``, ``q`` and the typed distance ``d`` between them:
  ``scale = d / |q - p|`` (a similarity multiplies every distance by ``scale``);
* rotation from a picked line that should be horizontal: the line's direction in the image
  (y up) makes the angle ``phi = atan2(-(q_v - p_v), q_u - p_u)`` with the x axis, so
  ``rotation_deg = -phi``, taken in (-90, 90] because a line has no direction.

A photograph seen at a slant is not a similarity; only scale, rotation and position are
calibrated here.

The scheme file keeps the underlay as the optional top-level block ``"underlay"`` of format
version 1 (files without it load as before)::

    "underlay": {"image": "sketches/portal.jpg", "scale": 0.0125, "origin": [-2.0, 9.5],
                 "rotation_deg": -1.8, "opacity": 0.5, "locked": false, "visible": true}

``image`` (required) is a path relative to the scheme file's folder, written with ``/``;
the other keys are optional with the defaults of :class:`Underlay`.
"""
from __future__ import annotations

import json
import math
import os
from dataclasses import dataclass, replace
from pathlib import Path, PurePosixPath, PureWindowsPath
from typing import Any

from .io import SchemeError
from .model import Scheme

BLOCK_KEY = "underlay"
_KEYS = ("image", "scale", "origin", "rotation_deg", "opacity", "locked", "visible")


class CalibrationError(ValueError):
    """Picked points or a typed distance that cannot calibrate an underlay."""


Point = tuple[float, float]


def _finite_point(p: Any, what: str) -> Point:
    try:
        u, v = float(p[0]), float(p[1])
    except (TypeError, ValueError, IndexError):
        raise CalibrationError(f"{what}: must be a point (u, v), got {p!r}") from None
    if not (math.isfinite(u) and math.isfinite(v)):
        raise CalibrationError(f"{what}: must be a finite point, got {p!r}")
    return (u, v)


def scale_from_points(p: Point, q: Point, distance: float) -> float:
    """Scheme units per pixel from two picked pixels and the typed distance between them."""
    p = _finite_point(p, "first picked point")
    q = _finite_point(q, "second picked point")
    if isinstance(distance, bool) or not isinstance(distance, (int, float)) or not math.isfinite(distance):
        raise CalibrationError(f"distance: must be a finite number, got {distance!r}")
    if distance <= 0:
        raise CalibrationError(f"distance: must be positive, got {distance:g}")
    px = math.hypot(q[0] - p[0], q[1] - p[1])
    if px == 0:
        raise CalibrationError("picked points: the two points coincide; pick two distinct points")
    return float(distance) / px


def rotation_from_line(p: Point, q: Point) -> float:
    """Rotation (degrees, in (-90, 90]) that makes the picked pixel line ``p``-``q`` horizontal."""
    p = _finite_point(p, "first picked point")
    q = _finite_point(q, "second picked point")
    du, dv = q[0] - p[0], q[1] - p[1]
    if du == 0 and dv == 0:
        raise CalibrationError("picked line: the two points coincide; pick two distinct points")
    phi = math.degrees(math.atan2(-dv, du))
    rot = -phi
    while rot <= -90.0:
        rot += 180.0
    while rot > 90.0:
        rot -= 180.0
    return rot


@dataclass(frozen=True)
class Underlay:
    """An image behind the canvas and its calibration (see the module docstring)."""

    image: str
    #: scheme units per image pixel
    scale: float = 1.0
    #: scheme position of the image's top-left corner (pixel (0, 0))
    origin: Point = (0.0, 0.0)
    #: counter-clockwise rotation of the image, degrees
    rotation_deg: float = 0.0
    #: 0 = invisible, 1 = opaque
    opacity: float = 0.5
    locked: bool = False
    visible: bool = True

    # -------------------------------------------------------------- transform
    def matrix(self) -> tuple[tuple[float, float, float], tuple[float, float, float]]:
        """Affine map pixel -> scheme as rows ``(a, b, tx), (c, d, ty)``: ``x = a u + b v + tx``."""
        t = math.radians(self.rotation_deg)
        c, s = math.cos(t), math.sin(t)
        k = self.scale
        # R @ [u, -v] = [c u + s v, s u - c v]
        return ((k * c, k * s, self.origin[0]), (k * s, -k * c, self.origin[1]))

    def to_scheme(self, u: float, v: float) -> Point:
        (a, b, tx), (c, d, ty) = self.matrix()
        return (a * u + b * v + tx, c * u + d * v + ty)

    def to_image(self, x: float, y: float) -> Point:
        t = math.radians(self.rotation_deg)
        c, s = math.cos(t), math.sin(t)
        dx, dy = (x - self.origin[0]) / self.scale, (y - self.origin[1]) / self.scale
        # inverse rotation, then flip v
        return (c * dx + s * dy, -(-s * dx + c * dy))

    # -------------------------------------------------------------- calibration
    def placed(self, pixel: Point, at: Point) -> "Underlay":
        """The same image moved so that ``pixel`` lies at scheme point ``at``."""
        pixel = _finite_point(pixel, "pixel")
        at = _finite_point(at, "scheme point")
        x, y = replace(self, origin=(0.0, 0.0)).to_scheme(*pixel)
        return replace(self, origin=(at[0] - x, at[1] - y))

    def with_scale_from_points(self, p: Point, q: Point, distance: float, keep: Point | None = None) -> "Underlay":
        """Scale from two picked pixels ``p``, ``q`` ``distance`` apart; pixel ``keep``
        (default ``p``) stays where it is on the canvas."""
        k = scale_from_points(p, q, distance)
        anchor = _finite_point(p if keep is None else keep, "kept point")
        return replace(self, scale=k).placed(anchor, self.to_scheme(*anchor))

    def with_rotation_from_line(self, p: Point, q: Point, keep: Point | None = None) -> "Underlay":
        """Straighten the image so the picked pixel line ``p``-``q`` is horizontal; pixel
        ``keep`` (default ``p``) stays where it is on the canvas."""
        rot = rotation_from_line(p, q)
        anchor = _finite_point(p if keep is None else keep, "kept point")
        return replace(self, rotation_deg=rot).placed(anchor, self.to_scheme(*anchor))

    # -------------------------------------------------------------- file block
    def to_dict(self) -> dict[str, Any]:
        return {"image": self.image, "scale": self.scale, "origin": [self.origin[0], self.origin[1]],
                "rotation_deg": self.rotation_deg, "opacity": self.opacity,
                "locked": self.locked, "visible": self.visible}

    @classmethod
    def from_dict(cls, data: Any) -> "Underlay":
        return underlay_from_dict(data)


def _is_absolute(path: str) -> bool:
    return PurePosixPath(path).is_absolute() or PureWindowsPath(path).is_absolute() or bool(PureWindowsPath(path).drive)


def _num(value: Any, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise SchemeError(f"{where}: must be a finite number, got {json.dumps(value)}")
    return float(value)


def underlay_from_dict(data: Any) -> Underlay:
    """Validate an ``"underlay"`` block and build the :class:`Underlay` (:class:`SchemeError`
    names the field)."""
    w = BLOCK_KEY
    if not isinstance(data, dict):
        raise SchemeError(f"{w}: must be an object, got {json.dumps(data)[:40]}")
    for key in data:
        if key not in _KEYS:
            raise SchemeError(f'{w}: unknown field {json.dumps(key)} (allowed: {", ".join(_KEYS)})')
    if "image" not in data:
        raise SchemeError(f'{w}: field "image" is missing (the image path, relative to the scheme file)')
    image = data["image"]
    if not isinstance(image, str) or not image.strip():
        raise SchemeError(f'{w}: field "image" must be a non-empty path, got {json.dumps(image)}')
    if "\x00" in image:
        raise SchemeError(f'{w}: field "image" must not contain a NUL character')
    if _is_absolute(image):
        raise SchemeError(f'{w}: field "image": "{image}" is absolute; give the path relative to the '
                          "scheme file's folder so the pair can be moved together")
    scale = _num(data.get("scale", 1.0), f'{w}: field "scale"')
    if scale <= 0:
        raise SchemeError(f'{w}: field "scale": must be positive (scheme units per pixel), got {scale:g}')
    origin = data.get("origin", [0.0, 0.0])
    if not isinstance(origin, list) or len(origin) != 2:
        raise SchemeError(f'{w}: field "origin" must be a list [x, y], got {json.dumps(origin)[:40]}')
    ox = _num(origin[0], f'{w}: field "origin[0]"')
    oy = _num(origin[1], f'{w}: field "origin[1]"')
    rot = _num(data.get("rotation_deg", 0.0), f'{w}: field "rotation_deg"')
    opacity = _num(data.get("opacity", 0.5), f'{w}: field "opacity"')
    if not 0.0 <= opacity <= 1.0:
        raise SchemeError(f'{w}: field "opacity": must be from 0 (invisible) to 1 (opaque), got {opacity:g}')
    flags = {}
    for key, default in (("locked", False), ("visible", True)):
        val = data.get(key, default)
        if not isinstance(val, bool):
            raise SchemeError(f'{w}: field "{key}" must be true or false, got {json.dumps(val)}')
        flags[key] = val
    return Underlay(image, scale, (ox, oy), rot, opacity, flags["locked"], flags["visible"])


def check_underlay(document: dict) -> None:
    """Hook for the scheme-file loader: validate the ``"underlay"`` block if there is one."""
    if BLOCK_KEY in document:
        underlay_from_dict(document[BLOCK_KEY])


def underlay_of(scheme: Scheme) -> Underlay | None:
    """The scheme's underlay, or None when it has none."""
    raw = scheme.extra.get(BLOCK_KEY)
    return None if raw is None else underlay_from_dict(raw)


def with_underlay(scheme: Scheme, underlay: Underlay | None) -> Scheme:
    """The scheme with its underlay block set (or removed for None)."""
    extra = {k: v for k, v in scheme.extra.items() if k != BLOCK_KEY}
    if underlay is not None:
        extra[BLOCK_KEY] = underlay.to_dict()
    return replace(scheme, extra=extra)


def relative_image_path(image_file: str | os.PathLike, scheme_file: str | os.PathLike) -> str:
    """The ``image`` field for an image file, relative to the scheme file's folder, with ``/``."""
    base = Path(scheme_file).resolve().parent
    try:
        rel = os.path.relpath(Path(image_file).resolve(), base)
    except ValueError:  # another drive on Windows
        raise CalibrationError(f"image {image_file}: is on another drive than the scheme file; "
                               "keep the image next to the scheme") from None
    return Path(rel).as_posix()


def resolve_image(scheme_file: str | os.PathLike, underlay: Underlay) -> Path:
    """Where the underlay image is, for a scheme saved as ``scheme_file``."""
    return Path(scheme_file).resolve().parent / PurePosixPath(underlay.image)


def missing_image_message(scheme_file: str | os.PathLike, underlay: Underlay) -> str | None:
    """None when the image file exists, else a message for the user."""
    path = resolve_image(scheme_file, underlay)
    if path.is_file():
        return None
    return (f'underlay image "{underlay.image}" is missing (looked for {path}); the scheme is '
            "unchanged and the underlay keeps its calibration: put the image back or pick it again")
