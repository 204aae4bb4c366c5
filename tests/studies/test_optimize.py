"""Economic optimization of the bundled flowsheets: our SQP against IPOPT,
and shadow prices against finite differences of re-optimized profit."""

import pytest

from plantopt import load_flowsheet, optimize
from plantopt.assembly import assemble


@pytest.fixture(scope="module")
def demo():
    from tests.conftest import DEMO

    fs = load_flowsheet(DEMO)
    return fs, assemble(fs)


@pytest.fixture(scope="module")
def both(demo):
    fs, asm = demo
    return optimize(fs, assembly=asm, solver="sqp"), optimize(fs, assembly=asm, solver="ipopt")


def test_sqp_and_ipopt_agree_on_profit_and_active_set(both):
    """IPOPT (through casadi) is the independent reference for our SQP."""
    sqp, ipo = both
    assert sqp.status == "optimal" and ipo.status == "optimal"
    assert sqp.objective.value == pytest.approx(ipo.objective.value, rel=1e-6)
    act = lambda r: sorted(l.name for l in r.limits if l.active)
    assert act(sqp) == act(ipo)
    assert act(sqp), "the demo's optimum should sit on some limits"
    bound = lambda r: sorted((d.name, d.at_bound) for d in r.decisions if d.at_bound)
    assert bound(sqp) == bound(ipo)


def test_kkt_residuals_reported(both):
    sqp, _ = both
    k = sqp.solver.kkt
    assert k["stationarity_scaled"] <= 1e-6 and k["feasibility_scaled"] <= 1e-6


def test_limits_hold_at_the_optimum(both):
    sqp, _ = both
    for lim in sqp.limits:
        assert not lim.violated, lim.name
        if lim.active:
            assert lim.shadow_price is not None and lim.shadow_price_unit.startswith("USD/h per")


@pytest.mark.slow
def test_shadow_prices_match_reoptimized_profit(demo, both):
    """The shadow price is d(optimal profit)/d(bound): compare with a central
    difference of re-optimized profit, the bound moved by a small step."""
    fs, asm = demo
    sqp, _ = both
    checked = 0
    for lim in sqp.limits:
        if not lim.active:
            continue
        path = lim.upper_path if lim.active_side == "upper" else lim.lower_path
        bound = lim.upper if lim.active_side == "upper" else lim.lower
        h = 1e-3 * max(abs(bound), 1.0) if lim.unit not in ("", "degC", "K") else (1e-4 if lim.unit == "" else 0.05)
        plus = optimize(fs, assembly=asm, overrides={path: str(bound + h)}, solver="ipopt")
        minus = optimize(fs, assembly=asm, overrides={path: str(bound - h)}, solver="ipopt")
        assert plus.status == minus.status == "optimal"
        fd = (plus.objective.value - minus.objective.value) / (2 * h)
        assert lim.shadow_price == pytest.approx(fd, rel=2e-2, abs=1e-3 * abs(sqp.objective.value) / max(abs(bound), 1.0)), lim.name
        checked += 1
    assert checked >= 1


def test_warm_start_from_result_json(demo, both, tmp_path):
    from plantopt.reports.io import write_json

    fs, asm = demo
    sqp, _ = both
    p = tmp_path / "r.json"
    write_json(p, sqp)
    again = optimize(fs, assembly=asm, warm_from=p)
    assert again.status == "optimal"
    assert again.objective.value == pytest.approx(sqp.objective.value, rel=1e-8)
    assert again.solver.iterations <= max(3, sqp.solver.iterations // 3)


def test_price_override_moves_the_optimum(demo, both):
    fs, asm = demo
    sqp, _ = both
    dearer = optimize(fs, assembly=asm, overrides={"economics.feeds.FEED_C3": "1.10"})
    assert dearer.status == "optimal"
    # envelope theorem: profit falls by at least... the amount bought times the price change, to first order
    assert dearer.objective.value < sqp.objective.value


def test_junk_warm_start_file_is_an_input_error(demo, tmp_path):
    from plantopt.errors import InputError
    from plantopt.studies.optimize import load_warm_start

    fs, asm = demo
    p = tmp_path / "junk.json"
    p.write_text('{"warm_start": {"x": ["a", "b"], "x_paths": ["p", "q"], "radius": "wide"}}')
    with pytest.raises(InputError) as e:
        load_warm_start(p, asm)
    assert str(e.value).startswith(f"{p}: warm_start: expected lists of numbers")


def test_variable_nominals_come_from_the_start_point(demo):
    """Scaling of the optimization: a variable's typical magnitude is its value at the
    converged start point, unless that value is below 1 % of the model's nominal.

    Check against the file itself: the benzene feed is specified as 80 kmol/h
    (flowsheets/demo.toml), so its total-flow variable is scaled by 80 kmol/h =
    22.2 mol/s, where the feed model's class-wide nominal is 1 mol/s.
    """
    import numpy as np

    from plantopt.studies.optimize import START_SCALE_MIN, start_point, variable_nominals

    fs, asm = demo
    x0 = start_point(asm, fs)
    nom = variable_nominals(asm, x0)
    model = asm.x_nominal()
    big = np.abs(x0) > START_SCALE_MIN * model
    assert np.array_equal(nom[big], np.abs(x0[big]))
    assert np.array_equal(nom[~big], model[~big])
    i = asm.unit_var_index["FEED_BZ"]["Ftot"]
    assert model[i] == 1.0
    assert nom[i] == pytest.approx(80.0 * 1000.0 / 3600.0, rel=1e-9)
    assert (nom > 0).all() and np.isfinite(nom).all()
    # a start value that is not finite keeps the model nominal
    x_bad = x0.copy()
    x_bad[i] = np.nan
    assert variable_nominals(asm, x_bad)[i] == model[i]
