"""Reactors: continuous stirred tank, plug flow (discretised), fixed conversion, chemical equilibrium."""

from __future__ import annotations

from typing import Any, Mapping

import casadi as ca

from unitmodels.base import INF, ConformanceCase, Option, Param, Port, Spec, Symbols, UnitConfigError, UnitModel, Var, register
from unitmodels.thermo.component import R


def mixture_state(system: Any, phase: str, F: Any, T: Any, P: Any) -> dict[str, Any]:
    """Basis quantities of a reacting mixture.

    Returns
    -------
    dict
        ``x`` mole fractions, ``w`` mass fractions, ``c`` concentrations
        (mol/m**3), ``p`` partial pressures (Pa, gas only), ``vdot``
        volumetric flow (m**3/s) and ``rho`` mass density (kg/m**3).
        Liquid: ideal mixing of pure-liquid molar volumes; gas: ideal gas.
    """
    tot = ca.sum1(F)
    mass = system.mass_flow(F)
    st: dict[str, Any] = {"x": F / tot, "w": ca.DM(system.mw) * F / mass}
    if phase == "liquid":
        vdot = ca.dot(F, system.liquid_molar_volume(T))
        st["c"] = F / vdot
    else:
        vdot = tot * R * T / P
        st["c"] = st["x"] * P / (R * T)
        st["p"] = st["x"] * P
    st["vdot"] = vdot
    st["rho"] = mass / vdot
    return st


def reaction_rates(unit: "_Reacting", s: Symbols, st: Mapping[str, Any], T: Any, volume: Any, catalyst_mass: Any) -> list[tuple[Any, Any]]:
    """(rate, multiplier) of each hosted reaction for a mixture state: the
    multiplier turns the rate into mol/s (volume, catalyst mass or holdup mass)."""
    out = []
    for r in unit.reactions:
        a = {"concentration": st["c"], "partial_pressure": st.get("p"), "mole_fraction": st["x"], "mass_fraction": st["w"]}[r.basis]
        rate = r.rate(unit.system, T, a, unit._rp(s, r))
        mult = {"volume": volume, "catalyst_mass": catalyst_mass, "holdup_mass": volume * st["rho"]}[r.rate_per]
        out.append((rate, mult))
    return out


class _Reacting(UnitModel):
    """Shared handling of the ``reactions`` option and kinetic parameters; one inlet, one outlet
    whose phase is the ``phase`` option."""

    def ports(self) -> list[Port]:
        return [Port("inlet", "in"), Port("outlet", "out")]

    def outlet_phases(self, inlet_phases: Mapping[str, list[str]]) -> dict[str, str]:
        return {"outlet": self.options["phase"]}

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

    def spec_expression(self, name: str, s: Symbols) -> Any:
        """Outlet temperature or duty: the thermal specification every reactor offers."""
        if name == "temperature":
            return s.port("outlet").T
        if name == "duty":
            return s.x["Q"]
        return super().spec_expression(name, s)

    def heat_duty(self, s: Symbols) -> Any:
        return s.x["Q"]

    def _duty_and_extents(self, extent_doc: str) -> list[Var]:
        """The duty ``Q`` and one extent variable per reaction (mol/s)."""
        return [Var("Q", "W", nominal=1.0e5, doc="heat added")] + [
            Var(f"extent.{r.name}", "mol/s", nominal=1.0, doc=extent_doc.format(r.name)) for r in self.reactions
        ]

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

    def variables(self) -> list[Var]:
        return self._duty_and_extents("rate of reaction {} times its basis")

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
        return mixture_state(self.system, self.options["phase"], o.F, o.T, o.P)

    def _rates(self, s: Symbols) -> list[tuple[Any, Any]]:
        """(rate, multiplier) of each reaction at outlet conditions."""
        o = s.port("outlet")
        cat = s.p.get("catalyst_mass")
        return reaction_rates(self, s, self._state(s), o.T, s.p["volume"], cat)

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

    @classmethod
    def conformance_cases(cls, system: Any = None) -> list[ConformanceCase]:
        from unitmodels._examples import shift
        from unitmodels.kinetics import Reaction

        sysg = shift()
        rx = Reaction("shift", {"carbon monoxide": -1, "water": -1, "carbon dioxide": 1, "hydrogen": 1},
                      basis="partial_pressure", rate_per="catalyst_mass", reference_temperature=600.0)
        u = cls("R5", sysg, {"reactions": ["shift"], "phase": "vapour"}, reactions=[rx])
        gas = ConformanceCase(
            u, {"inlet": [([1.0, 2.0, 0.1, 0.1, 0.5], 550.0, 2.0e6, "vapour")]}, {"temperature": 600.0},
            {"volume": 1.0, "catalyst_mass": 10.0, "shift.pre_exponential": 1.0e-13, "shift.activation_energy": 8.0e4},
            guess={"outlet": [([0.7, 1.7, 0.4, 0.4, 0.5], 600.0, 2.0e6)], "extent.shift": 0.3}, reacting=True)
        return [cls.conformance_case(system), gas]


