"""Mutations of real flowsheet files for the robustness tests.

The bundled files (``flowsheets/demo.toml`` and ``tests/data/*.toml``) are
parsed, changed in one place, and written back as TOML. Each *invalid*
mutation knows the field it broke, so a test can demand that the message
names exactly that field; each *valid* mutation (the same quantity in another
unit, tables in another order) must load to the same SI values.
"""

from __future__ import annotations

import datetime as dt
import math
import re
import tomllib
from pathlib import Path
from typing import Any, Iterator

ROOT = Path(__file__).resolve().parents[2]
BASE_FILES = {
    "demo.toml": ROOT / "flowsheets" / "demo.toml",
    "series_cstr.toml": ROOT / "tests" / "data" / "series_cstr.toml",
    "utilities.toml": ROOT / "tests" / "data" / "utilities.toml",
}

Path_ = tuple[str, ...]

_QTY = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s+(\S.*?)\s*$")

# Keys whose text is not a quantity even if it looks like one.
_TEXT_KEYS = {"name", "description", "notice", "source", "formula", "quantity", "input", "type", "kind",
              "basis", "rate_per", "utility", "outlet_phase", "profit_unit"}


def base_doc(name: str) -> dict:
    """The parsed TOML of one bundled file (a fresh copy each call)."""
    return tomllib.loads(BASE_FILES[name].read_text(encoding="utf-8"))


# ------------------------------------------------------------------ TOML writer
def _key(k: str) -> str:
    return k if re.fullmatch(r"[A-Za-z0-9_-]+", k) else '"' + k.replace("\\", "\\\\").replace('"', '\\"') + '"'


def _value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n") + '"'
    if isinstance(v, (dt.date, dt.datetime, dt.time)):
        return v.isoformat()
    if isinstance(v, list):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{_key(k)} = {_value(x)}" for k, x in v.items()) + " }"
    raise TypeError(type(v))


def _is_table(v: Any) -> bool:
    # a dict of scalars or lists is written inline; a dict holding dicts becomes a [section]
    return isinstance(v, dict) and any(isinstance(x, dict) for x in v.values())


def dumps(doc: dict) -> str:
    """TOML text of ``doc`` (sections for nested tables, inline tables for the rest)."""
    out: list[str] = []

    def emit(table: dict, path: Path_) -> None:
        scalars = [(k, v) for k, v in table.items() if not _is_table(v)]
        if path and (scalars or not table):
            out.append("[" + ".".join(_key(p) for p in path) + "]")
        for k, v in scalars:
            out.append(f"{_key(k)} = {_value(v)}")
        if scalars:
            out.append("")
        for k, v in table.items():
            if _is_table(v):
                emit(v, path + (k,))

    emit(doc, ())
    return "\n".join(out) + "\n"


# ------------------------------------------------------------------ addresses
def leaves(doc: Any, path: Path_ = ()) -> Iterator[tuple[Path_, Any]]:
    """Every scalar (and every list of scalars) with its address."""
    if isinstance(doc, dict):
        for k, v in doc.items():
            yield from leaves(v, path + (k,))
    elif isinstance(doc, list) and any(isinstance(x, (dict, list)) for x in doc):
        for i, v in enumerate(doc):
            yield from leaves(v, path + (str(i),))
    else:
        yield path, doc


def tables(doc: Any, path: Path_ = ()) -> Iterator[Path_]:
    """Every table's address (the root is ``()``)."""
    if isinstance(doc, dict):
        yield path
        for k, v in doc.items():
            yield from tables(v, path + (k,))


def get(doc: dict, path: Path_) -> Any:
    for p in path:
        doc = doc[p]
    return doc


def put(doc: dict, path: Path_, value: Any) -> None:
    get(doc, path[:-1])[path[-1]] = value


def delete(doc: dict, path: Path_) -> None:
    del get(doc, path[:-1])[path[-1]]


def dotted(path: Path_) -> str:
    return ".".join(path)


def is_quantity_text(path: Path_, v: Any) -> bool:
    """A ``"<number> <unit>"`` string in a field that holds a quantity."""
    return isinstance(v, str) and bool(_QTY.match(v)) and path[-1] not in _TEXT_KEYS and path[:2] != ("flowsheet", "display")


def quantity_leaves(doc: dict) -> list[tuple[Path_, str]]:
    return [(p, v) for p, v in leaves(doc) if is_quantity_text(p, v)]


def split_quantity(text: str) -> tuple[float, str]:
    m = _QTY.match(text)
    assert m, text
    return float(m.group(1)), m.group(2)


# Bare numbers that are fractions between 0 and 1 (composition, split fraction,
# recovery, bounds of a fraction limit or decision).
def fraction_leaves(doc: dict) -> list[tuple[Path_, float]]:
    out = []
    frac_limits = {n for n, lim in doc.get("limits", {}).items()
                   if "fraction" in str(lim.get("quantity", ""))}
    frac_decisions = {n for n, d in doc.get("decisions", {}).items() if ".fraction." in str(d.get("input", ""))}
    for p, v in leaves(doc):
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            continue
        if (p[0] == "units" and len(p) == 4 and p[2] in ("composition", "fraction", "recovery")) or \
           (p[0] == "limits" and p[1] in frac_limits and p[-1] in ("lower", "upper")) or \
           (p[0] == "decisions" and p[1] in frac_decisions and p[-1] in ("lower", "upper")):
            out.append((p, float(v)))
    return out


