"""Heater, heat exchanger and flash against worked examples and hand calculations."""

from __future__ import annotations

import math

import numpy as np
import pytest
from chemicals.dippr import EQ100
from chemicals.heat_capacity import Cp_data_Perry_Table_153_100, Cp_data_Poling, Poling_integral
from chemicals.reaction import Hfg, Hfl
from chemicals.vapor_pressure import Psat_data_AntoinePoling
from scipy.optimize import brentq

from unitmodels.base import ConformanceCase
from unitmodels.testing import solve_case
from unitmodels.thermo import Component, ComponentSystem
from unitmodels.units.heat import HeatExchanger, Heater, chen_lmtd
from unitmodels.units.separators import Flash


def oil_and_water():
    """Incropera's oil and water as pseudo-components of molar mass 1 kg/mol,
    so that J/mol/K equals J/kg/K: cp oil 2131, water 4178 J/kg/K."""
    oil = Component.from_data("oil", 1.0, 0.0, 2131.0, 2131.0, 9.0, 3000.0, 0.0, 880.0, hvap_298=1e5)
    wat = Component.from_data("coolant", 1.0, 0.0, 4178.0, 4178.0, 9.0, 3000.0, 0.0, 1000.0, hvap_298=1e5)
    return ComponentSystem([oil, wat])


def _exchanger(mode, specs, params, guess_q=8000.0):
    sys = oil_and_water()
    u = HeatExchanger("E", sys, {"mode": mode})
    case = ConformanceCase(
        u,
        {"hot_in": [([0.1, 0.0], 373.15, 2e5, "liquid")], "cold_in": [([0.0, 0.2], 303.15, 2e5, "liquid")]},
        specs,
        params,
        guess={"hot_out": [([0.1, 0.0], 340.0, 2e5)], "cold_out": [([0.0, 0.2], 315.0, 2e5)], "Q": guess_q},
    )
    sol = solve_case(case)
    out = {k: float(sol.value(e)[0]) for k, (e, _u) in u.outputs(sol.s).items()}
    return sol, out


def test_exchanger_duty_mode_incropera_example_11_1():
    """Incropera & DeWitt, Fundamentals of Heat and Mass Transfer, Example
    11.1 (from memory): oil 0.1 kg/s, cp 2131 J/kg/K, 100 -> 60 degC; water
    0.2 kg/s, cp 4178 J/kg/K, in at 30 degC. q = 8524 W, water out
    40.2 degC, log-mean temperature difference 43.2 degC."""
    sol, out = _exchanger("duty", {"duty": 8524.0}, {})
    Th = sol.value(sol.s.port("hot_out").T)[0] - 273.15
    Tc = sol.value(sol.s.port("cold_out").T)[0] - 273.15
    assert Th == pytest.approx(60.0, abs=0.01)
    assert Tc == pytest.approx(40.2, abs=0.01)
    assert out["hot_end_approach"] == pytest.approx(100.0 - Tc, abs=1e-9)
    assert out["cold_end_approach"] == pytest.approx(Th - 30.0, abs=1e-9)
    lmtd_exact = (out["hot_end_approach"] - out["cold_end_approach"]) / math.log(out["hot_end_approach"] / out["cold_end_approach"])
    assert lmtd_exact == pytest.approx(43.2, abs=0.05)


def test_exchanger_rating_mode_against_effectiveness_ntu():
    """Rating with UA = q / LMTD of Example 11.1; duty against the exact
    counter-flow effectiveness (Incropera eq. 11.29a:
    eps = (1 - exp(-NTU (1 - Cr))) / (1 - Cr exp(-NTU (1 - Cr)))).
    Chen's LMTD approximation is 0.15 % below the true LMTD at this
    approach ratio (about 2), so the duties agree to 0.3 %."""
    ua = 8524.0 / 43.25
    sol, out = _exchanger("rating", {}, {"ua": ua})
    c_hot, c_cold = 0.1 * 2131.0, 0.2 * 4178.0
    cmin, cmax = min(c_hot, c_cold), max(c_hot, c_cold)
    ntu, cr = ua / cmin, cmin / cmax
    eps = (1 - math.exp(-ntu * (1 - cr))) / (1 - cr * math.exp(-ntu * (1 - cr)))
    q_ntu = eps * cmin * (373.15 - 303.15)
    assert out["duty"] == pytest.approx(q_ntu, rel=3e-3)
    assert out["duty"] == pytest.approx(8524.0, rel=3e-3)
    # the rate equation the model solves is Chen's form, exactly
    assert out["duty"] == pytest.approx(ua * chen_lmtd(out["hot_end_approach"], out["cold_end_approach"]), rel=1e-10)


