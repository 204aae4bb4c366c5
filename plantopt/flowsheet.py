"""Loading and checking a flowsheet file into a :class:`Flowsheet`.

Every problem in a file is collected and reported together as
:class:`plantopt.errors.InputErrors`: unknown keys, wrong units, unknown
components, dangling or doubly connected ports, duplicate names, mole
fractions that do not sum to one, negative flows, non-finite numbers.

Every numeric input gets an *address* (``units.R1.volume``,
``economics.feeds.FEED_A``, ``limits.reactor_temperature.upper``) through
which later commands override (``--set``) or vary it without rebuilding the
equation system.
"""

from __future__ import annotations

import functools
import hashlib
import math
import os
import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Iterable, Mapping

import pint
from pydantic import ValidationError

import unitmodels  # noqa: F401  (registers the unit models)
import unitmodels.units  # noqa: F401  (the unit-model classes)
from plantopt import units as U
from plantopt.errors import DimensionError, InputError, InputErrors
from plantopt.schema import FlowsheetFile
from unitmodels.base import REGISTRY, UnitConfigError, UnitModel

MAX_FILE_BYTES = 4 * 1024 * 1024
"""Default largest input file accepted (bytes): far above any real flowsheet, small enough to parse at once."""

MAX_INPUT_ENV = "PLANTOPT_MAX_INPUT_MB"
"""Environment variable with the largest input file accepted, in MB (MiB); ``--max-input-mb`` overrides it."""

_max_bytes_setting: int | None = None


def set_max_input_bytes(n: int | None) -> None:
    """Set the size limit every input reader uses (``None``: environment or default).

    The command line sets it once from ``--max-input-mb`` so that every
    command, including ones that read several files, obeys the same limit.
    """
    global _max_bytes_setting
    _max_bytes_setting = n


def parse_megabytes(text: str, *, file: str, path: str) -> int:
    """A size limit given in MB (MiB) as text, in bytes; refuses non-positive or non-finite values."""
    try:
        mb = float(text)
    except (TypeError, ValueError):
        raise InputError(file, path, f"expected a positive number of megabytes, got {text!r}") from None
    if not math.isfinite(mb) or mb <= 0 or mb > 1024 * 1024:
        raise InputError(file, path, f"expected a positive number of megabytes (at most 1048576), got {text!r}")
    return max(1, int(mb * 1024 * 1024))


def max_input_bytes() -> int:
    """The size limit in force: the command-line setting, else the environment variable, else the default."""
    if _max_bytes_setting is not None:
        return _max_bytes_setting
    env = os.environ.get(MAX_INPUT_ENV)
    if env is not None and env.strip():
        return parse_megabytes(env.strip(), file="<environment>", path=MAX_INPUT_ENV)
    return MAX_FILE_BYTES


def read_input_bytes(path: str | Path, *, max_bytes: int | None = None, what: str = "a flowsheet file") -> bytes:
    """Read an input file whole, refusing missing, unreadable and oversized files.

    The size is checked before reading so a huge file (or a device such as
    ``/dev/zero``) is never loaded into memory.

    Raises
    ------
    InputErrors
        One error naming the file.
    """
    limit = max_input_bytes() if max_bytes is None else max_bytes
    p = Path(path)
    try:
        if p.is_dir():
            raise InputErrors([InputError(str(path), "", f"is a directory, expected {what}")])
        if not p.exists():
            raise InputErrors([InputError(str(path), "", "file not found")])
        if not p.is_file():
            raise InputErrors([InputError(str(path), "", f"not a regular file, expected {what}")])
        size = p.stat().st_size
        if size > limit:
            raise InputErrors([_too_big(str(path), size, limit)])
        with p.open("rb") as fh:
            raw = fh.read(limit + 1)
    except OSError as exc:
        raise InputErrors([InputError(str(path), "", f"cannot read file ({exc.strerror or exc})")]) from None
    if len(raw) > limit:  # grew while reading
        raise InputErrors([_too_big(str(path), len(raw), limit)])
    return raw


def _too_big(fname: str, size: int, limit: int) -> InputError:
    return InputError(fname, "", f"file is {size} bytes, larger than the limit of {limit} bytes "
                                 f"(raise it with 'plantopt --max-input-mb N' or {MAX_INPUT_ENV})")


STREAM_QUANTITIES = {
    "temperature": "temperature",
    "pressure": "pressure",
    "molar_flow": "molar_flow",
    "mass_flow": "mass_flow",
}
STREAM_COMPONENT_QUANTITIES = {
    "mole_fraction": "fraction",
    "mass_fraction": "fraction",
    "component_flow": "molar_flow",
    "component_mass_flow": "mass_flow",
}

# Where an input lives once the equation system is built.
WHERE_PARAM = "param"      # an entry of the NLP parameter vector p
WHERE_SPEC = "spec"        # the value a specification row is fixed to
WHERE_LIMIT = "limit"      # a bound of a limit row
WHERE_DECISION = "decision"  # a bound of a decision's range


@dataclass
class InputValue:
    """One addressable numeric input.

    Attributes
    ----------
    path : str
        Address, e.g. ``units.R1.volume``.
    category : str
        ``price``, ``limit``, ``decision``, ``feed``, ``equipment``,
        ``kinetics``, ``specification``, ``utility``, ``fixed``.
    kind : plantopt.units.Kind
        What quantity it is (fixes the SI unit).
    si : float
        Current value in the internal SI unit.
    unit : str
        Unit the file used (values are shown and ``--set`` numbers read in it).
    where : str
        One of the ``WHERE_*`` constants.
    """

    path: str
    category: str
    kind: U.Kind
    si: float
    unit: str
    where: str
    lower: float = -math.inf
    upper: float = math.inf

    def display(self) -> float:
        return U.from_si(self.si, self.kind, self.unit) if self.unit else self.si


@dataclass
class StreamInfo:
    """A stream: which port it leaves and which it enters."""

    name: str
    source: tuple[str, str, int] | None = None  # (unit, port, index)
    dest: tuple[str, str, int] | None = None
    phase: str = "liquid"


@dataclass
class LimitInfo:
    name: str
    quantity: str
    kind: str  # safety | spec | bound
    qkind: U.Kind
    unit: str
    description: str = ""
    lower_path: str | None = None
    upper_path: str | None = None


@dataclass
class DecisionInfo:
    name: str
    input: str  # address of the specification
    unit_name: str
    spec: str
    qkind: U.Kind
    unit: str
    description: str = ""

    @property
    def lower_path(self) -> str:
        return f"decisions.{self.name}.lower"

    @property
    def upper_path(self) -> str:
        return f"decisions.{self.name}.upper"


