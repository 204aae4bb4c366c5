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


def check_warm_start_file(path: str | None, option: str = "--from") -> None:
    """An earlier result used as a warm start is readable, within the size limit, and has the right shape.

    Only the shape is checked here (numbers where numbers belong, names where
    names belong); matching its variables to the flowsheet is the warm
    start's own business. A hand-edited or truncated file is refused with
    the field named instead of failing inside the solver set-up.

    Raises
    ------
    InputErrors
    """
    if not path:
        return
    import json
    import math

    from plantopt.flowsheet import describe_value, read_input_bytes

    raw = read_input_bytes(path, what=f"a result JSON for {option}")
    try:
        data = json.loads(raw.decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError, RecursionError) as exc:
        raise InputErrors([InputError(str(path), "", f"not a readable result JSON ({exc})")]) from None
    ws = data.get("warm_start") if isinstance(data, dict) else None
    if not isinstance(ws, dict):
        raise InputErrors([InputError(str(path), "warm_start", "missing: the file is not a result written by 'plantopt optimize --json'")])
    errors = []

    def number(v) -> bool:
        return v is None or (isinstance(v, (int, float)) and not isinstance(v, bool) and not math.isnan(float(v)))

    for key, kind, required in (("x", "numbers", True), ("x_paths", "names", True), ("lam_g", "numbers", False),
                                ("lam_x", "numbers", False), ("g_names", "names", False)):
        v = ws.get(key)
        if v is None and not required:
            continue
        ok = isinstance(v, list) and all(number(e) if kind == "numbers" else isinstance(e, str) for e in v)
        if not ok:
            errors.append(InputError(str(path), f"warm_start.{key}", f"expected a list of {kind}, got {describe_value(v)}"))
    if isinstance(ws.get("x"), list) and isinstance(ws.get("x_paths"), list) and len(ws["x"]) != len(ws["x_paths"]):
        errors.append(InputError(str(path), "warm_start.x", f"has {len(ws['x'])} values for {len(ws['x_paths'])} names in x_paths"))
    if ws.get("radius") is not None and not (number(ws["radius"]) and float(ws["radius"]) > 0):
        errors.append(InputError(str(path), "warm_start.radius", f"expected a positive number, got {describe_value(ws['radius'])}"))
    if errors:
        raise InputErrors(errors)
