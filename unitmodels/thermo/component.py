"""Pure-component property data and correlations (SI throughout).

Each :class:`Component` carries the published coefficients of a small set
of correlations, chosen because they are smooth and cheap to differentiate
in casadi:

* ideal-gas heat capacity, a polynomial in T:
  ``Cp_ig(T) = sum_k c_k T**k`` in J/mol/K (the Poling-Prausnitz-O'Connell
  form ``Cp/R = a0 + a1 T + ... + a4 T**4`` scaled by R);
* liquid heat capacity, a polynomial of the same form (Perry's Table
  2-153 where tabulated, else Poling's 298.15 K value held constant);
* vapour pressure, the Antoine equation in SI,
  ``log10(Psat/Pa) = A - B / (T/K + C)``;
* enthalpy of vaporisation at 298.15 K (J/mol), the anchor of the liquid
  enthalpy (see :mod:`unitmodels.thermo.system`); from the difference of
  the gas and liquid heats of formation where both are tabulated, else
  from Perry's Table 2-150 correlation;
* liquid molar volume, either a constant or the Rackett / DIPPR-105 form
  ``V(T) = V_ref * B ** ((1 - T/Tc)**D - (1 - T_ref/Tc)**D)`` (Rackett:
  ``B = Zc``, ``D = 2/7``; Perry's Table 2-32 (DIPPR 105) coefficients
  where tabulated).

``Component.from_name`` fills these from the ``chemicals`` package's
tables (Poling Cp polynomials, Poling Antoine constants, Perry's Table
2-150 Hvap correlation, Perry's DIPPR-105 liquid densities, VDI/PPDS
densities or the Rackett equation, ideal-gas heats of formation). ``Component.from_data`` builds a user-defined
pseudo-component from a handful of numbers.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from unitmodels.base import UnitConfigError

R = 8.31446261815324  # J/mol/K, N_A k, exact since the 2019 SI redefinition
T_REF = 298.15  # K, reference temperature of heats of formation
P_REF = 101325.0  # Pa


@dataclass(frozen=True)
class Component:
    """One chemical species with its property correlations (all SI).

    Parameters
    ----------
    name : str
        Name used in flowsheet files (composition tables, stoichiometry).
    cas : str or None
        CAS registry number, None for a pseudo-component.
    formula : str or None
        Hill-style formula (``"C6H6"``); needed for element balances.
    molar_mass : float
        kg/mol.
    formation_enthalpy : float
        Ideal-gas enthalpy of formation from the elements at 298.15 K, J/mol.
    cp_gas : tuple of float
        Polynomial coefficients ``c_k`` of ``Cp_ig = sum c_k T**k``, J/mol/K/K**k.
    cp_liquid : tuple of float
        Same form for the liquid heat capacity.
    antoine : tuple of float
        ``(A, B, C)`` of ``log10(Psat/Pa) = A - B/(T/K + C)``.
    hvap_298 : float
        Enthalpy of vaporisation at 298.15 K, J/mol. Zero for species
        supercritical at 298.15 K (their dissolved "liquid" enthalpy is then
        taken equal to the ideal-gas enthalpy).
    v_liquid_ref : float
        Liquid molar volume at ``T_REF``, m**3/mol.
    rackett_tc, rackett_z, rackett_exponent : float or None
        ``Tc`` (K), base ``B`` and exponent ``D`` of the temperature
        dependence of the liquid volume; None keeps it constant.
    cp_gas_range, antoine_range : tuple of float
        Validity ranges (K) of the correlations as published (information
        only; the expressions extrapolate smoothly).
    condensable : bool
        False when the species is supercritical at 298.15 K.
    """

    name: str
    cas: str | None
    formula: str | None
    molar_mass: float
    formation_enthalpy: float
    cp_gas: tuple[float, ...]
    cp_liquid: tuple[float, ...]
    antoine: tuple[float, float, float]
    hvap_298: float
    v_liquid_ref: float
    rackett_tc: float | None = None
    rackett_z: float | None = None
    rackett_exponent: float = 2.0 / 7.0
    cp_gas_range: tuple[float, float] = (0.0, math.inf)
    antoine_range: tuple[float, float] = (0.0, math.inf)
    condensable: bool = True
    gibbs_formation: float | None = None
    sources: dict = field(default_factory=dict, compare=False, hash=False)

    # ------------------------------------------------------------------ builders
    @classmethod
    def from_name(cls, name_or_cas: str, name: str | None = None) -> "Component":
        """Build a component from the ``chemicals`` package's data tables.

        Parameters
        ----------
        name_or_cas : str
            Common name, formula or CAS number (``"benzene"``, ``"71-43-2"``).
        name : str, optional
            Name to use in flowsheet files; defaults to ``name_or_cas``.

        Raises
        ------
        UnitConfigError
            Unknown species or missing correlation data (field ``components``).
        """
        from chemicals import critical, identifiers
        from chemicals.heat_capacity import Cp_data_Poling
        from chemicals.phase_change import phase_change_data_Perrys2_150
        from chemicals.reaction import Hfg, Hfl
        from chemicals.vapor_pressure import Psat_data_AntoinePoling

        label = name or name_or_cas
        try:
            meta = identifiers.search_chemical(name_or_cas)
        except Exception as exc:
            raise UnitConfigError("components", f"unknown species {name_or_cas!r}") from exc
        cas = meta.CASs
        sources: dict[str, str] = {}
        if cas not in Cp_data_Poling.index or math.isnan(float(Cp_data_Poling.at[cas, "a0"])):
            raise UnitConfigError("components", f"{label}: no ideal-gas Cp polynomial (Poling) in chemicals; define it with Component.from_data")
        row = Cp_data_Poling.loc[cas]
        cp_gas = tuple(R * float(row[f"a{k}"]) for k in range(5))
        sources["cp_gas"] = "Poling-Prausnitz-O'Connell polynomial (chemicals Cp_data_Poling)"
        if cas in Psat_data_AntoinePoling.index:
            arow = Psat_data_AntoinePoling.loc[cas]
            antoine = (float(arow["A"]), float(arow["B"]), float(arow["C"]))
            antoine_range = (float(arow["Tmin"]), float(arow["Tmax"]))
            sources["psat"] = "Poling Antoine constants (chemicals Psat_data_AntoinePoling)"
        else:
            # Corresponding-states line through the critical point and the
            # acentric-factor point log10(Psat/Pc) = -1 - omega at T = 0.7 Tc:
            # log10(P/Pc) = (7/3)(1 + omega)(1 - Tc/T).
            from chemicals.acentric import omega as omega_of

            tc0, pc0, w0 = critical.Tc(cas), critical.Pc(cas), omega_of(cas)
            if tc0 is None or pc0 is None or w0 is None:
                raise UnitConfigError("components", f"{label}: no Antoine constants (Poling) and no Tc, Pc, omega; use Component.from_data")
            bb = 7.0 / 3.0 * (1 + w0) * tc0
            antoine = (math.log10(pc0) + bb / tc0, bb, 0.0)
            antoine_range = (0.7 * tc0, tc0)
            sources["psat"] = "estimate log10(P/Pc) = 7/3 (1 + omega)(1 - Tc/T) (no Antoine data)"
        hf = Hfg(cas)
        if hf is None:
            raise UnitConfigError("components", f"{label}: no ideal-gas heat of formation in chemicals")
        tc = critical.Tc(cas)
        pc = critical.Pc(cas)
        zc = critical.Zc(cas)
        # Species whose Tc is within ~30 K of 298.15 K (CO2, ethane) have no usable
        # liquid reference at 298.15 K; they are treated like permanent gases.
        condensable = tc is not None and tc > T_REF + 30.0
        if condensable:
            if cas not in phase_change_data_Perrys2_150.index:
                raise UnitConfigError("components", f"{label}: no enthalpy of vaporisation correlation (Perry's 2-150) in chemicals")
            h = phase_change_data_Perrys2_150.loc[cas]
            tr = T_REF / float(h["Tc"])
            hvap = float(h["C1"]) * (1 - tr) ** (float(h["C2"]) + float(h["C3"]) * tr + float(h["C4"]) * tr**2)
            sources["hvap_298"] = "Perry's Table 2-150 correlation at 298.15 K (chemicals)"
            hfl = Hfl(cas)
            if hfl is not None:
                # Hf(gas) - Hf(liquid) makes the liquid heat of formation exact, which is what
                # liquid-phase heats of reaction need; it also avoids the apparent (dimer-affected)
                # Hvap of carboxylic acids in vaporisation tables.
                hvap = float(hf) - float(hfl)
                sources["hvap_298"] = "Hf(ideal gas) - Hf(liquid) at 298.15 K (chemicals)"
            from chemicals import heat_capacity as _hc

            _hc._load_Cp_data()
            perry = _hc.Cp_data_Perry_Table_153_100
            cpl_298 = float(row["Cpl"])
            sources["cp_liquid"] = "Poling liquid Cp at 298.15 K, held constant"
            if cas in perry.index:
                # Perry's Table 2-153 polynomial (J/kmol/K) in T
                pr = perry.loc[cas]
                cp_liquid_poly = tuple(float(pr[k]) / 1000.0 for k in ("A", "B", "C", "D", "E"))
                sources["cp_liquid"] = "Perry's Table 2-153 polynomial (chemicals Cp_data_Perry_Table_153_100)"
            elif math.isnan(cpl_298):
                # corresponding-states estimate (Rowlinson-Bondi as given by Poling et al.)
                from chemicals.acentric import omega as omega_of
                from chemicals.heat_capacity import Rowlinson_Poling

                w = omega_of(cas)
                if tc is None or w is None:
                    raise UnitConfigError("components", f"{label}: no liquid Cp (Poling) and no Tc/omega to estimate it")
                cpl_298 = float(Rowlinson_Poling(T_REF, tc, w, sum(c * T_REF**k for k, c in enumerate(cp_gas))))
                sources["cp_liquid"] = "Rowlinson-Poling estimate at 298.15 K, held constant"
            cp_liquid: tuple[float, ...] = cp_liquid_poly if cas in perry.index else (cpl_298,)
        else:
            hvap = 0.0
            cp_liquid = cp_gas
            sources["hvap_298"] = "supercritical at 298.15 K: dissolved liquid enthalpy = ideal gas"
        if tc is None or pc is None or zc is None:
            raise UnitConfigError("components", f"{label}: no critical constants for the liquid volume")
        v_ref, v_tc, v_b, v_d = _liquid_volume_data(cas, tc, pc, zc, condensable, sources)
        return cls(
            name=label,
            cas=cas,
            formula=meta.formula,
            molar_mass=meta.MW / 1000.0,
            formation_enthalpy=float(hf),
            cp_gas=cp_gas,
            cp_liquid=cp_liquid,
            antoine=antoine,
            hvap_298=hvap,
            v_liquid_ref=v_ref,
            rackett_tc=v_tc,
            rackett_z=v_b,
            rackett_exponent=v_d,
            cp_gas_range=(float(row["Tmin"]), float(row["Tmax"])),
            antoine_range=antoine_range,
            condensable=condensable,
            gibbs_formation=_gibbs_formation(cas, meta.formula, float(hf)),
            sources=sources,
        )

    @classmethod
    def from_data(
        cls,
        name: str,
        molar_mass: float,
        formation_enthalpy: float,
        cp_gas: float | tuple[float, ...],
        cp_liquid: float | tuple[float, ...],
        antoine_a: float,
        antoine_b: float,
        antoine_c: float,
        liquid_density: float,
        hvap_298: float = 0.0,
        formula: str | None = None,
        gibbs_formation: float | None = None,
    ) -> "Component":
        """A user-defined (pseudo-)component.

        Parameters
        ----------
        name : str
        molar_mass : float
            kg/mol.
        formation_enthalpy : float
            Ideal-gas heat of formation at 298.15 K, J/mol.
        cp_gas, cp_liquid : float or tuple of float
            J/mol/K; a constant or polynomial coefficients in T (K).
        antoine_a, antoine_b, antoine_c : float
            ``log10(Psat/Pa) = A - B/(T/K + C)``.
        liquid_density : float
            kg/m**3, held constant.
        hvap_298 : float
            Enthalpy of vaporisation at 298.15 K, J/mol.
        formula : str, optional
            Needed only for element balances of reactors.
        gibbs_formation : float, optional
            Ideal-gas Gibbs energy of formation at 298.15 K, J/mol.
        """
        if molar_mass <= 0 or liquid_density <= 0:
            raise UnitConfigError("components", f"{name}: molar mass and liquid density must be positive")

        def poly(v: float | tuple[float, ...]) -> tuple[float, ...]:
            return tuple(float(x) for x in v) if isinstance(v, (tuple, list)) else (float(v),)

        return cls(
            name=name,
            cas=None,
            formula=formula,
            molar_mass=float(molar_mass),
            formation_enthalpy=float(formation_enthalpy),
            cp_gas=poly(cp_gas),
            cp_liquid=poly(cp_liquid),
            antoine=(float(antoine_a), float(antoine_b), float(antoine_c)),
            hvap_298=float(hvap_298),
            v_liquid_ref=float(molar_mass) / float(liquid_density),
            condensable=hvap_298 > 0,
            gibbs_formation=gibbs_formation,
            sources={"all": "user data"},
        )

    def atoms(self) -> dict[str, float]:
        """Element counts from :attr:`formula` (empty without a formula)."""
        if not self.formula:
            return {}
        from chemicals.elements import simple_formula_parser

        return {k: float(v) for k, v in simple_formula_parser(self.formula).items()}


# Standard entropies of the elements in their reference states at 298.15 K
# and 1 bar, J/mol/K per mole of the reference species (CODATA Key Values
# for Thermodynamics, Cox, Wagman and Medvedev 1989).
_ELEMENT_S0 = {
    "H": (2, 130.680),
    "O": (2, 205.152),
    "N": (2, 191.609),
    "C": (1, 5.74),
    "S": (1, 32.054),
    "Cl": (2, 223.081),
    "F": (2, 202.791),
    "Ar": (1, 154.846),
    "He": (1, 126.153),
}


def _gibbs_formation(cas: str, formula: str | None, hf: float) -> float | None:
    """Ideal-gas Gibbs energy of formation at 298.15 K and 1 bar, J/mol:
    ``Hf - 298.15 (S0 - sum_e n_e S0_e)`` with the species' absolute entropy
    from ``chemicals`` and the elements' from :data:`_ELEMENT_S0`; None
    when a datum is missing."""
    from chemicals.elements import simple_formula_parser
    from chemicals.reaction import S0g

    if formula is None:
        return None
    s0 = S0g(cas)
    if s0 is None:
        return None
    s_el = 0.0
    for el, count in simple_formula_parser(formula).items():
        if el not in _ELEMENT_S0:
            return None
        atoms_per, s = _ELEMENT_S0[el]
        s_el += count / atoms_per * s
    return hf - T_REF * (float(s0) - s_el)


def _liquid_volume_data(cas: str, tc: float, pc: float, zc: float, condensable: bool, sources: dict) -> tuple:
    """(V_ref m**3/mol at 298.15 K, Tc, B, D) of the liquid-volume form."""
    from chemicals import volume

    volume._load_rho_data()
    if not condensable:
        # a permanent gas "dissolved" in a liquid: a constant volume of the
        # order of its critical volume keeps concentrations finite
        sources["v_liquid"] = "R Tc Zc / Pc (constant; permanent gas)"
        return R * tc / pc * zc, None, None, 2.0 / 7.0
    d105 = volume.rho_data_Perry_8E_105_l
    if cas in d105.index:
        r = d105.loc[cas]
        a, b, c, d = (float(r[k]) for k in ("C1", "C2", "C3", "C4"))
        sources["v_liquid"] = "Perry's DIPPR-105 liquid density coefficients (chemicals)"
        return b ** (1 + (1 - T_REF / c) ** d) / a, c, b, d
    vdi = volume.rho_data_VDI_PPDS_2
    if cas in vdi.index:
        r = vdi.loc[cas]
        v = volume.volume_VDI_PPDS(T_REF, r.Tc, r.rhoc, r.A, r.B, r.C, r.D, r.MW)
        sources["v_liquid"] = "VDI/PPDS density at 298.15 K with the Rackett temperature shape (chemicals)"
        return float(v), tc, zc, 2.0 / 7.0
    sources["v_liquid"] = "Rackett equation with Tc, Pc, Zc (chemicals)"
    return float(volume.Rackett(T_REF, tc, pc, zc)), tc, zc, 2.0 / 7.0