@dataclass
class UtilityInfo:
    name: str
    type: str
    price_path: str
    # SI energy per priced amount: J per kg for steam or water priced per
    # mass; 1 for prices per energy.
    energy_per_amount: float = 1.0
    efficiency: float = 1.0


@dataclass
class Flowsheet:
    """A checked flowsheet, ready to assemble.

    Attributes
    ----------
    file : str
        File name used in messages.
    sha256 : str
        Hash of the file's bytes (reports quote it).
    """

    file: str
    sha256: str
    name: str
    description: str
    notice: str
    display: dict[str, str]
    system: Any
    reactions: dict[str, Any]
    units: dict[str, UnitModel]
    unit_types: dict[str, str]
    streams: dict[str, StreamInfo]
    specs: dict[str, dict[str, str]]  # unit -> spec name -> input path
    inputs: dict[str, InputValue]
    limits: list[LimitInfo]
    decisions: list[DecisionInfo]
    utilities: dict[str, UtilityInfo]
    feed_prices: dict[str, str]  # feed unit -> input path
    product_prices: dict[str, str]
    disposal_prices: dict[str, str]
    fixed_costs: list[str]
    profit_unit: str
    split_index: dict[tuple[str, str], int] = field(default_factory=dict)

    # ------------------------------------------------------------------ inputs
    def set_input(self, path: str, value: Any, *, source: str = "<command line>") -> None:
        """Override one input by address; a bare number is in the file's unit.

        Raises
        ------
        InputError
            Unknown address, wrong unit, or a value outside the input's range.
        """
        if path not in self.inputs:
            near = [p for p in self.inputs if p.split(".")[-1] == path.split(".")[-1]][:3]
            hint = f" (did you mean {', '.join(near)}?)" if near else " (see 'plantopt inputs')"
            raise InputError(source, path, f"no such input{hint}")
        iv = self.inputs[path]
        if isinstance(value, str):
            try:
                num = float(value)
            except ValueError:
                text: Any = value
            else:
                if not math.isfinite(num):
                    raise InputError(source, path, f"expected a finite number, got {value!r}")
                text = f"{value.strip()} {iv.unit}" if iv.unit else num
        else:
            text = f"{value} {iv.unit}" if iv.unit else value
        q = U.parse_quantity(text, iv.kind, file=source, path=path)
        si = U.to_si(q, iv.kind)
        if abs(si) > _absurd_limit(iv.kind):
            raise InputError(source, path, f"value {value!r} is absurdly large")
        if not (iv.lower <= si <= iv.upper):
            raise InputError(source, path, f"expected {_range_words(iv)}, got {value!r}")
        iv.si = si

    def with_overrides(self, overrides: Mapping[str, Any] | None, *, source: str = "<command line>") -> "Flowsheet":
        """A copy with every override applied and the result checked as a whole.

        Each override is checked alone (address, unit, range) and then the
        combination: a decision's lower bound not above its upper bound and
        its base value inside them, a limit's lower bound not above its upper,
        a feed composition summing to one. Every problem is reported at once.

        Raises
        ------
        InputErrors
        """
        new = self.copy()
        errors: list[InputError] = []
        for path, value in (overrides or {}).items():
            try:
                new.set_input(path, value, source=source)
            except InputError as e:
                errors.append(e)
        if errors:
            raise InputErrors(errors)
        touched = set(overrides or {})
        for d in new.decisions:
            if not touched & {d.input, d.lower_path, d.upper_path}:
                continue
            lo, hi, base = new.inputs[d.lower_path], new.inputs[d.upper_path], new.inputs[d.input]
            if lo.si > hi.si:
                errors.append(InputError(source, f"decisions.{d.name}", f"lower {lo.display():g} {lo.unit} is above upper {hi.display():g} {hi.unit}"))
            # 1e-8 relative: a solver's optimum on a bound may sit that far past it
            elif not lo.si - 1e-8 * max(abs(lo.si), 1.0) <= base.si <= hi.si + 1e-8 * max(abs(hi.si), 1.0):
                errors.append(InputError(source, d.input, f"the base value {base.display():g} {base.unit} lies outside the range "
                                                          f"of decisions.{d.name} [{lo.display():g}, {hi.display():g}] {lo.unit}"))
        for lim in new.limits:
            if lim.lower_path and lim.upper_path and touched & {lim.lower_path, lim.upper_path}:
                lo, hi = new.inputs[lim.lower_path], new.inputs[lim.upper_path]
                if lo.si > hi.si:
                    errors.append(InputError(source, f"limits.{lim.name}", f"lower {lo.display():g} is above upper {hi.display():g} {hi.unit}"))
        for prefix in {p.rsplit(".", 1)[0] for p in touched if ".composition." in p}:
            total = sum(iv.si for p, iv in new.inputs.items() if p.rsplit(".", 1)[0] == prefix)
            if abs(total - 1.0) > 1e-6:
                errors.append(InputError(source, prefix, f"mole fractions sum to {total:.6g}, expected 1"))
        if errors:
            raise InputErrors(errors)
        return new

    def value(self, path: str) -> float:
        return self.inputs[path].si

    def copy(self) -> "Flowsheet":
        """A copy whose input values can be changed independently (models are shared)."""
        new = replace(self)
        new.inputs = {k: replace(v) for k, v in self.inputs.items()}
        return new

    @property
    def feeds(self) -> list[str]:
        return [u for u, t in self.unit_types.items() if t == "feed"]

    @property
    def products(self) -> list[str]:
        return [u for u, t in self.unit_types.items() if t == "product"]


# ---------------------------------------------------------------------- loading
def load_flowsheet(path: str | Path, *, max_bytes: int | None = None) -> Flowsheet:
    """Read, validate and check a flowsheet file.

    Parameters
    ----------
    path : str or Path
        The TOML file.
    max_bytes : int, optional
        Files larger than this are refused before parsing; default
        :func:`max_input_bytes` (``--max-input-mb``, ``PLANTOPT_MAX_INPUT_MB``
        or :data:`MAX_FILE_BYTES`).

    Returns
    -------
    Flowsheet

    Raises
    ------
    InputErrors
        Every problem found, each naming the file and field.
    """
    limit = max_input_bytes() if max_bytes is None else max_bytes
    raw = read_input_bytes(path, max_bytes=limit)
    return loads_flowsheet(raw, Path(path).name, max_bytes=limit)


