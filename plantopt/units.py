"""The one pint registry of plantopt and the parsing of quantities.

Every dimensional input is a string ``"<number> <unit>"``. Each field declares
a *kind* (see :data:`KINDS`); the parsed quantity is checked against it and
converted to the internal SI set (K, Pa, mol/s, kg, m**3, W, J, s, USD)
before it reaches casadi. Temperatures and temperature differences are kept
apart: ``"80 degC"`` is a temperature (353.15 K); a difference must use ``K``,
``delta_degC`` or ``delta_degF``.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from typing import Any

import pint

from plantopt.errors import DimensionError, InputError

ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=False, cache_folder=None)
# Currency is a dimension of its own so that a price cannot be mistaken for
# anything else; only one currency exists, so no exchange rate is implied.
ureg.define("USD = [currency]")
ureg.define("kUSD = 1000 USD")
ureg.define("MUSD = 1000000 USD")
ureg.define("cent = 0.01 USD")
Q_ = ureg.Quantity


@dataclass(frozen=True)
class Kind:
    """A kind of quantity a field may hold.

    Parameters
    ----------
    name : str
        Key in :data:`KINDS`.
    si : str
        Internal unit the value is converted to.
    noun : str
        Words used in messages, e.g. ``"a volume"``.
    """

    name: str
    si: str
    noun: str

    @property
    def dimensionality(self) -> Any:
        return ureg.Quantity(1.0, self.si).dimensionality


_K = [
    Kind("temperature", "K", "a temperature"),
    Kind("temperature_difference", "K", "a temperature difference"),
    Kind("pressure", "Pa", "a pressure"),
    Kind("pressure_difference", "Pa", "a pressure difference"),
    Kind("molar_flow", "mol/s", "a molar flow"),
    Kind("mass_flow", "kg/s", "a mass flow"),
    Kind("volume_flow", "m**3/s", "a volumetric flow"),
    Kind("mass", "kg", "a mass"),
    Kind("volume", "m**3", "a volume"),
    Kind("length", "m", "a length"),
    Kind("area", "m**2", "an area"),
    Kind("time", "s", "a time"),
    Kind("power", "W", "a power"),
    Kind("energy", "J", "an energy"),
    Kind("molar_energy", "J/mol", "a molar energy"),
    Kind("molar_entropy", "J/mol/K", "a molar entropy (J/mol/K)"),
    Kind("specific_energy", "J/kg", "a specific energy (per mass)"),
    Kind("molar_mass", "kg/mol", "a molar mass"),
    Kind("density", "kg/m**3", "a density"),
    Kind("molar_density", "mol/m**3", "a molar concentration"),
    Kind("heat_capacity_molar", "J/mol/K", "a molar heat capacity"),
    Kind("conductance", "W/K", "a heat-transfer conductance (UA, e.g. W/K)"),
    Kind("heat_transfer_coefficient", "W/m**2/K", "a heat-transfer coefficient"),
    Kind("dimensionless", "dimensionless", "a dimensionless number"),
    Kind("fraction", "dimensionless", "a fraction between 0 and 1"),
    Kind("currency", "USD", "an amount of money"),
    Kind("currency_rate", "USD/s", "money per time (e.g. USD/h)"),
    Kind("price_per_mass", "USD/kg", "a price per mass (e.g. USD/t)"),
    Kind("price_per_mole", "USD/mol", "a price per amount (e.g. USD/kmol)"),
    Kind("price_per_energy", "USD/J", "a price per energy (e.g. USD/MWh)"),
    Kind("price_per_volume", "USD/m**3", "a price per volume (e.g. USD/m**3)"),
]
KINDS: dict[str, Kind] = {k.name: k for k in _K}

_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")
# Unit text is handed to pint's parser, which evaluates exponent towers such as
# "m**3**3**3**3" exactly (a hang) and accepts arbitrary numeric factors. Only
# plain unit names, small numbers, "*", "/", "^", "**" with a short numeric
# exponent and parentheses are let through, and the text is kept short.
MAX_UNIT_TEXT = 64
"""Longest unit text accepted (characters)."""
_UNIT_CHARS = re.compile(r"^[A-Za-z0-9_ .*/^()%°µμΩ·+-]*$")
_UNIT_POWER = re.compile(r"(\*\*|\^)\s*(\(?\s*[-+]?\s*)(\d*\.?\d*)(\s*\)?)")
_UNIT_NUMBER = re.compile(r"(?<![A-Za-z_\d.])(\d+\.?\d*|\.\d+)(?![\d.])")


def _unit_text_problem(text: str) -> str | None:
    """Why a unit text is refused before it reaches pint, or None if it may be parsed."""
    if len(text) > MAX_UNIT_TEXT:
        return f"unit text longer than {MAX_UNIT_TEXT} characters"
    if not _UNIT_CHARS.match(text):
        return "unit text contains characters no unit uses"
    if text.count("(") != text.count(")") or text.count("(") > 4:
        return "unbalanced or too many parentheses in the unit"
    ends = []
    for m in _UNIT_POWER.finditer(text):
        digits = m.group(3)
        if not digits or digits == "." or len(digits.replace(".", "")) > 3 or abs(float(digits)) > 12:
            return "exponent in the unit must be a small number (at most 12)"
        if re.match(r"[eE][-+]?\d", text[m.end(3):]):
            return "exponent in the unit must be a small number (at most 12)"
        ends.append(m.end())
    for end in ends:
        if re.match(r"\s*(\*\*|\^)", text[end:]):
            return "chained exponents in the unit"
    for m in _UNIT_NUMBER.finditer(text):
        if len(m.group(1)) > 6:
            return "numbers in the unit must be short (e.g. '1/s')"
    return None

_OFFSET_UNITS = {"degC", "degF", "degree_Celsius", "degree_Fahrenheit", "celsius", "fahrenheit", "degRe", "°C", "°F"}


def _dimension_words(q: pint.Quantity) -> str:
    """Describe a quantity's dimension in words for error messages."""
    dim = q.dimensionality
    for k in _K:
        if k.name in ("temperature_difference", "pressure_difference", "fraction"):
            continue
        if k.dimensionality == dim:
            return k.name.replace("_", " ")
    if dim == ureg.dimensionless.dimensionality:
        return "dimensionless"
    return str(dim)


