"""User species blocks of a case file: formation data or reaction-level data.
"""
from __future__ import annotations

import math
from dataclasses import replace
from typing import Mapping


from ...thermo.database import DatabaseError, SpeciesDatabase, UnknownSpeciesError, species_from_mapping
from ...thermo.elements import molar_mass as molar_mass_of, parse_formula
from ...thermo.models import R, T_REF
from ...thermo.reactions import ReactionDerivedModel, ReactionError, ReactionLevelData, reaction_terms
from ...thermo.species import CriticalConstants, Species
from ...thermo.units import UnitError, excerpt, pure_number
from .checker import Checker, join_path
from .schema import (
    CRITICAL_KEYS, FORMATION_KEYS, REACTION_DATA_KEYS, SPAN_KEYS, USER_SPECIES_KEYS, USER_UNCERTAINTY_KEYS,
    UserSpeciesRecord,
)
# ====================================================================== user species


def read_user_species(doc, ck: Checker, base_db: SpeciesDatabase) -> list[UserSpeciesRecord]:
    block = doc["user_species"]
    if not isinstance(block, Mapping):
        ck.add("user_species", "give a mapping NAME: {formula, source, formation_data or reaction_data}",
               ck.line_of(doc, "user_species"))
        return []
    out = []
    for name, entry in block.items():
        path = join_path("user_species", str(name))
        line = ck.line_of(block, name)
        name = str(name)
        if name in base_db:
            ck.add(path, f"{name} is already in the database (as {base_db.resolve(name)}); choose another name "
                   "for your own data", line)
            continue
        sec = ck.section(block, name, path, USER_SPECIES_KEYS, ("source",), what="species")
        if sec is None:
            continue
        has_f, has_r = "formation_data" in sec, "reaction_data" in sec
        if has_f == has_r:
            ck.add(path, "give exactly one of formation_data (ΔfH°, S°, cp) or reaction_data (a reaction and "
                   "its ΔrH°, ΔrS° or K)", line)
            continue
        source = ck.text(sec, "source", f"{path}.source")
        p_std = _standard_pressure(ck, sec, path, line)
        if p_std is None:
            continue
        phase = str(sec.get("phase", "gas"))
        if phase not in ("gas", "solid", "liquid"):
            ck.add(f"{path}.phase", f"{excerpt(phase)} is not gas, solid or liquid", ck.line_of(sec, "phase"))
            continue
        critical = None
        if "critical" in sec:
            crit = ck.section(sec, "critical", f"{path}.critical", CRITICAL_KEYS, CRITICAL_KEYS,
                              what="critical-constant")
            if crit is None or not all(k in crit for k in CRITICAL_KEYS):
                continue
            tc = ck.quantity(crit, "Tc", f"{path}.critical.Tc", "temperature")
            pc = ck.quantity(crit, "Pc", f"{path}.critical.Pc", "pressure", positive=True)
            try:
                om = pure_number(crit["omega"])
            except UnitError as exc:
                ck.add(f"{path}.critical.omega", str(exc), ck.line_of(crit, "omega"))
                continue
            if tc is None or pc is None:
                continue
            critical = CriticalConstants(tc, pc, om, source)
        if has_f:
            rec = _formation_species(ck, sec, name, path, phase, source, critical, p_std)
        else:
            rec = _reaction_species(ck, sec, name, path, phase, source, critical, base_db, p_std)
        if rec is not None:
            out.append(rec)
    return out


#: The standard pressures a user's data may be on [Pa], and their names.
USER_STANDARD_PRESSURES = {1e5: "1 bar", 101325.0: "1 atm"}


def _standard_pressure(ck, sec, path, line) -> float | None:
    """The standard pressure of the user's data [Pa]: 1e5 (1 bar) or 101325 (1 atm); required,
    because data on 1 atm read as 1 bar shift K by 1.01325^Δn (2.6 % for ammonia synthesis)."""
    if "standard_pressure" not in sec:
        ck.add(path, "missing key 'standard_pressure'; say on which standard state the data are: "
               "standard_pressure: 1 bar (NIST-JANAF since 1982, NASA polynomials) or standard_pressure: 1 atm "
               "(older tables)", line)
        return None
    p = ck.quantity(sec, "standard_pressure", f"{path}.standard_pressure", "pressure", positive=True)
    if p is None:
        return None
    for known in USER_STANDARD_PRESSURES:
        if abs(p - known) <= 1e-6 * known:
            return known
    ck.add(f"{path}.standard_pressure", f"{excerpt(sec['standard_pressure'])} is neither 1 bar nor 1 atm; give the "
           "standard pressure of your source, standard_pressure: 1 bar or standard_pressure: 1 atm",
           ck.line_of(sec, "standard_pressure"))
    return None


