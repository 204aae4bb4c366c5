"""The units layer: one registry, exact messages, offset temperatures, currency."""

import math

import pytest

from plantopt import units as U
from plantopt.errors import DimensionError, InputError


def test_message_names_file_field_expected_and_given():
    with pytest.raises(DimensionError) as e:
        U.parse_quantity("5 kg", "volume", file="demo.toml", path="units.R1.volume")
    assert str(e.value) == "demo.toml: units.R1.volume: expected a volume, got '5 kg' (mass)"
    assert e.value.expected == "a volume" and e.value.given_dimension == "mass"


def test_bare_number_refused_where_a_dimension_is_needed():
    with pytest.raises(DimensionError) as e:
        U.parse_quantity(80, "temperature", file="f.toml", path="units.H1.outlet_temperature")
    assert str(e.value) == "f.toml: units.H1.outlet_temperature: expected a temperature with a unit (e.g. '350 K'), got '80' (bare number)"


def test_offset_temperature_converted_exactly():
    # 0 degC = 273.15 K by definition of the Celsius scale (SI Brochure, 9th ed.)
    assert U.si_value("80 degC", "temperature") == pytest.approx(353.15, abs=1e-12)
    assert U.si_value("212 degF", "temperature") == pytest.approx(373.15, abs=1e-9)


def test_temperature_and_difference_kept_apart():
    assert U.si_value("10 delta_degC", "temperature_difference") == pytest.approx(10.0)
    assert U.si_value("10 K", "temperature_difference") == pytest.approx(10.0)
    with pytest.raises(DimensionError):
        U.si_value("10 degC", "temperature_difference")
    with pytest.raises(DimensionError):
        U.si_value("10 delta_degC", "temperature")


def test_common_engineering_units():
    assert U.si_value("12.5 kmol/h", "molar_flow") == pytest.approx(12.5 * 1000 / 3600)
    assert U.si_value("2.5 bar", "pressure") == pytest.approx(2.5e5)
    assert U.si_value("0.42 USD/kg", "price_per_mass") == pytest.approx(0.42)
    assert U.si_value("420 USD/t", "price_per_mass") == pytest.approx(0.42)
    assert U.si_value("15 USD/MWh", "price_per_energy") == pytest.approx(15 / 3.6e9)


def test_currency_is_its_own_dimension():
    with pytest.raises(DimensionError):
        U.si_value("3 USD", "mass")
    with pytest.raises(DimensionError):
        U.si_value("3 kg/h", "price_per_mass")


def test_unknown_unit_and_garbage():
    with pytest.raises(InputError, match="unknown unit 'furlongs_per_blob'"):
        U.parse_quantity("3 furlongs_per_blob", "length")
    with pytest.raises(InputError, match="as '<number> <unit>'"):
        U.parse_quantity("hot", "temperature")
    with pytest.raises(InputError, match="finite"):
        U.parse_quantity(math.nan, "fraction")


def test_fraction_range():
    assert U.si_value(0.3, "fraction") == 0.3
    assert U.si_value("30 %", "fraction") == pytest.approx(0.3)
    with pytest.raises(InputError, match="between 0 and 1"):
        U.si_value(1.2, "fraction")


def test_rate_constant_kind_from_si_unit_text():
    k = U.resolve_kind("m**3/mol/s")
    assert U.to_si(U.parse_quantity("1 L/mol/s", k), k) == pytest.approx(1e-3)
    with pytest.raises(DimensionError):
        U.parse_quantity("1 1/s", k)
