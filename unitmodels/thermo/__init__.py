"""Thermodynamics: pure-component data and casadi property expressions (SI)."""

from unitmodels.thermo.component import P_REF, R, T_REF, Component
from unitmodels.thermo.system import ComponentSystem

__all__ = ["Component", "ComponentSystem", "R", "T_REF", "P_REF"]
