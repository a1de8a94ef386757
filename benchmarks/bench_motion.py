"""Speed and accuracy of mechanism tracing (core.motion), printed as a table.

Cases:
  crank-rocker     four bars, Grashof crank-rocker (tests/core/data/kin_crank_rocker.json)
  triple rocker    non-Grashof four-bar, ends at its two dead centres
  six-bar          Stephenson six-bar of beams and hinges
  strip truss      ~500 bars, slender pin-jointed strip with one diagonal left out (m = 1)
  soft storey      ~500 beams, rigid frame whose ground-storey columns are pinned at both ends
                   (m = 1, many states of self-stress: exercises the second-order test)

Columns: members, unknowns of the constraint model, verdict time (rank + second-order
test), frames traced, time per frame (predictor, Newton corrector, tangent, dead-centre,
clash and cycle checks), largest constraint residual along the path as a fraction of the
model size, and how both directions ended.

Run:  python benchmarks/bench_motion.py [--quick]
"""
from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")
ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))

from catalogue import beams, build, strip_truss  # noqa: E402
from kinestat.core.constraints import ConstraintModel  # noqa: E402
from kinestat.core.io import load  # noqa: E402
from kinestat.core.motion import trace  # noqa: E402
from kinestat.core.secondorder import assess  # noqa: E402

DATA = ROOT / "tests" / "core" / "data"


def soft_storey(bays: int, storeys: int, bay=6.0, storey=3.5):
    """Rigid frame on pinned feet whose ground-storey columns are hinged at the top too."""
    nodes = {f"n{i}_{j}": (i * bay, j * storey) for i in range(bays + 1) for j in range(storeys + 1)}
    members = []
    for i in range(bays + 1):
        for j in range(storeys):
            rel_end = ("moment",) if j == 0 else ()
            members.append((f"c{i}_{j}", f"n{i}_{j}", f"n{i}_{j+1}", "beam", (), rel_end))
    for j in range(1, storeys + 1):
        for i in range(bays):
            members.append((f"g{i}_{j}", f"n{i}_{j}", f"n{i+1}_{j}", "beam"))
    return build(nodes, members, [(f"n{i}_0", "pin") for i in range(bays + 1)], title="soft storey")


def cases(quick: bool):
    yield "crank-rocker", load(DATA / "kin_crank_rocker.json")
    yield "triple rocker", load(DATA / "kin_triple_rocker.json")
    yield "six-bar", load(DATA / "kin_six_bar.json")
    panels = 40 if quick else 125
    yield "strip truss", strip_truss(panels, missing=(panels // 2,))
    yield "soft storey", soft_storey(10, 8 if quick else 24)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="smaller large cases")
    ap.add_argument("--steps", type=int, default=400, help="step budget in each direction")
    args = ap.parse_args()
    head = (f"{'case':<14} {'members':>7} {'unknowns':>8} {'verdict s':>9} {'motion':>13} {'frames':>6} "
            f"{'ms/frame':>8} {'max residual':>12}  ended (forward / backward)")
    print(head)
    print("-" * len(head))
    for name, scheme in cases(args.quick):
        t0 = time.perf_counter()
        model = ConstraintModel(scheme)
        verdict = assess(model)
        t1 = time.perf_counter()
        path = trace(scheme, steps=args.steps, model=model, verdict=verdict)
        t2 = time.perf_counter()
        frames = len(path.frames)
        per = (t2 - t1) / max(frames - 1, 1) * 1e3
        res = "-" if path.residual is None else f"{path.residual:.1e}"
        print(f"{name:<14} {len(scheme.members):>7} {model.n:>8} {t1 - t0:>9.3f} {path.motion:>13} {frames:>6} "
              f"{per:>8.2f} {res:>12}  {path.ended['forward']} / {path.ended['backward']}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