@register
class PFR(_Reacting):
    """Plug-flow reactor discretised into ``grid`` equal volume segments.

    Scheme: the implicit midpoint rule in reactor volume, second-order
    accurate and A-stable (stiff kinetics do not need a fine grid for
    stability, only for accuracy). For segment ``k`` (volume ``dV = V/N``)

        F_k - F_{k-1} - sum_j nu_j extent_{k,j} = 0
        extent_{k,j} - M_k r_j(state at the segment midpoint) = 0

    where the midpoint state is the mean of the node flows (and
    temperatures) and the pressure falls linearly with volume; node 0 is
    the inlet and node N the outlet. ``M_k`` is ``dV``, the catalyst mass
    ``W/N`` or the holdup mass in the segment. For first-order kinetics
    the scheme gives ``F_N/F_0 = ((1 - k h/2)/(1 + k h/2))**N`` with
    ``h = tau/N``; its relative error against ``exp(-k tau)`` is about
    ``(k tau)**3 / (12 N**2)``.

    Option ``mode``:

    * ``"isothermal"``: the whole reactor at the specified ``temperature``
      (= outlet temperature; the feed is taken to heat up instantly at the
      entrance); one overall energy balance gives the duty ``Q``.
    * ``"duty"``: the specified ``duty`` is added uniformly along the
      volume (``Q/N`` per segment, 0 for adiabatic) and node temperatures
      follow from one energy balance per segment.
    * ``"wall"``: heat crosses the wall to (or from) a coolant at the
      parameter ``coolant_temperature`` ``T_c`` through the coefficient
      ``wall_coefficient`` ``U`` (W/m**2/K) over the total ``wall_area``
      ``A`` (m**2), spread uniformly along the volume. Segment ``k``
      receives ``q_k = U (A/N) (T_c - (T_{k-1} + T_k)/2)``, the heat at
      the segment's midpoint temperature as the implicit midpoint rule
      asks, and ``Q = sum_k q_k`` (a variable, the reactor's duty for
      utility costing). No specification: ``U``, ``A`` and ``T_c`` fix the
      thermal behaviour. Without reaction and with constant heat capacity
      the scheme gives ``(T_c - T_N)/(T_c - T_0) = ((1 - b/2)/(1 + b/2))**N``
      with ``b = U A / (N F c_p)``, second-order close to the exact
      ``exp(-U A / (F c_p))``.

    Energy balance of segment ``k`` (duty and wall modes):
    ``H(F_{k-1}, T_{k-1}) + q_k - H(F_k, T_k) = 0`` with ``q_k = Q/N``
    (duty) or the wall heat above. Isothermal mode: one overall balance
    ``H_in + Q - H_out = 0``.

    Variables: ``node<k>.F.<component>`` and, in duty and wall modes,
    ``node<k>.T`` for the interior nodes ``k = 1 .. N-1``;
    ``segment<k>.extent.<reaction>`` for ``k = 1 .. N``; ``Q``.
    Residuals (``n`` components, ``R`` reactions): per segment ``n``
    balances and ``R`` rate equations, plus one energy balance in duty and
    wall modes; then the overall energy balance (isothermal) or the duty
    sum ``Q - sum_k q_k`` (wall); then the pressure. Degrees of freedom:
    1 in isothermal mode (``temperature``) and duty mode (``duty``), 0 in
    wall mode.
    """

    kind = "pfr"
    description = "plug-flow reactor (discretised)"
    options_declared = (
        Option("reactions", list, None, None, "names of the reactions (flowsheet `reactions` table)"),
        Option("phase", str, "liquid", ("liquid", "vapour"), "phase of the reacting mixture and the outlet"),
        Option("mode", str, "isothermal", ("isothermal", "duty", "wall"),
               "isothermal at a given temperature, a given duty, or wall heat transfer to a coolant"),
        Option("grid", int, 20, None, "number of equal volume segments"),
        Option("utility", str, None, None, "utility supplying or removing the duty"),
    )

    def validate(self) -> None:
        super().validate()
        g = self.options["grid"]
        if isinstance(g, bool) or g < 1 or g > 2000:
            raise UnitConfigError("grid", f"expected a number of segments between 1 and 2000, got {g!r}")

    @property
    def n_seg(self) -> int:
        return int(self.options["grid"])

    @property
    def _profiled(self) -> bool:
        """True when node temperatures are unknowns (duty and wall modes)."""
        return self.options["mode"] in ("duty", "wall")

    def variables(self) -> list[Var]:
        vs = [Var("Q", "W", nominal=1.0e5, doc="heat added")]
        for k in range(1, self.n_seg):
            vs += [Var(f"node{k}.F.{c}", "mol/s", 0.0, INF, nominal=1.0) for c in self.system.names]
            if self._profiled:
                vs.append(Var(f"node{k}.T", "K", 150.0, 1500.0, 300.0))
        for k in range(1, self.n_seg + 1):
            vs += [Var(f"segment{k}.extent.{r.name}", "mol/s", nominal=0.1) for r in self.reactions]
        return vs

    def parameters(self) -> list[Param]:
        ps = [Param("volume", "volume", None, lower=0.0, doc="reacting volume"), Param("pressure_drop", "pressure_difference", 0.0)]
        if any(r.rate_per == "catalyst_mass" for r in self.reactions):
            ps.append(Param("catalyst_mass", "mass", None, lower=0.0))
        if self.options["mode"] == "wall":
            ps += [Param("wall_coefficient", "heat_transfer_coefficient", None, lower=0.0,
                         doc="overall heat-transfer coefficient between the reacting fluid and the coolant"),
                   Param("wall_area", "area", None, lower=0.0, doc="total heat-transfer area, uniform along the volume"),
                   Param("coolant_temperature", "temperature", None, category="operating", lower=0.0,
                         doc="coolant temperature, the same all along the reactor")]
        return ps + self.reaction_parameters()

    def initial_guess(self, inlets: Mapping[str, list[tuple[Any, float, float]]]) -> dict[str, float]:
        """Every node at the inlet state (flows, temperature); no reaction yet."""
        F, T, _ = inlets["inlet"][0]
        out: dict[str, float] = {}
        for k in range(1, self.n_seg):
            for i, c in enumerate(self.system.names):
                out[f"node{k}.F.{c}"] = float(F[i])
            if self._profiled:
                out[f"node{k}.T"] = float(T)
        return out

    def specs(self) -> list[Spec]:
        if self.options["mode"] == "isothermal":
            return [Spec("temperature", "temperature", "thermal", "reactor temperature")]
        if self.options["mode"] == "wall":
            # the wall coefficient, area and coolant temperature fix the heat: nothing to specify
            return []
        return [Spec("duty", "power", "thermal", "heat added along the reactor (0 for adiabatic)")]

    def _nodes(self, s: Symbols) -> list[tuple[Any, Any, Any]]:
        """(F, T, P) at nodes 0..N; interior pressures interpolated."""
        i, o = s.port("inlet"), s.port("outlet")
        N = self.n_seg
        nodes = [(i.F, i.T, i.P)]
        for k in range(1, N):
            F = ca.vertcat(*[s.x[f"node{k}.F.{c}"] for c in self.system.names])
            T = s.x[f"node{k}.T"] if self._profiled else o.T
            nodes.append((F, T, i.P - s.p["pressure_drop"] * k / N))
        nodes.append((o.F, o.T, o.P))
        return nodes

    def _segments(self, s: Symbols) -> list[list[tuple[Any, Any]]]:
        nodes = self._nodes(s)
        N = self.n_seg
        o = s.port("outlet")
        cat = s.p.get("catalyst_mass")
        out = []
        for k in range(1, N + 1):
            F0, T0, _ = nodes[k - 1]
            F1, T1, _ = nodes[k]
            Fm = (F0 + F1) / 2
            Tm = (T0 + T1) / 2 if self._profiled else o.T
            Pm = s.port("inlet").P - s.p["pressure_drop"] * (k - 0.5) / N
            st = mixture_state(self.system, self.options["phase"], Fm, Tm, Pm)
            out.append(reaction_rates(self, s, st, Tm, s.p["volume"] / N, None if cat is None else cat / N))
        return out

    def _wall_heats(self, s: Symbols) -> list[Any]:
        """Heat into each segment through the wall, W (wall mode only).

        Returns
        -------
        list of casadi.SX, length N
            ``U (A/N) (T_c - T_mid)`` with ``T_mid`` the mean of the
            segment's end temperatures: the midpoint value the implicit
            midpoint rule uses for every other right-hand side.
        """
        nodes = self._nodes(s)
        N = self.n_seg
        ua_seg = s.p["wall_coefficient"] * s.p["wall_area"] / N
        return [ua_seg * (s.p["coolant_temperature"] - (nodes[k - 1][1] + nodes[k][1]) / 2) for k in range(1, N + 1)]

    def residuals(self, s: Symbols) -> list[Any]:
        i, o = s.port("inlet"), s.port("outlet")
        sys = self.system
        nodes = self._nodes(s)
        N = self.n_seg
        ph = self.options["phase"]
        res = []
        wall = self._wall_heats(s) if self.options["mode"] == "wall" else None
        for k, rates in zip(range(1, N + 1), self._segments(s)):
            gen = ca.SX.zeros(sys.n)
            for r in self.reactions:
                gen = gen + ca.DM(r.nu(sys)) * s.x[f"segment{k}.extent.{r.name}"]
            res += [nodes[k][0][c] - nodes[k - 1][0][c] - gen[c] for c in range(sys.n)]
            for r, (rate, mult) in zip(self.reactions, rates):
                res.append(s.x[f"segment{k}.extent.{r.name}"] - mult * rate)
            if self._profiled:
                h0 = sys.enthalpy_flow(nodes[k - 1][0], nodes[k - 1][1], i.phase if k == 1 else ph)
                h1 = sys.enthalpy_flow(nodes[k][0], nodes[k][1], ph)
                q = s.x["Q"] / N if wall is None else wall[k - 1]
                res.append(h0 + q - h1)
        if self.options["mode"] == "isothermal":
            res.append(sys.enthalpy_flow(i.F, i.T, i.phase) + s.x["Q"] - sys.enthalpy_flow(o.F, o.T, o.phase))
        if wall is not None:
            # Q is the sum of the segment heats, so heat_duty and utility costing see the wall heat
            res.append(s.x["Q"] - sum(wall))
        res.append(o.P - (i.P - s.p["pressure_drop"]))
        return res

    def residual_names(self) -> list[str]:
        names = []
        for k in range(1, self.n_seg + 1):
            names += [f"segment{k}.balance.{c}" for c in self.system.names] + [f"segment{k}.rate.{r.name}" for r in self.reactions]
            if self._profiled:
                names.append(f"segment{k}.energy")
        if self.options["mode"] == "isothermal":
            names.append("energy")
        if self.options["mode"] == "wall":
            names.append("wall_duty")
        return names + ["pressure"]

    def spec_expression(self, name: str, s: Symbols) -> Any:
        if name == "temperature" and self.options["mode"] == "isothermal":
            return s.port("outlet").T
        if name == "duty" and self.options["mode"] == "duty":
            return s.x["Q"]
        # not the shared temperature/duty rule: each PFR mode has only its own specification
        return UnitModel.spec_expression(self, name, s)

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        i, o = s.port("inlet"), s.port("outlet")
        out: dict[str, tuple[Any, str]] = {"duty": (s.x["Q"], "W")}
        for r in self.reactions:
            out[f"extent.{r.name}"] = (sum(s.x[f"segment{k}.extent.{r.name}"] for k in range(1, self.n_seg + 1)), "mol/s")
        for c in self.reactants():
            k = self.system.index(c)
            out[f"conversion.{c}"] = ((i.F[k] - o.F[k]) / ca.fmax(i.F[k], 1e-30), "")
        if self._profiled:
            temps = [n[1] for n in self._nodes(s)]
            # smooth upper bound of the node temperatures is not needed: report the list's values
            for k, t in enumerate(temps[1:-1], start=1):
                out[f"node{k}.temperature"] = (t, "K")
        return out

    def guess(self, F_in: Any, T_in: float, F_out: Any, T_out: float) -> dict[str, float]:
        """Starting values for the interior variables interpolated between inlet and outlet guesses."""
        import numpy as np

        F_in, F_out = np.asarray(F_in, float), np.asarray(F_out, float)
        N = self.n_seg
        g: dict[str, float] = {}
        for k in range(1, N):
            t = k / N
            for c, v in zip(self.system.names, (1 - t) * F_in + t * F_out):
                g[f"node{k}.F.{c}"] = float(v)
            g[f"node{k}.T"] = (1 - t) * T_in + t * T_out
        return g

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import esterification
        from unitmodels.kinetics import Reaction

        system = system or esterification()
        rx = Reaction("esterification", {"acetic acid": -1, "ethanol": -1, "ethyl acetate": 1, "water": 1},
                      reversible=True, reference_temperature=340.0)
        u = cls("R2", system, {"reactions": ["esterification"], "mode": "duty", "grid": 8}, reactions=[rx])
        fin, fout = [1.0, 1.2, 0.0, 0.3], [0.6, 0.8, 0.4, 0.7]
        g = u.guess(fin, 345.0, fout, 350.0)
        g.update({f"segment{k}.extent.esterification": 0.05 for k in range(1, 9)})
        g["outlet"] = [(fout, 350.0, 1.9e5)]
        # kinetic numbers are illustrative (a case to exercise the equations, not data)
        return ConformanceCase(
            u,
            {"inlet": [(fin, 345.0, 2.0e5, "liquid")]},
            {"duty": 5.0e3},
            {"volume": 0.5, "pressure_drop": 1.0e4, "esterification.pre_exponential": 4.0e-6, "esterification.activation_energy": 5.0e4,
             "esterification.pre_exponential_reverse": 1.5e-6, "esterification.activation_energy_reverse": 4.0e4},
            guess=g,
            reacting=True,
        )

    @classmethod
    def conformance_cases(cls, system: Any = None) -> list[ConformanceCase]:
        from unitmodels._examples import butanes, esterification
        from unitmodels.kinetics import Reaction

        sysb = butanes()
        rx = Reaction("iso", {"n-butane": -1, "isobutane": 1}, reversible=True, reference_temperature=360.0)
        u = cls("R6", sysb, {"reactions": ["iso"], "mode": "isothermal", "grid": 5}, reactions=[rx])
        g = u.guess([2.0, 0.1], 360.0, [1.0, 1.1], 360.0)
        g["outlet"] = [([1.0, 1.1], 360.0, 2.0e6)]
        iso = ConformanceCase(
            u, {"inlet": [([2.0, 0.1], 330.0, 2.0e6, "liquid")]}, {"temperature": 360.0},
            {"volume": 1.0, "iso.pre_exponential": 1.0e-3, "iso.activation_energy": 6.0e4,
             "iso.pre_exponential_reverse": 4.0e-4, "iso.activation_energy_reverse": 5.0e4},
            guess=g, reacting=True)
        # wall mode: the esterification mixture heated through the wall by a coolant above the feed
        # temperature, with a pressure drop (illustrative numbers, not data)
        rxw = Reaction("esterification", {"acetic acid": -1, "ethanol": -1, "ethyl acetate": 1, "water": 1},
                       reversible=True, reference_temperature=340.0)
        uw = cls("R7", esterification(), {"reactions": ["esterification"], "mode": "wall", "grid": 6, "utility": "steam"},
                 reactions=[rxw])
        # rate constants 100 times smaller than the duty-mode case: a smooth profile on this coarse grid
        # (with k dV / Vdot > 2 per segment the midpoint rule oscillates about equilibrium)
        fin = [1.0, 1.2, 0.0, 0.3]
        gw = uw.initial_guess({"inlet": [(fin, 330.0, 2.0e5)]})  # every node at the inlet state
        gw["outlet"] = [(fin, 330.0, 1.9e5)]
        wall = ConformanceCase(
            uw, {"inlet": [(fin, 330.0, 2.0e5, "liquid")]}, {},
            {"volume": 0.5, "pressure_drop": 1.0e4, "wall_coefficient": 400.0, "wall_area": 3.0, "coolant_temperature": 365.0,
             "esterification.pre_exponential": 4.0e-8, "esterification.activation_energy": 5.0e4,
             "esterification.pre_exponential_reverse": 1.5e-8, "esterification.activation_energy_reverse": 4.0e4},
            guess=gw, reacting=True)
        return [cls.conformance_case(system), iso, wall]


