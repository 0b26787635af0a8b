"""Speed of benchmarking, temporal disaggregation and reconciliation on synthetic panels.

    python benchmarks/bench_benchmark.py [--series 10000] [--years 30] [--repeat 3]

Prints wall-clock seconds (best of ``--repeat``) for:

* proportional and additive Denton of ``--series`` quarterly series of ``--years`` years (the
  last year without a benchmark, so its quarters are extrapolated), one call each;
* Chow-Lin with a fixed rho on the same panel, and with rho estimated by maximum likelihood on
  a tenth of it;
* reconciliation of 20 components x 120 quarters (one of them sign-changing, one with a minus
  sign) to 29 annual benchmarks each and a quarterly total, both methods.
"""

from __future__ import annotations

import argparse
import os
import platform
import time

import numpy as np
import pandas as pd

from valvol.methods.benchmark import denton
from valvol.methods.chow_lin import chow_lin
from valvol.methods.reconcile import reconcile


def panel(nseries: int, nyears: int, seed: int = 0) -> tuple[pd.DataFrame, pd.DataFrame]:
    rng = np.random.default_rng(seed)
    q = 4 * nyears
    values = 100 * np.exp(np.cumsum(rng.normal(0.005, 0.01, (nseries, q)), axis=1))
    t = np.tile(np.arange(q), nseries) + 4 * 1995
    names = np.array([f"S{i:05d}" for i in range(nseries)], dtype=object)
    ind = pd.DataFrame({"series": np.repeat(names, q), "year": t // 4, "quarter": t % 4 + 1,
                        "value": values.ravel()})
    ann = values[:, : 4 * (nyears - 1)].reshape(nseries, nyears - 1, 4).sum(2)
    ann *= rng.uniform(0.97, 1.03, ann.shape)
    bench = pd.DataFrame({"series": np.repeat(names, nyears - 1),
                          "year": np.tile(1995 + np.arange(nyears - 1), nseries), "value": ann.ravel()})
    return ind, bench


def system(ncomp: int = 20, nq: int = 120, seed: int = 1):
    rng = np.random.default_rng(seed)
    truth = 100 * np.exp(np.cumsum(rng.normal(0.01, 0.02, (ncomp, nq)), axis=1)) * rng.uniform(0.5, 3, (ncomp, 1))
    truth[-1] = rng.normal(0, 20, nq)  # inventories: changes sign
    names = [f"C{i:02d}" for i in range(ncomp)]
    signs = {s: (-1 if i == 1 else 1) for i, s in enumerate(names)}
    z = truth * rng.uniform(0.97, 1.03, truth.shape)
    t = np.arange(nq) + 4 * 1995
    comp = pd.DataFrame({"series": np.repeat(names, nq), "year": np.tile(t // 4, ncomp),
                         "quarter": np.tile(t % 4 + 1, ncomp), "value": z.ravel()})
    sg = np.array([signs[s] for s in names], float)
    total = pd.DataFrame({"year": t // 4, "quarter": t % 4 + 1, "value": (sg[:, None] * truth).sum(0)})
    ny = nq // 4 - 1
    ann = truth[:, : 4 * ny].reshape(ncomp, ny, 4).sum(2)
    annual = pd.DataFrame({"series": np.repeat(names, ny), "year": np.tile(1995 + np.arange(ny), ncomp),
                           "value": ann.ravel()})
    return comp, signs, total, annual


def best_of(repeat: int, fn) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--series", type=int, default=10_000)
    ap.add_argument("--years", type=int, default=30)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    print(f"machine: {platform.machine()}, {cores} core(s) available ({os.cpu_count()} logical), "
          f"Python {platform.python_version()}, numpy {np.__version__}, pandas {pd.__version__}")
    ind, bench = panel(args.series, args.years)
    nq = len(ind)
    print(f"panel: {args.series} series x {4 * args.years} quarters = {nq:,} values, "
          f"{len(bench):,} benchmarks (last year extrapolated)")
    for method in ("proportional", "additive"):
        s = best_of(args.repeat, lambda m=method: denton(ind, bench, method=m))
        print(f"  denton {method:<13} {s:7.2f} s   ({nq / s / 1e6:.2f} M quarters/s)")
    s = best_of(args.repeat, lambda: chow_lin(ind, bench, rho=0.7))
    print(f"  chow_lin rho fixed      {s:7.2f} s")
    tenth = max(args.series // 10, 1)
    keep = ind["series"].isin(ind["series"].unique()[:tenth])
    sub_i, sub_b = ind[keep], bench[bench["series"].isin(ind["series"].unique()[:tenth])]
    s = best_of(args.repeat, lambda: chow_lin(sub_i, sub_b))
    print(f"  chow_lin rho by ML      {s:7.2f} s   ({tenth} series)")
    comp, signs, total, annual = system()
    print("reconciliation: 20 components x 120 quarters, 29 benchmark years, one sign-changing component")
    for method in ("proportional_denton", "wls"):
        s = best_of(args.repeat, lambda m=method: reconcile(comp, signs, total, annual, method=m))
        print(f"  reconcile {method:<20} {s * 1000:7.1f} ms")


if __name__ == "__main__":
    main()
