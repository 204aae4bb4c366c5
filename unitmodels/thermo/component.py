"""Pure-component property data and correlations (SI throughout).

Each :class:`Component` carries the published coefficients of a small set
of correlations, chosen because they are smooth and cheap to differentiate
in casadi:

* ideal-gas heat capacity, a polynomial in T:
  ``Cp_ig(T) = sum_k c_k T**k`` in J/mol/K (the Poling-Prausnitz-O'Connell
  form ``Cp/R = a0 + a1 T + ... + a4 T**4`` scaled by R);
* liquid heat capacity, a polynomial of the same form (often a constant);
* vapour pressure, the Antoine equation in SI,
  ``log10(Psat/Pa) = A - B / (T/K + C)``;
* enthalpy of vaporisation at 298.15 K (J/mol), the anchor of the liquid
  enthalpy (see :mod:`unitmodels.thermo.system`); from the difference of
  the gas and liquid heats of formation where both are tabulated, else
  from Perry's Table 2-150 correlation;
* liquid molar volume, either a constant or the Rackett form
  ``V(T) = V_ref * Zra ** ((1 - T/Tc)**(2/7) - (1 - T_ref/Tc)**(2/7))``.

``Component.from_name`` fills these from the ``chemicals`` package's
tables (Poling Cp polynomials, Poling Antoine constants, Perry's Table
2-150 Hvap correlation, critical constants for Rackett, ideal-gas heats
of formation). ``Component.from_data`` builds a user-defined
pseudo-component from a handful of numbers.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from unitmodels.base import UnitConfigError

R = 8.314462618  # J/mol/K, CODATA 2018 (exact by the 2019 SI definition)
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
    rackett_tc, rackett_z : float or None
        Critical temperature (K) and Rackett compressibility for the
        temperature dependence of the liquid volume; None keeps it constant.
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
        if cas not in Psat_data_AntoinePoling.index:
            raise UnitConfigError("components", f"{label}: no Antoine constants (Poling) in chemicals; define it with Component.from_data")
        arow = Psat_data_AntoinePoling.loc[cas]
        antoine = (float(arow["A"]), float(arow["B"]), float(arow["C"]))
        hf = Hfg(cas)
        if hf is None:
            raise UnitConfigError("components", f"{label}: no ideal-gas heat of formation in chemicals")
        tc = critical.Tc(cas)
        pc = critical.Pc(cas)
        zc = critical.Zc(cas)
        condensable = tc is not None and tc > T_REF
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
            cpl_298 = float(row["Cpl"])
            sources["cp_liquid"] = "Poling liquid Cp at 298.15 K, held constant"
            if math.isnan(cpl_298):
                # corresponding-states estimate (Rowlinson-Bondi as given by Poling et al.)
                from chemicals.acentric import omega as omega_of
                from chemicals.heat_capacity import Rowlinson_Poling

                w = omega_of(cas)
                if tc is None or w is None:
                    raise UnitConfigError("components", f"{label}: no liquid Cp (Poling) and no Tc/omega to estimate it")
                cpl_298 = float(Rowlinson_Poling(T_REF, tc, w, sum(c * T_REF**k for k, c in enumerate(cp_gas))))
                sources["cp_liquid"] = "Rowlinson-Poling estimate at 298.15 K, held constant"
            cp_liquid: tuple[float, ...] = (cpl_298,)
        else:
            hvap = 0.0
            cp_liquid = cp_gas
            sources["hvap_298"] = "supercritical at 298.15 K: dissolved liquid enthalpy = ideal gas"
        if tc is None or pc is None or zc is None:
            raise UnitConfigError("components", f"{label}: no critical constants for the liquid volume")
        from chemicals.volume import Rackett

        v_ref = Rackett(T_REF, tc, pc, zc) if condensable else R * tc / pc * zc
        sources["v_liquid"] = "Rackett equation with Tc, Pc, Zc (chemicals)"
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
            rackett_tc=tc if condensable else None,
            rackett_z=zc if condensable else None,
            cp_gas_range=(float(row["Tmin"]), float(row["Tmax"])),
            antoine_range=(float(arow["Tmin"]), float(arow["Tmax"])),
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


def _gibbs_formation(cas: str, formula: str | None, hf: float) -> float | None:
    """Ideal-gas Gibbs energy of formation at 298.15 K, J/mol.

    Not filled from ``chemicals`` yet (needed only by an equilibrium
    reactor); give it with :meth:`Component.from_data` meanwhile.
    """
    return None
