"""Finite-motion tracing of a mechanism on the exact nonlinear constraints.

Predictor-corrector continuation on ``Phi(q) = 0`` (:mod:`.constraints`): the predictor
steps along the unit tangent ``t``; the corrector is Newton (minimum-norm Gauss-Newton)
on ``[Phi(y); t . (y - q) - h] = 0`` (pseudo-arclength, H. B. Keller (1977); E. Allgower &
K. Georg (1990), *Numerical Continuation Methods*).  The new tangent is the previous one
projected onto the null space of Phi_q at the new point, so the path keeps to the chosen
mode (or combination) and to the same assembly branch; it shoots through simple
bifurcations (sign change of det[Phi_q; t^T], recorded as an event).

Adaptive step: no joint point moves more than ``STEP_DISP`` of the model size and no member
turns more than ``STEP_ROT`` per step; the step halves when Newton fails, needs many
iterations, or the tangent or the secant turns by more than ``MAX_TURN``, and grows after
easy steps.

Ends of a direction:

* ``"dead centre"``: the driving member (the shortest member pinned to a fixed point that
  moves in the mode) reverses; located to rounding accuracy by Brent's method on its
  angular rate, the toggle position of the linkage (Freudenstein's toggle angles for a
  four-bar);
* ``"clash"``: two members that did not touch in the drawn position come to touch (or two
  members at a joint fold onto each other), located by bisection (shapely geometry);
* ``"full cycle"``: the scheme comes back to the drawn position (then the path is one
  closed loop and the other direction is not traced);
* ``"limit"``: the step budget is spent, a joint has travelled ``MAX_TRAVEL`` model sizes,
  or the corrector can go no further.

An infinitesimal mechanism is never traced: :func:`trace` returns it linearised (drawn
position plus a multiple of the mode, amplitude without physical meaning) and says so.
"""
from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np
import scipy.optimize as opt
import scipy.sparse as sp

from .bodies import Mode, Piece, canonical_modes, combine, rigid_pieces
from .constraints import DENSE_MAX_VARS, ConstraintModel, lsq_step, null_space
from .model import Scheme, arc_points
from .secondorder import Verdict, assess

#: largest joint displacement per step, fraction of the model size
STEP_DISP = 1.0 / 25
#: largest member rotation per step (radians)
STEP_ROT = math.radians(3.0)
#: largest turn of the tangent (or the secant) in one step
MAX_TURN = math.radians(15.0)
#: stop ("limit") once a joint has moved this many model sizes from the drawn position
MAX_TRAVEL = 2.5
#: default number of steps in each direction
DEFAULT_STEPS = 400
#: amplitude of a linearised (infinitesimal) mode: fastest joint moves this fraction of the size
LINEAR_AMPLITUDE = 0.05
ENDS = ("full cycle", "dead centre", "clash", "limit")


@dataclass
class Path:
    """A traced (or linearised) mechanism motion."""

    motion: str
    linearised: bool
    #: node id -> (x, y) for every node, ordered along the path
    frames: list[dict[str, tuple[float, float]]]
    #: index of the drawn position in ``frames``
    start: int
    ended: dict[str, str]
    #: moving rigid pieces at the drawn position, in the traced mode
    bodies: list[Piece]
    fixed_members: list[str]
    mode: int | None
    modes: list[Mode]
    driver: str | None
    #: largest constraint residual along the path, fraction of model size (None if linearised)
    residual: float | None
    events: list[dict] = field(default_factory=list)
    note: str = ""
    verdict: Verdict | None = None
    seconds: float = 0.0

    def to_json(self) -> dict:
        scale = max(abs(v) for f in self.frames for xy in f.values() for v in xy) if self.frames else 1.0
        out = {
            "motion": self.motion,
            "linearised": self.linearised,
            "mode": self.mode,
            "modes": [{"index": md.index, "kind": md.kind,
                       "nodes": {k: [_clean(v[0], 1.0), _clean(v[1], 1.0)] for k, v in md.node_velocities.items()}}
                      for md in self.modes],
            "frames": [{"nodes": {k: [_clean(x, scale), _clean(y, scale)] for k, (x, y) in f.items()}}
                       for f in self.frames],
            "start_frame": self.start,
            "bodies": [_piece_json(p, scale) for p in self.bodies],
            "fixed_members": list(self.fixed_members),
            "ended": dict(self.ended),
            "driver": self.driver,
            "residual": self.residual,
            "events": list(self.events),
            "note": self.note,
        }
        if self.verdict is not None:
            out["reason"] = self.verdict.reason
        return out


