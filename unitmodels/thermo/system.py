"""A set of components and their casadi-differentiable property expressions.

Enthalpy convention
-------------------
All enthalpies are referenced to the elements in their standard states at
298.15 K, so a reactor's energy balance written with stream enthalpies
contains the heat of reaction automatically:

* ideal gas: ``h_ig(T) = Hf_ig(298.15) + integral_{298.15}^{T} Cp_ig dT``;
* liquid: ``h_liq(T) = Hf_ig(298.15) - Hvap(298.15) + integral_{298.15}^{T} Cp_liq dT``.

The liquid enthalpy is therefore one path from the ideal gas at 298.15 K
(condense, then heat the liquid). The enthalpy of vaporisation it implies
at another temperature, ``h_ig(T) - h_liq(T)``, follows Kirchhoff's law
with the two heat capacities; this is consistent by construction (no
thermodynamic cycle can create energy) and smooth everywhere, which a
Watson-type ``(1 - T/Tc)**0.38`` term is not near the critical point.
Pressure effects on enthalpy are neglected (ideal gas, incompressible
liquid), so enthalpy depends on T and phase only.

Vapour-liquid equilibrium uses Raoult's law with the Antoine vapour
pressure (see :meth:`ComponentSystem.psat`).
"""

from __future__ import annotations

from typing import Any, Sequence

import casadi as ca
import numpy as np

from unitmodels.base import PHASES, UnitConfigError
from unitmodels.thermo.component import T_REF, Component

# Smoothing width of max(1 - T/Tc, 0) in the Rackett volume: keeps the
# expression differentiable above Tc; changes V by < 1e-6 relative below 0.95 Tc.
_RACKETT_EPS = 1.0e-3


def _poly(c: Sequence[float], T: Any) -> Any:
    out = 0
    for k in reversed(range(len(c))):
        out = out * T + c[k]
    return out


def _poly_integral(c: Sequence[float], T: Any) -> Any:
    """integral_{T_REF}^{T} sum c_k t**k dt."""
    out = 0
    for k, ck in enumerate(c):
        out = out + ck * (T ** (k + 1) - T_REF ** (k + 1)) / (k + 1)
    return out


def _smooth_pos(x: Any) -> Any:
    return 0.5 * (x + ca.sqrt(x * x + _RACKETT_EPS**2))


