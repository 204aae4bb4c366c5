"""Stream-handling units: feed, product, mixer, splitter (no heat, no reaction)."""

from __future__ import annotations

from typing import Any, Mapping

import casadi as ca

from unitmodels.base import (
    ConformanceCase,
    Option,
    Param,
    Port,
    Spec,
    Symbols,
    UnitModel,
    Var,
    register,
)


def stream_outputs(system: Any, F: Any, prefix: str = "") -> dict[str, tuple[Any, str]]:
    """Total and per-component flows and mole fractions of a stream.

    Parameters
    ----------
    system : ComponentSystem
    F : casadi column, shape (n, 1)
        Component molar flows, mol/s.
    prefix : str
        Prepended to every output name (``"vapour."``).
    """
    tot = ca.sum1(F)
    out: dict[str, tuple[Any, str]] = {
        f"{prefix}molar_flow": (tot, "mol/s"),
        f"{prefix}mass_flow": (system.mass_flow(F), "kg/s"),
    }
    for i, name in enumerate(system.names):
        out[f"{prefix}molar_flow.{name}"] = (F[i], "mol/s")
        # tiny floor keeps the report finite for an empty stream; it only enters outputs
        out[f"{prefix}mole_fraction.{name}"] = (F[i] / ca.fmax(tot, 1e-30), "")
    return out


@register
class Feed(UnitModel):
    """A raw-material feed of fixed composition.

    Unknowns: the outlet stream (n + 2) and the total flow ``Ftot``.
    Residuals (n): ``F_i - z_i / sum(z) * Ftot = 0``. The composition is
    normalised so that a table rounded to 0.999 still describes the
    intended mixture; the flowsheet layer should reject sums far from 1.
    Specifications (3): flow (``molar_flow`` or ``mass_flow``),
    ``temperature``, ``pressure``.
    """

    kind = "feed"
    description = "raw-material feed of fixed composition"
    options_declared = (Option("phase", str, "liquid", ("liquid", "vapour"), "phase of the fed stream"),)

    def ports(self) -> list[Port]:
        return [Port("outlet", "out", doc="the fed stream")]

    def outlet_phases(self, inlet_phases: Mapping[str, list[str]]) -> dict[str, str]:
        return {"outlet": self.options["phase"]}

    def variables(self) -> list[Var]:
        return [Var("Ftot", "mol/s", 0.0, float("inf"), 1.0, "total molar flow")]

    def parameters(self) -> list[Param]:
        return [Param("composition", "fraction", None, per_component=True, category="feed", lower=0.0, upper=1.0,
                      doc="mole fractions, normalised to sum 1")]

    def specs(self) -> list[Spec]:
        return [
            Spec("molar_flow", "molar_flow", "flow", "total molar flow"),
            Spec("mass_flow", "mass_flow", "flow", "total mass flow"),
            Spec("temperature", "temperature"),
            Spec("pressure", "pressure"),
        ]

    def residuals(self, s: Symbols) -> list[Any]:
        out = s.port("outlet")
        z = s.p["composition"]
        zn = z / ca.sum1(z)
        return [out.F[i] - zn[i] * s.x["Ftot"] for i in range(self.system.n)]

    def residual_names(self) -> list[str]:
        return [f"composition.{c}" for c in self.system.names]

    def spec_expression(self, name: str, s: Symbols) -> Any:
        out = s.port("outlet")
        if name == "molar_flow":
            return s.x["Ftot"]
        if name == "mass_flow":
            return self.system.mass_flow(out.F)
        if name == "temperature":
            return out.T
        if name == "pressure":
            return out.P
        return super().spec_expression(name, s)

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        return stream_outputs(self.system, s.port("outlet").F)

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import aromatics

        system = system or aromatics()
        u = cls("F1", system, {"phase": "liquid"})
        return ConformanceCase(u, {}, {"mass_flow": 2.5, "temperature": 310.0, "pressure": 2.0e5},
                               {"composition": [0.6, 0.3, 0.1]}, guess={"Ftot": 1.0})

    @classmethod
    def conformance_cases(cls, system: Any = None) -> list[ConformanceCase]:
        from unitmodels._examples import aromatics

        system = system or aromatics()
        vap = ConformanceCase(cls("F2", system, {"phase": "vapour"}), {}, {"molar_flow": 3.0, "temperature": 450.0, "pressure": 1.0e5},
                              {"composition": [0.2, 0.3, 0.5]}, guess={"Ftot": 1.0})
        return [cls.conformance_case(system), vap]


