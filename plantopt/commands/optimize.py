"""``plantopt optimize``: the most profitable steady state within the limits."""

from __future__ import annotations

import argparse

from plantopt.commands.common import EXIT_NOT_SOLVED, EXIT_OK, check_outputs, check_warm_start_file, parse_sets


def add_parser(sub) -> None:
    o = sub.add_parser("optimize", help="most profitable steady state within limits")
    o.add_argument("flowsheet")
    o.add_argument("--solver", choices=["sqp", "ipopt"], default="sqp", help="our filter trust-region SQP (default) or IPOPT as a cross-check")
    o.add_argument("--set", action="append", metavar="PATH=VALUE", help="override an input (see 'plantopt inputs')")
    o.add_argument("--from", dest="from_result", metavar="RESULT.json", help="warm-start from an earlier result")
    o.add_argument("--json", metavar="FILE", help="write the result as JSON")
    o.add_argument("--quiet", action="store_true", help="print only the status line")
    o.add_argument("--verbose", action="store_true", help="print the solver's iteration log")
    o.add_argument("--sensitivity", action="extend", nargs="*", metavar="PATH",
                   help="derivatives of optimal profit and decisions w.r.t. every price (and each PATH) from the KKT system")


def run(args: argparse.Namespace) -> int:
    from plantopt.flowsheet import load_flowsheet
    from plantopt.reports.io import write_json
    from plantopt.reports.text import render_run
    from plantopt.studies.optimize import optimize

    sets = parse_sets(args.set)
    check_outputs((args.json, "--json"))
    check_warm_start_file(args.from_result, "--from")
    fs = load_flowsheet(args.flowsheet)
    fs.with_overrides(sets)  # every --set checked, alone and together, before any solve
    result = optimize(fs, overrides=sets, solver=args.solver, warm_from=args.from_result,
                      options={"verbose": 1} if args.verbose else None)
    if args.sensitivity is not None and result.status == "optimal":
        from plantopt.assembly import assemble
        from plantopt.studies.sensitivity import default_inputs, sensitivity

        asm = assemble(fs)
        extra = [q for q in args.sensitivity if q]
        result.sensitivity = sensitivity(fs, result, assembly=asm, overrides=sets,
                                         inputs=default_inputs(fs, asm) + [q for q in extra if q not in default_inputs(fs, asm)])
    if args.json:
        write_json(args.json, result)
    print(f"status: {result.status}; profit {result.objective.value:,.2f} {result.objective.unit}" if args.quiet else render_run(result))
    return EXIT_OK if result.status == "optimal" else EXIT_NOT_SOLVED
