"""``kinestat primary FILE [--json] [--prefer KIND] [--alternatives N] [--save OUT.json]`` (no Qt).

Lists the releases that leave an indeterminate scheme stable and statically determinate (a
primary structure for the force method), with alternatives, each re-analysed before it is
listed.  ``--save`` writes the released scheme as a scheme file (atomic save).  Exit status:
0 when a primary structure is listed (or none is needed), 1 when the scheme is unstable or
no primary structure passed the re-analysis, 2 when the file cannot be loaded or written.
"""
from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

_PROG = "kinestat primary"
#: short names for the weightings of :mod:`kinestat.core.primary`
PREFER = {"reactions": "reactions first", "hinges": "hinges first", "supports": "keep supports",
          "unweighted": "unweighted"}


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", metavar="FILE", help="scheme file (kinestat-scheme JSON)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--prefer", choices=list(PREFER), default="reactions",
                   help="which releases to try first: support reactions (default), hinges at member ends, "
                        "releases inside the structure only (keep supports), or no preference")
    p.add_argument("--alternatives", type=int, default=5, metavar="N", help="list up to N alternatives (default 5)")
    p.add_argument("--save", metavar="OUT", help="write the released scheme (the primary structure) to OUT")


def analyse(prog: str, path: str, work):
    """Load ``path``, classify it and run ``work(scheme, classification)``.

    Returns (scheme, classification, result), or None after printing one line on stderr
    naming the file and the item and field at fault."""
    from kinestat.core.classify import classify
    from kinestat.core.io import SchemeError, load

    try:
        scheme = load(path)
        c = classify(scheme)
        return scheme, c, work(scheme, c)
    except (SchemeError, ValueError) as exc:
        print(f"{prog}: {Path(path).name}: {exc}", file=sys.stderr)
        return None


def save_scheme(prog: str, scheme, path: str) -> bool:
    """Save atomically; False (after one line on stderr) when it cannot be written."""
    from kinestat.core.io import save

    try:
        save(scheme, path)
        return True
    except OSError as exc:
        print(f"{prog}: {path}: cannot be written ({exc.strerror or exc})", file=sys.stderr)
        return False


def run(args: argparse.Namespace) -> int:
    from kinestat.app.cmd_check import CAUTION
    from kinestat.core.primary import primary_structure

    got = analyse(_PROG, args.file, lambda s, c: primary_structure(
        s, c, preference=PREFER[args.prefer], max_alternatives=max(0, args.alternatives)))
    if got is None:
        return 2
    _, c, res = got
    if args.save and res.primary is not None and not save_scheme(_PROG, res.primary.scheme, args.save):
        return 2
    out = {"file": args.file, "verdict": c.verdict,
           "releases": res.primary.to_json()["releases"] if res.primary else None,
           **res.to_json(), "caution": CAUTION}
    if args.json:
        print(json.dumps(out, indent=1))
    else:
        print(_text(args.file, c, res))
        print(CAUTION)
    return 0 if res.primary is not None else 1


def _text(path: str, c, res) -> str:
    lines = [f"{path}: {c.summary()}", f"  {res.note}"]
    if res.primary is not None and res.primary.releases:
        lines.append(f"  primary structure ({res.primary.preference}), re-analysed: m = 0, s = 0")
        lines += [f"    - {r.description}" for r in res.primary.releases]
        for k, alt in enumerate(res.alternatives, 1):
            lines.append(f"  alternative {k} ({alt.preference}):")
            lines += [f"    - {r.description}" for r in alt.releases]
    return "\n".join(lines)
