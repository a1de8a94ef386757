"""A primary structure: s releases that leave an indeterminate scheme stable and determinate.

Every column of the equilibrium matrix A is one force that a release can take away:
a support reaction (remove that restraint), an end moment of a beam (a hinge at that member
end), a beam's axial force (an axial release) or a bar's force (cut the bar: remove it).
The released set must be the complement of a column basis of A: then the s = cols - rank
released forces are the redundants of the force method and the primary structure keeps
m = 0 and s = 0 (any basis will do: the bases of a linear matroid).

The basis is chosen by the column-pivoted QR factorisation of A W (P. Businger &
G. H. Golub (1965), "Linear least squares solutions by Householder transformations",
Numer. Math. 7, 269-276; ``scipy.linalg.qr(..., pivoting=True)``): at each step the column
with the largest part outside the span of those already taken is kept, so the columns
scaled down by the weights W are the ones left over and released.  The weightings (how a
practitioner ranks releases):

==================  ==========  ===========  =========================
preference          reactions   end moments  axial forces (cuts)
==================  ==========  ===========  =========================
reactions first     0.01        0.1          1
hinges first        0.1         0.01         1
keep supports       10          0.1          1
unweighted          1           1            1
==================  ==========  ===========  =========================

A factor of 10 between kinds makes QR prefer the lighter kind unless the heavier one is
nearly dependent on what is already kept.  Alternatives are the other weightings and single
exchanges: a released force c can be put back in place of any kept force b of its state of
self-stress (the basis exchange property), which is again a primary structure.  Every
primary structure returned is re-analysed with :func:`.classify.classify` (m = 0 and s = 0)
before it is shown; each release is an edit of the scheme, so the released scheme can be
opened as a document of its own.
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np
import scipy.linalg as la

from .assemble import System
from .classify import Classification, classify
from .model import Scheme
from .redundancy import (
    SelfStressState,
    basis_from_columns,
    normalise_states,
    restraint_text,
    states_from_basis,
    without_restraint,
)

#: weights per column kind: (reaction, end moment, axial force)
WEIGHTINGS: dict[str, tuple[float, float, float]] = {
    "reactions first": (0.01, 0.1, 1.0),
    "hinges first": (0.1, 0.01, 1.0),
    "keep supports": (10.0, 0.1, 1.0),
    "unweighted": (1.0, 1.0, 1.0),
}
#: a kept set whose smallest |R_ii| of the QR of A[:, kept] is below this fraction of the
#: largest is rejected as numerically dependent
KEPT_RTOL = 1e-10


@dataclass(frozen=True)
class Release:
    """One release, as an edit of the scheme."""

    #: the column of A it takes away: (kind, item, detail)
    column: tuple[str, str, str]
    #: "reaction", "hinge", "axial release" or "cut"
    kind: str
    #: node id (reaction) or member id
    item: str
    #: restraint word (reaction) or member end "start" / "end"
    detail: str
    description: str

    def apply(self, scheme: Scheme) -> Scheme:
        """``scheme`` with this release made."""
        if self.kind == "reaction":
            return without_restraint(scheme, self.item, self.detail)
        if self.kind == "cut":
            return scheme.without_members([self.item])
        m = scheme.members[self.item]
        word = "moment" if self.kind == "hinge" else "axial"
        if self.detail == "start":
            m = replace(m, releases_start=m.releases_start | {word})
        else:
            m = replace(m, releases_end=m.releases_end | {word})
        return scheme.with_member(m)

    @property
    def key(self) -> str:
        kind, item, detail = self.column
        return f"{item}:{detail or kind}"

    def to_json(self) -> dict:
        return {"kind": self.kind, "item": self.item, "detail": self.detail, "column": self.key,
                "description": self.description}


def release_for_column(scheme: Scheme, system: System, col: int) -> Release:
    """The scheme edit that takes away column ``col`` of A."""
    kind, item, detail = system.cols[col]
    label = system.cols[col]
    if kind == "reaction":
        return Release(label, "reaction", item, detail, f"remove {restraint_text(scheme, item, detail)}")
    m = scheme.members[item]
    if kind == "N" and m.kind == "bar":
        return Release(label, "cut", item, "", f"cut bar {item} ({m.start}-{m.end})")
    if kind == "N":
        end = "start" if "axial" not in m.releases_start else "end"
        node = m.start if end == "start" else m.end
        return Release(label, "axial release", item, end,
                       f"axial release at the {end} of member {item} (node {node})")
    end = "start" if kind == "Mi" else "end"
    node = m.start if end == "start" else m.end
    return Release(label, "hinge", item, end, f"hinge at the {end} of member {item} (node {node})")


def release_scheme(scheme: Scheme, releases) -> Scheme:
    """``scheme`` with every release of ``releases`` made (the primary structure)."""
    out = scheme
    words: dict[str, set[str]] = {}
    for r in releases:
        if r.kind == "reaction":
            words.setdefault(r.item, set()).add(r.detail)
        else:
            out = r.apply(out)
    for node, ws in words.items():
        out = without_restraint(out, node, ws)
    title = scheme.title or "scheme"
    return out.retitled(f"{title} (primary structure)")


@dataclass
class PrimaryStructure:
    releases: tuple[Release, ...]
    #: the released scheme
    scheme: Scheme
    preference: str
    mechanisms: int
    self_stress: int
    #: the state of self-stress of the original scheme that belongs to each release
    #: (its redundant = 1, the kept forces that balance it): the force-method states
    states: list[SelfStressState] = field(default_factory=list)

    @property
    def verified(self) -> bool:
        return self.mechanisms == 0 and self.self_stress == 0

    def key(self) -> frozenset:
        return frozenset(r.column for r in self.releases)

    def to_json(self) -> dict:
        return {
            "preference": self.preference,
            "releases": [r.to_json() for r in self.releases],
            "mechanisms": self.mechanisms,
            "self_stress": self.self_stress,
            "verified_by": "classify",
            "states": [{"release": r.key, **st.to_json()} for r, st in zip(self.releases, self.states)],
        }


@dataclass
class PrimaryResult:
    mechanisms: int
    self_stress: int
    primary: PrimaryStructure | None
    alternatives: list[PrimaryStructure]
    note: str = ""

    def to_json(self) -> dict:
        return {
            "mechanisms": self.mechanisms,
            "self_stress": self.self_stress,
            "primary": self.primary.to_json() if self.primary else None,
            "alternatives": [a.to_json() for a in self.alternatives],
            "note": self.note,
        }


#: extra weight on the axial force of a curved beam: an axial release there acts along the end
#: tangent, which mixes in the end moments, so it is not the removal of that force alone
CURVED_AXIAL = 1e3


def column_weights(system: System, weights: tuple[float, float, float], scheme: Scheme | None = None) -> np.ndarray:
    w_r, w_m, w_n = weights
    w = np.array([w_r if k == "reaction" else (w_m if k in ("Mi", "Mj") else w_n) for k, _, _ in system.cols])
    if scheme is not None:
        for c, (k, item, _) in enumerate(system.cols):
            if k == "N" and scheme.members[item].rise != 0:
                w[c] *= CURVED_AXIAL
    return w


def qr_split(M: np.ndarray, weights: np.ndarray, rank: int) -> tuple[list[int], list[int]]:
    """Kept and released columns by column-pivoted QR of ``M * weights`` (Businger & Golub 1965)."""
    _, perm = la.qr(M * weights[None, :], pivoting=True, mode="r")
    kept = sorted(int(c) for c in perm[:rank])
    released = sorted(int(c) for c in perm[rank:])
    return kept, released


def _kept_ok(M: np.ndarray, kept: list[int]) -> bool:
    if not kept:
        return True
    d = np.abs(np.diag(la.qr(M[:, kept], mode="r")[0]))
    return bool(d.min() > KEPT_RTOL * d.max())


def _build(scheme: Scheme, system: System, M: np.ndarray, kept: list[int], released: list[int],
           preference: str) -> PrimaryStructure | None:
    """Releases for ``released``, verified by re-analysis; None if the check fails."""
    if not _kept_ok(M, kept):
        return None
    releases = tuple(release_for_column(scheme, system, c) for c in released)
    try:
        edited = release_scheme(scheme, releases)
    except (KeyError, ValueError):
        return None
    after = classify(edited)
    if after.mechanisms != 0 or after.self_stress != 0:
        return None
    gb = basis_from_columns(M, kept, released)
    S = normalise_states(gb.states(M.shape[1]))
    states = states_from_basis(system, S, released)
    return PrimaryStructure(releases, edited, preference, after.mechanisms, after.self_stress, states)


def primary_structure(scheme: Scheme, classification: Classification | None = None, *,
                      preference: str = "reactions first", max_alternatives: int = 5,
                      max_columns: int = 4000) -> PrimaryResult:
    """A verified primary structure of ``scheme`` and up to ``max_alternatives`` others."""
    if preference not in WEIGHTINGS:
        raise ValueError(f"preference: unknown {preference!r} (allowed: {', '.join(WEIGHTINGS)})")
    c = classification if classification is not None else classify(scheme)
    system = c.system
    m, s = c.mechanisms, c.self_stress
    if m > 0:
        return PrimaryResult(m, s, None, [], f"the scheme is unstable ({m} mechanism{'s' if m != 1 else ''}): "
                             "releases cannot make it stable; see the remedies")
    if s == 0:
        return PrimaryResult(m, s, PrimaryStructure((), scheme, preference, 0, 0), [],
                             "the scheme is already statically determinate: no releases needed")
    if system.shape[1] > max_columns:
        return PrimaryResult(m, s, None, [], f"skipped: {system.shape[1]} forces (more than {max_columns})")
    M = system.A.toarray()
    rank = c.rank.rank
    found: list[PrimaryStructure] = []
    seen: set[frozenset] = set()

    def add(ps: PrimaryStructure | None) -> bool:
        if ps is None or ps.key() in seen:
            return False
        seen.add(ps.key())
        found.append(ps)
        return True

    order = [preference] + [p for p in WEIGHTINGS if p != preference]
    first_split = None
    for pref in order:
        kept, released = qr_split(M, column_weights(system, WEIGHTINGS[pref], scheme), rank)
        first_split = first_split or (pref, released)
        if frozenset(system.cols[x] for x in released) in seen:
            continue
        add(_build(scheme, system, M, kept, released, pref))
        if len(found) > max_alternatives:
            break
    # single exchanges from the first one found (or the first split when none passed):
    # put a release back and release a force of its state of self-stress instead
    if len(found) <= max_alternatives:
        col_of = {label: k for k, label in enumerate(system.cols)}
        if found:
            base_pref = found[0].preference
            released0 = sorted(col_of[r.column] for r in found[0].releases)
        else:
            base_pref, released0 = first_split
        kept0 = sorted(set(range(system.shape[1])) - set(released0))
        wcol = column_weights(system, WEIGHTINGS[base_pref], scheme)
        gb = basis_from_columns(M, kept0, released0)
        S = gb.states(system.shape[1])
        swaps = []
        for j, cr in enumerate(released0):
            for b in np.nonzero(np.abs(S[:, j]) > 1e-9)[0].tolist():
                if b != cr:
                    swaps.append((float(wcol[b]), j, b))
        swaps.sort()
        for _, j, b in swaps:
            if len(found) > max_alternatives:
                break
            rel = sorted(released0[:j] + [b] + released0[j + 1:])
            kept = sorted(set(range(system.shape[1])) - set(rel))
            add(_build(scheme, system, M, kept, rel, f"{base_pref}, exchange"))
    if not found:
        return PrimaryResult(m, s, None, [], "no choice of releases passed the re-analysis")
    # the requested preference first when it verified
    return PrimaryResult(m, s, found[0], found[1:max_alternatives + 1],
                         f"{s} release{'s leave' if s != 1 else ' leaves'} a stable, statically determinate scheme")
