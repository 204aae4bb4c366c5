"""Loading flowsheet files: every problem reported at once, with file and field."""

import pytest

from plantopt.errors import InputErrors
from plantopt.flowsheet import input_rows, load_flowsheet, loads_flowsheet

BASE = """
[flowsheet]
name = "t"

[components.benzene]
source = "benzene"
[components.toluene]
source = "toluene"

[units.F1]
type = "feed"
outlet = "S1"
molar_flow = "100 kmol/h"
temperature = "25 degC"
pressure = "2 bar"
composition = { benzene = 0.4, toluene = 0.6 }

[units.H1]
type = "heater"
inlet = "S1"
outlet = "S2"
outlet_temperature = "80 degC"

[units.P1]
type = "product"
inlet = "S2"
"""


def errors_of(text: str) -> list[str]:
    with pytest.raises(InputErrors) as e:
        loads_flowsheet(text, "t.toml")
    return [str(x) for x in e.value.errors]


def test_base_loads():
    fs = loads_flowsheet(BASE, "t.toml")
    assert set(fs.units) == {"F1", "H1", "P1"}
    assert fs.inputs["units.H1.outlet_temperature"].si == pytest.approx(353.15)
    assert fs.streams["S2"].source == ("H1", "outlet", 0)


def test_temperature_in_kg_names_the_field():
    errs = errors_of(BASE.replace('outlet_temperature = "80 degC"', 'outlet_temperature = "80 kg"'))
    assert errs == ["t.toml: units.H1.outlet_temperature: expected a temperature, got '80 kg' (mass)"]


def test_all_problems_reported_together():
    bad = BASE.replace('source = "toluene"', 'source = "toluene"\nboiling = "3 K"')  # unknown key
    bad = bad.replace('composition = { benzene = 0.4, toluene = 0.6 }', 'composition = { benzene = 0.4, toluene = 0.5 }')
    bad = bad.replace('pressure = "2 bar"', 'pressure = "2 kg"')
    bad = bad.replace('inlet = "S2"', 'inlet = "S9"')
    errs = errors_of(bad)
    joined = "\n".join(errs)
    # pydantic shape errors come first and stop the meaning checks; fix them and the rest appear together
    assert "components.toluene.boiling: unknown key" in joined
    errs = errors_of(bad.replace('boiling = "3 K"\n', ""))
    joined = "\n".join(errs)
    assert "units.F1.composition: mole fractions sum to 0.9, expected 1" in joined
    assert "units.F1.pressure: expected a pressure, got '2 kg' (mass)" in joined
    assert "stream 'S9' enters here but no unit produces it" in joined
    assert "stream 'S2' leaves here but no unit takes it in" in joined


def test_unknown_component_type_and_misspelt_spec():
    errs = errors_of(BASE.replace('composition = { benzene = 0.4, toluene = 0.6 }',
                                  'composition = { benzene = 0.4, toluene = 0.6, xylol = 0.0 }')
                     .replace('type = "heater"', 'type = "heeter"')
                     .replace('molar_flow = "100 kmol/h"', 'molar_flw = "100 kmol/h"'))
    joined = "\n".join(errs)
    assert "units.F1.composition.xylol: unknown component" in joined
    assert "units.H1.type: unknown unit type 'heeter'" in joined
    assert "units.F1.molar_flw: unknown key for a feed" in joined


def test_doubly_connected_port_and_negative_flow():
    text = BASE.replace('[units.P1]', '[units.P2]\ntype = "product"\ninlet = "S2"\n\n[units.P1]')
    errs = errors_of(text.replace('molar_flow = "100 kmol/h"', 'molar_flow = "-5 kmol/h"'))
    joined = "\n".join(errs)
    assert "stream 'S2' already enters units." in joined
    assert "units.F1.molar_flow: expected a value not negative" in joined


def test_unknown_limit_and_decision_targets():
    text = BASE + """
[limits.too_hot]
quantity = "units.H1.temprature"
upper = "100 degC"

[decisions.d]
input = "units.H1.duty"
lower = "0 kW"
upper = "10 kW"
"""
    joined = "\n".join(errors_of(text))
    assert "limits.too_hot.quantity: unit 'H1' has no quantity 'temprature'" in joined
    assert "decisions.d.input: 'units.H1.duty' is not a specification given in the file" in joined


def test_empty_nonutf8_and_bad_toml(tmp_path):
    for content, msg in ((b"", "file is empty"), (b"\xff\xfe\x00", "not UTF-8"), (b"[flowsheet\nname=", "not valid TOML")):
        p = tmp_path / "x.toml"
        p.write_bytes(content)
        with pytest.raises(InputErrors) as e:
            load_flowsheet(p)
        assert msg in str(e.value) and "x.toml" in str(e.value)


def test_demo_inputs_have_addresses(demo_path):
    fs = load_flowsheet(demo_path)
    rows = {r["path"]: r for r in input_rows(fs)}
    assert rows["economics.feeds.FEED_BZ"]["kind"] == "price"
    assert rows["economics.feeds.FEED_BZ"]["unit"] == "USD/kg"
    assert rows["limits.reactor_temperature.upper"]["value"] == pytest.approx(200.0)
    assert rows["limits.reactor_temperature.upper"]["unit"] == "degC"
    assert rows["units.REACTOR.temperature"]["kind"] == "decision"
    assert rows["units.PURGE_SPLIT.fraction.S_PURGE"]["value"] == pytest.approx(0.10)
    assert rows["reactions.alkylation.activation_energy"]["kind"] == "kinetics"


def test_set_input_reads_bare_numbers_in_file_unit(demo_path):
    fs = load_flowsheet(demo_path).copy()
    fs.set_input("limits.reactor_temperature.upper", "190")
    assert fs.inputs["limits.reactor_temperature.upper"].si == pytest.approx(463.15)
    fs.set_input("economics.feeds.FEED_C3", "950 USD/t")
    assert fs.inputs["economics.feeds.FEED_C3"].si == pytest.approx(0.95)
    with pytest.raises(Exception, match="no such input"):
        fs.set_input("economics.feeds.NOPE", "1")
    with pytest.raises(Exception, match="expected a temperature"):
        fs.set_input("limits.reactor_temperature.upper", "190 bar")
