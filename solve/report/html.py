"""The design-review report: one self-contained HTML file per run.

The file opens offline: the style sheet is inline, the figures are embedded as base64
PNG, and nothing refers to another file or to the network.  Sections: job and case
summary, findings, inputs with units, assumptions, results tables, figures, data
provenance, solver diagnostics, cautions and the list of files written beside it.
"""
from __future__ import annotations

import base64
import hashlib
import html
import math
from importlib import metadata

from ..casefile.schema import LAYOUT_ID
from ..studies.uncertainty import ASSUMPTIONS, CAUTION
from . import figures as plots
from .numbers import ZERO_CELSIUS, format_cell, search_end_text, temperature_text_precise

#: Resolution of the figures embedded in the report [dots per inch].
REPORT_DPI = 100

CAUTIONS = (
    "eqdesign computes thermodynamic equilibrium: the most a reactor could reach. It says nothing about "
    "reaction rates, catalyst activity or life, heat removal, pressure drop, materials or mechanical design.",
    "High pressure: synthesis loops and converters at tens to hundreds of bar store large amounts of energy; "
    "vessel, piping and relief design follow the applicable pressure-equipment codes.",
    "Toxic gases (for example NH3, CO, SO2, SO3, H2S) and flammable gases (H2, CH4, CO, CH3OH vapour) are "
    "present in these processes: gas detection, ventilation, isolation and emergency response are part of any "
    "design that uses these numbers.",
    "Strongly exothermic reactions can run away: adiabatic temperature rises, hot spots and loss of cooling "
    "need their own analysis; an equilibrium limit is not a safe operating limit.",
    "Carbon limits shown are thermodynamic; carbon can form on a real catalyst under conditions these "
    "calculations call carbon-free, and vice versa.",
    "Use these results as one input to a design that follows local codes and standards, the site's "
    "process-safety practice (hazard studies, management of change) and review by licensed engineers.",
)

_STYLE = """
body { font-family: "DejaVu Sans", Arial, Helvetica, sans-serif; margin: 2em auto; max-width: 72em;
       color: #1a1a1a; line-height: 1.45; padding: 0 1.5em; }
h1 { font-size: 1.7em; border-bottom: 3px solid #1f3b73; padding-bottom: .3em; }
h2 { font-size: 1.3em; margin-top: 2em; border-bottom: 1px solid #999; padding-bottom: .2em; }
h3 { font-size: 1.05em; margin-top: 1.4em; }
h4 { font-size: .95em; margin-top: 1.1em; }
table { border-collapse: collapse; margin: .6em 0 1em 0; font-size: .88em; }
th, td { border: 1px solid #b0b0b0; padding: .25em .55em; text-align: right; vertical-align: top; }
th { background: #e8ebf2; text-align: center; }
td.text, th.text { text-align: left; }
td.long { min-width: 14em; }
div.wide { overflow-x: auto; max-width: 100%; }
table.facts td:first-child { font-weight: bold; text-align: left; background: #f4f5f8; }
table.facts td { text-align: left; }
p.note { font-size: .85em; color: #444; margin-top: -.4em; }
figure { margin: 1.2em 0 2em 0; }
figure img { width: 100%; max-width: 60em; border: 1px solid #ccc; }
figcaption { font-size: .9em; color: #333; }
.caution { border: 2px solid #8a1c1c; background: #fbf1f1; padding: .6em 1.2em; }
.flag { color: #8a1c1c; font-weight: bold; }
.ok { color: #225c2f; font-weight: bold; }
ul.findings li { margin-bottom: .3em; }
code { font-family: "DejaVu Sans Mono", monospace; font-size: .92em; }
"""


def _e(text) -> str:
    return html.escape(str(text), quote=True)


def _version() -> str:
    try:
        return metadata.version("eqdesign")
    except metadata.PackageNotFoundError:  # pragma: no cover - source tree without install
        return "unknown"


