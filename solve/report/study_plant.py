"""The equipment studies of a run: pressure options (and gas models) compared, staged
adiabatic beds with interstage cooling, and the carbon limit of a reformer feed.
"""
from __future__ import annotations

import numpy as np

from ..studies.beds import staged_converter
from ..studies.carbon_limit import carbon_limit
from . import figures as plots
from .context import COARSE_POINTS, RunContext, api_ratio, subsample
from .numbers import ZERO_CELSIUS, celsius
from .records import SolverCheck, Table


def run_pressure_options(run: RunContext) -> None:
    """Conversion, outlet fraction, reaction enthalpy and heat released at each pressure option and
    gas model: table, figure, finding."""
    c = run.case
    st = c.studies.pressure_options
    T = np.array(st.temperatures)
    P = np.array(c.pressures)
    rows, series = [], []
    key_flow = None
    if c.feed_flow:
        key_flow = c.feed_flow * c.feed[c.key]       # mol/s of key
    for model in st.gas_models:
        with run.study(f"pressure options ({model})"):
            m = run.solve_map(f"pressure options, {model} gas", T=T, P=P, gas_model=model)
        conv = np.asarray(m.conversion)
        for i, t in enumerate(T):
            series.append((f"{model} gas, {t - ZERO_CELSIUS:g} degC", conv[i]))
            for j, p in enumerate(P):
                row = [model, float(celsius(t)), float(p / 1e5), 100 * float(conv[i, j])]
                if c.product:
                    row.append(float(np.asarray(m.mole_fractions[c.product])[i, j]) if c.product in
                               m.mole_fractions else float("nan"))
                dH = float(np.asarray(m.reaction_enthalpy)[i, j])
                row.append(dH / 1000.0)
                if key_flow:
                    row.append(-dH * float(conv[i, j]) * key_flow / 1e6)
                row.append(bool(np.asarray(m.converged)[i, j]))
                rows.append(row)
    cols = ["gas model", "T [degC]", "P [bar]", f"conversion {c.key} [%]"]
    if c.product:
        cols.append(f"y {c.product} outlet [-]")
    cols.append(f"reaction enthalpy [kJ/mol {c.key} converted]")
    if key_flow:
        cols.append("heat released at T [MW]")
    cols.append("converged [-]")
    note = ("Reaction enthalpy from the ideal-gas standard enthalpies at T (no residual enthalpy), for both "
            "gas models.")
    if key_flow:
        note += (" Heat released: that enthalpy times the key reactant converted, for the feed flow of "
                 f"{c.feed_flow * 3.6:.6g} kmol/h; a negative value means heat taken up.")
    run.add_table(Table("pressure_options", "Pressure options compared", cols, rows, note=note))
    run.add_figure("pressure_options", "Pressure options", "Equilibrium conversion at each pressure option"
                    + (", ideal gas against Peng-Robinson" if len(st.gas_models) > 1 else "")
                    + (f"; {c.approach:g} K approach margin" if c.approach else "") + ".",
                    plots.pressure_option_comparison(P, series, key=c.key))
    if len(st.gas_models) > 1:
        by = {(r[0], r[1], r[2]): r[3] for r in rows}
        diffs = [by[(st.gas_models[1], t, p)] - by[(st.gas_models[0], t, p)]
                 for (_, t, p) in by if (st.gas_models[1], t, p) in by and (st.gas_models[0], t, p) in by]
        if diffs:
            worst = max(diffs, key=abs)
            run.findings.append(f"Gas model matters by up to {worst:+.2f} percentage points of conversion "
                                 f"({st.gas_models[1]} against {st.gas_models[0]}) over the pressure options.")


