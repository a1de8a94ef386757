"""DXF line work in and out.

Import (:func:`read_dxf`) turns the LINE, LWPOLYLINE, POLYLINE and ARC entities of a
drawing's model space into a :class:`~kinestat.core.model.Scheme`:

* every straight or arc segment becomes a member; the kind (``beam`` / ``bar``) comes from a
  layer mapping, and a layer can be skipped;
* segment ends closer than the merge tolerance become one node (greedy snapping: a point joins
  the nearest node within the tolerance, otherwise it starts a new node, so two distinct nodes
  are always more than one tolerance apart);
* a node lying on the inside of another segment splits that segment (a T-junction);
* arcs become curved members whose ``rise`` (signed mid-ordinate, positive to the left walking
  start -> end) follows from the bulge relation ``rise = -(chord / 2) tan(sweep / 4)`` with the
  sweep counter-clockwise positive (DXF reference: bulge = tan(included angle / 4); the
  sagitta of a circular segment is ``R - sqrt(R^2 - (c/2)^2)``); arcs of more than a half
  circle are split in equal parts of at most a half circle;
* units come from the ``$INSUNITS`` header, or are given;
* support and hinge marks written by :func:`scheme_to_dxf` (block references named
  ``KINESTAT_...``) are read back as supports and hinges, and POINTs on layer
  ``KINESTAT_NODE`` as nodes that no member reaches.

Whatever cannot be used is skipped and listed with its reason in the
:class:`ImportReport`; data that is broken (an unreadable file, a coordinate that is not a
number...) raises :class:`DxfError` naming the entity handle, layer and field, and nothing is
returned (all or nothing).  The scheme is finally validated by the scheme-file loader, so an
imported scheme is always a valid version-1 scheme.

Export (:func:`scheme_to_dxf`, :func:`write_dxf`) writes one layer per member kind (LINE for
straight members, ARC for curved ones), support and hinge marks as block references on
their own layers, id labels, and the concept-stage caution as a text note.  The format
details are in ``docs/dxf.md``.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from io import StringIO
from pathlib import Path
from typing import Any, Mapping

import numpy as np
import shapely
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from .io import SchemeError, atomic_write_text, scheme_from_dict
from .model import FIX_WORDS, Scheme

import ezdxf
from ezdxf.enums import TextEntityAlignment
from ezdxf.math import Vec3

# ---------------------------------------------------------------------------- names
LAYER_BEAM = "KINESTAT_BEAM"
LAYER_BAR = "KINESTAT_BAR"
LAYER_SUPPORT = "KINESTAT_SUPPORT"
LAYER_HINGE = "KINESTAT_HINGE"
LAYER_LABEL = "KINESTAT_LABEL"
LAYER_NOTE = "KINESTAT_NOTE"
#: POINT entities marking nodes that no member reaches
LAYER_NODE = "KINESTAT_NODE"
#: member kind -> export layer
KIND_LAYERS = {"beam": LAYER_BEAM, "bar": LAYER_BAR}
#: what an import does with line work on the layers an export writes (a user mapping wins)
BUILTIN_LAYER_KINDS = {
    LAYER_BEAM.casefold(): "beam",
    LAYER_BAR.casefold(): "bar",
    LAYER_SUPPORT.casefold(): "skip",
    LAYER_HINGE.casefold(): "skip",
    LAYER_LABEL.casefold(): "skip",
    LAYER_NOTE.casefold(): "skip",
    LAYER_NODE.casefold(): "skip",
}
#: the choices of a layer mapping
LAYER_CHOICES = ("beam", "bar", "skip")

BLOCK_PREFIX = "KINESTAT_"
BLOCK_HINGE = "KINESTAT_HINGE"
_NAMED_SUPPORT_BLOCKS = {f"KINESTAT_{k.upper()}": k for k in ("pin", "roller", "fixed", "guided")}

CAUTION = ("Concept-stage check only, not structural design: "
           "local codes and a licensed engineer govern.")

#: $INSUNITS code -> unit name (DXF reference, header variable $INSUNITS)
INSUNITS = {1: "in", 2: "ft", 4: "mm", 5: "cm", 6: "m", 7: "km", 10: "yd", 14: "dm"}
UNIT_CODES = {v: k for k, v in INSUNITS.items()}
_METRIC = {"mm", "cm", "dm", "m", "km"}

#: default merge tolerance as a fraction of the median segment length
DEFAULT_TOL_FRACTION = 1e-3
#: a group of connected line work whose gap to the main group exceeds this many times the
#: main group's size is skipped as far away
DEFAULT_FAR_FACTOR = 10.0

_HALF_TURN = math.pi * (1 + 1e-9)
#: coordinates beyond this (drawing units) are not usable line work (float spacing there is ~0.1)
COORD_LIMIT = 1e15


class DxfError(SchemeError):
    """A DXF file that cannot be imported; the message names the entity, layer and field."""


# ---------------------------------------------------------------------------- report
def _count(n: int, word: str) -> str:
    return f"{n} {word}" + ("" if n == 1 else "s")


@dataclass(frozen=True)
class SkippedItem:
    handle: str
    dxftype: str
    layer: str
    reason: str
    #: segment number inside a polyline or arc piece (1-based), None for the whole entity
    part: int | None = None

    def describe(self) -> str:
        where = f"#{self.handle} {self.dxftype}"
        if self.part is not None:
            where += f" segment {self.part}"
        return f'{where} on layer "{self.layer}": {self.reason}'


@dataclass(frozen=True)
class ImportedItem:
    handle: str
    dxftype: str
    layer: str
    #: member ids made from the entity (empty for a support or hinge mark)
    members: tuple[str, ...] = ()
    #: node id of a support or hinge mark
    node: str | None = None


@dataclass
class ImportReport:
    """What an import read, what it skipped and why, and the settings it used."""

    source: str
    units: str = "m"
    #: "header", "given" or "assumed"
    units_from: str = "header"
    tolerance: float = 0.0
    #: "given" or "default"
    tolerance_from: str = "default"
    imported: list[ImportedItem] = field(default_factory=list)
    skipped: list[SkippedItem] = field(default_factory=list)
    #: layer name (as drawn) -> kind used, and where the choice came from
    layer_kinds: dict[str, str] = field(default_factory=dict)
    layer_kind_from: dict[str, str] = field(default_factory=dict)
    #: names in the layer mapping that no entity uses
    unused_mapping: list[str] = field(default_factory=list)
    #: layers of the model-space entities, in order of first use
    drawing_layers: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    #: segment ends moved onto a node within the tolerance, and the largest such move
    snapped_points: int = 0
    largest_snap: float = 0.0
    #: segments split at a T-junction (counted once per split point)
    splits: int = 0
    n_members: int = 0
    n_nodes: int = 0
    n_supports: int = 0
    n_hinges: int = 0

    def lines(self, limit: int | None = 20) -> list[str]:
        """The report as text lines (at most ``limit`` skipped items listed one by one)."""
        u = self.units
        src = {"header": "from the drawing header", "given": "as given",
               "assumed": "assumed: the drawing has no units"}[self.units_from]
        out = [f"Imported {_count(self.n_members, 'member')}, {_count(self.n_nodes, 'node')}, "
               f"{_count(self.n_supports, 'support')}, {_count(self.n_hinges, 'hinge')} from {self.source}",
               f"  units: {u} ({src})",
               f"  merge tolerance: {self.tolerance:.6g} {u} ({self.tolerance_from})"]
        by_layer: dict[str, int] = {}
        for it in self.imported:
            by_layer[it.layer] = by_layer.get(it.layer, 0) + len(it.members)
        for layer, kind in self.layer_kinds.items():
            how = self.layer_kind_from.get(layer, "default")
            n = by_layer.get(layer, 0)
            what = "skipped" if kind == "skip" else f"{_count(n, 'member')} as {kind}"
            out.append(f'  layer "{layer}": {what} ({how})')
        if self.snapped_points:
            out.append(f"  {_count(self.snapped_points, 'segment end')} snapped onto a node "
                       f"(largest move {self.largest_snap:.3g} {u})")
        if self.splits:
            out.append(f"  {_count(self.splits, 'T-junction split')}")
        out.extend(f"  note: {n}" for n in self.notes)
        if self.skipped:
            out.append(f"Skipped {len(self.skipped)} items:")
            groups: dict[tuple[str, str, str], list[SkippedItem]] = {}
            for s in self.skipped:
                groups.setdefault((s.dxftype, s.layer, s.reason), []).append(s)
            rows = []
            for (t, layer, reason), items in groups.items():
                if len(items) == 1:
                    rows.append(f"  {items[0].describe()}")
                else:
                    hs = ", ".join(f"#{i.handle}" for i in items[:4]) + (", ..." if len(items) > 4 else "")
                    rows.append(f'  {len(items)} x {t} on layer "{layer}" ({hs}): {reason}')
            shown = rows if limit is None else rows[:limit]
            out.extend(shown)
            if len(shown) < len(rows):
                out.append(f"  ... and {len(rows) - len(shown)} more lines")
        else:
            out.append("Skipped nothing.")
        return out

    def to_dict(self) -> dict[str, Any]:
        return {
            "source": self.source, "units": self.units, "units_from": self.units_from,
            "tolerance": self.tolerance, "tolerance_from": self.tolerance_from,
            "members": self.n_members, "nodes": self.n_nodes, "supports": self.n_supports,
            "hinges": self.n_hinges, "snapped_points": self.snapped_points,
            "largest_snap": self.largest_snap, "splits": self.splits,
            "layers": dict(self.layer_kinds), "notes": list(self.notes),
            "imported": [{"handle": i.handle, "type": i.dxftype, "layer": i.layer,
                          "members": list(i.members), "node": i.node} for i in self.imported],
            "skipped": [{"handle": s.handle, "type": s.dxftype, "layer": s.layer,
                         "part": s.part, "reason": s.reason} for s in self.skipped],
        }


# ---------------------------------------------------------------------------- geometry
@dataclass
class _Seg:
    """A straight or circular piece of line work (WCS, x-y plane)."""

    src: int  # index of the source entity
    part: int | None
    kind: str
    p0: tuple[float, float]
    p1: tuple[float, float]
    #: (cx, cy, r, a0, sweep) in radians, sweep counter-clockwise positive; None if straight
    arc: tuple[float, float, float, float, float] | None = None
    a: int = -1  # node indices
    b: int = -1


def _arc_at(arc: tuple[float, float, float, float, float], t: float) -> tuple[float, float]:
    cx, cy, r, a0, sw = arc
    ang = a0 + sw * t
    return (cx + r * math.cos(ang), cy + r * math.sin(ang))


def rise_from_sweep(chord: float, sweep: float) -> float:
    """Signed mid-ordinate of an arc of included angle ``sweep`` (counter-clockwise positive).

    Bulge relation (DXF reference): the sagitta is ``(chord / 2) * tan(|sweep| / 4)``; a
    counter-clockwise arc bulges to the right of the chord, hence the minus sign.
    """
    return -(chord / 2.0) * math.tan(sweep / 4.0)


def arc_centre(p0: tuple[float, float], p1: tuple[float, float], rise: float) -> tuple[float, float, float]:
    """Centre and radius of the circular arc through ``p0``, ``p1`` with signed mid-ordinate ``rise``.

    Intersecting chords theorem: ``R = (c^2/4 + s^2) / (2 s)``; the centre lies on the chord's
    perpendicular bisector, ``R - s`` from the chord on the side away from the bulge.
    """
    (x0, y0), (x1, y1) = p0, p1
    c = math.hypot(x1 - x0, y1 - y0)
    s = abs(rise)
    r = (c * c / 4.0 + s * s) / (2.0 * s)
    nx, ny = -(y1 - y0) / c, (x1 - x0) / c
    sgn = 1.0 if rise > 0 else -1.0
    mx, my = (x0 + x1) / 2.0, (y0 + y1) / 2.0
    return (mx - sgn * nx * (r - s), my - sgn * ny * (r - s), r)


def _wcs_xy(v: Any) -> tuple[float, float]:
    return (float(v[0]), float(v[1]))


def _split_half_turns(arc: tuple[float, float, float, float, float]) -> list[tuple[float, float, float, float, float]]:
    cx, cy, r, a0, sw = arc
    n = max(1, math.ceil(abs(sw) / _HALF_TURN))
    return [(cx, cy, r, a0 + sw * k / n, sw / n) for k in range(n)]


# ---------------------------------------------------------------------------- reading
class _Reader:
    """Collects segments and marks from the entities of one model space."""

    def __init__(self, doc: Any, source: str, mapping: Mapping[str, str], default_kind: str):
        self.doc = doc
        self.source = source
        self.mapping = {k.casefold(): v for k, v in mapping.items()}
        self.mapping_names = {k.casefold(): k for k in mapping}
        self.used_mapping: set[str] = set()
        self.default_kind = default_kind
        self.entities: list[tuple[str, str, str]] = []  # (handle, dxftype, layer)
        self.segs: list[_Seg] = []
        self.marks: list[tuple[int, str, Any, tuple[float, float]]] = []  # (src, what, data, point)
        self.skipped: list[SkippedItem] = []
        self.layer_kinds: dict[str, str] = {}
        self.layer_kind_from: dict[str, str] = {}
        self.notes: list[str] = []

    # -- helpers
    def _where(self, src: int) -> str:
        h, t, layer = self.entities[src]
        return f'file {self.source}: entity #{h} ({t} on layer "{layer}")'

    def _num(self, src: int, value: Any, fld: str) -> float:
        try:
            v = float(value)
        except (TypeError, ValueError):
            raise DxfError(f'{self._where(src)}: field "{fld}": not a number ({value!r})') from None
        if not math.isfinite(v):
            raise DxfError(f'{self._where(src)}: field "{fld}": not a finite number ({value!r})')
        return v

    def _pt(self, src: int, v: Any, fld: str) -> tuple[float, float, float]:
        return (self._num(src, v[0], f"{fld}.x"), self._num(src, v[1], f"{fld}.y"),
                self._num(src, v[2] if len(v) > 2 else 0.0, f"{fld}.z"))

    def _skip(self, src: int, reason: str, part: int | None = None) -> None:
        h, t, layer = self.entities[src]
        self.skipped.append(SkippedItem(h, t, layer, reason, part))

    def _planar(self, src: int, e: Any) -> int | None:
        """+1 / -1 for an extrusion along +z / -z, None (skipped) otherwise."""
        ex = self._pt(src, e.dxf.extrusion, "extrusion")
        n = math.sqrt(ex[0] ** 2 + ex[1] ** 2 + ex[2] ** 2)
        if n == 0 or math.hypot(ex[0], ex[1]) > 1e-9 * n:
            self._skip(src, "not drawn in the x-y plane (its extrusion direction is tilted)")
            return None
        return 1 if ex[2] > 0 else -1

    def layer_kind(self, layer: str) -> tuple[str, str]:
        key = layer.casefold()
        if key in self.mapping:
            self.used_mapping.add(key)
            return self.mapping[key], "given"
        if key in BUILTIN_LAYER_KINDS:
            return BUILTIN_LAYER_KINDS[key], "kinestat layer"
        if "*" in self.mapping:
            self.used_mapping.add("*")
            return self.mapping["*"], "given for all other layers"
        return self.default_kind, "default"

    # -- the walk
    def read(self) -> None:
        layers = self.doc.layers
        for e in self.doc.modelspace():
            t = e.dxftype()
            layer = str(e.dxf.get("layer", "0"))
            handle = str(e.dxf.get("handle", "?"))
            src = len(self.entities)
            self.entities.append((handle, t, layer))
            kind, how = self.layer_kind(layer)
            explicit = layer.casefold() in self.mapping
            # marks are read on every layer but one the user maps to skip
            if t == "INSERT" and (kind != "skip" or how == "kinestat layer"):
                self._insert(src, e)
                continue
            if t == "POINT" and layer.casefold() == LAYER_NODE.casefold() and how == "kinestat layer":
                p = self._pt(src, e.dxf.location, "location")
                self.marks.append((src, "node", None, (p[0], p[1])))
                continue
            if kind == "skip":
                self._skip(src, f'layer "{layer}" is mapped to skip')
                self._note_layer(layer, kind, how)
                continue
            lay = layers.get(layer) if layers.has_entry(layer) else None
            if lay is not None and not explicit and (lay.is_off() or lay.is_frozen()):
                state = "frozen" if lay.is_frozen() else "off"
                self._skip(src, f'layer "{layer}" is {state} (name it in the layer mapping to import it)')
                continue
            before = len(self.segs)
            if t == "LINE":
                self._line(src, e, kind)
            elif t == "ARC":
                self._arc(src, e, kind)
            elif t == "LWPOLYLINE":
                self._lwpolyline(src, e, kind)
            elif t == "POLYLINE":
                self._polyline(src, e, kind)
            elif t == "CIRCLE":
                self._skip(src, "a circle is not line work (draw a ring as two arcs)")
            elif t in ("SPLINE", "ELLIPSE", "HELIX"):
                self._skip(src, f"{t} curves are not supported: draw the member as lines or arcs")
            elif t in ("TEXT", "MTEXT", "ATTDEF", "ATTRIB", "DIMENSION", "ARC_DIMENSION", "LEADER",
                       "MULTILEADER", "MLEADER", "HATCH", "MPOLYGON", "POINT", "SOLID", "TRACE", "WIPEOUT",
                       "IMAGE", "TOLERANCE", "VIEWPORT"):
                self._skip(src, f"{t} is an annotation, not line work")
            else:
                self._skip(src, f"entity type {t} is not supported (use LINE, LWPOLYLINE, POLYLINE or ARC)")
            if len(self.segs) > before:
                self._note_layer(layer, kind, how)

    def _note_layer(self, layer: str, kind: str, how: str) -> None:
        if layer not in self.layer_kinds:
            self.layer_kinds[layer] = kind
            self.layer_kind_from[layer] = how

    def _too_far(self, src: int, values: tuple[float, ...], part: int | None) -> bool:
        if not all(abs(v) <= COORD_LIMIT for v in values):  # also catches an overflow to inf / nan
            self._skip(src, f"a coordinate beyond +-{COORD_LIMIT:g} drawing units", part)
            return True
        return False

    def _add_straight(self, src: int, kind: str, p: tuple, q: tuple, part: int | None) -> None:
        p0, p1 = (p[0], p[1]), (q[0], q[1])
        if self._too_far(src, p0 + p1, part):
            return
        if p0 == p1:
            self._skip(src, "zero length", part)
            return
        self.segs.append(_Seg(src, part, kind, p0, p1))

    def _add_arc(self, src: int, kind: str, arc: tuple, part: int | None, ends: tuple | None = None) -> None:
        if kind == "bar":
            self._skip(src, "an arc on a bar layer: a bar is straight (map the layer to beam, "
                            "or draw the bar as a line)", part)
            return
        cx, cy, r, a0, sw = arc
        if self._too_far(src, (abs(cx) + r, abs(cy) + r) + (ends[0] + ends[1] if ends else ()), part):
            return
        if r == 0 or sw == 0:
            self._skip(src, "zero length", part)
            return
        pieces = _split_half_turns(arc)
        if len(pieces) > 1:
            h = self.entities[src][0]
            self.notes.append(f"#{h}: an arc of {math.degrees(abs(sw)):.4g} degrees is split "
                                       f"into {len(pieces)} members of at most a half circle")
        for k, pc in enumerate(pieces):
            p0, p1 = _arc_at(pc, 0.0), _arc_at(pc, 1.0)
            if ends is not None:  # the drawn vertices, exactly
                p0 = ends[0] if k == 0 else p0
                p1 = ends[1] if k == len(pieces) - 1 else p1
            if p0 == p1:
                self._skip(src, "zero length", part)
                continue
            self.segs.append(_Seg(src, part, kind, p0, p1, pc))

    def _line(self, src: int, e: Any, kind: str) -> None:
        self._add_straight(src, kind, self._pt(src, e.dxf.start, "start"), self._pt(src, e.dxf.end, "end"), None)

    def _arc(self, src: int, e: Any, kind: str) -> None:
        sgn = self._planar(src, e)
        if sgn is None:
            return
        c = self._pt(src, e.dxf.center, "center")
        r = self._num(src, e.dxf.radius, "radius")
        if r < 0:
            raise DxfError(f'{self._where(src)}: field "radius": negative ({r:g})')
        a_s = self._num(src, e.dxf.start_angle, "start_angle")
        a_e = self._num(src, e.dxf.end_angle, "end_angle")
        sweep_deg = (a_e - a_s) % 360.0
        if sweep_deg == 0.0 and a_e != a_s:
            sweep_deg = 360.0
        if self._too_far(src, (c[0], c[1], r), None):
            return
        ocs = e.ocs()
        cw = _wcs_xy(ocs.to_wcs(Vec3(c)))
        p0 = _wcs_xy(ocs.to_wcs(Vec3(c[0] + r * math.cos(math.radians(a_s)),
                                     c[1] + r * math.sin(math.radians(a_s)), c[2])))
        a0 = math.atan2(p0[1] - cw[1], p0[0] - cw[0])
        self._add_arc(src, kind, (cw[0], cw[1], r, a0, sgn * math.radians(sweep_deg)), None)

    def _vertices(self, src: int, kind: str, pts: list[tuple[float, float, float]], closed: bool,
                  ocs: Any, elevation: float, sgn: int) -> None:
        n = len(pts)
        if n < 2:
            self._skip(src, "a polyline with fewer than two vertices")
            return
        count = n if closed else n - 1
        for k in range(count):
            x0, y0, b = pts[k]
            x1, y1, _ = pts[(k + 1) % n]
            part = k + 1
            w0 = _wcs_xy(ocs.to_wcs(Vec3(x0, y0, elevation)))
            w1 = _wcs_xy(ocs.to_wcs(Vec3(x1, y1, elevation)))
            if self._too_far(src, (x0, y0, x1, y1), part):
                continue
            if b == 0.0 or (x0, y0) == (x1, y1):
                self._add_straight(src, kind, w0, w1, part)
                continue
            theta = 4.0 * math.atan(b)  # DXF reference: bulge = tan(included angle / 4)
            c = math.hypot(x1 - x0, y1 - y0)
            nx, ny = -(y1 - y0) / c, (x1 - x0) / c
            off = (c / 2.0) * math.cos(theta / 2.0) / math.sin(theta / 2.0)
            cx, cy = (x0 + x1) / 2.0 + nx * off, (y0 + y1) / 2.0 + ny * off
            r = c / (2.0 * abs(math.sin(theta / 2.0)))
            cw = _wcs_xy(ocs.to_wcs(Vec3(cx, cy, elevation)))
            a0 = math.atan2(w0[1] - cw[1], w0[0] - cw[0])
            self._add_arc(src, kind, (cw[0], cw[1], r, a0, sgn * theta), part, (w0, w1))

    def _lwpolyline(self, src: int, e: Any, kind: str) -> None:
        sgn = self._planar(src, e)
        if sgn is None:
            return
        raw = e.get_points("xyb")
        pts = [(self._num(src, x, f"vertex {k + 1}.x"), self._num(src, y, f"vertex {k + 1}.y"),
                self._num(src, b, f"vertex {k + 1}.bulge")) for k, (x, y, b) in enumerate(raw)]
        elev = self._num(src, e.dxf.get("elevation", 0.0), "elevation")
        self._vertices(src, kind, pts, bool(e.closed), e.ocs(), elev, sgn)

    def _polyline(self, src: int, e: Any, kind: str) -> None:
        if e.is_polygon_mesh or e.is_poly_face_mesh:
            self._skip(src, "a mesh is not line work")
            return
        if e.dxf.get("flags", 0) & 4 or any(v.dxf.get("flags", 0) & 16 for v in e.vertices):
            self._skip(src, "a spline-fit polyline is a curve: convert it to straight or arc segments first")
            return
        verts = list(e.vertices)
        if e.is_3d_polyline:
            pts3 = [self._pt(src, v.dxf.location, f"vertex {k + 1}") for k, v in enumerate(verts)]
            if len(pts3) < 2:
                self._skip(src, "a polyline with fewer than two vertices")
                return
            count = len(pts3) if e.is_closed else len(pts3) - 1
            for k in range(count):
                self._add_straight(src, kind, pts3[k], pts3[(k + 1) % len(pts3)], k + 1)
            return
        sgn = self._planar(src, e)
        if sgn is None:
            return
        pts = []
        for k, v in enumerate(verts):
            x, y, _ = self._pt(src, v.dxf.location, f"vertex {k + 1}")
            pts.append((x, y, self._num(src, v.dxf.get("bulge", 0.0), f"vertex {k + 1}.bulge")))
        elev = self._pt(src, e.dxf.get("elevation", (0.0, 0.0, 0.0)), "elevation")[2]
        self._vertices(src, kind, pts, bool(e.is_closed), e.ocs(), elev, sgn)

    def _insert(self, src: int, e: Any) -> None:
        name = str(e.dxf.name).upper()
        m = e.matrix44()
        o = m.transform((0.0, 0.0, 0.0))
        u = m.transform_direction((0.0, 1.0, 0.0))  # the support's "along" direction
        pt = (self._num(src, o[0], "insert.x"), self._num(src, o[1], "insert.y"))
        ang = math.degrees(math.atan2(float(u[1]), float(u[0])))
        ang = round(ang % 360.0, 9) % 360.0
        if name == BLOCK_HINGE:
            self.marks.append((src, "hinge", None, pt))
        elif name in _NAMED_SUPPORT_BLOCKS:
            self.marks.append((src, "support", (_NAMED_SUPPORT_BLOCKS[name], ang, ()), pt))
        elif name.startswith("KINESTAT_CUSTOM"):
            words = [w.lower() for w in name[len("KINESTAT_CUSTOM"):].split("_") if w]
            words = [w for w in words if w != "free"]
            bad = [w for w in words if w not in FIX_WORDS]
            if bad:
                self._skip(src, f'block "{e.dxf.name}": unknown restraint word "{bad[0].lower()}"')
                return
            self.marks.append((src, "support", ("custom", ang, tuple(w for w in FIX_WORDS if w in words)), pt))
        else:
            self._skip(src, f'block reference "{e.dxf.name}": explode it in the CAD program to import its lines')


class _NodeSnap:
    """Greedy snapping of points to nodes on a grid of cell size ``tol``."""

    def __init__(self, tol: float):
        self.tol = tol
        self.cells: dict[tuple[int, int], list[int]] = {}
        self.pts: list[tuple[float, float]] = []

    def _key(self, p: tuple[float, float]) -> tuple[int, int]:
        return (math.floor(p[0] / self.tol), math.floor(p[1] / self.tol))

    def find(self, p: tuple[float, float]) -> tuple[int, float]:
        kx, ky = self._key(p)
        best, bd = -1, math.inf
        for dx in (-1, 0, 1):
            for dy in (-1, 0, 1):
                for i in self.cells.get((kx + dx, ky + dy), ()):
                    q = self.pts[i]
                    d = math.hypot(p[0] - q[0], p[1] - q[1])
                    if d <= self.tol and d < bd:
                        best, bd = i, d
        return best, bd

    def add(self, p: tuple[float, float]) -> tuple[int, float]:
        i, d = self.find(p)
        if i >= 0:
            return i, d
        self.pts.append(p)
        self.cells.setdefault(self._key(p), []).append(len(self.pts) - 1)
        return len(self.pts) - 1, 0.0


def _parse_units(units: str | None) -> str | None:
    if units is None:
        return None
    u = units.strip()
    if u not in UNIT_CODES:
        raise DxfError(f'units: unknown unit "{units}" (known: {", ".join(UNIT_CODES)})')
    return u


def read_dxf(path: str | Path, *, layers: Mapping[str, str] | None = None, default_kind: str = "beam",
             tol: float | None = None, units: str | None = None,
             far_factor: float = DEFAULT_FAR_FACTOR, title: str | None = None) -> tuple[Scheme, ImportReport]:
    """Read a DXF file; see :func:`scheme_from_dxf`.  Raises :class:`DxfError` for a bad file."""
    p = Path(path)
    try:
        doc = ezdxf.readfile(str(p))
    except Exception as exc:  # ezdxf raises many kinds for broken files; all mean "not readable"
        msg = str(exc).strip() or type(exc).__name__
        if isinstance(exc, OSError) and not p.exists():
            msg = "no such file"
        raise DxfError(f"file {p.name}: not a readable DXF file ({msg})") from None
    return scheme_from_dxf(doc, source=p.name, layers=layers, default_kind=default_kind, tol=tol,
                           units=units, far_factor=far_factor, title=p.stem if title is None else title)


def scheme_from_dxf(doc: Any, *, source: str = "drawing", layers: Mapping[str, str] | None = None,
                    default_kind: str = "beam", tol: float | None = None, units: str | None = None,
                    far_factor: float = DEFAULT_FAR_FACTOR, title: str = "") -> tuple[Scheme, ImportReport]:
    """Build a scheme from the model space of an ezdxf document (all or nothing).

    ``layers`` maps layer names (case-insensitive, ``"*"`` = every other layer) to ``beam``,
    ``bar`` or ``skip``; other layers get ``default_kind``.  ``tol`` is the merge tolerance in
    drawing units (default: :data:`DEFAULT_TOL_FRACTION` times the median segment length).
    ``units`` names the drawing unit when the header has none or is wrong.
    """
    mapping = dict(layers or {})
    for name, kind in mapping.items():
        if kind not in LAYER_CHOICES:
            raise DxfError(f'layer mapping "{name}": unknown choice "{kind}" (allowed: {", ".join(LAYER_CHOICES)})')
        if not str(name).strip():
            raise DxfError("layer mapping: a layer name is empty")
    if default_kind not in LAYER_CHOICES:
        raise DxfError(f'default kind: unknown choice "{default_kind}" (allowed: {", ".join(LAYER_CHOICES)})')
    if tol is not None and (not math.isfinite(tol) or tol <= 0):
        raise DxfError(f"merge tolerance: must be a positive number, got {tol!r}")
    if not math.isfinite(far_factor) or far_factor <= 0:
        raise DxfError(f"far factor: must be a positive number, got {far_factor!r}")
    given_units = _parse_units(units)

    report = ImportReport(source=source)
    try:
        code = int(doc.header.get("$INSUNITS", 0))
    except (TypeError, ValueError):
        code = 0
    header_units = INSUNITS.get(code)
    if given_units is not None:
        report.units, report.units_from = given_units, "given"
        if header_units is not None and header_units != given_units:
            report.notes.append(f"the drawing header says {header_units}; using {given_units} as given")
    elif header_units is not None:
        report.units, report.units_from = header_units, "header"
    else:
        report.units, report.units_from = "m", "assumed"
        if code:
            report.notes.append(f"the drawing header names units code {code}, which kinestat does not use; "
                                "assumed m (give the units to change this)")

    rd = _Reader(doc, source, mapping, default_kind)
    rd.read()
    report.notes.extend(rd.notes)
    report.unused_mapping = [rd.mapping_names[k] for k in rd.mapping if k not in rd.used_mapping]
    report.drawing_layers = list(dict.fromkeys(layer for _, _, layer in rd.entities))

    segs = rd.segs
    lengths = [math.hypot(s.p1[0] - s.p0[0], s.p1[1] - s.p0[1]) for s in segs]
    if tol is None:
        if lengths:
            tol = DEFAULT_TOL_FRACTION * float(np.median(lengths))
            report.tolerance_from = f"default: {DEFAULT_TOL_FRACTION:g} x median segment length"
        else:
            tol = 1e-9
    else:
        report.tolerance_from = "given"
    report.tolerance = tol

    # 1. snap ends to nodes
    snap = _NodeSnap(tol)
    kept: list[_Seg] = []
    for s, L in zip(segs, lengths):
        if L <= tol:
            rd._skip(s.src, f"shorter ({L:.3g}) than the merge tolerance", s.part)
            continue
        s.a, d0 = snap.add(s.p0)
        s.b, d1 = snap.add(s.p1)
        for d in (d0, d1):
            if d > 1e-6 * tol:  # a real gap, not rounding of recomputed arc ends
                report.snapped_points += 1
                report.largest_snap = max(report.largest_snap, d)
        if s.a == s.b:
            rd._skip(s.src, "both ends snap onto one node within the merge tolerance", s.part)
            continue
        kept.append(s)
    marks: list[tuple[int, str, Any, int]] = []
    for src, what, data, pt in rd.marks:
        i, _ = snap.find(pt)
        if i < 0:
            if what == "hinge":
                rd._skip(src, "hinge mark not at a node")
                continue
            i, _ = snap.add(pt)
        marks.append((src, what, data, i))

    pts = np.array(snap.pts, dtype=float).reshape(-1, 2)

    # 2. split at T-junctions: a node on the inside of a segment
    kept = _split_t_junctions(kept, pts, tol, report)

    # 3. duplicates (same ends, same shape)
    seen: dict[tuple[int, int], list[tuple[float, _Seg]]] = {}
    uniq: list[_Seg] = []
    for s in kept:
        rise = _seg_rise(s, pts)
        key, r_norm = ((s.a, s.b), rise) if s.a < s.b else ((s.b, s.a), -rise)
        dup = next((o for r, o in seen.get(key, []) if abs(r - r_norm) <= tol), None)
        if dup is not None:
            rd._skip(s.src, f"duplicate of #{rd.entities[dup.src][0]} (same ends and shape)", s.part)
            continue
        seen.setdefault(key, []).append((r_norm, s))
        uniq.append(s)
    kept = uniq

    # 4. far-away groups
    kept, marks = _drop_far(kept, marks, pts, far_factor, rd, report)

    # 5. support and hinge marks
    supports: dict[int, tuple[int, tuple]] = {}
    hinges: dict[int, int] = {}
    free_nodes: dict[int, int] = {}
    for src, what, data, i in marks:
        if what == "node":
            free_nodes.setdefault(i, src)
        elif what == "hinge":
            hinges.setdefault(i, src)
        elif i in supports:
            rd._skip(src, f"the node already has a support (from #{rd.entities[supports[i][0]][0]}); "
                          "one support per node")
        else:
            supports[i] = (src, data)

    # 6. ids and the scheme document
    node_id: dict[int, str] = {}

    def nid(i: int) -> str:
        if i not in node_id:
            node_id[i] = f"N{len(node_id) + 1}"
        return node_id[i]

    members = []
    by_src: dict[int, list[str]] = {}
    for k, s in enumerate(kept):
        mid = f"M{k + 1}"
        d: dict[str, Any] = {"id": mid, "start": nid(s.a), "end": nid(s.b), "kind": s.kind}
        rise = _seg_rise(s, pts)
        if rise:
            d["rise"] = rise
        members.append(d)
        by_src.setdefault(s.src, []).append(mid)
    for i in list(supports) + list(hinges) + list(free_nodes):
        nid(i)
    if not members:
        detail = f"; skipped {len(rd.skipped)} items, e.g. {rd.skipped[0].describe()}" if rd.skipped else ""
        raise DxfError(f"file {source}: no line work to import (no usable LINE, LWPOLYLINE, POLYLINE or ARC "
                       f"in model space){detail}")
    nodes = []
    for i, name in node_id.items():
        d = {"id": name, "x": float(pts[i, 0]), "y": float(pts[i, 1])}
        if i in hinges:
            d["hinge"] = True
        nodes.append(d)
    sup_list = []
    for i, (src, (kind, ang, fix)) in supports.items():
        d = {"node": node_id[i], "kind": kind, "angle": ang}
        if kind == "custom":
            d["fix"] = list(fix)
        sup_list.append(d)
    doc_dict = {
        "format": "kinestat-scheme", "version": 1, "title": title, "units": report.units,
        "nodes": nodes, "members": members, "supports": sup_list,
        "source": {"from": "dxf", "file": source, "units": report.units, "tolerance": tol,
                   "layers": {k: v for k, v in rd.layer_kinds.items()}},
    }
    scheme = scheme_from_dict(doc_dict)

    for src, mids in by_src.items():
        h, t, layer = rd.entities[src]
        report.imported.append(ImportedItem(h, t, layer, tuple(mids)))
    for i, (src, _) in supports.items():
        h, t, layer = rd.entities[src]
        report.imported.append(ImportedItem(h, t, layer, (), node_id[i]))
    for i, src in list(hinges.items()) + list(free_nodes.items()):
        h, t, layer = rd.entities[src]
        report.imported.append(ImportedItem(h, t, layer, (), node_id[i]))
    report.skipped = rd.skipped
    report.layer_kinds = rd.layer_kinds
    report.layer_kind_from = rd.layer_kind_from
    report.n_members, report.n_nodes = len(members), len(nodes)
    report.n_supports, report.n_hinges = len(sup_list), len(hinges)
    return scheme, report


def _seg_rise(s: _Seg, pts: np.ndarray) -> float:
    if s.arc is None:
        return 0.0
    a, b = pts[s.a], pts[s.b]
    chord = math.hypot(b[0] - a[0], b[1] - a[1])
    rise = rise_from_sweep(chord, s.arc[4])
    # at most a half circle (rounding of a half-turn sweep could overshoot by an ulp)
    return math.copysign(min(abs(rise), chord / 2.0), rise)


def _split_t_junctions(segs: list[_Seg], pts: np.ndarray, tol: float, report: ImportReport) -> list[_Seg]:
    if not segs or len(pts) < 3:
        return segs
    boxes = []
    for s in segs:
        if s.arc is None:
            (x0, y0), (x1, y1) = pts[s.a], pts[s.b]
            boxes.append((min(x0, x1) - tol, min(y0, y1) - tol, max(x0, x1) + tol, max(y0, y1) + tol))
        else:
            cx, cy, r = s.arc[:3]
            boxes.append((cx - r - tol, cy - r - tol, cx + r + tol, cy + r + tol))
    bx = np.array(boxes)
    tree = shapely.STRtree(shapely.points(pts))
    seg_idx, node_idx = tree.query(shapely.box(bx[:, 0], bx[:, 1], bx[:, 2], bx[:, 3]))
    hits: dict[int, list[int]] = {}
    for si, ni in zip(seg_idx.tolist(), node_idx.tolist()):
        if ni != segs[si].a and ni != segs[si].b:
            hits.setdefault(si, []).append(ni)
    out: list[_Seg] = []
    for k, s in enumerate(segs):
        cand = hits.get(k)
        if not cand:
            out.append(s)
            continue
        P = pts[cand]
        a, b = pts[s.a], pts[s.b]
        if s.arc is None:
            d = b - a
            t = (P - a) @ d / float(d @ d)
            foot = a + np.outer(t, d)
            dist = np.hypot(*(P - foot).T)
        else:
            cx, cy, r, a0, sw = s.arc
            dist = np.abs(np.hypot(P[:, 0] - cx, P[:, 1] - cy) - r)
            ang = np.arctan2(P[:, 1] - cy, P[:, 0] - cx)
            rel = np.mod((ang - a0) * np.sign(sw), 2 * np.pi)
            t = rel / abs(sw)
        inside = (dist <= tol) & (t > 0) & (t < 1)
        if not inside.any():
            out.append(s)
            continue
        order = sorted((float(t[j]), cand[j]) for j in np.nonzero(inside)[0])
        report.splits += len(order)
        chain = [(0.0, s.a)] + order + [(1.0, s.b)]
        for (t0, n0), (t1, n1) in zip(chain, chain[1:]):
            arc = None
            if s.arc is not None:
                cx, cy, r, a0, sw = s.arc
                arc = (cx, cy, r, a0 + sw * t0, sw * (t1 - t0))
            out.append(_Seg(s.src, s.part, s.kind, tuple(pts[n0]), tuple(pts[n1]), arc, n0, n1))
    return out


def _drop_far(segs: list[_Seg], marks: list, pts: np.ndarray, far_factor: float, rd: _Reader,
              report: ImportReport) -> tuple[list[_Seg], list]:
    if not segs:
        return segs, marks
    ends = np.array([(s.a, s.b) for s in segs])
    graph = coo_matrix((np.ones(len(segs)), (ends[:, 0], ends[:, 1])), shape=(len(pts), len(pts)))
    _, label = connected_components(graph, directed=False)
    root = lambda i: int(label[i])  # noqa: E731
    length: dict[int, float] = {}
    for s in segs:
        r = root(s.a)
        a, b = pts[s.a], pts[s.b]
        length[r] = length.get(r, 0.0) + math.hypot(b[0] - a[0], b[1] - a[1])
    groups: dict[int, list[int]] = {}
    for i in set(ends.ravel().tolist() + [m[3] for m in marks]):
        groups.setdefault(root(i), []).append(i)
    main = max(length, key=lambda r: length[r])

    def bbox(r: int) -> np.ndarray:
        P = pts[groups[r]]
        return np.array([P[:, 0].min(), P[:, 1].min(), P[:, 0].max(), P[:, 1].max()])

    mb = bbox(main)
    size = max(math.hypot(mb[2] - mb[0], mb[3] - mb[1]), report.tolerance)
    far: dict[int, float] = {}
    for r in groups:
        if r == main:
            continue
        ob = bbox(r)
        gx = max(0.0, ob[0] - mb[2], mb[0] - ob[2])
        gy = max(0.0, ob[1] - mb[3], mb[1] - ob[3])
        gap = math.hypot(gx, gy)
        if gap > far_factor * size:
            far[r] = gap
    if not far:
        return segs, marks
    u = report.units
    keep = []
    for s in segs:
        r = root(s.a)
        if r in far:
            rd._skip(s.src, f"far away from the rest of the drawing (gap {far[r]:.4g} {u}, "
                            f"main drawing size {size:.4g} {u})", s.part)
        else:
            keep.append(s)
    mk = []
    for m in marks:
        r = root(m[3])
        if r in far:
            rd._skip(m[0], f"far away from the rest of the drawing (gap {far[r]:.4g} {u})")
        else:
            mk.append(m)
    return keep, mk


# ---------------------------------------------------------------------------- writing
def _support_block_name(kind: str, fix: tuple[str, ...]) -> str:
    if kind == "custom":
        return "KINESTAT_CUSTOM_" + ("_".join(w.upper() for w in fix) if fix else "FREE")
    return f"KINESTAT_{kind.upper()}"


def _define_support_block(doc: Any, name: str, kind: str, fix: tuple[str, ...]) -> None:
    """Unit-size support mark for a support whose ``along`` direction is +y (angle 90)."""
    blk = doc.blocks.new(name)
    att = {"layer": "0"}

    def ground(y: float) -> None:
        blk.add_line((-0.8, y), (0.8, y), dxfattribs=att)
        for k in range(5):
            x = -0.7 + 0.35 * k
            blk.add_line((x, y), (x - 0.25, y - 0.25), dxfattribs=att)

    if kind in ("pin", "roller"):
        blk.add_lwpolyline([(0, 0), (-0.5, -0.8), (0.5, -0.8)], close=True, dxfattribs=att)
        ground(-0.8 if kind == "pin" else -1.05)
    elif kind == "fixed":
        ground(0.0)
    elif kind == "guided":
        blk.add_line((-0.6, 0.0), (0.6, 0.0), dxfattribs=att)
        blk.add_line((-0.6, -0.3), (0.6, -0.3), dxfattribs=att)
        ground(-0.55)
    else:  # custom: a square, with a short tick for each restraint
        blk.add_lwpolyline([(-0.4, -0.4), (0.4, -0.4), (0.4, 0.4), (-0.4, 0.4)], close=True, dxfattribs=att)
        if "along" in fix:
            blk.add_line((0, -0.4), (0, -0.9), dxfattribs=att)
        if "across" in fix:
            blk.add_line((0.4, 0), (0.9, 0), dxfattribs=att)
        if "rotation" in fix:
            blk.add_line((-0.4, -0.4), (0.4, 0.4), dxfattribs=att)


def scheme_to_dxf(scheme: Scheme, *, labels: bool = True, mark_size: float | None = None) -> Any:
    """The scheme as an ezdxf document: LINE / ARC members on one layer per kind, support and
    hinge marks as block references on their own layers, id labels and the caution note."""
    doc = ezdxf.new("R2010", setup=False)
    code = UNIT_CODES.get(scheme.units, 0)
    doc.header["$INSUNITS"] = code
    doc.header["$MEASUREMENT"] = 1 if scheme.units in _METRIC or code == 0 else 0
    for name, color in ((LAYER_BEAM, 7), (LAYER_BAR, 5), (LAYER_SUPPORT, 3), (LAYER_HINGE, 6),
                        (LAYER_LABEL, 8), (LAYER_NOTE, 8), (LAYER_NODE, 8)):
        doc.layers.add(name, color=color)
    msp = doc.modelspace()
    h = mark_size if mark_size is not None else 0.04 * scheme.size()
    text_h = 0.6 * h
    xy = {nid: (n.x, n.y) for nid, n in scheme.nodes.items()}

    for m in scheme.members.values():
        p0, p1 = xy[m.start], xy[m.end]
        att = {"layer": KIND_LAYERS[m.kind]}
        L = math.hypot(p1[0] - p0[0], p1[1] - p0[1])
        nx, ny = -(p1[1] - p0[1]) / L, (p1[0] - p0[0]) / L
        mx, my = (p0[0] + p1[0]) / 2, (p0[1] + p1[1]) / 2
        if m.rise == 0:
            msp.add_line(p0, p1, dxfattribs=att)
        else:
            cx, cy, r = arc_centre(p0, p1, m.rise)
            a_s = math.degrees(math.atan2(p0[1] - cy, p0[0] - cx))
            a_e = math.degrees(math.atan2(p1[1] - cy, p1[0] - cx))
            # an ARC runs counter-clockwise; a negative rise bulges right = counter-clockwise start -> end
            if m.rise < 0:
                msp.add_arc((cx, cy), r, a_s, a_e, dxfattribs=att)
            else:
                msp.add_arc((cx, cy), r, a_e, a_s, dxfattribs=att)
        if labels:
            lx, ly = mx + nx * (m.rise + 0.5 * h), my + ny * (m.rise + 0.5 * h)
            msp.add_text(m.id, height=text_h, dxfattribs={"layer": LAYER_LABEL}).set_placement(
                (lx, ly), align=TextEntityAlignment.MIDDLE_CENTER)

    defined: set[str] = set()
    for s in scheme.supports.values():
        name = _support_block_name(s.kind, s.fix)
        if name not in defined:
            _define_support_block(doc, name, s.kind, s.fix)
            defined.add(name)
        msp.add_blockref(name, xy[s.node], dxfattribs={
            "layer": LAYER_SUPPORT, "xscale": h, "yscale": h, "zscale": h, "rotation": s.angle - 90.0})
    hinge_nodes = [n for n in scheme.nodes.values() if n.hinge]
    if hinge_nodes:
        blk = doc.blocks.new(BLOCK_HINGE)
        blk.add_circle((0, 0), 0.3, dxfattribs={"layer": "0"})
        for n in hinge_nodes:
            msp.add_blockref(BLOCK_HINGE, (n.x, n.y), dxfattribs={
                "layer": LAYER_HINGE, "xscale": h, "yscale": h, "zscale": h})
    reached = {m.start for m in scheme.members.values()} | {m.end for m in scheme.members.values()}
    for n in scheme.nodes.values():
        if n.id not in reached:
            msp.add_point((n.x, n.y), dxfattribs={"layer": LAYER_NODE})
    if labels:
        for n in scheme.nodes.values():
            msp.add_text(n.id, height=text_h, dxfattribs={"layer": LAYER_LABEL}).set_placement(
                (n.x + 0.5 * h, n.y + 0.5 * h), align=TextEntityAlignment.BOTTOM_LEFT)

    xs = [p[0] for p in xy.values()] or [0.0]
    ys = [p[1] for p in xy.values()] or [0.0]
    title = f'kinestat scheme "{scheme.title}"' if scheme.title else "kinestat scheme"
    note = msp.add_mtext(f"{title}, units {scheme.units}.\\P{CAUTION}",
                         dxfattribs={"layer": LAYER_NOTE, "char_height": text_h})
    note.set_location((min(xs), min(ys) - 3 * h))
    return doc


def dxf_text(scheme: Scheme, **kwargs: Any) -> str:
    """The DXF file text of :func:`scheme_to_dxf`."""
    buf = StringIO()
    scheme_to_dxf(scheme, **kwargs).write(buf)
    return buf.getvalue()


def write_dxf(scheme: Scheme, path: str | Path, **kwargs: Any) -> None:
    """Write the scheme as DXF atomically (temporary file + rename)."""
    atomic_write_text(path, dxf_text(scheme, **kwargs))
