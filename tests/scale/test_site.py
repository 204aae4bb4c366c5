"""The generated site family of the scale benchmark, at a small size.

The large sizes are benchmark-only (``plantopt bench scale``); here a site of
three trains on a two-level feed header goes through the real pipeline:
it loads, simulates, and our SQP and IPOPT agree on the optimum and on
which limits bind. The data are invented (see plantopt.bench.generators).
"""

from __future__ import annotations

import pytest

from plantopt.bench.generators import site_flowsheet, site_units, trains_for_units
from plantopt.errors import InputErrors
from plantopt.flowsheet import loads_flowsheet
from plantopt.studies.optimize import optimize
from plantopt.studies.simulate import simulate

TRAINS = 3
FANOUT = 2  # a tree of sub-headers even at three trains


@pytest.fixture(scope="module")
def site():
    return loads_flowsheet(site_flowsheet(TRAINS, header_fanout=FANOUT), "site.toml")


@pytest.fixture(scope="module")
def optima(site):
    return {s: optimize(site, solver=s) for s in ("sqp", "ipopt")}


@pytest.mark.parametrize("trains,fanout", [(1, 16), (3, 2), (17, 16), (40, 4)])
def test_unit_count_matches_the_generated_file(trains, fanout):
    fs = loads_flowsheet(site_flowsheet(trains, header_fanout=fanout), "site.toml", max_bytes=1 << 24)
    assert len(fs.units) == site_units(trains, fanout)
    reactors = [u for u, t in fs.unit_types.items() if t == "cstr"]
    assert len(reactors) == trains
    # trains differ (no symmetric allocation): every reactor volume is distinct
    vols = {fs.inputs[f"units.{u}.volume"].si for u in reactors}
    assert len(vols) == trains


def test_trains_for_units_is_closest():
    for target in (10, 100, 1000, 10000):
        n = trains_for_units(target)
        best = min(range(1, 2 * n + 2), key=lambda k: abs(site_units(k) - target))
        assert abs(site_units(n) - target) == abs(site_units(best) - target)


def test_generated_file_says_invented():
    text = site_flowsheet(2)
    assert "INVENTED" in text and "invented" in text


def test_steam_header_is_the_sum_of_the_duties(site, optima):
    res = optima["sqp"]
    lim = next(x for x in res.limits if x.name == "steam_header")
    duties = 0.0
    for u in res.units:
        if u.name.endswith("_TRIM") or u.name.endswith("_FLASH"):
            q = u.quantities["duty"]
            assert q.unit == lim.unit
            duties += q.value
    assert lim.value == pytest.approx(duties, rel=1e-9)


def test_sum_of_different_kinds_is_refused():
    text = site_flowsheet(1).replace(
        'quantity = "streams.S_BLEND.mass_fraction.dipb"',
        'quantity = "streams.S_BLEND.mass_fraction.dipb + units.T0001_TRIM.duty"')
    with pytest.raises(InputErrors) as exc:
        loads_flowsheet(text, "site.toml")
    assert "one kind" in str(exc.value)


def test_base_case_simulates(site):
    res = simulate(site)
    assert res.status == "converged", res.solver


def test_sqp_and_ipopt_agree_on_the_optimum(optima):
    sqp, ipo = optima["sqp"], optima["ipopt"]
    assert sqp.status == "optimal", sqp.solver
    assert ipo.status == "optimal", ipo.solver
    assert sqp.objective.value == pytest.approx(ipo.objective.value, rel=1e-6)
    act = {s: sorted(x.name for x in r.limits if x.active) for s, r in optima.items()}
    assert act["sqp"] == act["ipopt"]


def test_optimum_sits_on_the_shared_limits(optima):
    for res in optima.values():
        active = {x.name for x in res.limits if x.active}
        assert {"feed_supply", "steam_header"} <= active
        # binding shared limits are worth money: positive value of more supply and more steam
        for x in res.limits:
            if x.name in ("feed_supply", "steam_header"):
                assert x.shadow_price > 0


@pytest.mark.slow
def test_sqp_and_ipopt_agree_on_a_100_unit_site():
    """A 12-train site (100 unit operations, 1,215 variables) through the real pipeline, scaled by
    its start point: our SQP and IPOPT (the independent reference, through casadi) reach the same
    profit and the same binding limits (measured with ``plantopt bench scale``: rel. diff 1.2e-7)."""
    n = trains_for_units(100)
    fs = loads_flowsheet(site_flowsheet(n), "site_100.toml", max_bytes=1 << 24)
    res = {s: optimize(fs, solver=s) for s in ("sqp", "ipopt")}
    assert res["sqp"].status == "optimal" and res["ipopt"].status == "optimal"
    assert res["sqp"].objective.value == pytest.approx(res["ipopt"].objective.value, rel=1e-6)
    act = {s: sorted(x.name for x in r.limits if x.active) for s, r in res.items()}
    assert act["sqp"] == act["ipopt"]
    assert {"feed_supply", "steam_header"} <= set(act["sqp"])
