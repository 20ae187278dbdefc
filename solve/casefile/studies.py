"""The ``studies`` block of a case file.
"""
from __future__ import annotations

import difflib
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Mapping

import numpy as np

from ...thermo.data_uncertainty import DATUM_KINDS, UncertaintyDefaults, UncertaintyInputError
from ...thermo.database import SpeciesDatabase
from ...thermo.units import UnitError, excerpt, fraction
from ..core.problem import element_matrix, invariant_basis, stoichiometric_matrix
from ..studies.uncertainty import UncertaintySettings, parameter_map
from .checker import REQUIRED_HINTS, Checker, check_critical, check_data_range, resolve_species
from .schema import (
    BEDS_KEYS, CARBON_KEYS, GAS_MODELS, GRID_KEYS, MAP_KEYS, MAX_POINTS, OUTPUT_KEYS, PLOT_FORMATS,
    PRESSURE_OPTION_KEYS, RATIO_KEYS, SOLVE_FOR, SPAN_KEYS, STUDY_KEYS, TARGET_KEYS, CarbonLimitStudy,
    ConversionMapStudy, FeedRatio, Grid, OutputChoices, PressureOptionsStudy, StagedBedsStudy, Studies,
    TargetQuestion,
)
from .uncertainty_settings import settings_from_mapping
from .yaml_lines import CaseProblem, LineMap
# ====================================================================== studies


@dataclass
class StudyContext:
    db: SpeciesDatabase
    feed: dict | None
    species: list
    key: str | None
    temperature: Grid | None
    pressures: tuple
    records: list
    reactions: list
    solver_reactions: bool
    user_uncertainty: dict = field(default_factory=dict)   # {user species: {datum kind: u [SI]}}
    folder: Path = Path(".")                               # folder of the case file


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
        targets = _targets(sec, ck, ctx)
    if "pressure_options" in sec:
        popt = _pressure_options(sec, ck, ctx)
    if "staged_beds" in sec:
        beds = _staged_beds(sec, ck, ctx)
    if "carbon_limit" in sec:
        carbon = _carbon_limit(sec, ck, ctx)
    if "uncertainty" in sec:
        unc = _uncertainty(sec, ck, ctx)
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


