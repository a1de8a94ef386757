"""What the motion strip animates: a traced mechanism path as arrays, with its rigid bodies and
their instant centres at every position (no Qt; runs on a worker thread).

:func:`compute_motion` calls :func:`kinestat.core.motion.trace` and turns the path into
node-position arrays (frames x nodes x 2).  The rigid bodies are those of the drawn position
(``Path.bodies``); at every other position each body's instant centre is found from the node
velocities along the path:

* node velocities by the three-point (second-order) difference formula on a non-uniform
  grid, the parameter being the arc length of the whole configuration (Lagrange
  interpolation; e.g. Fornberg (1988), "Generation of finite difference formulas on
  arbitrarily spaced grids", Math. Comp. 51);
* the body's rigid velocity field ``v(p) = v_c + omega k x (p - c)`` by least squares over
  its nodes, and its instant centre ``c + (k x v_c) / omega`` (a direction of translation
  when ``omega`` vanishes): the pole of planar rigid motion, as in A. B. W. Kennedy (1886),
  *The Mechanics of Machinery*.

A body with a node that never moves turns about that node.  At the drawn position the
centres are the exact ones of :mod:`kinestat.core.bodies`; an
infinitesimal mechanism is shown linearised and keeps those first-order centres throughout.
"""
from __future__ import annotations

import math
import threading
import time
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from kinestat.core.model import Scheme

#: |omega| * body size below this fraction of |v| is a translation
TRANSLATION_RTOL = 1e-7
#: default step budget in each direction (the tracer's own default)
STEPS = 400
#: frames in the finite-difference stencil for node velocities
STENCIL = 7


@dataclass(frozen=True)
class ModeSpec:
    """Which motion to trace: one canonical mode (1-based) or a weighted combination."""

    mode: int = 1
    weights: tuple[float, ...] | None = None

    def label(self) -> str:
        if self.weights is not None:
            return "combination " + ", ".join(f"{w:g}" for w in self.weights)
        return f"mode {self.mode}"


@dataclass
class BodyTrack:
    """One moving rigid body along the path."""

    #: "B1", "B2" ... (as in the report)
    label: str
    members: tuple[str, ...]
    #: indices into MotionData.node_ids of the body's nodes
    nodes: np.ndarray
    #: instant centre at every frame (frames x 2); NaN where the body translates
    centres: np.ndarray
    #: unit direction of translation at every frame (frames x 2); NaN where it turns
    directions: np.ndarray


@dataclass(frozen=True)
class Mark:
    """A point of interest on the scrubber."""

    frame: int
    kind: str   # "drawn" | "dead centre" | "clash" | "limit" | "bifurcation"
    text: str


@dataclass
class MotionData:
    """A traced (or linearised) path ready to draw at any frame."""

    revision: int
    spec: ModeSpec
    motion: str                     # "finite" | "infinitesimal"
    linearised: bool
    node_ids: list[str]
    #: node positions, frames x nodes x 2
    P: np.ndarray
    start: int
    ended: dict[str, str]
    bodies: list[BodyTrack]
    still_members: list[str]
    #: nodes that move somewhere along the path
    moving_nodes: np.ndarray
    #: member id -> (start index, end index) into node_ids
    member_nodes: dict[str, tuple[int, int]]
    modes: list[tuple[int, str]]    # (index, kind) of every canonical mode
    mode: int | None
    driver: str | None
    residual: float | None
    note: str
    reason: str
    marks: list[Mark] = field(default_factory=list)
    seconds: float = 0.0
    thread: int | None = None

    @cached_property
    def node_index(self) -> dict[str, int]:
        return {nid: i for i, nid in enumerate(self.node_ids)}

    @property
    def frames(self) -> int:
        return int(self.P.shape[0])

    @property
    def cycle(self) -> bool:
        return self.ended.get("forward") == "full cycle"

    def positions(self, k: int) -> dict[str, tuple[float, float]]:
        """Node id -> (x, y) at frame ``k``."""
        Pk = self.P[k]
        return {nid: (float(Pk[i, 0]), float(Pk[i, 1])) for i, nid in enumerate(self.node_ids)}

    def bounds(self) -> tuple[float, float, float, float]:
        """Bounding box of every node over the whole path."""
        lo = self.P.reshape(-1, 2).min(axis=0)
        hi = self.P.reshape(-1, 2).max(axis=0)
        return (float(lo[0]), float(lo[1]), float(hi[0]), float(hi[1]))


