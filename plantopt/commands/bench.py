"""``plantopt bench solvers|scale|sweep``: benchmark tables (speed targets live here, not in tests)."""

from __future__ import annotations

import argparse
import importlib

from plantopt.commands.common import EXIT_BAD_INPUT

BENCHES = {"solvers": "plantopt.bench.solvers", "scale": "plantopt.bench.scale", "sweep": "plantopt.bench.sweep"}


def add_parser(sub) -> None:
    b = sub.add_parser("bench", help="benchmarks: solvers, scale, sweep (each prints a table)")
    b.add_argument("which", choices=sorted(BENCHES))
    b.add_argument("rest", nargs=argparse.REMAINDER, help="options of that benchmark (see 'plantopt bench NAME --help')")


def run(args: argparse.Namespace) -> int:
    try:
        mod = importlib.import_module(BENCHES[args.which])
    except ModuleNotFoundError:
        print(f"plantopt: benchmark {args.which!r} is not available in this version")
        return EXIT_BAD_INPUT
    return int(mod.main(args.rest) or 0)