def _is_offset(unit: pint.Unit) -> bool:
    try:
        return not ureg.Quantity(1.0, unit)._ok_for_muldiv()
    except Exception:  # pragma: no cover - defensive, pint internals
        return str(unit) in _OFFSET_UNITS


def parse_quantity(value: Any, kind: str | Kind, *, file: str = "", path: str = "") -> pint.Quantity:
    """Parse one input value into a pint quantity of the given kind.

    Parameters
    ----------
    value : str or float
        ``"350 K"``, ``"80 degC"``, ``"12.5 kmol/h"``; bare numbers only where
        the kind is dimensionless.
    kind : str or Kind
        The kind of quantity expected (a key of :data:`KINDS`).
    file, path : str
        Where the value came from, for messages.

    Returns
    -------
    pint.Quantity
        The quantity in the unit it was given in (not yet converted).

    Raises
    ------
    DimensionError
        Wrong dimension or a bare number where a unit is needed.
    InputError
        Unparseable text, unknown unit or non-finite number.
    """
    k = resolve_kind(kind)
    dimensionless = k.si == "dimensionless"
    if isinstance(value, bool):
        raise InputError(file, path, f"expected {k.noun}, got a boolean ({value})")
    if isinstance(value, int) and abs(value) > 10**300:
        # float() of a huge TOML integer raises OverflowError; refuse it as absurd
        raise InputError(file, path, f"expected {k.noun}, got an integer with {len(str(abs(value)))} digits")
    if isinstance(value, (int, float)):
        if not math.isfinite(float(value)):
            raise InputError(file, path, f"expected a finite number, got {value}")
        if dimensionless:
            q = Q_(float(value), "dimensionless")
            return _check_fraction(q, k, file, path)
        example = {"temperature": "350 K"}.get(k.name, f"1 {Q_(1, k.si).units:~}")
        raise DimensionError(file, path, f"{k.noun} with a unit (e.g. '{example}')", str(value), "bare number")
    if not isinstance(value, str):
        raise InputError(file, path, f"expected {k.noun} as a string such as '1.5 <unit>', got {type(value).__name__}")
    m = _NUMBER.match(value)
    if not m:
        raise InputError(file, path, f"expected {k.noun} as '<number> <unit>', got '{value}'")
    number = float(m.group(1))
    unit_text = m.group(2)
    if not math.isfinite(number):
        raise InputError(file, path, f"expected a finite number, got '{value}'")
    if unit_text in ("", "-"):
        if dimensionless:
            return _check_fraction(Q_(number, "dimensionless"), k, file, path)
        raise DimensionError(file, path, f"{k.noun} with a unit", value, "bare number")
    refused = _unit_text_problem(unit_text)
    if refused:
        raise InputError(file, path, f"cannot read unit '{unit_text[:MAX_UNIT_TEXT]}' ({refused})")
    try:
        unit = ureg.Unit(unit_text)
    except (pint.errors.UndefinedUnitError, pint.errors.DefinitionSyntaxError, AttributeError, TypeError, ValueError, AssertionError) as exc:
        raise InputError(file, path, f"unknown unit '{unit_text}' in '{value}'") from exc
    except Exception as exc:  # pint raises assorted errors on odd text
        raise InputError(file, path, f"cannot read unit '{unit_text}' in '{value}'") from exc
    q = Q_(number, unit)
    offset = _is_offset(unit)
    if k.name == "temperature_difference" and offset:
        raise DimensionError(
            file, path, f"{k.noun} (use K, delta_degC or delta_degF)", value, "a temperature, not a difference"
        )
    if k.name == "temperature" and q.dimensionality == k.dimensionality and not offset:
        # delta_degC / delta_degF are differences; an absolute temperature is K, degR, degC or degF
        if str(unit).startswith("delta_"):
            raise DimensionError(file, path, k.noun, value, "a temperature difference")
    if q.dimensionality != k.dimensionality:
        raise DimensionError(file, path, k.noun, value, _dimension_words(q))
    try:
        si = float(q.to(k.si).magnitude)
    except (OverflowError, pint.errors.PintError, ValueError) as exc:
        raise InputError(file, path, f"cannot convert '{value}' to {k.si}") from exc
    if not math.isfinite(si):
        # e.g. "1e308 kmol/s" overflows on conversion to SI
        raise InputError(file, path, f"expected a finite number, got '{value}' ({si} in {k.si})")
    return _check_fraction(q, k, file, path)


