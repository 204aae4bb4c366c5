"""Unit models and thermodynamics for plantopt (equations only, no solvers).

Importing this package registers every unit model class in
:data:`unitmodels.base.REGISTRY` under its ``kind`` (the ``type`` key of a
unit in a flowsheet file).
"""

from unitmodels.base import REGISTRY, Option, Param, Port, Spec, StreamSym, Symbols, UnitConfigError, UnitModel, Var, register

__all__ = ["REGISTRY", "Option", "Param", "Port", "Spec", "StreamSym", "Symbols", "UnitConfigError", "UnitModel", "Var", "register"]
