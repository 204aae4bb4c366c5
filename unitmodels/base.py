"""The base class every unit model derives from, and the symbols it works on.

A unit model knows chemistry and equations only. It declares

* its **ports** (stream connections; a stream is component molar flows ``F``
  in mol/s, temperature ``T`` in K and pressure ``P`` in Pa, plus a phase
  label fixed by the flowsheet's structure),
* its internal **variables** (name, SI unit, bounds, nominal scale),
* its **parameters** (numbers from the flowsheet file that enter the
  equations, e.g. a volume; they stay symbolic so they can be changed
  without rebuilding),
* its **specifications** (quantities the file fixes to close the degrees of
  freedom, e.g. an outlet temperature or a duty; an optimizer may free them
  as decisions),
* its **options** (non-numeric choices: a utility name, a list of reactions),
* and its **residuals**: casadi expressions that are zero at a solution.

The flowsheet layer (``plantopt``) owns the stream variables, converts all
file values to SI and hands the model casadi symbols. Units here are SI
unit strings understood by pint; this package never imports pint itself.
"""

from __future__ import annotations

import math
from abc import ABC, abstractmethod
from dataclasses import dataclass, field
from typing import Any, ClassVar, Mapping, Sequence

import casadi as ca

INF = math.inf

# Default bounds and nominal scales of stream variables (SI). Wide on
# purpose: safety limits belong in the flowsheet file, these only keep the
# solver inside the range where the property correlations make sense.
STREAM_T_BOUNDS = (150.0, 1500.0)
STREAM_P_BOUNDS = (1.0e3, 5.0e7)
STREAM_T_NOMINAL = 300.0
STREAM_P_NOMINAL = 1.0e5
STREAM_F_NOMINAL = 1.0

PHASES = ("liquid", "vapour")


class UnitConfigError(ValueError):
    """A unit model was configured wrongly (bad option value, missing port).

    Parameters
    ----------
    field : str
        The option or port name relative to the unit, e.g. ``"utility"``.
    problem : str
        What is wrong and what was expected.

    Notes
    -----
    ``plantopt`` turns this into an input error that names the file and the
    full field path (``units.R1.utility``).
    """

    def __init__(self, field: str, problem: str):
        self.field = field
        self.problem = problem
        super().__init__(f"{field}: {problem}")


@dataclass(frozen=True)
class Port:
    """A stream connection of a unit.

    Parameters
    ----------
    name : str
        Key used in the flowsheet file, e.g. ``"inlet"``, ``"vapour"``.
    direction : {"in", "out"}
    variadic : bool
        True when the file gives a list of streams (a mixer's ``inlets``).
    phase : {"liquid", "vapour"} or None
        Phase of an outlet fixed by the model (a flash's ``vapour``); None
        means the model decides in :meth:`UnitModel.outlet_phases`.
    """

    name: str
    direction: str
    variadic: bool = False
    phase: str | None = None
    doc: str = ""


@dataclass(frozen=True)
class Var:
    """An internal variable of a unit model.

    Parameters
    ----------
    name : str
        Local name (unique within the unit), e.g. ``"Q"``, ``"xi[0]"``.
    unit : str
        SI unit string (``"W"``, ``"K"``, ``"mol/s"``, ``""`` for none).
    lower, upper : float
        Physical bounds in SI (not safety limits).
    nominal : float
        Typical magnitude, used to scale the variable for the solver.
    """

    name: str
    unit: str
    lower: float = -INF
    upper: float = INF
    nominal: float = 1.0
    doc: str = ""


@dataclass(frozen=True)
class Param:
    """A numeric input that enters a unit's equations.

    Parameters
    ----------
    name : str
        Key in the unit's table of the flowsheet file, e.g. ``"volume"``.
    kind : str
        Kind of quantity (``"volume"``, ``"conductance"``, ``"fraction"``;
        see ``plantopt.units.KINDS``) or an SI unit text for unusual
        dimensions (rate constants).
    default : float or None
        SI default; None means the file must give it.
    per_component : bool
        One value per component (e.g. a feed's ``composition``), given in
        the file as a table keyed by component name.
    address : str or None
        Address of the input when it is not ``units.<unit>.<name>`` (for
        reaction data shared by several reactors: ``reactions.r1.k0``).
    category : str
        What the input is, for listings: ``"equipment"``, ``"feed"``,
        ``"kinetics"``, ``"operating"``.
    """

    name: str
    kind: str
    default: float | None = None
    per_component: bool = False
    address: str | None = None
    category: str = "equipment"
    lower: float = -INF
    upper: float = INF
    doc: str = ""


