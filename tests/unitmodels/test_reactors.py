"""CSTR results against textbook design equations and handbook heats of reaction.

Analytic CSTR results (liquid, constant density, isothermal) are the
standard mole-balance solutions (e.g. Fogler, Elements of Chemical
Reaction Engineering, chapter on isothermal reactor design):

* first order:  X = k tau / (1 + k tau)
* second order (-r_A = k_A C_A^2): X = ((1 + 2 Da) - sqrt(1 + 4 Da)) / (2 Da),
  Da = k_A tau C_A0.

The adiabatic case follows Fogler's energy-balance method: the reactor
temperature is where the mole-balance conversion X_MB(T) meets the
energy-balance line X_EB(T) = Cp (T - T0) / (-dH_rx).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from unitmodels.base import ConformanceCase, UnitConfigError
from unitmodels.kinetics import Reaction
from unitmodels.testing import solve_case
from unitmodels.thermo import Component, ComponentSystem, R
from unitmodels.units.reactors import CSTR

CP = 150.0  # J/mol/K, both isomers
DH = -3.0e4  # J/mol, heat of isomerisation A -> B (formation enthalpies differ by this)


def isomers():
    """Two pseudo-components with equal molar mass and density (constant
    volumetric flow, the textbook assumption)."""
    a = Component.from_data("A", 0.1, -1.0e5, 100.0, CP, 9.0, 2000.0, -50.0, 800.0, hvap_298=3.0e4, formula="C4H8O")
    b = Component.from_data("B", 0.1, -1.0e5 + DH, 100.0, CP, 9.0, 2100.0, -50.0, 800.0, hvap_298=3.0e4, formula="C4H8O")
    return ComponentSystem([a, b])


def dimer_pair():
    """A and its dimer B with the same mass density: 2 A -> B keeps the
    volumetric flow constant."""
    a = Component.from_data("A", 0.1, -1.0e5, 100.0, CP, 9.0, 2000.0, -50.0, 800.0, hvap_298=3.0e4, formula="C4H8O")
    b = Component.from_data("B", 0.2, -2.2e5, 200.0, 2 * CP, 9.0, 2500.0, -50.0, 800.0, hvap_298=5.0e4, formula="C8H16O2")
    return ComponentSystem([a, b])


def run(unit, inlet, specs, params, guess=None):
    case = ConformanceCase(unit, {"inlet": [inlet]}, specs, params, guess or {}, reacting=True)
    sol = solve_case(case)
    out = {k: float(sol.value(e)[0]) for k, (e, _u) in unit.outputs(sol.s).items()}
    return sol, out


def test_first_order_isothermal_cstr():
    """X = k tau / (1 + k tau), with k = k0 at the reference temperature."""
    sys = isomers()
    rx = Reaction("iso", {"A": -1, "B": 1}, reference_temperature=350.0)
    u = CSTR("R", sys, {"reactions": ["iso"]}, reactions=[rx])
    k, V, FA0 = 2.0e-3, 1.0, 10.0
    v0 = FA0 * 0.1 / 800.0
    tau = V / v0
    sol, out = run(u, ([FA0, 0.0], 330.0, 2e5, "liquid"), {"temperature": 350.0},
                   {"volume": V, "iso.pre_exponential": k, "iso.activation_energy": 6.0e4})
    assert out["conversion.A"] == pytest.approx(k * tau / (1 + k * tau), rel=1e-10)
    assert out["residence_time"] == pytest.approx(tau, rel=1e-12)


def test_first_order_arrhenius_without_reference_temperature():
    """k = k0 exp(-Ea / (R T)) at 340 K, then X = k tau / (1 + k tau)."""
    sys = isomers()
    rx = Reaction("iso", {"A": -1, "B": 1})
    u = CSTR("R", sys, {"reactions": ["iso"]}, reactions=[rx])
    k0, ea, T, V, FA0 = 5.0e6, 6.5e4, 340.0, 2.0, 5.0
    k = k0 * math.exp(-ea / (R * T))
    tau = V / (FA0 * 0.1 / 800.0)
    _, out = run(u, ([FA0, 0.0], 330.0, 2e5, "liquid"), {"temperature": T},
                 {"volume": V, "iso.pre_exponential": k0, "iso.activation_energy": ea})
    assert out["conversion.A"] == pytest.approx(k * tau / (1 + k * tau), rel=1e-10)


def test_second_order_isothermal_cstr():
    """2 A -> B with r = k C_A^2, so -r_A = 2 k C_A^2 = k_A C_A^2:
    X = ((1 + 2 Da) - sqrt(1 + 4 Da)) / (2 Da), Da = k_A tau C_A0."""
    sys = dimer_pair()
    rx = Reaction("dim", {"A": -2, "B": 1}, reference_temperature=320.0)
    u = CSTR("R", sys, {"reactions": ["dim"]}, reactions=[rx])
    k, V, FA0 = 1.0e-6, 0.5, 4.0
    v0 = FA0 * 0.1 / 800.0
    tau, ca0 = V / v0, FA0 / v0
    da = 2 * k * tau * ca0
    _, out = run(u, ([FA0, 0.0], 320.0, 2e5, "liquid"), {"temperature": 320.0},
                 {"volume": V, "dim.pre_exponential": k, "dim.activation_energy": 5.0e4})
    assert out["conversion.A"] == pytest.approx(((1 + 2 * da) - math.sqrt(1 + 4 * da)) / (2 * da), rel=1e-10)


def test_adiabatic_cstr_meets_energy_balance_line():
    """Adiabatic (duty = 0): T solves X_MB(T) = X_EB(T) (Fogler's method)."""
    sys = isomers()
    rx = Reaction("iso", {"A": -1, "B": 1}, reference_temperature=350.0)
    u = CSTR("R", sys, {"reactions": ["iso"]}, reactions=[rx])
    k0, ea, V, FA0, T0 = 1.0e-3, 8.0e4, 1.0, 10.0, 320.0
    tau = V / (FA0 * 0.1 / 800.0)

    def gap(T):
        k = k0 * math.exp(-ea / R * (1 / T - 1 / 350.0))
        return k * tau / (1 + k * tau) - CP * (T - T0) / (-DH)

    T_hand = brentq(gap, T0, T0 + (-DH) / CP)
    sol, out = run(u, ([FA0, 0.0], T0, 2e5, "liquid"), {"duty": 0.0},
                   {"volume": V, "iso.pre_exponential": k0, "iso.activation_energy": ea},
                   guess={"outlet": [([5.0, 5.0], T_hand + 5, 2e5)], "extent.iso": 5.0})
    T = sol.value(sol.s.port("outlet").T)[0]
    assert T == pytest.approx(T_hand, abs=1e-7)


def test_liquid_esterification_heat_matches_liquid_formation_enthalpies():
    """Isothermal at 298.15 K, the duty per extent is the liquid-phase heat
    of reaction from the liquid heats of formation (chemicals.reaction.Hfl;
    NIST WebBook liquid values, from memory: acetic acid -484.3, ethanol
    -277.0, ethyl acetate -479.3, water -285.83 kJ/mol, give -3.8 kJ/mol)."""
    from chemicals.reaction import Hfl

    sys = ComponentSystem(["acetic acid", "ethanol", "ethyl acetate", "water"])
    nu = [-1, -1, 1, 1]
    rx = Reaction("est", dict(zip(sys.names, nu)), reference_temperature=298.15)
    u = CSTR("R", sys, {"reactions": ["est"]}, reactions=[rx])
    _, out = run(u, ([1.0, 1.0, 0.0, 0.0], 298.15, 2e5, "liquid"), {"temperature": 298.15},
                 {"volume": 0.1, "est.pre_exponential": 1.0e-6, "est.activation_energy": 5.0e4})
    dh = out["duty"] / out["extent.est"]
    dh_chem = sum(n * Hfl(c.cas) for n, c in zip(nu, sys.components))
    assert dh == pytest.approx(dh_chem, rel=1e-9)
    assert dh == pytest.approx(-3.8e3, abs=1.0e3)


def test_gas_phase_shift_reactor_heat_of_reaction():
    """Gas-phase CSTR, partial-pressure kinetics per catalyst mass, isothermal
    at 298.15 K: duty / extent = water-gas shift heat of reaction, -41.15
    kJ/mol (NIST-JANAF formation enthalpies, from memory)."""
    sys = ComponentSystem(["carbon monoxide", "water", "carbon dioxide", "hydrogen"])
    rx = Reaction("shift", {"carbon monoxide": -1, "water": -1, "carbon dioxide": 1, "hydrogen": 1},
                  basis="partial_pressure", rate_per="catalyst_mass", reference_temperature=298.15)
    u = CSTR("R", sys, {"reactions": ["shift"], "phase": "vapour"}, reactions=[rx])
    k = 1.0e-11  # mol/kg/Pa^2/s
    sol, out = run(u, ([1.0, 1.0, 0.0, 0.0], 298.15, 2e5, "vapour"), {"temperature": 298.15},
                   {"volume": 1.0, "catalyst_mass": 50.0, "shift.pre_exponential": k, "shift.activation_energy": 7.0e4},
                   guess={"outlet": [([0.5, 0.5, 0.5, 0.5], 298.15, 2e5)], "extent.shift": 0.5})
    assert out["duty"] / out["extent.shift"] == pytest.approx(-41150.0, rel=2e-3)
    # the rate law itself: extent = W k p_CO p_H2O at the outlet
    F = sol.value(sol.s.port("outlet").F)
    p = F / F.sum() * 2e5
    assert out["extent.shift"] == pytest.approx(50.0 * k * p[0] * p[1], rel=1e-10)


def test_reaction_validation_names_the_field():
    sys = isomers()
    with pytest.raises(UnitConfigError, match="reactions.bad.stoichiometry"):
        Reaction("bad", {"A": -1, "C": 1}).validate(sys)
    with pytest.raises(UnitConfigError, match="reactions.bad.basis"):
        Reaction("bad", {"A": -1, "B": 1}, basis="molality")
    with pytest.raises(UnitConfigError, match="atoms do not balance"):
        Reaction("bad", {"A": -1, "B": 2}).validate(sys)
    with pytest.raises(UnitConfigError, match="reactions"):
        CSTR("R", sys, {"reactions": ["iso"]}, reactions=[])
    with pytest.raises(UnitConfigError, match="partial pressures"):
        CSTR("R", sys, {"reactions": ["g"]}, reactions=[Reaction("g", {"A": -1, "B": 1}, basis="partial_pressure")])


def test_rate_constant_units_follow_orders_and_basis():
    """The SI unit text of k0 is rate unit / basis unit ** overall order."""
    from plantopt.units import Q_

    cases = [
        ({"A": 1}, "concentration", "volume", "1/s"),
        ({"A": 2}, "concentration", "volume", "m**3/mol/s"),
        ({"A": 0.5}, "concentration", "volume", "mol**0.5/m**1.5/s"),
        ({"A": 1, "B": 1}, "partial_pressure", "catalyst_mass", "mol/kg/Pa**2/s"),
        ({"A": 1}, "mole_fraction", "holdup_mass", "mol/kg/s"),
    ]
    for orders, basis, per, expected in cases:
        r = Reaction("r", {"A": -1, "B": 1}, orders=orders, basis=basis, rate_per=per)
        p = r.parameters()[0]
        assert p.address == "reactions.r.pre_exponential" and p.category == "kinetics"
        assert Q_(1.0, p.kind).to(expected).magnitude == pytest.approx(1.0)


def test_cstr_parameters_carry_reaction_addresses():
    sys = isomers()
    rx = Reaction("iso", {"A": -1, "B": 1}, reversible=True)
    u = CSTR("R", sys, {"reactions": ["iso"]}, reactions=[rx])
    by_name = {p.name: p for p in u.parameters()}
    assert by_name["iso.pre_exponential"].address == "reactions.iso.pre_exponential"
    assert by_name["iso.activation_energy_reverse"].kind == "molar_energy"
    assert by_name["volume"].kind == "volume"


def test_reversible_cstr_approaches_equilibrium():
    """With a large volume, a reversible first-order A <=> B CSTR reaches
    C_B / C_A = k_f / k_r (the equilibrium constant of the rate law)."""
    sys = isomers()
    rx = Reaction("iso", {"A": -1, "B": 1}, reversible=True, reference_temperature=350.0)
    u = CSTR("R", sys, {"reactions": ["iso"]}, reactions=[rx])
    kf, kr = 2.0e-3, 5.0e-4
    sol, _ = run(u, ([1.0, 0.0], 350.0, 2e5, "liquid"), {"temperature": 350.0},
                 {"volume": 1.0e4, "iso.pre_exponential": kf, "iso.activation_energy": 5e4,
                  "iso.pre_exponential_reverse": kr, "iso.activation_energy_reverse": 8e4})
    F = sol.value(sol.s.port("outlet").F)
    # exact CSTR result: F_B/F_A = kf tau / (1 + kr tau) -> kf/kr as tau grows
    tau = 1.0e4 / (1.0 * 0.1 / 800.0)
    assert F[1] / F[0] == pytest.approx(kf * tau / (1 + kr * tau), rel=1e-9)
    assert F[1] / F[0] == pytest.approx(kf / kr, rel=1e-3)  # 1/(kr tau) = 2.5e-4 away
    assert np.sum(F) == pytest.approx(1.0, rel=1e-12)
