"""A published optimum reproduced through the whole flowsheet pipeline.

Series reactions A -> B -> C (first order) in an isothermal mixed-flow
reactor: the largest attainable fraction of the intermediate is

    C_B,max / C_A0 = 1 / (1 + sqrt(k2/k1))**2,  reached at  tau * sqrt(k1 k2) = 1

(Levenspiel, Chemical Reaction Engineering, 3rd ed., 1999, ch. 8, the
maximum of the intermediate in mixed flow; equations quoted from memory).
With equal activation energies k2/k1 is the same at every temperature, so
choosing the temperature moves k1*tau only, and the economic optimum (the
intermediate sold, the feed bought) must sit exactly at that maximum.
"""

import math
from pathlib import Path

import pytest

from plantopt import load_flowsheet, optimize

CASE = Path(__file__).resolve().parents[1] / "data" / "series_cstr.toml"
R = 8.314462618  # J/mol/K, CODATA 2018 (exact in the 2019 SI)


def analytic():
    F0 = 28.8 * 1000 / 3600  # mol/s of A
    v0 = F0 * 0.100 / 800.0  # m3/s: molar mass 100 g/mol, density 800 kg/m3
    tau = 1.0 / v0  # 1 m3 reactor
    k1_ref, k2_ref, t_ref, ea = 1e-3, 2.5e-4, 350.0, 50e3
    # tau * sqrt(k1 k2) = 1 with k_i = k_i,ref * exp(-Ea/R (1/T - 1/Tref))
    growth = 1.0 / (tau * math.sqrt(k1_ref * k2_ref))
    t_opt = 1.0 / (1.0 / t_ref - R / ea * math.log(growth))
    y_max = 1.0 / (1.0 + math.sqrt(k2_ref / k1_ref)) ** 2
    profit = (3.0 * F0 * y_max * 0.1 - 1.0 * F0 * 0.1) * 3600  # USD/h
    return t_opt, y_max, profit, F0


@pytest.mark.parametrize("solver", ["sqp", "ipopt"])
def test_series_reaction_optimum(solver):
    t_opt, y_max, profit, F0 = analytic()
    res = optimize(load_flowsheet(CASE), solver=solver)
    assert res.status == "optimal"
    temp = next(d for d in res.decisions if d.name == "reactor_temperature")
    assert temp.unit == "K"
    assert temp.value == pytest.approx(t_opt, abs=1e-3)
    assert res.objective.value == pytest.approx(profit, rel=1e-7)
    b = next(s for s in res.streams if s.name == "S_B")
    assert b.component_flows["B"] / (F0 * 3.6) == pytest.approx(y_max, rel=1e-7)
