"""Pydantic models of the flowsheet file (TOML).

This layer checks the *shape* of the file: known keys only (a misspelt
safety limit must never be ignored), right types. Quantities stay as the
text the user wrote; :mod:`plantopt.flowsheet` parses them with the units
layer and checks meaning (connections, components, degrees of freedom),
collecting every problem before reporting.

File layout (all keys in plain process-engineering terms)::

    [flowsheet]          name, description, notice, display units
    [components.<id>]    source = "<name or CAS>"  or user-defined data
    [reactions.<id>]     stoichiometry, orders, basis, pre_exponential, activation_energy
    [units.<id>]         type = "<unit kind>", port keys naming streams, parameters, specifications
    [economics]          profit_unit; feeds, products, disposal prices; utilities; fixed terms
    [limits.<id>]        quantity = "<address>", lower / upper, kind = "safety" | "spec"
    [decisions.<id>]     input = "<address of a specification>", lower, upper
"""

from __future__ import annotations

import math
from typing import Annotated, Any, Literal, Optional, Union

from pydantic import AfterValidator, BaseModel, BeforeValidator, ConfigDict, Field


def _not_boolean(v: Any) -> Any:
    # pydantic would read true as 1; a boolean coefficient is always a slip
    if isinstance(v, bool):
        raise ValueError(f"expected a number, got the boolean {str(v).lower()}")
    return v


def _finite_number(v: float | int) -> float | int:
    """Refuse NaN, infinities and integers too large for a float.

    TOML allows ``nan`` and ``inf`` and integers of any length; none of them is
    a usable coefficient (stoichiometry, orders, Antoine constants), and a huge
    integer would overflow only later, far from the field that caused it.
    """
    if isinstance(v, int) and abs(v) > 10**15:
        raise ValueError(f"expected a number of ordinary size, got an integer with {len(str(abs(v)))} digits")
    if isinstance(v, float) and not math.isfinite(v):
        raise ValueError(f"expected a finite number, got {v}")
    if abs(v) > 1e15:
        raise ValueError(f"expected a number of ordinary size, got {v:g}")
    return v


Number = Annotated[Union[float, int], BeforeValidator(_not_boolean), AfterValidator(_finite_number)]
def _not_boolean_quantity(v: Any) -> Any:
    if isinstance(v, bool):
        raise ValueError(f"expected a quantity such as '1.5 <unit>' (or a number where no unit is needed), got the boolean {str(v).lower()}")
    return v


QuantityText = Annotated[Union[str, float, int], BeforeValidator(_not_boolean_quantity)]


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", str_strip_whitespace=True)


class FlowsheetInfo(_Strict):
    """The ``[flowsheet]`` table."""

    name: str
    description: str = ""
    notice: str = Field("", description="Free text shown in every report, e.g. that the data are invented.")
    display: dict[str, str] = Field(default_factory=dict, description="Display unit per kind, e.g. temperature = 'degC'.")


class AntoineData(_Strict):
    """log10(P / Pa) = a - b / (T / K + c)."""

    a: Number
    b: Number
    c: Number


class ComponentEntry(_Strict):
    """A component: from the property-data package (``source``) or user-defined."""

    source: Optional[str] = Field(None, description="Name or CAS number known to the property-data package.")
    formula: Optional[str] = None
    molar_mass: Optional[QuantityText] = None
    formation_enthalpy: Optional[QuantityText] = None
    cp_gas: Optional[QuantityText] = None
    cp_liquid: Optional[QuantityText] = None
    liquid_density: Optional[QuantityText] = None
    vaporisation_enthalpy: Optional[QuantityText] = None
    antoine: Optional[AntoineData] = None


class ReactionEntry(_Strict):
    """A reaction with a power-law rate and Arrhenius temperature dependence."""

    stoichiometry: dict[str, Number]
    orders: Optional[dict[str, Number]] = None
    basis: Literal["concentration", "partial_pressure", "mole_fraction", "mass_fraction"] = "concentration"
    rate_per: Literal["volume", "catalyst_mass", "holdup_mass"] = "volume"
    reversible: bool = False
    reverse_orders: Optional[dict[str, Number]] = None
    reference_temperature: Optional[QuantityText] = None
    pre_exponential: QuantityText
    activation_energy: QuantityText
    pre_exponential_reverse: Optional[QuantityText] = None
    activation_energy_reverse: Optional[QuantityText] = None


class UtilityEntry(_Strict):
    """A utility and its price.

    ``steam``: price per mass, ``pressure`` (saturated; latent heat from
    IAPWS-IF97) or per energy. ``cooling_water``: per mass with
    ``temperature_rise``, or per energy. ``electricity`` and ``fuel``: per
    energy.
    """

    type: Literal["steam", "cooling_water", "electricity", "fuel"]
    price: QuantityText
    pressure: Optional[QuantityText] = None
    temperature_rise: Optional[QuantityText] = None
    efficiency: Optional[QuantityText] = Field(None, description="Fuel: fraction of its heat reaching the process.")


class EconomicsEntry(_Strict):
    """The ``[economics]`` table; every price carries its unit."""

    profit_unit: str = "USD/h"
    feeds: dict[str, QuantityText] = Field(default_factory=dict, description="Feed unit name to price per mass or per amount.")
    products: dict[str, QuantityText] = Field(default_factory=dict, description="Product unit name to price per mass or per amount.")
    disposal: dict[str, QuantityText] = Field(default_factory=dict, description="Product unit name to disposal cost per mass or per amount.")
    utilities: dict[str, UtilityEntry] = Field(default_factory=dict)
    fixed: dict[str, QuantityText] = Field(default_factory=dict, description="Fixed costs per time (positive = cost).")


class LimitEntry(_Strict):
    """A named operating limit: a safety limit or a product specification."""

    quantity: str = Field(description="Address of the limited quantity, e.g. 'units.R1.temperature' or 'streams.S9.mole_fraction.C'.")
    lower: Optional[QuantityText] = None
    upper: Optional[QuantityText] = None
    kind: Literal["safety", "spec"] = "safety"
    description: str = ""


class DecisionEntry(_Strict):
    """A specification the optimizer may move, with its range; the file's value is the base."""

    input: str = Field(description="Address of a unit specification, e.g. 'units.FEED_A.molar_flow'.")
    lower: QuantityText
    upper: QuantityText
    description: str = ""


class FlowsheetFile(_Strict):
    """The whole flowsheet file."""

    flowsheet: FlowsheetInfo
    components: dict[str, ComponentEntry]
    reactions: dict[str, ReactionEntry] = Field(default_factory=dict)
    units: dict[str, dict[str, Any]]
    economics: EconomicsEntry = Field(default_factory=EconomicsEntry)
    limits: dict[str, LimitEntry] = Field(default_factory=dict)
    decisions: dict[str, DecisionEntry] = Field(default_factory=dict)
