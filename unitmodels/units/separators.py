"""Separators: isothermal two-phase flash drum (Raoult's law)."""

from __future__ import annotations

from typing import Any

import casadi as ca

from unitmodels.base import INF, ConformanceCase, Option, Port, Spec, Symbols, UnitModel, Var, register


@register
class Flash(UnitModel):
    """Isothermal flash drum: vapour and liquid in equilibrium by Raoult's law.

    ``K_i = Psat_i(T) / P``. Unknowns: vapour and liquid streams
    (2n + 4), duty ``Q`` (W) and the vapour fraction ``beta`` (vapour
    moles / feed moles). Residuals (2n + 4):

    * ``V_i + L_i - F_i = 0`` (n),
    * ``(1 - beta) V_i - beta K_i L_i = 0`` (n): ``y_i = K_i x_i`` once
      ``sum V = beta sum F`` holds,
    * the Rachford-Rice equation ``sum (K_i - 1) F_i / (1 + beta (K_i - 1)) = 0``
      (it has no trivial root at ``beta = 0``),
    * ``T_V = T_L``, ``P_V = P_L``,
    * ``H_in + Q - H_V - H_L = 0``.

    Specifications: ``temperature``, and ``pressure`` or ``pressure_drop``
    (group "pressure").

    Single-phase feeds: ``beta`` is bounded to [0, 1]. For a feed below its
    bubble point (or above its dew point) the Rachford-Rice root lies
    outside that range (the "negative flash"), so the equations cannot be
    met within the bounds and the solve reports failure (or, when
    optimizing, the point is infeasible) instead of a silently wrong
    degenerate two-phase answer. Unbounded, Newton steps also wander into
    negative flows and stall against the ``F >= 0`` bounds.
    """

    kind = "flash"
    description = "isothermal flash drum (vapour-liquid, Raoult's law)"
    options_declared = (Option("utility", str, None, None, "utility supplying or removing the duty"),)

    def ports(self) -> list[Port]:
        return [Port("inlet", "in"), Port("vapour", "out", phase="vapour"), Port("liquid", "out", phase="liquid")]

    def variables(self) -> list[Var]:
        return [Var("Q", "W", nominal=1.0e5, doc="heat added"), Var("beta", "", 0.0, 1.0, 0.5, "vapour fraction (two-phase only: see notes)")]

    def specs(self) -> list[Spec]:
        return [
            Spec("temperature", "temperature"),
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
        beta = s.x["beta"]
        K = self.k_values(s)
        res = [v.F[i] + liq.F[i] - f.F[i] for i in range(sys.n)]
        res += [(1 - beta) * v.F[i] - beta * K[i] * liq.F[i] for i in range(sys.n)]
        # Rachford-Rice, sum_i (K_i - 1) z_i / (1 + beta (K_i - 1)) = 0 (times the
        # feed total). Unlike "sum V = beta sum F" it has no trivial root at
        # beta = 0, V = 0, which would satisfy the other equations for any feed.
        res.append(sum((K[i] - 1) * f.F[i] / (1 + beta * (K[i] - 1)) for i in range(sys.n)))
        res += [v.T - liq.T, v.P - liq.P]
        res.append(sys.enthalpy_flow(f.F, f.T, f.phase) + s.x["Q"] - sys.enthalpy_flow(v.F, v.T, "vapour") - sys.enthalpy_flow(liq.F, liq.T, "liquid"))
        return res

    def residual_names(self) -> list[str]:
        c = self.system.names
        return [f"balance.{x}" for x in c] + [f"equilibrium.{x}" for x in c] + ["vapour_fraction", "temperature", "pressure", "energy"]

    def spec_expression(self, name: str, s: Symbols) -> Any:
        liq = s.port("liquid")
        if name == "temperature":
            return liq.T
        if name == "pressure":
            return liq.P
        if name == "pressure_drop":
            return s.port("inlet").P - liq.P
        return super().spec_expression(name, s)

    def heat_duty(self, s: Symbols) -> Any:
        return s.x["Q"]

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        out: dict[str, tuple[Any, str]] = {"duty": (s.x["Q"], "W"), "vapour_fraction": (s.x["beta"], "")}
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