def loads_flowsheet(raw: bytes | str, fname: str = "<string>", *, max_bytes: int | None = None) -> Flowsheet:
    """Like :func:`load_flowsheet` from the file's bytes or text."""
    limit = max_input_bytes() if max_bytes is None else max_bytes
    data_bytes = raw.encode("utf-8", "surrogateescape") if isinstance(raw, str) else raw
    if len(data_bytes) > limit:
        raise InputErrors([_too_big(fname, len(data_bytes), limit)])
    if not data_bytes.strip():
        raise InputErrors([InputError(fname, "", "file is empty, expected a flowsheet")])
    try:
        text = data_bytes.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data_bytes[: exc.start].count(b"\n") + 1
        raise InputErrors([InputError(fname, f"line {line}", f"not UTF-8 text (byte {exc.start}); save the file as UTF-8")]) from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputErrors([InputError(fname, "", f"not valid TOML: {_toml_context(exc, text)}")]) from None
    except RecursionError:
        raise InputErrors([InputError(fname, "", "tables or lists nested too deeply")]) from None
    except ValueError as exc:  # an integer longer than Python converts (sys.int_info)
        why = "an integer with more than 4300 digits" if "digits" in str(exc) else str(exc)
        raise InputErrors([InputError(fname, "", f"not valid TOML: {why}")]) from None
    deep = _too_deep(data)
    if deep is not None:
        raise InputErrors([InputError(fname, deep, f"tables or lists nested more than {MAX_DEPTH} deep; a flowsheet needs at most 5")])
    try:
        doc = FlowsheetFile.model_validate(data)
    except ValidationError as exc:
        raise InputErrors(_pyd_errors(fname, exc.errors())) from None
    return _Builder(fname, hashlib.sha256(data_bytes).hexdigest(), doc).build()


MAX_DEPTH = 12
"""Deepest nesting of tables and lists accepted (the deepest real key, e.g. ``economics.utilities.X.price``, is 4)."""


def _too_deep(obj: Any, path: tuple[str, ...] = (), level: int = 0) -> str | None:
    """Address (table keys only) of a value nested deeper than :data:`MAX_DEPTH`, or None."""
    if level > MAX_DEPTH:
        return ".".join(path) or "<top level>"
    if isinstance(obj, dict):
        items = [(path + (str(k),), v) for k, v in obj.items()]
    elif isinstance(obj, list):
        items = [(path, v) for v in obj]  # list positions add depth, not names
    else:
        return None
    for sub, v in items:
        if isinstance(v, (dict, list)):
            found = _too_deep(v, sub, level + 1)
            if found is not None:
                return found
    return None


def _toml_context(exc: Exception, text: str) -> str:
    """The parser's message plus the offending line, so a duplicate key is found at once."""
    import re

    msg = str(exc)
    m = re.search(r"line (\d+)", msg)
    if not m:
        return msg
    lines = text.splitlines()
    n = int(m.group(1))
    if 1 <= n <= len(lines):
        shown = lines[n - 1].strip()
        shown = shown if len(shown) <= 80 else shown[:77] + "..."
        hint = " (a key or table given twice?)" if ("overwrite" in msg.lower() or "twice" in msg) else ""
        return f"{msg}: {shown!r}{hint}"
    return msg


# Members of a union (``str | float | int``) appear in pydantic's error
# locations as tags; they are not part of the file's address.
_UNION_TAGS = {"str", "constrained-str", "float", "int", "bool", "list", "dict"}
_EXPECTED = {
    "string_type": "text", "float_type": "a number", "float_parsing": "a number", "int_type": "a number",
    "int_parsing": "a number", "int_from_float": "a whole number", "bool_type": "true or false",
    "bool_parsing": "true or false", "dict_type": "a table", "model_type": "a table", "list_type": "a list",
}


def describe_value(v: Any) -> str:
    """A TOML value described in the file's own terms, for messages (kept short)."""
    if isinstance(v, bool):
        return f"the boolean {str(v).lower()}"
    if isinstance(v, (int, float)):
        text = str(v)
        return f"the number {text if len(text) <= 24 else text[:12] + '...'}"
    if isinstance(v, str):
        return f"the text {v[:60]!r}" + ("..." if len(v) > 60 else "")
    if isinstance(v, dict):
        return "a table"
    if isinstance(v, list):
        return "a list"
    return f"a {type(v).__name__}"  # TOML dates and times


def _pyd_errors(fname: str, errors: list[dict]) -> list[InputError]:
    """Pydantic errors as input errors: one per field, union alternatives merged."""
    grouped: dict[str, list[dict]] = {}
    for e in errors:
        loc = [str(x) for x in e.get("loc", ())]
        while loc and (loc[-1] in _UNION_TAGS or loc[-1].startswith("function-")):
            loc.pop()
        grouped.setdefault(".".join(loc), []).append(e)
    out = []
    for path, errs in grouped.items():
        types = [e.get("type", "") for e in errs]
        e0 = errs[0]
        if "extra_forbidden" in types:
            out.append(InputError(fname, path, "unknown key (check the spelling)"))
        elif "missing" in types:
            out.append(InputError(fname, path, "missing (required)"))
        elif all(t in _EXPECTED for t in types):
            wanted = list(dict.fromkeys(_EXPECTED[t] for t in types))
            if "text" in wanted and "a number" in wanted:
                wanted = ["a quantity as text such as '1.5 kg' (or a number where no unit is needed)"]
            out.append(InputError(fname, path, f"expected {' or '.join(wanted)}, got {describe_value(e0.get('input'))}"))
        elif e0.get("type") == "value_error":
            out.append(InputError(fname, path, str(e0.get("ctx", {}).get("error", e0.get("msg", "invalid")))))
        else:
            msg = e0.get("msg", "invalid").replace("Input should be", "expected")
            out.append(InputError(fname, path, f"{msg}, got {describe_value(e0.get('input'))}"))
    return out


