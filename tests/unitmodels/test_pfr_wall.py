"""Plug-flow reactor with wall heat transfer to a coolant (``mode = "wall"``).

Checks against outside references:

* no reaction, constant heat capacity: the exact solution of
  ``F c_p dT/dV = (U A / V) (T_c - T)`` is the exponential approach
  ``T_out = T_c - (T_c - T_in) exp(-U A / (F c_p))`` (the standard
  constant-coolant-temperature result, e.g. Fogler, Elements of Chemical
  Reaction Engineering, chapter on non-isothermal PFRs with heat
  exchange; from memory). The implicit midpoint scheme's own closed form
  ``((1 - b/2)/(1 + b/2))**N``, ``b = U A / (N F c_p)``, is checked to
  round-off, and the error against the exponential must fall about four
  times per doubling of the grid (second order).
* exothermic first-order reaction with cooling: the mole and energy
  balances ``dF_A/dV = -k(T) F_A / v0`` and
  ``dT/dV = ((-dH) k(T) F_A / v0 + (U A / V)(T_c - T)) / (F_0 c_p)`` are
  integrated independently by ``scipy.integrate.solve_ivp`` (LSODA at
  ``rtol = atol = 1e-12``); the reactor's outlet conversion and temperature
  must agree within the discretisation error of the grid, shrinking about
  four times when the grid doubles.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from plantopt.errors import DimensionError
from plantopt.units import parse_quantity
from unitmodels.base import ConformanceCase
from unitmodels.kinetics import Reaction
from unitmodels.testing import check_case, solve_case
from unitmodels.thermo import R
from unitmodels.units.reactors import PFR

from test_reactors import CP, DH, isomers

FA0 = 10.0  # mol/s of A fed
V = 1.0  # m**3
V0 = FA0 * 0.1 / 800.0  # m**3/s: molar mass 0.1 kg/mol, liquid density 800 kg/m**3 (both isomers)
P_IN = 2.0e5  # Pa


def _wall_pfr(N, U, A, Tc, T0, k0, ea, profile=None):
    """Solve the wall-mode reactor fed with pure A (liquid).

    Parameters
    ----------
    N : int
        Grid (segments).
    U : float
        Wall coefficient, W/m**2/K.
    A : float
        Total wall area, m**2.
    Tc, T0 : float
        Coolant and feed temperatures, K.
    k0, ea : float
        Rate constant at 350 K (1/s) and activation energy (J/mol) of A -> B.
    profile : callable, optional
        ``v -> (F_A, T)`` (m**3 -> mol/s, K) to start from; without it every
        node starts at the inlet state (the unit's :meth:`initial_guess`).

    Returns
    -------
    sol : unitmodels.testing.Solved
    out : dict
        The unit's outputs evaluated at the solution (SI).
    """
    rx = Reaction("iso", {"A": -1, "B": 1}, reference_temperature=350.0)
    u = PFR("R", isomers(), {"reactions": ["iso"], "mode": "wall", "grid": N, "utility": "cw"}, reactions=[rx])
    g = u.initial_guess({"inlet": [(np.array([FA0, 0.0]), T0, P_IN)]})
    g["outlet"] = [([FA0, 0.0], T0, P_IN)]
    if profile is not None:
        for k in range(1, N + 1):
            fa, t = profile(V * k / N)
            g[f"segment{k}.extent.iso"] = profile(V * (k - 1) / N)[0] - fa
            if k < N:
                g.update({f"node{k}.F.A": fa, f"node{k}.F.B": FA0 - fa, f"node{k}.T": t})
            else:
                g["outlet"] = [([fa, FA0 - fa], t, P_IN)]
    params = {"volume": V, "iso.pre_exponential": k0, "iso.activation_energy": ea,
              "wall_coefficient": U, "wall_area": A, "coolant_temperature": Tc}
    case = ConformanceCase(u, {"inlet": [([FA0, 0.0], T0, P_IN, "liquid")]}, {}, params, g, reacting=True)
    sol = solve_case(case)
    out = {k: float(sol.value(e)[0]) for k, (e, _u) in u.outputs(sol.s).items()}
    return sol, out


def _t_out(sol) -> float:
    return float(sol.value(sol.s.port("outlet").T)[0])


def test_no_reaction_exponential_approach_and_second_order():
    """Heating by a coolant, rate constant 0: the outlet temperature against
    T_c - (T_c - T_in) exp(-UA/(F c_p)) (analytic) and the scheme's closed form."""
    U, A, Tc, T0 = 500.0, 6.0, 350.0, 300.0
    ntu = U * A / (FA0 * CP)  # = 2: a strong approach, so the grid matters
    exact = Tc - (Tc - T0) * math.exp(-ntu)
    errs = []
    for N in (10, 20, 40):
        sol, out = _wall_pfr(N, U, A, Tc, T0, 0.0, 5.0e4)
        T = _t_out(sol)
        b = ntu / N
        # the implicit midpoint rule's closed form for a linear approach
        assert (Tc - T) / (Tc - T0) == pytest.approx(((1 - b / 2) / (1 + b / 2)) ** N, rel=1e-10)
        # the duty is the heat the stream took up (constant c_p, no reaction)
        assert out["duty"] == pytest.approx(FA0 * CP * (T - T0), rel=1e-10)
        assert out["conversion.A"] == pytest.approx(0.0, abs=1e-14)
        # approach error of the scheme ~ ntu**3 / (12 N**2) relative to (T_c - T_out)
        assert abs(T - exact) <= 1.2 * ntu**3 / (12 * N**2) * (Tc - exact)
        errs.append(abs(T - exact))
    assert errs[0] / errs[1] == pytest.approx(4.0, rel=0.05)
    assert errs[1] / errs[2] == pytest.approx(4.0, rel=0.05)


def test_no_reaction_cooling_gives_negative_duty_and_coolant_is_a_parameter():
    """Feed hotter than the coolant: heat leaves (Q < 0); a different
    coolant temperature changes the result through the parameter alone."""
    U, A, T0, N = 500.0, 6.0, 360.0, 20
    ntu = U * A / (FA0 * CP)
    b = ntu / N
    ratio = ((1 - b / 2) / (1 + b / 2)) ** N  # scheme's closed form, checked above
    for Tc in (300.0, 320.0):
        sol, out = _wall_pfr(N, U, A, Tc, T0, 0.0, 5.0e4)
        T = _t_out(sol)
        assert T == pytest.approx(Tc + (T0 - Tc) * ratio, rel=1e-12)
        assert out["duty"] < 0
        assert out["duty"] == pytest.approx(FA0 * CP * (T - T0), rel=1e-10)


# exothermic case: k(350 K) = 1.2e-3 1/s, E = 50 kJ/mol, UA = 9000 W/K, coolant and feed at 330 K;
# about 56 % conversion with a hot spot of about 352 K inside the reactor (numbers chosen, not data)
K0, EA, U_EX, A_EX, TC_EX, T0_EX = 1.2e-3, 5.0e4, 1500.0, 6.0, 330.0, 330.0


def _ode():
    """The same balances integrated by scipy (independent reference)."""

    def rhs(_v, y):
        fa, T = y
        r = K0 * math.exp(-EA / R * (1 / T - 1 / 350.0)) * fa / V0
        return [-r, ((-DH) * r + U_EX * A_EX / V * (TC_EX - T)) / (FA0 * CP)]

    return solve_ivp(rhs, (0.0, V), [FA0, T0_EX], method="LSODA", rtol=1e-12, atol=1e-12, dense_output=True)


def test_exothermic_first_order_against_solve_ivp():
    ode = _ode()
    assert ode.success
    x_ref = 1 - ode.y[0, -1] / FA0
    t_ref = float(ode.y[1, -1])
    vs = np.linspace(0.0, V, 2001)
    t_peak_ref = float(ode.sol(vs)[1].max())
    assert 0.4 < x_ref < 0.7 and t_peak_ref > t_ref + 3.0  # a real hot spot, not a trivial case
    ex, et = [], []
    for N in (40, 80):
        sol, out = _wall_pfr(N, U_EX, A_EX, TC_EX, T0_EX, K0, EA, profile=lambda v: tuple(ode.sol(v)))
        X, T = out["conversion.A"], _t_out(sol)
        assert X == pytest.approx(x_ref, rel=1e-3)
        assert T - T0_EX == pytest.approx(t_ref - T0_EX, rel=1e-3)
        # energy: heat released by reaction = sensible heat gained - heat through the wall (Q)
        assert (-DH) * FA0 * X + out["duty"] == pytest.approx(FA0 * CP * (T - T0_EX), rel=1e-10)
        t_nodes = [out[f"node{k}.temperature"] for k in range(1, N)]
        assert max(t_nodes) == pytest.approx(t_peak_ref, abs=0.1)  # hot spot, node spacing V/N
        ex.append(abs(X - x_ref))
        et.append(abs(T - t_ref))
    assert ex[0] / ex[1] == pytest.approx(4.0, rel=0.15)  # second order in the grid
    assert et[0] / et[1] == pytest.approx(4.0, rel=0.15)


def test_exothermic_from_initial_guess_reaches_the_same_solution():
    """Starting every node at the inlet state (the unit's initial_guess) finds
    the same profile as starting on the ODE solution."""
    ode = _ode()
    a, out_a = _wall_pfr(40, U_EX, A_EX, TC_EX, T0_EX, K0, EA)
    b, out_b = _wall_pfr(40, U_EX, A_EX, TC_EX, T0_EX, K0, EA, profile=lambda v: tuple(ode.sol(v)))
    assert out_a["conversion.A"] == pytest.approx(out_b["conversion.A"], rel=1e-10)
    assert _t_out(a) == pytest.approx(_t_out(b), rel=1e-12)


def test_wall_mode_declarations():
    """No specification (dof 0), the three wall parameters with their kinds,
    node temperatures as variables, a conformance case that passes the suite."""
    cases = PFR.conformance_cases()
    wall = [c for c in cases if c.unit.options["mode"] == "wall"]
    assert len(wall) == 1
    case = wall[0]
    u = case.unit
    assert u.dof() == 0 and u.specs() == [] and case.specs == {}
    assert u.check_specs(set()) is None
    assert "unknown" in u.check_specs({"duty"})
    kinds = {q.name: q.kind for q in u.parameters()}
    assert kinds["wall_coefficient"] == "heat_transfer_coefficient"
    assert kinds["wall_area"] == "area"
    assert kinds["coolant_temperature"] == "temperature"
    names = {v.name for v in u.variables()}
    assert {f"node{k}.T" for k in range(1, u.n_seg)} <= names and "Q" in names
    g = u.initial_guess({"inlet": [(np.array(case.inlets["inlet"][0][0]), 330.0, 2.0e5)]})
    assert all(g[f"node{k}.T"] == 330.0 for k in range(1, u.n_seg))
    assert u.utility() == "steam"
    assert check_case(case) == []


@pytest.mark.parametrize("name, right, wrong", [
    ("wall_coefficient", "500 W/m**2/K", "500 W/K"),
    ("wall_area", "6 m**2", "6 m"),
    ("coolant_temperature", "330 K", "330 W"),
])
def test_wall_parameters_refuse_wrong_dimension(name, right, wrong):
    """The shared dimension check runs on each class's first case only; the
    wall parameters exist only in wall mode, so they are checked here."""
    u = next(c.unit for c in PFR.conformance_cases() if c.unit.options["mode"] == "wall")
    kind = {q.name: q.kind for q in u.parameters()}[name]
    parse_quantity(right, kind)
    with pytest.raises(DimensionError):
        parse_quantity(wrong, kind, path=f"units.R.{name}")
