"""Property expressions against the ``chemicals`` package's own functions,
the IAPWS-IF97 steam tables (``iapws`` package) and published table values.

Sources of the table values are named at each check; "from memory" marks
values recalled rather than read from the source during writing.
"""

from __future__ import annotations

import casadi as ca
import numpy as np
import pytest
from chemicals.heat_capacity import Cp_data_Poling, Poling, Poling_integral
from chemicals.vapor_pressure import Antoine, Psat_data_AntoinePoling
from chemicals import volume as chem_volume

from unitmodels.base import UnitConfigError
from unitmodels.thermo import Component, ComponentSystem

NAMES = ["benzene", "toluene", "water", "ethanol", "n-butane"]


@pytest.fixture(scope="module")
def system():
    return ComponentSystem(NAMES)


def _poling(cas):
    return [float(Cp_data_Poling.at[cas, f"a{k}"]) for k in range(5)]


@pytest.mark.parametrize("T", [250.0, 298.15, 400.0, 650.0, 950.0])
def test_cp_and_enthalpy_match_chemicals_poling(system, T):
    """Cp_ig and its integral against chemicals.heat_capacity.Poling / Poling_integral."""
    cp = system.cp_num(T, "vapour")
    h = system.h_ig_num(T)
    for i, c in enumerate(system.components):
        a = _poling(c.cas)
        assert cp[i] == pytest.approx(Poling(T, *a), rel=1e-12)
        dh = Poling_integral(T, *a) - Poling_integral(298.15, *a)
        assert h[i] - c.formation_enthalpy == pytest.approx(dh, rel=1e-10, abs=1e-8)


@pytest.mark.parametrize("T", [300.0, 330.0, 360.0])
def test_psat_matches_chemicals_antoine(system, T):
    """Antoine in SI (log10 Pa, K) against chemicals.vapor_pressure.Antoine with Poling's constants."""
    ps = system.psat_num(T)
    for i, c in enumerate(system.components):
        r = Psat_data_AntoinePoling.loc[c.cas]
        assert ps[i] == pytest.approx(Antoine(T, float(r.A), float(r.B), float(r.C)), rel=1e-12)


def test_psat_normal_boiling_points():
    """Psat at the normal boiling point is one atmosphere.

    Tb: benzene 353.24 K, toluene 383.78 K, ethanol 351.44 K (NIST WebBook
    phase-change data, from memory); water 373.124 K (IAPWS-95, 1 atm).
    Antoine fits reproduce their data to a few tenths of a percent.
    """
    s = ComponentSystem(["benzene", "toluene", "ethanol", "water"])
    for i, tb in enumerate([353.24, 383.78, 351.44, 373.124]):
        assert s.psat_num(tb)[i] == pytest.approx(101325.0, rel=5e-3)


def test_water_psat_against_iapws():
    """Water vapour pressure against IAPWS-IF97 (iapws package) over 300-450 K."""
    import iapws

    s = ComponentSystem(["water"])
    for T in (300.0, 350.0, 400.0, 450.0):
        assert s.psat_num(T)[0] == pytest.approx(iapws.IAPWS97(T=T, x=0).P * 1e6, rel=5e-3)


def test_ideal_gas_cp_table_values():
    """Ideal-gas Cp at 298.15 K: water 33.58 J/mol/K and benzene 82.4 J/mol/K
    (NIST WebBook gas-phase thermochemistry, from memory)."""
    s = ComponentSystem(["water", "benzene"])
    cp = s.cp_num(298.15, "vapour")
    assert cp[0] == pytest.approx(33.58, rel=5e-3)
    assert cp[1] == pytest.approx(82.4, rel=1e-2)


def test_enthalpy_of_vaporisation_of_water_against_iapws():
    """Implied Hvap = h_ig - h_liq against IAPWS-IF97 at 298.15 K and 373.15 K.

    At 298.15 K the anchor is Hf(g) - Hf(l) (43.99 kJ/mol, equal to the
    steam-table value); at 373.15 K the Kirchhoff path neglects the
    non-ideality of the vapour at 1 atm, so 1 % there.
    """
    import iapws

    s = ComponentSystem(["water"])
    mw = 18.015268e-3
    for T, rel in ((298.15, 2e-3), (373.15, 1e-2)):
        ref = (iapws.IAPWS97(T=T, x=1).h - iapws.IAPWS97(T=T, x=0).h) * 1e3 * mw
        assert s.hvap_num(T)[0] == pytest.approx(ref, rel=rel)


def test_hvap_anchor_agrees_with_perry_correlation():
    """Hf(g) - Hf(l) at 298.15 K agrees with Perry's Table 2-150 Hvap
    correlation (an independent data set) for non-associating liquids;
    the two data sets agree to 3 % (n-butane differs most, 2.1 %)."""
    from chemicals.phase_change import phase_change_data_Perrys2_150 as d

    for name in ["benzene", "toluene", "n-butane"]:
        c = Component.from_name(name)
        r = d.loc[c.cas]
        tr = 298.15 / float(r.Tc)
        perry = float(r.C1) * (1 - tr) ** (float(r.C2) + float(r.C3) * tr + float(r.C4) * tr**2)
        assert c.hvap_298 == pytest.approx(perry, rel=3e-2)