class _Builder:
    """Turns a shape-checked file into a :class:`Flowsheet`, collecting errors."""

    def __init__(self, fname: str, sha: str, doc: FlowsheetFile):
        self.f = fname
        self.sha = sha
        self.doc = doc
        self.errors: list[InputError] = []
        self.inputs: dict[str, InputValue] = {}
        self.failed_components: set[str] = set()

    def err(self, path: str, problem: str) -> None:
        self.errors.append(InputError(self.f, path, problem))

    def quantity(self, value: Any, kind: str | U.Kind, path: str) -> pint.Quantity | None:
        try:
            q = U.parse_quantity(value, kind, file=self.f, path=path)
        except InputError as e:
            self.errors.append(e)
            return None
        k = U.resolve_kind(kind)
        if abs(U.to_si(q, k)) > _absurd_limit(k):
            self.err(path, f"value {value!r} is absurdly large")
            return None
        return q

    def add_input(self, path: str, value: Any, kind: str | U.Kind, category: str, where: str,
                  lower: float = -math.inf, upper: float = math.inf) -> InputValue | None:
        k = U.resolve_kind(kind)
        q = self.quantity(value, k, path)
        if q is None:
            return None
        si = U.to_si(q, k)
        if not (lower <= si <= upper):
            rng = {(0.0, math.inf): "not negative"}.get((lower, upper), f"between {lower:g} and {upper:g} (SI)")
            self.err(path, f"expected a value {rng}, got {value!r}")
            return None
        unit = (U.unit_text(value) or U.unit_of(q)) if k.si != "dimensionless" else ""
        iv = InputValue(path, category, k, si, unit, where, lower, upper)
        self.inputs[path] = iv
        return iv

    # ------------------------------------------------------------------ pieces
    def components(self):
        from unitmodels.thermo import Component, ComponentSystem

        comps = []
        for cid, c in self.doc.components.items():
            base = f"components.{cid}"
            n_errors = len(self.errors)
            self._component(cid, c, base, comps, Component)
            if len(self.errors) > n_errors:
                # its own error is reported; references to it elsewhere are not errors too
                self.failed_components.add(cid)
        if not comps:
            if not self.doc.components:
                self.err("components", "no components given")
            return None
        return ComponentSystem(comps)

    def _component(self, cid: str, c: Any, base: str, comps: list, Component: Any) -> None:
        """Build one component into ``comps`` or record why it cannot be built."""
        if True:  # (body kept at its original indentation)
            try:
                if c.source:
                    extra = [k for k in ("molar_mass", "formation_enthalpy", "cp_gas", "cp_liquid", "liquid_density", "vaporisation_enthalpy", "antoine") if getattr(c, k) is not None]
                    if extra:
                        self.err(f"{base}.{extra[0]}", "give either 'source' (property data by name or CAS) or user-defined data, not both")
                        return
                    comp = _component_from_name(c.source)
                    comps.append(replace(comp, name=cid))
                else:
                    need = {"molar_mass": "molar_mass", "formation_enthalpy": "molar_energy", "cp_gas": "heat_capacity_molar",
                            "cp_liquid": "heat_capacity_molar", "liquid_density": "density", "vaporisation_enthalpy": "molar_energy"}
                    vals = {}
                    for key, kind in need.items():
                        v = getattr(c, key)
                        if v is None:
                            self.err(f"{base}.{key}", "missing (a user-defined component needs it; or give 'source')")
                            continue
                        q = self.quantity(v, kind, f"{base}.{key}")
                        if q is None:
                            continue
                        si = U.to_si(q, kind)
                        if key != "formation_enthalpy" and si <= 0:
                            # masses, densities, heat capacities and latent heats are positive by nature
                            self.err(f"{base}.{key}", f"expected a positive value, got {v!r}")
                            continue
                        vals[key] = si
                    if c.antoine is None:
                        self.err(f"{base}.antoine", "missing (a user-defined component needs Antoine a, b, c for log10(P/Pa) = a - b/(T/K + c))")
                    if len(vals) < len(need) or c.antoine is None:
                        return
                    comps.append(Component.from_data(
                        name=cid, molar_mass=vals["molar_mass"], formation_enthalpy=vals["formation_enthalpy"],
                        cp_gas=vals["cp_gas"], cp_liquid=vals["cp_liquid"], antoine_a=c.antoine.a, antoine_b=c.antoine.b,
                        antoine_c=c.antoine.c, liquid_density=vals["liquid_density"], hvap_298=vals["vaporisation_enthalpy"],
                        formula=c.formula))
            except (KeyError, ValueError, LookupError, TypeError) as exc:
                # UnitConfigError carries the bare problem; its str() repeats a field name
                msg = getattr(exc, "problem", None) or (exc.args[0] if exc.args else str(exc))
                self.err(f"{base}.source" if c.source else base, f"unknown component or incomplete property data: {msg}")

    def reactions(self, system):
        from unitmodels.kinetics import Reaction

        out = {}
        for rid, r in self.doc.reactions.items():
            base = f"reactions.{rid}"
            bad = False
            for table in ("stoichiometry", "orders", "reverse_orders"):
                for comp in (getattr(r, table) or {}):
                    if comp in self.failed_components:
                        bad = True  # the component's own error is the one to fix
                    elif system is not None and comp not in system.names:
                        self.err(f"{base}.{table}.{comp}", f"unknown component (known: {', '.join(system.names)})")
                        bad = True
            if bad or system is None:
                continue
            t_ref = None
            if r.reference_temperature is not None:
                q = self.quantity(r.reference_temperature, "temperature", f"{base}.reference_temperature")
                if q is None:
                    continue
                t_ref = U.to_si(q, "temperature")
            try:
                rx = Reaction(rid, dict(r.stoichiometry), dict(r.orders) if r.orders is not None else None,
                              basis=r.basis, rate_per=r.rate_per, reversible=r.reversible,
                              reverse_orders=dict(r.reverse_orders) if r.reverse_orders is not None else None,
                              reference_temperature=t_ref)
                rx.validate(system)
            except UnitConfigError as e:
                self.err(e.field if e.field.startswith("reactions.") else f"{base}.{e.field}", e.problem)
                continue
            for prm in rx.parameters():
                name = prm.address.split(".")[-1] if prm.address else prm.name
                val = getattr(r, name, None)
                if val is None:
                    self.err(f"{base}.{name}", "missing")
                    continue
                self.add_input(prm.address or f"{base}.{name}", val, prm.kind, "kinetics", WHERE_PARAM, prm.lower, prm.upper)
            out[rid] = rx
        return out

    def units(self, system, reactions):
        models: dict[str, UnitModel] = {}
        types: dict[str, str] = {}
        streams: dict[str, StreamInfo] = {}
        specs: dict[str, dict[str, str]] = {}
        split_index: dict[tuple[str, str], int] = {}
        # streams named by units that could not be built: their other ends are
        # not reported as dangling (the unit's own error is the one to fix)
        self.unbuilt_streams: set[str] = set()
        if not self.doc.units:
            self.err("units", "no unit operations given")
        for uid, table in self.doc.units.items():
            base = f"units.{uid}"
            if not isinstance(table, dict):
                self.err(base, "expected a table")
                continue
            n_errors = len(self.errors)
            model = self._unit(uid, table, system, reactions, models, types, streams, specs, split_index)
            if model is None:
                for v in table.values():
                    for name in (v if isinstance(v, list) else [v]):
                        if isinstance(name, str):
                            self.unbuilt_streams.add(name)
        for sname, st in streams.items():
            if sname in self.unbuilt_streams:
                continue
            if st.source is None:
                u, p, _ = st.dest
                self.err(f"units.{u}.{p}", f"stream {sname!r} enters here but no unit produces it (a feed or an outlet)")
            if st.dest is None:
                u, p, _ = st.source
                self.err(f"units.{u}.{p}", f"stream {sname!r} leaves here but no unit takes it in (add a product unit)")
        if not self.errors:
            self._check_paths(models, types, streams)
        return models, types, streams, specs, split_index

    def _check_paths(self, models: dict[str, UnitModel], types: dict[str, str], streams: dict[str, StreamInfo]) -> None:
        """Every unit must lie on a path from a feed to a product.

        A closed loop of units with no feed or no way out has flows the
        balances cannot fix (any circulating amount satisfies them), which the
        structure check would only report as unnamed unmatched variables.
        """
        nxt: dict[str, set[str]] = {u: set() for u in models}
        prv: dict[str, set[str]] = {u: set() for u in models}
        for st in streams.values():
            if st.source and st.dest:
                nxt[st.source[0]].add(st.dest[0])
                prv[st.dest[0]].add(st.source[0])

        def reach(starts: list[str], edges: dict[str, set[str]]) -> set[str]:
            seen, todo = set(starts), list(starts)
            while todo:
                for v in edges[todo.pop()]:
                    if v not in seen:
                        seen.add(v)
                        todo.append(v)
            return seen

        from_feed = reach([u for u, t in types.items() if t == "feed"], nxt)
        to_product = reach([u for u, t in types.items() if t == "product"], prv)
        for uid in models:
            if uid not in from_feed:
                self.err(f"units.{uid}", "no feed reaches this unit (every unit needs a path from a feed unit)")
            elif uid not in to_product:
                self.err(f"units.{uid}", "no path from this unit to a product unit (its outlets must end in a product)")

    def _unit(self, uid: str, table: dict, system, reactions, models, types, streams, specs, split_index) -> UnitModel | None:
        """Check and build one unit; record its streams, parameters and specifications."""
        base = f"units.{uid}"
        if True:  # (body kept at its original indentation)
            t = table.get("type")
            if t is None:
                self.err(f"{base}.type", f"missing (one of: {', '.join(sorted(REGISTRY))})")
                return None
            # the type is only ever a key of the registry dict: nothing named in a file is imported
            if not isinstance(t, str):
                self.err(f"{base}.type", f"expected a unit type as text (one of: {', '.join(sorted(REGISTRY))}), got {describe_value(t)}")
                return None
            if t not in REGISTRY:
                self.err(f"{base}.type", f"unknown unit type {t!r} (known: {', '.join(sorted(REGISTRY))})")
                return None
            cls = REGISTRY[t]
            # ports are declared on the class; an instance is needed for counts
            probe_ports = cls.ports(cls.__new__(cls))  # ports() must not depend on options
            port_counts = {}
            connections = {}
            for port in probe_ports:
                v = table.get(port.name)
                if v is None:
                    self.err(f"{base}.{port.name}", f"missing ({'a list of stream names' if port.variadic else 'a stream name'})")
                    continue
                names = v if port.variadic else [v]
                if not isinstance(names, list) or not all(isinstance(n, str) and n for n in names) or (port.variadic and not names):
                    self.err(f"{base}.{port.name}", f"expected {'a list of stream names' if port.variadic else 'a stream name'}, got {describe_value(v)}")
                    continue
                if port.variadic:
                    port_counts[port.name] = len(names)
                connections[port.name] = names
            option_names = {o.name for o in cls.options_declared}
            options = {k: v for k, v in table.items() if k in option_names}
            if t in ("cstr",) or "reactions" in option_names:
                pass
            rx_list = []
            if "reactions" in options:
                rnames = options["reactions"]
                if isinstance(rnames, list):
                    for rn in rnames:
                        if not isinstance(rn, str):
                            self.err(f"{base}.reactions", f"expected a list of reaction names, got {describe_value(rn)} in it")
                            return None
                        if rn not in reactions:
                            if rn not in self.doc.reactions:
                                self.err(f"{base}.reactions", f"unknown reaction {rn!r} (known: {', '.join(self.doc.reactions) or 'none'})")
                                continue
                            return None  # the reaction's own error is reported; this unit cannot be built without it
                        rx_list.append(reactions[rn])
            if system is None or len(connections) < len(probe_ports):
                return None
            try:
                model = cls(uid, system, options=options, port_counts=port_counts, reactions=rx_list)
            except UnitConfigError as e:
                self.err(f"{base}.{e.field}", e.problem)
                return None
            except (TypeError, ValueError, KeyError, AttributeError, IndexError) as e:
                # a unit model that does not check an option's type itself: still an input problem, not a crash
                self.err(base, f"invalid options for a {t} ({', '.join(sorted(options)) or 'none'}): {type(e).__name__}: {e}")
                return None
            models[uid] = model
            types[uid] = t
            for port in model.ports():
                for i, sname in enumerate(connections[port.name]):
                    st = streams.setdefault(sname, StreamInfo(sname))
                    end = (uid, port.name, i)
                    if port.direction == "out":
                        if st.source is not None:
                            self.err(f"{base}.{port.name}", f"stream {sname!r} already leaves units.{st.source[0]}.{st.source[1]}; a stream has one source")
                        st.source = end
                    else:
                        if st.dest is not None:
                            self.err(f"{base}.{port.name}", f"stream {sname!r} already enters units.{st.dest[0]}.{st.dest[1]}; a stream has one destination (use a splitter)")
                        st.dest = end
            # numeric keys: parameters and specifications
            params = {prm.name: prm for prm in model.parameters() if not prm.address}
            spec_decl = {sp.name: sp for sp in model.specs()}
            known = {"type"} | {p.name for p in probe_ports} | option_names | set(params) | {s.split(".")[0] for s in spec_decl}
            for key in table:
                if key not in known:
                    self.err(f"{base}.{key}", f"unknown key for a {t} (known: {', '.join(sorted(known - {'type'}))})")
            for prm in params.values():
                v = table.get(prm.name)
                path = f"{base}.{prm.name}"
                if prm.per_component:
                    if v is None:
                        if prm.default is None:
                            self.err(path, f"missing (a table of component values: {', '.join(system.names)})")
                            continue
                        v = {}
                    if not isinstance(v, dict):
                        self.err(path, f"expected a table keyed by component ({', '.join(system.names)})")
                        continue
                    ok_sum = True
                    for comp in v:
                        if comp in self.failed_components:
                            ok_sum = False  # its fraction is not counted; the sum would mislead
                        elif comp not in system.names:
                            self.err(f"{path}.{comp}", f"unknown component (known: {', '.join(system.names)})")
                    total = 0.0
                    ok = ok_sum
                    for comp in system.names:
                        iv = self.add_input(f"{path}.{comp}", v.get(comp, prm.default if prm.default is not None else 0.0),
                                            prm.kind, prm.category, WHERE_PARAM, prm.lower, prm.upper)
                        ok = ok and iv is not None
                        total += iv.si if iv else 0.0
                    if ok and prm.name == "composition" and abs(total - 1.0) > 1e-6:
                        self.err(path, f"mole fractions sum to {total:.6g}, expected 1")
                else:
                    if v is None:
                        if prm.default is None:
                            self.err(path, f"missing ({U.resolve_kind(prm.kind).noun})")
                            continue
                        iv = InputValue(path, prm.category, U.resolve_kind(prm.kind), float(prm.default),
                                        U.si_unit_text(prm.kind), WHERE_PARAM, prm.lower, prm.upper)
                        self.inputs[path] = iv
                    else:
                        self.add_input(path, v, prm.kind, prm.category, WHERE_PARAM, prm.lower, prm.upper)
            # specifications
            given: dict[str, str] = {}
            present: set[str] = set()  # given in the file, valid or not (no follow-on "missing")
            variadic_out = [p for p in model.ports() if p.variadic]
            for sname, sp in spec_decl.items():
                head, _, idx = sname.partition(".")
                if idx:
                    tbl = table.get(head)
                    if tbl is None:
                        continue
                    if not isinstance(tbl, dict):
                        self.err(f"{base}.{head}", "expected a table keyed by outlet stream name")
                        continue
                    if not variadic_out:
                        continue
                    vport = variadic_out[0]
                    snames = connections.get(vport.name, [])
                    i = int(idx)
                    if i >= len(snames):
                        continue
                    stream_name = snames[i]
                    split_index[(uid, stream_name)] = i
                    for key in tbl:
                        if key not in snames:
                            if (f"{base}.{head}.{key}") not in [e.path for e in self.errors]:
                                self.err(f"{base}.{head}.{key}", f"not an outlet stream of this unit ({', '.join(snames)})")
                    if stream_name in tbl:
                        present.add(sname)
                        path = f"{base}.{head}.{stream_name}"
                        if self.add_input(path, tbl[stream_name], sp.kind, "specification", WHERE_SPEC, *_spec_range(sp.kind)):
                            given[sname] = path
                else:
                    if sname in table:
                        present.add(sname)
                        path = f"{base}.{sname}"
                        if self.add_input(path, table[sname], sp.kind, "feed" if t == "feed" else "specification",
                                          WHERE_SPEC, *_spec_range(sp.kind)):
                            given[sname] = path
            specs[uid] = given
            problem = model.check_specs(present) if hasattr(model, "check_specs") else None
            if problem is None and not hasattr(model, "check_specs"):
                for g, alts in model.spec_groups().items():
                    n = sum(a in present for a in alts)
                    if n != 1:
                        problem = f"give exactly one of {', '.join(alts)}"
                        break
            if problem:
                self.err(base, problem)
            return model

    def economics(self, types: dict[str, str]):
        e = self.doc.economics
        feeds, products, disposal = {}, {}, {}
        for table, dest, want, cat in ((e.feeds, feeds, "feed", "price"), (e.products, products, "product", "price"),
                                       (e.disposal, disposal, "product", "price")):
            section = {id(e.feeds): "feeds", id(e.products): "products", id(e.disposal): "disposal"}[id(table)]
            for uname, price in table.items():
                path = f"economics.{section}.{uname}"
                if uname not in types:
                    self.err(path, f"no unit named {uname!r}")
                    continue
                if types[uname] != want:
                    self.err(path, f"unit {uname!r} is a {types[uname]}, expected a {want} unit")
                    continue
                kind = _price_kind(price)
                if self.add_input(path, price, kind, cat, WHERE_PARAM):
                    dest[uname] = path
        utilities = {}
        for name, u in e.utilities.items():
            base = f"economics.utilities.{name}"
            kind = _price_kind(u.price, allow=("price_per_energy", "price_per_mass"))
            if u.type in ("electricity", "fuel") and kind != "price_per_energy":
                kind = "price_per_energy"
            iv = self.add_input(f"{base}.price", u.price, kind, "price", WHERE_PARAM)
            if iv is None:
                continue
            info = UtilityInfo(name, u.type, f"{base}.price")
            if iv.kind.name == "price_per_mass":
                if u.type == "steam":
                    if u.pressure is None:
                        self.err(f"{base}.pressure", "missing: steam priced per mass needs its pressure (latent heat from IAPWS-IF97)")
                        continue
                    q = self.quantity(u.pressure, "pressure", f"{base}.pressure")
                    if q is None:
                        continue
                    try:
                        info.energy_per_amount = steam_latent_heat(U.to_si(q, "pressure"))
                    except ValueError as exc:
                        self.err(f"{base}.pressure", str(exc))
                        continue
                elif u.type == "cooling_water":
                    if u.temperature_rise is None:
                        self.err(f"{base}.temperature_rise", "missing: cooling water priced per mass needs its temperature rise")
                        continue
                    q = self.quantity(u.temperature_rise, "temperature_difference", f"{base}.temperature_rise")
                    if q is None:
                        continue
                    dt = U.to_si(q, "temperature_difference")
                    if dt <= 0:
                        self.err(f"{base}.temperature_rise", "expected a positive temperature rise")
                        continue
                    # 4186 J/kg/K: specific heat of liquid water near 25 degC (IAPWS-95, common practice value)
                    info.energy_per_amount = 4186.0 * dt
            if u.efficiency is not None:
                q = self.quantity(u.efficiency, "fraction", f"{base}.efficiency")
                if q is not None:
                    info.efficiency = max(U.to_si(q, "fraction"), 1e-6)
            utilities[name] = info
        fixed = []
        for name, v in e.fixed.items():
            if self.add_input(f"economics.fixed.{name}", v, "currency_rate", "fixed", WHERE_PARAM):
                fixed.append(f"economics.fixed.{name}")
        try:
            pu = U.ureg.Unit(e.profit_unit)
            if U.Q_(1.0, pu).dimensionality != U.KINDS["currency_rate"].dimensionality:
                self.err("economics.profit_unit", f"expected money per time (e.g. USD/h), got {e.profit_unit!r}")
        except Exception:
            self.err("economics.profit_unit", f"unknown unit {e.profit_unit!r}")
        return feeds, products, disposal, utilities, fixed

    def display(self) -> None:
        """Display units must name a kind of quantity and be a unit of it, or reports would mislabel values."""
        for kind, unit in self.doc.flowsheet.display.items():
            path = f"flowsheet.display.{kind}"
            if kind not in U.KINDS or kind == "fraction":
                self.err(path, f"unknown kind of quantity (known: {', '.join(k for k in U.KINDS if k != 'fraction')})")
                continue
            try:
                U.parse_quantity(f"1 {unit}", kind, file=self.f, path=path)
            except InputError as e:
                self.err(path, f"expected a unit of {U.KINDS[kind].noun}, got {unit!r} ({e.problem})")

    def build(self) -> Flowsheet:
        d = self.doc
        self.display()
        system = self.components()
        reactions = self.reactions(system)
        models, types, streams, specs, split_index = self.units(system, reactions)
        feeds, products, disposal, utilities, fixed = self.economics(types)
        for uid, m in models.items():
            ut = m.utility()
            if ut is not None and ut not in utilities and ut not in d.economics.utilities:
                self.err(f"units.{uid}.utility", f"unknown utility {ut!r} (defined: {', '.join(d.economics.utilities) or 'none'})")
        fs = Flowsheet(
            file=self.f, sha256=self.sha, name=d.flowsheet.name, description=d.flowsheet.description,
            notice=d.flowsheet.notice, display=dict(d.flowsheet.display), system=system, reactions=reactions,
            units=models, unit_types=types, streams=streams, specs=specs, inputs=self.inputs, limits=[],
            decisions=[], utilities=utilities, feed_prices=feeds, product_prices=products,
            disposal_prices=disposal, fixed_costs=fixed, profit_unit=d.economics.profit_unit, split_index=split_index,
        )
        if not self.errors:
            _propagate_phases(fs)
            self.decisions(fs)
            self.limits(fs)
        if self.errors:
            raise InputErrors(self.errors)
        return fs

    def decisions(self, fs: Flowsheet) -> None:
        taken: set[str] = set()
        for name, dec in self.doc.decisions.items():
            base = f"decisions.{name}"
            target = dec.input
            parts = target.split(".")
            if len(parts) < 3 or parts[0] != "units" or parts[1] not in fs.units:
                self.err(f"{base}.input", f"expected the address of a unit specification (units.<unit>.<spec>), got {target!r}")
                continue
            uid = parts[1]
            spec_by_path = {path: s for s, path in fs.specs[uid].items()}
            if target not in spec_by_path:
                avail = ", ".join(fs.specs[uid].values()) or "none"
                self.err(f"{base}.input", f"{target!r} is not a specification given in the file (specifications of {uid}: {avail})")
                continue
            if target in taken:
                self.err(f"{base}.input", f"{target!r} is already a decision")
                continue
            taken.add(target)
            iv = fs.inputs[target]
            iv.category = "decision"
            lo = self.add_input(f"{base}.lower", dec.lower, iv.kind, "decision", WHERE_DECISION, iv.lower, iv.upper)
            hi = self.add_input(f"{base}.upper", dec.upper, iv.kind, "decision", WHERE_DECISION, iv.lower, iv.upper)
            if lo and hi:
                if lo.si > hi.si:
                    self.err(base, "lower is above upper")
                    continue
                if not lo.si - 1e-12 * abs(lo.si) <= iv.si <= hi.si + 1e-12 * abs(hi.si):
                    self.err(base, f"the base value {iv.display():g} {iv.unit} of {target} lies outside [lower, upper]")
                    continue
            fs.decisions.append(DecisionInfo(name, target, uid, spec_by_path[target], iv.kind, iv.unit, dec.description))

    def limits(self, fs: Flowsheet) -> None:
        for name, lim in self.doc.limits.items():
            base = f"limits.{name}"
            try:
                qkind = quantity_kind(fs, lim.quantity)
            except KeyError as exc:
                self.err(f"{base}.quantity", exc.args[0])
                continue
            if lim.lower is None and lim.upper is None:
                self.err(base, "give lower, upper or both")
                continue
            info = LimitInfo(name, lim.quantity, lim.kind, qkind, "", lim.description)
            lo = hi = None
            if lim.lower is not None:
                lo = self.add_input(f"{base}.lower", lim.lower, qkind, "limit", WHERE_LIMIT)
                if lo:
                    info.lower_path = lo.path
                    info.unit = lo.unit
            if lim.upper is not None:
                hi = self.add_input(f"{base}.upper", lim.upper, qkind, "limit", WHERE_LIMIT)
                if hi:
                    info.upper_path = hi.path
                    info.unit = info.unit or hi.unit
            if lo and hi and lo.si > hi.si:
                self.err(base, "lower is above upper")
                continue
            if (lim.lower is None or lo) and (lim.upper is None or hi):
                fs.limits.append(info)


