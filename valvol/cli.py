"""Command line: ``valvol rebuild | check | vintages | prune | revisions | reconcile | serve | export | workbook
| report``.

Thin by design: parse options, call the flow or a package function, map errors to exit
codes (0 done, 2 invalid input or config, 3 output folder busy, 1 anything else). Bad
data never shows a traceback.
"""

from __future__ import annotations

import argparse
import logging
import sys
import tempfile
from pathlib import Path

from valvol import __version__
from valvol.errors import ConfigError, InputError, Problem, ValvolError

log = logging.getLogger("valvol")


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="valvol",
        description="Quarterly national-accounts price and volume pipeline (analytical outputs, "
        "not official statistics).",
    )
    p.add_argument("--version", action="version", version=f"valvol {__version__}")
    p.add_argument("-q", "--quiet", action="store_true", help="print only problems and the result line")
    p.add_argument("-v", "--verbose", action="store_true",
                   help="print each stage's detailed log lines as well as its progress line")
    sub = p.add_subparsers(dest="command", required=True)

    r = sub.add_parser("rebuild", help="validate the accounts, derive every table and publish a new vintage")
    r.add_argument("accounts_dir", type=Path, help="folder of .csv/.parquet accounts files (+ optional valvol.toml)")
    r.add_argument("--out", type=Path, default=Path("valvol_out"), help="output root (default ./valvol_out)")
    r.add_argument("--force", action="store_true", help="rebuild even if inputs, code and config are unchanged")
    r.add_argument("--label", help="a label appended to the vintage name (A-Z a-z 0-9 _ . -)")
    r.add_argument("--charts", metavar="CODES", default=None,
                   help="comma-separated economies to chart (default: all, when there are at most 40; "
                        "a panel also gets charts/panel_overview); an unknown code is an error")
    r.add_argument("--no-charts", action="store_true", help="draw no charts")
    r.add_argument("--no-report", action="store_true", help="write no release report (report.html) into the vintage")
    r.add_argument("--workbook", action="store_true", help="also write the review workbook (workbook.xlsx)")
    r.add_argument("--no-flow", action="store_true",
                   help="run the same stages without Prefect (no orchestration records; faster start)")
    r.add_argument("--dask", nargs="?", const="local", metavar="ADDRESS",
                   help="run the derive tasks (one per chunk of economies) on a Dask cluster: a scheduler "
                        "ADDRESS, or a local cluster when no address is given")
    r.add_argument("--chunk-size", type=_positive_int, default=0, metavar="N",
                   help="economies per derive chunk (default: one chunk per core, at most "
                        "400,000 input rows each); results are identical whatever the size")

    c = sub.add_parser("check", help="apply every rule a rebuild applies to an accounts folder; publish nothing")
    c.add_argument("accounts_dir", type=Path)

    v = sub.add_parser("vintages", help="list the vintages of an output root")
    v.add_argument("out", type=Path)

    pr = sub.add_parser("prune", help="remove old vintages, keeping the newest N (never latest)")
    pr.add_argument("out", type=Path)
    pr.add_argument("--keep", type=int, required=True)

    rv = sub.add_parser("revisions", help="revisions between two vintages (later minus earlier)")
    rv.add_argument("out", type=Path)
    rv.add_argument("--earlier", help="vintage name, prefix or label (default: the one before --later)")
    rv.add_argument("--later", help="vintage name, prefix or label (default: latest)")
    rv.add_argument("--write", type=Path, metavar="DIR", help="write revisions, summary (and triangle) parquet here")
    rv.add_argument("--triangle", metavar="ECONOMY:ITEM:MEASURE",
                    help="revision triangle over every vintage, e.g. XQ:B1GQ:growth_volume_prev_period")

    rc = sub.add_parser("reconcile", help="benchmark and reconcile an accounts folder as valvol.toml asks; "
                        "write the adjusted accounts in the input format")
    rc.add_argument("accounts_dir", type=Path)
    rc.add_argument("--to", type=Path, required=True, metavar="DIR", help="folder for the reconciled accounts")

    s = sub.add_parser("serve", help="rebuild on a schedule (a local Prefect server is started and stopped)")
    s.add_argument("accounts_dir", type=Path)
    s.add_argument("--out", type=Path, default=Path("valvol_out"))
    when = s.add_mutually_exclusive_group(required=True)
    when.add_argument("--cron", help="cron expression, e.g. '0 6 * * *'")
    when.add_argument("--interval", type=float, metavar="SECONDS")
    s.add_argument("--name", default="scheduled-rebuild", help="deployment name")
    ex = sub.add_parser("export", help="write tables of a vintage in an exchange format (SDMX-CSV)")
    ex.add_argument("out", type=Path, help="output root of rebuilds")
    ex.add_argument("--format", dest="fmt", choices=["sdmx-csv"], default="sdmx-csv")
    ex.add_argument("--vintage", help="vintage name, prefix or label (default: latest)")
    ex.add_argument("--table", action="append", metavar="T", help="a table to write (repeatable; default: all)")
    ex.add_argument("--to", type=Path, required=True, metavar="DIR", help="folder for <table>.csv files")

    wb = sub.add_parser("workbook", help="write a vintage's tables, checks and charts as an Excel workbook")
    wb.add_argument("out", type=Path, help="output root holding the vintages")
    wb.add_argument("--vintage", help="vintage name, prefix or label (default: latest)")
    wb.add_argument("--to", type=Path, required=True, metavar="FILE.xlsx")

    rp = sub.add_parser("report", help="write a vintage's release report: one self-contained HTML file")
    rp.add_argument("out", type=Path, help="output root holding the vintages")
    rp.add_argument("--vintage", help="vintage name, prefix or label (default: latest)")
    rp.add_argument("--to", type=Path, metavar="FILE.html",
                    help="where to write it (default: the report.html the rebuild wrote into the vintage)")
    return p


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        value = 0
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a whole number of at least 1, got {text!r}")
    return value