def fornberg_weights(x0: float, xs: np.ndarray) -> np.ndarray:
    """Weights ``w`` with ``f'(x0) ~ sum w_i f(x_i)`` on any grid ``xs`` (B. Fornberg (1988),
    "Generation of finite difference formulas on arbitrarily spaced grids", Math. Comp. 51)."""
    n = len(xs)
    c = np.zeros((n, 2))
    c1, c4 = 1.0, xs[0] - x0
    c[0, 0] = 1.0
    for i in range(1, n):
        mn = min(i, 1)
        c2, c5, c4 = 1.0, c4, xs[i] - x0
        for j in range(i):
            c3 = xs[i] - xs[j]
            c2 *= c3
            if j == i - 1:
                for k in range(mn, 0, -1):
                    c[i, k] = c1 * (k * c[i - 1, k - 1] - c5 * c[i - 1, k]) / c2
                c[i, 0] = -c1 * c5 * c[i - 1, 0] / c2
            for k in range(mn, 0, -1):
                c[j, k] = (c4 * c[j, k] - k * c[j, k - 1]) / c3
            c[j, 0] = c4 * c[j, 0] / c3
        c1 = c2
    return c[:, 1]


def node_velocities(P: np.ndarray, cycle: bool, points: int = STENCIL) -> np.ndarray:
    """d P / d s at every frame (frames x nodes x 2), s the arc length of the configuration.

    Finite differences on the non-uniform grid of the traced frames (Fornberg 1988), with
    ``points`` frames around each one: centred inside, shifted at the ends of an open path,
    periodic round a closed one (``P[-1] == P[0]``).
    """
    F = P.shape[0]
    if F < 2:
        return np.zeros_like(P)
    closed = cycle and F >= 4
    Q = P[:-1] if closed else P  # the closing frame of a cycle repeats the first
    n = Q.shape[0]
    steps = np.diff(np.concatenate([Q, Q[:1]]) if closed else Q, axis=0).reshape(-1, Q[0].size)
    ds = np.maximum(np.linalg.norm(steps, axis=1), 1e-300)
    s = np.concatenate([[0.0], np.cumsum(ds)])  # closed: s[n] is the length of the loop
    npts = min(points, n if not closed else n - 1)
    if npts < 2:
        return np.zeros_like(P)
    half = npts // 2
    V = np.empty_like(Q)
    for k in range(n):
        if closed:
            offs = np.arange(-half, npts - half)
            idx = (k + offs) % n
            xs = s[k] + np.array([s[(k + o) % n] - s[k] + (s[n] if k + o >= n else 0.0)
                                  - (s[n] if k + o < 0 else 0.0) for o in offs])
        else:
            lo = min(max(k - half, 0), n - npts)
            idx = np.arange(lo, lo + npts)
            xs = s[idx]
        w = fornberg_weights(s[k], xs)
        V[k] = np.tensordot(w, Q[idx], axes=1)
    return np.concatenate([V, V[:1]], axis=0) if closed else V


