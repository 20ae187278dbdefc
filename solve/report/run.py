"""Run a validated case: every study, its tables and figures, written nowhere.

    from eqdesign.solve.casefile import load_case
    from eqdesign.solve.report import run_case, write_outputs
    result = run_case(load_case("cases/ammonia_loop_pressure_options.yaml"))
    write_outputs(result, "ammonia_results")

:func:`run_case` computes and draws, writing nothing; the studies live in ``study_*.py``
and share a :class:`~eqdesign.solve.report.context.RunContext`.
:func:`eqdesign.solve.report.output.write_outputs` writes the report, CSV tables,
figures and a copy of the case into a new output folder.
"""
from __future__ import annotations

import time
from datetime import datetime, timezone
from typing import Callable

import numpy as np

from ..casefile.schema import LOW_T_MARGIN, Case
from .context import ProgressFactory, RunContext
from .records import RunResult, Table
from .study_maps import add_conversion_figures, run_conversion_map, run_equilibrium_constants
from .study_plant import run_carbon_limit, run_pressure_options, run_staged_beds
from .study_targets import run_targets
from .study_uncertainty import run_uncertainty


def run_case(case: Case, *, coarse: bool = False, progress: ProgressFactory | None = None,
             status: Callable[[str], None] | None = None) -> RunResult:
    """Run every study of a validated case; compute tables and figures, write nothing.

    Parameters
    ----------
    case : Case
        From :func:`eqdesign.solve.casefile.load_case`.
    coarse : bool
        Reduced resolution for a quick look (at most 13 temperatures per grid, fewer
        ratios); the report says so.
    progress : callable(label) -> callable(done, total), optional
        Makes a progress callback for each sweep (the command line draws a bar).
    status : callable(text), optional
        Receives one line per finished study.

    Returns
    -------
    RunResult
    """
    started = datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M:%S UTC")
    t0 = time.perf_counter()
    run = RunContext(case, coarse, progress, status)
    run_equilibrium_constants(run)
    s = case.studies
    if s.conversion_map:
        run_conversion_map(run)
    if s.targets:
        run_targets(run)
    if s.uncertainty:
        run_uncertainty(run)
    if s.conversion_map:
        add_conversion_figures(run)
    if s.pressure_options:
        run_pressure_options(run)
    if s.staged_beds:
        run_staged_beds(run)
    if s.carbon_limit:
        run_carbon_limit(run)
    add_provenance_table(run)
    add_diagnostics_table(run)
    rec = run.rec
    return RunResult(case=case, started=started, elapsed=time.perf_counter() - t0, coarse=coarse,
                     tables=run.tables, figures=run.figures, findings=run.findings, checks=run.checks,
                     extrapolations=rec.extrapolations, notes=run.notes + rec.not_converged,
                     T_used=(rec.T_min, rec.T_max), study_times=run.times, uncertainty=run.uncertainty_record,
                     cautions=run.cautions)


def add_provenance_table(run: RunContext) -> None:
    """The data provenance of every species used, with the temperatures evaluated beyond its range."""
    c = run.case
    lo, hi = run.rec.T_min, run.rec.T_max
    rows = []
    records = c.records()
    if c.studies.carbon_limit and "C(gr)" in run.db and all(sp.name != "C(gr)" for sp in records):
        records.append(run.db["C(gr)"])
    for sp in records:
        ext = []
        if np.isfinite(lo) and lo < sp.T_min - LOW_T_MARGIN:
            ext.append(f"below {sp.T_min:g} K")
        if np.isfinite(hi) and hi > sp.T_max:
            ext.append(f"above {sp.T_max:g} K")
        supplied = next((u for u in c.user_species if u.name == sp.name), None)
        rows.append([sp.name, sp.common_name or sp.formula, sp.phase,
                     (supplied.source + " (supplied in the case file)") if supplied else sp.reference,
                     sp.data_note, sp.T_min, sp.T_max, "; ".join(ext) or "no"])
    run.add_table(Table("data_provenance", "Data provenance of every species used",
                        ["species", "name", "phase", "data source", "note", "valid from [K]", "valid to [K]",
                         "extrapolated"], rows,
                        note=(f"Temperatures evaluated in this run: {lo:.1f}-{hi:.1f} K."
                              if np.isfinite(lo) else "")))


def add_diagnostics_table(run: RunContext) -> None:
    """One row per solver check of the run."""
    rows = [[ch.study, ch.points, ch.flagged, ch.largest_residual, ch.note] for ch in run.checks]
    run.add_table(Table("solver_diagnostics", "Solver diagnostics",
                        ["study", "points [-]", "points flagged [-]", "largest residual [-]", "note"], rows,
                        note="A flagged point did not converge; its results are blank (NaN), never "
                             "guessed."))
