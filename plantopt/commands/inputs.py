"""``plantopt inputs``: every addressable input of a flowsheet."""

from __future__ import annotations

import argparse

from plantopt.commands.common import EXIT_OK, check_outputs


def add_parser(sub) -> None:
    i = sub.add_parser("inputs", help="list every addressable input of a flowsheet")
    i.add_argument("flowsheet")
    i.add_argument("--json", metavar="FILE", help="write the list as JSON")


def run(args: argparse.Namespace) -> int:
    from plantopt.flowsheet import input_rows, load_flowsheet
    from plantopt.reports.io import write_json
    from plantopt.reports.text import render_inputs

    check_outputs((args.json, "--json"))
    fs = load_flowsheet(args.flowsheet)
    rows = input_rows(fs)
    print(render_inputs(rows))
    if args.json:
        write_json(args.json, {"flowsheet": fs.file, "inputs": rows})
    return EXIT_OK
