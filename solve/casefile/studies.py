"""The ``studies`` and ``output`` blocks of a case file: which studies run, each checked.

Targets, data uncertainty and feed ratios have modules of their own (targets.py,
uncertainty_block.py, study_inputs.py).
"""
from __future__ import annotations

from typing import Mapping

from ...thermo.units import UnitError, excerpt, fraction
from .checker import Checker, check_critical, check_data_range, resolve_species
from .schema import (
    BEDS_KEYS, CARBON_KEYS, GAS_MODELS, MAP_KEYS, OUTPUT_KEYS, PLOT_FORMATS, PRESSURE_OPTION_KEYS, STUDY_KEYS,
    CarbonLimitStudy, ConversionMapStudy, OutputChoices, PressureOptionsStudy, StagedBedsStudy, Studies,
)
from .study_inputs import StudyContext, optional_section, read_feed_ratio
from .targets import read_targets
from .uncertainty_block import read_uncertainty
from .yaml_lines import CaseProblem, LineMap


def read_studies(doc, ck: Checker, ctx: StudyContext) -> Studies | None:
    sec = ck.section(doc, "studies", "studies", STUDY_KEYS, what="study")
    if sec is None:
        return None
    kept = LineMap({k: v for k, v in sec.items() if v is not False}, line=getattr(sec, "line", None))
    kept.lines = dict(getattr(sec, "lines", {}))      # 'study: false' switches a study off
    sec = kept
    if not sec:
        ck.add("studies", "no study is selected; add at least 'conversion_map: {}'", sec.line)
        return None
    n_before = len(ck.problems)
    conv_map = targets = popt = beds = carbon = unc = None
    if "conversion_map" in sec:
        conv_map = _conversion_map(sec, ck, ctx)
    if "targets" in sec:
        targets = read_targets(sec, ck, ctx)
    if "pressure_options" in sec:
        popt = _pressure_options(sec, ck, ctx)
    if "staged_beds" in sec:
        beds = _staged_beds(sec, ck, ctx)
    if "carbon_limit" in sec:
        carbon = _carbon_limit(sec, ck, ctx)
    if "uncertainty" in sec:
        unc = read_uncertainty(sec, ck, ctx)
        if "conversion_map" not in sec and (targets is not None or "targets" not in sec) and \
                not any(q.solve_for == "temperature" for q in targets or ()):
            ck.add("studies.uncertainty", "acts on the conversion map (a band at each pressure option) and on "
                   "temperature targets (an interval on each answer), and the case has neither; add "
                   "conversion_map: {} or a target with solve_for: temperature, or write uncertainty: false",
                   ck.line_of(sec, "uncertainty"))
    if len(ck.problems) > n_before:
        return None
    return Studies(conversion_map=conv_map, targets=tuple(targets or ()), pressure_options=popt,
                   staged_beds=beds, carbon_limit=carbon, uncertainty=unc)


def _conversion_map(sec, ck, ctx) -> ConversionMapStudy | None:
    m = optional_section(sec, "conversion_map", ck, "studies.conversion_map", MAP_KEYS)
    if m is None:
        return None
    at = None
    if "composition_at" in m:
        at = ck.quantity(m, "composition_at", "studies.conversion_map.composition_at", "pressure", positive=True)
        if at is None:
            return None
    ratio = None
    if "feed_ratio" in m:
        ratio = read_feed_ratio(ck, m, "feed_ratio", "studies.conversion_map.feed_ratio", ctx, need_values=True)
        if ratio is None:
            return None
    return ConversionMapStudy(composition_at=at, feed_ratio=ratio)


