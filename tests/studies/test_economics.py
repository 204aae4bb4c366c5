"""Profit terms: feeds, products and utilities priced with their units."""

from pathlib import Path

import pytest

from plantopt import load_flowsheet, simulate
from plantopt.flowsheet import steam_latent_heat

CASE = Path(__file__).resolve().parents[1] / "data" / "utilities.toml"


def test_steam_latent_heat_against_steam_tables():
    """Saturated water/steam, IAPWS-IF97 tables (values from memory of the
    standard steam tables, e.g. Cengel & Boles Table A-5): h_fg = 2256.4 kJ/kg
    at 101.325 kPa and 2014.6 kJ/kg at 1 MPa."""
    assert steam_latent_heat(101325.0) == pytest.approx(2256.4e3, rel=5e-4)
    assert steam_latent_heat(1.0e6) == pytest.approx(2014.6e3, rel=5e-4)
    with pytest.raises(ValueError):
        steam_latent_heat(30e6)  # above the critical pressure: no latent heat


def test_utility_costs_follow_duty_and_price():
    fs = load_flowsheet(CASE)
    res = simulate(fs)
    assert res.status == "converged"
    q = {u.name: u.quantities["duty"] for u in res.units if u.name in ("H1", "C1")}
    assert q["H1"].unit == "kW" and q["H1"].value > 0 and q["C1"].value < 0
    steam_kg_h = q["H1"].value * 1e3 / steam_latent_heat(1.0e6) * 3600
    assert -res.objective.breakdown["utility.H1.steam"] == pytest.approx(steam_kg_h * 20.0 / 1000, rel=1e-9)
    # cooling water per mass: duty / (cp * dT), cp = 4186 J/kg/K (common practice value for water)
    water_kg_h = -q["C1"].value * 1e3 / (4186.0 * 10.0) * 3600
    assert -res.objective.breakdown["utility.C1.water"] == pytest.approx(water_kg_h * 0.05 / 1000, rel=1e-9)
    # fuel per energy, divided by the fired efficiency: 30 USD/MWh at 80 %
    fired = next(u for u in res.units if u.name == "H2").quantities["duty"]
    assert fired.unit == "kW" and fired.value > 0
    assert -res.objective.breakdown["utility.H2.gas"] == pytest.approx(fired.value / 1000 / 0.8 * 30.0, rel=1e-9)
    # feed and product priced per mass: 36 kmol/h of toluene (92.138 g/mol, chemicals)
    mass = 36.0 * 92.13842
    assert res.objective.breakdown["revenue.P1"] == pytest.approx(0.9 * mass, rel=1e-9)
    assert res.objective.breakdown["feed_cost.F1"] == pytest.approx(-0.8 * mass, rel=1e-9)
    assert res.objective.value == pytest.approx(sum(res.objective.breakdown.values()), rel=1e-12)


def test_heater_duty_matches_liquid_heat_capacity():
    """Duty = integral of the liquid Cp: cross-check against the thermo layer's
    own numeric enthalpy (chemicals-based correlations)."""
    fs = load_flowsheet(CASE)
    res = simulate(fs)
    F = 36.0 / 3.6  # mol/s
    h = fs.system.h_num
    expect = F * (h(363.15, "liquid")[0] - h(298.15, "liquid")[0])
    duty = next(u for u in res.units if u.name == "H1").quantities["duty"].value * 1e3
    assert duty == pytest.approx(expect, rel=1e-8)
