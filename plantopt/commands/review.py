"""``plantopt review``: current against proposed operating point, for a change request."""

from __future__ import annotations

import argparse

from plantopt.commands.common import check_outputs, EXIT_NOT_SOLVED, EXIT_OK


def add_parser(sub) -> None:
    r = sub.add_parser("review", help="review a change of operating point: margins now and after, moves, a safe move plan")
    r.add_argument("flowsheet")
    r.add_argument("--current", metavar="FILE", help="present point: TOML or CSV of path/value/unit, or a result JSON "
                   "(default: the flowsheet's base values)")
    r.add_argument("--proposed", metavar="FILE", required=True, help="proposed point: an 'optimize --json' result or a point file")
    r.add_argument("--near", type=float, default=None, metavar="FRACTION",
                   help="near-active band as a fraction of each limit's scale (default 0.05)")
    r.add_argument("--steps", type=int, default=None, metavar="N", help="intermediate points checked on the ramp (default 4)")
    r.add_argument("--html", metavar="FILE", help="write the self-contained HTML report")
    r.add_argument("--json", metavar="FILE", help="write the review as JSON")


def run(args: argparse.Namespace) -> int:
    from plantopt.reports.html import write_html
    from plantopt.reports.io import write_json
    from plantopt.reports.review_text import render_review
    from plantopt.studies.review import DEFAULT_NEAR, DEFAULT_STEPS, review_files

    check_outputs((args.json, "--json"), (args.html, "--html"))
    _, result = review_files(args.flowsheet, args.proposed, args.current,
                             near=DEFAULT_NEAR if args.near is None else args.near,
                             steps=DEFAULT_STEPS if args.steps is None else args.steps)
    if args.json:
        write_json(args.json, result)
    if args.html:
        write_html(args.html, result)
    print(render_review(result))
    return EXIT_OK if result.status == "clear" else EXIT_NOT_SOLVED
