"""Pressure changers: valve, pump, compressor."""

from __future__ import annotations

from typing import Any

import casadi as ca

from unitmodels.base import ConformanceCase, Option, Param, Port, Spec, Symbols, UnitModel, Var, register
from unitmodels.thermo.component import R


class _PressureChanger(UnitModel):
    """Shared ports, flow pass-through and pressure specification."""

    rise_name = "pressure_rise"

    def ports(self) -> list[Port]:
        return [Port("inlet", "in"), Port("outlet", "out")]

    def specs(self) -> list[Spec]:
        return [
            Spec("outlet_pressure", "pressure", "pressure"),
            Spec(self.rise_name, "pressure_difference", "pressure", "outlet minus inlet" if self.rise_name == "pressure_rise" else "inlet minus outlet"),
        ]

    def spec_expression(self, name: str, s: Symbols) -> Any:
        i, o = s.port("inlet"), s.port("outlet")
        if name == "outlet_pressure":
            return o.P
        if name == "pressure_rise" and self.rise_name == name:
            return o.P - i.P
        if name == "pressure_drop" and self.rise_name == name:
            return i.P - o.P
        return super().spec_expression(name, s)

    def _pass_flows(self, s: Symbols) -> list[Any]:
        i, o = s.port("inlet"), s.port("outlet")
        return [o.F[k] - i.F[k] for k in range(self.system.n)]


@register
class Valve(_PressureChanger):
    """Adiabatic throttle: ``H_out = H_in`` (isenthalpic), flows pass.

    Residuals (n + 1); specification (group "pressure"): ``outlet_pressure``
    or ``pressure_drop``. With option ``outlet_phase`` a different phase
    than the inlet's models a full flash-off or condensation; for a
    two-phase let-down put a flash with ``duty = 0`` after the valve.
    """

    kind = "valve"
    description = "throttling valve (isenthalpic)"
    rise_name = "pressure_drop"
    options_declared = (Option("outlet_phase", str, None, ("liquid", "vapour"), "phase of the outlet (default: the inlet's)"),)

    def residuals(self, s: Symbols) -> list[Any]:
        i, o = s.port("inlet"), s.port("outlet")
        sys = self.system
        return self._pass_flows(s) + [sys.enthalpy_flow(i.F, i.T, i.phase) - sys.enthalpy_flow(o.F, o.T, o.phase)]

    def residual_names(self) -> list[str]:
        return [f"balance.{c}" for c in self.system.names] + ["energy"]

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        return {"pressure_drop": (s.port("inlet").P - s.port("outlet").P, "Pa")}

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import aromatics

        system = system or aromatics()
        return ConformanceCase(cls("V1", system, {"outlet_phase": "vapour"}),
                               {"inlet": [([0.2, 0.1, 0.0], 420.0, 8.0e5, "liquid")]}, {"outlet_pressure": 1.0e5},
                               guess={"outlet": [([0.2, 0.1, 0.0], 300.0, 1.0e5)]})


@register
class Pump(_PressureChanger):
    """Liquid pump.

    Work ``W = Vdot (P_out - P_in) / efficiency`` with ``Vdot`` the inlet
    volumetric flow from the liquid molar volumes (incompressible liquid).
    Energy: ``H_in + W = H_out``. The liquid enthalpy here does not depend
    on pressure, so all of ``W`` (not only the friction part) shows up as a
    temperature rise; for water at 10 bar rise that is about 0.3 K, within
    the accuracy of the liquid Cp.

    Unknowns: outlet (n + 2) and ``W`` (W, shaft work added). Residuals
    (n + 2). Specification (group "pressure"): ``outlet_pressure`` or
    ``pressure_rise``. Parameter ``efficiency`` (default 0.75, a common
    practice value for centrifugal process pumps).
    """

    kind = "pump"
    description = "liquid pump"
    options_declared = (Option("utility", str, None, None, "utility supplying the shaft work (e.g. electricity)"),)

    def variables(self) -> list[Var]:
        return [Var("W", "W", 0.0, float("inf"), 1.0e3, "shaft work added")]

    def parameters(self) -> list[Param]:
        return [Param("efficiency", "fraction", 0.75, lower=0.01, upper=1.0, doc="overall pump efficiency")]

    def residuals(self, s: Symbols) -> list[Any]:
        i, o = s.port("inlet"), s.port("outlet")
        sys = self.system
        vdot = ca.dot(i.F, sys.liquid_molar_volume(i.T))
        return self._pass_flows(s) + [
            sys.enthalpy_flow(i.F, i.T, i.phase) + s.x["W"] - sys.enthalpy_flow(o.F, o.T, o.phase),
            s.x["W"] * s.p["efficiency"] - vdot * (o.P - i.P),
        ]

    def residual_names(self) -> list[str]:
        return [f"balance.{c}" for c in self.system.names] + ["energy", "work"]

    def work(self, s: Symbols) -> Any:
        return s.x["W"]

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        return {"power": (s.x["W"], "W"), "pressure_rise": (s.port("outlet").P - s.port("inlet").P, "Pa")}

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import aromatics

        system = system or aromatics()
        return ConformanceCase(cls("P1", system, {"utility": "electricity"}),
                               {"inlet": [([2.0, 1.0, 5.0], 310.0, 1.0e5, "liquid")]}, {"pressure_rise": 9.0e5},
                               {"efficiency": 0.7}, guess={"W": 500.0})


