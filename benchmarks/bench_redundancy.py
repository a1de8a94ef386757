"""Times of the redundancy, critical-item, primary-structure and remedy analyses (~500 members).

Schemes (built in code, about 500 members each):
  frame    rigid frame 10 bays x 25 storeys, fixed feet           m = 0, s = 750 (closed-loop rule)
  braced   strip truss, 100 panels, every panel with both diagonals  m = 0, s = 100
  hinged   rigid frame 10 x 25, the columns of one storey hinged at both ends: a sway mechanism
  cut      strip truss, 125 panels, 5 diagonals left out          m = 5, s = 0

Columns (seconds; each measurement in a forked child with BLAS on one thread, best of
--repeat runs):
  classify     the verdict (the engine, for scale)
  redundancy   canonical states + the redundancy diagonal (core.redundancy.redundancy)
  critical     every member and restraint removed in turn, by the rank update
  confirm      the same, each removal re-analysed with classify() (what small schemes get);
               not run on "hinged": classify of that unstable frame takes ~0.9 s, so ~500 s
  primary      a primary structure and up to 5 alternatives, each re-analysed
  remedies     verified single changes and the smallest set (unstable schemes only)

Run:  python benchmarks/bench_redundancy.py [--repeat N] [--skip-confirm]
"""
from __future__ import annotations

import argparse
import os
import sys
import time
from multiprocessing import get_context
from pathlib import Path

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")
sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from catalogue import rigid_frame, strip_truss  # noqa: E402


def scheme(name: str):
    from dataclasses import replace

    from kinestat.core.model import Member

    if name == "frame":
        return rigid_frame(10, 25)
    if name == "braced":
        s = strip_truss(100)
        for i in range(100):
            s = s.with_member(Member(f"x{i}", f"t{i}", f"b{i + 1}", "bar"))
        return s
    if name == "hinged":
        s = rigid_frame(10, 25)
        for m in list(s.members.values()):
            a, b = s.nodes[m.start], s.nodes[m.end]
            if a.x == b.x and abs(min(a.y, b.y) - 3.5 * 12) < 1e-9:
                s = s.with_member(replace(m, releases_start=frozenset({"moment"}),
                                          releases_end=frozenset({"moment"})))
        return s
    if name == "cut":
        return strip_truss(125, missing=(10, 40, 70, 100, 120))
    raise KeyError(name)


def _child(conn, what: str, name: str, repeat: int):
    try:
        try:
            from threadpoolctl import threadpool_limits
            threadpool_limits(1)
        except ImportError:
            pass
        from kinestat.core.classify import classify
        from kinestat.core.primary import primary_structure
        from kinestat.core.redundancy import redundancy, removal_checks
        from kinestat.core.remedies import remedies

        sch = scheme(name)
        c = classify(sch)
        red = redundancy(sch, c) if what in ("critical", "confirm") else None
        jobs = {
            "classify": lambda: classify(sch),
            "redundancy": lambda: redundancy(sch, c),
            "critical": lambda: removal_checks(sch, red, classification=c, confirm=False),
            "confirm": lambda: removal_checks(sch, red, classification=c, confirm=True),
            "primary": lambda: primary_structure(sch, c),
            "remedies": lambda: remedies(sch, c),
        }
        best = float("inf")
        info = ""
        for _ in range(repeat if what != "confirm" else 1):
            t0 = time.perf_counter()
            out = jobs[what]()
            best = min(best, time.perf_counter() - t0)
        if what == "classify":
            info = f"m={out.mechanisms} s={out.self_stress} members={len(sch.members)}"
        elif what == "critical":
            info = f"{len(out.critical_members())} critical members"
        elif what == "primary":
            info = f"{len(out.primary.releases) if out.primary else '-'} releases, {len(out.alternatives)} alt."
        elif what == "remedies":
            info = f"{len(out.remedies)} remedies, set of {len(out.smallest_set.changes) if out.smallest_set else '-'}"
        conn.send((best, info))
    except Exception as exc:  # pragma: no cover - reported in the table
        conn.send((None, f"error: {exc}"))


def measure(what: str, name: str, repeat: int, timeout: float = 900.0):
    ctx = get_context("fork")
    a, b = ctx.Pipe()
    p = ctx.Process(target=_child, args=(b, what, name, repeat))
    p.start()
    if a.poll(timeout):
        res = a.recv()
    else:
        p.kill()
        res = (None, "timeout")
    p.join()
    return res


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--skip-confirm", action="store_true", help="leave out the classify-confirmed column")
    args = ap.parse_args()
    cols = ["classify", "redundancy", "critical", "confirm", "primary", "remedies"]
    if args.skip_confirm:
        cols.remove("confirm")
    print(f"{'scheme':8s} " + " ".join(f"{c:>11s}" for c in cols) + "  notes")
    for name in ("frame", "braced", "hinged", "cut"):
        row, notes = [], []
        for what in cols:
            if what == "remedies" and name in ("frame", "braced"):
                row.append(f"{'-':>11s}")
                continue
            if (what == "primary" and name in ("hinged", "cut")) or (what == "confirm" and name == "hinged"):
                row.append(f"{'-':>11s}")
                continue
            t, info = measure(what, name, args.repeat)
            row.append(f"{t:11.3f}" if t is not None else f"{'fail':>11s}")
            if info:
                notes.append(f"{what}: {info}")
        print(f"{name:8s} " + " ".join(row) + "  " + "; ".join(notes))
        sys.stdout.flush()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