@register
class Product(UnitModel):
    """A product (or waste) leaving the plant; no equations, only outputs.

    Outputs: ``molar_flow``, ``mass_flow``, ``molar_flow.<component>``,
    ``mole_fraction.<component>``, ``temperature``, ``pressure``.
    """

    kind = "product"
    description = "stream leaving the plant"

    def ports(self) -> list[Port]:
        return [Port("inlet", "in")]

    def residuals(self, s: Symbols) -> list[Any]:
        return []

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        st = s.port("inlet")
        out = stream_outputs(self.system, st.F)
        out["temperature"] = (st.T, "K")
        out["pressure"] = (st.P, "Pa")
        return out

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import aromatics

        system = system or aromatics()
        return ConformanceCase(cls("P1", system), {"inlet": [([0.5, 0.2, 0.1], 320.0, 1.5e5, "liquid")]})


@register
class Mixer(UnitModel):
    """Adiabatic mixer of any number of inlets.

    Residuals (n + 2): component balances, energy balance
    ``sum H_in = H_out``, and a pressure equation. The physical outlet
    pressure is the lowest inlet pressure, but ``min`` is not smooth, so
    with option ``pressure = "first_inlet"`` (default) the outlet takes the
    first inlet's pressure (list the lowest-pressure stream first, or add
    valves); with ``"specified"`` the file gives ``pressure`` (one spec).
    """

    kind = "mixer"
    description = "adiabatic stream mixer"
    options_declared = (
        Option("pressure", str, "first_inlet", ("first_inlet", "specified"), "how the outlet pressure is set"),
        Option("outlet_phase", str, None, ("liquid", "vapour"), "phase of the outlet (default: first inlet's)"),
    )

    def ports(self) -> list[Port]:
        return [Port("inlets", "in", variadic=True), Port("outlet", "out")]

    def specs(self) -> list[Spec]:
        return [Spec("pressure", "pressure", doc="outlet pressure")] if self.options["pressure"] == "specified" else []

    def residuals(self, s: Symbols) -> list[Any]:
        ins = s.ports("inlets")
        out = s.port("outlet")
        sys = self.system
        F = sum((st.F for st in ins), ca.SX.zeros(sys.n))
        res = [F[i] - out.F[i] for i in range(sys.n)]
        H = sum(sys.enthalpy_flow(st.F, st.T, st.phase) for st in ins)
        res.append(H - sys.enthalpy_flow(out.F, out.T, out.phase))
        if self.options["pressure"] == "first_inlet":
            res.append(out.P - ins[0].P)
        return res

    def residual_names(self) -> list[str]:
        names = [f"balance.{c}" for c in self.system.names] + ["energy"]
        return names + (["pressure"] if self.options["pressure"] == "first_inlet" else [])

    def spec_expression(self, name: str, s: Symbols) -> Any:
        if name == "pressure" and self.options["pressure"] == "specified":
            return s.port("outlet").P
        return super().spec_expression(name, s)

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import aromatics

        system = system or aromatics()
        u = cls("M1", system, port_counts={"inlets": 3})
        return ConformanceCase(u, {"inlets": [([1.0, 0.0, 0.1], 300.0, 2.0e5, "liquid"),
                                              ([0.2, 0.8, 0.0], 350.0, 3.0e5, "liquid"),
                                              ([0.0, 0.3, 0.5], 330.0, 2.5e5, "liquid")]})

    @classmethod
    def conformance_cases(cls, system: Any = None) -> list[ConformanceCase]:
        from unitmodels._examples import aromatics

        system = system or aromatics()
        u = cls("M2", system, {"pressure": "specified", "outlet_phase": "vapour"}, port_counts={"inlets": 2})
        spec = ConformanceCase(u, {"inlets": [([1.0, 0.0, 0.1], 400.0, 2.0e5, "vapour"), ([0.2, 0.8, 0.0], 420.0, 3.0e5, "vapour")]},
                               {"pressure": 1.5e5})
        return [cls.conformance_case(system), spec]


