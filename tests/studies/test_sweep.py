"""Sweeps of the demo plant (invented data): envelope-theorem checks of the
optimal-profit curve, breakpoints against an independent solver, resuming,
and identical results on a Dask LocalCluster."""

from pathlib import Path

import pytest

from plantopt import load_flowsheet
from plantopt.assembly import assemble
from plantopt.errors import InputError, InputErrors
from plantopt.studies.sweep import grid_points, parse_vary, run_sweep
from tests.conftest import DEMO

C3 = "economics.feeds.FEED_C3"
CRUDE = "economics.products.CRUDE"

# IPOPT for the sweeps whose checks are about the optimal-profit curve, the
# breakpoints and the bookkeeping: our SQP is being hardened and currently
# fails some cold starts on this plant (its status is then recorded, which
# test_point_without_optimum_records_its_status covers). The warm-start test
# uses the default SQP, whose warm starts reuse multipliers and trust radius.
SOLVER = "ipopt"


@pytest.fixture(scope="module")
def demo():
    fs = load_flowsheet(DEMO)
    return fs, assemble(fs)


@pytest.fixture(scope="module")
def c3_line(demo):
    """0.80..1.30 USD/kg crosses the price at which the propylene feed leaves
    its upper bound (IPOPT: see SOLVER)."""
    fs, asm = demo
    return run_sweep(fs, vary=[f"{C3}=0.80:1.30:6"], assembly=asm, solver=SOLVER)


def _mass(row, term, price):
    # amount bought or sold (kg/h) = breakdown term (USD/h) / price (USD/kg)
    return abs(row[f"profit.{term} [USD/h]"]) / price


def test_parse_vary_messages(demo):
    fs, _ = demo
    with pytest.raises(InputError, match=r"--vary economics.feeds.FEED_XX: no such input"):
        parse_vary("economics.feeds.FEED_XX=0:1:3", fs)
    with pytest.raises(InputError, match="N must be a whole number"):
        parse_vary(f"{C3}=0.8:1.0:three", fs)
    with pytest.raises(InputError, match="expected PATH=START:STOP:N"):
        parse_vary(C3, fs)
    with pytest.raises(InputError):
        parse_vary(f"{C3}=0.8:1.0:3:kg", fs)  # not a price unit
    a = parse_vary(f"{C3}=800:1000:3:USD/t", fs)
    assert a.values == (800.0, 900.0, 1000.0) and a.unit == "USD/t"


def test_point_outside_input_range_is_refused_before_solving(demo):
    fs, asm = demo
    # one problem (InputError) or several found together (InputErrors), each naming the input
    with pytest.raises((InputError, InputErrors), match="units.PURGE_SPLIT.fraction.S_PURGE"):
        run_sweep(fs, vary=["units.PURGE_SPLIT.fraction.S_PURGE=0.5:1.5:3"], assembly=asm)


def test_grid_continuation_structure():
    """Spine along the first axis, branches along the second, cut every 2 steps."""
    from plantopt.studies.sweep import Axis

    pts = grid_points([Axis("a", (0.0, 1.0, 2.0), ""), Axis("b", (0.0, 1.0, 2.0), "")], chain_length=2)
    assert [p.neighbour for p in pts] == [None, 0, 1, 0, 3, 4, 3, 6, 7]
    assert [p.warm_parent for p in pts] == [None, 0, None, 0, 3, None, None, 6, None]


def test_profit_monotone_and_convex_in_feed_price(c3_line):
    """Envelope theorem: d(profit*)/d(price) = -(mass bought), and profit* is
    convex in a price (a maximum of functions linear in it). So between two
    points the secant slope lies between -m(a) and -m(b)."""
    rows = c3_line.rows
    assert all(r["status"] == "optimal" for r in rows)
    p = [r[C3] for r in rows]
    prof = [r["objective"] for r in rows]
    m = [_mass(r, "feed_cost.FEED_C3", pr) for r, pr in zip(rows, p)]
    for i in range(len(rows) - 1):
        slope = (prof[i + 1] - prof[i]) / (p[i + 1] - p[i])
        assert slope < 0
        tol = 1e-6 * m[i]
        assert -m[i] - tol <= slope <= -m[i + 1] + tol, (i, slope, m[i], m[i + 1])
    second = [prof[i - 1] - 2 * prof[i] + prof[i + 1] for i in range(1, len(prof) - 1)]
    assert min(second) >= -1e-6 * max(abs(v) for v in prof)
    assert max(second) > 1.0, "the range should include a bend (an active-set change)"


