"""Command line: parses arguments, calls the library, prints. No logic here.

Each command lives in :mod:`plantopt.commands`. Exit codes: 0 success,
1 no solution reached (the JSON is still written, with its status), 2 bad
input (a message naming the file and field, no traceback), 3 an internal
error of plantopt (a one-line message; ``PLANTOPT_DEBUG=1`` shows the
traceback), 130 interrupted, 143 terminated. Output files are written
atomically, so none of these leaves a half-written file.
"""

from __future__ import annotations

import argparse
import importlib
import os
import signal
import sys
import threading
from typing import Any, Sequence

from plantopt.commands import COMMANDS
from plantopt.commands.common import EXIT_BAD_INPUT, EXIT_NOT_SOLVED
from plantopt.errors import InputError, InputErrors, PlantoptError, StructureError

EXIT_INTERNAL = 3
"""A bug in plantopt (not in the input): one line on stderr, no traceback unless PLANTOPT_DEBUG is set."""


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
    p.add_argument("--max-input-mb", metavar="N", default=None,
                   help="largest input file read, in MB (default 4, or the PLANTOPT_MAX_INPUT_MB environment variable)")
    sub = p.add_subparsers(dest="command", required=True, parser_class=_Parser)
    for mod in _modules().values():
        mod.add_parser(sub)
    return p


def _terminated(signum: int, frame: Any) -> None:
    # SIGTERM becomes an exception so that atomic writers remove their
    # temporary file and finished outputs stay as they are; the mark keeps
    # later writes from happening when the exception is swallowed inside an
    # extension module (reports.io.request_termination)
    from plantopt.reports.io import request_termination

    request_termination()
    raise SystemExit(143)


def main(argv: Sequence[str] | None = None) -> int:
    """Run one command; returns the exit code (see the module docstring)."""
    from plantopt.flowsheet import parse_megabytes, set_max_input_bytes

    from plantopt.reports.io import request_termination, termination_requested

    args = build_parser().parse_args(argv)
    request_termination(False)
    previous = None
    if threading.current_thread() is threading.main_thread():
        previous = signal.signal(signal.SIGTERM, _terminated)
    try:
        if args.max_input_mb is not None:
            set_max_input_bytes(parse_megabytes(args.max_input_mb, file="<command line>", path="--max-input-mb"))
        code = _modules()[args.command].run(args)
        return 143 if termination_requested() else code
    except (InputErrors, InputError, StructureError) as e:
        print(str(e), file=sys.stderr)
        return EXIT_BAD_INPUT
    except PlantoptError as e:
        print(f"plantopt: {e}", file=sys.stderr)
        return EXIT_NOT_SOLVED
    except KeyboardInterrupt:
        print("plantopt: interrupted; files already written are complete", file=sys.stderr)
        return 130
    except OSError as e:
        # an output that cannot be written (folder missing, disk full, no permission)
        where = e.filename if e.filename is not None else "<output>"
        print(str(InputError(str(where), "", f"cannot write or read ({e.strerror or e})")), file=sys.stderr)
        return EXIT_BAD_INPUT
    except RecursionError:
        print("plantopt: input nested too deeply to process", file=sys.stderr)
        return EXIT_BAD_INPUT
    except Exception as e:  # noqa: BLE001 - the last line of defence against a traceback
        if os.environ.get("PLANTOPT_DEBUG"):
            raise
        print(f"plantopt: internal error ({type(e).__name__}: {e}); this is a bug in plantopt, not in the input. "
              "Files already written are complete. Set PLANTOPT_DEBUG=1 to see the traceback.", file=sys.stderr)
        return EXIT_INTERNAL
    finally:
        set_max_input_bytes(None)
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