def _table_html(columns, rows, *, every: int = 1, css: str = "") -> str:
    out = ['<div class="wide">', f'<table class="{css}">' if css else "<table>", "<thead><tr>"]
    text_cols = set()
    long_cols = set()          # sentences: give them room instead of a narrow column
    if rows:
        for j in range(len(columns)):
            if all(isinstance(r[j], str) for r in rows if j < len(r)):
                text_cols.add(j)
                if max((len(r[j]) for r in rows if j < len(r)), default=0) > 60:
                    long_cols.add(j)
    for j, c in enumerate(columns):
        cls = ' class="text"' if j in text_cols else ""
        out.append(f"<th{cls}>{_e(c)}</th>")
    out.append("</tr></thead><tbody>")
    shown = list(range(0, len(rows), every))
    if every > 1 and rows and shown[-1] != len(rows) - 1:
        shown.append(len(rows) - 1)
    for i in shown:
        out.append("<tr>")
        for j, v in enumerate(rows[i]):
            cls = ' class="text long"' if j in long_cols else (' class="text"' if j in text_cols else "")
            out.append(f"<td{cls}>{_e(format_cell(v))}</td>")
        out.append("</tr>")
    out.append("</tbody></table></div>")
    return "".join(out)


def _facts(pairs) -> str:
    return _table_html(["item", "value"], [[a, b] for a, b in pairs], css="facts")


def _img(fig, png: bytes | None = None) -> str:
    data = base64.b64encode(png or plots.render(fig, "png", dpi=REPORT_DPI)).decode("ascii")
    return f'<img alt="figure" src="data:image/png;base64,{data}">'


def _inputs(case) -> str:
    s = case.studies
    parts = ["<h2>Inputs</h2>"]
    pairs = [
        ("species", ", ".join(case.species)),
        ("key reactant", case.key),
        ("product", case.product or "–"),
        ("reaction mode", "only the named reactions proceed" if case.solver_reactions else
         "all species may form (element balances)"),
        ("gas model", case.gas_model),
        ("approach margin", f"{case.approach:g} K"),
        ("temperature window", f"{temperature_text_precise(case.temperature.low)} to {temperature_text_precise(case.temperature.high)}, "
                               f"{case.temperature.points} points"),
        ("pressure options", ", ".join(f"{p / 1e5:g} bar" for p in case.pressures)),
    ]
    if case.feed_flow:
        pairs.append(("total feed flow", f"{case.feed_flow * 3.6:.6g} kmol/h ({case.feed_flow:.6g} mol/s)"))
    parts.append(_facts(pairs))
    if case.reactions:
        parts.append("<h3>Named reactions</h3>")
        parts.append(_table_html(["name", "reaction", "role"],
                                 [[n, t, "restricts the equilibrium" if case.solver_reactions else "shown for K(T)"]
                                  for n, t in case.reactions]))
    parts.append("<h3>Feed</h3>")
    given = dict(case.feed_as_given)
    parts.append(_table_html(["species", "as given", "mole fraction [-]"],
                             [[n, given.get(n, ""), float(x)] for n, x in case.feed_items]))
    parts.append("<h3>Studies requested</h3>")
    rows = []
    if s.conversion_map:
        extra = ""
        if s.conversion_map.feed_ratio:
            fr = s.conversion_map.feed_ratio
            extra = f"; {fr.label} " + ", ".join(f"{v:g}" for v in fr.values)
        rows.append(["conversion map", f"temperature window × pressure options{extra}"])
    for q in s.targets:
        fixed = []
        if q.pressure:
            fixed.append(f"{q.pressure / 1e5:g} bar")
        if q.temperature:
            fixed.append(temperature_text_precise(q.temperature))
        rows.append([f"target: {q.label}", f"solve for {q.solve_for} giving {100 * q.conversion:g} % conversion"
                     + (f" at {', '.join(fixed)}" if fixed else " at each pressure option")])
    if s.pressure_options:
        po = s.pressure_options
        rows.append(["pressure options", "at " + ", ".join(temperature_text_precise(t) for t in po.temperatures) + "; gas models "
                     + ", ".join(po.gas_models)])
    if s.staged_beds:
        b = s.staged_beds
        rows.append(["staged beds", "inlet " + ", ".join(temperature_text_precise(t) for t in b.inlet_temperatures)
                     + f" at {b.pressure / 1e5:g} bar; "
                     + (f"{b.beds} beds" if b.beds else "as many beds as needed")
                     + (f"; target {100 * b.target:g} %" if b.target else "")
                     + "".join(f"; after bed {k} remove " + ", ".join(f"{100 * f:g} % of {n}" for n, f in v.items())
                               for k, v in b.removal.items())])
    if s.uncertainty:
        u = s.uncertainty
        rows.append(["data uncertainty", (f"Monte Carlo, {u.samples} draws, "
                                          + (f"seed {u.seed}" if u.seed is not None else "no fixed seed")
                                          if u.method == "monte-carlo" else "linearised")
                     + f"; {100 * u.level:.3g} % intervals on the conversion map and the temperature targets"
                     + (f"; own uncertainties for {', '.join(sorted(u.overrides))}" if u.overrides else "")])
    if s.carbon_limit:
        cl = s.carbon_limit
        rows.append(["carbon limit", f"{cl.feed_ratio.label} " + ", ".join(f"{v:g}" for v in cl.feed_ratio.values)
                     + f" at {cl.pressure / 1e5:g} bar, {temperature_text_precise(cl.temperature.low)} to {temperature_text_precise(cl.temperature.high)}"])
    parts.append(_table_html(["study", "settings"], rows))
    if case.user_species:
        parts.append("<h3>Species data supplied in the case file</h3>")
        parts.append(_table_html(["species", "kind", "data", "source"],
                                 [[u.name, u.kind, u.detail, u.source] for u in case.user_species]))
    return "".join(parts)


