"""Unit models and thermodynamics for plantopt (equations only, no solvers).

Importing this package registers every unit model class in
:data:`unitmodels.base.REGISTRY` under its ``kind`` (the ``type`` key of a
unit in a flowsheet file).
"""

from unitmodels.base import (
    REGISTRY,
    ConformanceCase,
    Option,
    Param,
    Port,
    Spec,
    StreamSym,
    Symbols,
    UnitConfigError,
    UnitModel,
    Var,
    register,
)
from unitmodels import units as _units  # noqa: F401  (registers the classes)
from unitmodels.kinetics import Reaction
from unitmodels.thermo import Component, ComponentSystem

__all__ = [
    "REGISTRY",
    "Component",
    "ComponentSystem",
    "ConformanceCase",
    "Option",
    "Param",
    "Port",
    "Reaction",
    "Spec",
    "StreamSym",
    "Symbols",
    "UnitConfigError",
    "UnitModel",
    "Var",
    "register",
]