def _setup_logging(quiet: bool, verbose: bool = False) -> None:
    """Warnings always; the stages' detailed lines (INFO) with ``-v``, and for commands other than
    ``rebuild`` and ``check``, whose stages report through the progress lines (`valvol.progress`)."""
    handler = logging.StreamHandler(sys.stderr)
    handler.setFormatter(logging.Formatter("valvol: %(message)s"))
    log.handlers[:] = [handler]
    log.setLevel(logging.DEBUG if verbose and not quiet else logging.WARNING if quiet else logging.INFO)
    log.propagate = False


def _print_problems(problems: list[Problem], limit: int = 200) -> None:
    err = sys.stderr
    print(f"invalid input: {len(problems)} problem(s)", file=err)
    for p in problems[:limit]:
        print("  " + p.render(), file=err)
    if len(problems) > limit:
        print(f"  ... and {len(problems) - limit} more", file=err)


def _rebuild(args: argparse.Namespace) -> int:
    from valvol import pipeline

    accounts, out = args.accounts_dir, args.out
    if not accounts.is_dir():
        raise InputError([Problem(file=str(accounts), reason="accounts folder does not exist")])
    options = {
        "force": args.force, "label": args.label, "charts": not args.no_charts,
        "chart_economies": [e.strip() for e in args.charts.split(",") if e.strip()] if args.charts else None,
        "chunk_size": args.chunk_size, "report": not args.no_report, "workbook": args.workbook,
    }
    from valvol import progress

    if not args.quiet and not args.verbose:
        log.setLevel(logging.WARNING)  # the progress lines tell the stages
    with progress.use(progress.for_console(args.quiet)):
        if args.no_flow:
            res = pipeline.rebuild(accounts, out, **options)
        else:
            res = _run_flow(accounts, out, args.dask, options)
    if res.unchanged:
        print(f"unchanged: inputs, code and config as in vintage {res.vintage}; nothing rebuilt (use --force)")
        return 0
    counts = ", ".join(f"{k} {v}" for k, v in res.row_counts.items())
    print(f"vintage {res.vintage} published in {out} ({counts}); {res.warnings} check warning(s)")
    print(_flagged_summary(res, out))
    return 0


def _flagged_summary(res, out: Path) -> str:
    """Every warned or failed check rule with its count, and where to read them."""
    lines = []
    if res.flagged:
        lines.append("checks to review: " + ", ".join(f"{rule} {n} ({status})" for (status, rule), n in
                                                     res.flagged.items())
                     + f"; rows in {out / 'checks.parquet'} (columns rule, status)")
    else:
        lines.append("checks: none warns or fails")
    for name in res.review:
        lines.append(f"{'release report' if name.endswith('.html') else 'review workbook'}: {out / name}")
    return "\n".join(lines)


def _run_flow(accounts: Path, out: Path, dask: str | None, options: dict):
    from valvol import pipeline, prefect_env
    from valvol.config import load_config
    from valvol.io.publish import check_output_folder, output_lock

    check_output_folder(accounts, out)  # a misplaced output folder, a bad config or label, or a busy
    config = load_config(accounts)  # output folder stops before Prefect starts
    pipeline.rebuild_options(options["label"], options["charts"], options["chart_economies"])
    from valvol import progress

    if progress.active() is not None:  # Prefect takes a few seconds before the first stage reports
        print("valvol: starting the Prefect flow valvol-rebuild", file=sys.stderr, flush=True)
    with output_lock(out):
        pass
    prefect_env.configure()
    from valvol.flows.rebuild import dask_runner, rebuild_flow

    flow = rebuild_flow
    if dask:
        flow = rebuild_flow.with_options(task_runner=dask_runner(None if dask == "local" else dask))
        options = options | {"workers": 1}  # the cluster's workers run the chunks
    state = flow(str(accounts), str(out), return_state=True, config=config, **options)
    if state.is_failed():
        data = state.result(raise_on_failure=False)
        if isinstance(data, list):
            raise InputError([Problem(**p) for p in data])
        if isinstance(data, BaseException):
            raise data
        raise ValvolError(f"rebuild failed: {state.message}")
    target = Path(state.result())
    return pipeline.result_of(target, unchanged=(state.message or "").startswith("unchanged"))