ABSURD_SI = 1e15
"""Largest magnitude accepted for a standard kind of quantity, in SI (1e15 W, 1e15 Pa, 1e15 mol/s: none is physical)."""
ABSURD_SI_CUSTOM = 1e60
"""The same for quantities in model-specific units (rate constants, whose size depends on the reaction orders)."""


def _absurd_limit(k: U.Kind) -> float:
    return ABSURD_SI_CUSTOM if k.name == "custom" else ABSURD_SI


@functools.lru_cache(maxsize=512)
def _component_from_name(source: str) -> Any:
    """Property data of a named species, looked up once per process.

    The lookup reads the property-data package's tables (about a second per
    species); a study or a test that loads the same file many times must not
    repeat it. Unknown names raise every time (exceptions are not cached),
    but the package's own name index is loaded only once.
    """
    from unitmodels.thermo import Component

    return Component.from_name(source)


def _range_words(iv: InputValue) -> str:
    """An input's allowed range in words, in its own unit where it has one."""
    lo, hi = iv.lower, iv.upper
    if lo == 0.0 and hi == math.inf:
        return "a value not negative"
    def show(v: float) -> str:
        try:
            return f"{replace(iv, si=v).display():g} {iv.unit}".strip()
        except Exception:  # an odd unit: fall back to SI
            return f"{v:g} (SI)"
    if hi == math.inf:
        return f"a value of at least {show(lo)}"
    if lo == -math.inf:
        return f"a value of at most {show(hi)}"
    return f"a value between {show(lo)} and {show(hi)}"