def _pressure_options(sec, ck, ctx) -> PressureOptionsStudy | None:
    path = "studies.pressure_options"
    m = optional_section(sec, "pressure_options", ck, path, PRESSURE_OPTION_KEYS)
    if m is None:
        return None
    temps = []
    if "temperatures" in m:
        raw = m["temperatures"] if isinstance(m["temperatures"], list) else [m["temperatures"]]
        for i, v in enumerate(raw):
            T = ck.quantity({0: v}, 0, f"{path}.temperatures[{i}]", "temperature")
            if T is None:
                if ck.problems[-1].line is None:
                    ck.problems[-1] = CaseProblem(ck.file, ck.problems[-1].key, ck.problems[-1].message,
                                                  ck.line_of(m, "temperatures"))
                return None
            if ctx.records and not check_data_range(ck, ctx.records, T, T, f"{path}.temperatures[{i}]",
                                                     ck.line_of(m, "temperatures")):
                return None
            temps.append(T)
        if not raw:
            ck.add(f"{path}.temperatures", "is empty; give at least one temperature, e.g. ['450 degC'], or remove "
                   "the key for the middle of the window", ck.line_of(m, "temperatures"))
            return None
    elif ctx.temperature is not None:
        temps = [0.5 * (ctx.temperature.low + ctx.temperature.high)]
    models = ["ideal"]
    if "gas_models" in m:
        raw = m["gas_models"] if isinstance(m["gas_models"], list) else [m["gas_models"]]
        models = []
        if not raw:
            ck.add(f"{path}.gas_models", "is empty; give ideal and/or peng-robinson, or remove the key for ideal",
                   ck.line_of(m, "gas_models"))
            return None
        for v in raw:
            if v not in GAS_MODELS:
                ck.add(f"{path}.gas_models", f"{excerpt(v)} is not a gas model; use ideal and/or peng-robinson",
                       ck.line_of(m, "gas_models"))
                return None
            if v not in models:
                models.append(v)
        if "peng-robinson" in models and ctx.records:
            check_critical(ck, ctx.db, ctx.species, f"{path}.gas_models", ck.line_of(m, "gas_models"))
    if not ctx.pressures:
        return None
    return PressureOptionsStudy(tuple(temps), tuple(models))


def _staged_beds(sec, ck, ctx) -> StagedBedsStudy | None:
    path = "studies.staged_beds"
    m = ck.section(sec, "staged_beds", path, BEDS_KEYS, ("inlet_temperature",), what="study")
    if m is None or "inlet_temperature" not in m:
        return None
    raw = m["inlet_temperature"]
    items = raw if isinstance(raw, list) else [raw]
    inlets = []
    for i, v in enumerate(items):
        sub = f"{path}.inlet_temperature" + (f"[{i}]" if isinstance(raw, list) else "")
        T_in = ck.quantity({0: v}, 0, sub, "temperature")
        if T_in is None:
            ck.problems[-1] = CaseProblem(ck.file, sub, ck.problems[-1].message, ck.line_of(m, "inlet_temperature"))
            return None
        if ctx.records and not check_data_range(ck, ctx.records, T_in, T_in, sub, ck.line_of(m, "inlet_temperature")):
            return None
        inlets.append(T_in)
    if not inlets:
        ck.add(f"{path}.inlet_temperature", "give one inlet temperature, or one per bed",
               ck.line_of(m, "inlet_temperature"))
        return None
    beds = target = None
    if "beds" in m:
        beds = ck.integer(m, "beds", f"{path}.beds", 1, 8)
        if beds is None:
            return None
        if len(inlets) > 1 and beds != len(inlets):
            ck.add(f"{path}.beds", f"{beds} beds but {len(inlets)} inlet temperatures; give one inlet temperature "
                   "per bed, or a single one for every bed", ck.line_of(m, "beds"))
            return None
    if "target" in m:
        try:
            target = fraction(m["target"])
        except UnitError as exc:
            ck.add(f"{path}.target", str(exc), ck.line_of(m, "target"))
            return None
        if not 0.0 < target < 1.0:
            ck.add(f"{path}.target", f"{excerpt(m['target'])} is impossible: a conversion lies strictly between 0 and 1 "
                   "(0-100 %); give e.g. '99.5 %'", ck.line_of(m, "target"))
            return None
    if beds is None and target is None:
        ck.add(path, "give beds (a number of beds) or target (the overall conversion wanted), or both",
               getattr(m, "line", None))
        return None
    P = ctx.pressures[0] if ctx.pressures else None
    if "pressure" in m:
        P = ck.quantity(m, "pressure", f"{path}.pressure", "pressure", positive=True)
    if P is None:
        return None
    removal: dict = {}
    if "interstage_removal" in m:
        removal = _interstage_removal(ck, m, path, beds or (len(inlets) if len(inlets) > 1 else 8), ctx)
        if removal is None:
            return None
    return StagedBedsStudy(tuple(inlets), beds, target, P, removal)


