"""Power-law reaction kinetics with Arrhenius rate constants.

A :class:`Reaction` is declared once in a flowsheet (``reactions.<name>``)
and hosted by one or more reactors. Its rate is

    r = k(T) * prod_i a_i ** alpha_i   [- k_rev(T) * prod_i a_i ** beta_i]

with ``a_i`` the concentration (mol/m**3), partial pressure (Pa), mole
fraction or mass fraction of component ``i`` (the ``basis``), and

    k(T) = k0 * exp(-Ea/R * (1/T - 1/T_ref))   (T_ref given)
    k(T) = k0 * exp(-Ea/(R T))                 (no T_ref)

``r`` is per unit reactor volume (mol/m**3/s), per catalyst mass or per
liquid holdup mass (mol/kg/s) depending on ``rate_per``. The production
rate of component ``i`` is ``nu_i * r`` times the volume or mass.
"""

from __future__ import annotations

import math
from typing import Any, Mapping

import casadi as ca

from unitmodels.base import Param, UnitConfigError
from unitmodels.thermo.component import R

BASES = ("concentration", "partial_pressure", "mole_fraction", "mass_fraction")
RATE_PER = ("volume", "catalyst_mass", "holdup_mass")

# SI base-unit exponents (mol, m, kg, s, Pa) of one unit of each basis quantity.
_BASIS_DIM = {
    "concentration": {"mol": 1, "m": -3},
    "partial_pressure": {"Pa": 1},
    "mole_fraction": {},
    "mass_fraction": {},
}
_RATE_DIM = {
    "volume": {"mol": 1, "m": -3, "s": -1},
    "catalyst_mass": {"mol": 1, "kg": -1, "s": -1},
    "holdup_mass": {"mol": 1, "kg": -1, "s": -1},
}


def _unit_text(dims: Mapping[str, float]) -> str:
    """SI unit text pint can read, e.g. ``m**3/mol/s``; ``"1/s"`` style for pure reciprocals."""
    num, den = [], []
    for u in ("mol", "m", "kg", "Pa", "s"):
        e = dims.get(u, 0.0)
        if abs(e) < 1e-12:
            continue
        txt = u if abs(abs(e) - 1) < 1e-12 else f"{u}**{abs(e):g}"
        (num if e > 0 else den).append(txt)
    s = "*".join(num) if num else "1"
    for d in den:
        s += "/" + d
    return s if s != "1" else "dimensionless"