def _valid_range(ck, sec, path, default):
    if "valid" not in sec:
        return default
    g = ck.section(sec, "valid", f"{path}.valid", SPAN_KEYS, SPAN_KEYS, what="range")
    if g is None or "low" not in g or "high" not in g:
        return None
    lo = ck.quantity(g, "low", f"{path}.valid.low", "temperature")
    hi = ck.quantity(g, "high", f"{path}.valid.high", "temperature")
    if lo is None or hi is None:
        return None
    if hi <= lo:
        ck.add(f"{path}.valid", "high must be above low", ck.line_of(sec, "valid"))
        return None
    return (lo, hi)


def _cp_coefficients(ck, parent, key, path) -> tuple | None:
    value = parent[key]
    if isinstance(value, list):
        if not 1 <= len(value) <= 5:
            ck.add(path, "give 1 to 5 coefficients [c0, c1, c2, c3, c_2] (SI: J/(mol K), J/(mol K²), ...)",
                   ck.line_of(parent, key))
            return None
        try:
            return tuple(pure_number(v) for v in value)
        except UnitError as exc:
            ck.add(path, str(exc) + "; list coefficients as plain SI numbers", ck.line_of(parent, key))
            return None
    v = ck.quantity(parent, key, path, "molar_heat_capacity")
    return None if v is None else (v,)


def _formation_species(ck, sec, name, path, phase, source, critical, p_std) -> UserSpeciesRecord | None:
    """A species from its formation data; a gas's S° on 1 atm is moved to 1 bar
    (S°(1 bar) = S°(1 atm) + R ln 1.01325) by the database reader."""
    fpath = f"{path}.formation_data"
    f = ck.section(sec, "formation_data", fpath, FORMATION_KEYS, ("enthalpy", "entropy", "cp"), what="formation-data")
    if f is None or not all(k in f for k in ("enthalpy", "entropy", "cp")):
        return None
    if "formula" not in sec:
        ck.add(path, "missing key 'formula'; give the chemical formula, e.g. formula: C2H6O",
               getattr(sec, "line", None))
        return None
    dh = ck.quantity(f, "enthalpy", f"{fpath}.enthalpy", "molar_energy")
    s = ck.quantity(f, "entropy", f"{fpath}.entropy", "molar_entropy")
    cp = _cp_coefficients(ck, f, "cp", f"{fpath}.cp")
    bounds = _valid_range(ck, f, fpath, (T_REF, 1500.0))
    unc = _data_uncertainty(ck, f, fpath, ("formation_enthalpy", "entropy"))
    if None in (dh, s, cp, bounds, unc):
        return None
    if s <= 0:
        ck.add(f"{fpath}.entropy", "a standard entropy is positive (third law)", ck.line_of(f, "entropy"))
        return None
    entry = {"formula": str(sec["formula"]), "phase": phase,
             "thermo": {"model": "formation-data", "formation_enthalpy": dh, "entropy": s, "cp": list(cp),
                        "T_bounds": list(bounds), "reference": "CASE"}}
    try:
        sp = species_from_mapping(name, entry, {"CASE": {"cite": source, "standard_pressure_Pa": p_std}}, ck.file)
    except DatabaseError as exc:
        ck.add(f"{path}.formula", str(exc).split(": ", 2)[-1], ck.line_of(sec, "formula"))
        return None
    if critical is not None:
        sp = _with_critical(sp, critical)
    detail = (f"ΔfH°(298.15 K) = {dh / 1000:g} kJ/mol, S° = {s:g} J/(mol K), cp coefficients {list(cp)}, "
              f"valid {bounds[0]:g}-{bounds[1]:g} K" + _standard_state_detail(p_std, phase == "gas")
              + _uncertainty_detail(unc))
    return UserSpeciesRecord(name, "formation data", source, detail, sp, unc)


