"""The whole rebuild against its I/O floor and a per-series pandas loop, at several panel sizes.

    python benchmarks/bench_rebuild.py [--sizes 10,100,1000] [--years 30] [--work DIR]
                                       [--baseline-max 100] [--no-flow-runs]

For each size (economies of the invented panel of ``synthetic.py``: 15 items, ``--years`` years
of quarters and years at current and previous-year prices), measured in one run as separate
processes, each timed from outside (wall clock and the process's peak resident memory, from
the operating system's accounting of the finished child):

* ``plain``: ``valvol rebuild DIR --out OUT --no-flow --no-charts --no-report --force`` (a
  fresh output folder, so no revisions; no review outputs);
* ``flow``: the same through the Prefect flow (its embedded server started by the run);
* ``floor``: DuckDB alone reads the same CSV and writes as many parquet rows as the rebuild
  published (in columns of the same kinds);
* ``baseline``: ``baseline_loop.py``, deflators, volume growth and volume contributions with a
  pandas loop per series; its results are checked against the rebuild's on the smallest size.
  Above ``--baseline-max`` economies it runs on the first ``--baseline-max`` economies and is
  scaled by the economies' ratio (it is linear in them: one loop iteration per series),
  marked ``*``.

Then the flow's fixed overhead on the demo (``sample_accounts``): flow minus plain, both with a
warm Prefect home. Prints a table of wall seconds, peak memory (GiB), input rows per second and
the ratios rebuild/floor and baseline/rebuild, and the growth of time against the growth of rows
between consecutive sizes.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import time
from pathlib import Path

import pandas as pd

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from synthetic import write_accounts  # noqa: E402

VALVOL = [str(Path(sys.executable).with_name("valvol"))]

FLOOR = """
import sys, duckdb
src, out, n = sys.argv[1], sys.argv[2], int(sys.argv[3])
con = duckdb.connect()
con.execute("CREATE TABLE i AS SELECT * FROM read_csv($p, all_varchar=true)", {"p": src + "/accounts.csv"})
rows = con.execute("SELECT count(*) FROM i").fetchone()[0]
k = -(-n // rows)
con.execute("COPY (SELECT economy, period, item, price_basis, CAST(value AS DOUBLE) AS value FROM i, range("
            + str(k) + ") LIMIT " + str(n) + ") TO '" + out + "' (FORMAT parquet)")
"""


def measure(cmd: list[str], cwd: Path, env: dict | None = None) -> tuple[float, float]:
    """Wall seconds and peak resident memory (GiB) of a child process and its children."""
    start = time.perf_counter()
    proc = subprocess.Popen(cmd, cwd=cwd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - start
    err = proc.stderr.read().decode()
    proc.stderr.close()
    if os.waitstatus_to_exitcode(status) != 0:
        raise SystemExit(f"failed: {' '.join(cmd)}\n{err}")
    return wall, usage.ru_maxrss / 2**20  # kilobytes on Linux


def published_rows(out: Path) -> int:
    manifest = json.loads((out / "latest" / "manifest.json").read_text())
    return sum(manifest["row_counts"].values())


def check_baseline(base: Path, out: Path) -> str:
    """Largest absolute difference between the baseline's and the rebuild's values."""
    diffs = {}
    ours = pd.read_parquet(out / "deflators.parquet")
    theirs = pd.read_parquet(base / "deflators.parquet")
    m = theirs.merge(ours, on=["economy", "item", "frequency", "period"])
    diffs["deflators"] = (len(m) == len(theirs), (m["deflator_x"] - m["deflator_y"]).abs().max())
    ours = pd.read_parquet(out / "growth.parquet").query(
        "measure == 'volume' and horizon == 'prev_period' and frequency == 'Q'")
    theirs = pd.read_parquet(base / "growth.parquet")
    m = theirs.merge(ours, on=["economy", "item", "period"])
    diffs["volume growth"] = (len(m) == len(theirs), (m["pct_x"] - m["pct_y"]).abs().max())
    ours = pd.read_parquet(out / "volume_contributions.parquet").query("horizon == 'prev_period' and frequency == 'Q'")
    theirs = pd.read_parquet(base / "contributions.parquet")
    m = theirs.merge(ours, on=["economy", "period", "aggregate", "item"])
    diffs["contributions"] = (len(m) == len(theirs), (m["contribution_pp_x"] - m["contribution_pp_y"]).abs().max())
    bad = [k for k, (complete, d) in diffs.items() if not complete or not d < 1e-9]
    if bad:
        raise SystemExit(f"baseline and rebuild differ: {diffs}")
    return ", ".join(f"{k} {d:.1e}" for k, (_, d) in diffs.items())


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", default="10,100,1000")
    parser.add_argument("--years", type=int, default=30)
    parser.add_argument("--work", type=Path, default=Path("bench_work"))
    parser.add_argument("--baseline-max", type=int, default=100)
    parser.add_argument("--no-flow-runs", action="store_true", help="skip the flow rebuilds of the panels")
    args = parser.parse_args()
    sizes = [int(s) for s in args.sizes.split(",")]
    work = args.work.resolve()
    work.mkdir(parents=True, exist_ok=True)
    env = {**os.environ, "PREFECT_LOGGING_LEVEL": "ERROR"}
    print(f"machine: {os.cpu_count()} cores, Python {sys.version.split()[0]}; panel: 15 items, {args.years} years")
    results = []
    for n in sizes:
        accounts = work / f"accounts_{n}"
        if not (accounts / "accounts.csv").exists():
            write_accounts(accounts, n, args.years)
        rows = sum(1 for _ in (accounts / "accounts.csv").open()) - 1
        out = work / f"out_{n}"
        shutil.rmtree(out, ignore_errors=True)
        plain = measure([*VALVOL, "-q", "rebuild", str(accounts), "--out", str(out), "--no-flow", "--no-charts",
                         "--no-report", "--force"], work, env)
        published = published_rows(out)
        flow = (None, None)
        if not args.no_flow_runs:
            shutil.rmtree(work / f"flow_{n}", ignore_errors=True)
            flow = measure([*VALVOL, "-q", "rebuild", str(accounts), "--out", str(work / f"flow_{n}"),
                            "--no-charts", "--no-report", "--force"], work, env)
        floor = measure([sys.executable, "-c", FLOOR, str(accounts), str(work / "floor.parquet"), str(published)],
                        work, env)
        scale, base_accounts = 1.0, accounts
        if n > args.baseline_max:
            scale, base_accounts = n / args.baseline_max, work / f"accounts_{args.baseline_max}"
            if not (base_accounts / "accounts.csv").exists():
                write_accounts(base_accounts, args.baseline_max, args.years)
        baseline = measure([sys.executable, str(HERE / "baseline_loop.py"), str(base_accounts), str(work / "base")],
                           work, env)
        checked = check_baseline(work / "base", out) if n == min(sizes) else ""
        results.append({"economies": n, "rows": rows, "published": published, "plain": plain, "flow": flow,
                        "floor": floor, "baseline": baseline[0] * scale, "extrapolated": scale > 1,
                        "checked": checked})
        print(f"  {n} economies done: plain {plain[0]:.1f} s", flush=True)
    demo = HERE.parent / "sample_accounts"
    measure([*VALVOL, "-q", "rebuild", str(demo), "--out", str(work / "demo_flow"), "--force"], work, env)  # warm
    demo_flow = measure([*VALVOL, "-q", "rebuild", str(demo), "--out", str(work / "demo_flow"), "--force"], work, env)
    demo_plain = measure([*VALVOL, "-q", "rebuild", str(demo), "--out", str(work / "demo_plain"), "--force",
                          "--no-flow"], work, env)

    print()
    print("| economies | input rows | rows published | plain s | flow s | floor s | baseline s | "
          "peak GiB (plain) | input rows/s | plain/floor | baseline/plain |")
    print("|---|---|---|---|---|---|---|---|---|---|---|")
    for r in results:
        flow = f"{r['flow'][0]:.1f}" if r["flow"][0] is not None else "-"
        star = "*" if r["extrapolated"] else ""
        print(f"| {r['economies']:,} | {r['rows']:,} | {r['published']:,} | {r['plain'][0]:.1f} | {flow} | "
              f"{r['floor'][0]:.1f} | {r['baseline']:.1f}{star} | {r['plain'][1]:.2f} | "
              f"{r['rows'] / r['plain'][0]:,.0f} | {r['plain'][0] / r['floor'][0]:.2f} | "
              f"{r['baseline'] / r['plain'][0]:.2f} |")
    for a, b in zip(results[:-1], results[1:], strict=True):
        print(f"{a['economies']} -> {b['economies']} economies: rows x{b['rows'] / a['rows']:.1f}, "
              f"plain time x{b['plain'][0] / a['plain'][0]:.1f}")
    print(f"demo: plain {demo_plain[0]:.1f} s, flow {demo_flow[0]:.1f} s, flow's fixed overhead "
          f"{demo_flow[0] - demo_plain[0]:.1f} s (warm Prefect home)")
    for r in results:
        if r["checked"]:
            print(f"baseline against rebuild, {r['economies']} economies, largest |difference|: {r['checked']}")
    if any(r["extrapolated"] for r in results):
        print(f"* baseline measured on {args.baseline_max} economies and scaled linearly")


if __name__ == "__main__":
    main()