@dataclass(frozen=True)
class Spec:
    """A specification the flowsheet file may fix (one degree of freedom).

    Parameters
    ----------
    name : str
        Key in the unit's table, e.g. ``"outlet_temperature"``, ``"duty"``.
    kind : str
        Kind of quantity, as for :class:`Param`.
    group : str
        Specifications of one group are alternatives: a heater takes an
        outlet temperature *or* a duty. Exactly one per group must be given
        (see :meth:`UnitModel.spec_groups`).
    """

    name: str
    kind: str
    group: str = ""
    doc: str = ""


@dataclass(frozen=True)
class Option:
    """A non-numeric choice of a unit (utility name, reaction list, mode)."""

    name: str
    type: type | tuple[type, ...]
    default: Any = None
    choices: tuple[Any, ...] | None = None
    doc: str = ""


@dataclass
class StreamSym:
    """Symbols of one stream at a port.

    Attributes
    ----------
    F : casadi.SX, shape (n_components, 1)
        Component molar flows, mol/s.
    T : casadi.SX, scalar
        Temperature, K.
    P : casadi.SX, scalar
        Pressure, Pa.
    phase : str
        ``"liquid"`` or ``"vapour"`` (structural, not a variable).
    """

    F: Any
    T: Any
    P: Any
    phase: str

    @property
    def total(self) -> Any:
        """Total molar flow, mol/s."""
        return ca.sum1(self.F)


@dataclass
class Symbols:
    """Everything a unit model's equations are written in.

    Attributes
    ----------
    streams : dict
        Port name to :class:`StreamSym` (or a list of them for variadic ports).
    x : dict
        Internal variable name to scalar symbol.
    p : dict
        Parameter name to symbol (a column of length ``n_components`` for
        per-component parameters).
    """

    streams: dict[str, Any]
    x: dict[str, Any]
    p: dict[str, Any]

    def port(self, name: str) -> StreamSym:
        s = self.streams[name]
        if isinstance(s, list):
            raise KeyError(f"port {name!r} is variadic; use ports()")
        return s

    def ports(self, name: str) -> list[StreamSym]:
        s = self.streams[name]
        return s if isinstance(s, list) else [s]