def _standard_state_detail(p_std: float, converted: bool) -> str:
    name = USER_STANDARD_PRESSURES[p_std]
    if p_std == 1e5:
        return f"; standard state {name}"
    return f"; standard state {name}" + (", converted to 1 bar" if converted else " (no change for this phase)")


_UNCERTAINTY_SYMBOLS = {"formation_enthalpy": ("ΔfH°", 1000.0, "kJ/mol"), "entropy": ("S°", 1.0, "J/(mol K)"),
                        "reaction_enthalpy": ("ΔrH°", 1000.0, "kJ/mol"),
                        "reaction_entropy": ("ΔrS°", 1.0, "J/(mol K)")}


def _data_uncertainty(ck, parent, path, kinds: tuple) -> dict | None:
    """Standard uncertainties given with a species' own data (``uncertainty: {enthalpy,
    entropy}`` inside ``formation_data`` or ``reaction_data``), as {datum kind: SI value};
    {} when none are given, None on a problem."""
    if "uncertainty" not in parent:
        return {}
    upath = f"{path}.uncertainty"
    m = ck.section(parent, "uncertainty", upath, USER_UNCERTAINTY_KEYS, what="uncertainty")
    if m is None:
        return None
    out, ok = {}, True
    for key, kind, unit_kind, example in (("enthalpy", kinds[0], "molar_energy", "'1.5 kJ/mol'"),
                                          ("entropy", kinds[1], "molar_entropy", "'0.5 J/(mol K)'")):
        if key not in m:
            continue
        v = ck.quantity(m, key, f"{upath}.{key}", unit_kind)
        if v is None:
            ok = False
            continue
        if v < 0:
            ck.add(f"{upath}.{key}", f"{excerpt(m[key])}: a standard uncertainty is zero or positive; give e.g. {example}",
                   ck.line_of(m, key))
            ok = False
            continue
        out[kind] = v
    return out if ok else None


def _uncertainty_detail(unc: dict) -> str:
    parts = []
    for kind, u in unc.items():
        symbol, scale, unit = _UNCERTAINTY_SYMBOLS[kind]
        parts.append(f"u({symbol}) = {u / scale:g} {unit}")
    return ("; standard uncertainties " + ", ".join(parts)) if parts else ""


def _with_critical(sp: Species, critical: CriticalConstants) -> Species:
    return replace(sp, critical=critical)


def _reaction_formula(ck, sec, r, name, path, rpath, db) -> tuple | None:
    """(partners [(Species, ν)], ν of the new species, its elements, its formula) from the
    reaction that forms it, checked against a formula given beside it."""
    text = r["reaction"]
    if not isinstance(text, str):
        ck.add(f"{rpath}.reaction", f"write the reaction that forms {name} as text, e.g. 'A + B = {name}'",
               ck.line_of(r, "reaction"))
        return None
    try:
        stoich = reaction_terms(text, db)
    except ReactionError as exc:
        ck.add(f"{rpath}.reaction", str(exc), ck.line_of(r, "reaction"))
        return None
    if name not in stoich or stoich[name] == 0:
        ck.add(f"{rpath}.reaction", f"{excerpt(text)} does not contain {name}; write the reaction that forms it",
               ck.line_of(r, "reaction"))
        return None
    partners = []
    for term, nu in stoich.items():
        if term == name or nu == 0:
            continue
        try:
            partners.append((db[term], nu))
        except UnknownSpeciesError as exc:
            ck.add(f"{rpath}.reaction", f"{exc}; every other species of the reaction must be in the database",
                   ck.line_of(r, "reaction"))
            return None
    nu_x = stoich[name]
    elements: dict[str, float] = {}
    for sp, nu in partners:
        for el, n in sp.elements.items():
            elements[el] = elements.get(el, 0.0) - nu * n / nu_x
    elements = {el: round(n, 9) for el, n in elements.items() if abs(n) > 1e-9}
    if any(n < 0 for n in elements.values()) or not elements:
        ck.add(f"{rpath}.reaction", f"{excerpt(text)} cannot balance for any composition of {name}; check the reaction",
               ck.line_of(r, "reaction"))
        return None
    formula = str(sec.get("formula", name))
    if "formula" in sec:
        try:
            given = {k: float(v) for k, v in parse_formula(formula).items()}
        except ValueError as exc:
            ck.add(f"{path}.formula", str(exc), ck.line_of(sec, "formula"))
            return None
        if given != elements:
            detail = ", ".join(f"{el} {n:g}" for el, n in sorted(elements.items()))
            ck.add(f"{rpath}.reaction", f"{excerpt(text)} does not balance with formula {formula} (the reaction needs "
                   f"{detail}); correct the coefficients or the formula", ck.line_of(r, "reaction"))
            return None
    return partners, nu_x, elements, formula


