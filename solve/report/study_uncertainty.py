"""The data-uncertainty study of a run: the species-data uncertainty propagated to the
conversion map (band) and to the target answers (intervals), with rankings, tables,
findings and the record the report states.
"""
from __future__ import annotations

import numpy as np

from ...thermo.data_uncertainty import UncertaintyDefaults
from ..studies.intervals import feed_ratio_interval, pressure_interval, temperature_interval
from ..studies.uncertainty import Band, propagate_equilibrium
from . import figures as plots
from .context import RunContext, api_ratio, subsample
from .findings import RANKING_NOTE, cited_references, classes_used, falls_with_temperature, ranked
from .numbers import ZERO_CELSIUS, celsius, interval_text
from .records import SolverCheck, Table, UncertaintyRecord

#: At most this many temperatures in a data-uncertainty band (the band is smooth; every
#: temperature costs ``samples`` solves per pressure option).
BAND_POINTS = 41


def run_uncertainty(run: RunContext) -> None:
    """Propagate the uncertainty of the species data (ΔfH°, S°) to the conversion map
    (one batched call over temperature × pressure option) and to every temperature
    target (one call per question, all its pressures together); add the interval
    columns to the targets table, the band and ranking tables, and the record the
    report states."""
    c = run.case
    st = c.studies.uncertainty
    kw = st.as_kwargs()
    defaults = kw.get("defaults") or UncertaintyDefaults.bundled()
    common = run.common()
    species = list(c.species)
    band = None
    answers: dict = {}
    with run.study("data uncertainty"):
        if run.map is not None:
            T_b = subsample(run.T_grid, BAND_POINTS)
            TT, PP = np.meshgrid(T_b, np.array(c.pressures), indexing="ij")
            band = propagate_equilibrium(species, c.feed, TT, PP, key=c.key, **common, **kw)
            run.rec.temperatures(band.T_equilibrium)
        for qi, q in enumerate(c.studies.targets):
            if q.solve_for != "temperature":
                continue
            Ps = [q.pressure] if q.pressure else list(c.pressures)
            ti = temperature_interval(species, c.feed, np.array(Ps), c.key, q.conversion, T_range=q.search,
                                      **common, **kw)
            answers[qi] = (Ps, ti)
            _record_interval_temperatures(run, qi, ti)
        p_answers = {qi: pressure_interval(species, c.feed, q.temperature, c.key, q.conversion,
                                           P_range=q.search, **common, **kw)
                     for qi, q in enumerate(c.studies.targets) if q.solve_for == "pressure"}
        r_answers = {qi: feed_ratio_interval(species, c.feed, q.temperature, q.pressure or c.pressures[0],
                                             c.key, q.conversion, ratio=api_ratio(q.feed_ratio),
                                             ratio_range=tuple(q.search), **common, **kw)
                     for qi, q in enumerate(c.studies.targets)
                     if q.solve_for not in ("temperature", "pressure")}
    first = band if band is not None else next((ti for _, ti in answers.values()), None)
    if first is None:
        first = next(iter(list(p_answers.values()) + list(r_answers.values())), None)
    if first is None:
        return
    record = UncertaintyRecord(
        method=first.method, samples=first.samples, seed=first.seed, level=first.level, data=tuple(first.data),
        intervals=[], references=cited_references(first.data, defaults),
        classes=classes_used(first.data, defaults), defaults_origin=defaults.origin,
        untreated=[])
    run.uncertainty_record = record
    lo_txt, hi_txt = f"lower {record.level_text}", f"upper {record.level_text}"
    if band is not None:
        _band_tables(run, band, record, lo_txt, hi_txt)
        run.bands = [Band(x=np.asarray(band.T, dtype=float)[:, j], nominal=_key_conversion(run, band.nominal)[:, j],
                           lower=_key_conversion(run, band.lower)[:, j], median=_key_conversion(run, band.median)[:, j],
                           upper=_key_conversion(run, band.upper)[:, j], level=band.level, quantity=f"conversion {c.key}",
                           unit="-", x_label="temperature [K]", method=band.method, samples=band.samples)
                      for j in range(len(c.pressures))]
    if answers:
        _interval_tables(run, answers, record, lo_txt, hi_txt)
    if p_answers:
        _answer_interval_columns(run, p_answers, record, lo_txt, hi_txt, "P", "bar", 1e5, "u(ln P)")
    if r_answers:
        _answer_interval_columns(run, r_answers, record, lo_txt, hi_txt, "ratio", "mol/mol", 1.0,
                                      "u(ln ratio)")
    _ranking_tables(run, band, answers, record)
    rows = [[d.label, d.species, d.u, d.unit, d.origin] for d in record.data]
    run.add_table(Table("uncertainty_data", "Standard uncertainties of the species data used",
                         ["datum", "species", "u [unit of u]", "unit of u", "source of u"], rows,
                         note="One standard deviation (GUM). Data of elements in their reference state have "
                              "ΔfH° = 0 exactly.", section="uncertainty"))