def rigid_fit(p: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Least-squares rigid velocity field of points ``p`` moving at ``v`` (frames x points x 2).

    Returns (centroid c, velocity at c, omega) per frame: ``v_i ~ v_c + omega k x (p_i - c)``.
    """
    c = p.mean(axis=1)
    d = p - c[:, None, :]
    vc = v.mean(axis=1)
    w = v - vc[:, None, :]
    num = np.sum(d[..., 0] * w[..., 1] - d[..., 1] * w[..., 0], axis=1)
    den = np.sum(d[..., 0] ** 2 + d[..., 1] ** 2, axis=1)
    omega = np.where(den > 0, num / np.maximum(den, 1e-300), 0.0)
    return c, vc, omega


def instant_centres(p: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Instant centre (frames x 2, NaN for a translation) and translation direction (NaN where
    the body turns) of a rigid body with points ``p`` moving at ``v``."""
    c, vc, omega = rigid_fit(p, v)
    radius = np.sqrt(np.max(np.sum((p - c[:, None, :]) ** 2, axis=2), axis=1))
    speed = np.linalg.norm(vc, axis=1)
    vmax = np.max(np.linalg.norm(v, axis=2), axis=1)
    turning = np.abs(omega) * np.maximum(radius, 1e-300) > TRANSLATION_RTOL * np.maximum(vmax, 1e-300)
    safe = np.where(turning, omega, 1.0)
    centre = np.stack([c[:, 0] - vc[:, 1] / safe, c[:, 1] + vc[:, 0] / safe], axis=1)
    centre[~turning] = np.nan
    direction = vc / np.maximum(speed, 1e-300)[:, None]
    direction[turning] = np.nan
    return centre, direction


def compute_motion(scheme: Scheme, spec: ModeSpec = ModeSpec(), revision: int = 0, steps: int = STEPS) -> MotionData:
    """Trace ``scheme`` along ``spec`` and prepare it for drawing.

    Raises ``ValueError`` (with words for the user) when there is nothing to trace.
    """
    from kinestat.core.constraints import ConstraintModel
    from kinestat.core.motion import trace
    from kinestat.core.secondorder import assess

    t0 = time.perf_counter()
    model = ConstraintModel(scheme)
    verdict = assess(model)
    if verdict.motion == "none":
        raise ValueError("the exact constraints show no mechanism here (a near-singular geometry): "
                         "nothing to animate")
    if spec.weights is not None and len(spec.weights) != verdict.m:
        raise ValueError(f"{verdict.m} weight(s) expected (one per mode), got {len(spec.weights)}")
    path = trace(scheme, mode=spec.mode, weights=spec.weights, steps=steps, model=model, verdict=verdict)
    node_ids = list(scheme.nodes)
    index = {nid: i for i, nid in enumerate(node_ids)}
    P = np.array([[fr[nid] for nid in node_ids] for fr in path.frames], float).reshape(len(path.frames), -1, 2)
    cycle = path.ended.get("forward") == "full cycle"
    size = scheme.size()
    moving = np.max(np.linalg.norm(P - P[path.start][None], axis=2), axis=0) > 1e-9 * size
    member_nodes = {mid: (index[m.start], index[m.end]) for mid, m in scheme.members.items()}
    V = None if path.linearised else node_velocities(P, cycle)
    bodies = []
    for k, piece in enumerate(path.bodies, start=1):
        idx = np.array(sorted({i for mid in piece.members for i in member_nodes[mid]}), int)
        F = P.shape[0]
        if V is None:
            centres = np.full((F, 2), np.nan)
            directions = np.full((F, 2), np.nan)
        else:
            centres, directions = instant_centres(P[:, idx], V[:, idx])
            pinned = [i for i in idx if not moving[i]]
            if pinned:  # a rigid body with a point that never moves turns about that point
                centres = P[:, pinned[0]].copy()
                directions = np.full((F, 2), np.nan)
        # the drawn position (and a linearised path throughout): the exact first-order centres
        rows = range(F) if V is None else [path.start] + ([F - 1] if cycle and path.start == 0 else [])
        for r in rows:
            if piece.centre is not None:
                centres[r] = piece.centre
                directions[r] = np.nan
            else:
                centres[r] = np.nan
                directions[r] = piece.direction
        bodies.append(BodyTrack(f"B{k}", tuple(piece.members), idx, centres, directions))
    data = MotionData(revision, spec, path.motion, path.linearised, node_ids, P, path.start, dict(path.ended),
                      bodies, list(path.fixed_members), moving, member_nodes,
                      [(md.index, md.kind) for md in path.modes], path.mode, path.driver, path.residual,
                      path.note, verdict.reason)
    data.marks = scrubber_marks(data, path.events)
    data.seconds = time.perf_counter() - t0
    data.thread = threading.get_ident()
    return data


def scrubber_marks(data: MotionData, events: list[dict]) -> list[Mark]:
    """The drawn position, how each direction ended, and bifurcations passed."""
    marks = [Mark(data.start, "drawn", "drawn position")]
    if data.linearised:
        return marks
    last = data.frames - 1
    if not data.cycle:
        for frame, side in ((0, "backward"), (last, "forward")):
            end = data.ended.get(side, "")
            if frame != data.start and end in ("dead centre", "clash", "limit"):
                words = {"dead centre": "dead centre (toggle position)", "clash": "members touch",
                         "limit": "end of the traced range"}[end]
                marks.append(Mark(frame, end, f"{side} end: {words}"))
    for ev in events:
        step = int(ev.get("step", 0))
        frame = data.start + step if ev.get("direction") == "forward" else data.start - step
        if 0 <= frame <= last:
            marks.append(Mark(frame, "bifurcation", f"passed a {ev.get('kind', 'bifurcation')}"))
    return marks


def frame_label(data: MotionData, k: int) -> str:
    """Words for frame ``k``: where it is along the path."""
    n = data.frames
    here = [m.text for m in data.marks if m.frame == k]
    if data.linearised:
        amp = (k - data.start) / max(data.start, 1)
        return f"linearised, {amp:+.2f} of the shown amplitude" + (" (drawn position)" if k == data.start else "")
    if data.cycle:
        pct = 100.0 * k / max(n - 1, 1)
        return f"{pct:.0f} % of the cycle" + (" (drawn position)" if k in (0, n - 1) else "")
    side = "forward" if k > data.start else "backward"
    steps = abs(k - data.start)
    base = "drawn position" if steps == 0 else f"{side}, step {steps}"
    extra = [t for t in here if t != "drawn position"]
    return base + (f" ({'; '.join(extra)})" if extra else "")


def travel(data: MotionData, k: int) -> float:
    """Largest distance of a node from the drawn position at frame ``k`` (model units)."""
    return float(np.max(np.linalg.norm(data.P[k] - data.P[data.start], axis=1))) if data.P.size else 0.0

