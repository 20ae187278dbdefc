"""The conversion-map studies of a run: K(T) of the named reactions, the conversion map over
temperature × pressure options (and over a feed ratio), and their figures and tables.
"""
from __future__ import annotations

import numpy as np

from ...thermo.reactions import Reaction
from . import figures as plots
from .context import COARSE_POINTS, RunContext, subsample
from .numbers import ZERO_CELSIUS, celsius
from .records import Table
from .tables import long_table


def run_equilibrium_constants(run: RunContext) -> None:
    """K(T), ln K and ΔrH° of the named reactions over the temperature window: table and ln K
    against 1000/T figure."""
    c = run.case
    if not c.reactions:
        return
    with run.study("equilibrium constants"):
        T = np.linspace(c.temperature.low, c.temperature.high, 41 if not run.coarse else 11)
        rxns = [(name, Reaction.parse(text, run.db)) for name, text in c.reactions]
        cols = ["T [degC]", "T [K]", "1000 K/T [-]"]
        data = [celsius(T), T, 1000.0 / T]
        series = []
        for name, r in rxns:
            lnK = np.asarray(r.ln_K(T), dtype=float)
            dH = np.asarray(r.delta_h(T), dtype=float) / 1000.0
            series.append((f"{name}: {r.text}", lnK))
            cols += [f"ln K {name} [-]", f"K {name} [-]", f"reaction enthalpy {name} [kJ/mol]"]
            data += [lnK, np.exp(lnK), dH]
        run.rec.temperatures(T)
        rows = [list(row) for row in np.column_stack(data)]
        run.add_table(Table("equilibrium_constants", "Equilibrium constants of the named reactions "
                             "(dimensionless K, standard state 1 bar)", cols, rows,
                             html_every=max(1, len(rows) // 10)))
        run.add_figure("ln_k_vs_inverse_temperature", "ln K against 1000/T",
                        "Equilibrium constant of each named reaction from the species data (Gibbs route, "
                        "standard state 1 bar). A falling line (ln K down as T rises) means an exothermic "
                        "reaction.", plots.ln_k_against_inverse_temperature(T, series))


def run_conversion_map(run: RunContext) -> None:
    """The conversion map over temperature × pressure options (and over the feed ratio when asked):
    long and wide tables, findings."""
    c = run.case
    with run.study("conversion map"):
        m = run.solve_map("conversion map", T=run.T_grid, P=np.array(c.pressures))
    run.map = m
    run.add_table(long_table("conversion_map", "Conversion map: every grid point", m, c))
    conv = np.asarray(m.conversion)
    pcols = ["T [degC]"] + [f"conversion {c.key} at {p / 1e5:g} bar [%]" for p in c.pressures]
    prow = [[float(celsius(t))] + [100.0 * float(x) for x in conv[i]] for i, t in enumerate(run.T_grid)]
    note = f"Operating temperature; equilibrium taken with a {c.approach:g} K approach." if c.approach else ""
    run.add_table(Table("conversion_by_temperature", f"Equilibrium conversion of {c.key} by temperature "
                         "and pressure option", pcols, prow, note=note, html_every=max(1, len(prow) // 16)))
    mid = len(run.T_grid) // 2
    txt = ", ".join(f"{100 * conv[mid, j]:.1f} % at {p / 1e5:g} bar" for j, p in enumerate(c.pressures))
    run.findings.append(f"Equilibrium conversion of {c.key} at {run.T_grid[mid] - ZERO_CELSIUS:.0f} degC"
                         f"{' (with the approach margin)' if c.approach else ''}: {txt}.")
    if not m.all_converged:
        run.notes.append(f"conversion map: {m.message}")

    st = c.studies.conversion_map
    if st.feed_ratio is None:
        return
    fr = st.feed_ratio
    ratios = np.asarray(fr.values, dtype=float)
    if run.coarse:
        ratios = subsample(ratios, 3)
    P_r = st.composition_at or c.pressures[0]
    with run.study("feed-ratio map"):
        mr = run.solve_map("feed-ratio map", T=run.T_grid, P=np.array([P_r]), feed_ratio=fr, ratios=ratios)
    run.ratio_map = (mr, ratios, P_r)
    run.add_table(long_table("conversion_by_feed_ratio_map", f"Conversion map over {fr.label} at "
                               f"{P_r / 1e5:g} bar: every grid point", mr, c, ratio=(fr, ratios)))
    conv_r = np.asarray(mr.conversion).reshape(len(run.T_grid), ratios.size)
    rcols = ["T [degC]"] + [f"conversion {c.key} at {fr.label} {r:g} [%]" for r in ratios]
    rrow = [[float(celsius(t))] + [100.0 * float(x) for x in conv_r[i]] for i, t in enumerate(run.T_grid)]
    run.add_table(Table("conversion_by_feed_ratio", f"Equilibrium conversion of {c.key} by temperature and "
                         f"{fr.label} at {P_r / 1e5:g} bar", rcols, rrow, note=note,
                         html_every=max(1, len(rrow) // 16)))
    base = fr.current(c.feed, run.db)
    run.findings.append(f"The case feed has {fr.label} {base:.3g}; at {run.T_grid[mid] - ZERO_CELSIUS:.0f} degC "
                         f"and {P_r / 1e5:g} bar the conversion of {c.key} is " + ", ".join(
                             f"{100 * conv_r[mid, k]:.1f} % at {r:g}" for k, r in enumerate(ratios)) + ".")


def add_conversion_figures(run: RunContext) -> None:
    """Conversion against temperature (with design points, bands and intervals of the earlier
    studies), by feed ratio, and the outlet composition."""
    c = run.case
    m = run.map
    st = c.studies.conversion_map
    conv = np.asarray(m.conversion)
    curves = [(f"{p / 1e5:g} bar", conv[:, j]) for j, p in enumerate(c.pressures)]
    fig = plots.conversion_vs_temperature(run.T_grid, curves, key=c.key, target=run.target_line,
                                          design_points=run.design_points, approach=c.approach,
                                          bands=run.bands, intervals=run.intervals)
    cap = (f"Equilibrium conversion of {c.key} at each pressure option ({c.gas_model} gas"
           + (f", {c.approach:g} K approach margin" if c.approach else "") + ") for the case feed.")
    if run.design_points:
        cap += " Stars mark the answers of the temperature targets (pressure in brackets)."
    u = run.uncertainty_record
    if u is not None and run.bands:
        cap += (f" Hatched grey bands with dashed edges: the {u.level_text} interval of the conversion from the "
                f"uncertainty of the species data ({u.how}).")
    if u is not None and run.intervals:
        cap += (f" Diamonds with whiskers: each design temperature with its {u.level_text} interval, at the "
                "target conversion.")
    run.add_figure("conversion_vs_temperature", f"Conversion of {c.key} against temperature", cap, fig)
    if u is not None and run.bands:
        u.band_figure = "conversion_vs_temperature"
    if getattr(run, "ratio_map", None) is not None:
        mr, ratios, P_r = run.ratio_map
        fr = st.feed_ratio
        conv_r = np.asarray(mr.conversion).reshape(len(run.T_grid), ratios.size)
        curves = [(f"{fr.label} {r:g}", conv_r[:, k]) for k, r in enumerate(ratios)]
        fig = plots.conversion_vs_temperature(run.T_grid, curves, key=c.key, approach=c.approach,
                                              title=f"Conversion of {c.key} against temperature at "
                                                    f"{P_r / 1e5:g} bar, by {fr.label}")
        run.add_figure("conversion_by_feed_ratio", f"Conversion of {c.key} by {fr.label}",
                        f"Equilibrium conversion of {c.key} at {P_r / 1e5:g} bar for each {fr.label} "
                        f"(the case feed has {fr.current(c.feed, run.db):.3g}).", fig)

    # outlet composition at one pressure
    P_comp = st.composition_at or c.pressures[0]
    if P_comp in c.pressures:
        j = c.pressures.index(P_comp)
        y = {k: np.asarray(v)[:, j] for k, v in m.mole_fractions.items()}
    else:
        with run.study("outlet composition"):
            m2 = run.solve_map("outlet composition", T=run.T_grid, P=np.array([P_comp]))
        y = {k: np.asarray(v)[:, 0] for k, v in m2.mole_fractions.items()}
    shown = [(k, v) for k, v in y.items() if np.nanmax(np.nan_to_num(v)) > 0]
    ymax = max(float(np.nanmax(v)) for _, v in shown)
    small = [float(np.nanmin(v[v > 0])) for _, v in shown if np.any(v > 0)]
    log_scale = bool(small) and min(small) < 1e-3 * ymax
    fig = plots.composition_vs_temperature(run.T_grid, shown, pressure=P_comp, log_scale=log_scale)
    run.add_figure("outlet_composition", f"Outlet composition at {P_comp / 1e5:g} bar",
                    f"Equilibrium gas composition leaving the reactor at {P_comp / 1e5:g} bar"
                    + (" (mole fraction on a logarithmic axis)" if log_scale else "") + ".", fig)
    cols = ["T [degC]"] + [f"y {k} [-]" for k, _ in shown]
    rows = [[float(celsius(t))] + [float(v[i]) for _, v in shown] for i, t in enumerate(run.T_grid)]
    run.add_table(Table("outlet_composition", f"Equilibrium outlet composition at {P_comp / 1e5:g} bar",
                         cols, rows, html_every=max(1, len(rows) // 12)))