class Reaction:
    """One reaction with power-law kinetics.

    Parameters
    ----------
    name : str
        Name in the flowsheet file (``reactions.<name>``).
    stoichiometry : dict of str to float
        Component name to stoichiometric coefficient (negative for
        reactants), e.g. ``{"A": -1, "B": 1}``.
    orders : dict of str to float, optional
        Reaction orders of the forward rate; default: the reactants'
        ``-nu`` (an elementary reaction).
    basis : {"concentration", "partial_pressure", "mole_fraction", "mass_fraction"}
    rate_per : {"volume", "catalyst_mass", "holdup_mass"}
    reversible : bool
        Add a reverse term with its own ``pre_exponential_reverse`` and
        ``activation_energy_reverse``.
    reverse_orders : dict, optional
        Orders of the reverse rate; default: the products' ``nu``.
    reference_temperature : float, optional
        K; when given, ``pre_exponential`` is the rate constant at this
        temperature (better scaled for a solver than k at infinite T).

    Raises
    ------
    UnitConfigError
        Unknown basis or rate_per, empty stoichiometry, negative orders.
    """

    def __init__(
        self,
        name: str,
        stoichiometry: Mapping[str, float],
        orders: Mapping[str, float] | None = None,
        basis: str = "concentration",
        rate_per: str = "volume",
        reversible: bool = False,
        reverse_orders: Mapping[str, float] | None = None,
        reference_temperature: float | None = None,
    ):
        where = f"reactions.{name}"
        if basis not in BASES:
            raise UnitConfigError(f"{where}.basis", f"expected one of {', '.join(BASES)}, got {basis!r}")
        if rate_per not in RATE_PER:
            raise UnitConfigError(f"{where}.rate_per", f"expected one of {', '.join(RATE_PER)}, got {rate_per!r}")
        stoich = {k: float(v) for k, v in stoichiometry.items() if float(v) != 0.0}
        if not stoich:
            raise UnitConfigError(f"{where}.stoichiometry", "no nonzero coefficients")
        if not any(v < 0 for v in stoich.values()) or not any(v > 0 for v in stoich.values()):
            raise UnitConfigError(f"{where}.stoichiometry", "needs at least one reactant (negative) and one product (positive)")
        self.name = name
        self.stoichiometry = stoich
        self.orders = {k: float(v) for k, v in (orders if orders is not None else {c: -v for c, v in stoich.items() if v < 0}).items()}
        self.reverse_orders = {
            k: float(v) for k, v in (reverse_orders if reverse_orders is not None else {c: v for c, v in stoich.items() if v > 0}).items()
        }
        for field_name, od in (("orders", self.orders), ("reverse_orders", self.reverse_orders)):
            for c, v in od.items():
                if v < 0 or not math.isfinite(v):
                    raise UnitConfigError(f"{where}.{field_name}", f"order of {c} must be a finite number >= 0, got {v}")
        self.basis = basis
        self.rate_per = rate_per
        self.reversible = bool(reversible)
        if reference_temperature is not None and not reference_temperature > 0:
            raise UnitConfigError(f"{where}.reference_temperature", "must be positive (K)")
        self.reference_temperature = reference_temperature

    # ------------------------------------------------------------------ declarations
    def rate_unit(self) -> str:
        """SI unit of the rate, e.g. ``mol/m**3/s``."""
        return _unit_text(_RATE_DIM[self.rate_per])

    def _k_unit(self, orders: Mapping[str, float]) -> str:
        n = sum(orders.values())
        dims = dict(_RATE_DIM[self.rate_per])
        for u, e in _BASIS_DIM[self.basis].items():
            dims[u] = dims.get(u, 0.0) - n * e
        return _unit_text(dims)

    def parameters(self) -> list[Param]:
        """Kinetic parameters (address ``reactions.<name>.<param>``, category "kinetics")."""
        a = f"reactions.{self.name}"
        out = [
            Param("pre_exponential", self._k_unit(self.orders), None, address=f"{a}.pre_exponential", category="kinetics", lower=0.0,
                  doc="rate constant at the reference temperature (or at infinite T without one)"),
            Param("activation_energy", "molar_energy", None, address=f"{a}.activation_energy", category="kinetics",
                  doc="Arrhenius activation energy"),
        ]
        if self.reversible:
            out += [
                Param("pre_exponential_reverse", self._k_unit(self.reverse_orders), None, address=f"{a}.pre_exponential_reverse",
                      category="kinetics", lower=0.0),
                Param("activation_energy_reverse", "molar_energy", None, address=f"{a}.activation_energy_reverse", category="kinetics"),
            ]
        return out

    def validate(self, system: Any) -> None:
        """Check component names (and the element balance when formulas are known).

        Raises
        ------
        UnitConfigError
            Field ``reactions.<name>.stoichiometry`` / ``.orders``.
        """
        where = f"reactions.{self.name}"
        for field_name, d in (("stoichiometry", self.stoichiometry), ("orders", self.orders), ("reverse_orders", self.reverse_orders)):
            for c in d:
                if c not in system.names:
                    raise UnitConfigError(f"{where}.{field_name}", f"unknown component {c!r}; known: {', '.join(system.names)}")
        comps = [system.components[system.index(c)] for c in self.stoichiometry]
        if all(c.formula for c in comps):
            bal: dict[str, float] = {}
            for c in comps:
                for e, k in c.atoms().items():
                    bal[e] = bal.get(e, 0.0) + self.stoichiometry[c.name] * k
            bad = {e: v for e, v in bal.items() if abs(v) > 1e-9}
            if bad:
                words = ", ".join(f"{e} {v:+g}" for e, v in sorted(bad.items()))
                raise UnitConfigError(f"{where}.stoichiometry", f"atoms do not balance ({words} per reaction)")

    def nu(self, system: Any) -> list[float]:
        """Stoichiometric coefficients in the system's component order, length n."""
        out = [0.0] * system.n
        for c, v in self.stoichiometry.items():
            out[system.index(c)] = v
        return out

    def signature(self) -> tuple:
        return (
            self.name,
            tuple(sorted(self.stoichiometry.items())),
            tuple(sorted(self.orders.items())),
            tuple(sorted(self.reverse_orders.items())),
            self.basis,
            self.rate_per,
            self.reversible,
            self.reference_temperature,
        )

    # ------------------------------------------------------------------ equations
    def rate_constant(self, T: Any, k0: Any, ea: Any) -> Any:
        """Arrhenius rate constant (unit of ``pre_exponential``)."""
        if self.reference_temperature is None:
            return k0 * ca.exp(-ea / (R * T))
        return k0 * ca.exp(-ea / R * (1.0 / T - 1.0 / self.reference_temperature))

    def rate(self, system: Any, T: Any, a: Any, p: Mapping[str, Any]) -> Any:
        """Reaction rate (unit :meth:`rate_unit`), scalar SX.

        Parameters
        ----------
        system : ComponentSystem
        T : casadi scalar
            K.
        a : casadi column, shape (n, 1)
            The basis quantity of every component (mol/m**3, Pa or fraction).
        p : dict
            Parameter name (as in :meth:`parameters`) to symbol or number.

        Notes
        -----
        Integer orders use plain powers, defined for any sign of ``a``
        (a solver may step through small negative values); non-integer
        orders need ``a > 0``.
        """
        fwd = self.rate_constant(T, p["pre_exponential"], p["activation_energy"]) * _product(system, a, self.orders)
        if not self.reversible:
            return fwd
        rev = self.rate_constant(T, p["pre_exponential_reverse"], p["activation_energy_reverse"]) * _product(system, a, self.reverse_orders)
        return fwd - rev


def _product(system: Any, a: Any, orders: Mapping[str, float]) -> Any:
    out = 1
    for c, o in orders.items():
        if o == 0:
            continue
        ai = a[system.index(c)]
        out = out * (ai ** int(o) if float(o).is_integer() else ca.power(ai, o))
    return out