def test_chen_lmtd_is_exact_for_equal_approaches_and_close_otherwise():
    """Chen (1987): exact when dt1 = dt2; for dt1/dt2 = 3 the true LMTD
    2/ln 3 = 1.8205 K and Chen gives 6**(1/3) = 1.8171 K."""
    assert chen_lmtd(12.5, 12.5) == pytest.approx(12.5, rel=1e-14)
    assert chen_lmtd(3.0, 1.0) == pytest.approx(6.0 ** (1 / 3), rel=1e-14)
    assert chen_lmtd(3.0, 1.0) == pytest.approx(2 / math.log(3), rel=3e-3)


def test_heater_duty_is_sensible_heat_and_latent_heat():
    """Heating liquid water 300 -> 350 K at constant flow needs
    integral of Cp_liq (chemicals' Perry 2-153 polynomial, EQ100 integral);
    vaporising it on top adds h_ig - h_liq at 350 K."""
    sys = ComponentSystem(["water"])
    r = Cp_data_Perry_Table_153_100.loc["7732-18-5"]
    sens = (EQ100(350.0, r.A, r.B, r.C, r.D, r.E, order=-1) - EQ100(300.0, r.A, r.B, r.C, r.D, r.E, order=-1)) / 1000.0
    for phase, extra in (("liquid", 0.0), ("vapour", float(sys.hvap_num(350.0)[0]))):
        u = Heater("H", sys, {"outlet_phase": phase})
        case = ConformanceCase(u, {"inlet": [([2.0], 300.0, 3e5, "liquid")]}, {"outlet_temperature": 350.0}, {"pressure_drop": 5e4})
        sol = solve_case(case)
        assert sol.value(sol.s.x["Q"])[0] == pytest.approx(2.0 * (sens + extra), rel=1e-10)
        assert sol.value(sol.s.port("outlet").P)[0] == pytest.approx(2.5e5, rel=1e-14)


def _antoine(cas, T):
    r = Psat_data_AntoinePoling.loc[cas]
    return 10 ** (float(r.A) - float(r.B) / (T + float(r.C)))


def _h_hand(cas, T, phase):
    """Enthalpy by the documented convention, built from chemicals' functions."""
    a = [float(Cp_data_Poling.at[cas, f"a{k}"]) for k in range(5)]
    if phase == "vapour":
        return Hfg(cas) + Poling_integral(T, *a) - Poling_integral(298.15, *a)
    r = Cp_data_Perry_Table_153_100.loc[cas]
    cint = lambda t: EQ100(t, r.A, r.B, r.C, r.D, r.E, order=-1) / 1000.0  # noqa: E731
    return Hfl(cas) + cint(T) - cint(298.15)


BZ, TOL = "71-43-2", "108-88-3"


def _flash(z, T_in, T, P):
    sys = ComponentSystem(["benzene", "toluene"])
    u = Flash("D", sys)
    case = ConformanceCase(u, {"inlet": [(z, T_in, 2e5, "liquid")]}, {"temperature": T, "pressure": P},
                           guess={"vapour": [([0.3, 0.2], T, P)], "liquid": [([0.2, 0.3], T, P)], "beta": 0.5, "Q": 1e4})
    sol = solve_case(case)
    out = {k: float(sol.value(e)[0]) for k, (e, _u) in u.outputs(sol.s).items()}
    return sol, out


def test_flash_benzene_toluene_hand_raoult():
    """Binary Raoult flash by hand: x_B = (P - P_T) / (P_B - P_T),
    y_B = x_B P_B / P, beta = (z_B - x_B) / (y_B - x_B), with Poling's
    Antoine constants; the duty from the enthalpy convention rebuilt from
    chemicals' Cp integrals and heats of formation."""
    z, T, P, T_in = np.array([0.5, 0.5]), 370.0, 101325.0, 350.0
    pb, pt = _antoine(BZ, T), _antoine(TOL, T)
    xb = (P - pt) / (pb - pt)
    yb = xb * pb / P
    beta = (z[0] - xb) / (yb - xb)
    sol, out = _flash(list(z), T_in, T, P)
    V = sol.value(sol.s.port("vapour").F)
    L = sol.value(sol.s.port("liquid").F)
    assert out["vapour_fraction"] == pytest.approx(beta, rel=1e-10)
    assert V[0] / V.sum() == pytest.approx(yb, rel=1e-10)
    assert L[0] / L.sum() == pytest.approx(xb, rel=1e-10)
    h_in = sum(zi * _h_hand(c, T_in, "liquid") for zi, c in zip(z, (BZ, TOL)))
    h_out = sum(v * _h_hand(c, T, "vapour") + l * _h_hand(c, T, "liquid") for v, l, c in zip(V, L, (BZ, TOL)))
    assert out["duty"] == pytest.approx(h_out - h_in, rel=1e-9)