def test_profit_monotone_and_convex_in_product_price(demo):
    """Same check for a product: d(profit*)/d(price) = +(mass sold)."""
    fs, asm = demo
    r = run_sweep(fs, vary=[f"{CRUDE}=0.95:1.35:5"], assembly=asm, bisect=False, solver=SOLVER)
    rows = [x for x in r.rows]
    assert all(x["status"] == "optimal" for x in rows)
    for a, b in zip(rows, rows[1:]):
        slope = (b["objective"] - a["objective"]) / (b[CRUDE] - a[CRUDE])
        ma, mb = _mass(a, "revenue.CRUDE", a[CRUDE]), _mass(b, "revenue.CRUDE", b[CRUDE])
        assert ma * (1 - 1e-6) <= slope <= mb * (1 + 1e-6), (slope, ma, mb)


def test_warm_starts_follow_the_chain_and_cut_fewer_iterations(demo):
    """Default solver (SQP)."""
    fs, asm = demo
    rows = run_sweep(fs, vary=[f"{C3}=0.85:0.95:3"], assembly=asm, bisect=False).rows
    assert [r["status"] for r in rows] == ["optimal"] * 3
    assert rows[0]["warm_from"] is None
    assert [r["warm_from"] for r in rows[1:]] == [0, 1]
    warm_its = [r["iterations"] for r in rows[1:]]
    assert sum(warm_its) < len(warm_its) * rows[0]["iterations"]


def test_breakpoint_brackets_with_ipopt(demo, c3_line):
    """The active-set change located by bisection (SQP) is bracketed by IPOPT,
    an independent solver, solving 0.01 USD/kg either side of it."""
    from plantopt import optimize

    fs, asm = demo
    bps = [b for b in c3_line.breakpoints if "decision:propylene_feed:upper" in b.before
           and "decision:propylene_feed:upper" not in b.after]
    assert len(bps) == 1 and bps[0].status == "located"
    b = bps[0]
    assert b.upper - b.lower <= 1e-3 * 0.1 + 1e-12
    assert any(r.get("active_set_changed") for r in c3_line.rows)
    at = lambda v: next(d.at_bound for d in optimize(fs, assembly=asm, solver="ipopt",
                                                     overrides={C3: str(v)}).decisions if d.name == "propylene_feed")
    assert at(b.value - 0.01) == "upper"
    assert at(b.value + 0.01) is None


def test_rerun_skips_finished_points_and_gives_the_same_file(demo, tmp_path):
    fs, asm = demo
    out = tmp_path / "s.csv"
    kw = dict(vary=[f"{C3}=0.80:0.95:4"], assembly=asm, out=out, chain_length=None, bisect=False, solver=SOLVER)
    first = run_sweep(fs, **kw)
    full = out.read_text()
    assert first.skipped == 0 and len(full.splitlines()) == 5
    # an interrupted run: only the first two rows made it to disk
    out.write_text("".join(full.splitlines(keepends=True)[:3]))
    again = run_sweep(fs, **kw)
    assert again.skipped == 2 and again.solved == 2
    assert out.read_text() == full


def test_output_of_another_sweep_is_refused(demo, tmp_path):
    fs, asm = demo
    out = tmp_path / "s.csv"
    run_sweep(fs, vary=[f"{C3}=0.80:0.85:2"], assembly=asm, out=out, bisect=False, solver=SOLVER)
    with pytest.raises(InputError, match="different sweep"):
        run_sweep(fs, vary=[f"{C3}=0.80:0.90:2"], assembly=asm, out=out, bisect=False, solver=SOLVER)


