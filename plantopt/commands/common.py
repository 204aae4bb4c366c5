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