# ---------------------------------------------------------------------- data uncertainty
def _uncertainty(sec, ck: Checker, ctx: StudyContext) -> UncertaintySettings | None:
    """The ``studies.uncertainty`` switch: settings checked by the uncertainty module
    (:func:`eqdesign.solve.casefile.uncertainty_settings.settings_from_mapping`), each of its problem lines
    turned into a case problem with the line of its key; then the overrides checked against
    the case's species (names, data kinds, a default for every datum) and merged with the
    uncertainties given with the case's own species."""
    path = "studies.uncertainty"
    line = ck.line_of(sec, "uncertainty")
    block = sec["uncertainty"]
    if block is True or block is None:                    # 'uncertainty: true' or '{}': the defaults
        block = LineMap(line=line)
    if isinstance(block, Mapping):
        ck.duplicates(block, path)
        ov = block.get("overrides")
        if isinstance(ov, Mapping):
            ck.duplicates(ov, f"{path}.overrides")
            for name, entry in ov.items():
                if isinstance(entry, Mapping):
                    ck.duplicates(entry, f"{path}.overrides.{name}")
    try:
        settings = settings_from_mapping(block, where=path)
    except UncertaintyInputError as exc:
        settings = None
        for text in str(exc).splitlines():
            key, _, message = text.partition(": ")
            if not key.startswith(path):
                key, message = path, text
            ck.add(key, _with_fix(key, message), _line_of_path(ck, block, key[len(path):], line))
    reported = {p.key for p in ck.problems}
    # the species named in the overrides (checked even when a value has a problem)
    merged: dict[str, dict] = {n: dict(u) for n, u in ctx.user_uncertainty.items()}
    with_data = {(n, k) for n, u in ctx.user_uncertainty.items() for k in u}
    overrides = block.get("overrides") if isinstance(block, Mapping) else None
    ok = settings is not None
    try:                                                  # species whose data enter the case's results
        involved = {d.species for d in parameter_map(ctx.species, database=ctx.db).data} if ctx.records else set()
    except UncertaintyInputError:
        involved = None                                   # a missing default: reported below
    for raw, entry in (overrides.items() if isinstance(overrides, Mapping) and ctx.records else ()):
        opath, oline = f"{path}.overrides.{raw}", ck.line_of(overrides, raw)
        name = resolve_species(ck, ctx.db, raw, opath, oline)
        if name is None:
            ok = False
            continue
        if involved is not None and name not in involved:
            ck.add(opath, f"{name} is not a species of this case, so its uncertainty cannot matter; remove it or add "
                   f"{name} to chemistry.species", oline)
            ok = False
            continue
        for k, v in (entry.items() if isinstance(entry, Mapping) else ()):
            kpath, kline = f"{opath}.{k}", ck.line_of(entry, k)
            if k not in DATUM_KINDS:
                continue                                  # reported by the settings check
            if (name, k) in with_data:
                ck.add(kpath, f"the {k} uncertainty of {name} is also given with its data under user_species.{name}; "
                       "keep one", kline)
                ok = False
                continue
            if k in merged.get(name, {}):
                ck.add(kpath, f"names {name} again (as {raw}); give each species once", kline)
                ok = False
                continue
            try:                                          # does the species take this kind of datum?
                parameter_map([name], database=ctx.db, overrides={name: {k: 0.0}})
            except UncertaintyInputError as exc:
                text = str(exc)
                if text.startswith("overrides."):     # otherwise a missing default: checked below
                    text = text.partition(": ")[2]
                    ck.add(kpath, text + ("; use those keys" if " takes " in text else ""), kline)
                    ok = False
                    continue
            if kpath not in reported:
                merged.setdefault(name, {})[k] = v
    if not ok:
        return None
    defaults = None
    if settings.defaults_file:
        file = Path(settings.defaults_file)
        if not file.is_absolute():
            file = ctx.folder / file
        try:
            defaults = UncertaintyDefaults.from_file(file)
        except UncertaintyInputError as exc:
            ck.add(f"{path}.defaults", f"{exc}; give the path of a file of the layout of "
                   "eqdesign/data/uncertainty_defaults.yaml, relative to the case file", ck.line_of(block, "defaults"))
            return None
        settings = replace(settings, defaults_file=str(file))
    if not ctx.records:
        return settings                                   # the species have problems of their own
    try:                                                  # a standard uncertainty for every datum
        parameter_map(ctx.species, database=ctx.db, overrides=merged or None, defaults=defaults)
    except UncertaintyInputError as exc:
        ck.add(path, str(exc), line)
        return None
    return replace(settings, overrides=merged)


def _with_fix(key: str, message: str) -> str:
    """A problem line of the uncertainty module with a fix added where it names none."""
    if any(word in message for word in ("give ", "use ", "write ", "remove ", "choose ")):
        return message
    last = key.rsplit(".", 1)[-1]
    if last == "method":
        return message + "; write method: monte-carlo or method: linear"
    if last in ("formation_enthalpy", "reaction_enthalpy"):
        return message + "; give a standard uncertainty such as '0.4 kJ/mol'"
    if last in ("entropy", "reaction_entropy"):
        return message + "; give a standard uncertainty such as '0.1 J/(mol K)'"
    return message


def _line_of_path(ck: Checker, block, rest: str, line) -> int | None:
    """Line of the key at ``rest`` (".overrides.NH3.entropy") inside ``block``."""
    node = block
    for part in [p for p in rest.split(".") if p]:
        if not isinstance(node, Mapping):
            break
        match = next((k for k in node if str(k) == part), None)
        if match is None:
            break
        line = ck.line_of(node, match) or line
        node = node[match]
    return line


def _optional_section(sec, key, ck, path, allowed, required=()):
    """A study may be written as 'name: {}' or 'name: true' for its defaults."""
    value = sec[key]
    if value is True or value is None:
        return LineMap()
    return ck.section(sec, key, path, allowed, required, what="study")


def _conversion_map(sec, ck, ctx) -> ConversionMapStudy | None:
    m = _optional_section(sec, "conversion_map", ck, "studies.conversion_map", MAP_KEYS)
    if m is None:
        return None
    at = None
    if "composition_at" in m:
        at = ck.quantity(m, "composition_at", "studies.conversion_map.composition_at", "pressure", positive=True)
        if at is None:
            return None
    ratio = None
    if "feed_ratio" in m:
        ratio = _feed_ratio(ck, m, "feed_ratio", "studies.conversion_map.feed_ratio", ctx, need_values=True)
        if ratio is None:
            return None
    return ConversionMapStudy(composition_at=at, feed_ratio=ratio)