class _ExtentReactor(_Reacting):
    """Reactor whose extents follow from a condition other than kinetics
    (a fixed conversion, chemical equilibrium): shared balances."""

    def variables(self) -> list[Var]:
        return self._duty_and_extents("molar extent of reaction {}")

    def specs(self) -> list[Spec]:
        return [Spec("temperature", "temperature", "thermal", "outlet temperature"),
                Spec("duty", "power", "thermal", "heat added (0 for adiabatic)")]

    def _balances(self, s: Symbols) -> list[Any]:
        i, o = s.port("inlet"), s.port("outlet")
        sys = self.system
        gen = ca.SX.zeros(sys.n)
        for r in self.reactions:
            gen = gen + ca.DM(r.nu(sys)) * s.x[f"extent.{r.name}"]
        res = [o.F[k] - i.F[k] - gen[k] for k in range(sys.n)]
        res.append(sys.enthalpy_flow(i.F, i.T, i.phase) + s.x["Q"] - sys.enthalpy_flow(o.F, o.T, o.phase))
        res.append(o.P - (i.P - s.p["pressure_drop"]))
        return res

    def _balance_names(self) -> list[str]:
        return [f"balance.{c}" for c in self.system.names] + ["energy", "pressure"]

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        i, o = s.port("inlet"), s.port("outlet")
        out: dict[str, tuple[Any, str]] = {"duty": (s.x["Q"], "W")}
        for r in self.reactions:
            out[f"extent.{r.name}"] = (s.x[f"extent.{r.name}"], "mol/s")
        for c in self.reactants():
            k = self.system.index(c)
            out[f"conversion.{c}"] = ((i.F[k] - o.F[k]) / ca.fmax(i.F[k], 1e-30), "")
        return out


