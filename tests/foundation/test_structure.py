"""Degrees of freedom and structural singularity, named before any solve."""

from types import SimpleNamespace

import casadi as ca

from plantopt.assembly import ROW_RESIDUAL, Row, Slot, assemble
from plantopt.flowsheet import load_flowsheet
from plantopt.structure import check_structure


def fake(rows, names):
    x = ca.SX.sym("x", len(names))
    g = ca.vertcat(*[r(x) for r in rows])
    return SimpleNamespace(
        nlp={"x": x, "g": g},
        rows=[Row(f"eq{i}", ROW_RESIDUAL, "u") for i in range(len(rows))],
        slots=[Slot(n, "dimensionless", -1, 1, 1) for n in names],
    )


def test_square_and_matched():
    asm = fake([lambda x: x[0] + x[1], lambda x: x[1] * x[2], lambda x: x[2] - 1], ["a", "b", "c"])
    rep = check_structure(asm)
    assert rep.ok and rep.dof == 0


def test_structurally_singular_names_equations_and_variables():
    # eq0 and eq1 both involve only "a"; "c" appears in no equation
    asm = fake([lambda x: x[0] - 1, lambda x: 2 * x[0], lambda x: x[1]], ["a", "b", "c"])
    rep = check_structure(asm)
    assert rep.dof == 0 and not rep.ok
    assert rep.unmatched_variables == ["c"]
    assert len(rep.unmatched_equations) == 1 and rep.unmatched_equations[0] in ("eq0", "eq1")


def test_demo_is_square(demo_path):
    asm = assemble(load_flowsheet(demo_path))
    rep = check_structure(asm)
    assert rep.ok, rep.lines()
    assert rep.n_variables == rep.n_equations