def _clean(v: float, scale: float) -> float:
    """Rounding noise around zero (below 1e-12 of the drawing's extent) printed as 0."""
    return 0.0 if abs(v) <= 1e-12 * max(scale, 1.0) else float(v)


def _piece_json(p: Piece, scale: float) -> dict:
    d = p.to_json()
    if d["centre"] is not None:
        d["centre"] = [_clean(d["centre"][0], scale), _clean(d["centre"][1], scale)]
    else:
        d["direction"] = [_clean(d["direction"][0], 1.0), _clean(d["direction"][1], 1.0)]
    return d


# ---------------------------------------------------------------------- helpers
def tangent(model: ConstraintModel, y: np.ndarray, t_prev: np.ndarray) -> tuple[np.ndarray | None, float]:
    """``t_prev`` projected onto null(Phi_q(y)), normalised; and the cosine of the turn."""
    J = model.jacobian(y)
    dx = lsq_step(J, J @ t_prev) if model.r else np.zeros_like(t_prev)
    t = t_prev - dx
    n = float(np.linalg.norm(t))
    if n < 1e-12:
        return None, 0.0
    return t / n, n / float(np.linalg.norm(t_prev))


def member_rates(model: ConstraintModel, q: np.ndarray, t: np.ndarray) -> dict[str, float]:
    """Angular rate of every member's chord along ``t`` (radians per unit of ``t``)."""
    return dict(zip(model.member_ids, member_rate_array(model, q, t).tolist()))


def member_rate_array(model: ConstraintModel, q: np.ndarray, t: np.ndarray) -> np.ndarray:
    """:func:`member_rates` as an array in scheme member order."""
    P = model.attachment_positions(q)
    dP = model.attachment_velocities(q, t)
    g = P[model.member_b] - P[model.member_a]
    dg = dP[model.member_b] - dP[model.member_a]
    return (g[:, 0] * dg[:, 1] - g[:, 1] * dg[:, 0]) / np.einsum("ij,ij->i", g, g)


def fixed_points(scheme: Scheme) -> set[str]:
    """Nodes whose support stops both translations (they stay put in any motion)."""
    out = set()
    for nid, sup in scheme.supports.items():
        dirs = sup.directions()
        if len(dirs) == 2 and abs(dirs[0][0] * dirs[1][1] - dirs[0][1] * dirs[1][0]) > 1e-9:
            out.add(nid)
    return out


def choose_driver(model: ConstraintModel, t0: np.ndarray) -> str | None:
    """The member whose reversal marks a dead centre: the shortest member pinned to a fixed point
    that turns in the mode (the crank of a crank-rocker, Grashof 1883); else the fastest-turning
    member; None when nothing turns (a translation)."""
    rates = member_rates(model, model.q0, t0)
    if not rates:
        return None
    top = max(abs(r) for r in rates.values())
    if top <= 1e-9 * np.linalg.norm(model.attachment_velocities(model.q0, t0), axis=1).max() / max(model.size / model.lref, 1):
        return None
    fixed = fixed_points(model.scheme)
    sch = model.scheme

    def chord(mid):
        m = sch.members[mid]
        (x0, y0), (x1, y1) = sch.node_xy(m.start), sch.node_xy(m.end)
        return math.hypot(x1 - x0, y1 - y0)

    def key(mid):
        m = sch.members[mid]
        (x0, y0), (x1, y1) = sch.node_xy(m.start), sch.node_xy(m.end)
        return (round(chord(mid) / model.size, 9), -round(abs(rates[mid]) / top, 9),
                round((x0 + x1) / 2, 9), round((y0 + y1) / 2, 9))

    grounded = [mid for mid, m in sch.members.items()
                if (m.start in fixed or m.end in fixed) and abs(rates[mid]) > 1e-6 * top]
    if grounded:
        return min(grounded, key=key)
    return max(rates, key=lambda mid: (abs(rates[mid]), mid))


