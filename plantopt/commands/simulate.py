"""``plantopt simulate``: the steady state at the decisions' base values."""

from __future__ import annotations

import argparse

from plantopt.commands.common import EXIT_NOT_SOLVED, EXIT_OK, check_outputs, parse_sets


def add_parser(sub) -> None:
    s = sub.add_parser("simulate", help="solve the steady state with decisions at their base values")
    s.add_argument("flowsheet")
    s.add_argument("--set", action="append", metavar="PATH=VALUE", help="override an input (see 'plantopt inputs')")
    s.add_argument("--json", metavar="FILE", help="write the result as JSON")
    s.add_argument("--quiet", action="store_true", help="print only the status line")


def run(args: argparse.Namespace) -> int:
    from plantopt.flowsheet import load_flowsheet
    from plantopt.reports.io import write_json
    from plantopt.reports.text import render_run
    from plantopt.studies.simulate import simulate

    sets = parse_sets(args.set)
    check_outputs((args.json, "--json"))
    fs = load_flowsheet(args.flowsheet)
    fs.with_overrides(sets)  # every --set checked, alone and together, before any solve
    result = simulate(fs, overrides=sets)
    if args.json:
        write_json(args.json, result)
    print(f"status: {result.status}; profit {result.objective.value:,.2f} {result.objective.unit}" if args.quiet else render_run(result))
    return EXIT_OK if result.status == "converged" else EXIT_NOT_SOLVED