def _assumptions(case) -> str:
    items = [
        "Standard state: ideal gas at 1 bar (10<sup>5</sup> Pa) for every gas; pure condensed phases at unit "
        "activity. Equilibrium constants are dimensionless on that standard state.",
        "Gas model: " + ("ideal-gas mixture." if case.gas_model == "ideal" else
                         "Peng-Robinson equation of state with the bundled binary interaction parameters "
                         "(D.-Y. Peng, D. B. Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59)."),
        (f"Approach margin: the equilibrium is evaluated {case.approach:g} K away from the operating "
         "temperature, on the side that lowers conversion (hotter for an exothermic reaction, colder for an "
         "endothermic one) - a customary allowance for a real reactor falling short of equilibrium."
         if case.approach else "No approach margin: results are full equilibrium at the operating temperature."),
        ("Restricted reactions: only " + "; ".join(_e(t) for _, t in case.reactions) +
         " may proceed; every other species is inert." if case.solver_reactions else
         "All listed species may form and react: equilibrium subject to the element balances only."),
        "Each point is an isothermal, isobaric equilibrium of the whole feed (no kinetics, no mass- or "
        "heat-transfer limits). Amounts are per mole of total feed; flows scale linearly.",
    ]
    if case.studies.staged_beds:
        items.append("Staged beds: each bed adiabatic with no heat loss and reaching its adiabatic equilibrium "
                     "(with the approach margin if one is set); the gas is cooled back to the inlet temperature "
                     "between beds without reaction.")
    if case.studies.uncertainty:
        items.append("Data uncertainty: only the species data (ΔfH°, S°) are uncertain; the data of different "
                     "species are independent. See the section on uncertainty.")
    if case.studies.carbon_limit:
        items.append("Carbon limit: graphite is stable where the gas, equilibrated without carbon, implies a "
                     "graphite activity above 1 (thermodynamic limit only).")
    return "<h2>Assumptions</h2><ul>" + "".join(f"<li>{i}</li>" for i in items) + "</ul>"


