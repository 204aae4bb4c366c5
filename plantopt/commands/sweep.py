"""``plantopt sweep``: re-optimize over a line, grid or scenario list of inputs."""

from __future__ import annotations

import argparse

from plantopt.commands.common import EXIT_NOT_SOLVED, EXIT_OK, parse_sets


def add_parser(sub) -> None:
    s = sub.add_parser("sweep", help="what-if study: re-optimize over a line, grid or scenarios of input values")
    s.add_argument("flowsheet")
    s.add_argument("--vary", action="append", metavar="PATH=START:STOP:N[:UNIT]",
                   help="vary an input over N evenly spaced values (once: a line; twice: a grid)")
    s.add_argument("--scenarios", metavar="FILE.csv", help="CSV whose columns are input addresses, one scenario per row")
    s.add_argument("--out", required=True, metavar="FILE.csv|FILE.parquet",
                   help="results table (rewritten as points finish; a rerun skips finished points)")
    s.add_argument("--plot", metavar="FILE.png|FILE.svg", help="plot profit, decisions and active-set regions")
    s.add_argument("--workers", type=int, metavar="N", help="solve on N local processes")
    s.add_argument("--cluster", metavar="ADDRESS", help="solve on a Dask distributed cluster (scheduler address)")
    s.add_argument("--solver", choices=["sqp", "ipopt"], default="sqp")
    s.add_argument("--set", action="append", metavar="PATH=VALUE", help="override an input at every point")
    s.add_argument("--cold", action="store_true", help="solve every point from a cold start (no continuation)")
    s.add_argument("--chain-length", type=int, default=None, metavar="N",
                   help="cold restart every N points along an axis (default 10; 0: never)")
    s.add_argument("--predict", action="store_true",
                   help="move each warm start along the neighbour's KKT sensitivity before solving")
    s.add_argument("--no-bisect", action="store_true", help="do not locate active-set breakpoints")
    s.add_argument("--bisect-tol", type=float, default=None, metavar="FRACTION",
                   help="breakpoint tolerance as a fraction of the grid step (default 1e-3)")
    s.add_argument("--quiet", action="store_true", help="no progress bar")


def run(args: argparse.Namespace) -> int:
    from plantopt.errors import InputError
    from plantopt.flowsheet import load_flowsheet
    from plantopt.reports.table import render_sweep_summary
    from plantopt.studies import sweep as S

    sets = parse_sets(args.set)
    S.check_output_path(args.out, "--out", (".csv", ".parquet"))
    if args.plot:
        S.check_output_path(args.plot, "--plot", (".png", ".svg", ".pdf"))
    if args.bisect_tol is not None and not (0 < args.bisect_tol < 1):
        raise InputError("<command line>", "--bisect-tol", f"expected a fraction between 0 and 1, got {args.bisect_tol}")
    fs = load_flowsheet(args.flowsheet)
    chain = S.DEFAULT_CHAIN_LENGTH if args.chain_length is None else (args.chain_length or None)
    kw = dict(vary=args.vary, scenarios=args.scenarios, overrides=sets, solver=args.solver, out=args.out,
              warm=not args.cold, chain_length=chain, predict=args.predict, bisect=not args.no_bisect,
              bisect_tol=args.bisect_tol if args.bisect_tol is not None else S.DEFAULT_BISECT_TOL)
    with S.executor_for(args.workers, args.cluster) as ex:
        if args.quiet:
            result = S.run_sweep(fs, executor=ex, **kw)
        else:
            from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

            with Progress(TextColumn("sweep"), BarColumn(), MofNCompleteColumn(), TextColumn("{task.fields[last]}"),
                          TimeRemainingColumn(), transient=True) as bar:
                task = bar.add_task("sweep", total=None, last="")
                result = S.run_sweep(fs, executor=ex, progress=lambda d, t, rec: bar.update(
                    task, completed=d, total=t, last=str(rec.get("status", ""))), **kw)
    if args.plot:
        from plantopt.reports.plots import plot_sweep

        plot_sweep(result, args.plot, title=fs.name)
    print(render_sweep_summary(result, out=args.out, plot=args.plot))
    return EXIT_OK if result.n_optimal == len(result.rows) else EXIT_NOT_SOLVED