def numeric_leaves(doc: dict) -> list[tuple[Path_, Any]]:
    """Bare numbers anywhere (fractions, coefficients, Antoine constants, orders)."""
    return [(p, v) for p, v in leaves(doc) if isinstance(v, (int, float)) and not isinstance(v, bool)]


# Fields that must not be negative: flows, pressures, volumes, conductances,
# densities, molar masses, absolute temperatures in K.
NON_NEGATIVE = {"molar_flow", "mass_flow", "pressure", "volume", "ua", "liquid_density", "molar_mass"}


def non_negative_leaves(doc: dict) -> list[tuple[Path_, str]]:
    out = []
    for p, v in quantity_leaves(doc):
        num, unit = split_quantity(v)
        if num <= 0:
            continue
        if p[0] in ("units", "components") and p[-1] in NON_NEGATIVE:
            out.append((p, v))
        elif p[0] == "units" and unit == "K" and "temperature" in p[-1]:
            out.append((p, v))
    return out


def port_leaves(doc: dict) -> list[tuple[Path_, Any]]:
    """Stream-name fields of units (``outlet = "S1"``, ``inlets = ["A", "B"]``)."""
    from unitmodels.base import REGISTRY

    out = []
    for uid, table in doc.get("units", {}).items():
        cls = REGISTRY[table["type"]]
        for port in cls.ports(cls.__new__(cls)):
            if port.name in table:
                out.append((("units", uid, port.name), table[port.name]))
    return out


# Units to re-express a quantity in; each is tried where its dimension matches.
OTHER_UNITS = [
    "mol/s", "kmol/s", "mol/h", "kg/s", "t/h", "lb/h", "g/s", "K", "degR", "Pa", "kPa", "MPa", "psi", "atm", "W", "MW",
    "BTU/h", "m**3", "L", "ft**3", "J/mol", "kJ/mol", "cal/mol", "J/mol/K", "kJ/kmol/K", "kg/mol", "lb/mol",
    "kg/m**3", "g/L", "W/K", "MW/K", "BTU/h/delta_degF", "USD/kg", "USD/lb", "cent/kg", "USD/kmol", "USD/mol",
    "USD/s", "kUSD/h", "USD/day", "USD/J", "USD/kWh", "USD/GJ", "1/h", "1/min", "m**3/kmol/s", "L/mol/s", "m", "ft",
]
# An absolute temperature (offset unit) may also be given in the other offset units
OFFSET_UNITS = ["degC", "degF", "K", "degR"]
# Units of plainly different dimensions, for wrong-unit mutations
WRONG_UNITS = ["kg", "bar", "m**3", "kW", "s", "m", "J/mol", "kmol/h", "USD/kg", "degC", "kg/m**3"]


# ------------------------------------------------------------------ mutation sites
def same_dimension(a: str, b: str) -> bool:
    from plantopt.units import ureg

    try:
        return ureg.Quantity(1.0, a).dimensionality == ureg.Quantity(1.0, b).dimensionality
    except Exception:
        return False


def convert(text: str, unit: str) -> str:
    """The same quantity in ``unit`` (offsets applied for absolute temperatures)."""
    from plantopt.units import ureg

    num, old = split_quantity(text)
    q = ureg.Quantity(num, old).to(unit)
    return f"{q.magnitude!r} {unit}"


def valid_unit_changes(doc: dict) -> list[tuple[Path_, str]]:
    """(address, new text): each quantity re-expressed in another unit of its dimension."""
    from plantopt.units import ureg

    out = []
    for p, v in quantity_leaves(doc):
        num, unit = split_quantity(v)
        offset = unit in ("degC", "degF")
        choices = OFFSET_UNITS if offset else OTHER_UNITS
        for u in choices:
            if u == unit or not same_dimension(u, unit):
                continue
            if u in ("degC", "degF") and not offset:
                continue  # "10 K" may be a difference; only absolute temperatures move to offset units
            try:
                out.append((p, convert(v, u)))
            except Exception:  # pint cannot convert (not expected for same dimension)
                continue
    return out


def required_paths(doc: dict) -> list[Path_]:
    """Keys without which the file cannot be read (each deletion must be reported at its address)."""
    out: list[Path_] = [("flowsheet", "name"), ("components",), ("units",)]
    for uid, t in doc.get("units", {}).items():
        out.append(("units", uid, "type"))
        if t["type"] == "feed":
            out += [("units", uid, k) for k in ("composition", "temperature", "pressure") if k in t]
        if t["type"] == "cstr":
            out += [("units", uid, k) for k in ("volume",) if k in t]
    out += [p for p, _ in port_leaves(doc)]
    for rid in doc.get("reactions", {}):
        out += [("reactions", rid, k) for k in ("stoichiometry", "pre_exponential", "activation_energy")]
    for did in doc.get("decisions", {}):
        out += [("decisions", did, k) for k in ("input", "lower", "upper")]
    for lid in doc.get("limits", {}):
        out.append(("limits", lid, "quantity"))
    for uid in doc.get("economics", {}).get("utilities", {}):
        out += [("economics", "utilities", uid, k) for k in ("type", "price")]
    for cid, c in doc.get("components", {}).items():
        if "source" not in c:
            out += [("components", cid, k) for k in c if k != "formula"]
    return out


def component_refs(doc: dict) -> list[Path_]:
    """Places a component is named as a key (compositions, stoichiometry, orders, recoveries)."""
    out = []
    for p, _ in leaves(doc):
        if (p[0] == "units" and len(p) == 4 and p[2] in ("composition", "recovery")) or \
           (p[0] == "reactions" and len(p) == 4 and p[2] in ("stoichiometry", "orders")):
            out.append(p)
    return out
