"""Separators: flash drum (Raoult's law, isothermal or with a given duty),
component separator."""

from __future__ import annotations

from typing import Any

import casadi as ca

from unitmodels.base import ConformanceCase, Option, Param, Port, Spec, Symbols, UnitConfigError, UnitModel, Var, register

# Smoothing of the phase-existence complementarity (Fischer-Burmeister):
# a b = EPS**2 / 2 on the smoothed curve. beta and the slacks are O(1), so
# K-values are perturbed by ~EPS**2 / beta (1e-12 relative) inside the
# two-phase region and beta <= ~EPS at a phase boundary.
FLASH_EPS = 1.0e-6


def fischer_burmeister(a: Any, b: Any, eps: float = FLASH_EPS) -> Any:
    """Smoothed complementarity ``a + b - sqrt(a**2 + b**2 + eps**2)``: zero
    on a smooth curve close to ``a >= 0, b >= 0, a b = 0`` (``a b = eps**2/2``)."""
    return a + b - ca.sqrt(a * a + b * b + eps * eps)


@register
class Flash(UnitModel):
    """Flash drum: vapour and liquid in equilibrium by Raoult's law.

    ``K_i = Psat_i(T) / P``. Unknowns: the vapour and liquid streams
    (2n + 4), the duty ``Q`` (W), the phase compositions ``x.<c>``,
    ``y.<c>`` (2n), the vapour fraction ``beta`` (vapour moles / feed
    moles) and two phase-existence slacks ``s_liquid``, ``s_vapour``.
    Residuals (4n + 6):

    * ``z_i = beta y_i + (1 - beta) x_i`` (n), ``z_i = F_i / sum F``,
    * ``y_i = (1 + s_liquid - s_vapour) K_i x_i`` (n),
    * ``sum y - sum x = 0`` (the Rachford-Rice condition),
    * ``FB(beta, s_liquid) = 0`` and ``FB(1 - beta, s_vapour) = 0``,
      smoothed complementarity (:func:`fischer_burmeister`),
    * ``V_i = beta sum F y_i`` and ``L_i = (1 - beta) sum F x_i`` (2n),
    * ``T_V = T_L``, ``P_V = P_L``, ``H_in + Q - H_V - H_L = 0``.

    Single-phase feeds: the slacks relax equilibrium only when a phase is
    absent (the pseudo-K formulation of Gopal and Biegler, AIChE J. 45
    (1999) 1535). Two-phase: both slacks are ~0 and ``y = K x``. Subcooled
    liquid: ``beta ~ 0``, ``s_liquid > 0``, the outlet liquid is the feed
    and ``y`` is the composition of the incipient (bubble) vapour.
    Superheated vapour: ``beta ~ 1``, ``s_vapour > 0``. The answer is
    smooth across the bubble and dew points, with the
    :data:`FLASH_EPS` smoothing error there.

    Specifications: group "thermal": ``temperature`` or ``duty`` (0 for an
    adiabatic flash); group "pressure": ``pressure`` or ``pressure_drop``.
    """

    kind = "flash"
    description = "flash drum (vapour-liquid, Raoult's law)"
    options_declared = (Option("utility", str, None, None, "utility supplying or removing the duty"),)

    def ports(self) -> list[Port]:
        return [Port("inlet", "in"), Port("vapour", "out", phase="vapour"), Port("liquid", "out", phase="liquid")]

    def variables(self) -> list[Var]:
        c = self.system.names
        return (
            [Var("Q", "W", nominal=1.0e5, doc="heat added"),
             Var("beta", "", 0.0, 1.0, 0.5, "vapour fraction of the feed")]
            + [Var(f"x.{n}", "", 0.0, 1.0, 1.0 / len(c), "liquid mole fraction") for n in c]
            + [Var(f"y.{n}", "", 0.0, 1.0, 1.0 / len(c), "vapour mole fraction") for n in c]
            + [Var("s_liquid", "", 0.0, float("inf"), 0.0, "relaxation when only liquid exists"),
               Var("s_vapour", "", 0.0, 1.0, 0.0, "relaxation when only vapour exists")]
        )

    def specs(self) -> list[Spec]:
        return [
            Spec("temperature", "temperature", "thermal", "drum temperature"),
            Spec("duty", "power", "thermal", "heat added (0 for an adiabatic flash)"),
            Spec("pressure", "pressure", "pressure", "drum pressure"),
            Spec("pressure_drop", "pressure_difference", "pressure", "inlet minus drum pressure"),
        ]

    def k_values(self, s: Symbols) -> Any:
        """Raoult K-values at drum conditions, shape (n, 1)."""
        liq = s.port("liquid")
        return self.system.psat(liq.T) / liq.P

    def residuals(self, s: Symbols) -> list[Any]:
        f, v, liq = s.port("inlet"), s.port("vapour"), s.port("liquid")
        sys = self.system
        c = sys.names
        beta, sl, sv = s.x["beta"], s.x["s_liquid"], s.x["s_vapour"]
        x = [s.x[f"x.{n}"] for n in c]
        y = [s.x[f"y.{n}"] for n in c]
        K = self.k_values(s)
        ftot = ca.sum1(f.F)
        res = [f.F[i] - ftot * (beta * y[i] + (1 - beta) * x[i]) for i in range(sys.n)]
        res += [y[i] - (1 + sl - sv) * K[i] * x[i] for i in range(sys.n)]
        res.append(sum(y) - sum(x))
        res += [fischer_burmeister(beta, sl), fischer_burmeister(1 - beta, sv)]
        res += [v.F[i] - beta * ftot * y[i] for i in range(sys.n)]
        res += [liq.F[i] - (1 - beta) * ftot * x[i] for i in range(sys.n)]
        res += [v.T - liq.T, v.P - liq.P]
        res.append(sys.enthalpy_flow(f.F, f.T, f.phase) + s.x["Q"]
                   - sys.enthalpy_flow(v.F, v.T, "vapour") - sys.enthalpy_flow(liq.F, liq.T, "liquid"))
        return res

    def residual_names(self) -> list[str]:
        c = self.system.names
        return ([f"balance.{n}" for n in c] + [f"equilibrium.{n}" for n in c] + ["rachford_rice", "liquid_exists", "vapour_exists"]
                + [f"vapour_flow.{n}" for n in c] + [f"liquid_flow.{n}" for n in c] + ["temperature", "pressure", "energy"])

    def spec_expression(self, name: str, s: Symbols) -> Any:
        liq = s.port("liquid")
        if name == "temperature":
            return liq.T
        if name == "duty":
            return s.x["Q"]
        if name == "pressure":
            return liq.P
        if name == "pressure_drop":
            return s.port("inlet").P - liq.P
        return super().spec_expression(name, s)

    def heat_duty(self, s: Symbols) -> Any:
        return s.x["Q"]

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        out: dict[str, tuple[Any, str]] = {
            "duty": (s.x["Q"], "W"),
            "vapour_fraction": (s.x["beta"], ""),
            "temperature": (s.port("liquid").T, "K"),
            "pressure": (s.port("liquid").P, "Pa"),
        }
        K = self.k_values(s)
        for i, c in enumerate(self.system.names):
            out[f"k_value.{c}"] = (K[i], "")
        return out

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import benzene_toluene

        system = system or benzene_toluene()
        u = cls("D1", system, {"utility": "steam"})
        return ConformanceCase(
            u,
            {"inlet": [([0.5, 0.5], 360.0, 2.0e5, "liquid")]},
            {"temperature": 370.0, "pressure_drop": 2.0e5 - 101325.0},
            guess={"vapour": [([0.3, 0.2], 370.0, 1.0e5)], "liquid": [([0.2, 0.3], 370.0, 1.0e5)], "beta": 0.5, "Q": 3.0e4},
        )

    @classmethod
    def conformance_cases(cls, system: Any = None) -> list[ConformanceCase]:
        base = cls.conformance_case(system)
        sysm = base.unit.system
        adiabatic = ConformanceCase(
            cls("D2", sysm), {"inlet": [([0.5, 0.5], 400.0, 5.0e5, "liquid")]}, {"duty": 0.0, "pressure": 101325.0},
            guess={"vapour": [([0.1, 0.05], 368.0, 1.0e5)], "liquid": [([0.4, 0.45], 368.0, 1.0e5)], "beta": 0.15})
        subcooled = ConformanceCase(
            cls("D3", sysm), {"inlet": [([0.5, 0.5], 300.0, 5.0e5, "liquid")]}, {"temperature": 330.0, "pressure": 101325.0},
            guess={"vapour": [([0.0, 0.0], 330.0, 1.0e5)], "liquid": [([0.5, 0.5], 330.0, 1.0e5)], "beta": 0.0, "s_liquid": 1.0})
        return [base, adiabatic, subcooled]


