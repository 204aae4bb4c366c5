"""plantopt: economic steady-state optimization of process plants.

Results are advisory. Plant changes follow the site's management-of-change
procedure; local codes and licensed engineering review prevail.

Public API::

    from plantopt import load_flowsheet, simulate, optimize, solve_nlp
"""

from __future__ import annotations

__version__ = "0.1.0"

_API = {
    "load_flowsheet": ("plantopt.flowsheet", "load_flowsheet"),
    "loads_flowsheet": ("plantopt.flowsheet", "loads_flowsheet"),
    "assemble": ("plantopt.assembly", "assemble"),
    "simulate": ("plantopt.studies.simulate", "simulate"),
    "optimize": ("plantopt.studies.optimize", "optimize"),
    "solve_nlp": ("plantopt.solver", "solve_nlp"),
    "solve_equations": ("plantopt.solver", "solve_equations"),
}

__all__ = ["__version__", *_API]


def __getattr__(name: str):
    # imported on first use so that 'plantopt --help' stays quick
    if name in _API:
        import importlib

        mod, attr = _API[name]
        return getattr(importlib.import_module(mod), attr)
    raise AttributeError(f"module 'plantopt' has no attribute {name!r}")
