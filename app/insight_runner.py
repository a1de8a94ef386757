"""Background analyses behind the redundancy, primary-structure and remedies views.

Each view has its own :class:`InsightRunner`: the live analysis runner of
:mod:`.analysis_runner` (throttled snapshots, one worker thread, stale results dropped) with
another computation, and switched off while its view is hidden, so a closed view costs nothing.
The computations are plain functions of an immutable scheme snapshot and return small
result records that keep the snapshot they describe.
"""
from __future__ import annotations

from dataclasses import dataclass

from kinestat.core.model import Scheme

from .analysis_runner import AnalysisRunner, classify_scheme


@dataclass
class RedundancyResult:
    """The redundancy distribution and the critical items of one snapshot."""

    scheme: Scheme
    classification: object
    #: :class:`kinestat.core.redundancy.Redundancy`, or None when the scheme is too big
    redundancy: object | None
    #: :class:`kinestat.core.redundancy.Criticality`, or None
    criticality: object | None
    note: str = ""


@dataclass
class PrimaryResultView:
    scheme: Scheme
    classification: object
    #: :class:`kinestat.core.primary.PrimaryResult`
    result: object

    def structures(self) -> list:
        """The primary structure and its alternatives, in the order the engine ranks them."""
        r = self.result
        return ([r.primary] if r.primary is not None and r.primary.releases else []) + list(r.alternatives)


@dataclass
class RemedyResultView:
    scheme: Scheme
    classification: object
    #: :class:`kinestat.core.remedies.RemedyResult`
    result: object


def compute_redundancy(scheme: Scheme) -> RedundancyResult | None:
    """States of self-stress, the redundancy diagonal (von Scheven, Ramm & Bischoff 2021) and
    every member / restraint removal, for one snapshot."""
    if not scheme.members:
        return None
    from kinestat.core.redundancy import redundancy, removal_checks, too_big

    c = classify_scheme(scheme)
    why = too_big(c.system)
    if why is not None:
        return RedundancyResult(scheme, c, None, None, f"redundancy not computed: {why}")
    red = redundancy(scheme, c)
    crit = removal_checks(scheme, red, classification=c)
    return RedundancyResult(scheme, c, red, crit)


def compute_primary(scheme: Scheme) -> PrimaryResultView | None:
    """A primary structure and alternatives (column-pivoted QR, Businger & Golub 1965)."""
    if not scheme.members:
        return None
    from kinestat.core.primary import primary_structure

    c = classify_scheme(scheme)
    return PrimaryResultView(scheme, c, primary_structure(scheme, c))


def compute_remedies(scheme: Scheme) -> RemedyResultView | None:
    """Verified single changes that remove mechanisms, and a smallest set."""
    if not scheme.members:
        return None
    from kinestat.core.remedies import remedies

    c = classify_scheme(scheme)
    return RemedyResultView(scheme, c, remedies(scheme, c))


class InsightRunner(AnalysisRunner):
    """An :class:`AnalysisRunner` that only follows the document while ``active``."""

    def __init__(self, doc, compute, parent=None, *, sync: bool = False, interval_ms: int = 200,
                 thread_members: int = 0):
        super().__init__(doc, parent, sync=sync, interval_ms=interval_ms, thread_members=thread_members,
                         compute=compute)
        self.active = False

    def _on_changed(self, _change=None) -> None:
        if self.active:
            super()._on_changed(_change)

    def set_active(self, on: bool) -> None:
        """Follow the document (and catch up at once) or stop following it."""
        self.active = bool(on)
        if self.active and not self.is_current():
            super()._on_changed(None)