@register
class Splitter(UnitModel):
    """Divides one stream into N streams of the inlet's composition, T and P.

    Internal variables ``fraction.0`` .. ``fraction.{N-1}`` (share of the
    inlet going to each outlet, in the order of ``outlets``). Residuals
    (N n + 2N + 1): ``F_k = fraction_k F_in``, ``T_k = T_in``,
    ``P_k = P_in`` and ``sum fraction_k = 1``. The file gives N - 1 of the
    fractions (:meth:`check_specs`); the last one follows.
    """

    kind = "splitter"
    description = "stream splitter (e.g. recycle and purge)"

    def ports(self) -> list[Port]:
        return [Port("inlet", "in"), Port("outlets", "out", variadic=True)]

    @property
    def n_out(self) -> int:
        return self.port_counts["outlets"]

    def variables(self) -> list[Var]:
        return [Var(f"fraction.{k}", "", 0.0, 1.0, 0.5, f"share of the inlet to outlet {k}") for k in range(self.n_out)]

    def specs(self) -> list[Spec]:
        return [Spec(f"fraction.{k}", "fraction", "fractions", f"share of the inlet to outlet {k}") for k in range(self.n_out)]

    def spec_groups(self) -> dict[str, list[str]]:
        # one group holding all fractions; the real rule (N-1 of N) is check_specs
        return {"fractions": [sp.name for sp in self.specs()]}

    def dof(self) -> int:
        return self.n_out - 1

    def check_specs(self, given: set[str]) -> str | None:
        names = [sp.name for sp in self.specs()]
        unknown = sorted(given - set(names))
        if unknown:
            return f"unknown specification(s) {', '.join(unknown)} for a splitter with {self.n_out} outlets; known: {', '.join(names)}"
        hit = [n for n in names if n in given]
        if len(hit) != self.n_out - 1:
            return (f"a splitter with {self.n_out} outlets needs {self.n_out - 1} of {', '.join(names)} "
                    f"(the last follows from the sum of 1); got {len(hit)}")
        return None

    def outlet_phases(self, inlet_phases: Mapping[str, list[str]]) -> dict[str, str]:
        return {"outlets": inlet_phases.get("inlet", ["liquid"])[0]}

    def residuals(self, s: Symbols) -> list[Any]:
        inl = s.port("inlet")
        res = []
        for k, st in enumerate(s.ports("outlets")):
            f = s.x[f"fraction.{k}"]
            res += [st.F[i] - f * inl.F[i] for i in range(self.system.n)]
            res += [st.T - inl.T, st.P - inl.P]
        res.append(sum(s.x[f"fraction.{k}"] for k in range(self.n_out)) - 1)
        return res

    def residual_names(self) -> list[str]:
        names = []
        for k in range(self.n_out):
            names += [f"outlet{k}.balance.{c}" for c in self.system.names] + [f"outlet{k}.temperature", f"outlet{k}.pressure"]
        return names + ["fraction_sum"]

    def spec_expression(self, name: str, s: Symbols) -> Any:
        if name in s.x and name.startswith("fraction."):
            return s.x[name]
        return super().spec_expression(name, s)

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        return {f"fraction.{k}": (s.x[f"fraction.{k}"], "") for k in range(self.n_out)}

    @classmethod
    def conformance_case(cls, system: Any = None) -> ConformanceCase:
        from unitmodels._examples import aromatics

        system = system or aromatics()
        u = cls("S1", system, port_counts={"outlets": 3})
        return ConformanceCase(u, {"inlet": [([1.0, 0.5, 0.2], 320.0, 2.0e5, "liquid")]},
                               {"fraction.0": 0.25, "fraction.2": 0.6})
