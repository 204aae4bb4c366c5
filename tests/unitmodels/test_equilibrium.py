"""Gibbs energies of formation, equilibrium constants and the equilibrium
and conversion reactors."""

from __future__ import annotations

import math

import numpy as np
import pytest
from chemicals.heat_capacity import Cp_data_Poling, Poling_integral, Poling_integral_over_T
from chemicals.reaction import Hfg, S0g
from scipy.optimize import brentq

from unitmodels.base import ConformanceCase, UnitConfigError
from unitmodels.kinetics import Reaction
from unitmodels.testing import solve_case
from unitmodels.thermo import ComponentSystem, R
from unitmodels.units.reactors import ConversionReactor, EquilibriumReactor

SHIFT = ["carbon monoxide", "water", "carbon dioxide", "hydrogen"]
NU = np.array([-1.0, -1.0, 1.0, 1.0])


def test_gibbs_energies_of_formation_against_nist():
    """Ideal gas at 298.15 K, kJ/mol (NIST WebBook / JANAF, from memory):
    CO2 -394.36, H2O -228.58, CO -137.17, CH4 -50.5, benzene 129.7."""
    s = ComponentSystem(["carbon dioxide", "water", "carbon monoxide", "methane", "benzene"])
    gf = np.array([c.gibbs_formation for c in s.components]) / 1000.0
    assert gf == pytest.approx([-394.36, -228.58, -137.17, -50.5, 129.7], abs=0.5)
    assert s.g_ig_num(298.15) == pytest.approx(gf * 1000.0, rel=1e-12)


def _lnk_hand(T):
    """ln K of the shift from chemicals' Poling integrals, Hf and absolute S0
    (element entropies cancel in a balanced reaction)."""
    dg = 0.0
    for nu, name in zip(NU, SHIFT):
        cas = ComponentSystem([name]).components[0].cas
        a = [float(Cp_data_Poling.at[cas, f"a{k}"]) for k in range(5)]
        h = Hfg(cas) + Poling_integral(T, *a) - Poling_integral(298.15, *a)
        s = S0g(cas) + Poling_integral_over_T(T, *a) - Poling_integral_over_T(298.15, *a)
        dg += nu * (h - T * s)
    return -dg / (R * T)


def test_shift_equilibrium_constant():
    """K(298.15 K) = 1.0e5 and K(1000 K) = 1.4 (NIST-JANAF derived values,
    from memory), and ln K against the independent chemicals-based sum."""
    s = ComponentSystem(SHIFT)
    for T in (298.15, 600.0, 1000.0):
        lnk = -(NU @ s.g_ig_num(T)) / (R * T)
        # the element-entropy table and chemicals' H2 entropy differ by 0.02 J/mol/K
        assert lnk == pytest.approx(_lnk_hand(T), abs=5e-3)
    assert math.exp(-(NU @ s.g_ig_num(298.15)) / (R * 298.15)) == pytest.approx(1.0e5, rel=0.05)
    assert math.exp(-(NU @ s.g_ig_num(1000.0)) / (R * 1000.0)) == pytest.approx(1.4, rel=0.1)


def test_equilibrium_reactor_shift_by_hand():
    """At 700 K the outlet satisfies (CO2 H2)/(CO H2O) = K(700 K); the
    extent is solved by hand (no mole change, so independent of P)."""
    sys = ComponentSystem(SHIFT)
    rx = Reaction("shift", dict(zip(SHIFT, NU)))
    u = EquilibriumReactor("R", sys, {"reactions": ["shift"]}, reactions=[rx])
    F0 = np.array([1.0, 2.0, 0.1, 0.1])
    case = ConformanceCase(u, {"inlet": [(list(F0), 500.0, 2e6, "vapour")]}, {"temperature": 700.0}, {},
                           guess={"outlet": [([0.3, 1.3, 0.8, 0.8], 700.0, 2e6)], "extent.shift": 0.7}, reacting=True)
    sol = solve_case(case)
    K = math.exp(-(NU @ sys.g_ig_num(700.0)) / (R * 700.0))
    xi = brentq(lambda x: (F0[2] + x) * (F0[3] + x) - K * (F0[0] - x) * (F0[1] - x), 0.0, 1.0, xtol=1e-14)
    assert sol.value(sol.s.x["extent.shift"])[0] == pytest.approx(xi, rel=1e-10)
    # the duty is the enthalpy change of the streams (heat of reaction included)
    q = sys.enthalpy_flow_num(F0 + NU * xi, 700.0, "vapour") - sys.enthalpy_flow_num(F0, 500.0, "vapour")
    assert sol.value(sol.s.x["Q"])[0] == pytest.approx(q, rel=1e-9)


def test_equilibrium_needs_gibbs_data():
    from unitmodels.thermo import Component

    a = Component.from_data("A", 0.1, -1e5, 100.0, 150.0, 9.0, 2000.0, -50.0, 800.0)
    b = Component.from_data("B", 0.1, -1.1e5, 100.0, 150.0, 9.0, 2000.0, -50.0, 800.0)
    with pytest.raises(UnitConfigError, match="Gibbs"):
        EquilibriumReactor("R", ComponentSystem([a, b]), {"reactions": ["r"]}, reactions=[Reaction("r", {"A": -1, "B": 1})])


def test_conversion_reactor_extent_and_adiabatic_temperature():
    """extent = X F_key / (-nu_key); adiabatic outlet T from the hand energy
    balance with the stream enthalpies."""
    sys = ComponentSystem(["acetic acid", "ethanol", "ethyl acetate", "water"])
    rx = Reaction("est", {"acetic acid": -1, "ethanol": -1, "ethyl acetate": 1, "water": 1})
    u = ConversionReactor("R", sys, {"reactions": ["est"], "key_components": ["ethanol"]}, reactions=[rx])
    F0 = np.array([1.5, 1.0, 0.0, 0.2])
    case = ConformanceCase(u, {"inlet": [(list(F0), 330.0, 2e5, "liquid")]}, {"duty": 0.0}, {"conversion.est": 0.6},
                           reacting=True)
    sol = solve_case(case)
    xi = 0.6 * 1.0
    assert sol.value(sol.s.x["extent.est"])[0] == pytest.approx(xi, rel=1e-12)
    F1 = F0 + np.array([-1, -1, 1, 1]) * xi
    h0 = sys.enthalpy_flow_num(F0, 330.0, "liquid")
    T_hand = brentq(lambda T: sys.enthalpy_flow_num(F1, T, "liquid") - h0, 250.0, 450.0, xtol=1e-12)
    assert sol.value(sol.s.port("outlet").T)[0] == pytest.approx(T_hand, rel=1e-10)
    with pytest.raises(UnitConfigError, match="key_components"):
        ConversionReactor("R", sys, {"reactions": ["est"], "key_components": ["water"]}, reactions=[rx])