def _check(args: argparse.Namespace) -> int:
    from valvol import pipeline, progress

    if not args.quiet and not args.verbose:
        log.setLevel(logging.WARNING)  # the progress lines tell the stages
    with tempfile.TemporaryDirectory(prefix="valvol-check-") as work, progress.use(progress.for_console(args.quiet)):
        n = pipeline.check(args.accounts_dir, work)
    print(f"{args.accounts_dir}: {n} rows valid")
    return 0


def _vintages(args: argparse.Namespace) -> int:
    from valvol.vintages import list_vintages

    found = list_vintages(args.out)
    if not found:
        print(f"no vintage in {args.out}")
        return 0
    print(f"{'vintage':<45} {'created (UTC)':<26} {'rows':>9}  label")
    for v in found:
        mark = "  <- latest" if v.latest else ""
        print(f"{v.name:<45} {v.created_at:<26} {v.rows:>9}  {v.label or ''}{mark}")
    return 0


def _prune(args: argparse.Namespace) -> int:
    from valvol.vintages import prune

    removed = prune(args.out, args.keep)
    print(f"removed {len(removed)} vintage(s)" + (": " + ", ".join(removed) if removed else ""))
    return 0


def _revisions(args: argparse.Namespace) -> int:
    from valvol import vintage_revisions

    report = vintage_revisions.compare(args.out, args.earlier, args.later, write=args.write, triangle=args.triangle)
    print(report)
    return 0


def _reconcile(args: argparse.Namespace) -> int:
    from valvol import pipeline

    if args.to.resolve() == args.accounts_dir.resolve():
        raise ValvolError("--to must differ from the accounts folder (the input is never overwritten)")
    report = pipeline.reconciled_accounts(args.accounts_dir, args.to)
    moved = report[report["adjustment"].abs() > 1e-9 * report["before"].abs().clip(lower=1.0)]
    print(f"reconciled accounts written to {args.to}: {len(moved)} quarterly values adjusted "
          f"(largest {moved['adjustment_pct'].abs().max() if len(moved) else 0:.2f}%); report in "
          f"{args.to / 'reconciliation' / 'report.csv'}")
    return 0


def _serve(args: argparse.Namespace) -> int:
    from valvol.serve import serve

    serve(args.accounts_dir, args.out, cron=args.cron, interval=args.interval, name=args.name)
    return 0


def _export(args: argparse.Namespace) -> int:
    from valvol.io.sdmx_export import export_vintage

    written = export_vintage(args.out, args.to, vintage=args.vintage, tables=args.table, fmt=args.fmt)
    print(f"wrote {len(written)} table(s) as {args.fmt} to {args.to}: {', '.join(p.name for p in written)}")
    return 0


def _workbook(args: argparse.Namespace) -> int:
    from valvol.review.workbook import workbook_of_vintage
    from valvol.vintages import resolve

    v = resolve(args.out, args.vintage)
    if args.to.suffix.lower() != ".xlsx":
        raise ValvolError(f"--to {args.to}: the workbook's file name must end in .xlsx")
    print(f"review workbook of vintage {v.name}: {workbook_of_vintage(v.path, args.to)}")
    return 0


def _report(args: argparse.Namespace) -> int:
    from valvol.pipeline import REPORT_FILE
    from valvol.review.report import report_of_vintage
    from valvol.vintages import resolve

    v = resolve(args.out, args.vintage)
    if args.to is None and (v.path / REPORT_FILE).exists():
        print(f"release report of vintage {v.name}: {v.path / REPORT_FILE}")
        return 0
    if args.to is None:  # a vintage built with --no-report: write the report beside its tables
        raise ValvolError(f"vintage {v.name} has no {REPORT_FILE} (built with --no-report, and vintages are "
                          "immutable): give --to FILE.html")
    print(f"release report of vintage {v.name}: {report_of_vintage(v.path, args.to)}")
    return 0


COMMANDS = {"rebuild": _rebuild, "check": _check, "vintages": _vintages, "prune": _prune,
            "revisions": _revisions, "reconcile": _reconcile, "serve": _serve, "export": _export,
            "workbook": _workbook, "report": _report}


def main(argv: list[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    _setup_logging(args.quiet, args.verbose)
    try:
        return COMMANDS[args.command](args)
    except InputError as err:
        _print_problems(err.problems)
        return err.exit_code
    except ConfigError as err:
        print(f"invalid configuration: {err}", file=sys.stderr)
        return err.exit_code
    except ValvolError as err:
        print(f"valvol: {err}", file=sys.stderr)
        return err.exit_code
    except KeyboardInterrupt:
        print("valvol: interrupted; earlier outputs are intact", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
