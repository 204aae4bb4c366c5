"""Command line: parses arguments, calls the library, prints. No logic here.

Each command lives in :mod:`plantopt.commands`. Exit codes: 0 success,
1 no solution reached (the JSON is still written, with its status), 2 bad
input (a message naming the file and field, no traceback).
"""

from __future__ import annotations

import argparse
import importlib
import sys
from typing import Sequence

from plantopt.commands import COMMANDS
from plantopt.commands.common import EXIT_BAD_INPUT, EXIT_NOT_SOLVED
from plantopt.errors import InputError, InputErrors, PlantoptError, StructureError


class _Parser(argparse.ArgumentParser):
    def error(self, message: str):
        self.print_usage(sys.stderr)
        self.exit(EXIT_BAD_INPUT, f"plantopt: error: {message}\n")


def _modules():
    out = {}
    for name in COMMANDS:
        try:
            out[name] = importlib.import_module(f"plantopt.commands.{name}")
        except ModuleNotFoundError as exc:
            if exc.name != f"plantopt.commands.{name}":
                raise
    return out


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="plantopt", description="Economic steady-state optimization of process plants. "
                "Results are advisory; plant changes follow the site's management-of-change procedure.")
    sub = p.add_subparsers(dest="command", required=True, parser_class=_Parser)
    for mod in _modules().values():
        mod.add_parser(sub)
    return p


def main(argv: Sequence[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    try:
        return _modules()[args.command].run(args)
    except (InputErrors, InputError, StructureError) as e:
        print(str(e), file=sys.stderr)
        return EXIT_BAD_INPUT
    except PlantoptError as e:
        print(f"plantopt: {e}", file=sys.stderr)
        return EXIT_NOT_SOLVED
    except KeyboardInterrupt:
        print("plantopt: interrupted; files already written are complete", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
