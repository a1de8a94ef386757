"""Speed and memory of the classification engine, with baselines in the same run.

Families (members from about 100 to 100,000):
  frame   rigid-jointed p x p frame, fixed feet   expected m = 0, s = 3 p^2 (closed-loop rule)
  compact triangulated square grid truss          expected m = 0, s = (p - 1)^2 (Maxwell, rigid)
  strip   slender triangulated strip, pin+roller  expected m = s = 0
  cut     the strip with every k-th diagonal out  expected m = number removed, s = 0
  grid    square cells of bars, a few braced      expected from the grid-bracing theorem
          (Bolker & Crapo 1979): m = components - 1, s = braces - (2p - components)

Columns: time to build A from the scheme, the verdict (m, s, hand count, warnings and the
mechanism basis when m <= 12: what the app shows live), the proxy = one sparse LU of
K = A A^T (+1e-12 I when singular), the dense SVD of A where it fits (baseline), the
ratios verdict/proxy and dense/verdict, and the peak resident memory of the verdict run.
Every measurement runs in a forked child with BLAS pinned to one thread (two threads on a
busy 2-core machine were 5-15x slower).

Run:  python benchmarks/bench_engine.py [--quick] [--max-members N]
"""
from __future__ import annotations

import argparse
import math
import os
import resource
import sys
import time
from multiprocessing import get_context
from pathlib import Path

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")
sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

import numpy as np  # noqa: E402
import scipy.sparse as sp  # noqa: E402
import scipy.sparse.linalg as spla  # noqa: E402

from catalogue import bars, build, rigid_frame, strip_truss  # noqa: E402


def _square_grid(p: int, diagonals) -> tuple[dict, list]:
    """Nodes of a (p+1) x (p+1) unit grid, its cell sides, and the diagonals of the given cells."""
    nodes = {f"n{i}_{j}": (float(i), float(j)) for i in range(p + 1) for j in range(p + 1)}
    pairs = []
    for i in range(p + 1):
        for j in range(p + 1):
            if i < p:
                pairs.append((f"n{i}_{j}", f"n{i+1}_{j}"))
            if j < p:
                pairs.append((f"n{i}_{j}", f"n{i}_{j+1}"))
    pairs += [(f"n{a}_{b}", f"n{a+1}_{b+1}") for a, b in sorted(diagonals)]
    return nodes, pairs


def compact_truss(p: int):
    nodes, pairs = _square_grid(p, {(i, j) for i in range(p) for j in range(p)})
    return build(nodes, bars(pairs), [("n0_0", "pin"), (f"n{p}_0", "roller")]), (0, (p - 1) ** 2)


def grid(p: int):
    braced = {(i, i) for i in range(p) if i % 4 == 0} | {(0, 1), (1, 0), (1, 1)}
    braced = {(a, b) for a, b in braced if a < p and b < p}
    nodes, pairs = _square_grid(p, braced)
    # bipartite graph rows/cols of cells: components
    parent = list(range(2 * p))

    def find(x):
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    for a, b in braced:
        parent[find(a)] = find(p + b)
    comps = len({find(x) for x in range(2 * p)})
    m = comps - 1
    s = len(braced) - (2 * p - comps)
    return build(nodes, bars(pairs), [("n0_0", "pin"), (f"n{p}_0", "roller")]), (m, s)