class ClashCheck:
    """Members passing through each other (shapely).

    A clash is a pair of members *not joined at a common node* whose lines come to touch
    or cross although they did not in the drawn position.  Members joined at a node may
    turn past one another (at a pin they sit side by side, as the crank and the coupler of
    a crank-rocker do through a full turn).
    """

    def __init__(self, model: ConstraintModel):
        self.model = model
        sch = model.scheme
        self.ids = model.member_ids
        self.curved = {mid for mid in self.ids if sch.members[mid].rise}
        at: dict[str, list[int]] = {}
        for k, mid in enumerate(self.ids):
            for nid in {sch.members[mid].start, sch.members[mid].end}:
                at.setdefault(nid, []).append(k)
        self.joined: set[tuple[int, int]] = set()
        for ks in at.values():
            for i, a in enumerate(ks):
                for b in ks[i + 1:]:
                    self.joined.add((min(a, b), max(a, b)))
        self.initial = self.touching(model.q0)

    def geometries(self, q: np.ndarray):
        import shapely

        m = self.model
        P = m.attachment_positions(q) * m.lref
        A, B = P[m.member_a], P[m.member_b]
        lines = shapely.linestrings(np.stack([A, B], axis=1))
        for k, mid in enumerate(self.ids):
            if mid in self.curved:
                rise = m.scheme.members[mid].rise
                lines[k] = shapely.LineString(arc_points(tuple(A[k]), tuple(B[k]), rise, 16))
        return list(lines)

    def touching(self, q: np.ndarray) -> set[tuple[int, int]]:
        import shapely

        geoms = self.geometries(q)
        if len(geoms) < 2:
            return set()
        tree = shapely.STRtree(geoms)
        left, right = tree.query(geoms, predicate="intersects")
        return {(a, b) for a, b in zip(left.tolist(), right.tolist()) if a < b and (a, b) not in self.joined}

    def new_pairs(self, q: np.ndarray) -> list[tuple[str, str]]:
        return [(self.ids[a], self.ids[b]) for a, b in sorted(self.touching(q) - self.initial)]

    def crossed(self, q0: np.ndarray, q1: np.ndarray) -> bool:
        """Whether an end of one member sweeps through another between two positions.

        Positions are interpolated linearly over the step; with ``u`` a member's chord and
        ``w`` the vector from its start to the other member's end, ``u x w`` is a quadratic
        in the step fraction, and a root with the end inside the chord is a crossing.
        Catches members that pass through each other within one step.
        """
        import shapely

        m = self.model
        P0, P1 = m.attachment_positions(q0) * m.lref, m.attachment_positions(q1) * m.lref
        A0, B0 = P0[m.member_a], P0[m.member_b]
        A1, B1 = P1[m.member_a], P1[m.member_b]
        lo = np.minimum.reduce([A0, B0, A1, B1]); hi = np.maximum.reduce([A0, B0, A1, B1])
        boxes = shapely.box(lo[:, 0], lo[:, 1], hi[:, 0], hi[:, 1])
        left, right = shapely.STRtree(boxes).query(boxes, predicate="intersects")
        keep = [(a, b) for a, b in zip(left.tolist(), right.tolist())
                if a < b and (a, b) not in self.joined and (a, b) not in self.initial]
        if not keep:
            return False
        I = np.array([k[0] for k in keep]); J = np.array([k[1] for k in keep])
        for seg, pts in ((I, J), (J, I)):
            a0, a1 = A0[seg], A1[seg]
            u0, du = B0[seg] - a0, (B1[seg] - a1) - (B0[seg] - a0)
            for P0, P1 in ((A0[pts], A1[pts]), (B0[pts], B1[pts])):
                w0 = P0 - a0
                dw = (P1 - a1) - w0
                c0 = _cross(u0, w0)
                c1 = _cross(u0, dw) + _cross(du, w0)
                c2 = _cross(du, dw)
                for tau in _roots01(c0, c1, c2):
                    ok = np.isfinite(tau)
                    if not ok.any():
                        continue
                    t = np.where(ok, tau, 0.0)[:, None]
                    u = u0 + t * du
                    w = w0 + t * dw
                    sfrac = np.einsum("ij,ij->i", u, w) / np.maximum(np.einsum("ij,ij->i", u, u), 1e-300)
                    if np.any(ok & (sfrac > 1e-9) & (sfrac < 1 - 1e-9)):
                        return True
        return False


