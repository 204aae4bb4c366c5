"""The command line end to end: exit codes, messages, JSON files."""

import json
import subprocess
import sys

import pytest

from plantopt.cli import main


def run(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "plantopt.cli", *args], capture_output=True, text=True, timeout=300)


def test_simulate_demo_converges_and_closes_balances(demo_path, tmp_path):
    out = tmp_path / "sim.json"
    assert main(["simulate", str(demo_path), "--json", str(out), "--quiet"]) == 0
    data = json.loads(out.read_text())
    assert data["status"] == "converged"
    assert data["command"] == "simulate"
    assert "management-of-change" in data["notice"]
    assert "invented" in data["data_notice"]
    # overall balances at the plant boundary (feeds in, products out)
    assert data["balance"]["mass_relative"] < 1e-8
    assert data["balance"]["energy_relative"] < 1e-8
    names = {s["name"] for s in data["streams"]}
    assert {"S_BZ", "S_C3", "S_REC", "S_CRUDE", "S_PURGE"} <= names
    # decisions sit at their base values in a simulation
    assert all(d["move"] == 0 for d in data["decisions"])


def test_simulate_prints_stream_table_and_safety_notice(demo_path, capsys):
    assert main(["simulate", str(demo_path)]) == 0
    text = capsys.readouterr().out
    assert "Status: converged" in text and "Streams" in text and "S_CRUDE" in text
    assert "management-of-change" in text


def test_temperature_in_kg_refused_with_exit_2(demo_text, tmp_path):
    bad = tmp_path / "demo.toml"
    bad.write_text(demo_text.replace('temperature = "175 degC"', 'temperature = "175 kg"'))
    r = run("simulate", str(bad))
    assert r.returncode == 2
    assert "demo.toml: units.REACTOR.temperature: expected a temperature, got '175 kg' (mass)" in r.stderr
    assert "Traceback" not in r.stderr


def test_missing_file_and_bad_set(demo_path, tmp_path):
    r = run("simulate", str(tmp_path / "nope.toml"))
    assert r.returncode == 2 and "file not found" in r.stderr and "Traceback" not in r.stderr
    r = run("simulate", str(demo_path), "--set", "economics.feeds.NOPE=3")
    assert r.returncode == 2 and "economics.feeds.NOPE: no such input" in r.stderr
    r = run("simulate", str(demo_path), "--set", "units.REACTOR.volume=3 kg")
    assert r.returncode == 2 and "expected a volume, got '3 kg' (mass)" in r.stderr


def test_json_not_half_written_on_bad_input(demo_path, tmp_path):
    out = tmp_path / "keep.json"
    out.write_text('{"old": true}')
    r = run("simulate", str(demo_path), "--set", "units.REACTOR.volume=bad", "--json", str(out))
    assert r.returncode == 2
    assert json.loads(out.read_text()) == {"old": True}


def test_inputs_lists_addresses(demo_path, tmp_path):
    out = tmp_path / "inputs.json"
    assert main(["inputs", str(demo_path), "--json", str(out)]) == 0
    rows = json.loads(out.read_text())["inputs"]
    assert all({"path", "value", "unit", "kind"} <= set(r) for r in rows)
    kinds = {r["kind"] for r in rows}
    assert {"price", "limit", "decision", "feed", "equipment", "kinetics"} <= kinds


def test_set_changes_the_simulation(demo_path, tmp_path):
    a, b = tmp_path / "a.json", tmp_path / "b.json"
    assert main(["simulate", str(demo_path), "--json", str(a), "--quiet"]) == 0
    assert main(["simulate", str(demo_path), "--json", str(b), "--quiet", "--set", "units.REACTOR.volume=15"]) == 0
    da, db = json.loads(a.read_text()), json.loads(b.read_text())
    cum = lambda d: next(s for s in d["streams"] if s["name"] == "S_CRUDE")["component_flows"]["cumene"]
    assert cum(db) > cum(da)  # a larger reactor converts more (same feeds, same temperature)
    assert db["overrides"] == {"units.REACTOR.volume": "15"}


def test_impossible_contract_exits_1_with_explanation(demo_path, tmp_path):
    """A production demand above what the feeds allow (propylene feed at most
    95 kmol/h gives at most ~11,400 kg/h cumene) cannot be met."""
    out = tmp_path / "infeasible.json"
    code = main(["optimize", str(demo_path), "--set", "limits.contract_minimum.lower=20000", "--json", str(out), "--quiet"])
    assert code == 1
    data = json.loads(out.read_text())
    assert data["status"] != "optimal"
    assert data["status"] in ("infeasible", "iteration_limit", "time_limit", "failed")
    names = [v["name"] for v in data["violations"]]
    assert "contract_minimum" in names
    v = next(v for v in data["violations"] if v["name"] == "contract_minimum")
    assert v["unit"] == "kg/h" and v["bound"] == 20000 and v["violation"] > 5000