def family(name: str, target: int):
    if name == "frame":
        p = max(1, round((-1 + math.sqrt(1 + 2 * target)) / 2))  # members = 2p^2 + p
        return rigid_frame(p, p), (0, 3 * p * p)
    if name == "compact":
        p = max(2, round(math.sqrt(target / 3)))
        return compact_truss(p)
    if name == "strip":
        n = max(2, round((target + 1) / 4))
        return strip_truss(n), (0, 0)
    if name == "cut":
        n = max(20, round((target + 1) / 4))
        k = max(10, (2 * n) // 20)
        removed = sum(1 for i in range(n) if i % k == k // 2)
        return strip_truss(n, cut_every=k), (removed, 0)
    if name == "grid":
        p = max(3, round(math.sqrt(target / 2)))
        return grid(p)
    raise ValueError(name)


def _child(conn, what: str, fam: str, target: int):
    try:
        from threadpoolctl import threadpool_limits

        threadpool_limits(1)
    except ImportError:  # pragma: no cover
        pass
    from kinestat.core.assemble import assemble
    from kinestat.core.classify import classify

    scheme, expected = family(fam, target)
    out = {"members": len(scheme.members), "expected": expected}
    try:
        with open("/proc/self/clear_refs", "w") as fh:
            fh.write("5")
    except OSError:
        pass
    if what == "build":
        reps = []
        for _ in range(3):
            t = time.perf_counter(); sysm = assemble(scheme); reps.append(time.perf_counter() - t)
        out.update(t=float(np.median(reps)), shape=sysm.A.shape)
    elif what == "verdict":
        reps = []
        for _ in range(5 if len(scheme.members) < 5000 else 1):
            t = time.perf_counter(); c = classify(scheme); reps.append(time.perf_counter() - t)
            if sum(reps) > 0.5:
                break
        out.update(t=float(np.median(reps)), m=c.mechanisms, s=c.self_stress, route=c.rank.route,
                   count=c.count.value, modes=len(c.modes))
    elif what == "bases":
        t = time.perf_counter(); c = classify(scheme, bases=True); out.update(t=time.perf_counter() - t)
    elif what == "proxy":
        A = assemble(scheme).A
        K = (A @ A.T).tocsc()
        t = time.perf_counter()
        try:
            spla.splu(K)
        except RuntimeError:
            spla.splu((K + 1e-12 * abs(K).max() * sp.identity(K.shape[0], format="csc")).tocsc())
        out.update(t=time.perf_counter() - t)
    elif what == "dense":
        import scipy.linalg as la

        A = assemble(scheme).A.toarray()
        t = time.perf_counter(); sig = la.svd(A, compute_uv=False); dt = time.perf_counter() - t
        r = int(np.count_nonzero(sig > sig[0] * max(A.shape) * np.finfo(float).eps))
        out.update(t=dt, m=A.shape[0] - r, s=A.shape[1] - r)
    out["rss_mib"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    try:
        for line in open("/proc/self/status"):
            if line.startswith("VmHWM"):
                out["rss_mib"] = int(line.split()[1]) / 1024
    except OSError:
        pass
    conn.send(out)
    conn.close()


def measure(what: str, fam: str, target: int, timeout: float = 300.0):
    ctx = get_context("fork")
    a, b = ctx.Pipe(duplex=False)
    p = ctx.Process(target=_child, args=(b, what, fam, target))
    p.start()
    b.close()
    if a.poll(timeout):
        out = a.recv()
    else:
        out = None
    p.join(5)
    if p.is_alive():
        p.kill()
    return out


def fmt_t(t):
    if t is None:
        return "—"
    return f"{t * 1e3:.1f} ms" if t < 1 else f"{t:.2f} s"


def main() -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--quick", action="store_true", help="sizes up to 10,000 members only")
    ap.add_argument("--max-members", type=int, default=100_000)
    ap.add_argument("--families", default="frame,compact,strip,cut,grid")
    args = ap.parse_args()
    sizes = [100, 500, 1000, 5000, 10_000, 30_000, 100_000]
    sizes = [s for s in sizes if s <= (10_000 if args.quick else args.max_members)]
    print("| family | members | A rows x cols | expected m,s | engine m,s | build A | verdict | proxy splu(K) "
          "| verdict/proxy | dense SVD | dense/verdict | bases | peak MiB | route |")
    print("|---|---|---|---|---|---|---|---|---|---|---|---|---|---|")
    for fam in args.families.split(","):
        for target in sizes:
            b = measure("build", fam, target)
            v = measure("verdict", fam, target)
            px = measure("proxy", fam, target)
            rows, cols = b["shape"]
            dn = measure("dense", fam, target, timeout=60) if rows * cols <= 4_000_000 else None
            bs = measure("bases", fam, target, timeout=60) if v and v["members"] <= 1000 else None
            ok = v is not None and (v["m"], v["s"]) == tuple(v["expected"])
            ratio = v["t"] / px["t"] if v and px and px["t"] > 0 else math.nan
            dratio = dn["t"] / v["t"] if dn and v else math.nan
            print(f"| {fam} | {b['members']} | {rows} x {cols} | {v['expected'][0]},{v['expected'][1]} | "
                  f"{v['m']},{v['s']} {'ok' if ok else 'WRONG'} | {fmt_t(b['t'])} | {fmt_t(v['t'])} | "
                  f"{fmt_t(px['t'] if px else None)} | {ratio:.2f} | {fmt_t(dn['t'] if dn else None)} | "
                  f"{'' if math.isnan(dratio) else f'{dratio:.1f}x'} | {fmt_t(bs['t'] if bs else None)} | "
                  f"{v['rss_mib']:.0f} | {v['route']} |", flush=True)
    # live target: 500 members, verdict incl. modes, median of repeated runs
    print()
    print("Live verdict at ~500 members (median of 30 runs, one node moved each run):")
    live()
    return 0


def live():
    from threadpoolctl import threadpool_limits

    from kinestat.core.classify import classify

    threadpool_limits(1)
    print("| family | members | median | p90 | m | modes |")
    print("|---|---|---|---|---|---|")
    for fam in ("frame", "strip", "cut", "grid", "compact"):
        scheme, _ = family(fam, 500)
        nid = list(scheme.nodes)[len(scheme.nodes) // 2]
        x0, y0 = scheme.node_xy(nid)
        ts = []
        for k in range(30):
            s2 = scheme.moved({nid: (x0 + 1e-3 * k, y0)})
            t = time.perf_counter(); c = classify(s2); ts.append(time.perf_counter() - t)
        print(f"| {fam} | {len(scheme.members)} | {np.median(ts) * 1e3:.2f} ms | "
              f"{np.percentile(ts, 90) * 1e3:.2f} ms | {c.mechanisms} | {len(c.modes)} |", flush=True)


if __name__ == "__main__":
    raise SystemExit(main())