def _result_table(t, case, heading: str = "h3") -> str:
    """A results table with its title, and a note saying where all of it is."""
    out = [f"<{heading}>{_e(t.title)}</{heading}>", _table_html(t.columns, t.rows, every=t.html_every)]
    note = t.note
    if t.html_every > 1:
        note = (note + " " if note else "") + f"One row in {t.html_every} shown; all rows in {t.name}.csv."
    elif case.output.tables:
        note = (note + " " if note else "") + f"Also in {t.name}.csv."
    if note:
        out.append(f'<p class="note">{_e(note)}</p>')
    return "".join(out)


# Long on purpose: the section is written top to bottom in reading order (issue 12 restyles it).
def _uncertainty_section(result) -> str:
    """The data-uncertainty section: method, draws, seed, coverage, assumptions, the
    design temperatures with their intervals, the sensitivity rankings, the band, the
    standard uncertainties used with their sources, and the caution.  Self-contained:
    citations are text, nothing is linked or loaded."""
    u = result.uncertainty
    case = result.case
    tables = {t.name: t for t in result.tables if t.section == "uncertainty"}
    lo_pct, hi_pct = 50.0 * (1.0 - u.level), 100.0 - 50.0 * (1.0 - u.level)
    h = ["<h2>Uncertainty from the species data</h2>"]
    if u.method == "monte-carlo":
        method = ("Monte Carlo propagation of distributions (JCGM 101:2008, Supplement 1 to the Guide to the "
                  "expression of uncertainty in measurement, BIPM 2008)")
        draws = f"{u.samples} draws of every uncertain datum, each draw solved at every state"
        seed = (f"{u.seed} (numpy default_rng; the same seed reproduces these numbers)" if u.seed is not None
                else "none (fresh random numbers: a rerun gives slightly different intervals)")
        cover = (f"{u.level_text}: from the {lo_pct:.3g}th to the {hi_pct:.3g}th percentile of the draws "
                 "(draws that did not converge are left out)")
    else:
        method = ("linearised propagation, the law of propagation of uncertainty of the GUM (JCGM 100:2008, "
                  "BIPM 2008), sensitivity coefficients by central differences")
        draws = "none (linearised: no random draws)"
        seed = "not used (linearised)"
        cover = f"{u.level_text}: nominal answer ± k u with k from the normal distribution"
    h.append(_facts([
        ("method", method), ("draws", draws), ("random seed", seed), ("coverage of the intervals", cover),
        ("uncertain data", "standard enthalpy of formation ΔfH° and standard entropy S° at 298.15 K of every "
                           "species (ΔrH° and ΔrS° for a species defined by reaction data)"),
        ("assumptions", ASSUMPTIONS),
    ]))
    h.append("<p>The data of different species are treated as independent. Errors shared between species (for "
             "example a common calorimetric reference) would widen or narrow the intervals; the ranking below "
             "shows which data matter.</p>")
    if u.intervals:
        h.append("<h3>Design temperatures with their intervals</h3><ul>")
        for e in u.intervals:
            head = f"{_e(e['label'])} at {e['P'] / 1e5:g} bar: "
            if not math.isfinite(e["T"]):
                h.append(f"<li>{head}not reached in the search range (no interval).</li>")
                continue
            if math.isnan(e["lower"]) and math.isnan(e["upper"]):
                h.append(f"<li>{head}{e['T'] - ZERO_CELSIUS:.1f} degC, the end of the search range: the target is "
                         "met over all of it, so the data fix no interval; widen the search range.</li>")
                continue
            text = (f"<b>{e['T'] - ZERO_CELSIUS:.1f} degC</b> ({e['T']:.1f} K); {u.level_text} interval "
                    f"<b>{search_end_text(e['lower'])} to {search_end_text(e['upper'])}</b>"
                    + (f", u(T) = {e['u']:.2f} K" if math.isfinite(e["u"]) else ""))
            if e["beyond"] > 0:
                text += (f". {100 * e['beyond']:.3g} % of the draws reach the target only beyond the search range; "
                         "widen it to close the interval")
            odds = (f"in at least {hi_pct:.3g} % of the data draws" if u.method == "monte-carlo" else
                    f"with a one-sided probability of {hi_pct:.3g} % (linearised, normal)")
            if e["falls"] is True and math.isfinite(e["lower"]):
                text += (f". Conversion falls with temperature here: at or below {search_end_text(e['lower'])} the target is "
                         f"reached {odds}")
            elif e["falls"] is False and math.isfinite(e["upper"]):
                text += (f". Conversion rises with temperature here: at or above {search_end_text(e['upper'])} the target is "
                         f"reached {odds}")
            h.append(f"<li>{head}{text}.</li>")
        h.append("</ul>")
        if "temperature_intervals" in tables:
            h.append(_result_table(tables["temperature_intervals"], case, "h3"))
    if u.untreated:
        h.append('<p class="note">No interval for ' + ", ".join(_e(x) for x in u.untreated)
                 + ": the uncertainty is propagated to temperature answers and to the conversion map only.</p>")
    h.append("<h3>Sensitivity ranking: which species' data move the answers most</h3>")
    for name in ("uncertainty_ranking_temperature", "uncertainty_ranking_conversion"):
        if name in tables:
            h.append(_result_table(tables[name], case, "h4"))
    if "conversion_band_by_temperature" in tables:
        h.append("<h3>Conversion band</h3>")
        fig_no = next((i for i, f in enumerate(result.figures, 1) if f.name == u.band_figure), None)
        if fig_no:
            h.append(f"<p>Figure {fig_no} draws these bands around the conversion curves and marks each design "
                     "temperature with its interval.</p>")
        h.append(_result_table(tables["conversion_band_by_temperature"], case, "h4"))
        if "conversion_band" in tables and case.output.tables:
            h.append(f'<p class="note">Every point with median and standard uncertainty: conversion_band.csv '
                     f"({len(tables['conversion_band'].rows)} rows).</p>")
    if "uncertainty_data" in tables:
        h.append(_result_table(tables["uncertainty_data"], case, "h3"))
    notes = [f"{_e(k)}: {_e(c)}." for k, c in u.references]
    for name, basis in u.classes:
        notes.append(f"Class '{_e(name)}': {_e(basis)}")
    if any(d.origin == "user" for d in u.data):
        notes.append("'user': given in this case file (studies.uncertainty.overrides, or with the case's own "
                     "species data).")
    notes.append(f"Key values and class defaults read from {_e(u.defaults_origin)}.")
    h.append("<p><b>Sources of the standard uncertainties.</b> " + " ".join(notes) + "</p>")
    h.append(f'<div class="caution"><p><b>Caution.</b> {_e(CAUTION)}</p></div>')
    return "".join(h)