def run_staged_beds(run: RunContext) -> None:
    """Staged adiabatic beds with interstage cooling: bed table, conversion-temperature diagram,
    finding, solver check."""
    c = run.case
    st = c.studies.staged_beds
    kw = run.common()
    kw["approach"] = c.approach
    inlet = st.inlet_temperature if len(st.inlet_temperatures) == 1 else list(st.inlet_temperatures)
    with run.study("staged beds"):
        res = staged_converter(list(c.species), c.feed, st.pressure, c.key, inlet, n_beds=st.beds,
                               target=st.target, interstage_removal=st.removal or None, **kw)
    bed_rows = list(res.rows())
    cols, rows = [], []
    for r in bed_rows:
        row = {}
        for k, v in r.items():
            if k == "interstage heat removed [J]":
                row["interstage heat removed [kJ/mol feed]"] = v / 1000.0
                if c.feed_flow:
                    row["interstage heat removed [MW]"] = v * c.feed_flow / 1e6
            elif isinstance(v, dict):
                row[k.replace("[mol]", "[mol/mol feed]")] = "; ".join(f"{n} {a:.5g}" for n, a in v.items())
            else:
                row[k] = v
        if not cols:
            cols = list(row)
        rows.append([row.get(k, "") for k in cols])
    run.add_table(Table("staged_beds", "Staged adiabatic beds with interstage cooling", cols, rows,
                         note=res.message))
    d = res.diagram
    for b in res.beds:
        if b.flags:
            run.add_caution("extrapolation" if "outside data range" in b.flags else "model",
                            f"staged beds, bed {b.bed}", f"The outlet of bed {b.bed} is not trustworthy ({b.flags}).")
        run.rec.temperatures([b.inlet_T, b.outlet_T])
    if d.bed_lines:
        fig = plots.conversion_temperature_diagram(d.equilibrium_curves, d.bed_lines, d.cooling_lines,
                                                   key=c.key, target=st.target)
        run.add_figure("conversion_temperature_diagram", "Conversion-temperature diagram",
                        f"Equilibrium conversion of {c.key} at {st.pressure / 1e5:g} bar (black) and each "
                        "bed's adiabatic operating line; dotted grey lines are interstage cooling"
                        + (" (and removal of " + ", ".join(sorted({n for v in st.removal.values() for n in v}))
                           + ")" if st.removal else "") + ".", fig)
    run.findings.append(f"Staged beds at {st.pressure / 1e5:g} bar: {res.message}"
                         + (f" Hottest bed outlet {max(b.outlet_T for b in res.beds) - ZERO_CELSIUS:.0f} degC."
                            if res.beds else ""))
    flagged = 1 if "did not converge" in res.message else 0
    its = max((b.iterations for b in res.beds), default=0)
    run.checks.append(SolverCheck("staged beds", len(res.beds), flagged, float("nan"),
                                   f"adiabatic energy balance per bed (relative tolerance 1e-10); up to {its} "
                                   "equilibrium evaluations per bed"))
    run.notes.append("staged beds: " + res.caution)


def run_carbon_limit(run: RunContext) -> None:
    """Graphite activity over temperature × feed ratio and the critical ratio per temperature:
    tables, map, finding."""
    c = run.case
    st = c.studies.carbon_limit
    T = st.temperature.values()
    ratios = np.asarray(st.feed_ratio.values, dtype=float)
    if run.coarse:
        T = subsample(T, COARSE_POINTS)
        ratios = subsample(ratios, 7)
    spec = api_ratio(st.feed_ratio)
    kw = dict(T=T, P=st.pressure, gas_model=c.gas_model, database=run.db,
              ratio_range=(max(min(ratios) / 4, 0.01), max(ratios) * 4))
    if spec == "steam_to_carbon":
        kw["steam_to_carbon"] = ratios
    else:
        kw["feed_ratio"] = (spec[0], spec[1], ratios)
    feed = {k: v for k, v in c.feed.items()}
    species = [s for s in c.species if run.db[s].is_gas]
    with run.study("carbon limit"):
        lim = carbon_limit(species, feed, **kw)
    run.rec.temperatures(T)
    a = np.asarray(lim.carbon_activity)
    stable = np.asarray(lim.graphite_stable)
    crit = np.asarray(lim.critical_ratio)
    status = np.asarray(lim.status)
    rows = []
    for i, t in enumerate(T):
        for k, r in enumerate(ratios):
            rows.append([float(celsius(t)), float(r), float(a[i, k]), bool(stable[i, k])])
    label = st.feed_ratio.label
    run.add_table(Table("carbon_limit_map", f"Graphite activity over temperature and {label} at "
                         f"{st.pressure / 1e5:g} bar", ["T [degC]", f"{label} [mol/mol]", "graphite activity [-]",
                                                       "carbon forms [-]"], rows, in_report=False))
    brow = [[float(celsius(t)), float(crit[i]), str(status[i])] for i, t in enumerate(T)]
    run.add_table(Table("carbon_limit", f"Carbon limit: lowest {label} free of graphite at "
                         f"{st.pressure / 1e5:g} bar", ["T [degC]", f"critical {label} [mol/mol]", "status"],
                         brow, note="Graphite is thermodynamically stable below the critical ratio (gas at "
                                    "equilibrium without carbon, graphite activity above 1). 'carbon-free': "
                                    "no carbon even at the low end of the search range; 'carbon': carbon "
                                    "even at the high end.", html_every=max(1, len(brow) // 14)))
    edge = np.where(status == "carbon", np.inf, np.where(status == "carbon-free", -np.inf, crit))
    fig = plots.carbon_limit_map(T, ratios, stable, ratio_label=label, boundary=edge.astype(float),
                                 pressure=st.pressure)
    run.add_figure("carbon_limit", "Carbon limit map", f"Where graphite is thermodynamically stable (hatched) "
                    f"over temperature and {label} at {st.pressure / 1e5:g} bar; the line is the critical "
                    "ratio. Catalyst-specific limits (whisker carbon, gum) differ and are not shown.", fig)
    finite = np.isfinite(crit)
    if finite.any():
        worst = int(np.nanargmax(np.where(finite, crit, -np.inf)))
        run.findings.append(f"Carbon limit at {st.pressure / 1e5:g} bar: graphite is stable below {label} "
                             f"{crit[worst]:.3g} at {T[worst] - ZERO_CELSIUS:.0f} degC, the most demanding "
                             f"temperature of the range studied.")
    n_bad = int(np.count_nonzero(status == "failed"))
    run.checks.append(SolverCheck("carbon limit", int(T.size), n_bad, float("nan"), lim.message))