def _spec_range(kind: str) -> tuple[float, float]:
    k = U.resolve_kind(kind).name
    if k in ("molar_flow", "mass_flow", "volume_flow", "temperature", "pressure", "volume"):
        return 0.0, math.inf
    if k == "fraction":
        return 0.0, 1.0
    return -math.inf, math.inf


def _price_kind(value: Any, allow: Iterable[str] = ("price_per_mass", "price_per_mole")) -> str:
    """Pick the price kind from the unit text; the parse reports a mismatch."""
    allow = tuple(allow)
    for k in allow:
        try:
            U.parse_quantity(value, k)
            return k
        except InputError:
            continue
    return U.Kind("price", "USD/kg", " or ".join(U.KINDS[k].noun for k in allow))  # type: ignore[return-value]


def steam_latent_heat(pressure_pa: float) -> float:
    """Latent heat of saturated steam at a pressure, J/kg (IAPWS-IF97 via ``iapws``)."""
    from iapws import IAPWS97

    mpa = pressure_pa / 1e6
    if not 611.657e-6 < mpa < 22.064:
        raise ValueError(f"steam pressure {pressure_pa:g} Pa outside the saturation range (611.657 Pa to 22.064 MPa)")
    liq = IAPWS97(P=mpa, x=0.0)
    vap = IAPWS97(P=mpa, x=1.0)
    return (vap.h - liq.h) * 1e3


