"""Every bundled flowsheet loads, simulates and closes its overall balances."""

from pathlib import Path

import pytest

from plantopt import load_flowsheet, simulate

FLOWSHEETS = sorted((Path(__file__).resolve().parents[2] / "flowsheets").glob("*.toml"))
PLANTS = [p for p in FLOWSHEETS if "[units." in p.read_text(encoding="utf-8")]


def test_there_are_two_example_plants():
    assert {p.name for p in PLANTS} >= {"demo.toml", "methanol_loop.toml"}


@pytest.mark.parametrize("path", PLANTS, ids=lambda p: p.name)
def test_simulates_and_closes_balances(path):
    fs = load_flowsheet(path)
    assert "invented" in fs.notice.lower()
    res = simulate(fs)
    assert res.status == "converged"
    # feeds in = products out (mass), and H_in + heat + work = H_out, to 1e-8 relative
    assert res.balance.mass_relative < 1e-8
    assert res.balance.energy_relative < 1e-8
    assert "management-of-change" in res.notice