class UnitModel(ABC):
    """Base class of a steady-state unit model.

    Parameters
    ----------
    name : str
        The unit's name in the flowsheet (used in messages only).
    system : unitmodels.thermo.ComponentSystem
        Components and their property correlations (casadi-differentiable).
    options : mapping, optional
        Values of the :class:`Option` s the class declares.
    port_counts : mapping, optional
        Number of streams on each variadic port.
    reactions : sequence of unitmodels.kinetics.Reaction, optional
        Reactions the unit hosts (reactors only).

    Notes
    -----
    Subclasses set :attr:`kind` (the ``type`` key in flowsheet files) and
    implement :meth:`ports`, :meth:`residuals` and, where they have them,
    :meth:`variables`, :meth:`parameters`, :meth:`specs`,
    :meth:`spec_expression`, :meth:`outputs`, :meth:`heat_duty`, :meth:`work`.
    The equations must be written so that the residual count equals the
    number of unknowns (outlet streams and internal variables) minus the
    number of specifications the unit takes; :meth:`dof` documents it.
    """

    kind: ClassVar[str] = ""
    description: ClassVar[str] = ""
    options_declared: ClassVar[tuple[Option, ...]] = ()

    def __init__(
        self,
        name: str,
        system: Any,
        options: Mapping[str, Any] | None = None,
        port_counts: Mapping[str, int] | None = None,
        reactions: Sequence[Any] = (),
    ):
        self.name = name
        self.system = system
        self.reactions = list(reactions)
        self.port_counts = dict(port_counts or {})
        self.options = self._check_options(dict(options or {}))
        for p in self.ports():
            if p.variadic and self.port_counts.get(p.name, 0) < 1:
                raise UnitConfigError(p.name, "expected a list of at least one stream")
        self.validate()

    # ------------------------------------------------------------------ declarations
    @abstractmethod
    def ports(self) -> list[Port]:
        """The unit's ports."""

    def variables(self) -> list[Var]:
        """Internal variables (not the port streams)."""
        return []

    def parameters(self) -> list[Param]:
        """Numeric inputs that enter the equations."""
        return []

    def specs(self) -> list[Spec]:
        """Specifications the file may give (see :class:`Spec`)."""
        return []

    def spec_groups(self) -> dict[str, list[str]]:
        """Groups of alternative specifications; one of each must be given."""
        groups: dict[str, list[str]] = {}
        for s in self.specs():
            groups.setdefault(s.group or s.name, []).append(s.name)
        return groups

    def check_specs(self, given: set[str]) -> str | None:
        """Check which specifications a unit in a file gives.

        Parameters
        ----------
        given : set of str
            Names of the specifications present in the unit's table.

        Returns
        -------
        str or None
            An error message (naming the missing or conflicting keys), or
            None when the set is acceptable. The base rule is "exactly one
            of each group of :meth:`spec_groups`"; a class overrides it when
            its rule differs (a splitter takes N-1 of its N fractions).
        """
        known = {sp.name for sp in self.specs()}
        unknown = sorted(given - known)
        if unknown:
            return f"unknown specification(s) {', '.join(unknown)} for a {self.kind}; known: {', '.join(sorted(known)) or 'none'}"
        problems = []
        for group, names in self.spec_groups().items():
            hit = [n for n in names if n in given]
            if not hit:
                problems.append(f"missing {' or '.join(names)}")
            elif len(hit) > 1:
                problems.append(f"give only one of {', '.join(hit)}")
        return "; ".join(problems) or None

    @classmethod
    def conformance_case(cls, system: Any = None) -> "ConformanceCase":
        """A small, solvable example of this unit for the conformance suite
        (:mod:`unitmodels.testing`)."""
        raise NotImplementedError(f"{cls.__name__} has no conformance case")

    @classmethod
    def conformance_cases(cls, system: Any = None) -> list["ConformanceCase"]:
        """All examples of this unit (one per option mode worth covering);
        the default is :meth:`conformance_case` alone."""
        return [cls.conformance_case(system)]

    def validate(self) -> None:
        """Check options against components and reactions; raise UnitConfigError."""

    def outlet_phases(self, inlet_phases: Mapping[str, list[str]]) -> dict[str, str]:
        """Phase of each outlet port given the phases on the inlet ports.

        The default keeps the phase of the first inlet (or the port's fixed
        phase, or an ``outlet_phase`` option when the class declares one).
        For a variadic outlet port the one phase applies to every stream.
        """
        first = next((ph[0] for ph in inlet_phases.values() if ph), "liquid")
        forced = self.options.get("outlet_phase")
        out = {}
        for p in self.ports():
            if p.direction == "out":
                out[p.name] = p.phase or forced or first
        return out

    # ------------------------------------------------------------------ equations
    @abstractmethod
    def residuals(self, s: Symbols) -> list[Any]:
        """Residual expressions (each scalar SX), zero at a solution, in SI."""

    def residual_names(self) -> list[str]:
        """Names of the residuals, for structural diagnostics (same order)."""
        return [f"eq{i}" for i in range(self.n_residuals())]

    def residual_scales(self) -> list[float] | None:
        """Typical magnitude of each residual, or None to let the solver scale."""
        return None

    def spec_expression(self, name: str, s: Symbols) -> Any:
        """Expression (SI) that the specification ``name`` fixes."""
        raise UnitConfigError(name, f"{self.kind} has no specification {name!r}")

    def outputs(self, s: Symbols) -> dict[str, tuple[Any, str]]:
        """Derived quantities for reports and limits: name to (expression, SI unit)."""
        return {}

    def initial_guess(self, inlets: Mapping[str, list[tuple[Any, float, float]]]) -> dict[str, float]:
        """Start values of internal variables from numeric inlet streams.

        Parameters
        ----------
        inlets : mapping
            Port name to a list of ``(F, T, P)``: component flows (mol/s,
            numpy array), K, Pa.

        Returns
        -------
        dict
            Variable name to value; variables left out start at 0 (clipped
            into their bounds). Models with profiles (a discretised reactor)
            should start them at the inlet state, where 0 would leave
            compositions undefined.
        """
        return {}

    def heat_duty(self, s: Symbols) -> Any:
        """Heat added to the process from outside, W (negative when removed)."""
        return 0

    def work(self, s: Symbols) -> Any:
        """Shaft work added to the process, W."""
        return 0

    def utility(self) -> str | None:
        """Name of the utility that supplies :meth:`heat_duty` or :meth:`work`."""
        return self.options.get("utility")

    # ------------------------------------------------------------------ bookkeeping
    def dof(self) -> int:
        """Number of specifications this unit needs (its degrees of freedom
        once its inlet streams are known)."""
        return len(self.spec_groups())

    def n_residuals(self) -> int:
        return len(self.residuals(self.symbols()))

    def signature(self) -> tuple:
        """Hashable key: two units with the same key share one casadi Function."""
        return (
            type(self).__name__,
            self.system.signature() if hasattr(self.system, "signature") else id(self.system),
            tuple(sorted((k, _freeze(v)) for k, v in self.options.items())),
            tuple(sorted(self.port_counts.items())),
            tuple(getattr(r, "signature", lambda: id(r))() for r in self.reactions),
        )

    def _check_options(self, given: dict[str, Any]) -> dict[str, Any]:
        known = {o.name: o for o in self.options_declared}
        out: dict[str, Any] = {}
        for key, val in given.items():
            if key not in known:
                raise UnitConfigError(key, f"unknown option for a {self.kind}; known: {', '.join(sorted(known)) or 'none'}")
            o = known[key]
            if not isinstance(val, o.type):
                raise UnitConfigError(key, f"expected {_type_words(o.type)}, got {type(val).__name__} {val!r}")
            if o.choices is not None and val not in o.choices:
                raise UnitConfigError(key, f"expected one of {', '.join(map(repr, o.choices))}, got {val!r}")
            out[key] = val
        for o in self.options_declared:
            out.setdefault(o.name, o.default)
        return out

    # ------------------------------------------------------------------ symbols
    def port_layout(self, phases: Mapping[str, list[str]] | None = None) -> list[tuple[str, int, str]]:
        """(port, index, phase) of every stream slot, in the order of :meth:`symbols`."""
        layout = []
        for p in self.ports():
            count = self.port_counts.get(p.name, 1) if p.variadic else 1
            for i in range(count):
                ph = (phases or {}).get(p.name, [p.phase or "liquid"] * count)[i]
                layout.append((p.name, i, ph))
        return layout

    def symbols(self, phases: Mapping[str, list[str]] | None = None) -> Symbols:
        """Fresh SX symbols for every port stream, variable and parameter."""
        n = self.system.n
        streams: dict[str, Any] = {}
        for p in self.ports():
            count = self.port_counts.get(p.name, 1) if p.variadic else 1
            lst = []
            for i in range(count):
                ph = (phases or {}).get(p.name, [p.phase or "liquid"] * count)[i]
                tag = f"{p.name}{i}" if p.variadic else p.name
                lst.append(StreamSym(ca.SX.sym(f"F_{tag}", n), ca.SX.sym(f"T_{tag}"), ca.SX.sym(f"P_{tag}"), ph))
            streams[p.name] = lst if p.variadic else lst[0]
        x = {v.name: ca.SX.sym(v.name) for v in self.variables()}
        pp = {q.name: ca.SX.sym(q.name, n if q.per_component else 1) for q in self.parameters()}
        return Symbols(streams, x, pp)

    def flatten(self, s: Symbols) -> tuple[Any, Any]:
        """Stack a :class:`Symbols` into (z, p): z = port streams then variables,
        each stream as [F (n), T, P]; p = parameters in declaration order."""
        parts = []
        for p in self.ports():
            for st in s.ports(p.name):
                parts += [st.F, st.T, st.P]
        parts += [s.x[v.name] for v in self.variables()]
        z = ca.vertcat(*parts) if parts else ca.SX(0, 1)
        ps = [s.p[q.name] for q in self.parameters()]
        return z, (ca.vertcat(*ps) if ps else ca.SX(0, 1))


