"""Every registered unit model class passes the conformance suite.

The suite (:mod:`unitmodels.testing`) solves the unit alone and checks
component/element and energy balances to 1e-8 relative, the casadi
Jacobian against central finite differences and the residual count
against the documented degrees of freedom. Here we also check that the
kind declared for every parameter and specification is one the units
layer understands and that it refuses a value of the wrong dimension.
"""

from __future__ import annotations

import pytest

import unitmodels  # noqa: F401  (registers the classes)
from plantopt.errors import DimensionError, InputError
from plantopt.units import parse_quantity, resolve_kind, ureg
from unitmodels.base import REGISTRY
from unitmodels.testing import check_case

KINDS = sorted(REGISTRY)


CASES = [(kind, i) for kind in KINDS for i in range(len(REGISTRY[kind].conformance_cases()))]


@pytest.mark.parametrize("kind, index", CASES)
def test_conformance(kind, index):
    case = REGISTRY[kind].conformance_cases()[index]
    assert type(case.unit) is REGISTRY[kind]
    assert check_case(case) == []


def test_every_class_has_a_case():
    assert {k for k, _ in CASES} == set(REGISTRY)


def _declared(kind):
    unit = REGISTRY[kind].conformance_case().unit
    return [(f"param {q.name}", q.kind) for q in unit.parameters()] + [(f"spec {sp.name}", sp.kind) for sp in unit.specs()]


@pytest.mark.parametrize("kind", KINDS)
def test_kinds_refuse_wrong_dimension(kind):
    for what, k in _declared(kind):
        kk = resolve_kind(k)
        dim = ureg.Quantity(1.0, kk.si).dimensionality
        right = "0.5" if kk.si == "dimensionless" else f"0.5 {kk.si}"
        parse_quantity(right, k)  # the declared kind accepts its own SI unit
        wrong = next(u for u in ("1 m", "1 s", "1 kg") if ureg.Quantity(1.0, u.split()[1]).dimensionality != dim)
        with pytest.raises(DimensionError):
            parse_quantity(wrong, k, path=what)
        if kk.si != "dimensionless":
            with pytest.raises(InputError):
                parse_quantity(0.5, k, path=what)


def test_splitter_check_specs_needs_n_minus_one():
    from unitmodels._examples import aromatics
    from unitmodels.units.streams import Splitter

    u = Splitter("S", aromatics(), port_counts={"outlets": 3})
    assert u.check_specs({"fraction.0", "fraction.1"}) is None
    assert u.check_specs({"fraction.1", "fraction.2"}) is None
    assert "needs 2" in u.check_specs({"fraction.0"})
    assert "needs 2" in u.check_specs({"fraction.0", "fraction.1", "fraction.2"})
    assert "unknown" in u.check_specs({"fraction.0", "fraction.5"})


def test_base_check_specs_exactly_one_per_group():
    from unitmodels._examples import aromatics
    from unitmodels.units.streams import Feed

    u = Feed("F", aromatics())
    assert u.check_specs({"molar_flow", "temperature", "pressure"}) is None
    assert "give only one" in u.check_specs({"molar_flow", "mass_flow", "temperature", "pressure"})
    assert "missing" in u.check_specs({"temperature", "pressure"})


def test_suite_catches_broken_units():
    """The suite is not vacuous: a heater that loses its duty in the energy
    balance, and one with a missing residual, are both reported."""
    from unitmodels.units.heat import Heater

    class NoDuty(Heater):
        kind = "heater_without_duty"  # not registered

        def residuals(self, s):
            res = super().residuals(s)
            i, o = s.port("inlet"), s.port("outlet")
            res[self.system.n] = self.system.enthalpy_flow(i.F, i.T, i.phase) + 0.5 * s.x["Q"] - self.system.enthalpy_flow(o.F, o.T, o.phase)
            return res

    class Short(Heater):
        kind = "heater_short"

        def residuals(self, s):
            return super().residuals(s)[:-1]

    base = Heater.conformance_case()
    for cls, words in ((NoDuty, "energy balance"), (Short, "residuals but")):
        case = type(base)(cls("H", base.unit.system, base.unit.options), base.inlets, base.specs, base.params)
        problems = check_case(case)
        assert any(words in p for p in problems), problems
