"""The hand count of static indeterminacy, term by term as a practitioner writes it.

* Truss form (every member a bar): ``D = m + r - 2j`` (Maxwell's rule; J. C. Maxwell
  (1864), "On the calculation of the equilibrium and stiffness of frames", Phil. Mag. 27,
  294-299).
* Frame form: ``D = 3m + r - 3j - c`` with c the equations of condition: a full hinge
  joining n member ends gives n - 1, a moment release at one member end (a hinge drawn just
  off the joint) gives 1, a shear or an axial release gives 1 (standard textbook rule, e.g.
  A. Kassimali, *Structural Analysis*, ch. 3, from memory).  A bar inside a frame is a
  member with both ends released.
* Closed-loop form for rigid frames without releases: ``D = 3C - R`` with C the independent
  closed loops of the graph of members plus one ground vertex and R the releases of the
  supports relative to full fixity (pin 1, roller 2, fixed 0) (classical rule, from memory).

Whatever the geometry, ``D = s - m`` exactly (rank-nullity on the equilibrium matrix,
Calladine 1978), which is why the count alone cannot tell a mechanism plus a redundancy
from a determinate scheme.
"""
from __future__ import annotations

from dataclasses import dataclass, field

from .assemble import System
from .model import Scheme


@dataclass(frozen=True)
class HandCount:
    value: int
    #: joints, members, reactions, releases
    terms: dict[str, int]
    formula: str
    form: str
    #: the releases term item by item: (description, value, item ids)
    release_detail: tuple[tuple[str, int, tuple[str, ...]], ...] = ()
    #: closed-loop form when it applies: {"loops": C, "support_releases": R, "value": D}
    closed_loop: dict | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)

    def to_json(self) -> dict:
        out = {"value": self.value, "terms": dict(self.terms), "formula": self.formula, "form": self.form,
               "release_detail": [{"what": w, "value": v, "items": list(i)} for w, v, i in self.release_detail]}
        if self.closed_loop is not None:
            out["closed_loop"] = dict(self.closed_loop)
        return out


def hand_count(scheme: Scheme, system: System) -> HandCount:
    """The hand count of ``scheme`` consistent with the assembled ``system``."""
    active = system.active_nodes
    j = len(active)
    members = list(scheme.members.values())
    n_m = len(members)
    r = system.n_reactions
    all_bars = n_m > 0 and all(m.kind == "bar" for m in members)
    if all_bars:
        value = n_m + r - 2 * j
        formula = f"m + r - 2j = {n_m} + {r} - 2×{j} = {value}"
        return HandCount(value, {"joints": j, "members": n_m, "reactions": r, "releases": 0}, formula, "truss")

    detail: list[tuple[str, int, tuple[str, ...]]] = []
    if system.release_rows or any(m.kind == "bar" for m in members) or \
            any(it is None for (_, _, it) in system.node_dof.values()):
        ends_at: dict[str, list[str]] = {n: [] for n in active}
        for m in members:
            ends_at[m.start].append(m.id)
            ends_at[m.end].append(m.id)
        for nid in active:
            has_theta = system.node_dof[nid][2] is not None
            released = []
            for mid in ends_at[nid]:
                m = scheme.members[mid]
                if m.kind == "bar" or "moment" in m.releases_at(nid) or scheme.nodes[nid].hinge:
                    released.append(mid)
            if not has_theta:
                k = len(ends_at[nid])
                if k >= 2:
                    detail.append((f"full hinge at {nid} joining {k} members (n - 1)", k - 1, (nid, *ends_at[nid])))
            else:
                for mid in released:
                    detail.append((f"moment release of {mid} at {nid}", 1, (mid, nid)))
        for m in members:
            for end, nid, rel in (("start", m.start, m.releases_start), ("end", m.end, m.releases_end)):
                for word in ("shear", "axial"):
                    if word in rel:
                        detail.append((f"{word} release of {m.id} at its {end} ({nid})", 1, (m.id, nid)))
    c = sum(v for _, v, _ in detail)
    value = 3 * n_m + r - 3 * j - c
    formula = f"3m + r - 3j - c = 3×{n_m} + {r} - 3×{j} - {c} = {value}"

    closed = None
    if c == 0:
        supported = [s.node for s in scheme.supports.values() if s.node in system.node_dof]
        # graph: joints + one ground vertex; edges: members + one link per supported joint;
        # its components are the ground's own plus every piece that no support reaches
        V = j + 1
        E = n_m + len(supported)
        sup_set = set(supported)
        free = sum(1 for piece in system.pieces if not any(n in sup_set for n in piece))
        P = free + 1
        C = E - V + P
        R = 0
        for s in scheme.supports.values():
            if s.node in system.node_dof:
                R += 3 - len(system.reaction_cols.get(s.node, []))
        free_pieces = P - 1  # pieces not tied to ground (ground's own component excluded)
        D = 3 * C - R - 3 * free_pieces
        closed = {"loops": C, "support_releases": R, "free_pieces": free_pieces, "value": D,
                  "formula": f"3C - R = 3×{C} - {R}" + (f" - 3×{free_pieces}" if free_pieces else "") + f" = {D}"}
    return HandCount(value, {"joints": j, "members": n_m, "reactions": r, "releases": c}, formula, "frame",
                     tuple(detail), closed)
