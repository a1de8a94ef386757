"""Words for a checker: why the hand count misleads, and near-singular geometry.

The hand count equals s - m exactly (Calladine 1978), so when m > 0 while the count is
zero or positive the count has been "made up" by states of self-stress.  The causes a
practitioner knows by name are detected from the mechanism modes and the geometry:
parallel reactions, concurrent reaction lines, collinear members at a pinned joint, an
unbraced panel (a mechanism next to an over-braced part), and releases that add a
mechanism (a release that depends on others).
"""
from __future__ import annotations

import math

import numpy as np

from .assemble import Finding
from .model import Scheme


def _fmt(x: float) -> str:
    return f"{x:.4g}"


def _reaction_lines(scheme: Scheme, system) -> tuple[list[tuple[np.ndarray, np.ndarray, str]], bool]:
    """(point, direction, node id) of each translational reaction; whether a rotation restraint acts."""
    lines, rot = [], False
    for nid, cols in system.reaction_cols.items():
        sup = scheme.supports[nid]
        p = np.array(scheme.node_xy(nid))
        for d in sup.directions():
            lines.append((p, np.array(d), nid))
        rot = rot or any(system.cols[c][2] == "rotation" for c in cols)
    return lines, rot


def _concurrency_point(lines) -> tuple[np.ndarray | None, float]:
    """Least-squares common point of the reaction lines and the largest distance to it."""
    if len(lines) < 2:
        return None, math.inf
    N = np.array([[-d[1], d[0]] for _, d, _ in lines])
    b = np.array([n @ p for (p, _, _), n in zip(lines, N)])
    if np.linalg.matrix_rank(N, tol=1e-9) < 2:
        return None, math.inf
    pt, *_ = np.linalg.lstsq(N, b, rcond=None)
    dist = float(np.max(np.abs(N @ pt - b)))
    return pt, dist


def _support_reason(scheme: Scheme, result) -> list[str]:
    system = result.system
    lines, rot = _reaction_lines(scheme, system)
    out = []
    size = scheme.size()
    if rot:
        return out
    if len(lines) < 3:
        return out
    dirs = np.array([d / np.linalg.norm(d) for _, d, _ in lines])
    cross = np.abs(dirs[:, 0] * dirs[0, 1] - dirs[:, 1] * dirs[0, 0])
    nodes = sorted({nid for _, _, nid in lines})
    if np.all(cross < 1e-9):
        ang = math.degrees(math.atan2(dirs[0, 1], dirs[0, 0])) % 180
        out.append(f"parallel reactions: every support reaction (at {', '.join(nodes)}) acts along the same "
                   f"direction ({_fmt(ang)}°), so nothing stops the scheme sliding across it, however many "
                   "supports are counted")
        return out
    pt, dist = _concurrency_point(lines)
    if pt is not None:
        pt = np.where(np.abs(pt) <= 1e-9 * size, 0.0, pt)  # drop rounding noise
    if pt is not None and dist <= 1e-9 * size:
        out.append(f"concurrent reaction lines: every support reaction line (at {', '.join(nodes)}) passes "
                   f"through ({_fmt(pt[0])}, {_fmt(pt[1])}), so the scheme can turn about that point")
    return out


def _collinear_joints(scheme: Scheme, system, rel_tol: float) -> list[tuple[str, str, str, float, float]]:
    """Pinned joints (no rotation DOF) where exactly two members meet almost in line.

    Returns (node, member a, member b, offset of the node from the line through the far
    ends, that offset relative to the shorter member) for relative offsets up to ``rel_tol``.
    """
    cache = getattr(system, "_collinear_cache", None)
    if cache is None:
        cache = system._collinear_cache = _collinear_candidates(scheme, system)
    return [c for c in cache if c[4] <= rel_tol]