@register
class ComponentSeparator(UnitModel):
    """Idealised separator: each component splits between two outlets by a
    given fraction (a shortcut for a column or membrane whose design is
    not modelled).

    Parameters ``recovery`` (per component, fraction of the inlet going to
    ``top``). Unknowns: ``top`` and ``bottom`` (2n + 4) and the duty ``Q``.
    Residuals (2n + 4): ``F_top = recovery F_in``, ``F_bottom = F_in -
    F_top``, both outlets at the inlet pressure less ``pressure_drop``, at
    the same temperature, and ``H_in + Q = H_top + H_bottom``.
    Specification (group "thermal"): ``temperature`` (of both outlets) or
    ``duty``. Outlet phases are options (default: the inlet's).
    """

    kind = "component_separator"
    description = "shortcut separator with a recovery per component"
    options_declared = (
        Option("top_phase", str, None, ("liquid", "vapour"), "phase of the top outlet"),
        Option("bottom_phase", str, None, ("liquid", "vapour"), "phase of the bottom outlet"),
        Option("utility", str, None, None, "utility supplying or removing the duty"),
    )

    def ports(self) -> list[Port]:
        return [Port("inlet", "in"), Port("top", "out"), Port("bottom", "out")]

    def outlet_phases(self, inlet_phases):
        first = inlet_phases.get("inlet", ["liquid"])[0]
        return {"top": self.options["top_phase"] or first, "bottom": self.options["bottom_phase"] or first}

    def variables(self) -> list[Var]:
        return [Var("Q", "W", nominal=1.0e5, doc="heat added")]

    def parameters(self) -> list[Param]:
        return [
            Param("recovery", "fraction", None, per_component=True, category="equipment", lower=0.0, upper=1.0,
                  doc="fraction of each component leaving with the top outlet"),
            Param("pressure_drop", "pressure_difference", 0.0),
        ]

    def specs(self) -> list[Spec]:
        return [Spec("temperature", "temperature", "thermal", "outlet temperature"), Spec("duty", "power", "thermal")]

    def residuals(self, s: Symbols) -> list[Any]:
        i, t, b = s.port("inlet"), s.port("top"), s.port("bottom")
        sys = self.system
        r = s.p["recovery"]
        res = [t.F[k] - r[k] * i.F[k] for k in range(sys.n)] + [b.F[k] - (1 - r[k]) * i.F[k] for k in range(sys.n)]
        res += [t.P - (i.P - s.p["pressure_drop"]), b.P - t.P, b.T - t.T]
        res.append(sys.enthalpy_flow(i.F, i.T, i.phase) + s.x["Q"] - sys.enthalpy_flow(t.F, t.T, t.phase) - sys.enthalpy_flow(b.F, b.T, b.phase))
        return res

    def residual_names(self) -> list[str]:
        c = self.system.names
        return [f"top.{n}" for n in c] + [f"bottom.{n}" for n in c] + ["pressure", "bottom_pressure", "bottom_temperature", "energy"]

    def spec_expression(self, name: str, s: Symbols) -> Any:
        if name == "temperature":
            return s.port("top").T
        if name == "duty":
            return s.x["Q"]
        return super().spec_expression(name, s)

    def heat_duty(self, s: Symbols) -> Any:
        return s.x["Q"]

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        return {"duty": (s.x["Q"], "W")}

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import aromatics

        system = system or aromatics()
        u = cls("C1", system, {"top_phase": "vapour"})
        return ConformanceCase(u, {"inlet": [([1.0, 1.0, 0.5], 350.0, 1.5e5, "liquid")]}, {"temperature": 360.0},
                               {"recovery": [0.98, 0.05, 0.5], "pressure_drop": 1.0e4})
