"""Staged adiabatic converters: beds in series with interstage cooling and removal,
and the conversion-temperature diagram.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numpy as np

from ...thermo.database import SpeciesDatabase
from ...thermo.models import R
from ...thermo.reactions import bundled_database
from ...thermo.units import to_kelvin
from ..core.equilibrium import equilibrium
from ..core.inputs import (conversion_targets, feed_mapping, pressures, species_names, temperatures,
                           whole_number)
from ..core.result import EquilibriumInputError
from .adiabatic import CAUTION, adiabatic_equilibrium
from .enthalpy import MixtureEnthalpy, records_for
from .feeds import resolve_feed


# ====================================================================== staged adiabatic beds
def _frozen_temperature(model: MixtureEnthalpy, amounts, H_target, P, T_guess,
                        tolerance: float = 1e-12, max_iterations: int = 60):
    """Temperature [K] at which mixtures of fixed composition have enthalpy ``H_target`` [J].

    Newton on T with the frozen heat capacity (positive, so H is increasing in T),
    vectorised over rows; NaN where it fails.
    """
    T = np.array(T_guess, dtype=float)
    scale = np.abs(amounts).sum(axis=-1) * R * T + np.abs(H_target)
    for _ in range(max_iterations):
        cp, h = model.species_properties(T)
        f = model.total(amounts, T, P, h=h) - H_target
        if np.all(np.abs(f) <= tolerance * scale):
            return T
        c = model.frozen_heat_capacity(amounts, T, P, cp=cp)
        T = np.clip(T - np.clip(f / c, -500.0, 500.0), 50.0, 2.0e4)
    return np.where(np.abs(f) <= 1e3 * tolerance * scale, T, np.nan)


@dataclass(frozen=True)
class BedRecord:
    """One adiabatic bed of a staged converter (amounts on the basis of the feed).

    Attributes
    ----------
    bed : int
        1 for the first bed.
    inlet_T, outlet_T : float
        Bed inlet and adiabatic-equilibrium outlet temperatures [K].
    bed_conversion : float
        Conversion of the key reactant within this bed, relative to the amount entering it [-].
    overall_conversion : float
        Conversion of the key reactant relative to the original feed [-].
    interstage_heat_removed : float
        Heat taken out after the bed to cool the outlet gas, at its composition, to the next
        bed's inlet temperature [J] (NaN after the last bed).
    removed : dict
        Species name -> amount taken out between this bed and the next [mol].
    inlet_amounts, outlet_amounts : dict
        Species name -> amount [mol] entering and leaving the bed.
    iterations : int
        Equilibrium evaluations of the adiabatic solve.
    flags : str
        What makes the bed outlet untrustworthy ("" where nothing does; e.g. species used
        outside their data range, :meth:`AdiabaticResult.state_flags`).
    """

    bed: int
    inlet_T: float
    outlet_T: float
    bed_conversion: float
    overall_conversion: float
    interstage_heat_removed: float
    removed: dict
    inlet_amounts: dict = field(repr=False)
    outlet_amounts: dict = field(repr=False)
    iterations: int = 0
    flags: str = ""


@dataclass(frozen=True)
class ConversionTemperatureDiagram:
    """Data of a conversion-temperature diagram; conversions are overall (relative to the
    original feed) throughout.

    Attributes
    ----------
    equilibrium_curves : tuple of (str, ndarray, ndarray)
        ``(label, T [K], overall conversion [-])``: equilibrium of the original feed, and,
        after each interstage removal, of the gas leaving it.
    bed_lines : tuple of (ndarray, ndarray)
        Each bed's adiabatic operating line ``(T [K], overall conversion [-])`` from inlet
        to outlet: states of the bed inlet's enthalpy, along the bed's net change of
        composition (exact for one reaction).
    cooling_lines : tuple of (ndarray, ndarray)
        Interstage cooling at constant composition, ``(T [K], overall conversion [-])``.
    """

    equilibrium_curves: tuple
    bed_lines: tuple
    cooling_lines: tuple


@dataclass(frozen=True)
class StagedConverterResult:
    """Staged adiabatic beds with interstage cooling to set inlet temperatures.

    Attributes
    ----------
    key : str
        Key reactant.
    P : float
        Pressure [Pa].
    beds : tuple of BedRecord
    target : float or None
        Overall conversion asked for [-].
    beds_needed : int or None
        First bed after which ``target`` is reached; None if not reached (or no target).
    target_reached : bool
    best_conversion : float
        Highest overall conversion reached [-].
    diagram : ConversionTemperatureDiagram
    message : str
        Plain statement of the outcome (target reached or not, within how many beds).
    caution : str
    """

    key: str
    P: float
    beds: tuple
    target: float | None
    beds_needed: int | None
    target_reached: bool
    best_conversion: float
    diagram: ConversionTemperatureDiagram = field(repr=False)
    message: str = ""
    caution: str = CAUTION

    def rows(self) -> list[dict]:
        """The bed table: one dict per bed, units in the keys."""
        out = []
        for b in self.beds:
            row = {
                "bed": b.bed,
                "inlet T [K]": b.inlet_T,
                "inlet T [degC]": b.inlet_T - 273.15,
                "outlet T [K]": b.outlet_T,
                "outlet T [degC]": b.outlet_T - 273.15,
                "temperature rise [K]": b.outlet_T - b.inlet_T,
                f"bed conversion of {self.key} [-]": b.bed_conversion,
                f"overall conversion of {self.key} [-]": b.overall_conversion,
                "interstage heat removed [J]": b.interstage_heat_removed,
            }
            if any(bb.removed for bb in self.beds):
                row["removed after bed [mol]"] = dict(b.removed)
            out.append(row)
        return out

    def table(self) -> str:
        """The bed table as aligned text, with the outcome and the caution."""
        head = (f"{'bed':>3}  {'inlet T [K]':>11}  {'outlet T [K]':>12}  {'rise [K]':>8}  "
                f"{'bed conv. [-]':>13}  {'overall conv. [-]':>17}  {'heat removed after [J]':>22}")
        lines = [f"Staged adiabatic beds, key reactant {self.key}, P = {self.P:.6g} Pa", head]
        for b in self.beds:
            q = "-" if not np.isfinite(b.interstage_heat_removed) else f"{b.interstage_heat_removed:.6g}"
            lines.append(f"{b.bed:>3}  {b.inlet_T:11.2f}  {b.outlet_T:12.2f}  {b.outlet_T - b.inlet_T:8.2f}  "
                         f"{b.bed_conversion:13.5f}  {b.overall_conversion:17.5f}  {q:>22}")
        lines += [self.message, "CAUTION: " + self.caution]
        return "\n".join(lines)


def _removal_plan(interstage_removal, db) -> dict:
    plan = {}
    for bed, spec in dict(interstage_removal or {}).items():
        if isinstance(spec, str):
            spec = {spec: 1.0}
        elif not isinstance(spec, Mapping):
            spec = {s: 1.0 for s in spec}
        fractions = {}
        for name, frac in spec.items():
            frac = float(frac)
            if not 0.0 <= frac <= 1.0:
                raise EquilibriumInputError(f"interstage removal of {name} after bed {bed}: "
                                            f"the fraction removed must lie in [0, 1], got {frac}")
            fractions[db.resolve(name)] = frac
        plan[int(bed)] = fractions
    return plan


# Stays long: a sequential bed-by-bed march (inlet, adiabatic bed, cooling, removal, stop rule).
def staged_converter(species: Sequence[str], feed: Mapping[str, object], P, key: str, inlet_T, *,
                     n_beds: int | None = None, target: float | None = None, max_beds: int = 8,
                     reactions: Sequence[str] | None = None, gas_model: str = "ideal",
                     database: SpeciesDatabase | None = None,
                     binary_interaction: Mapping | None = None, approach: float = 0.0,
                     interstage_removal: Mapping | None = None, diagram_T=None,
                     diagram_points: int = 121, line_points: int = 41) -> StagedConverterResult:
    """Adiabatic equilibrium beds in series with interstage cooling to set inlet temperatures.

    Each bed takes its inlet gas to adiabatic equilibrium (:func:`adiabatic_equilibrium`);
    between beds the gas is cooled at constant composition (no catalyst, no reaction) to
    the next inlet temperature, and optionally loses named species (interstage absorption,
    e.g. SO3 in a double-absorption sulfuric-acid plant).  The beds are equilibrium limits:
    infinite catalyst, no heat loss.  The classic graphical treatment (equilibrium curve
    and adiabatic heat-up lines on a conversion-temperature diagram) is that of e.g.
    H. S. Fogler, *Elements of Chemical Reaction Engineering*, Prentice Hall, ch. on
    adiabatic equilibrium conversion and interstage cooling, and of M. J. King,
    W. G. Davenport, M. S. Moats, *Sulfuric Acid Manufacture*, 2nd ed., Elsevier, 2013.

    Parameters
    ----------
    species : sequence of str
        Species that may be present.
    feed : mapping of str to amount
        Original feed amounts [mol] (scalars: one converter design per call).
    P : float | str
        Pressure [Pa] or a quantity string, the same in every bed.
    key : str
        Key reactant, whose conversion is reported.
    inlet_T : float | str | sequence
        Inlet temperature of every bed [K], or one per bed (the sequence length then
        bounds the number of beds).
    n_beds : int, optional
        Number of beds to compute.
    target : float, optional
        Overall conversion of ``key`` to reach [-]; without ``n_beds``, beds are added until
        it is reached or ``max_beds`` is used up.
    max_beds : int
        Most beds tried for ``target``.
    reactions, gas_model, database, binary_interaction, approach
        As for :func:`adiabatic_equilibrium` (``approach`` [K] applies to every bed).
    interstage_removal : mapping, optional
        ``{bed: "SO3"}`` or ``{bed: {"SO3": 0.999}}``: after that bed, remove all (or the
        given fraction [-]) of the species before the next bed.
    diagram_T : array_like, optional
        Temperatures [K] of the equilibrium curves (default: spanning the beds).
    diagram_points, line_points : int
        Points on each equilibrium curve and each bed line.

    Returns
    -------
    StagedConverterResult

    Examples
    --------
    An invented SO2 converter: 10 % SO2, 11 % O2 in N2 at 1.2 bar, every bed entered at
    420 degC:

    >>> conv = staged_converter(["SO2", "O2", "SO3", "N2"], {"SO2": 10, "O2": 11, "N2": 79},
    ...                         "1.2 bar", "SO2", "420 degC", target=0.98)
    >>> conv.beds_needed
    3
    >>> print(f"{conv.beds[0].outlet_T - 273.15:.1f} degC, {conv.beds[-1].overall_conversion:.4f}")
    620.8 degC, 0.9860
    """
    db = database or bundled_database()
    if not isinstance(key, str):
        raise EquilibriumInputError(f"key must be the name of the key reactant (text), got {key!r}")
    key = db.resolve(key)
    P_arr = pressures(P)
    if P_arr.ndim:
        raise EquilibriumInputError("P must be a single pressure here (one converter per call)")
    P_f = float(P_arr)
    names: list[str] = []
    for n in species_names(species) + list(feed_mapping(feed)) + [key]:
        r = db.resolve(n)
        if r not in names:
            names.append(r)
    feed0 = resolve_feed(feed, db)
    if feed0.get(key, 0.0) <= 0:
        raise EquilibriumInputError(f"the key reactant {key} must be in the feed")
    if isinstance(inlet_T, (str, int, float)) or np.ndim(inlet_T) == 0:
        inlets = None
        T_common = float(temperatures(inlet_T, "inlet_T"))
    else:
        inlets = [float(temperatures(t, "inlet_T")) for t in inlet_T]
        if not inlets:
            raise EquilibriumInputError("inlet_T: give one temperature or one per bed")
    if n_beds is None and target is None:
        raise EquilibriumInputError("give n_beds (how many beds) or target (the overall conversion to reach)")
    if target is not None:
        conversion_targets(target)
        if np.ndim(target):
            raise EquilibriumInputError("target must be a single conversion here")
    whole_number(max_beds, "max_beds", 1)
    if n_beds is not None:
        planned = whole_number(n_beds, "n_beds", 1)
        if inlets is not None and planned > len(inlets):
            raise EquilibriumInputError(f"n_beds = {planned} but only {len(inlets)} inlet "
                                        "temperature(s) given")
    else:
        planned = int(max_beds) if inlets is None else min(int(max_beds), len(inlets))
    plan = _removal_plan(interstage_removal, db)
    for bed, fractions in plan.items():
        if fractions.get(key, 0.0) > 0.0:
            raise EquilibriumInputError(f"interstage removal of {key} after bed {bed}: {key} is the key reactant, "
                                        "and removing it would count the removed amount as converted; remove a "
                                        "product (or an inert) instead")
    common = dict(reactions=reactions, gas_model=gas_model, database=db,
                  binary_interaction=binary_interaction, approach=approach, warn=False)

    n_key0 = feed0[key]
    current = dict(feed0)
    beds: list[BedRecord] = []
    sections = [(0, dict(feed0))]           # (first bed index, inlet gas) per removal section
    bed_ends = []                          # (inlet amounts, outlet amounts, H_in, T_in, T_out) per bed
    model = None
    beds_needed = None
    message_extra = ""
    for b in range(planned):
        T_b = T_common if inlets is None else inlets[b]
        ad = adiabatic_equilibrium(names, current, T_b, P_f, **common)
        if model is None:
            all_names = list(ad.equilibrium.species)
            model = MixtureEnthalpy(records_for(all_names, db), gas_model, binary_interaction)
        if not ad.all_converged:
            message_extra = (f" Bed {b + 1}: the adiabatic equilibrium did not converge "
                             f"({ad.message}); stopped.")
            break
        sp = list(ad.equilibrium.species)
        n_in = np.array([current.get(s, 0.0) for s in sp])
        n_out = np.asarray(ad.equilibrium.amount_array, dtype=float).reshape(len(sp))
        k = sp.index(key)
        T_out = float(ad.T)
        bed_conv = (n_in[k] - n_out[k]) / n_in[k] if n_in[k] > 0 else float("nan")
        overall = (n_key0 - n_out[k]) / n_key0
        bed_ends.append((n_in, n_out, float(ad.inlet_enthalpy), T_b, T_out))
        # interstage: cool at constant composition, then take out the named species
        has_next = b + 1 < planned
        removed = {}
        heat_removed = float("nan")
        n_next = n_out.copy()
        stop_now = target is not None and overall >= float(target) and beds_needed is None
        if stop_now:
            beds_needed = b + 1
        if has_next and not (stop_now and n_beds is None):
            T_next = T_common if inlets is None else inlets[b + 1]
            heat_removed = float(model.total(n_out, np.float64(T_out), P_f)
                                 - model.total(n_out, np.float64(T_next), P_f))
            for name, frac in plan.get(b + 1, {}).items():
                j = sp.index(name) if name in sp else None
                if j is not None and n_next[j] > 0:
                    removed[name] = float(frac * n_next[j])
                    n_next[j] -= removed[name]
        beds.append(BedRecord(bed=b + 1, inlet_T=T_b, outlet_T=T_out, bed_conversion=float(bed_conv),
                              overall_conversion=float(overall), interstage_heat_removed=heat_removed,
                              removed=removed, inlet_amounts=dict(zip(sp, n_in.tolist())),
                              outlet_amounts=dict(zip(sp, n_out.tolist())),
                              iterations=int(ad.iterations), flags=str(ad.state_flags())))
        if stop_now and n_beds is None:
            break
        current = dict(zip(sp, n_next.tolist()))
        if removed:
            sections.append((b + 1, dict(current)))

    best = max((bb.overall_conversion for bb in beds), default=float("nan"))
    reached = beds_needed is not None
    if target is None:
        message = f"{len(beds)} bed(s): overall conversion of {key} {best:.6f} after bed {len(beds)}."
    elif reached:
        message = (f"Target overall conversion {float(target):.6g} of {key} reached after bed "
                   f"{beds_needed} ({beds[beds_needed - 1].overall_conversion:.6f}).")
    else:
        message = (f"Target overall conversion {float(target):.6g} of {key} is not reachable within "
                   f"{len(beds)} bed(s) at these inlet temperatures; the best is {best:.6f} "
                   f"after bed {len(beds)}.")
    message += message_extra

    diagram = _diagram(names, model, key, n_key0, P_f, sections, beds, bed_ends,
                       common, diagram_T, diagram_points, line_points)
    return StagedConverterResult(key=key, P=P_f, beds=tuple(beds),
                                 target=None if target is None else float(target),
                                 beds_needed=beds_needed, target_reached=reached, best_conversion=float(best),
                                 diagram=diagram, message=message)


def _diagram(names, model, key, n_key0, P, sections, beds, bed_ends, common, diagram_T,
             diagram_points, line_points) -> ConversionTemperatureDiagram:
    """Equilibrium curves (overall conversion), bed operating lines and cooling lines."""
    if not beds:
        return ConversionTemperatureDiagram((), (), ())
    if diagram_T is None:
        lo = min(b.inlet_T for b in beds) - 30.0
        hi = max(b.outlet_T for b in beds) + 60.0
        diagram_T = np.linspace(lo, hi, int(diagram_points))
    T_grid = np.asarray(to_kelvin(diagram_T), dtype=float)
    eq_kw = {k: v for k, v in common.items() if k not in ("approach",)}
    curves = []
    for first_bed, gas in sections:
        feed_arrays = {n: v for n, v in gas.items() if v > 0}
        res = equilibrium(names, feed_arrays, T_grid, P, **eq_kw)
        X = (n_key0 - res.amounts[key]) / n_key0
        label = "original feed" if first_bed == 0 else f"gas entering bed {first_bed + 1}"
        curves.append((label, T_grid.copy(), np.asarray(X, dtype=float)))
    lam = np.linspace(0.0, 1.0, int(line_points))
    lines = []
    k = list(model.records[j].name for j in range(len(model.records))).index(key)
    for (n_in, n_out, H_in, T_in, T_out) in bed_ends:
        n_path = n_in[None, :] + lam[:, None] * (n_out - n_in)[None, :]
        T_path = _frozen_temperature(model, n_path, np.full(lam.size, H_in), P,
                                     T_in + lam * (T_out - T_in))
        lines.append((T_path, (n_key0 - n_path[:, k]) / n_key0))
    cooling = []
    for b_this, b_next in zip(beds[:-1], beds[1:]):
        X = b_this.overall_conversion
        cooling.append((np.array([b_this.outlet_T, b_next.inlet_T]), np.array([X, X])))
    return ConversionTemperatureDiagram(tuple(curves), tuple(lines), tuple(cooling))
