"""The neutral result objects of plantopt (pydantic, written as JSON).

Later commands read these files back (``--from``, ``review --proposed``),
so the field names are part of the interface. Every value carries its unit
as text; SI never leaks into a result.
"""

from __future__ import annotations

from typing import Any, Optional

from pydantic import BaseModel, ConfigDict, Field

SAFETY_NOTICE = (
    "Results are advisory. Plant changes follow the site's management-of-change "
    "procedure; local codes and licensed engineering review prevail."
)


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid")


class StreamResult(_Model):
    """One stream at the solution."""

    name: str
    phase: str
    source: Optional[str] = None
    destination: Optional[str] = None
    temperature: float
    temperature_unit: str
    pressure: float
    pressure_unit: str
    molar_flow: float
    molar_flow_unit: str
    mass_flow: float
    mass_flow_unit: str
    component_flows: dict[str, float]
    mole_fractions: dict[str, float]


class QuantityValue(_Model):
    value: float
    unit: str


class UnitResult(_Model):
    """One unit operation's reportable quantities."""

    name: str
    type: str
    quantities: dict[str, QuantityValue]


class LimitResult(_Model):
    """A limit at the solution.

    ``margin`` is the distance to the nearer bound, in the limit's unit
    (negative when violated). ``shadow_price`` is the derivative of the
    optimal profit with respect to the active bound, per unit increase of
    that bound (profit unit per limit unit); null where not active.
    """

    name: str
    kind: str
    quantity: str
    value: float
    lower: Optional[float] = None
    upper: Optional[float] = None
    lower_path: Optional[str] = None
    upper_path: Optional[str] = None
    unit: str
    active: bool = False
    active_side: Optional[str] = None
    violated: bool = False
    margin: float
    shadow_price: Optional[float] = None
    shadow_price_unit: Optional[str] = None
    description: str = ""


class DecisionResult(_Model):
    """A decision variable: base (present setpoint) and value at the solution."""

    path: str
    name: str
    value: float
    base: float
    move: float
    unit: str
    lower: float
    upper: float
    at_bound: Optional[str] = None
    reduced_cost: Optional[float] = None
    reduced_cost_unit: Optional[str] = None


class Objective(_Model):
    value: float
    unit: str
    breakdown: dict[str, float]


class SolverSummary(_Model):
    name: str
    status: str
    iterations: int
    wall_time_s: float
    kkt: dict[str, float] = Field(default_factory=dict)
    evaluations: dict[str, int] = Field(default_factory=dict)
    message: str = ""


class Violation(_Model):
    """A limit or equation not met at the returned point, in its own unit.

    ``relative`` is the violation divided by the size of the bound (or of the
    equation's terms), used to rank them.
    """

    what: str
    name: str
    value: float
    bound: Optional[float] = None
    side: Optional[str] = None
    violation: float
    unit: str
    relative: float


class Balance(_Model):
    """Overall balances at the plant boundary (feeds in, products out).

    ``mass_relative`` is |in - out| / in; ``energy_relative`` is
    |H_in + heat + work - H_out| divided by the largest of those terms.
    """

    mass_in: float
    mass_out: float
    mass_unit: str
    mass_relative: float
    enthalpy_in: float
    enthalpy_out: float
    heat_added: float
    work_added: float
    energy_unit: str
    energy_relative: float


class RunResult(_Model):
    """Result of ``plantopt simulate`` or ``plantopt optimize``."""

    command: str
    status: str
    flowsheet: str
    flowsheet_name: str
    flowsheet_sha256: str
    tool_version: str
    notice: str = SAFETY_NOTICE
    data_notice: str = ""
    objective: Objective
    decisions: list[DecisionResult] = Field(default_factory=list)
    limits: list[LimitResult] = Field(default_factory=list)
    streams: list[StreamResult] = Field(default_factory=list)
    units: list[UnitResult] = Field(default_factory=list)
    solver: SolverSummary
    balance: Optional[Balance] = None
    violations: list[Violation] = Field(default_factory=list, description="When no solution was reached: what cannot be met, worst first.")
    structure: list[str] = Field(default_factory=list)
    overrides: dict[str, str] = Field(default_factory=dict)
    warm_start: Optional[dict[str, Any]] = None
    sensitivity: Optional["Sensitivity"] = None


class SensitivityEntry(_Model):
    """Derivatives of the optimum with respect to one input (``plantopt optimize --sensitivity``).

    ``d_profit`` is d(optimal profit)/d(input) in ``d_profit_unit``;
    ``d_decisions`` maps each decision to d(decision)/d(input). Valid while the
    active set does not change.
    """

    input: str
    unit: str
    value: float
    d_profit: float
    d_profit_unit: str
    d_decisions: dict[str, float] = Field(default_factory=dict)
    d_decisions_units: dict[str, str] = Field(default_factory=dict)


class Sensitivity(_Model):
    """Parametric sensitivity of an optimum, from its KKT system."""

    method: str
    entries: list[SensitivityEntry] = Field(default_factory=list)
    active_rows: list[str] = Field(default_factory=list)
    kkt_condition: Optional[float] = None  # 2-norm condition number of the scaled KKT matrix; None if infinite
    regular: bool = True
    note: str = ""


RunResult.model_rebuild()  # resolves the forward reference to Sensitivity