def _check_fraction(q: pint.Quantity, k: Kind, file: str, path: str) -> pint.Quantity:
    if k.name == "fraction":
        v = float(q.to("dimensionless").magnitude)
        if not 0.0 <= v <= 1.0:
            raise InputError(file, path, f"expected a fraction between 0 and 1, got {v:g}")
    return q


def resolve_kind(kind: str | Kind) -> Kind:
    """A :class:`Kind` from a kind name or from an SI unit text (e.g. ``"m**3/mol/s"``).

    Unit models declare some parameters (rate constants) by their SI unit,
    because the unit follows from reaction orders; those become custom kinds.
    """
    if isinstance(kind, Kind):
        return kind
    if kind in KINDS:
        return KINDS[kind]
    if kind in ("", "1", "-"):
        return KINDS["dimensionless"]
    try:
        q = Q_(1.0, kind)
    except Exception as exc:  # a programming error in a unit model
        raise ValueError(f"unknown kind or unit {kind!r}") from exc
    for k in _K:
        # an SI unit text of a standard kind ("mol/s") resolves to that kind;
        # "K" means a temperature (models name temperature differences by kind)
        if k.name in ("temperature_difference", "pressure_difference", "fraction"):
            continue
        if k.dimensionality == q.dimensionality and abs(q.to(k.si).magnitude - 1.0) < 1e-12:
            return k
    return Kind("custom", kind, f"a quantity in units of {kind}")


def to_si(q: pint.Quantity, kind: str | Kind) -> float:
    """Convert a quantity to the internal SI unit of its kind, as a float."""
    k = resolve_kind(kind)
    return float(q.to(k.si).magnitude)


def si_value(value: Any, kind: str | Kind, *, file: str = "", path: str = "") -> float:
    """Parse and convert in one step (see :func:`parse_quantity`)."""
    return to_si(parse_quantity(value, kind, file=file, path=path), kind)


def from_si(value: float, kind: str | Kind, unit: str) -> float:
    """Convert an internal SI value of a kind to a display unit.

    Temperatures convert with their offset (``K`` to ``degC`` subtracts
    273.15); a temperature difference converts without it.
    """
    k = resolve_kind(kind)
    if k.name == "temperature_difference":
        u = {"degC": "delta_degC", "degF": "delta_degF"}.get(unit, unit)
        return float(Q_(value, "K").to(u).magnitude) if u in ("delta_degC", "delta_degF") else float(Q_(value, k.si).to(u).magnitude)
    return float(Q_(value, k.si).to(unit).magnitude)


def kind_key(k: Kind) -> str:
    """Text that :func:`resolve_kind` turns back into ``k`` (name, or SI unit for custom kinds)."""
    return k.si if k.name == "custom" else k.name


def unit_of(q: pint.Quantity) -> str:
    """Short unit text of a quantity (e.g. ``kmol/h``)."""
    return f"{q.units:~}".replace(" ", "")


def unit_text(value: Any) -> str | None:
    """The unit exactly as written in an input string (``"80 degC"`` gives ``degC``)."""
    if isinstance(value, str):
        m = _NUMBER.match(value)
        if m and m.group(2) not in ("", "-"):
            return m.group(2)
    return None


def delta_unit(unit: str) -> str:
    """The difference unit of ``unit`` (``degC`` gives ``delta_degC``; others unchanged)."""
    try:
        u = ureg.Unit(unit)
    except Exception:
        return unit
    if _is_offset(u):
        return f"delta_{u}"
    return unit


def si_unit_text(kind: str | Kind) -> str:
    """Short SI unit text of a kind, e.g. ``mol/s``."""
    k = resolve_kind(kind)
    return f"{Q_(1.0, k.si).units:~}".replace(" ", "") if k.si != "dimensionless" else ""


def kind_for_si_unit(si: str) -> Kind:
    """Find the kind whose internal unit has the dimension of ``si``."""
    dim = Q_(1.0, si).dimensionality
    for k in _K:
        if k.dimensionality == dim and k.name not in ("temperature_difference", "pressure_difference", "fraction"):
            return k
    return Kind("custom", si, f"a quantity in {si}")