def _interstage_removal(ck, m, path: str, n_max: int, ctx) -> dict | None:
    """``{bed: {species: fraction}}`` of ``interstage_removal`` (beds 1 to ``n_max`` - 1)."""
    removal: dict = {}
    rm = m["interstage_removal"]
    rpath = f"{path}.interstage_removal"
    if not isinstance(rm, Mapping) or not rm:
        ck.add(rpath, "give 'bed number: species' pairs, e.g. {2: SO3} to take SO3 out after bed 2",
               ck.line_of(m, "interstage_removal"))
        return None
    for b, spec in rm.items():
        bpath = f"{rpath}.{b}"
        line = ck.line_of(rm, b)
        if isinstance(b, bool) or not isinstance(b, int) or not 1 <= b < n_max:
            ck.add(bpath, f"{excerpt(b)} is not a bed with another bed after it; use a bed number from 1 to {n_max - 1}",
                   line)
            return None
        pairs = {spec: 1.0} if isinstance(spec, str) else spec if isinstance(spec, Mapping) else None
        if pairs is None:
            ck.add(bpath, "give a species (all of it is removed) or {species: fraction}", line)
            return None
        fractions = {}
        for name, frac in pairs.items():
            resolved = resolve_species(ck, ctx.db, name, bpath, line)
            if resolved is None:
                return None
            if resolved not in ctx.species:
                ck.add(bpath, f"{resolved} is not a species of the system", line)
                return None
            if ctx.key is not None and resolved == ctx.key:
                ck.add(bpath, f"{resolved} is the key reactant: removing it between beds would count the removed "
                       "amount as converted; remove a product (or an inert) instead", line)
                return None
            try:
                f = fraction(frac)
            except UnitError as exc:
                ck.add(bpath, str(exc), line)
                return None
            if not 0.0 < f <= 1.0:
                ck.add(bpath, f"{excerpt(frac)}: the fraction removed lies between 0 and 1 (0-100 %)", line)
                return None
            fractions[resolved] = f
        removal[int(b)] = fractions
    return removal


def _carbon_limit(sec, ck, ctx) -> CarbonLimitStudy | None:
    path = "studies.carbon_limit"
    m = ck.section(sec, "carbon_limit", path, CARBON_KEYS, ("feed_ratio",), what="study")
    if m is None or "feed_ratio" not in m:
        return None
    if ctx.records and not any(sp.elements.get("C", 0) for sp in ctx.records if ctx.feed and sp.name in ctx.feed):
        ck.add(path, "no carbon in the feed, so no carbon can form; remove the carbon_limit study",
               getattr(m, "line", None))
        return None
    ratio = read_feed_ratio(ck, m, "feed_ratio", f"{path}.feed_ratio", ctx, need_values=True)
    if ratio is None:
        return None
    if len(ratio.values) < 2:
        ck.add(f"{path}.feed_ratio", "a carbon-limit map needs at least two ratios", ck.line_of(m, "feed_ratio"))
        return None
    P = ctx.pressures[0] if ctx.pressures else None
    if "pressure" in m:
        P = ck.quantity(m, "pressure", f"{path}.pressure", "pressure", positive=True)
    grid = ctx.temperature
    if "temperature" in m:
        grid = ck.grid(m, "temperature", f"{path}.temperature", "temperature", default_points=21)
        if grid is not None and ctx.records and not check_data_range(
                ck, ctx.records, grid.low, grid.high, f"{path}.temperature", ck.line_of(m, "temperature")):
            return None
    if P is None or grid is None:
        return None
    return CarbonLimitStudy(ratio, P, grid)


def read_output(doc, ck) -> OutputChoices:
    value = doc["output"]
    if value is None:
        return OutputChoices()
    m = ck.section(doc, "output", "output", OUTPUT_KEYS, what="output")
    if m is None:
        return OutputChoices()
    formats = PLOT_FORMATS
    if "plots" in m:
        raw = m["plots"]
        if raw is False or raw == "none":
            formats = ()
        else:
            raw = raw if isinstance(raw, list) else [raw]
            formats = []
            for v in raw:
                if v not in PLOT_FORMATS:
                    ck.add("output.plots", f"{excerpt(v)} is not a plot format eqdesign writes; use png and/or svg "
                           "(or false for none)", ck.line_of(m, "plots"))
                    return OutputChoices()
                if v not in formats:
                    formats.append(v)
            formats = tuple(formats)
    tables = ck.boolean(m, "tables", "output.tables", True)
    report = ck.boolean(m, "report", "output.report", True)
    return OutputChoices(tuple(formats), tables, report)
