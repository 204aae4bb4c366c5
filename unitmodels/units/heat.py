"""Heat-transfer units: heater/cooler with a utility, two-stream exchanger."""

from __future__ import annotations

from typing import Any

import casadi as ca

from unitmodels.base import ConformanceCase, Option, Param, Port, Spec, Symbols, UnitModel, Var, register


@register
class Heater(UnitModel):
    """Heater or cooler supplied by a utility (steam, cooling water, power).

    Unknowns: outlet stream (n + 2) and the duty ``Q`` (W, heat added to
    the process; negative for a cooler). Residuals (n + 2): flows pass
    through, ``H_in + Q - H_out = 0``, ``P_out = P_in - pressure_drop``.
    Specification (group "thermal"): ``outlet_temperature`` or ``duty``.
    The outlet phase is an option (``outlet_phase``); a phase change is
    then part of the duty (latent heat through the liquid/vapour
    enthalpies), but no check is made that the outlet is really
    single-phase at its T and P (use a flash for that).
    """

    kind = "heater"
    description = "heater or cooler on a utility"
    options_declared = (
        Option("utility", str, None, None, "name of a utility in the flowsheet's economics"),
        Option("outlet_phase", str, None, ("liquid", "vapour"), "phase of the outlet (default: the inlet's)"),
    )

    def ports(self) -> list[Port]:
        return [Port("inlet", "in"), Port("outlet", "out")]

    def variables(self) -> list[Var]:
        return [Var("Q", "W", nominal=1.0e5, doc="heat added to the process")]

    def parameters(self) -> list[Param]:
        return [Param("pressure_drop", "pressure_difference", 0.0, category="equipment", doc="P_in - P_out")]

    def specs(self) -> list[Spec]:
        return [
            Spec("outlet_temperature", "temperature", "thermal"),
            Spec("duty", "power", "thermal", "heat added (negative for cooling)"),
        ]

    def residuals(self, s: Symbols) -> list[Any]:
        i, o = s.port("inlet"), s.port("outlet")
        sys = self.system
        res = [o.F[k] - i.F[k] for k in range(sys.n)]
        res.append(sys.enthalpy_flow(i.F, i.T, i.phase) + s.x["Q"] - sys.enthalpy_flow(o.F, o.T, o.phase))
        res.append(o.P - (i.P - s.p["pressure_drop"]))
        return res

    def residual_names(self) -> list[str]:
        return [f"balance.{c}" for c in self.system.names] + ["energy", "pressure"]

    def spec_expression(self, name: str, s: Symbols) -> Any:
        if name == "outlet_temperature":
            return s.port("outlet").T
        if name == "duty":
            return s.x["Q"]
        return super().spec_expression(name, s)

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        return {"duty": (s.x["Q"], "W"), "outlet_temperature": (s.port("outlet").T, "K")}

    def heat_duty(self, s: Symbols) -> Any:
        return s.x["Q"]

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import aromatics

        system = system or aromatics()
        u = cls("H1", system, {"utility": "steam", "outlet_phase": "vapour"})
        return ConformanceCase(u, {"inlet": [([1.0, 0.5, 0.1], 300.0, 1.2e5, "liquid")]},
                               {"outlet_temperature": 420.0}, {"pressure_drop": 2.0e4})


def chen_lmtd(dt1: Any, dt2: Any) -> Any:
    """Chen's (1987) approximation of the log-mean temperature difference.

    ``LMTD ~ (dt1 * dt2 * (dt1 + dt2) / 2) ** (1/3)`` (Chen, J.J.J., Chem.
    Eng. Sci. 42 (1987) 2488), exact for ``dt1 = dt2`` and without the 0/0
    of ``(dt1 - dt2) / ln(dt1/dt2)``. Defined for ``dt1, dt2 > 0``.
    """
    return (dt1 * dt2 * (dt1 + dt2) / 2) ** (1.0 / 3.0)