def _freeze(v: Any) -> Any:
    if isinstance(v, (list, tuple)):
        return tuple(_freeze(x) for x in v)
    if isinstance(v, dict):
        return tuple(sorted((k, _freeze(x)) for k, x in v.items()))
    return v


def _type_words(t: type | tuple[type, ...]) -> str:
    ts = t if isinstance(t, tuple) else (t,)
    words = {str: "a string", bool: "true or false", int: "an integer", float: "a number", list: "a list"}
    return " or ".join(words.get(x, x.__name__) for x in ts)


@dataclass
class ConformanceCase:
    """An example of one unit for :mod:`unitmodels.testing`.

    Attributes
    ----------
    unit : UnitModel
        A configured instance.
    inlets : dict
        Inlet port name to a list of ``(F, T, P, phase)`` with ``F`` a
        sequence of n component flows (mol/s), ``T`` in K, ``P`` in Pa.
    specs : dict
        Specification name to SI value (exactly the set the unit needs).
    params : dict
        Parameter name to SI value (a sequence for per-component ones);
        parameters with a default may be omitted.
    guess : dict
        Optional starting point: outlet port name to a list of ``(F, T, P)``
        and internal variable name to a number. Missing entries start from
        the first inlet stream and the variables' nominal values.
    reacting : bool
        True for reactors: the suite then checks element balances instead
        of component balances.
    """

    unit: "UnitModel"
    inlets: dict[str, list[tuple[Any, float, float, str]]]
    specs: dict[str, float] = field(default_factory=dict)
    params: dict[str, Any] = field(default_factory=dict)
    guess: dict[str, Any] = field(default_factory=dict)
    reacting: bool = False


REGISTRY: dict[str, type[UnitModel]] = {}


def register(cls: type[UnitModel]) -> type[UnitModel]:
    """Class decorator: make a unit model available under ``cls.kind``."""
    if not cls.kind:
        raise ValueError(f"{cls.__name__} has no kind")
    if cls.kind in REGISTRY and REGISTRY[cls.kind] is not cls:
        raise ValueError(f"unit kind {cls.kind!r} registered twice")
    REGISTRY[cls.kind] = cls
    return cls