def _collinear_candidates(scheme: Scheme, system) -> list[tuple[str, str, str, float]]:
    """Pinned joints joining exactly two straight members, with their offset from the line."""
    me = system.member_ends
    nn = len(system.node_ids)
    deg = np.bincount(me.ravel(), minlength=nn) if me.size else np.zeros(nn, int)
    two = set(np.nonzero(deg == 2)[0].tolist())
    ends: dict[str, list[str]] = {}
    mids = list(scheme.members)
    for k in np.nonzero(np.isin(me[:, 0], list(two)) | np.isin(me[:, 1], list(two)))[0].tolist():
        for idx in me[k].tolist():
            if idx in two:
                ends.setdefault(system.node_ids[idx], []).append(mids[k])
    cand = [(nid, ms) for nid, ms in ends.items()
            if len(ms) == 2 and system.node_dof[nid][2] is None]
    if not cand:
        return []
    mem = scheme.members
    P = np.array([scheme.node_xy(nid) for nid, _ in cand])
    PA = np.array([scheme.node_xy(mem[a].other_end(nid)) for nid, (a, b) in cand])
    PB = np.array([scheme.node_xy(mem[b].other_end(nid)) for nid, (a, b) in cand])
    D = PB - PA
    L = np.hypot(D[:, 0], D[:, 1])
    Ls = np.where(L > 0, L, 1.0)
    W = P - PA
    off = np.abs(D[:, 0] * W[:, 1] - D[:, 1] * W[:, 0]) / Ls
    between = (W[:, 0] * D[:, 0] + W[:, 1] * D[:, 1]) / (Ls * Ls)
    la = np.hypot(*(P - PA).T)
    lb = np.hypot(*(P - PB).T)
    short = np.minimum(la, lb)
    rel = off / np.where(short > 0, short, 1.0)
    keep = np.nonzero((L > 0) & (rel <= 1e-3) & (between > 0) & (between < 1))[0]
    out = []
    for k in keep.tolist():
        nid, (a, b) = cand[k]
        if mem[a].rise == 0 and mem[b].rise == 0:
            out.append((nid, a, b, float(off[k]), float(rel[k])))
    return out


def explain(scheme: Scheme, result) -> list[str]:
    """Explanations of any disagreement between the hand count and the rank result."""
    m, s, D = result.mechanisms, result.self_stress, result.count.value
    out: list[str] = []
    if m == 0:
        return out
    if D >= 0:
        out.append(f"The hand count gives {D}, but the rank shows {m} mechanism{'s' if m != 1 else ''} "
                   f"and {s} state{'s' if s != 1 else ''} of self-stress: a count only gives s - m = {D}, "
                   "so it cannot see the following:")
    system = result.system
    if result.rigid_body_mechanisms > 0:
        reasons = _support_reason(scheme, result)
        if reasons:
            out.extend(reasons)
        else:
            out.append(f"the supports leave {result.rigid_body_mechanisms} rigid-body motion"
                       f"{'s' if result.rigid_body_mechanisms != 1 else ''} of the scheme free")
    for nid, a, b, _, _ in _collinear_joints(scheme, system, 1e-9):
        out.append(f"collinear members: {a} and {b} meet in line at the pinned joint {nid}, which can move "
                   "across that line (only infinitesimally; the members would have to stretch)")
    # mechanisms that live in the releases only
    if result.mechanism_basis is not None and result.mechanism_basis.shape[1] == m:
        node_rows = [r for r, (k, _, _) in enumerate(system.rows) if k != "release"]
        rel_rows = [r for r, (k, _, _) in enumerate(system.rows) if k == "release"]
        B = result.mechanism_basis
        if rel_rows:
            # combinations with no nodal motion at all
            Bn = B[node_rows, :]
            sv = np.linalg.svd(Bn, compute_uv=False) if Bn.size else np.zeros(0)
            k_rel = int(np.count_nonzero(sv < 1e-8)) + max(0, B.shape[1] - len(sv))
            if k_rel > 0:
                mids = sorted({system.rows[r][1] for r in rel_rows
                               if np.abs(B[r, :]).max() > 1e-6})
                out.append(f"a release that adds a mechanism: the releases of {', '.join(mids)} depend on "
                           "each other (e.g. a shear release in a member already moment-released at both "
                           "ends, which carries no shear anyway), so the member can deform without any "
                           "node moving")
    if len(out) == (1 if D >= 0 else 0):
        triple = _hinges_in_line(scheme, system, _moving_nodes(result)[:12])
        if triple is not None and triple[3] <= 1e-9 * scheme.size():
            h, a, b, _ = triple
            out.append(f"three hinges in line: hinge {h} lies on the line through the pinned supports {a} and "
                       f"{b}, so the two parts it joins can turn together (only infinitesimally: the first "
                       "movement already stretches the line)")
    if len(out) == (1 if D >= 0 else 0) and (D >= 0 or len(scheme.members) <= 200) \
            and len(scheme.members) <= 5000:
        for quad in _unbraced_panels(scheme, result)[:3]:
            out.append(f"unbraced panel: {'–'.join(quad)} has no diagonal, so it can shear (a four-sided "
                       "panel of pin-ended members is a mechanism however many members the rest has)")
    specific = len(out) - (1 if D >= 0 else 0)
    if specific == 0 and s > 0 and D >= 0:
        moving = _moving_nodes(result)
        stressed = _stressed_members(result)
        where = ""
        if moving:
            where += f" the mechanism moves {', '.join(moving[:6])}{'...' if len(moving) > 6 else ''}"
        if stressed:
            where += (";" if where else "") + (f" the self-stress sits in {', '.join(stressed[:6])}"
                                               f"{'...' if len(stressed) > 6 else ''}")
        out.append("a mechanism in one part next to redundancy in another (for example an unbraced panel "
                   "beside a doubly braced one): the extra members do not stiffen the part that moves" +
                   (f" —{where}" if where else ""))
    elif specific == 0 and D >= 0:
        out.append("the geometry is special (members or reactions lined up so that they cannot act)")
    return out