def test_benzene_hvap_at_normal_boiling_point():
    """Benzene Hvap at Tb (353.2 K) is 30.72 kJ/mol (NIST WebBook, from memory);
    the Kirchhoff path (Hf difference at 298.15 K, Perry's liquid Cp) treats
    the saturated vapour as an ideal gas, which neglects a residual enthalpy
    of a few hundred J/mol at 1 atm, so 2 %."""
    s = ComponentSystem(["benzene"])
    assert s.hvap_num(353.2)[0] == pytest.approx(30720.0, rel=2e-2)


def test_liquid_volume_against_chemicals_dippr105_and_tables():
    """Liquid molar volume: the DIPPR-105 form against chemicals.dippr.EQ105
    with Perry's coefficients, and densities at 298.15 K against handbook
    values (Perry's Table 2-2, from memory: benzene 873.8, ethanol 785.1,
    water 997.0 kg/m3)."""
    from chemicals.dippr import EQ105

    chem_volume._load_rho_data()
    s = ComponentSystem(["benzene", "ethanol", "water"])
    d = chem_volume.rho_data_Perry_8E_105_l
    for T in (280.0, 320.0, 400.0):
        v = s.liquid_molar_volume_num(T)
        for i, c in enumerate(s.components[:2]):
            r = d.loc[c.cas]
            rho_molar = EQ105(T, float(r.C1), float(r.C2), float(r.C3), float(r.C4))
            assert v[i] == pytest.approx(1.0 / rho_molar, rel=1e-6)
    rho = s.mw / s.liquid_molar_volume_num(298.15)
    assert rho == pytest.approx([873.8, 785.1, 997.0], rel=3e-3)


def test_symbolic_and_numeric_agree_and_derivative_is_cp(system):
    """d h / dT of the casadi expression equals Cp for both phases (consistency)."""
    T = ca.SX.sym("T")
    for phase in ("vapour", "liquid"):
        dh = ca.Function("dh", [T], [ca.jacobian(system.h(T, phase), T)])
        for t in (280.0, 420.0):
            assert np.array(dh(t)).ravel() == pytest.approx(system.cp_num(t, phase), rel=1e-12)


def test_heat_of_reaction_from_formation_enthalpies():
    """Water-gas shift CO + H2O -> CO2 + H2 at 298.15 K: -41.2 kJ/mol
    (NIST-JANAF formation enthalpies, from memory: CO -110.53, H2O(g)
    -241.83, CO2 -393.51 kJ/mol give -41.15 kJ/mol)."""
    s = ComponentSystem(["carbon monoxide", "water", "carbon dioxide", "hydrogen"])
    nu = np.array([-1.0, -1.0, 1.0, 1.0])
    assert nu @ s.h_ig_num(298.15) == pytest.approx(-41150.0, rel=2e-3)


def test_from_data_pseudo_component_and_errors():
    c = Component.from_data("oil", 0.3, -5.0e5, 400.0, (500.0, 0.1), 9.0, 2000.0, -50.0, 850.0, hvap_298=6.0e4)
    s = ComponentSystem([c])
    # Antoine form log10(P/Pa) = A - B/(T + C)
    assert s.psat_num(350.0)[0] == pytest.approx(10 ** (9.0 - 2000.0 / 300.0), rel=1e-12)
    assert s.liquid_molar_volume_num(400.0)[0] == pytest.approx(0.3 / 850.0, rel=1e-12)
    assert s.h_liq_num(298.15)[0] == pytest.approx(-5.0e5 - 6.0e4, rel=1e-12)
    assert s.cp_num(400.0, "liquid")[0] == pytest.approx(540.0, rel=1e-12)
    with pytest.raises(UnitConfigError):
        ComponentSystem([c, c])
    with pytest.raises(UnitConfigError):
        Component.from_name("no-such-chemical-xyz")
    with pytest.raises(UnitConfigError):
        s.index("benzene")


def test_element_matrix():
    s = ComponentSystem(["ethanol", "water"])
    el, A = s.element_matrix()
    assert el == ["C", "H", "O"]
    assert A.tolist() == [[2, 0], [6, 2], [1, 1]]


def test_liquid_cp_against_perry_polynomial():
    """Liquid Cp against chemicals.heat_capacity's Perry Table 2-153 data
    evaluated with chemicals.dippr.EQ100, and water at 298.15 K against the
    IAPWS-IF97 value (75.3 J/mol/K)."""
    import iapws
    from chemicals import heat_capacity as hc
    from chemicals.dippr import EQ100

    hc._load_Cp_data()
    s = ComponentSystem(["benzene", "water"])
    for T in (290.0, 330.0, 370.0):
        cp = s.cp_num(T, "liquid")
        for i, c in enumerate(s.components):
            r = hc.Cp_data_Perry_Table_153_100.loc[c.cas]
            assert cp[i] == pytest.approx(EQ100(T, r.A, r.B, r.C, r.D, r.E) / 1000.0, rel=1e-12)
    cp_w = iapws.IAPWS97(T=298.15, P=0.101325).cp * 18.015268
    assert s.cp_num(298.15, "liquid")[1] == pytest.approx(cp_w, rel=2e-3)