def _feed_ratio(ck, parent, key, path, ctx, *, need_values: bool) -> FeedRatio | None:
    r = ck.section(parent, key, path, RATIO_KEYS, ("vary", "per"), what="feed-ratio")
    if r is None or "vary" not in r or "per" not in r:
        return None
    vary = resolve_species(ck, ctx.db, r["vary"], f"{path}.vary", ck.line_of(r, "vary"))
    per_raw = r["per"]
    per = "carbon" if isinstance(per_raw, str) and per_raw.strip().lower() == "carbon" else \
        resolve_species(ck, ctx.db, per_raw, f"{path}.per", ck.line_of(r, "per"))
    if vary is None or per is None:
        return None
    if ctx.feed is None:
        return None
    if vary == per:
        ck.add(f"{path}.per", f"the ratio of {vary} to itself is always 1; choose another species or 'carbon'",
               ck.line_of(r, "per"))
        return None
    if per == "carbon" and vary != "H2O":
        ck.add(f"{path}.per", f"'carbon' is the basis of the steam-to-carbon ratio (vary: H2O); for {vary} give a "
               "feed species as the basis, e.g. per: CH4", ck.line_of(r, "per"))
        return None
    if vary not in ctx.species:
        ck.add(f"{path}.vary", f"{vary} is not a species of the system; add it to chemistry.species",
               ck.line_of(r, "vary"))
        return None
    label = f"{vary}/{per} ratio" if per != "carbon" else (
        "steam-to-carbon ratio" if vary == "H2O" else f"{vary}-to-carbon ratio")
    fr = FeedRatio(vary, per, (), label)
    if fr.basis(ctx.feed, ctx.db) <= 0:
        what = "hydrocarbon carbon in the feed" if per == "carbon" else f"{per} in the feed"
        ck.add(f"{path}.per", f"there is no {what}, so the ratio is undefined; feed it or choose another basis",
               ck.line_of(r, "per"))
        return None
    values: tuple = ()
    has_grid = "low" in r or "high" in r
    if "values" in r:
        if has_grid:
            ck.add(path, "give either values or low/high/points, not both", getattr(r, "line", None))
            return None
        vs = r["values"] if isinstance(r["values"], list) else [r["values"]]
        out = []
        for i, v in enumerate(vs):
            x = ck.ratio_number({0: v}, 0, f"{path}.values[{i}]")
            if x is None:
                return None
            out.append(x)
        values = tuple(out)
    elif has_grid:
        needed = GRID_KEYS if need_values else SPAN_KEYS
        for req in needed:
            if req not in r:
                ck.add(path, f"missing key '{req}' of the ratio range" + REQUIRED_HINTS.get(req, ""),
                       getattr(r, "line", None))
                return None
        lo = ck.ratio_number(r, "low", f"{path}.low")
        hi = ck.ratio_number(r, "high", f"{path}.high")
        n = ck.integer(r, "points", f"{path}.points", 2, MAX_POINTS) if "points" in r else 2
        if lo is None or hi is None or n is None:
            return None
        if hi <= lo:
            ck.add(path, f"low ({excerpt(r['low'])}) must be below high ({excerpt(r['high'])})", ck.line_of(r, "low"))
            return None
        values = tuple(float(v) for v in Grid(lo, hi, n).values())
    elif need_values:
        ck.add(path, "give the ratios: values: [2.5, 3.0] or low, high and points", getattr(r, "line", None))
        return None
    if any(v <= 0 for v in values) and vary == ctx.key:
        ck.add(path, f"a zero ratio removes the key reactant {vary}; use ratios above zero", getattr(r, "line", None))
        return None
    return FeedRatio(vary, per, values, label)


