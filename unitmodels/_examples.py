"""Small component systems used by the unit models' conformance cases."""

from __future__ import annotations

from functools import lru_cache

from unitmodels.thermo import ComponentSystem


@lru_cache(maxsize=None)
def aromatics() -> ComponentSystem:
    """Benzene, toluene, water (published data via ``chemicals``)."""
    return ComponentSystem(["benzene", "toluene", "water"])


@lru_cache(maxsize=None)
def esterification() -> ComponentSystem:
    """Acetic acid + ethanol -> ethyl acetate + water, a liquid-phase reaction."""
    return ComponentSystem(["acetic acid", "ethanol", "ethyl acetate", "water"])


@lru_cache(maxsize=None)
def butanes() -> ComponentSystem:
    """n-butane -> isobutane, a first-order isomerisation."""
    return ComponentSystem(["n-butane", "isobutane"])


@lru_cache(maxsize=None)
def benzene_toluene() -> ComponentSystem:
    """The textbook ideal binary for vapour-liquid equilibrium."""
    return ComponentSystem(["benzene", "toluene"])


@lru_cache(maxsize=None)
def shift() -> ComponentSystem:
    """Water-gas shift with nitrogen as inert."""
    return ComponentSystem(["carbon monoxide", "water", "carbon dioxide", "hydrogen", "nitrogen"])