def _key_conversion(run: RunContext, values: dict) -> np.ndarray:
    return np.asarray(values[f"conversion {run.case.key}"], dtype=float)


def _record_interval_temperatures(run: RunContext, qi: int, ti) -> None:
    """Temperatures the interval search evaluated (for the data-provenance note)."""
    Ps, ans = run.temperature_answers.get(qi, (None, None))
    side = 0.0
    if ans is not None and ti.approach:
        d = np.asarray(ans.T_equilibrium, dtype=float) - np.asarray(ans.T, dtype=float)
        d = d[np.isfinite(d)]
        side = float(np.sign(d[0])) if d.size else 0.0
    T = np.asarray(ti.sample_T if ti.sample_T is not None else [ti.lower, ti.upper], dtype=float)
    run.rec.temperatures(T[np.isfinite(T)] + side * (ti.approach or 0.0))


def _band_tables(run: RunContext, band, record: UncertaintyRecord, lo_txt: str, hi_txt: str) -> None:
    c = run.case
    q = f"conversion {c.key}"
    T = np.asarray(band.T, dtype=float)
    nom, lo, md, hi = (100.0 * _key_conversion(run, d) for d in (band.nominal, band.lower, band.median, band.upper))
    u = 100.0 * _key_conversion(run, band.standard_uncertainty)
    failed = np.asarray(band.n_failed, dtype=float)
    T_eq = np.asarray(band.T_equilibrium, dtype=float)
    rows = []
    for i in range(T.shape[0]):
        for j, p in enumerate(c.pressures):
            row = [float(celsius(T[i, j])), float(T[i, j]), p / 1e5]
            if c.approach:
                row.append(float(celsius(T_eq[i, j])))
            row += [nom[i, j], lo[i, j], md[i, j], hi[i, j], u[i, j], int(failed[i, j])]
            rows.append(row)
    cols = ["T [degC]", "T [K]", "P [bar]"] + (["T equilibrium [degC]"] if c.approach else []) + \
        [f"{q} [%]", f"{q} {lo_txt} [%]", f"{q} median [%]", f"{q} {hi_txt} [%]", f"u({q}) [% points]",
         "draws failed [-]"]
    run.add_table(Table("conversion_band", f"Equilibrium conversion of {c.key} with its {record.level_text} "
                         "interval from the species data: every point", cols, rows, in_report=False,
                         section="uncertainty", note="Long format, one row per temperature and pressure option."))
    wide_cols = ["T [degC]"]
    for p in c.pressures:
        wide_cols += [f"{p / 1e5:g} bar [%]", f"{p / 1e5:g} bar {lo_txt} [%]", f"{p / 1e5:g} bar {hi_txt} [%]"]
    wide = []
    for i in range(T.shape[0]):
        row = [float(celsius(T[i, 0]))]
        for j in range(len(c.pressures)):
            row += [nom[i, j], lo[i, j], hi[i, j]]
        wide.append(row)
    run.add_table(Table("conversion_band_by_temperature", f"Equilibrium conversion of {c.key} with its "
                         f"{record.level_text} interval, by temperature and pressure option", wide_cols, wide,
                         html_every=max(1, len(wide) // 10), section="uncertainty",
                         note=(f"Operating temperature; equilibrium taken with a {c.approach:g} K approach. "
                               if c.approach else "") + f"{record.how}."))
    half = 0.5 * (hi - lo)
    if np.isfinite(half).any():
        k = np.unravel_index(np.nanargmax(half), half.shape)
        run.findings.append(
            f"Data uncertainty ({record.how}): the widest {record.level_text} interval of the equilibrium "
            f"conversion of {c.key} over the map is {lo[k]:.1f}-{hi[k]:.1f} % around {nom[k]:.1f} % "
            f"({celsius(T[k]):.0f} degC, {c.pressures[k[1]] / 1e5:g} bar).")
    n_failed = int(failed.sum())
    run.checks.append(SolverCheck(
        "data uncertainty: conversion band", int(failed.size * max(band.samples, 1)), n_failed, float("nan"),
        (f"{band.samples} draws at each of {failed.size} states in one batched call" if band.samples else
         f"linearised at {failed.size} states") + "; sensitivities by central differences in each g°"
        + (f"; {n_failed} draw-state(s) did not converge and are left out of the percentiles" if n_failed
           else "")))


def _interval_tables(run: RunContext, answers: dict, record: UncertaintyRecord, lo_txt: str, hi_txt: str) -> None:
    c = run.case
    targets = run.table("targets")
    at = targets.columns.index("answer unit") + 1
    new_cols = [f"T {lo_txt} [degC]", f"T {hi_txt} [degC]", "u(T) [K]", "draws beyond search range [%]"]
    targets.columns[at:at] = new_cols
    for row, (qi, i) in zip(targets.rows, run.target_rows):
        vals = [float("nan")] * len(new_cols)
        if qi in answers and i is not None:
            ti = answers[qi][1]
            pick = (lambda v: float(np.asarray(v, dtype=float).reshape(-1)[i]))   # noqa: E731
            vals = [pick(ti.lower) - ZERO_CELSIUS, pick(ti.upper) - ZERO_CELSIUS, pick(ti.standard_uncertainty),
                    100.0 * pick(ti.beyond_range)]
        row[at:at] = vals
    targets.note += (f" Interval columns: the {record.level_text} interval of a temperature answer from the "
                     f"uncertainty of the species data ({record.how}); pressure and feed-ratio answers have "
                     "their own interval columns. A blank interval end lies beyond the search range (see the draws column), or the answer is "
                     "the end of the search range and has no interval.")
    rows = []
    for qi, (Ps, ti) in answers.items():
        q = c.studies.targets[qi]
        ans = run.temperature_answers.get(qi, (None, None))[1]
        flat = {k: np.asarray(getattr(ti, k), dtype=float).reshape(-1)
                for k in ("T", "lower", "median", "upper", "standard_uncertainty", "beyond_range", "n_failed")}
        for i, P in enumerate(Ps):
            T, lo, hi = flat["T"][i], flat["lower"][i], flat["upper"][i]
            falls = falls_with_temperature(ans, i)
            end = lo if falls else hi if falls is not None else float("nan")
            rows.append([q.label, P / 1e5, T - ZERO_CELSIUS, lo - ZERO_CELSIUS, flat["median"][i] - ZERO_CELSIUS,
                         hi - ZERO_CELSIUS, flat["standard_uncertainty"][i],
                         end - ZERO_CELSIUS, abs(T - end), 100.0 * flat["beyond_range"][i],
                         int(flat["n_failed"][i])])
            record.intervals.append(dict(label=q.label, P=P, T=T, lower=lo, median=flat["median"][i], upper=hi,
                                         u=flat["standard_uncertainty"][i], beyond=flat["beyond_range"][i],
                                         falls=falls))
            if np.isfinite(T) and not (np.isnan(lo) and np.isnan(hi)):
                j = c.pressures.index(P) if P in c.pressures else None
                run.intervals.append((ti, i, plots.series_style(j)["color"] if j is not None else "black"))
                if (qi, i) in run.design_keys:       # the label of the design point gains the interval
                    k = run.design_keys.index((qi, i))
                    label, T_pt, x_pt = run.design_points[k]
                    ends = [f"{v - ZERO_CELSIUS:.0f}" if np.isfinite(v) else "beyond" if np.isinf(v) else "?"
                            for v in (lo, hi)]
                    run.design_points[k] = (f"{label}\n{ends[0]}-{ends[1]} °C", T_pt, x_pt)
        parts = []
        for e in record.intervals[-len(Ps):]:
            parts.append(f"at {e['P'] / 1e5:g} bar {interval_text(e)}" if np.isfinite(e["T"]) else
                         f"at {e['P'] / 1e5:g} bar not reached")
        top = ranked(ti.ranking())[:2]
        lead = "; ".join(f"{e.datum.label} carries {100 * e.share:.0f} % of the variance" for e in top)
        run.findings.append(f"Data uncertainty ({record.how}), {q.label}: " + ", ".join(parts)
                             + (f". {lead}." if lead else "."))
        n_failed = int(np.nansum(flat["n_failed"]))
        run.checks.append(SolverCheck(
            f"data uncertainty: {q.label}", len(Ps) * max(ti.samples, 1), n_failed, float("nan"),
            ("each draw's temperature by bracketed regula falsi, all draws together" if ti.samples else
             "linearised by implicit differentiation") + " (root tolerance 1e-7 K)"
            + (f"; {n_failed} draw(s) failed and are left out" if n_failed else "")))
    run.add_table(Table(
        "temperature_intervals", f"Design temperatures with their {record.level_text} intervals from the "
        "species data", ["question", "P [bar]", "T [degC]", f"T {lo_txt} [degC]", "T median [degC]",
                         f"T {hi_txt} [degC]", "u(T) [K]", "conservative end [degC]", "margin from the data [K]",
                         "draws beyond search range [%]", "draws failed [-]"], rows, section="uncertainty",
        note="Conservative end: the end of the interval on the side where the target is still met for "
             "(nearly) every draw - the lower end where conversion falls with temperature, the upper end "
             "where it rises. Margin from the data: its distance from the nominal answer. T here is the "
             "nominal answer refined to 1e-7 K; it differs from the targets table by less than 0.01 K."))


def _answer_interval_columns(run: RunContext, found: dict, record: UncertaintyRecord, lo_txt: str, hi_txt: str,
                             symbol: str, unit: str, scale: float, spread_label: str) -> None:
    """Interval columns of pressure or feed-ratio answers in the targets table, and one
    finding each (``found``: question index -> Pressure/FeedRatioUncertainty)."""
    c = run.case
    targets = run.table("targets")
    at = targets.columns.index("reached [-]")
    new_cols = [f"{symbol} {lo_txt} [{unit}]", f"{symbol} {hi_txt} [{unit}]", f"{spread_label} [-]"]
    targets.columns[at:at] = new_cols
    for row, (qi, i) in zip(targets.rows, run.target_rows):
        vals = [float("nan")] * len(new_cols)
        if qi in found:
            a = found[qi]
            vals = [float(a.lower) / scale, float(a.upper) / scale, float(a.relative_uncertainty)]
        row[at:at] = vals
    targets.note += (f" {symbol} columns: the {record.level_text} interval of that answer from the uncertainty "
                     f"of the species data ({record.how}); {spread_label} is its relative standard uncertainty.")
    for qi, a in found.items():
        q = c.studies.targets[qi]
        value = float(a.P if symbol == "P" else a.ratio)
        if not np.isfinite(value):
            continue
        ends = [f"{v / scale:.4g} {unit}" if np.isfinite(v) else "beyond the search range"
                for v in (float(a.lower), float(a.upper))]
        top = ranked(a.ranking())[:1]
        lead = "; ".join(f"{e.datum.label} carries {100 * e.share:.0f} % of the variance" for e in top)
        run.findings.append(f"Data uncertainty ({record.how}), {q.label}: {value / scale:.4g} {unit} "
                             f"({ends[0]} to {ends[1]}, {spread_label} {float(a.relative_uncertainty):.3f})"
                             + (f". {lead}." if lead else "."))


def _ranking_tables(run: RunContext, band, answers: dict, record: UncertaintyRecord) -> None:
    c = run.case
    cols_tail = ["sensitivity [{a} per unit of u]", "contribution [{a}]", "share of variance [%]"]
    head = ["rank [-]", "datum", "species", "u [unit of u]", "unit of u", "source of u"]
    if answers:
        rows = []
        for qi, (Ps, ti) in answers.items():
            for e in ranked(ti.ranking()):
                d = e.datum
                rows.append([c.studies.targets[qi].label, e.rank, d.label, d.species, d.u, d.unit, d.origin,
                             e.sensitivity, e.contribution, 100.0 * e.share])
        run.add_table(Table("uncertainty_ranking_temperature", "Which data move the design temperatures most",
                             ["question"] + head + [t.format(a="K") for t in cols_tail], rows,
                             section="uncertainty",
                             note="First-order sensitivity coefficients (implicit differentiation, central "
                                  "differences) times the standard uncertainties, averaged over the pressure "
                                  "options of each question; contribution: the u(T) from that datum alone. "
                                  + RANKING_NOTE))
    if band is not None:
        rows = []
        for e in ranked(band.ranking(f"conversion {c.key}")):
            d = e.datum
            rows.append([e.rank, d.label, d.species, d.u, d.unit, d.origin, 100.0 * e.sensitivity,
                         100.0 * e.contribution, 100.0 * e.share])
        run.add_table(Table("uncertainty_ranking_conversion", f"Which data move the conversion of {c.key} most",
                             head + [t.format(a="% points") for t in cols_tail], rows, section="uncertainty",
                             note="Shares averaged over every temperature and pressure option of the band "
                                  "(first-order sensitivity coefficients). " + RANKING_NOTE))