def _targets(sec, ck, ctx) -> list | None:
    raw = sec["targets"]
    line = ck.line_of(sec, "targets")
    items = raw if isinstance(raw, list) else [raw]
    if not items or not all(isinstance(t, Mapping) for t in items):
        ck.add("studies.targets", "give a list of questions, each like {conversion: '25 %', solve_for: "
               "temperature}", line)
        return None
    out = []
    for i, t in enumerate(items):
        path = f"studies.targets[{i}]" if isinstance(raw, list) else "studies.targets"
        holder = raw if isinstance(raw, list) else {i: raw}
        q = ck.section(holder if isinstance(raw, list) else sec, i if isinstance(raw, list) else "targets",
                       path, TARGET_KEYS, ("conversion", "solve_for"), what="target")
        if q is None or "conversion" not in q or "solve_for" not in q:
            continue
        label = ck.text(q, "label", f"{path}.label") or f"target {i + 1}"
        try:
            x = fraction(q["conversion"])
        except UnitError as exc:
            ck.add(f"{path}.conversion", str(exc), ck.line_of(q, "conversion"))
            continue
        if not 0.0 < x < 1.0:
            ck.add(f"{path}.conversion", f"{excerpt(q['conversion'])} is impossible: a conversion lies strictly between "
                   "0 and 1 (0-100 %); give e.g. 0.25 or '25 %'", ck.line_of(q, "conversion"))
            continue
        if ctx.feed is not None and ctx.key is not None and ctx.records:
            x_max, limiting = _max_conversion(ctx)
            if x_max is not None and x > x_max + 1e-9:
                ck.add(f"{path}.conversion", f"{x:.4g} cannot be reached: with this feed at most {x_max:.4g} of "
                       f"{ctx.key} can react ({limiting} runs out first); lower the target or change the feed",
                       ck.line_of(q, "conversion"))
                continue
        solve_for = q["solve_for"]
        if solve_for not in SOLVE_FOR:
            close = difflib.get_close_matches(str(solve_for), SOLVE_FOR, n=1, cutoff=0.4)
            ck.add(f"{path}.solve_for", f"{excerpt(solve_for)} is not something eqdesign can solve for; use "
                   + (f"'{close[0]}'" if close else "temperature, pressure or feed_ratio"), ck.line_of(q, "solve_for"))
            continue
        P = T = None
        if "pressure" in q:
            P = ck.quantity(q, "pressure", f"{path}.pressure", "pressure", positive=True)
            if P is None:
                continue
        if "temperature" in q:
            T = ck.quantity(q, "temperature", f"{path}.temperature", "temperature")
            if T is None:
                continue
            if ctx.records and not check_data_range(ck, ctx.records, T, T, f"{path}.temperature",
                                                     ck.line_of(q, "temperature")):
                continue
        ratio = None
        if solve_for == "temperature":
            if "temperature" in q:
                ck.add(f"{path}.temperature", "is the unknown here (solve_for: temperature); remove it or set "
                       "search: {low, high} for the range searched", ck.line_of(q, "temperature"))
                continue
            search = _search_range(ck, q, path, "temperature", ctx)
            if search is None:
                continue
            if "search" in q and ctx.records and not check_data_range(
                    ck, ctx.records, search[0], search[1], f"{path}.search", ck.line_of(q, "search")):
                continue
        elif solve_for == "pressure":
            if "pressure" in q:
                ck.add(f"{path}.pressure", "is the unknown here (solve_for: pressure); remove it or set "
                       "search: {low, high} for the range searched", ck.line_of(q, "pressure"))
                continue
            if T is None:
                ck.add(path, "missing key 'temperature': a pressure search needs a fixed temperature, e.g. "
                       "temperature: '450 degC'", getattr(q, "line", None))
                continue
            search = _search_range(ck, q, path, "pressure", ctx)
            if search is None:
                continue
        else:
            if "feed_ratio" not in q:
                ck.add(path, "missing key 'feed_ratio' (vary and per, e.g. {vary: H2O, per: CO, low: 1, high: 5})",
                       getattr(q, "line", None))
                continue
            if T is None:
                ck.add(path, "missing key 'temperature': a feed-ratio search needs a fixed temperature",
                       getattr(q, "line", None))
                continue
            ratio = _feed_ratio(ck, q, "feed_ratio", f"{path}.feed_ratio", ctx, need_values=False)
            if ratio is None:
                continue
            if "search" in q:
                ck.add(f"{path}.search", "give the ratio range as feed_ratio.low and feed_ratio.high",
                       ck.line_of(q, "search"))
                continue
            lo_hi = ratio.values
            search = (min(lo_hi), max(lo_hi)) if len(lo_hi) >= 2 else (0.25 * _ratio_now(ratio, ctx),
                                                                       8.0 * _ratio_now(ratio, ctx))
        if "feed_ratio" in q and solve_for != "feed_ratio":
            ck.add(f"{path}.feed_ratio", "only used with solve_for: feed_ratio; remove it", ck.line_of(q, "feed_ratio"))
            continue
        out.append(TargetQuestion(label, x, solve_for, P, T, search, ratio, path))
    return out