def test_scenarios_csv_and_parquet(demo, tmp_path):
    import pyarrow.parquet as pq

    fs, asm = demo
    sc = tmp_path / "sc.csv"
    sc.write_text(f"scenario,{C3},{CRUDE}\nlow,0.85,1.10\nhigh,900 USD/t,1.2 USD/kg\n")
    r = run_sweep(fs, scenarios=sc, assembly=asm, out=tmp_path / "o.parquet", solver=SOLVER)
    t = pq.read_table(tmp_path / "o.parquet").to_pylist()
    assert [x["scenario"] for x in t] == ["low", "high"]
    assert t[1][C3] == pytest.approx(0.9) and t[1]["warm_from"] == 0
    assert [x["objective"] for x in t] == [x["objective"] for x in r.rows]
    bad = tmp_path / "bad.csv"
    bad.write_text(f"{C3}\n0.9\nlots\n")
    with pytest.raises(InputError, match=r"bad.csv: line 3"):
        run_sweep(fs, scenarios=bad, assembly=asm)
    bad.write_text("units.PURGE_SPLIT.fraction.S_PURGE\n0.2\n1.7\n")
    with pytest.raises(InputError, match=r"bad.csv: line 3.units.PURGE_SPLIT.fraction.S_PURGE: expected a fraction between 0 and 1, got 1.7"):
        run_sweep(fs, scenarios=bad, assembly=asm)


def test_point_without_optimum_records_its_status(demo):
    fs, asm = demo
    r = run_sweep(fs, vary=[f"{C3}=0.8:0.9:2"], assembly=asm, warm=False, bisect=False, options={"max_iter": 1})
    assert [x["status"] for x in r.rows] == ["iteration_limit"] * 2
    assert all(x.get("active_set") is None for x in r.rows)


@pytest.mark.slow
def test_local_cluster_gives_identical_results(demo, tmp_path):
    """Dask LocalCluster (threads in this process) versus the serial run: the
    warm-start chains are fixed by the sweep, so the tables are identical."""
    from distributed import Client, LocalCluster

    fs, asm = demo
    kw = dict(vary=[f"{C3}=0.80:0.95:4"], chain_length=2, bisect=False, solver=SOLVER)
    run_sweep(fs, assembly=asm, out=tmp_path / "serial.csv", **kw)
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=False, dashboard_address=None) as cl, Client(cl) as c:
        run_sweep(fs, executor=c.get_executor(pure=False), out=tmp_path / "dask.csv", **kw)
    assert (tmp_path / "dask.csv").read_text() == (tmp_path / "serial.csv").read_text()


@pytest.mark.slow
def test_cli_sweep_grid_with_workers_and_plot(tmp_path):
    from plantopt.cli import main

    out, png = tmp_path / "g.csv", tmp_path / "g.png"
    rc = main(["sweep", str(DEMO), "--vary", f"{C3}=0.85:0.9:2", "--vary", f"{CRUDE}=1.1:1.2:2",
               "--out", str(out), "--plot", str(png), "--workers", "2", "--quiet", "--solver", SOLVER])
    assert rc == 0
    assert len(out.read_text().splitlines()) == 5 and png.stat().st_size > 1000


def test_cli_bad_vary_exits_2(tmp_path, capsys):
    from plantopt.cli import main

    rc = main(["sweep", str(DEMO), "--vary", "nonsense", "--out", str(tmp_path / "x.csv")])
    assert rc == 2
    assert "--vary" in capsys.readouterr().err


@pytest.mark.parametrize("out, expect", [("missing/x.csv", "does not exist"), ("x.xlsx", ".csv or .parquet")])
def test_cli_bad_output_exits_2_before_solving(tmp_path, capsys, out, expect):
    from plantopt.cli import main

    rc = main(["sweep", str(DEMO), "--vary", f"{C3}=0.8:0.9:2", "--out", str(tmp_path / out)])
    assert rc == 2
    err = capsys.readouterr().err
    assert "--out" in err and expect in err


def test_predictor_reaches_the_same_optima(demo):
    """The first-order (KKT) predictor changes only the start: the optima and
    active sets are those of the plain warm-started sweep (default SQP)."""
    fs, asm = demo
    kw = dict(vary=[f"{C3}=0.85:0.95:3"], assembly=asm, bisect=False)
    plain, pred = run_sweep(fs, **kw).rows, run_sweep(fs, predict=True, **kw).rows
    assert [r["status"] for r in pred] == ["optimal"] * 3
    for a, b in zip(plain, pred):
        assert b["objective"] == pytest.approx(a["objective"], rel=1e-8)
        assert b["active_set"] == a["active_set"]