def quantity_kind(fs: Flowsheet, address: str) -> U.Kind:
    """Kind of a limitable quantity address; KeyError with a message if unknown.

    ``"a + b + ..."`` is the sum of addresses of one kind (a shared header:
    the total steam duty of several heaters)."""
    if "+" in address:
        terms = [a.strip() for a in address.split("+")]
        kinds = [quantity_kind(fs, a) for a in terms]
        if any(k.name != kinds[0].name for k in kinds):
            raise KeyError(f"a sum of quantities needs one kind, got {', '.join(sorted({k.name for k in kinds}))} in {address[:200]!r}")
        return kinds[0]
    parts = address.split(".")
    if len(parts) >= 3 and parts[0] == "streams":
        sname, q = parts[1], parts[2]
        if sname not in fs.streams:
            raise KeyError(f"no stream named {sname!r}")
        if q in STREAM_QUANTITIES and len(parts) == 3:
            return U.KINDS[STREAM_QUANTITIES[q]]
        if q in STREAM_COMPONENT_QUANTITIES and len(parts) == 4:
            if parts[3] not in fs.system.names:
                raise KeyError(f"unknown component {parts[3]!r} (known: {', '.join(fs.system.names)})")
            return U.KINDS[STREAM_COMPONENT_QUANTITIES[q]]
        raise KeyError(f"unknown stream quantity in {address!r} (known: {', '.join(list(STREAM_QUANTITIES) + [k + '.<component>' for k in STREAM_COMPONENT_QUANTITIES])})")
    if len(parts) >= 3 and parts[0] == "units":
        uid, q = parts[1], ".".join(parts[2:])
        if uid not in fs.units:
            raise KeyError(f"no unit named {uid!r}")
        kinds = _unit_quantity_kinds(fs.units[uid])
        if q in kinds:
            return kinds[q]
        known = sorted(k for k in kinds if k not in _VAR_NAMES_CACHE.get(fs.units[uid].signature(), ()))
        raise KeyError(f"unit {uid!r} has no quantity {q!r} (known: {', '.join(known)})")
    raise KeyError(f"expected 'streams.<stream>.<quantity>' or 'units.<unit>.<quantity>', got {address!r}")


