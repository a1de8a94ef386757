"""The JSON verdict of ``kinestat check --json`` (and the data behind reports).

Keys (a contract read by outside tools; add, never rename): ``verdict``, ``mechanisms``,
``self_stress``, ``internal`` {``mechanisms``, ``self_stress``}, ``count`` {``value``,
``terms`` {joints, members, reactions, releases}, ``formula``}, ``warnings``; plus
``summary``, ``supports``, ``rigid_body_mechanisms``, ``explanations``, ``remarks``,
``rank``, and with the extras ``motion``.
"""
from __future__ import annotations

from .classify import Classification, classify
from .model import Scheme


def check_json(scheme: Scheme, extras: bool = True, result: Classification | None = None) -> dict:
    """Classify ``scheme`` and return the verdict as a JSON-ready dict."""
    c = result if result is not None else classify(scheme)
    out = c.to_json()
    # "motion": "none" | "finite" | "infinitesimal" (second-order test, confirmed by tracing)
    if c.mechanisms == 0:
        out["motion"] = "none"
    elif extras:
        from .secondorder import assess

        v = assess(scheme)
        # the node model's mechanism that the exact constraints do not see is infinitesimal
        out["motion"] = v.motion if v.motion != "none" else "infinitesimal"
        out["motion_detail"] = v.to_json()
    if extras:
        # redundancy distribution, critical members and restraints, states of self-stress
        from .redundancy import redundancy_report

        out.update(redundancy_report(scheme, c))
    return out