@register
class ConversionReactor(_ExtentReactor):
    """Reactor with a given conversion of a key component per reaction.

    ``extent_j * (-nu_key,j) = conversion_j * F_in,key_j``: each conversion
    is a fraction of the key component's *inlet* flow (parallel reactions
    sharing a key must have conversions summing to at most 1). The
    conversions are parameters ``conversion.<reaction>`` (equipment
    performance); kinetic data of the reactions are not used.
    Residuals (n + 2 + R): balances, energy, pressure, one conversion
    equation per reaction. Specification (group "thermal"):
    ``temperature`` or ``duty``.
    """

    kind = "conversion_reactor"
    description = "reactor with specified conversions"
    options_declared = (
        Option("reactions", list, None, None, "names of the reactions (flowsheet `reactions` table)"),
        Option("key_components", list, None, None, "key component of each reaction, same order"),
        Option("phase", str, "liquid", ("liquid", "vapour"), "phase of the outlet"),
        Option("utility", str, None, None, "utility supplying or removing the duty"),
    )

    def validate(self) -> None:
        super().validate()
        keys = self.options.get("key_components")
        names = self.options["reactions"]
        if not isinstance(keys, list) or len(keys) != len(names):
            raise UnitConfigError("key_components", f"expected a list of {len(names)} component names (one per reaction)")
        by_name = {r.name: r for r in self.reactions}
        for rname, key in zip(names, keys):
            r = by_name[rname]
            if r.stoichiometry.get(key, 0.0) >= 0:
                raise UnitConfigError("key_components", f"{key!r} is not a reactant of reaction {rname}")

    def _keys(self) -> dict[str, str]:
        return dict(zip(self.options["reactions"], self.options["key_components"]))

    def parameters(self) -> list[Param]:
        return [Param("pressure_drop", "pressure_difference", 0.0)] + [
            Param(f"conversion.{r.name}", "fraction", None, category="operating", lower=0.0, upper=1.0,
                  doc=f"fraction of the inlet {self._keys()[r.name]} converted by {r.name}")
            for r in self.reactions
        ]

    def residuals(self, s: Symbols) -> list[Any]:
        i = s.port("inlet")
        res = self._balances(s)
        for r in self.reactions:
            key = self._keys()[r.name]
            k = self.system.index(key)
            res.append(s.x[f"extent.{r.name}"] * (-r.stoichiometry[key]) - s.p[f"conversion.{r.name}"] * i.F[k])
        return res

    def residual_names(self) -> list[str]:
        return self._balance_names() + [f"conversion.{r.name}" for r in self.reactions]

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import esterification
        from unitmodels.kinetics import Reaction

        system = system or esterification()
        rx = Reaction("esterification", {"acetic acid": -1, "ethanol": -1, "ethyl acetate": 1, "water": 1})
        u = cls("R3", system, {"reactions": ["esterification"], "key_components": ["acetic acid"]}, reactions=[rx])
        return ConformanceCase(u, {"inlet": [([1.0, 1.2, 0.0, 0.3], 320.0, 2.0e5, "liquid")]}, {"duty": 0.0},
                               {"conversion.esterification": 0.65, "pressure_drop": 1.0e4}, reacting=True)


