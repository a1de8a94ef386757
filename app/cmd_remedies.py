"""``kinestat remedies FILE [--json] [--max N] [--save-smallest OUT.json]`` (no Qt).

Lists single changes that remove mechanisms of an unstable scheme (a bar, a restraint, a
hinge made rigid, a node moved off a line), ranked by mechanisms removed and size of change,
each re-analysed before it is listed, and a smallest set of changes that removes them all.
``--save-smallest`` writes the scheme with that set applied (atomic save).  Exit status: 0
when the scheme is stable or the changes remove every mechanism, 1 when no set removing them
all was found, 2 when the file cannot be loaded or written.
"""
from __future__ import annotations

import argparse
import json

_PROG = "kinestat remedies"


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("file", metavar="FILE", help="scheme file (kinestat-scheme JSON)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--max", type=int, default=20, metavar="N", help="list up to N single changes (default 20)")
    p.add_argument("--save-smallest", metavar="OUT", help="write the scheme with the smallest set applied to OUT")


def run(args: argparse.Namespace) -> int:
    from kinestat.app.cmd_check import CAUTION
    from kinestat.app.cmd_primary import analyse, save_scheme
    from kinestat.core.remedies import remedies

    got = analyse(_PROG, args.file, lambda s, c: remedies(s, c, max_remedies=max(0, args.max)))
    if got is None:
        return 2
    _, c, res = got
    if args.save_smallest and res.smallest_set is not None and \
            not save_scheme(_PROG, res.smallest_set.scheme, args.save_smallest):
        return 2
    out = {"file": args.file, "verdict": c.verdict, **res.to_json(), "caution": CAUTION}
    if args.json:
        print(json.dumps(out, indent=1))
    else:
        print(_text(args.file, c, res))
        print(CAUTION)
    return 0 if res.mechanisms == 0 or res.smallest_set is not None else 1


def _text(path: str, c, res) -> str:
    lines = [f"{path}: {c.summary()}", f"  {res.note}"]
    for r in res.remedies:
        n = r.mechanisms_removed
        lines.append(f"  - {r.description}: removes {n} mechanism{'s' if n != 1 else ''}"
                     f" ({r.mechanisms_after} left)")
    if res.smallest_set is not None:
        ss = res.smallest_set
        lines.append(f"  smallest set ({len(ss.changes)} change{'s' if len(ss.changes) != 1 else ''}, "
                     f"re-analysed: m = 0):")
        lines += [f"    - {ch.description}" for ch in ss.changes]
    return "\n".join(lines)