@register
class Compressor(_PressureChanger):
    """Gas compressor (or, with a pressure fall, expander), ideal gas.

    The isentropic outlet temperature ``T_s`` solves
    ``sum_i F_i integral_{T_in}^{T_s} Cp_i/T dT = sum F R ln(P_out/P_in)``
    (constant composition, so mixing entropy cancels); the isentropic
    work is ``W_s = H(T_s) - H(T_in)`` and the actual work
    ``W = W_s / efficiency``. Energy: ``H_in + W = H_out``. The model is
    meant for compression (``P_out >= P_in``); for an expander the
    efficiency would have to multiply, not divide, the isentropic work.

    Unknowns: outlet (n + 2), ``T_s``, ``W``. Residuals (n + 3).
    Specification (group "pressure"): ``outlet_pressure`` or
    ``pressure_ratio``. Parameter ``efficiency`` (isentropic, default 0.75,
    common practice for process centrifugal compressors).
    """

    kind = "compressor"
    description = "gas compressor, isentropic efficiency"
    options_declared = (Option("utility", str, None, None, "utility supplying the shaft work (e.g. electricity)"),)

    def specs(self) -> list[Spec]:
        return [Spec("outlet_pressure", "pressure", "pressure"), Spec("pressure_ratio", "dimensionless", "pressure", "P_out / P_in")]

    def spec_expression(self, name: str, s: Symbols) -> Any:
        if name == "pressure_ratio":
            return s.port("outlet").P / s.port("inlet").P
        return super().spec_expression(name, s)

    def outlet_phases(self, inlet_phases):
        return {"outlet": "vapour"}

    def variables(self) -> list[Var]:
        return [Var("W", "W", nominal=1.0e4, doc="shaft work added"),
                Var("T_isentropic", "K", 50.0, 3000.0, 400.0, "outlet temperature of isentropic compression")]

    def parameters(self) -> list[Param]:
        return [Param("efficiency", "fraction", 0.75, lower=0.01, upper=1.0, doc="isentropic efficiency")]

    def residuals(self, s: Symbols) -> list[Any]:
        i, o = s.port("inlet"), s.port("outlet")
        sys = self.system
        ts = s.x["T_isentropic"]
        ds = ca.dot(i.F, sys.cp_ig_over_t_integral(i.T, ts)) - ca.sum1(i.F) * R * ca.log(o.P / i.P)
        ws = sys.enthalpy_flow(i.F, ts, "vapour") - sys.enthalpy_flow(i.F, i.T, "vapour")
        return self._pass_flows(s) + [
            ds,
            s.x["W"] * s.p["efficiency"] - ws,
            sys.enthalpy_flow(i.F, i.T, "vapour") + s.x["W"] - sys.enthalpy_flow(o.F, o.T, "vapour"),
        ]

    def residual_names(self) -> list[str]:
        return [f"balance.{c}" for c in self.system.names] + ["isentropic", "work", "energy"]

    def work(self, s: Symbols) -> Any:
        return s.x["W"]

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        return {"power": (s.x["W"], "W"), "isentropic_temperature": (s.x["T_isentropic"], "K"),
                "pressure_ratio": (s.port("outlet").P / s.port("inlet").P, "")}

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import aromatics

        system = system or aromatics()
        return ConformanceCase(cls("K1", system, {"utility": "electricity"}),
                               {"inlet": [([0.5, 0.1, 0.4], 400.0, 1.0e5, "vapour")]}, {"pressure_ratio": 3.0},
                               {"efficiency": 0.8}, guess={"outlet": [([0.5, 0.1, 0.4], 450.0, 3.0e5)], "T_isentropic": 440.0, "W": 2.0e3})