@register
class EquilibriumReactor(_ExtentReactor):
    """Gas-phase reactor at chemical equilibrium (ideal gas).

    For each reaction ``sum_i nu_i ln(y_i P / P0) + dG_j(T*) / (R T*) = 0``
    with ``P0 = 1 bar``, ``dG_j = sum_i nu_i g_i`` from the Gibbs energies
    of formation and ideal-gas heat capacities
    (:meth:`ComponentSystem.g_ig`), and ``T* = T + approach_temperature``
    (a common-practice way to represent a reactor that stops short of
    equilibrium; default 0). The logarithms need every species of a
    reaction present (``y_i > 0``), so start from a point with some of
    each product. Kinetic data of the reactions are not used.
    Residuals (n + 2 + R). Specification (group "thermal"):
    ``temperature`` or ``duty``.
    """

    kind = "equilibrium_reactor"
    description = "gas-phase chemical-equilibrium reactor"
    options_declared = (
        Option("reactions", list, None, None, "names of the reactions (flowsheet `reactions` table)"),
        Option("phase", str, "vapour", ("vapour",), "only gas-phase equilibrium is modelled"),
        Option("utility", str, None, None, "utility supplying or removing the duty"),
    )

    P0 = 1.0e5

    def validate(self) -> None:
        super().validate()
        for c in self.system.components:
            if any(c.name in r.stoichiometry for r in self.reactions) and c.gibbs_formation is None:
                raise UnitConfigError("reactions", f"{c.name} has no Gibbs energy of formation; equilibrium needs one")

    def parameters(self) -> list[Param]:
        return [Param("pressure_drop", "pressure_difference", 0.0),
                Param("approach_temperature", "temperature_difference", 0.0, category="operating",
                      doc="K evaluated at T + approach (negative for exothermic reactions to stop short)")]

    def ln_k(self, r: Any, T: Any) -> Any:
        """ln K of a reaction at temperature T (ideal gas, 1 bar standard state)."""
        g = self.system.g_ig(T)
        dg = sum(v * g[self.system.index(c)] for c, v in r.stoichiometry.items())
        return -dg / (R * T)

    def residuals(self, s: Symbols) -> list[Any]:
        o = s.port("outlet")
        res = self._balances(s)
        tot = ca.sum1(o.F)
        tstar = o.T + s.p["approach_temperature"]
        for r in self.reactions:
            lhs = sum(v * (ca.log(o.F[self.system.index(c)]) - ca.log(tot) + ca.log(o.P / self.P0)) for c, v in r.stoichiometry.items())
            res.append(lhs - self.ln_k(r, tstar))
        return res

    def residual_names(self) -> list[str]:
        return self._balance_names() + [f"equilibrium.{r.name}" for r in self.reactions]

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        out = super().outputs(s)
        o = s.port("outlet")
        for r in self.reactions:
            out[f"ln_k.{r.name}"] = (self.ln_k(r, o.T + s.p["approach_temperature"]), "")
        return out

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import shift
        from unitmodels.kinetics import Reaction

        system = system or shift()
        rx = Reaction("shift", {"carbon monoxide": -1, "water": -1, "carbon dioxide": 1, "hydrogen": 1})
        u = cls("R4", system, {"reactions": ["shift"]}, reactions=[rx])
        return ConformanceCase(u, {"inlet": [([1.0, 2.0, 0.1, 0.1, 0.5], 500.0, 2.0e6, "vapour")]}, {"temperature": 700.0},
                               {"pressure_drop": 5.0e4, "approach_temperature": 0.0},
                               guess={"outlet": [([0.3, 1.3, 0.8, 0.8, 0.5], 700.0, 1.95e6)], "extent.shift": 0.7}, reacting=True)
