"""Plug-flow reactor against the analytic first-order result, the discrete
scheme's own closed form, and an ODE integration of the adiabatic case.

First-order isothermal PFR with constant density: X = 1 - exp(-k tau)
(standard textbook result, e.g. Fogler, Elements of Chemical Reaction
Engineering). Adiabatic with equal heat capacities: T = T0 + (-dH) X / Cp
at every point (Fogler's adiabatic energy balance).
"""

from __future__ import annotations

import math

import pytest
from scipy.integrate import solve_ivp

from unitmodels.base import ConformanceCase, UnitConfigError
from unitmodels.kinetics import Reaction
from unitmodels.testing import solve_case
from unitmodels.thermo import R
from unitmodels.units.reactors import PFR

from test_reactors import CP, DH, isomers


def _pfr(N, mode, specs, k0, ea, T0, FA0=10.0, V=1.0, profile=None):
    """profile: optional callable v -> (F_A, T) used as the starting point."""
    sys = isomers()
    rx = Reaction("iso", {"A": -1, "B": 1}, reference_temperature=350.0)
    u = PFR("R", sys, {"reactions": ["iso"], "mode": mode, "grid": N}, reactions=[rx])
    g = u.guess([FA0, 0.0], T0, [FA0 / 3, 2 * FA0 / 3], T0)
    g["outlet"] = [([FA0 / 3, 2 * FA0 / 3], T0, 2e5)]
    if profile is not None:
        for k in range(1, N + 1):
            fa, t = profile(V * k / N)
            g[f"segment{k}.extent.iso"] = profile(V * (k - 1) / N)[0] - fa
            if k < N:
                g.update({f"node{k}.F.A": fa, f"node{k}.F.B": FA0 - fa, f"node{k}.T": t})
            else:
                g["outlet"] = [([fa, FA0 - fa], t, 2e5)]
    case = ConformanceCase(u, {"inlet": [([FA0, 0.0], T0, 2e5, "liquid")]}, specs,
                           {"volume": V, "iso.pre_exponential": k0, "iso.activation_energy": ea}, g, reacting=True)
    sol = solve_case(case)
    out = {k: float(sol.value(e)[0]) for k, (e, _u) in u.outputs(sol.s).items()}
    return sol, out


def test_isothermal_first_order_matches_scheme_and_analytic():
    k, V, FA0 = 2.0e-3, 1.0, 10.0
    tau = V / (FA0 * 0.1 / 800.0)
    N = 20
    _, out = _pfr(N, "isothermal", {"temperature": 350.0}, k, 6e4, 350.0)
    h = k * tau / N
    # the implicit midpoint rule's closed form for linear decay
    assert 1 - out["conversion.A"] == pytest.approx(((1 - h / 2) / (1 + h / 2)) ** N, rel=1e-10)
    # and the continuous result within the scheme's error (k tau)^3 / (12 N^2) = 8.5e-4
    assert 1 - out["conversion.A"] == pytest.approx(math.exp(-k * tau), rel=1.2 * (k * tau) ** 3 / (12 * N**2))


def test_adiabatic_pfr_energy_line_and_second_order_convergence():
    k0, ea, T0 = 6.0e-4, 8.0e4, 320.0
    V, FA0 = 1.0, 10.0
    v0 = FA0 * 0.1 / 800.0

    def rhs(_v, y):
        FA, T = y
        k = k0 * math.exp(-ea / R * (1 / T - 1 / 350.0))
        r = k * FA / v0
        return [-r, (-DH) * r / (FA0 * CP)]

    ode = solve_ivp(rhs, (0.0, V), [FA0, T0], rtol=1e-12, atol=1e-12, dense_output=True)
    x_ode = 1 - ode.y[0, -1] / FA0
    errs = []
    for N in (10, 20):
        sol, out = _pfr(N, "duty", {"duty": 0.0}, k0, ea, T0, profile=lambda v: tuple(ode.sol(v)))
        T = sol.value(sol.s.port("outlet").T)[0]
        X = out["conversion.A"]
        assert T == pytest.approx(T0 + (-DH) * X / CP, rel=1e-12)
        errs.append(abs(X - x_ode))
    assert errs[1] < 1e-3
    assert errs[0] / errs[1] == pytest.approx(4.0, rel=0.25)  # second order


def test_grid_option_is_checked():
    sys = isomers()
    rx = Reaction("iso", {"A": -1, "B": 1})
    with pytest.raises(UnitConfigError, match="grid"):
        PFR("R", sys, {"reactions": ["iso"], "grid": 0}, reactions=[rx])
    with pytest.raises(UnitConfigError, match="grid"):
        PFR("R", sys, {"reactions": ["iso"], "grid": 2.5}, reactions=[rx])