def _ratio_now(ratio: FeedRatio, ctx) -> float:
    return max(ratio.current(ctx.feed, ctx.db), 0.1)


def _search_range(ck, q, path, kind, ctx) -> tuple | None:
    if "search" in q:
        s = ck.section(q, "search", f"{path}.search", SPAN_KEYS, SPAN_KEYS, what="range")
        if s is None or not all(k in s for k in SPAN_KEYS):
            return None
        lo = ck.quantity(s, "low", f"{path}.search.low", kind, positive=True)
        hi = ck.quantity(s, "high", f"{path}.search.high", kind, positive=True)
        if lo is None or hi is None:
            return None
        if hi <= lo:
            ck.add(f"{path}.search", "high must be above low", ck.line_of(q, "search"))
            return None
        return (lo, hi)
    if kind == "temperature":
        if ctx.temperature is None:
            return None
        return (ctx.temperature.low, ctx.temperature.high)
    if len(ctx.pressures) >= 2:
        return (min(ctx.pressures), max(ctx.pressures))
    ck.add(path, "a pressure search needs a range: add search: {low: '50 bar', high: '300 bar'} (or list two or "
           "more pressure options under conditions.pressure)", getattr(q, "line", None))
    return None


def _max_conversion(ctx) -> tuple[float | None, str]:
    """Largest stoichiometric conversion of the key (linear programme over the
    conservation constraints of the system) and the species that limits it."""
    from scipy.optimize import linprog
    names = list(ctx.species)
    recs = [ctx.db[n] for n in names]
    if ctx.solver_reactions:
        C = invariant_basis(stoichiometric_matrix(ctx.reactions, names))
    else:
        C = element_matrix(recs)[1]
    n0 = np.array([ctx.feed.get(n, 0.0) for n in names])
    k = names.index(ctx.key)
    c = np.zeros(len(names))
    c[k] = 1.0   # minimise the key amount left
    res = linprog(c, A_eq=C, b_eq=C @ n0, bounds=[(0, None)] * len(names), method="highs")
    if res.status != 0:
        return None, ""
    x_max = (n0[k] - res.x[k]) / n0[k]
    consumed = [names[j] for j in range(len(names)) if n0[j] > 0 and j != k and res.x[j] < 1e-12 * n0.sum()]
    return float(x_max), (", ".join(consumed) or "an element balance")


def _pressure_options(sec, ck, ctx) -> PressureOptionsStudy | None:
    path = "studies.pressure_options"
    m = _optional_section(sec, "pressure_options", ck, path, PRESSURE_OPTION_KEYS)
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
        rm = m["interstage_removal"]
        rpath = f"{path}.interstage_removal"
        if not isinstance(rm, Mapping) or not rm:
            ck.add(rpath, "give 'bed number: species' pairs, e.g. {2: SO3} to take SO3 out after bed 2",
                   ck.line_of(m, "interstage_removal"))
            return None
        n_max = beds or (len(inlets) if len(inlets) > 1 else 8)
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
    return StagedBedsStudy(tuple(inlets), beds, target, P, removal)


def _carbon_limit(sec, ck, ctx) -> CarbonLimitStudy | None:
    path = "studies.carbon_limit"
    m = ck.section(sec, "carbon_limit", path, CARBON_KEYS, ("feed_ratio",), what="study")
    if m is None or "feed_ratio" not in m:
        return None
    if ctx.records and not any(sp.elements.get("C", 0) for sp in ctx.records if ctx.feed and sp.name in ctx.feed):
        ck.add(path, "no carbon in the feed, so no carbon can form; remove the carbon_limit study",
               getattr(m, "line", None))
        return None
    ratio = _feed_ratio(ck, m, "feed_ratio", f"{path}.feed_ratio", ctx, need_values=True)
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
