"""Command line: parses arguments, calls the library, prints. No logic here.

Exit codes: 0 success, 1 no solution reached (the JSON is still written,
with its status), 2 bad input (a message naming the file and field).
"""

from __future__ import annotations

import argparse
import sys
from typing import Sequence

from plantopt.errors import InputError, InputErrors, PlantoptError, StructureError

EXIT_OK, EXIT_NOT_SOLVED, EXIT_BAD_INPUT = 0, 1, 2


class _Parser(argparse.ArgumentParser):
    def error(self, message: str):  # argparse exits 2 already; keep the message short
        self.print_usage(sys.stderr)
        self.exit(EXIT_BAD_INPUT, f"plantopt: error: {message}\n")


def _parse_sets(items: Sequence[str] | None) -> dict[str, str]:
    out: dict[str, str] = {}
    errors = []
    for item in items or []:
        path, sep, value = item.partition("=")
        if not sep or not path.strip() or not value.strip():
            errors.append(InputError("<command line>", "--set", f"expected PATH=VALUE, got {item!r}"))
            continue
        out[path.strip()] = value.strip()
    if errors:
        raise InputErrors(errors)
    return out


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="plantopt", description="Economic steady-state optimization of process plants. "
                "Results are advisory; plant changes follow the site's management-of-change procedure.")
    sub = p.add_subparsers(dest="command", required=True)

    s = sub.add_parser("simulate", help="solve the steady state with decisions at their base values")
    s.add_argument("flowsheet")
    s.add_argument("--set", action="append", metavar="PATH=VALUE", help="override an input (see 'plantopt inputs')")
    s.add_argument("--json", metavar="FILE", help="write the result as JSON")
    s.add_argument("--quiet", action="store_true", help="print only the status line")

    i = sub.add_parser("inputs", help="list every addressable input of a flowsheet")
    i.add_argument("flowsheet")
    i.add_argument("--json", metavar="FILE")

    o = sub.add_parser("optimize", help="most profitable steady state within limits")
    o.add_argument("flowsheet")
    o.add_argument("--solver", choices=["sqp", "ipopt"], default="sqp")
    o.add_argument("--set", action="append", metavar="PATH=VALUE")
    o.add_argument("--from", dest="from_result", metavar="RESULT.json", help="warm-start from an earlier result")
    o.add_argument("--json", metavar="FILE")
    o.add_argument("--quiet", action="store_true")
    o.add_argument("--verbose", action="store_true", help="print the solver's iteration log")
    return p


def main(argv: Sequence[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    try:
        return _run(args)
    except InputErrors as e:
        print(str(e), file=sys.stderr)
        return EXIT_BAD_INPUT
    except InputError as e:
        print(str(e), file=sys.stderr)
        return EXIT_BAD_INPUT
    except StructureError as e:
        print(str(e), file=sys.stderr)
        return EXIT_BAD_INPUT
    except PlantoptError as e:
        print(f"plantopt: {e}", file=sys.stderr)
        return EXIT_NOT_SOLVED


def _run(args: argparse.Namespace) -> int:
    from plantopt.flowsheet import input_rows, load_flowsheet
    from plantopt.reports.io import write_json
    from plantopt.reports.text import render_inputs, render_run

    fs = load_flowsheet(args.flowsheet)
    if args.command == "inputs":
        rows = input_rows(fs)
        print(render_inputs(rows))
        if args.json:
            write_json(args.json, {"flowsheet": fs.file, "inputs": rows})
        return EXIT_OK
    sets = _parse_sets(getattr(args, "set", None))
    if args.command == "simulate":
        from plantopt.studies.simulate import simulate

        result = simulate(fs, overrides=sets)
        ok = result.status == "converged"
    elif args.command == "optimize":
        from plantopt.studies.optimize import optimize

        result = optimize(fs, overrides=sets, solver=args.solver, warm_from=args.from_result,
                          options={"verbose": 1} if args.verbose else None)
        ok = result.status == "optimal"
    else:  # pragma: no cover - argparse guards this
        return EXIT_BAD_INPUT
    if args.json:
        write_json(args.json, result)
    if getattr(args, "quiet", False):
        print(f"status: {result.status}; profit {result.objective.value:,.2f} {result.objective.unit}")
    else:
        print(render_run(result))
    return EXIT_OK if ok else EXIT_NOT_SOLVED


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