_KINDS_CACHE: dict[tuple, dict[str, U.Kind]] = {}
_VAR_NAMES_CACHE: dict[tuple, frozenset] = {}


def _unit_quantity_kinds(m: UnitModel) -> dict[str, U.Kind]:
    """Kind of every limitable quantity of a unit (outputs, specifications,
    variables), cached per unit signature: building symbols for every limit
    of a site-sized plant would dominate loading."""
    key = m.signature()
    hit = _KINDS_CACHE.get(key)
    if hit is not None:
        return hit
    kinds: dict[str, U.Kind] = {}
    vars_ = {v.name: v for v in m.variables()}
    for name, v in vars_.items():
        kinds[name] = U.kind_for_si_unit(v.unit or "dimensionless")
    for sp in m.specs():
        kinds[sp.name] = U.resolve_kind(sp.kind)
    for name, (_, unit) in m.outputs(m.symbols()).items():
        kinds[name] = U.resolve_kind(unit)
    _KINDS_CACHE[key] = kinds
    _VAR_NAMES_CACHE[key] = frozenset(n for n in vars_ if n not in {sp.name for sp in m.specs()})
    return kinds


def port_map(fs: "Flowsheet") -> dict[str, dict[str, list[str]]]:
    """``{unit: {port: [stream, ...]}}`` in port order, from one pass over the streams.

    Built once per flowsheet so that no unit scans every stream (that scan
    made loading and assembly O(units x streams))."""
    ends: dict[tuple[str, str], list[tuple[int, str]]] = {}
    for s, st in fs.streams.items():
        for end in (st.source, st.dest):
            if end:
                ends.setdefault((end[0], end[1]), []).append((end[2], s))
    return {uid: {port.name: [s for _, s in sorted(ends.get((uid, port.name), []))] for port in model.ports()}
            for uid, model in fs.units.items()}


def _propagate_phases(fs: Flowsheet) -> None:
    """Fix each stream's phase: feeds and fixed-phase ports first, then a
    fixed-point pass through the units (recycles converge in a few sweeps)."""
    pmap = port_map(fs)
    known: dict[str, str] = {}
    for _ in range(len(fs.units) + 2):
        changed = False
        for uid, m in fs.units.items():
            ports = pmap[uid]
            inlet_phases = {p.name: [known.get(n, "liquid") for n in ports[p.name]] for p in m.ports() if p.direction == "in"}
            outs = m.outlet_phases(inlet_phases)
            for p in m.ports():
                if p.direction != "out":
                    continue
                ph = outs.get(p.name, "liquid")
                for s in ports[p.name]:
                    if known.get(s) != ph:
                        known[s] = ph
                        changed = True
        if not changed:
            break
    for s, st in fs.streams.items():
        st.phase = known.get(s, "liquid")


def input_rows(fs: Flowsheet) -> list[dict]:
    """Every addressable input: ``path``, ``value`` and ``unit`` as in the file, ``kind``."""
    return [{"path": iv.path, "value": iv.display(), "unit": iv.unit, "kind": iv.category,
             "quantity": iv.kind.name} for iv in fs.inputs.values()]
