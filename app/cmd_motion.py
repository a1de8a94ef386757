"""``kinestat motion FILE [--mode K | --combine W1,W2,...] [--steps N] [--json]`` (headless, no Qt).

Traces the mechanism of an unstable scheme on its exact constraints and prints either a
readable summary or, with ``--json``, one JSON object:

* ``motion``: "finite" or "infinitesimal" ("none" when the scheme is stable);
* ``frames``: positions along the path, each ``{"nodes": {"ID": [x, y], ...}}`` with every
  node; ``start_frame`` is the index of the drawn position;
* ``bodies``: the moving rigid pieces at the drawn position, each ``{"members": [ids],
  "centre": [x, y]}`` or ``"centre": null`` with ``"direction": [dx, dy]`` (the unit
  direction of the translation);
* ``ended``: ``{"forward": ..., "backward": ...}``, each "full cycle", "dead centre",
  "clash" or "limit";

plus ``linearised``, ``mode``, ``modes``, ``fixed_members``, ``driver``, ``residual``,
``events``, ``note``, ``reason`` and ``caution``.  An infinitesimal mechanism is not traced:
its frames are the linearised mode (``linearised: true``; the amplitude means nothing).

Exit status: 0 on success (a stable scheme included), 2 when the file cannot be loaded or
an option is out of range (one line on stderr naming the item and the field).
"""
from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

CAUTION = ("Concept-stage check only: not structural design. Local codes and a licensed "
           "engineer govern.")


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", metavar="FILE", help="scheme file (kinestat-scheme JSON)")
    p.add_argument("--mode", type=int, default=1, metavar="K", help="mechanism mode to trace, counted from 1 "
                   "(default 1; rigid-body modes come first)")
    p.add_argument("--combine", default=None, metavar="W1,W2,...",
                   help="trace a combination of the modes with these weights instead of one mode")
    p.add_argument("--steps", type=int, default=None, metavar="N",
                   help="largest number of steps in each direction (default 240)")
    p.add_argument("--json", action="store_true", help="print one JSON object")


def _fail(name: str, message: str) -> int:
    print(f"kinestat motion: {name}: {message}", file=sys.stderr)
    return 2


def run(args: argparse.Namespace) -> int:
    from kinestat.core.io import SchemeError, load
    from kinestat.core.motion import DEFAULT_STEPS, trace
    from kinestat.core.secondorder import assess

    name = Path(args.file).name
    try:
        scheme = load(args.file)
    except SchemeError as exc:
        return _fail(name, str(exc))
    steps = DEFAULT_STEPS if args.steps is None else args.steps
    if steps < 1:
        return _fail(name, f'option "--steps": must be at least 1, got {steps}')
    weights = None
    if args.combine is not None:
        try:
            weights = [float(w) for w in args.combine.split(",")]
        except ValueError:
            return _fail(name, f'option "--combine": weights must be numbers separated by commas, '
                         f'got "{args.combine}"')
    verdict = assess(scheme)
    if verdict.motion == "none":
        out = {"motion": "none", "linearised": False, "mode": None, "modes": [],
               "frames": [{"nodes": {k: [n.x, n.y] for k, n in scheme.nodes.items()}}], "start_frame": 0,
               "bodies": [], "fixed_members": list(scheme.members), "ended": {"forward": "limit", "backward": "limit"},
               "driver": None, "residual": 0.0, "events": [], "note": "the scheme has no mechanism: nothing moves",
               "reason": verdict.reason, "caution": CAUTION}
        _print(out, args.json, name)
        return 0
    if weights is not None and len(weights) != verdict.m:
        return _fail(name, f'option "--combine": {verdict.m} weight(s) expected (one per mode), got {len(weights)}')
    if weights is None and not 1 <= args.mode <= verdict.m:
        return _fail(name, f'option "--mode": mode {args.mode} does not exist; the scheme has {verdict.m} '
                     f"mode(s), 1 to {verdict.m}")
    try:
        path = trace(scheme, mode=args.mode, weights=weights, steps=steps, verdict=verdict)
    except ValueError as exc:
        return _fail(name, f'option "--combine": {exc}' if weights is not None else str(exc))
    out = path.to_json()
    out["caution"] = CAUTION
    _print(out, args.json, name)
    return 0


def _print(out: dict, as_json: bool, name: str) -> None:
    if as_json:
        print(json.dumps(out))
        return
    print(summary(out, name))


def summary(out: dict, name: str) -> str:
    """Readable lines for a motion result (the JSON object of :func:`run`)."""
    lines = [f"{name}: motion {out['motion']}"]
    if out["motion"] == "none":
        lines.append("  the scheme has no mechanism: nothing moves")
        lines.append(f"  {out['caution']}")
        return "\n".join(lines)
    modes = out["modes"]
    kinds = ", ".join(f"{m['index']} {m['kind']}" for m in modes)
    lines.append(f"  modes: {len(modes)} ({kinds}); traced: "
                 + (f"mode {out['mode']}" if out["mode"] is not None else "a combination"))
    if out.get("reason"):
        lines.append(f"  why: {out['reason']}")
    if out["linearised"]:
        lines.append(f"  shown linearised ({len(out['frames'])} frames): {out['note']}")
    else:
        lines.append(f"  frames: {len(out['frames'])} (drawn position at {out['start_frame']}); "
                     f"ended forward: {out['ended']['forward']}, backward: {out['ended']['backward']}")
        if out.get("driver"):
            lines.append(f"  driving member: {out['driver']}")
        lines.append(f"  largest constraint residual: {out['residual']:.2e} of the model size")
        if out.get("note"):
            lines.append(f"  note: {out['note']}")
    for b in out["bodies"]:
        where = (f"instant centre ({b['centre'][0]:.4g}, {b['centre'][1]:.4g})" if b["centre"] is not None
                 else f"translates along ({b['direction'][0]:.4g}, {b['direction'][1]:.4g})")
        lines.append(f"  body {', '.join(b['members'])}: {where}")
    if out["fixed_members"]:
        lines.append(f"  not moving: {', '.join(out['fixed_members'])}")
    for ev in out.get("events", []):
        lines.append(f"  passed a {ev['kind']} ({ev['direction']}, step {ev['step']})")
    lines.append(f"  {out['caution']}")
    return "\n".join(lines)
