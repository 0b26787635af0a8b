"""Command line: ``valvol rebuild``, ``valvol check``.

Thin by design: parse options, call the flow or a pipeline function, map
errors to exit codes (0 done, 2 invalid input or config, 3 output folder busy,
1 anything else). Bad data never shows a traceback.
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
    sub = p.add_subparsers(dest="command", required=True)

    r = sub.add_parser("rebuild", help="validate the accounts, derive every table and publish a new vintage")
    r.add_argument("accounts_dir", type=Path, help="folder of .csv/.parquet accounts files (+ optional valvol.toml)")
    r.add_argument("--out", type=Path, default=Path("valvol_out"), help="output root (default ./valvol_out)")
    r.add_argument(
        "--no-flow", action="store_true",
        help="run the same stages without Prefect (no orchestration records; faster start)",
    )

    r.add_argument(
        "--charts", metavar="CODES", default=None,
        help="comma-separated economies to chart (default: all, when there are at most ten)",
    )
    r.add_argument("--no-charts", action="store_true", help="draw no charts")

    c = sub.add_parser("check", help="validate an accounts folder only; write nothing")
    c.add_argument("accounts_dir", type=Path)
    return p


def _setup_logging(quiet: bool) -> None:
    from rich.logging import RichHandler

    handler = RichHandler(show_time=False, show_path=False, markup=False, rich_tracebacks=False)
    handler.setFormatter(logging.Formatter("%(message)s"))
    log.handlers[:] = [handler]
    log.setLevel(logging.WARNING if quiet else logging.INFO)
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
    charts = not args.no_charts
    economies = [e.strip() for e in args.charts.split(",") if e.strip()] if args.charts else None
    if args.no_flow:
        result = pipeline.rebuild(accounts, out, charts=charts, chart_economies=economies)
        target = result.path
    else:
        from valvol import prefect_env

        prefect_env.configure(out)
        from valvol.flows.rebuild import rebuild_flow

        state = rebuild_flow(str(accounts), str(out), charts, economies, return_state=True)
        if state.is_failed():
            data = state.result(raise_on_failure=False)
            if isinstance(data, list):
                raise InputError([Problem(**p) for p in data])
            if isinstance(data, BaseException):
                raise data
            raise ValvolError(f"rebuild failed: {state.message}")
        target = Path(state.result())
    res = pipeline.result_of(Path(target))
    counts = ", ".join(f"{k} {v}" for k, v in res.row_counts.items())
    print(f"vintage {res.vintage} published in {out} ({counts}); {res.warnings} check warning(s)")
    return 0


def _check(args: argparse.Namespace) -> int:
    from valvol import pipeline

    with tempfile.TemporaryDirectory(prefix="valvol-check-") as work:
        n = pipeline.check(args.accounts_dir, work)
    print(f"{args.accounts_dir}: {n} rows valid")
    return 0


def main(argv: list[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    _setup_logging(args.quiet)
    try:
        return {"rebuild": _rebuild, "check": _check}[args.command](args)
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
