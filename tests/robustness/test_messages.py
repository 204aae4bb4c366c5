"""Exact messages of the input checks added for robustness (the wording users see)."""

from __future__ import annotations

import pytest

from plantopt.errors import InputError, InputErrors
from plantopt.flowsheet import load_flowsheet, loads_flowsheet, parse_megabytes
from plantopt.units import parse_quantity

from . import mutations as M

DEMO = M.BASE_FILES["demo.toml"].read_text(encoding="utf-8")


def messages(text: str) -> list[str]:
    with pytest.raises(InputErrors) as e:
        loads_flowsheet(text, "demo.toml")
    return [str(x) for x in e.value.errors]


@pytest.mark.parametrize("old,new,expected", [
    ('volume = "12 m**3"', 'volume = "12 m**3**3**3"',
     "demo.toml: units.REACTOR.volume: cannot read unit 'm**3**3**3' (chained exponents in the unit)"),
    ("lower = 0.02", "lower = 1" + "0" * 30,
     "demo.toml: decisions.purge_fraction.lower: expected a fraction between 0 and 1, got 1e+30"),
    ("a = 9.848", "a = true", "demo.toml: components.dipb.antoine.a: expected a number, got the boolean true"),
    ("a = 9.848", "a = nan", "demo.toml: components.dipb.antoine.a: expected a finite number, got nan"),
    ('type = "cstr"', 'type = ["cstr"]',
     "demo.toml: units.REACTOR.type: expected a unit type as text (one of: component_separator, compressor, "
     "conversion_reactor, cstr, equilibrium_reactor, feed, flash, heat_exchanger, heater, mixer, pfr, product, pump, "
     "splitter, valve), got a list"),
    ('lower = "5500 kg/h"', 'lower = ["5500 kg/h"]',
     "demo.toml: limits.contract_minimum.lower: expected a quantity as text such as '1.5 kg' "
     "(or a number where no unit is needed), got a list"),
    ('temperature = "degC", pressure', 'temperature = "kg", pressure',
     "demo.toml: flowsheet.display.temperature: expected a unit of a temperature, got 'kg' "
     "(expected a temperature, got '1 kg' (mass))"),
    ('volume = "12 m**3"', 'volume = "12 m**3"\nvolume = "13 m**3"',
     "demo.toml: not valid TOML: Cannot overwrite a value (at line 99, column 19): 'volume = \"13 m**3\"' "
     "(a key or table given twice?)"),
    ('molar_mass = "162.27132 g/mol"', 'molar_mass = "-162.27132 g/mol"',
     "demo.toml: components.dipb.molar_mass: expected a positive value, got '-162.27132 g/mol'"),
])
def test_exact_messages(old, new, expected):
    assert old in DEMO
    assert messages(DEMO.replace(old, new, 1)) == [expected]


def test_closed_loop_named():
    text = DEMO + ('\n[units.LM]\ntype = "mixer"\ninlets = ["L2"]\noutlet = "L1"\n'
                   '[units.LH]\ntype = "heater"\ninlet = "L1"\noutlet = "L2"\noutlet_temperature = "300 K"\n')
    assert messages(text) == ["demo.toml: units.LM: no feed reaches this unit (every unit needs a path from a feed unit)",
                              "demo.toml: units.LH: no feed reaches this unit (every unit needs a path from a feed unit)"]


def test_non_utf8_and_depth_messages():
    assert messages(b"[flowsheet]\nname = \"\xff\"\n") == [
        "demo.toml: line 2: not UTF-8 text (byte 20); save the file as UTF-8"]
    assert messages(DEMO.replace('volume = "12 m**3"', "volume = " + "[" * 13 + "]" * 13)) == [
        "demo.toml: units.REACTOR.volume: tables or lists nested more than 12 deep; a flowsheet needs at most 5"]


def test_overflow_on_conversion_and_huge_integers():
    with pytest.raises(InputError) as e:
        parse_quantity("1e308 kmol/s", "molar_flow", file="f", path="p")
    assert str(e.value) == "f: p: expected a finite number, got '1e308 kmol/s' (inf in mol/s)"
    with pytest.raises(InputError) as e:
        parse_quantity(10**400, "fraction", file="f", path="p")
    assert str(e.value) == "f: p: expected a fraction between 0 and 1, got an integer with 401 digits"


def test_size_limit_messages(tmp_path):
    assert parse_megabytes("0.5", file="x", path="y") == 524288
    with pytest.raises(InputError) as e:
        parse_megabytes("-1", file="<command line>", path="--max-input-mb")
    assert str(e.value) == "<command line>: --max-input-mb: expected a positive number of megabytes (at most 1048576), got '-1'"
    p = tmp_path / "d.toml"
    p.write_text(DEMO)
    with pytest.raises(InputErrors) as e:
        load_flowsheet(p, max_bytes=100)
    assert str(e.value.errors[0]) == (f"{p}: file is {p.stat().st_size} bytes, larger than the limit of 100 bytes "
                                      "(raise it with 'plantopt --max-input-mb N' or PLANTOPT_MAX_INPUT_MB)")


def test_override_messages():
    fs = load_flowsheet(M.BASE_FILES["demo.toml"])
    cases = {
        ("units.FEED_BZ.molar_flow", "-5"): "<command line>: units.FEED_BZ.molar_flow: expected a value not negative, got '-5'",
        ("units.FEED_BZ.molar_flow", "nan"): "<command line>: units.FEED_BZ.molar_flow: expected a finite number, got 'nan'",
        ("decisions.benzene_feed.lower", "150"): "<command line>: decisions.benzene_feed: lower 150 kmol/h is above upper 140 kmol/h",
        ("units.FEED_C3.composition.propane", "0.5"): "<command line>: units.FEED_C3.composition: mole fractions sum to 1.45, expected 1",
        ("units.FEED_BZ.molar_flow", "200"): ("<command line>: units.FEED_BZ.molar_flow: the base value 200 kmol/h lies outside "
                                              "the range of decisions.benzene_feed [50, 140] kmol/h"),
    }
    for (path, value), expected in cases.items():
        with pytest.raises(InputErrors) as e:
            fs.with_overrides({path: value})
        assert [str(x) for x in e.value.errors] == [expected]
    # the original is untouched by a rejected or an accepted override
    fs.with_overrides({"units.FEED_BZ.molar_flow": "100"})
    assert fs.inputs["units.FEED_BZ.molar_flow"].display() == pytest.approx(80.0)
