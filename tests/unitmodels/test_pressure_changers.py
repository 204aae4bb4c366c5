"""Pump, compressor and valve against textbook relations."""

from __future__ import annotations

import math

import pytest
from chemicals.heat_capacity import Cp_data_Poling, Poling_integral, Poling_integral_over_T
from scipy.optimize import brentq

from unitmodels.base import ConformanceCase
from unitmodels.testing import solve_case
from unitmodels.thermo import Component, ComponentSystem, R
from unitmodels.units.pressure import Compressor, Pump, Valve


def _solve(unit, inlet, specs, params=None, guess=None):
    sol = solve_case(ConformanceCase(unit, {"inlet": [inlet]}, specs, params or {}, guess or {}))
    return sol, {k: float(sol.value(e)[0]) for k, (e, _u) in unit.outputs(sol.s).items()}


def test_compressor_constant_cp_ideal_gas():
    """Ideal gas with constant Cp: T2s = T1 (P2/P1)**(R/Cp) and
    W = F Cp (T2s - T1) / eta (e.g. Smith, Van Ness and Abbott, Introduction
    to Chemical Engineering Thermodynamics, ideal-gas isentropic relations)."""
    cp = 3.5 * R
    gas = Component.from_data("gas", 0.029, 0.0, cp, cp, 9.0, 500.0, 0.0, 800.0)
    sys = ComponentSystem([gas])
    u = Compressor("K", sys)
    T1, ratio, eta, F = 300.0, 4.0, 0.8, 2.0
    sol, out = _solve(u, ([F], T1, 1e5, "vapour"), {"pressure_ratio": ratio}, {"efficiency": eta},
                      {"outlet": [([F], 500.0, 4e5)], "T_isentropic": 440.0, "W": 2e4})
    t2s = T1 * ratio ** (R / cp)
    assert out["isentropic_temperature"] == pytest.approx(t2s, rel=1e-12)
    assert out["power"] == pytest.approx(F * cp * (t2s - T1) / eta, rel=1e-12)
    T2 = sol.value(sol.s.port("outlet").T)[0]
    assert T2 == pytest.approx(T1 + (t2s - T1) / eta, rel=1e-12)


def test_compressor_nitrogen_with_poling_cp():
    """Nitrogen 1 -> 5 bar from 300 K: isentropic T from
    integral Cp/T dT = R ln 5 with chemicals.heat_capacity.Poling_integral_over_T,
    work from Poling_integral (same correlation, independent code)."""
    sys = ComponentSystem(["nitrogen"])
    a = [float(Cp_data_Poling.at["7727-37-9", f"a{k}"]) for k in range(5)]
    t2s = brentq(lambda T: Poling_integral_over_T(T, *a) - Poling_integral_over_T(300.0, *a) - R * math.log(5.0), 300.0, 700.0, xtol=1e-12)
    ws = Poling_integral(t2s, *a) - Poling_integral(300.0, *a)
    u = Compressor("K", sys)
    _, out = _solve(u, ([1.0], 300.0, 1e5, "vapour"), {"outlet_pressure": 5e5}, {"efficiency": 0.75},
                    {"outlet": [([1.0], 520.0, 5e5)], "T_isentropic": 470.0, "W": 8e3})
    assert out["isentropic_temperature"] == pytest.approx(t2s, rel=1e-9)
    assert out["power"] == pytest.approx(ws / 0.75, rel=1e-9)
    # constant-Cp estimate (Cp/R = 3.5 for a diatomic gas) is within 1 K here
    assert t2s == pytest.approx(300.0 * 5.0 ** (1 / 3.5), abs=1.5)


def test_pump_work_is_volumetric_flow_times_pressure_rise():
    """W = Vdot dP / eta: 1 kg/s of water at 298.15 K (997 kg/m3, Perry's
    Table 2-2 / IAPWS, from memory) raised by 10 bar at 75 % efficiency
    needs 1337 W."""
    sys = ComponentSystem(["water"])
    u = Pump("P", sys)
    F = 1.0 / sys.mw[0]
    sol, out = _solve(u, ([F], 298.15, 1e5, "liquid"), {"outlet_pressure": 11e5}, {"efficiency": 0.75})
    assert out["power"] == pytest.approx(1.0 / 997.0 * 1e6 / 0.75, rel=2e-3)
    vdot = F * sys.liquid_molar_volume_num(298.15)[0]
    assert out["power"] == pytest.approx(vdot * 1e6 / 0.75, rel=1e-12)
    # all the work heats the liquid (enthalpy independent of P): dT = W / (m cp)
    dT = sol.value(sol.s.port("outlet").T)[0] - 298.15
    assert dT == pytest.approx(out["power"] / (F * sys.cp_num(298.15, "liquid")[0]), rel=1e-3)


def test_valve_flashing_to_vapour_by_hand():
    """A hot pressurised liquid (520 K, hot enough to carry its own latent
    heat) let down fully to vapour: h_liq(T_in) = h_ig(T_out), solved by hand."""
    sys = ComponentSystem(["benzene"])
    u = Valve("V", sys, {"outlet_phase": "vapour"})
    sol, out = _solve(u, ([1.0], 520.0, 40e5, "liquid"), {"pressure_drop": 39e5}, guess={"outlet": [([1.0], 400.0, 1e5)]})
    h_in = sys.h_liq_num(520.0)[0]
    T_hand = brentq(lambda T: sys.h_ig_num(T)[0] - h_in, 250.0, 520.0, xtol=1e-12)
    assert sol.value(sol.s.port("outlet").T)[0] == pytest.approx(T_hand, rel=1e-10)
    assert out["pressure_drop"] == pytest.approx(39e5)
