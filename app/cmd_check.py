"""``kinestat check FILE... [--json] [--fail-on unstable]`` (headless, no Qt).

One file: a readable verdict, or with ``--json`` one JSON object.  Several files: one line
per scheme (file, verdict, m, s, warnings) or with ``--json`` a JSON list; a bad file is
reported on its own line and the others still run.  Exit status: 0 on success; 1 when
``--fail-on`` matches a scheme; 2 when a file cannot be loaded.
"""
from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

CAUTION = ("Concept-stage check only: not structural design. Local codes and a licensed "
           "engineer govern.")


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("files", nargs="+", metavar="FILE", help="scheme file(s) (kinestat-scheme JSON)")
    p.add_argument("--json", action="store_true", help="print JSON (one object, or a list for several files)")
    p.add_argument("--fail-on", choices=["unstable", "indeterminate", "warning"], default=None,
                   help="exit 1 if any scheme is unstable (or indeterminate, or has warnings)")
    p.add_argument("--no-extras", action="store_true",
                   help="verdict only: skip motion and redundancy analysis (faster on big schemes)")


def analyse_file(path: str, extras: bool = True) -> dict:
    """Load and classify one file; returns the JSON object of the verdict."""
    from kinestat.core.io import load
    from kinestat.core.report_data import check_json

    scheme = load(path)
    return check_json(scheme, extras=extras)


def _text(path: str, out: dict) -> str:
    c = out["count"]
    t = c["terms"]
    lines = [f"{path}: {out['summary']}",
             f"  rank result: m = {out['mechanisms']} mechanism(s), s = {out['self_stress']} state(s) of "
             f"self-stress",
             f"  inside the structure (supports removed): {out['internal']['mechanisms']} internal "
             f"mechanism(s), {out['internal']['self_stress']} self-stress state(s) needing no reaction; "
             f"at the supports: {out['supports']['mechanisms']} rigid-body motion(s) left free, "
             f"{out['supports']['self_stress']} redundant reaction(s)",
             f"  hand count ({c['form']}): joints {t['joints']}, members {t['members']}, reactions "
             f"{t['reactions']}, releases {t['releases']}: {c['formula']}"]
    if "closed_loop" in c:
        lines.append(f"  closed-loop rule: {c['closed_loop']['formula']}")
    if "motion" in out and out["motion"] != "none":
        lines.append(f"  motion: {out['motion']}")
    for e in out["explanations"]:
        lines.append(f"  why: {e}")
    for w in out["warnings"]:
        lines.append(f"  warning: {w}")
    for r in out.get("remarks", []):
        lines.append(f"  note: {r}")
    if out.get("critical"):
        lines.append(f"  critical members: {', '.join(out['critical'])}")
    return "\n".join(lines)


def _fails(out: dict, rule: str | None) -> bool:
    if rule is None:
        return False
    if rule == "warning":
        return bool(out["warnings"])
    return out["verdict"] == rule


def run(args: argparse.Namespace) -> int:
    from kinestat.core.io import SchemeError

    files = args.files
    extras = not args.no_extras
    if len(files) == 1:
        try:
            out = analyse_file(files[0], extras)
        except SchemeError as exc:
            print(f"kinestat check: {Path(files[0]).name}: {exc}", file=sys.stderr)
            return 2
        if args.json:
            print(json.dumps(out, indent=1))
        else:
            print(_text(files[0], out))
            print(CAUTION)
        return 1 if _fails(out, args.fail_on) else 0

    results = []
    bad = failed = 0
    for f in files:
        try:
            out = analyse_file(f, extras)
        except SchemeError as exc:
            bad += 1
            results.append({"file": f, "error": str(exc)})
            if not args.json:
                print(f"{f}\terror\t{exc}")
            continue
        out = {"file": f, **out}
        results.append(out)
        failed += _fails(out, args.fail_on)
        if not args.json:
            print(f"{f}\t{out['verdict']}\tm={out['mechanisms']}\ts={out['self_stress']}\t"
                  f"warnings={len(out['warnings'])}")
    if args.json:
        print(json.dumps(results, indent=1))
    else:
        print(f"{len(files)} scheme(s): {len(files) - bad} checked, {bad} could not be read, "
              f"{failed} matched --fail-on. {CAUTION}")
    if bad:
        return 2
    return 1 if failed else 0