def _moving_nodes(result) -> list[str]:
    """Nodes that move relative to their neighbours in the first mechanism mode."""
    if not result.modes:
        return []
    mode = result.modes[0]
    mags = {n: (dx * dx + dy * dy) ** 0.5 for n, (dx, dy) in mode.displacements.items()}
    return [n for n, v in mags.items() if v > 1e-6]


def _stressed_members(result) -> list[str]:
    S = result.self_stress_basis
    if S is None and result.system.shape[1] <= 2000:
        from .rank import null_space_basis

        S = null_space_basis(result.system.A, result.self_stress)
    if S is None or S.shape[1] == 0:
        return []
    system = result.system
    out = []
    for mid, cols in system.member_cols.items():
        if np.abs(S[cols, :]).max() > 1e-8:
            out.append(mid)
    return out


def near_singular_findings(scheme: Scheme, result) -> list[Finding]:
    """Warnings for geometry that is close to a mechanism (the verdict is kept).

    Decided by the rank policy: a stable scheme whose smallest retained singular value is
    isolated below ``NEAR_RTOL`` (see :mod:`.rank`).  The cause is then named where it is
    one a checker knows (a joint nearly in line, three hinges nearly in line, reaction
    lines nearly concurrent or parallel), with its margin; otherwise the nodes that would
    move most are listed.
    """
    from .rank import NEAR_GAP, NEAR_RTOL

    rr = result.rank
    if result.mechanisms > 0:
        return []
    smin, snext = rr.sigma_min_kept, rr.sigma_next
    if not (math.isfinite(smin) and smin <= NEAR_RTOL):
        return []
    if math.isfinite(snext) and snext < NEAR_GAP * smin:
        return []  # a soft band (e.g. a slender but sound truss), not one near-singular spot
    out: list[Finding] = []
    system = result.system
    size = scheme.size()
    units = scheme.units
    ratio = f"smallest stiffness ratio {_fmt(smin)}"
    moving: list[str] = []
    if rr.soft_vector is not None:
        v = rr.soft_vector
        mags = sorted(((math.hypot(v[iu], v[iv]), nid) for nid, (iu, iv, _) in system.node_dof.items()),
                      reverse=True)
        moving = [n for mag, n in mags[:8] if mag > 0.2 * mags[0][0]]
    for nid, a, b, off, rel in sorted(_collinear_joints(scheme, system, 1e-3), key=lambda c: c[4]):
        if moving and nid not in moving:
            continue
        out.append(Finding(
            f"near-singular geometry: joint {nid} is only {_fmt(off)} {units} ({_fmt(rel)} of the shorter "
            f"member) off the line of {a} and {b}; the scheme is stable but close to a mechanism ({ratio}), "
            "and forces there will be very large", (nid, a, b)))
        return out
    triple = _hinges_in_line(scheme, system, moving[:6])
    if triple is not None:
        h, a, b, off = triple
        out.append(Finding(
            f"near-singular geometry: hinge {h} is only {_fmt(off)} {units} ({_fmt(off / size)} of the "
            f"scheme size) off the line through the pinned supports {a} and {b} (three hinges nearly in "
            f"line); the scheme is stable but close to a mechanism ({ratio})", (h, a, b)))
        return out
    lines, rot = _reaction_lines(scheme, system)
    if not rot and len(lines) >= 3:
        nodes = tuple(sorted({nid for _, _, nid in lines}))
        dirs = np.array([d / np.linalg.norm(d) for _, d, _ in lines])
        ang = np.abs(np.arcsin(np.clip(dirs[:, 0] * dirs[0, 1] - dirs[:, 1] * dirs[0, 0], -1, 1)))
        if float(ang.max()) <= 1e-3:
            out.append(Finding(
                f"near-singular supports: the reactions at {', '.join(nodes)} are within "
                f"{_fmt(math.degrees(float(ang.max())))}° of parallel ({ratio})", nodes))
            return out
        pt, dist = _concurrency_point(lines)
        if pt is not None and dist <= 1e-3 * size:
            out.append(Finding(
                f"near-singular supports: the reaction lines at {', '.join(nodes)} nearly meet at one point "
                f"(({_fmt(pt[0])}, {_fmt(pt[1])}), within {_fmt(dist)} {units}); the scheme can barely "
                f"resist turning about it ({ratio})", nodes))
            return out
    top = tuple(moving[:3])
    out.append(Finding(
        f"near-singular geometry: the scheme is close to a mechanism ({ratio})"
        + (f"; the nodes that would move most: {', '.join(top)}" if top else ""), top))
    return out