def _cross(u: np.ndarray, v: np.ndarray) -> np.ndarray:
    return u[:, 0] * v[:, 1] - u[:, 1] * v[:, 0]


def _roots01(c0: np.ndarray, c1: np.ndarray, c2: np.ndarray) -> list[np.ndarray]:
    """Real roots in (0, 1] of c0 + c1 t + c2 t^2 (elementwise; nan where there is none)."""
    nan = np.full(c0.shape, np.nan)
    scale = np.maximum.reduce([np.abs(c0), np.abs(c1), np.abs(c2), np.full(c0.shape, 1e-300)])
    quad = np.abs(c2) > 1e-12 * scale
    disc = c1 * c1 - 4 * c2 * c0
    sq = np.sqrt(np.where(quad & (disc >= 0), disc, 0.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        r1 = np.where(quad & (disc >= 0), (-c1 - sq) / (2 * c2), nan)
        r2 = np.where(quad & (disc >= 0), (-c1 + sq) / (2 * c2), nan)
        lin = ~quad & (np.abs(c1) > 1e-12 * scale)
        r3 = np.where(lin, -c0 / np.where(lin, c1, 1.0), nan)
    out = []
    for r in (r1, r2, r3):
        out.append(np.where((r > 0) & (r <= 1), r, nan))
    return out


# ---------------------------------------------------------------------- the tracer
class Tracer:
    """Follows the solution curve from the drawn position along a unit tangent (both signs)."""

    def __init__(self, model: ConstraintModel, t0: np.ndarray, driver: str | None, max_steps: int = DEFAULT_STEPS,
                 clash: bool = True):
        self.model = model
        self.t0 = t0 / np.linalg.norm(t0)
        self.driver = driver
        self.max_steps = max_steps
        self.clash = ClashCheck(model) if clash and len(model.scheme.members) > 1 else None
        self.X0 = model.attachment_positions(model.q0)
        self.disp = STEP_DISP * model.size / model.lref  # nondimensional
        self.max_residual = model.residual(model.q0)
        self.events: list[dict] = []

    # -- measures
    def rate(self, q: np.ndarray, t: np.ndarray) -> float:
        if self.driver is None:
            return float(t @ self.t0)
        a, b = self.model.member_att[self.driver]
        P = self.model.attachment_positions(q)
        dP = self.model.attachment_velocities(q, t)
        g, dg = P[b] - P[a], dP[b] - dP[a]
        return float((g[0] * dg[1] - g[1] * dg[0]) / (g @ g))

    def cap(self, q: np.ndarray, t: np.ndarray) -> float:
        dP = self.model.attachment_velocities(q, t)
        vmax = float(np.max(np.linalg.norm(dP, axis=1))) if dP.size else 0.0
        rates = member_rate_array(self.model, q, t)
        wmax = float(np.abs(rates).max()) if rates.size else 0.0
        h = math.inf
        if vmax > 0:
            h = self.disp / vmax
        if wmax > 0:
            h = min(h, STEP_ROT / wmax)
        return h if math.isfinite(h) else self.disp

    def _det_sign(self, q: np.ndarray, t: np.ndarray) -> int | None:
        """Sign of det[Phi_q; t^T] (small square systems only); 0 at a singular point."""
        m = self.model
        if m.r != m.n - 1 or m.n > DENSE_MAX_VARS:
            return None
        M = np.vstack([m.jac_dense(q), t[None, :]])
        sign, logdet = np.linalg.slogdet(M)
        # relative to Hadamard's bound: a determinant this small is a singular point
        bound = float(np.sum(np.log(np.maximum(np.linalg.norm(M, axis=1), 1e-300))))
        if sign == 0 or logdet - bound < math.log(1e-9):
            return 0
        return int(sign)

    def _step(self, q: np.ndarray, t: np.ndarray, h: float):
        y, ok, it, _ = self.model.project(q + h * t, (t, float(t @ q) + h))
        return y, ok, it

    # -- one direction
    def follow(self, sign: float):
        model = self.model
        q = model.q0.copy()
        t = sign * self.t0
        rate_prev = self.rate(q, t)
        h0 = self.cap(q, t)
        h = h0
        det_prev = self._det_sign(q, t)
        far = False
        longest = 0.0
        cos_max = math.cos(MAX_TURN)
        out: list[np.ndarray] = []
        for step in range(self.max_steps):
            hcap = self.cap(q, t)
            h = min(h, hcap)
            while True:
                y, ok, it = self._step(q, t, h)
                if ok:
                    t_new, cosang = tangent(model, y, t)
                    sec = y - q
                    cos_sec = float(sec @ t) / max(float(np.linalg.norm(sec)), 1e-300)
                    if t_new is not None and cosang >= cos_max and cos_sec >= cos_max and it <= 8:
                        break
                h *= 0.5
                if h < 1e-9 * h0:
                    return out, "limit"
            self.max_residual = max(self.max_residual, model.residual(y))
            # dead centre: the driver reverses
            rate = self.rate(y, t_new)
            if rate_prev != 0.0 and rate * rate_prev < 0.0:
                y_t = self._locate_toggle(q, t, h, rate_prev, rate)
                out.append(y_t)
                self.max_residual = max(self.max_residual, model.residual(y_t))
                return out, "dead centre"
            # members passing through each other
            if self.clash is not None and (self.clash.new_pairs(y) or self.clash.crossed(q, y)):
                y_c = self._locate_clash(q, t, h)
                if y_c is not None:
                    out.append(y_c)
                    self.max_residual = max(self.max_residual, model.residual(y_c))
                return out, "clash"
            # bifurcation passed (shoot through, same branch)
            det = self._det_sign(y, t_new)
            if det and det_prev and det != det_prev:
                self.events.append({"kind": "bifurcation", "direction": "forward" if sign > 0 else "backward",
                                    "step": len(out) + 1})
            if det:
                det_prev = det
            # back at the drawn position
            Xq = model.attachment_positions(q)
            Xy = model.attachment_positions(y)
            dist = float(np.max(np.linalg.norm(Xy - self.X0, axis=1)))
            step_len = float(np.max(np.linalg.norm(Xy - Xq, axis=1)))
            longest = max(longest, step_len)
            if not far and dist > 4 * longest:
                far = True
            if far:
                seg = (Xy - Xq).ravel()
                lam = float(np.clip(((self.X0 - Xq).ravel() @ seg) / max(seg @ seg, 1e-300), 0.0, 1.0))
                gap = float(np.max(np.linalg.norm(Xq + lam * (Xy - Xq) - self.X0, axis=1)))
                if gap <= 0.25 * max(step_len, 1e-12):
                    if lam >= 1.0 - 1e-12:
                        out.append(y)
                    out.append(model.q0.copy())
                    return out, "full cycle"
            out.append(y)
            if dist * model.lref > MAX_TRAVEL * model.size:
                return out, "limit"
            q, t, rate_prev = y, t_new, rate
            if it <= 3:
                h = min(1.6 * h, self.cap(q, t))
        return out, "limit"

    def _point_at(self, q, t, hh):
        if hh <= 0:
            return q, t
        y, ok, _ = self._step(q, t, hh)
        tt, _ = tangent(self.model, y, t)
        return y, (tt if tt is not None else t)

    def _locate_toggle(self, q, t, h, r0, r1):
        """Brent's method on the driver's rate between the last two points (root = dead centre)."""
        def f(hh):
            y, tt = self._point_at(q, t, hh)
            return self.rate(y, tt)
        try:
            hh = opt.brentq(f, 0.0, h, xtol=1e-14 * max(h, 1e-300), rtol=1e-15, maxiter=100)
        except ValueError:
            hh = h * r0 / (r0 - r1)
        y, _ = self._point_at(q, t, hh)
        return y

    def _locate_clash(self, q, t, h):
        """Bisection for the last clash-free point before two members touch."""
        lo, hi = 0.0, h
        best = None
        for _ in range(40):
            mid = 0.5 * (lo + hi)
            y, ok, _ = self._step(q, t, mid)
            if ok and not self.clash.new_pairs(y) and not self.clash.crossed(q, y):
                lo, best = mid, y
            else:
                hi = mid
            if hi - lo <= 1e-10 * h:
                break
        return best


# ---------------------------------------------------------------------- entry point
def trace(scheme: Scheme, mode: int = 1, weights=None, steps: int = DEFAULT_STEPS, *,
          model: ConstraintModel | None = None, verdict: Verdict | None = None, clash: bool = True) -> Path:
    """Trace the mechanism of ``scheme`` along canonical mode ``mode`` (1-based) or a combination.

    ``weights`` (one per mode) selects a combination instead of a single mode.  Raises
    ``ValueError`` when the scheme has no mechanism or the mode number is out of range.
    """
    t_start = time.perf_counter()
    model = model or ConstraintModel(scheme)
    verdict = verdict or assess(model)
    if verdict.motion == "none":
        raise ValueError("the scheme has no mechanism: nothing moves")
    nul = verdict.nullity or null_space(model)
    if nul.mech_basis is None:
        raise ValueError(f"{nul.m} mechanisms on a model this large: too many to trace one by one")
    modes = canonical_modes(model, nul.mech_basis)
    if weights is not None:
        d_req = combine(modes, weights)
        mode_no = None
    else:
        if not 1 <= mode <= len(modes):
            raise ValueError(f"mode {mode} does not exist: the scheme has {len(modes)} mode(s) (1 to {len(modes)})")
        d_req = modes[mode - 1].q
        mode_no = mode
    if np.linalg.norm(d_req) == 0:
        raise ValueError("the mode combination is zero")
    d_req = d_req / np.linalg.norm(d_req)
    pieces, still = rigid_pieces(model, model.q0, d_req)

    if verdict.motion == "infinitesimal":
        return _linearised(model, d_req, steps, pieces, still, mode_no, modes, verdict, t_start)

    note = ""
    t0 = d_req
    if nul.s_rows and verdict.directions:
        # with self-stress only some directions extend: take the finite one nearest the request
        V = model.velocity_matrix(model.q0)
        yreq = V @ d_req
        best = max(verdict.directions, key=lambda d: abs(float((V @ d) @ yreq)) / np.linalg.norm(V @ d))
        cosang = abs(float((V @ best) @ yreq)) / (np.linalg.norm(V @ best) * np.linalg.norm(yreq))
        t0 = best if float((V @ best) @ yreq) >= 0 else -best
        if cosang < 1 - 1e-9:
            note = ("the requested mode does not extend to a finite motion by itself; traced along the "
                    f"nearest finite direction (cosine {cosang:.3f} to the request)")
            pieces, still = rigid_pieces(model, model.q0, t0)
    driver = choose_driver(model, t0)
    tracer = Tracer(model, t0, driver, max_steps=steps, clash=clash)
    fwd, end_f = tracer.follow(+1.0)
    if end_f == "full cycle":
        qs = [model.q0] + fwd
        start = 0
        ended = {"forward": "full cycle", "backward": "full cycle"}
    else:
        bwd, end_b = tracer.follow(-1.0)
        qs = list(reversed(bwd)) + [model.q0] + fwd
        start = len(bwd)
        ended = {"forward": end_f, "backward": end_b}
    frames = [model.node_positions(q) for q in qs]
    if end_f == "full cycle":
        frames[-1] = dict(frames[0])
    return Path("finite", False, frames, start, ended, pieces, still, mode_no, modes, driver,
                tracer.max_residual, tracer.events, note, verdict, time.perf_counter() - t_start)


def _linearised(model, d, steps, pieces, still, mode_no, modes, verdict, t_start) -> Path:
    """Drawn position plus multiples of the mode: for showing an infinitesimal mechanism only."""
    v = model.attachment_velocities(model.q0, d) * model.lref
    P0 = model.attachment_positions(model.q0) * model.lref
    vmax = float(np.max(np.linalg.norm(v, axis=1))) or 1.0
    amp = LINEAR_AMPLITUDE * model.size / vmax
    k = max(2, min(int(steps), 40) // 2)
    frames: list[dict[str, tuple[float, float]]] = []
    for a in np.linspace(-amp, amp, 2 * k + 1):
        frames.append(model.nodes_from_points(P0 + a * v))
    note = ("infinitesimal mechanism: shown linearised; the amplitude has no physical meaning (the scheme "
            "locks at second order or higher)")
    return Path("infinitesimal", True, frames, k, {"forward": "limit", "backward": "limit"}, pieces, still,
                mode_no, modes, None, None, [], note, verdict, time.perf_counter() - t_start)