def _reaction_species(ck, sec, name, path, phase, source, critical, db, p_std) -> UserSpeciesRecord | None:
    """A species from the data of a reaction forming it; data on 1 atm are moved to 1 bar:
    K(1 bar) = K(1 atm) × 1.01325^Δn and ΔrS°(1 bar) = ΔrS°(1 atm) + Δn R ln 1.01325 (Δn: change
    in gas moles; IUPAC Green Book on the standard-pressure change, from memory)."""
    rpath = f"{path}.reaction_data"
    r = ck.section(sec, "reaction_data", rpath, REACTION_DATA_KEYS, ("reaction", "enthalpy"), what="reaction-data")
    if r is None or "reaction" not in r or "enthalpy" not in r:
        return None
    text = r["reaction"]
    derived = _reaction_formula(ck, sec, r, name, path, rpath, db)
    if derived is None:
        return None
    partners, nu_x, elements, formula = derived
    dh = ck.quantity(r, "enthalpy", f"{rpath}.enthalpy", "molar_energy")
    t_ref = T_REF
    if "at" in r:
        t_ref = ck.quantity(r, "at", f"{rpath}.at", "temperature")
    has_s, has_k = "entropy" in r, "K" in r
    if has_s == has_k:
        ck.add(rpath, "give exactly one of entropy (ΔrS° at 'at') or K (the equilibrium constant at 'at')",
               getattr(r, "line", None))
        return None
    dcp = (0.0,)
    if "cp_change" in r:
        dcp = _cp_coefficients(ck, r, "cp_change", f"{rpath}.cp_change")
    bounds = _valid_range(ck, r, rpath, (200.0, 3000.0))
    unc = _data_uncertainty(ck, r, rpath, ("reaction_enthalpy", "reaction_entropy"))
    if None in (dh, t_ref, dcp, bounds, unc):
        return None
    dn = float(sum(nu for sp, nu in partners if sp.is_gas) + (nu_x if phase == "gas" else 0.0))
    if has_k:
        if "at" not in r:
            ck.add(f"{rpath}.at", "missing: say at which temperature K applies, e.g. at: '500 K'",
                   getattr(r, "line", None))
            return None
        try:
            K = pure_number(r["K"])
        except UnitError as exc:
            ck.add(f"{rpath}.K", str(exc) + "; K is dimensionless on the 1 bar standard state", ck.line_of(r, "K"))
            return None
        if not K > 0:
            ck.add(f"{rpath}.K", f"{excerpt(r['K'])}: an equilibrium constant is positive", ck.line_of(r, "K"))
            return None
        shown = f"K = {K:g} at {t_ref:g} K"
        K = K * (p_std / 1e5) ** dn                      # to the 1 bar standard state
        level = ReactionLevelData.from_K(K, t_ref, dh, delta_cp=dcp, T_bounds=bounds, delta_n_gas=dn, text=text)
    else:
        ds = ck.quantity(r, "entropy", f"{rpath}.entropy", "molar_entropy")
        if ds is None:
            return None
        shown = f"ΔrS° = {ds:g} J/(mol K) at {t_ref:g} K"
        ds = ds + dn * R * math.log(p_std / 1e5)          # to the 1 bar standard state
        level = ReactionLevelData(dh, ds, t_ref, tuple(dcp), tuple(bounds), dn, text)
    model = ReactionDerivedModel(level, tuple(partners), nu_x)
    sp = Species(name=name, formula=formula, elements=elements, phase=phase,
                 molar_mass=molar_mass_of(elements), model=model, critical=critical, reference=source,
                 data_note=f"derived from reaction data: {text}")
    detail = (f"{text}: ΔrH° = {dh / 1000:g} kJ/mol, {shown}, ΔrCp coefficients {list(dcp)}, valid "
              f"{model.T_min:g}-{model.T_max:g} K" + _standard_state_detail(p_std, dn != 0) + _uncertainty_detail(unc))
    return UserSpeciesRecord(name, "reaction data", source, detail, sp, unc)
