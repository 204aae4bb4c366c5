"""Small helpers shared by the command modules (argument parsing only)."""

from __future__ import annotations

from typing import Sequence

from plantopt.errors import InputError, InputErrors

EXIT_OK, EXIT_NOT_SOLVED, EXIT_BAD_INPUT = 0, 1, 2


def parse_sets(items: Sequence[str] | None, option: str = "--set") -> dict[str, str]:
    """``PATH=VALUE`` strings to a dict; every malformed item is reported."""
    out: dict[str, str] = {}
    errors = []
    for item in items or []:
        path, sep, value = item.partition("=")
        if not sep or not path.strip() or not value.strip():
            errors.append(InputError("<command line>", option, f"expected PATH=VALUE, got {item!r}"))
            continue
        out[path.strip()] = value.strip()
    if errors:
        raise InputErrors(errors)
    return out


def check_outputs(*pairs: tuple[str | None, str]) -> None:
    """Refuse output paths that cannot be written, before any work is done.

    Parameters
    ----------
    pairs : (path or None, option name)
        Each output the command was asked to write, e.g. ``(args.json, "--json")``.

    Raises
    ------
    InputErrors
        One error per unusable path: its folder is missing or not writable,
        or the path is a folder. Checking first means a long solve is never
        thrown away because its result had nowhere to go; the tool writes
        only to the paths given here (file names never come from the input).
    """
    import os
    from pathlib import Path

    errors = []
    seen: dict[str, str] = {}
    for path, option in pairs:
        if not path:
            continue
        p = Path(path)
        folder = p.parent if str(p.parent) else Path(".")
        key = os.path.abspath(p)
        if key in seen:
            errors.append(InputError(str(path), option, f"the same file is also given to {seen[key]}; each output needs its own file"))
            continue
        seen[key] = option
        if p.is_dir():
            errors.append(InputError(str(path), option, "is a folder, expected a file name to write"))
        elif not folder.is_dir():
            errors.append(InputError(str(path), option, f"folder {str(folder)!r} does not exist"))
        elif not os.access(folder, os.W_OK | os.X_OK):
            errors.append(InputError(str(path), option, f"folder {str(folder)!r} is not writable"))
        elif p.exists() and not os.access(p, os.W_OK):
            errors.append(InputError(str(path), option, "exists and is not writable"))
    if errors:
        raise InputErrors(errors)


def check_input_file(path: str | None, option: str) -> None:
    """A file the command will read later (e.g. ``--from``) exists and is within the size limit."""
    if not path:
        return
    from plantopt.flowsheet import read_input_bytes

    read_input_bytes(path, what=f"a file for {option}")