def test_flash_at_hand_bubble_and_dew_points():
    """At the bubble temperature (sum z_i Psat_i(T) = P, solved by hand)
    the vapour fraction is zero, at the dew temperature
    (sum z_i / Psat_i(T) = 1/P) it is one, up to the complementarity
    smoothing: with beta * s_liquid = eps**2 / 2 and, linearising the
    Rachford-Rice condition at the bubble point, s_liquid = m beta with
    m = sum z K**2 - 1, so beta = eps / sqrt(2 m); at the dew point
    1 - beta = eps / sqrt(2 m') with m' = sum z / K**2 - 1."""
    from unitmodels.units.separators import FLASH_EPS

    z, P = [0.4, 0.6], 101325.0
    Tb = brentq(lambda T: z[0] * _antoine(BZ, T) + z[1] * _antoine(TOL, T) - P, 340.0, 390.0, xtol=1e-12)
    Td = brentq(lambda T: z[0] / _antoine(BZ, T) + z[1] / _antoine(TOL, T) - 1 / P, 340.0, 400.0, xtol=1e-12)
    zz = np.array(z)
    K = np.array([_antoine(BZ, Tb), _antoine(TOL, Tb)]) / P
    _, out = _flash(z, 350.0, Tb, P)
    assert out["vapour_fraction"] == pytest.approx(FLASH_EPS / math.sqrt(2 * (zz @ K**2 - 1)), rel=1e-3)
    K = np.array([_antoine(BZ, Td), _antoine(TOL, Td)]) / P
    _, out = _flash(z, 350.0, Td, P)
    assert 1.0 - out["vapour_fraction"] == pytest.approx(FLASH_EPS / math.sqrt(2 * (zz @ K**-2 - 1)), rel=1e-3)


@pytest.mark.parametrize("T, phase", [(340.0, "liquid"), (400.0, "vapour")])
def test_flash_single_phase_feed(T, phase):
    """Below the bubble point everything leaves as liquid, above the dew
    point as vapour (Raoult, 1 atm, equimolar benzene-toluene: bubble
    365.2 K, dew 371.9 K by the hand Antoine calculation), and the
    duty is the enthalpy change of the whole feed in that phase."""
    z, P, T_in = [0.5, 0.5], 101325.0, 330.0
    sol, out = _flash(z, T_in, T, P)
    V = sol.value(sol.s.port("vapour").F)
    L = sol.value(sol.s.port("liquid").F)
    main, other = (L, V) if phase == "liquid" else (V, L)
    assert main == pytest.approx(z, rel=1e-9)
    assert np.abs(other).max() < 1e-9
    h_in = sum(zi * _h_hand(c, T_in, "liquid") for zi, c in zip(z, (BZ, TOL)))
    h_out = sum(zi * _h_hand(c, T, phase) for zi, c in zip(z, (BZ, TOL)))
    assert out["duty"] == pytest.approx(h_out - h_in, rel=1e-7)


def test_adiabatic_flash_of_hot_pressurised_liquid():
    """Duty 0: a liquid at 400 K let down to 1 atm flashes; the drum
    temperature and vapour fraction satisfy the hand Raoult split and the
    hand energy balance (enthalpy convention rebuilt from chemicals)."""
    sys = ComponentSystem(["benzene", "toluene"])
    u = Flash("D", sys)
    z, T_in, P = np.array([0.5, 0.5]), 400.0, 101325.0
    case = ConformanceCase(u, {"inlet": [(list(z), T_in, 5e5, "liquid")]}, {"duty": 0.0, "pressure": P},
                           guess={"vapour": [([0.1, 0.05], 368.0, P)], "liquid": [([0.4, 0.45], 368.0, P)], "beta": 0.15})
    sol = solve_case(case)
    T = sol.value(sol.s.port("liquid").T)[0]
    beta = sol.value(sol.s.x["beta"])[0]
    pb, pt = _antoine(BZ, T), _antoine(TOL, T)
    xb = (P - pt) / (pb - pt)
    yb = xb * pb / P
    assert beta == pytest.approx((z[0] - xb) / (yb - xb), rel=1e-9)
    x = np.array([xb, 1 - xb])
    y = np.array([yb, 1 - yb])
    h_in = sum(zi * _h_hand(c, T_in, "liquid") for zi, c in zip(z, (BZ, TOL)))
    h_out = sum(beta * yi * _h_hand(c, T, "vapour") + (1 - beta) * xi * _h_hand(c, T, "liquid") for yi, xi, c in zip(y, x, (BZ, TOL)))
    assert h_out == pytest.approx(h_in, abs=1e-6 * abs(h_in))
    assert 0.05 < beta < 0.5 and 365.0 < T < 372.0


def test_flash_pressure_drop_spec():
    sys = ComponentSystem(["benzene", "toluene"])
    u = Flash("D", sys)
    assert u.check_specs({"temperature", "pressure_drop"}) is None
    assert "only one" in u.check_specs({"temperature", "pressure", "pressure_drop"})
    assert "only one" in u.check_specs({"temperature", "duty", "pressure"})
    assert u.check_specs({"duty", "pressure"}) is None