def _hinges_in_line(scheme: Scheme, system, candidates: list[str]):
    """A pinned joint among ``candidates`` nearly on the line through two pinned supports.

    The classical three-hinge condition: two rigid parts joined by a hinge and each pinned
    to the ground form a mechanism when the three hinges lie on one line.
    Returns (hinge, support a, support b, offset) with the smallest offset, or None.
    """
    pins = [nid for nid, s in scheme.supports.items()
            if nid in system.node_dof and not s.fixes_rotation and len(s.directions()) == 2]
    best = None
    size = scheme.size()
    for h in candidates:
        if system.node_dof.get(h, (0, 0, 0))[2] is not None or h in pins:
            continue
        p = np.array(scheme.node_xy(h))
        for i, a in enumerate(pins):
            for b in pins[i + 1:]:
                pa, pb = np.array(scheme.node_xy(a)), np.array(scheme.node_xy(b))
                d = pb - pa
                L = float(np.linalg.norm(d))
                if L == 0:
                    continue
                q = p - pa
                off = abs(float(d[0] * q[1] - d[1] * q[0])) / L
                if off <= 1e-3 * size and (best is None or off < best[3]):
                    best = (h, a, b, off)
    return best


def _unbraced_panels(scheme: Scheme, result) -> list[tuple[str, str, str, str]]:
    """Four-sided panels without a diagonal that the first mechanism mode shears.

    A panel a-b-c-d (members a-b, b-c, c-d, d-a) shears in a mode when a diagonal would
    change length at first order: (v_c - v_a) . (x_c - x_a) != 0 or likewise for b-d.
    Only panels with pinned corners (no rotation DOF, or a rotation released) count.
    """
    if not result.modes:
        return []
    mode = result.modes[0]
    disp = mode.displacements
    adj: dict[str, set[str]] = {}
    for m in scheme.members.values():
        if m.rise:
            continue
        adj.setdefault(m.start, set()).add(m.end)
        adj.setdefault(m.end, set()).add(m.start)
    moving = {n for n, (dx, dy) in disp.items() if dx * dx + dy * dy > 1e-12}
    found = []
    seen = set()

    def rate(a: str, c: str) -> float:
        (xa, ya), (xc, yc) = scheme.node_xy(a), scheme.node_xy(c)
        (ua, va), (uc, vc) = disp.get(a, (0.0, 0.0)), disp.get(c, (0.0, 0.0))
        L = math.hypot(xc - xa, yc - ya) or 1.0
        return abs((uc - ua) * (xc - xa) + (vc - va) * (yc - ya)) / L

    for a in moving:
        for b in adj.get(a, ()):
            for c in adj.get(b, ()):
                if c == a:
                    continue
                for d in adj.get(c, ()):
                    if d in (a, b) or a not in adj.get(d, ()):
                        continue
                    key = frozenset((a, b, c, d))
                    if key in seen:
                        continue
                    seen.add(key)
                    if c in adj.get(a, ()) or d in adj.get(b, ()):
                        continue  # braced
                    if max(rate(a, c), rate(b, d)) > 1e-6:
                        found.append(_canonical_cycle((a, b, c, d)))
    return sorted(set(found))


def _canonical_cycle(cyc: tuple[str, str, str, str]) -> tuple[str, str, str, str]:
    """The same four-cycle whatever its start and direction (smallest id first)."""
    k = cyc.index(min(cyc))
    fwd = cyc[k:] + cyc[:k]
    back = (fwd[0],) + tuple(reversed(fwd[1:]))
    return min(fwd, back)
