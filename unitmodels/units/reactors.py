"""Reactors: continuous stirred tank (liquid or gas phase)."""

from __future__ import annotations

from typing import Any, Mapping

import casadi as ca

from unitmodels.base import ConformanceCase, Option, Param, Port, Spec, Symbols, UnitConfigError, UnitModel, Var, register
from unitmodels.thermo.component import R


class _Reacting(UnitModel):
    """Shared handling of the ``reactions`` option and kinetic parameters."""

    def validate(self) -> None:
        names = list(self.options.get("reactions") or [])
        have = [r.name for r in self.reactions]
        if sorted(names) != sorted(have):
            missing = sorted(set(names) - set(have))
            extra = sorted(set(have) - set(names))
            raise UnitConfigError(
                "reactions",
                f"reaction objects do not match the option (missing {', '.join(missing) or 'none'}, "
                f"not listed {', '.join(extra) or 'none'})",
            )
        if not names:
            raise UnitConfigError("reactions", "a reactor needs at least one reaction")
        by_name = {r.name: r for r in self.reactions}
        self.reactions = [by_name[n] for n in names]
        for r in self.reactions:
            r.validate(self.system)
            if r.basis == "partial_pressure" and self.options.get("phase") == "liquid":
                raise UnitConfigError("reactions", f"reaction {r.name} uses partial pressures but the reactor is liquid-phase")
            if r.rate_per == "holdup_mass" and self.options.get("phase") == "vapour":
                # allowed (gas density from the ideal-gas law) but unusual; nothing to reject
                pass

    def reaction_parameters(self) -> list[Param]:
        """The hosted reactions' parameters, named ``<reaction>.<param>`` with their shared address."""
        out = []
        for r in self.reactions:
            for q in r.parameters():
                out.append(Param(f"{r.name}.{q.name}", q.kind, q.default, q.per_component, q.address, q.category, q.lower, q.upper, q.doc))
        return out

    def _rp(self, s: Symbols, r: Any) -> dict[str, Any]:
        return {q.name: s.p[f"{r.name}.{q.name}"] for q in r.parameters()}

    def reactants(self) -> list[str]:
        """Components consumed by at least one reaction, in system order."""
        cons = {c for r in self.reactions for c, v in r.stoichiometry.items() if v < 0}
        return [c for c in self.system.names if c in cons]