# Long on purpose: one pass over the report sections in the order a reader meets them.
def build_report(result, images: dict | None = None) -> str:
    """The report of a :class:`eqdesign.solve.report.records.RunResult` as one HTML document.

    ``images`` maps figure names to PNG bytes already rendered (they are embedded as
    they are); other figures are rendered here at ``REPORT_DPI``.
    """
    images = images or {}
    case = result.case
    sha = hashlib.sha256(case.text.encode("utf-8")).hexdigest()
    h = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
         f"<title>{_e(case.title)} - eqdesign report</title>", f"<style>{_STYLE}</style></head><body>"]
    h.append(f"<h1>{_e(case.title)}</h1>")
    if case.scenario:
        h.append(f"<p>{_e(case.scenario)}</p>")
    if case.notes:
        h.append(f"<p><em>{_e(case.notes)}</em></p>")
    meta = [("case file", case.file), ("case layout", LAYOUT_ID), ("case file SHA-256", sha),
            ("prepared by", case.prepared_by or "–"), ("run started", result.started),
            ("run time", f"{result.elapsed:.1f} s"), ("eqdesign version", _version())]
    if result.coarse:
        meta.append(("resolution", "REDUCED (quick look): grids thinned; rerun without --coarse for the record"))
    h.append(_facts(meta))

    h.append("<h2>Findings</h2><ul class=\"findings\">")
    flagged = result.flagged
    h.append("<li>" + (f'<span class="flag">{flagged} point(s) did not converge</span>: they are blank in the '
                       "tables; see the solver diagnostics." if flagged else
                       '<span class="ok">Every point converged.</span>') + "</li>")
    if result.extrapolations:
        h.append('<li><span class="flag">Species data were extrapolated</span> beyond their valid range: see '
                 "the data provenance.</li>")
    for f in result.findings:
        h.append(f"<li>{_e(f)}</li>")
    h.append("</ul>")

    h.append(_inputs(case))
    h.append(_assumptions(case))

    h.append("<h2>Results</h2>")
    for t in result.tables:
        if not t.in_report or t.section != "results" or t.name in ("data_provenance", "solver_diagnostics"):
            continue
        h.append(_result_table(t, case))
    hidden = [t for t in result.tables if not t.in_report and t.section == "results"]
    if hidden and case.output.tables:
        h.append('<p class="note">Full grids, not shown here: ' + ", ".join(
            f"{_e(t.name)}.csv ({len(t.rows)} rows: {_e(t.title)})" for t in hidden) + ".</p>")

    if result.figures:
        h.append("<h2>Figures</h2>")
        for i, f in enumerate(result.figures, 1):
            h.append(f"<figure>{_img(f.figure, images.get(f.name))}<figcaption><b>Figure {i}. {_e(f.title)}.</b> "
                     f"{_e(f.caption)}</figcaption></figure>")

    if result.uncertainty is not None:
        h.append(_uncertainty_section(result))

    h.append("<h2>Data provenance</h2>")
    prov = result.table("data_provenance")
    h.append(_table_html(prov.columns, prov.rows))
    if prov.note:
        h.append(f'<p class="note">{_e(prov.note)}</p>')
    if result.extrapolations:
        h.append("<p class=\"flag\">Extrapolation warnings raised during the run:</p><ul>"
                 + "".join(f"<li>{_e(x)}</li>" for x in result.extrapolations) + "</ul>")
    else:
        h.append("<p>No species data were used outside their valid temperature range.</p>")

    h.append("<h2>Solver diagnostics</h2>")
    diag = result.table("solver_diagnostics")
    h.append(_table_html(diag.columns, diag.rows))
    lr = result.largest_residual
    h.append(f"<p>Points flagged in all studies: <b>{flagged}</b>. Largest scaled residual of a converged "
             f"point: <b>{format_cell(lr)}</b>. {_e(diag.note)}</p>")
    if result.notes:
        h.append("<ul>" + "".join(f"<li>{_e(n)}</li>" for n in result.notes) + "</ul>")
    if result.study_times:
        h.append('<p class="note">Time per study: ' + "; ".join(
            f"{_e(k)} {v:.2f} s" for k, v in result.study_times.items()) + ".</p>")

    h.append('<h2>Cautions</h2><div class="caution"><ul>'
             + "".join(f"<li>{_e(c)}</li>" for c in CAUTIONS) + "</ul></div>")

    files = []
    if case.output.tables:
        files += [f"{t.name}.csv" for t in result.tables]
    files += [f"{f.name}.{fmt}" for f in result.figures for fmt in case.output.plot_formats]
    files += ["case.yaml", "run_summary.json"]
    h.append("<h2>Files beside this report</h2><p>" + ", ".join(f"<code>{_e(x)}</code>" for x in files)
             + ". CSV headers carry the units; temperatures in degC and K, pressures in bar (absolute).</p>")
    h.append("</body></html>")
    return "\n".join(h)
