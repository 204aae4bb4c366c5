"""Specifications that cannot be met, and ill-posed systems: never a wrong "optimal".

The numbers behind each case are the demo's own data (flowsheets/demo.toml):
the propylene feed is at most 95 kmol/h, so at most 95 kmol/h of cumene
(120.19 g/mol, molar mass from the `chemicals` package) = 11,400 kg/h can be
made — a 20,000 kg/h contract cannot be met; the flash cannot lift crude
purity to 99 wt% (the demo's optimum sits near 82 wt%); and a reactor limit of
140 degC contradicts the reactor-temperature decision, whose range starts at
150 degC.
"""

from __future__ import annotations

import json
from types import SimpleNamespace

import pytest

from plantopt.cli import main

from . import mutations as M

DEMO = str(M.BASE_FILES["demo.toml"])
NOT_SOLVED = {"infeasible", "iteration_limit", "time_limit", "failed", "restoration_failed", "diverged"}

CASES = [
    # (--set, limit name, bound in the file's unit, unit, side the point falls short on)
    ("limits.contract_minimum.lower=20000", "contract_minimum", 20000.0, "kg/h", "lower"),
    ("limits.crude_purity.lower=0.99", "crude_purity", 0.99, "", "lower"),
    ("limits.reactor_temperature.upper=140", "reactor_temperature", 140.0, "degC", "upper"),
]


@pytest.mark.slow
@pytest.mark.parametrize("setting,name,bound,unit,side", CASES, ids=[c[1] for c in CASES])
def test_impossible_limit_is_explained_not_claimed_optimal(setting, name, bound, unit, side, tmp_path, capsys, tally):
    out = tmp_path / "r.json"
    code = main(["optimize", DEMO, "--set", setting, "--json", str(out)])
    text = capsys.readouterr().out
    tally("infeasible")
    assert code == 1
    data = json.loads(out.read_text())
    assert data["status"] != "optimal" and data["status"] in NOT_SOLVED
    # the feasibility restoration certifies local infeasibility (IPOPT through
    # casadi, the independent reference, declares all three infeasible too)
    assert data["status"] == "infeasible"
    assert data["solver"]["status"] == data["status"]
    assert "Status: optimal" not in text and data["status"] in text
    assert "management-of-change" in data["notice"] and "management-of-change" in text
    v = next(v for v in data["violations"] if v["name"] == name)
    assert v["what"] == "limit" and v["unit"] == unit and v["bound"] == pytest.approx(bound) and v["side"] == side
    # the point found really misses the bound, by the amount reported
    assert (v["value"] < bound) if side == "lower" else (v["value"] > bound)
    assert v["violation"] == pytest.approx(abs(v["value"] - bound), rel=1e-9)
    # worst first
    rel = [x["relative"] for x in data["violations"]]
    assert rel == sorted(rel, reverse=True)


def fake_singular_report():
    return SimpleNamespace(ok=False, lines=lambda: [
        "40 variables, 41 equations, degrees of freedom -1",
        "over-determined: equation units.FLASH.equilibrium.benzene",
        "under-determined: variable streams.S6.T",
    ])


@pytest.mark.parametrize("command", ["simulate", "optimize"])
def test_structurally_singular_system_is_named_before_any_solve(command, monkeypatch, capsys, tally):
    """The structure check's names reach the user with exit 2, and no solver runs."""
    import plantopt.studies.optimize as opt
    import plantopt.studies.simulate as sim

    for mod in (sim, opt):
        monkeypatch.setattr(mod, "check_structure", lambda asm: fake_singular_report())
    fail = lambda *a, **k: pytest.fail("a solver ran on an ill-posed system")  # noqa: E731
    monkeypatch.setattr(sim, "solve_equations", fail)
    monkeypatch.setattr(opt, "solve_equations", fail)
    monkeypatch.setattr(opt, "solve_nlp", fail)
    code = main([command, DEMO])
    err = capsys.readouterr().err
    tally("malformed")
    assert code == 2 and "Traceback" not in err
    assert "demo.toml: " in err and "degrees of freedom -1" in err
    assert "units.FLASH.equilibrium.benzene" in err and "streams.S6.T" in err


def test_missing_specification_is_a_degrees_of_freedom_message(tmp_path, capsys, tally):
    """A heater without its outlet specification: named at the unit, before assembling anything."""
    doc = M.base_doc("utilities.toml")
    del doc["units"]["H1"]["outlet_temperature"]
    p = tmp_path / "u.toml"
    p.write_text(M.dumps(doc))
    code = main(["simulate", str(p)])
    err = capsys.readouterr().err
    tally("malformed")
    assert code == 2
    assert "u.toml: units.H1: missing outlet_temperature or duty" in err