@register
class HeatExchanger(UnitModel):
    """Counter-current two-stream heat exchanger (process-process).

    Unknowns: both outlets (2n + 4) and ``Q`` (W, heat from the hot to the
    cold stream). Residuals: flows pass through on each side (2n),
    pressures drop by ``pressure_drop_hot`` / ``pressure_drop_cold`` (2),
    one energy balance per side (2), and in mode ``"rating"`` the rate
    equation ``(Q/UA)**3 = dt1 dt2 (dt1 + dt2) / 2`` (Chen's LMTD,
    cubed so the equation stays a smooth polynomial when an approach
    temperature passes through zero during iterations; its only flat point
    is Q = 0). In mode ``"duty"`` the file specifies ``duty`` instead.

    ``dt1 = hot_end_approach = Th_in - Tc_out`` and
    ``dt2 = cold_end_approach = Th_out - Tc_in``; both are outputs so that
    the file can set minimum-approach limits.
    """

    kind = "heat_exchanger"
    description = "counter-current two-stream heat exchanger"
    options_declared = (
        Option("mode", str, "rating", ("rating", "duty"), "rating: UA given; duty: Q specified"),
        Option("hot_outlet_phase", str, None, ("liquid", "vapour"), "phase of hot_out (default: hot_in's)"),
        Option("cold_outlet_phase", str, None, ("liquid", "vapour"), "phase of cold_out (default: cold_in's)"),
    )

    def ports(self) -> list[Port]:
        return [Port("hot_in", "in"), Port("hot_out", "out"), Port("cold_in", "in"), Port("cold_out", "out")]

    def outlet_phases(self, inlet_phases):
        return {
            "hot_out": self.options["hot_outlet_phase"] or inlet_phases.get("hot_in", ["liquid"])[0],
            "cold_out": self.options["cold_outlet_phase"] or inlet_phases.get("cold_in", ["liquid"])[0],
        }

    def variables(self) -> list[Var]:
        return [Var("Q", "W", nominal=1.0e5, doc="heat from the hot to the cold stream")]

    def parameters(self) -> list[Param]:
        ps = [
            Param("pressure_drop_hot", "pressure_difference", 0.0),
            Param("pressure_drop_cold", "pressure_difference", 0.0),
        ]
        if self.options["mode"] == "rating":
            ps.insert(0, Param("ua", "conductance", None, lower=0.0, doc="overall conductance U*A"))
        return ps

    def specs(self) -> list[Spec]:
        return [Spec("duty", "power", doc="heat from hot to cold")] if self.options["mode"] == "duty" else []

    def _approaches(self, s: Symbols) -> tuple[Any, Any]:
        hi, ho, ci, co = (s.port(p) for p in ("hot_in", "hot_out", "cold_in", "cold_out"))
        return hi.T - co.T, ho.T - ci.T

    def residuals(self, s: Symbols) -> list[Any]:
        hi, ho, ci, co = (s.port(p) for p in ("hot_in", "hot_out", "cold_in", "cold_out"))
        sys = self.system
        Q = s.x["Q"]
        res = [ho.F[k] - hi.F[k] for k in range(sys.n)] + [co.F[k] - ci.F[k] for k in range(sys.n)]
        res += [ho.P - (hi.P - s.p["pressure_drop_hot"]), co.P - (ci.P - s.p["pressure_drop_cold"])]
        res.append(sys.enthalpy_flow(hi.F, hi.T, hi.phase) - Q - sys.enthalpy_flow(ho.F, ho.T, ho.phase))
        res.append(sys.enthalpy_flow(ci.F, ci.T, ci.phase) + Q - sys.enthalpy_flow(co.F, co.T, co.phase))
        if self.options["mode"] == "rating":
            dt1, dt2 = self._approaches(s)
            res.append((Q / s.p["ua"]) ** 3 - dt1 * dt2 * (dt1 + dt2) / 2)
        return res

    def residual_names(self) -> list[str]:
        c = self.system.names
        names = [f"hot.balance.{x}" for x in c] + [f"cold.balance.{x}" for x in c]
        names += ["hot.pressure", "cold.pressure", "hot.energy", "cold.energy"]
        return names + (["rate"] if self.options["mode"] == "rating" else [])

    def spec_expression(self, name: str, s: Symbols) -> Any:
        if name == "duty" and self.options["mode"] == "duty":
            return s.x["Q"]
        return super().spec_expression(name, s)

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        dt1, dt2 = self._approaches(s)
        return {
            "duty": (s.x["Q"], "W"),
            "hot_end_approach": (dt1, "temperature_difference"),
            "cold_end_approach": (dt2, "temperature_difference"),
            # defined only while both approaches are positive; a report value
            "lmtd": (chen_lmtd(ca.fmax(dt1, 1e-9), ca.fmax(dt2, 1e-9)), "temperature_difference"),
        }

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import aromatics

        system = system or aromatics()
        u = cls("E1", system, {"mode": "rating"})
        return ConformanceCase(
            u,
            {"hot_in": [([0.0, 2.0, 0.0], 400.0, 3.0e5, "liquid")], "cold_in": [([0.0, 0.0, 3.0], 300.0, 2.0e5, "liquid")]},
            {},
            {"ua": 2000.0, "pressure_drop_hot": 1.0e4, "pressure_drop_cold": 5.0e3},
            guess={"hot_out": [([0.0, 2.0, 0.0], 340.0, 2.9e5)], "cold_out": [([0.0, 0.0, 3.0], 330.0, 1.95e5)], "Q": 3.0e4},
        )

    @classmethod
    def conformance_cases(cls, system: Any = None) -> list[ConformanceCase]:
        base = cls.conformance_case(system)
        u = cls("E2", base.unit.system, {"mode": "duty", "cold_outlet_phase": "vapour"})
        duty = ConformanceCase(
            u,
            {"hot_in": [([0.0, 2.0, 0.0], 450.0, 3.0e5, "liquid")], "cold_in": [([0.3, 0.0, 0.0], 300.0, 1.0e5, "liquid")]},
            {"duty": 2.0e4},
            {"pressure_drop_cold": 5.0e3},
            guess={"hot_out": [([0.0, 2.0, 0.0], 400.0, 3.0e5)], "cold_out": [([0.3, 0.0, 0.0], 380.0, 0.95e5)], "Q": 2.0e4},
        )
        return [base, duty]