class ComponentSystem:
    """An ordered set of components with property expressions.

    Parameters
    ----------
    components : sequence of Component or str
        Strings are resolved with :meth:`Component.from_name`.

    Attributes
    ----------
    n : int
        Number of components.
    names : list of str
    mw : numpy.ndarray, shape (n,)
        Molar masses, kg/mol.

    Notes
    -----
    Every symbolic method takes a casadi scalar ``T`` (K) and returns a
    casadi column of length ``n`` (or a scalar); the ``*_num`` twins
    evaluate the very same expressions on floats and return numpy arrays.
    """

    def __init__(self, components: Sequence[Component | str]):
        comps = [c if isinstance(c, Component) else Component.from_name(c) for c in components]
        if not comps:
            raise UnitConfigError("components", "at least one component is needed")
        names = [c.name for c in comps]
        dup = {x for x in names if names.count(x) > 1}
        if dup:
            raise UnitConfigError("components", f"duplicate component names: {', '.join(sorted(dup))}")
        self.components: list[Component] = comps
        self.names: list[str] = names
        self.n: int = len(comps)
        self.mw: np.ndarray = np.array([c.molar_mass for c in comps])
        self.hf: np.ndarray = np.array([c.formation_enthalpy for c in comps])

    # ------------------------------------------------------------------ bookkeeping
    def index(self, name: str) -> int:
        """Position of a component; raises UnitConfigError if unknown."""
        try:
            return self.names.index(name)
        except ValueError:
            raise UnitConfigError("components", f"unknown component {name!r}; known: {', '.join(self.names)}") from None

    def signature(self) -> tuple:
        """Hashable key: equal for systems with identical data."""
        return tuple(c for c in self.components)

    def element_matrix(self) -> tuple[list[str], np.ndarray]:
        """Elements and atom counts.

        Returns
        -------
        elements : list of str
        A : numpy.ndarray, shape (n_elements, n)
            ``A[e, i]`` atoms of element ``e`` in one molecule of component ``i``.

        Raises
        ------
        UnitConfigError
            When a component has no formula.
        """
        atoms = []
        for c in self.components:
            if not c.formula:
                raise UnitConfigError("components", f"{c.name} has no formula; element balances need one")
            atoms.append(c.atoms())
        elements = sorted({e for a in atoms for e in a})
        A = np.array([[a.get(e, 0.0) for a in atoms] for e in elements])
        return elements, A

    # ------------------------------------------------------------------ symbolic properties
    def cp_ig(self, T: Any) -> Any:
        """Ideal-gas heat capacities, J/mol/K, shape (n, 1)."""
        return ca.vertcat(*[_poly(c.cp_gas, T) for c in self.components])

    def cp_liq(self, T: Any) -> Any:
        """Liquid heat capacities, J/mol/K, shape (n, 1)."""
        return ca.vertcat(*[_poly(c.cp_liquid, T) for c in self.components])

    def cp(self, T: Any, phase: str) -> Any:
        """Heat capacities of ``phase`` (``"liquid"`` or ``"vapour"``), J/mol/K, shape (n, 1)."""
        return self.cp_liq(T) if _phase(phase) == "liquid" else self.cp_ig(T)

    def cp_ig_over_t_integral(self, T1: Any, T2: Any) -> Any:
        """``integral_{T1}^{T2} Cp_ig / T dT`` per component, J/mol/K, shape (n, 1):
        the ideal-gas entropy change at constant pressure."""
        out = []
        for c in self.components:
            e = c.cp_gas[0] * ca.log(T2 / T1)
            for k in range(1, len(c.cp_gas)):
                e = e + c.cp_gas[k] * (T2**k - T1**k) / k
            out.append(e)
        return ca.vertcat(*out)

    def g_ig(self, T: Any) -> Any:
        """Ideal-gas molar Gibbs energies at 1 bar, J/mol, shape (n, 1), on the
        formation basis: ``g(298.15 K) = Gf``, ``g(T) = h_ig(T) - T s(T)`` with
        ``s(T) = (Hf - Gf)/298.15 + integral_{298.15}^{T} Cp/T dT``. Element
        terms cancel in any atom-balanced reaction, so
        ``sum nu_i g_i(T)`` is the standard Gibbs energy of reaction.

        Raises
        ------
        UnitConfigError
            When a component has no Gibbs energy of formation.
        """
        out = []
        for i, c in enumerate(self.components):
            if c.gibbs_formation is None:
                raise UnitConfigError("components", f"{c.name} has no Gibbs energy of formation (needed for chemical equilibrium)")
            s298 = (c.formation_enthalpy - c.gibbs_formation) / T_REF
            ds = self.cp_ig_over_t_integral(T_REF, T)[i]
            out.append(self.h_ig(T)[i] - T * (s298 + ds))
        return ca.vertcat(*out)

    def h_ig(self, T: Any) -> Any:
        """Ideal-gas molar enthalpies (elements at 298.15 K = 0), J/mol, shape (n, 1)."""
        return ca.vertcat(*[c.formation_enthalpy + _poly_integral(c.cp_gas, T) for c in self.components])

    def h_liq(self, T: Any) -> Any:
        """Liquid molar enthalpies (same reference), J/mol, shape (n, 1)."""
        return ca.vertcat(
            *[c.formation_enthalpy - c.hvap_298 + _poly_integral(c.cp_liquid, T) for c in self.components]
        )

    def h(self, T: Any, phase: str) -> Any:
        """Molar enthalpies of ``phase``, J/mol, shape (n, 1)."""
        return self.h_liq(T) if _phase(phase) == "liquid" else self.h_ig(T)

    def hvap(self, T: Any) -> Any:
        """Implied enthalpies of vaporisation ``h_ig - h_liq``, J/mol, shape (n, 1)."""
        return self.h_ig(T) - self.h_liq(T)

    def enthalpy_flow(self, F: Any, T: Any, phase: str) -> Any:
        """Enthalpy flow of a stream, W (scalar).

        Parameters
        ----------
        F : casadi column, shape (n, 1)
            Component molar flows, mol/s.
        T : casadi scalar
            K.
        phase : {"liquid", "vapour"}
        """
        return ca.dot(F, self.h(T, phase))

    def psat(self, T: Any) -> Any:
        """Vapour pressures, Pa, shape (n, 1): ``10**(A - B/(T + C))``."""
        ln10 = float(np.log(10.0))
        return ca.vertcat(*[ca.exp(ln10 * (a - b / (T + cc))) for (a, b, cc) in (c.antoine for c in self.components)])

    def liquid_molar_volume(self, T: Any) -> Any:
        """Liquid molar volumes, m**3/mol, shape (n, 1) (Rackett / DIPPR-105 form or constant)."""
        out = []
        for c in self.components:
            if c.rackett_tc is None or c.rackett_z is None:
                out.append(c.v_liquid_ref + 0 * T)
            else:
                tau = _smooth_pos(1 - T / c.rackett_tc)
                tau0 = _smooth_pos(1 - T_REF / c.rackett_tc)
                d = c.rackett_exponent
                out.append(c.v_liquid_ref * ca.exp(np.log(c.rackett_z) * (tau**d - tau0**d)))
        return ca.vertcat(*out)

    def mass_flow(self, F: Any) -> Any:
        """Total mass flow, kg/s, of component molar flows ``F`` (mol/s)."""
        return ca.dot(ca.DM(self.mw), F)

    # ------------------------------------------------------------------ numeric twins
    def _num(self, fn: str, *args: Any) -> np.ndarray:
        out = getattr(self, fn)(*[ca.DM(a) if not isinstance(a, str) else a for a in args])
        return np.array(ca.DM(out)).ravel()

    def cp_num(self, T: float, phase: str) -> np.ndarray:
        """Numeric :meth:`cp`, J/mol/K, shape (n,)."""
        return self._num("cp", T, phase)

    def h_ig_num(self, T: float) -> np.ndarray:
        """Numeric :meth:`h_ig`, J/mol, shape (n,)."""
        return self._num("h_ig", T)

    def h_liq_num(self, T: float) -> np.ndarray:
        """Numeric :meth:`h_liq`, J/mol, shape (n,)."""
        return self._num("h_liq", T)

    def h_num(self, T: float, phase: str) -> np.ndarray:
        """Numeric :meth:`h`, J/mol, shape (n,)."""
        return self._num("h", T, phase)

    def hvap_num(self, T: float) -> np.ndarray:
        """Numeric :meth:`hvap`, J/mol, shape (n,)."""
        return self._num("hvap", T)

    def enthalpy_flow_num(self, F: Sequence[float], T: float, phase: str) -> float:
        """Numeric :meth:`enthalpy_flow`, W."""
        return float(self._num("enthalpy_flow", np.asarray(F, float), T, phase)[0])

    def cp_ig_over_t_integral_num(self, T1: float, T2: float) -> np.ndarray:
        """Numeric :meth:`cp_ig_over_t_integral`, J/mol/K, shape (n,)."""
        return self._num("cp_ig_over_t_integral", T1, T2)

    def g_ig_num(self, T: float) -> np.ndarray:
        """Numeric :meth:`g_ig`, J/mol, shape (n,)."""
        return self._num("g_ig", T)

    def psat_num(self, T: float) -> np.ndarray:
        """Numeric :meth:`psat`, Pa, shape (n,)."""
        return self._num("psat", T)

    def liquid_molar_volume_num(self, T: float) -> np.ndarray:
        """Numeric :meth:`liquid_molar_volume`, m**3/mol, shape (n,)."""
        return self._num("liquid_molar_volume", T)


def _phase(phase: str) -> str:
    if phase not in PHASES:
        raise UnitConfigError("phase", f"expected one of {', '.join(PHASES)}, got {phase!r}")
    return phase