@register
class CSTR(_Reacting):
    """Continuous stirred-tank reactor, perfectly mixed, at outlet conditions.

    Unknowns: outlet stream (n + 2), duty ``Q`` (W) and one extent
    ``extent.<reaction>`` (mol/s) per reaction. Residuals (n + 2 + R):

    * ``F_out - F_in - sum_j nu_j extent_j = 0`` (n),
    * ``H_in + Q - H_out = 0`` (heats of reaction come from the formation
      enthalpies inside the stream enthalpies),
    * ``P_out = P_in - pressure_drop``,
    * ``extent_j - M r_j(T_out, a_out) = 0`` with ``M`` the volume, the
      catalyst mass or the holdup mass as the reaction's ``rate_per`` asks.

    Liquid phase: concentrations ``c_i = F_i / Vdot`` with
    ``Vdot = sum F_i v_i(T)`` (ideal mixing of the pure liquid molar
    volumes); the holdup mass is ``volume * sum(F_i M_i) / Vdot``. Gas
    phase: ideal gas, ``c_i = y_i P / (R T)`` and ``p_i = y_i P``.
    Specification (group "thermal"): ``temperature`` or ``duty``.
    """

    kind = "cstr"
    description = "continuous stirred-tank reactor"
    options_declared = (
        Option("reactions", list, None, None, "names of the reactions (flowsheet `reactions` table)"),
        Option("phase", str, "liquid", ("liquid", "vapour"), "phase of the reacting mixture and the outlet"),
        Option("utility", str, None, None, "utility supplying or removing the duty"),
    )

    def ports(self) -> list[Port]:
        return [Port("inlet", "in"), Port("outlet", "out")]

    def outlet_phases(self, inlet_phases: Mapping[str, list[str]]) -> dict[str, str]:
        return {"outlet": self.options["phase"]}

    def variables(self) -> list[Var]:
        return [Var("Q", "W", nominal=1.0e5, doc="heat added")] + [
            Var(f"extent.{r.name}", "mol/s", nominal=1.0, doc=f"rate of reaction {r.name} times its basis") for r in self.reactions
        ]

    def parameters(self) -> list[Param]:
        ps = [Param("volume", "volume", None, lower=0.0, doc="reacting volume"), Param("pressure_drop", "pressure_difference", 0.0)]
        if any(r.rate_per == "catalyst_mass" for r in self.reactions):
            ps.append(Param("catalyst_mass", "mass", None, lower=0.0))
        return ps + self.reaction_parameters()

    def specs(self) -> list[Spec]:
        return [Spec("temperature", "temperature", "thermal", "reactor (= outlet) temperature"),
                Spec("duty", "power", "thermal", "heat added (0 for adiabatic)")]

    # -------------------------------------------------------------- local state
    def _state(self, s: Symbols) -> dict[str, Any]:
        o = s.port("outlet")
        sys = self.system
        F, T, P = o.F, o.T, o.P
        tot = ca.sum1(F)
        mass = sys.mass_flow(F)
        st: dict[str, Any] = {"x": F / tot, "w": ca.DM(sys.mw) * F / mass}
        if self.options["phase"] == "liquid":
            vdot = ca.dot(F, sys.liquid_molar_volume(T))
            st["c"] = F / vdot
            st["vdot"] = vdot
            st["rho"] = mass / vdot
        else:
            st["c"] = st["x"] * P / (R * T)
            st["p"] = st["x"] * P
            st["vdot"] = tot * R * T / P
            st["rho"] = mass / st["vdot"]
        return st

    def _rates(self, s: Symbols) -> list[tuple[Any, Any]]:
        """(rate, multiplier) of each reaction at outlet conditions."""
        st = self._state(s)
        o = s.port("outlet")
        out = []
        for r in self.reactions:
            a = {"concentration": st["c"], "partial_pressure": st.get("p"), "mole_fraction": st["x"], "mass_fraction": st["w"]}[r.basis]
            rate = r.rate(self.system, o.T, a, self._rp(s, r))
            mult = {"volume": s.p["volume"], "catalyst_mass": s.p.get("catalyst_mass"), "holdup_mass": s.p["volume"] * st["rho"]}[r.rate_per]
            out.append((rate, mult))
        return out

    def residuals(self, s: Symbols) -> list[Any]:
        i, o = s.port("inlet"), s.port("outlet")
        sys = self.system
        gen = ca.SX.zeros(sys.n)
        for r in self.reactions:
            gen = gen + ca.DM(r.nu(sys)) * s.x[f"extent.{r.name}"]
        res = [o.F[k] - i.F[k] - gen[k] for k in range(sys.n)]
        res.append(sys.enthalpy_flow(i.F, i.T, i.phase) + s.x["Q"] - sys.enthalpy_flow(o.F, o.T, o.phase))
        res.append(o.P - (i.P - s.p["pressure_drop"]))
        for r, (rate, mult) in zip(self.reactions, self._rates(s)):
            res.append(s.x[f"extent.{r.name}"] - mult * rate)
        return res

    def residual_names(self) -> list[str]:
        return [f"balance.{c}" for c in self.system.names] + ["energy", "pressure"] + [f"rate.{r.name}" for r in self.reactions]

    def spec_expression(self, name: str, s: Symbols) -> Any:
        if name == "temperature":
            return s.port("outlet").T
        if name == "duty":
            return s.x["Q"]
        return super().spec_expression(name, s)

    def heat_duty(self, s: Symbols) -> Any:
        return s.x["Q"]

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        i, o = s.port("inlet"), s.port("outlet")
        st = self._state(s)
        out: dict[str, tuple[Any, str]] = {"duty": (s.x["Q"], "W"), "residence_time": (s.p["volume"] / st["vdot"], "s")}
        for r, (rate, _m) in zip(self.reactions, self._rates(s)):
            out[f"rate.{r.name}"] = (rate, r.rate_unit())
            out[f"extent.{r.name}"] = (s.x[f"extent.{r.name}"], "mol/s")
        for c in self.reactants():
            k = self.system.index(c)
            # floor: conversion of a reactant that is not fed is reported as 0, not 0/0
            out[f"conversion.{c}"] = ((i.F[k] - o.F[k]) / ca.fmax(i.F[k], 1e-30), "")
        return out

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import esterification
        from unitmodels.kinetics import Reaction

        system = system or esterification()
        rx = Reaction("esterification", {"acetic acid": -1, "ethanol": -1, "ethyl acetate": 1, "water": 1},
                      reversible=True, reference_temperature=340.0)
        u = cls("R1", system, {"reactions": ["esterification"], "utility": "steam"}, reactions=[rx])
        # kinetic numbers are illustrative (a case to exercise the equations, not data)
        return ConformanceCase(
            u,
            {"inlet": [([1.0, 1.2, 0.0, 0.3], 320.0, 2.0e5, "liquid")]},
            {"temperature": 345.0},
            {"volume": 0.5, "esterification.pre_exponential": 4.0e-6, "esterification.activation_energy": 5.0e4,
             "esterification.pre_exponential_reverse": 1.5e-6, "esterification.activation_energy_reverse": 4.0e4},
            guess={"outlet": [([0.6, 0.8, 0.4, 0.7], 345.0, 2.0e5)], "extent.esterification": 0.4},
            reacting=True,
        )
