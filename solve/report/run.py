"""Run a validated case: every study, its tables and figures, then the output folder.

    from eqdesign.solve.casefile import load_case
    from eqdesign.solve.report import run_case, write_outputs
    result = run_case(load_case("cases/ammonia_loop_pressure_options.yaml"))
    write_outputs(result, "ammonia_results")

:func:`run_case` computes and draws, writing nothing; :func:`write_outputs` writes the
report, CSV tables, figures and a copy of the case into a new folder.  The folder is built
under a temporary name beside the target and renamed into place only when complete, and
each file in it is written to a temporary file and moved with :func:`os.replace`: an
interrupted run leaves neither a half-written file nor a half-filled folder.  An
existing, non-empty folder is replaced only with ``force=True``.
"""
from __future__ import annotations

import math
import re
import time
import warnings
from dataclasses import dataclass, field
from datetime import datetime, timezone
from typing import Callable

import numpy as np

from ..studies.feeds import FeedRatio

from ...thermo.reactions import Reaction
from ...thermo.species import ExtrapolationWarning
from ..studies.uncertainty import Band
from ..casefile.schema import Case
from ..core.result import CondensationWarning
from ..casefile.schema import LOW_T_MARGIN
from ..core.result import NotConvergedWarning
from ...thermo.data_uncertainty import UncertaintyDefaults
from ..studies.carbon_limit import carbon_limit
from ..studies.maps import conversion_map
from ..studies.inverse import feed_ratio_for_conversion
from ..studies.intervals import feed_ratio_interval
from . import figures as plots
from ..studies.inverse import pressure_for_conversion
from ..studies.intervals import pressure_interval
from ..studies.uncertainty import propagate_equilibrium
from ..studies.beds import staged_converter
from ..studies.inverse import temperature_for_conversion
from ..studies.intervals import temperature_interval


ZERO_CELSIUS = 273.15
#: Reduced resolution (``coarse=True``): at most this many temperatures in a grid.
COARSE_POINTS = 13
#: At most this many temperatures in a data-uncertainty band (the band is smooth; every
#: temperature costs ``samples`` solves per pressure option).
BAND_POINTS = 41
#: Entries of each sensitivity ranking.
RANKING_TOP = 10
#: Data with a smaller share of the variance [-] are left out of a ranking (inert species).
RANKING_MIN_SHARE = 1e-6

ProgressFactory = Callable[[str], Callable[[int, int], None]]


class OutputExistsError(FileExistsError):
    """The output folder exists and is not empty, and ``force`` was not given."""


# ============================================================================ records
@dataclass
class Table:
    """A results table: CSV file ``<name>.csv`` and a table in the report.

    ``columns`` carry their units, e.g. ``"T [degC]"``; ``rows`` hold floats, ints, bools
    or text.  ``html_every`` shows every n-th row in the report (the CSV has them all).
    """

    name: str
    title: str
    columns: list
    rows: list
    note: str = ""
    html_every: int = 1
    in_report: bool = True
    #: Report section that shows the table: "results", or "uncertainty" (the data-uncertainty section).
    section: str = "results"


@dataclass
class FigureRecord:
    """A figure: ``<name>.png`` / ``<name>.svg`` and an embedded image in the report."""

    name: str
    title: str
    caption: str
    figure: object = field(repr=False)


@dataclass
class SolverCheck:
    """Diagnostics of one study's solves."""

    study: str
    points: int
    flagged: int
    largest_residual: float
    note: str = ""


@dataclass
class UncertaintyRecord:
    """What the report states about the propagation of the species-data uncertainty.

    Attributes
    ----------
    method : str
        ``"monte-carlo"`` or ``"linear"``.
    samples : int
        Monte Carlo draws (0 for the linearised method).
    seed : int | None
        Seed of the random draws (None: fresh entropy, not reproducible; linearised: unused).
    level : float
        Coverage probability of the intervals [-].
    data : tuple[UncertainDatum, ...]
        Every uncertain datum of the system with its standard uncertainty and origin.
    intervals : list[dict]
        One entry per temperature answer: ``label``, ``P`` [Pa], ``T``, ``lower``, ``median``,
        ``upper`` [K], ``u`` [K], ``beyond`` (share of draws beyond the search range [-]),
        ``falls`` (conversion falls with temperature through the answer; None if unknown).
    references : list[tuple[str, str]]
        (key, citation) of the key values used.
    classes : list[tuple[str, str]]
        (class, basis) of the class defaults used.
    defaults_origin : str
        The defaults file.
    band_figure : str | None
        Name of the figure carrying the conversion bands.
    untreated : list[str]
        Labels of target questions without an interval (none at present).
    """

    method: str
    samples: int
    seed: int | None
    level: float
    data: tuple
    intervals: list
    references: list
    classes: list
    defaults_origin: str
    band_figure: str | None = None
    untreated: list = field(default_factory=list)

    @property
    def level_text(self) -> str:
        """``"95 %"``."""
        return f"{100 * self.level:.3g} %"

    @property
    def how(self) -> str:
        """``"Monte Carlo, 400 draws, seed 1"`` (``"no fixed seed"``) or ``"linearised"``."""
        if self.method == "monte-carlo":
            return f"Monte Carlo, {self.samples} draws, " + (f"seed {self.seed}" if self.seed is not None else
                                                               "no fixed seed")
        return "linearised"


@dataclass
class RunResult:
    """Everything a run produced, before anything is written."""

    case: Case
    started: str
    elapsed: float
    coarse: bool
    tables: list
    figures: list
    findings: list
    checks: list
    extrapolations: list
    notes: list
    T_used: tuple                   # (lowest, highest) temperature evaluated [K]
    study_times: dict = field(default_factory=dict)
    uncertainty: UncertaintyRecord | None = None

    @property
    def flagged(self) -> int:
        return sum(c.flagged for c in self.checks)

    @property
    def largest_residual(self) -> float:
        vals = [c.largest_residual for c in self.checks if np.isfinite(c.largest_residual)]
        return max(vals) if vals else float("nan")

    def table(self, name: str) -> Table:
        for t in self.tables:
            if t.name == name:
                return t
        raise KeyError(name)


# ============================================================================ helpers
def _c(T):
    return np.asarray(T, dtype=float) - ZERO_CELSIUS


def _bar(P):
    return np.asarray(P, dtype=float) / 1e5


def _pct(x: float) -> str:
    return "n/a" if not np.isfinite(x) else f"{100 * x:.2f} %"


def _fmt_T(T: float) -> str:
    return "n/a" if not np.isfinite(T) else f"{T - ZERO_CELSIUS:.1f} degC ({T:.1f} K)"


def _api_ratio(fr: FeedRatio):
    """The ratio in the form the sweep and design functions take."""
    if fr.denominator == "carbon":
        return "steam_to_carbon"
    return (fr.numerator, fr.denominator)


def _subsample(values: np.ndarray, n: int) -> np.ndarray:
    """At most n values of a grid, keeping both ends."""
    if values.size <= n:
        return values
    idx = np.unique(np.round(np.linspace(0, values.size - 1, n)).astype(int))
    return values[idx]


class _Recorder:
    """Collects the temperatures evaluated and the warnings raised during a study."""

    def __init__(self):
        self.T_min = math.inf
        self.T_max = -math.inf
        self.extrapolations: list[str] = []
        self.not_converged: list[str] = []

    def temperatures(self, T) -> None:
        T = np.asarray(T, dtype=float)
        T = T[np.isfinite(T)]
        if T.size:
            self.T_min = min(self.T_min, float(T.min()))
            self.T_max = max(self.T_max, float(T.max()))

    def take(self, caught) -> None:
        for w in caught:
            text = str(w.message)
            if issubclass(w.category, ExtrapolationWarning):
                if text not in self.extrapolations:
                    self.extrapolations.append(text)
            elif issubclass(w.category, NotConvergedWarning):
                if text not in self.not_converged:
                    self.not_converged.append(text)
            elif issubclass(w.category, CondensationWarning):
                text = "Peng-Robinson gas: " + text
                if text not in self.not_converged:
                    self.not_converged.append(text)


class _Study:
    """Context manager: records warnings and the elapsed time of one study."""

    def __init__(self, recorder: _Recorder, times: dict, name: str, status: Callable[[str], None] | None):
        self.recorder, self.times, self.name, self.status = recorder, times, name, status

    def __enter__(self):
        self.t0 = time.perf_counter()
        self._cm = warnings.catch_warnings(record=True)
        self.caught = self._cm.__enter__()
        warnings.simplefilter("always")
        return self

    def __exit__(self, *exc):
        self._cm.__exit__(*exc)
        self.recorder.take(self.caught)
        self.times[self.name] = self.times.get(self.name, 0.0) + time.perf_counter() - self.t0
        if self.status and exc[0] is None:
            self.status(f"{self.name}: done in {self.times[self.name]:.1f} s")
        return False


# ============================================================================ the run
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
    rec = _Recorder()
    times: dict = {}
    run = _Run(case, coarse, progress, status, rec, times)
    run.equilibrium_constants()
    s = case.studies
    if s.conversion_map:
        run.conversion_map()
    if s.targets:
        run.targets()
    if s.uncertainty:
        run.uncertainty()
    if s.conversion_map:
        run.conversion_figures()
    if s.pressure_options:
        run.pressure_options()
    if s.staged_beds:
        run.staged_beds()
    if s.carbon_limit:
        run.carbon_limit()
    run.provenance_table()
    run.diagnostics_table()
    return RunResult(case=case, started=started, elapsed=time.perf_counter() - t0, coarse=coarse,
                     tables=run.tables, figures=run.figures, findings=run.findings, checks=run.checks,
                     extrapolations=rec.extrapolations, notes=run.notes + rec.not_converged,
                     T_used=(rec.T_min, rec.T_max), study_times=times, uncertainty=run.uncertainty_record)


class _Run:
    def __init__(self, case: Case, coarse, progress, status, rec: _Recorder, times: dict):
        self.case = case
        self.db = case.database
        self.coarse = coarse
        self.progress = progress
        self.status = status
        self.rec = rec
        self.times = times
        self.tables: list[Table] = []
        self.figures: list[FigureRecord] = []
        self.findings: list[str] = []
        self.checks: list[SolverCheck] = []
        self.notes: list[str] = []
        self.T_grid = case.temperature.values()
        if coarse:
            self.T_grid = _subsample(self.T_grid, COARSE_POINTS)
        self.map = None
        self.ratio_map = None
        self.design_points: list = []
        self.target_line = None
        self.target_rows: list = []              # (question index, pressure index or None) per targets row
        self.design_keys: list = []              # (question index, pressure index) per design point
        self.temperature_answers: dict = {}      # question index -> (pressures [Pa], TemperatureAnswer)
        self.bands: list = []                    # Band per pressure option (data uncertainty)
        self.intervals: list = []                # (TemperatureUncertainty, index, colour) per temperature answer
        self.uncertainty_record: UncertaintyRecord | None = None

    # --------------------------------------------------------------- shared
    def study(self, name: str) -> _Study:
        return _Study(self.rec, self.times, name, self.status)

    def common(self) -> dict:
        c = self.case
        return dict(reactions=c.solver_reactions, gas_model=c.gas_model, approach=c.approach or None,
                    database=self.db)

    def callback(self, label: str):
        return self.progress(label) if self.progress else None

    def _map(self, label: str, *, T, P, feed_ratio: FeedRatio | None = None, gas_model=None, ratios=None):
        c = self.case
        kw = self.common()
        if gas_model:
            kw["gas_model"] = gas_model
        T = np.atleast_1d(np.asarray(T, dtype=float))
        P = np.atleast_1d(np.asarray(P, dtype=float))
        if feed_ratio is not None:
            values = np.asarray(ratios if ratios is not None else feed_ratio.values, dtype=float)
            if feed_ratio.denominator == "carbon":
                kw["steam_to_carbon"] = values
            else:
                kw["feed_ratio"] = (feed_ratio.numerator, feed_ratio.denominator, values)
            n_extra = values.size
        else:
            n_extra = 1
        n = T.size * P.size * n_extra
        m = conversion_map(list(c.species), c.feed, T=T, P=P, key=c.key, product=c.product,
                           progress=self.callback(label), chunk=max(50, -(-n // 25)), **kw)
        self.rec.temperatures(m.T_equilibrium)
        self.check_map(label, m, kw)
        return m

    def check_map(self, label: str, m, kw: dict) -> None:
        """Solver diagnostics of a map from the residuals and iteration counts its own
        solves returned (every state carries them)."""
        ok = np.asarray(m.converged).reshape(-1)
        largest = float("nan")
        note = ""
        if ok.any():
            largest = float(np.max(np.asarray(m.max_residual).reshape(-1)[ok]))
            note = f"Newton iterations up to {int(np.max(np.asarray(m.iterations).reshape(-1)[ok]))}"
        self.checks.append(SolverCheck(label, int(ok.size), int(ok.size - ok.sum()), largest, note))

    def add_table(self, table: Table) -> None:
        self.tables.append(table)

    def table(self, name: str) -> Table:
        return next(t for t in self.tables if t.name == name)

    def add_figure(self, name, title, caption, fig) -> None:
        self.figures.append(FigureRecord(name, title, caption, fig))

    # --------------------------------------------------------------- K(T)
    def equilibrium_constants(self) -> None:
        c = self.case
        if not c.reactions:
            return
        with self.study("equilibrium constants"):
            T = np.linspace(c.temperature.low, c.temperature.high, 41 if not self.coarse else 11)
            rxns = [(name, Reaction.parse(text, self.db)) for name, text in c.reactions]
            cols = ["T [degC]", "T [K]", "1000 K/T [-]"]
            data = [_c(T), T, 1000.0 / T]
            series = []
            for name, r in rxns:
                lnK = np.asarray(r.ln_K(T), dtype=float)
                dH = np.asarray(r.delta_h(T), dtype=float) / 1000.0
                series.append((f"{name}: {r.text}", lnK))
                cols += [f"ln K {name} [-]", f"K {name} [-]", f"reaction enthalpy {name} [kJ/mol]"]
                data += [lnK, np.exp(lnK), dH]
            self.rec.temperatures(T)
            rows = [list(row) for row in np.column_stack(data)]
            self.add_table(Table("equilibrium_constants", "Equilibrium constants of the named reactions "
                                 "(dimensionless K, standard state 1 bar)", cols, rows,
                                 html_every=max(1, len(rows) // 10)))
            self.add_figure("ln_k_vs_inverse_temperature", "ln K against 1000/T",
                            "Equilibrium constant of each named reaction from the species data (Gibbs route, "
                            "standard state 1 bar). A falling line (ln K down as T rises) means an exothermic "
                            "reaction.", plots.ln_k_against_inverse_temperature(T, series))

    # --------------------------------------------------------------- conversion map
    def conversion_map(self) -> None:
        c = self.case
        with self.study("conversion map"):
            m = self._map("conversion map", T=self.T_grid, P=np.array(c.pressures))
        self.map = m
        self.add_table(_long_table("conversion_map", "Conversion map: every grid point", m, c))
        conv = np.asarray(m.conversion)
        pcols = ["T [degC]"] + [f"conversion {c.key} at {p / 1e5:g} bar [%]" for p in c.pressures]
        prow = [[float(_c(t))] + [100.0 * float(x) for x in conv[i]] for i, t in enumerate(self.T_grid)]
        note = f"Operating temperature; equilibrium taken with a {c.approach:g} K approach." if c.approach else ""
        self.add_table(Table("conversion_by_temperature", f"Equilibrium conversion of {c.key} by temperature "
                             "and pressure option", pcols, prow, note=note, html_every=max(1, len(prow) // 16)))
        mid = len(self.T_grid) // 2
        txt = ", ".join(f"{100 * conv[mid, j]:.1f} % at {p / 1e5:g} bar" for j, p in enumerate(c.pressures))
        self.findings.append(f"Equilibrium conversion of {c.key} at {self.T_grid[mid] - ZERO_CELSIUS:.0f} degC"
                             f"{' (with the approach margin)' if c.approach else ''}: {txt}.")
        if not m.all_converged:
            self.notes.append(f"conversion map: {m.message}")

        st = c.studies.conversion_map
        if st.feed_ratio is None:
            return
        fr = st.feed_ratio
        ratios = np.asarray(fr.values, dtype=float)
        if self.coarse:
            ratios = _subsample(ratios, 3)
        P_r = st.composition_at or c.pressures[0]
        with self.study("feed-ratio map"):
            mr = self._map("feed-ratio map", T=self.T_grid, P=np.array([P_r]), feed_ratio=fr, ratios=ratios)
        self.ratio_map = (mr, ratios, P_r)
        self.add_table(_long_table("conversion_by_feed_ratio_map", f"Conversion map over {fr.label} at "
                                   f"{P_r / 1e5:g} bar: every grid point", mr, c, ratio=(fr, ratios)))
        conv_r = np.asarray(mr.conversion).reshape(len(self.T_grid), ratios.size)
        rcols = ["T [degC]"] + [f"conversion {c.key} at {fr.label} {r:g} [%]" for r in ratios]
        rrow = [[float(_c(t))] + [100.0 * float(x) for x in conv_r[i]] for i, t in enumerate(self.T_grid)]
        self.add_table(Table("conversion_by_feed_ratio", f"Equilibrium conversion of {c.key} by temperature and "
                             f"{fr.label} at {P_r / 1e5:g} bar", rcols, rrow, note=note,
                             html_every=max(1, len(rrow) // 16)))
        base = fr.current(c.feed, self.db)
        self.findings.append(f"The case feed has {fr.label} {base:.3g}; at {self.T_grid[mid] - ZERO_CELSIUS:.0f} degC "
                             f"and {P_r / 1e5:g} bar the conversion of {c.key} is " + ", ".join(
                                 f"{100 * conv_r[mid, k]:.1f} % at {r:g}" for k, r in enumerate(ratios)) + ".")

    def conversion_figures(self) -> None:
        c = self.case
        m = self.map
        st = c.studies.conversion_map
        conv = np.asarray(m.conversion)
        curves = [(f"{p / 1e5:g} bar", conv[:, j]) for j, p in enumerate(c.pressures)]
        fig = plots.conversion_vs_temperature(self.T_grid, curves, key=c.key, target=self.target_line,
                                              design_points=self.design_points, approach=c.approach,
                                              bands=self.bands, intervals=self.intervals)
        cap = (f"Equilibrium conversion of {c.key} at each pressure option ({c.gas_model} gas"
               + (f", {c.approach:g} K approach margin" if c.approach else "") + ") for the case feed.")
        if self.design_points:
            cap += " Stars mark the answers of the temperature targets (pressure in brackets)."
        u = self.uncertainty_record
        if u is not None and self.bands:
            cap += (f" Hatched grey bands with dashed edges: the {u.level_text} interval of the conversion from the "
                    f"uncertainty of the species data ({u.how}).")
        if u is not None and self.intervals:
            cap += (f" Diamonds with whiskers: each design temperature with its {u.level_text} interval, at the "
                    "target conversion.")
        self.add_figure("conversion_vs_temperature", f"Conversion of {c.key} against temperature", cap, fig)
        if u is not None and self.bands:
            u.band_figure = "conversion_vs_temperature"
        if getattr(self, "ratio_map", None) is not None:
            mr, ratios, P_r = self.ratio_map
            fr = st.feed_ratio
            conv_r = np.asarray(mr.conversion).reshape(len(self.T_grid), ratios.size)
            curves = [(f"{fr.label} {r:g}", conv_r[:, k]) for k, r in enumerate(ratios)]
            fig = plots.conversion_vs_temperature(self.T_grid, curves, key=c.key, approach=c.approach,
                                                  title=f"Conversion of {c.key} against temperature at "
                                                        f"{P_r / 1e5:g} bar, by {fr.label}")
            self.add_figure("conversion_by_feed_ratio", f"Conversion of {c.key} by {fr.label}",
                            f"Equilibrium conversion of {c.key} at {P_r / 1e5:g} bar for each {fr.label} "
                            f"(the case feed has {fr.current(c.feed, self.db):.3g}).", fig)

        # outlet composition at one pressure
        P_comp = st.composition_at or c.pressures[0]
        if P_comp in c.pressures:
            j = c.pressures.index(P_comp)
            y = {k: np.asarray(v)[:, j] for k, v in m.mole_fractions.items()}
        else:
            with self.study("outlet composition"):
                m2 = self._map("outlet composition", T=self.T_grid, P=np.array([P_comp]))
            y = {k: np.asarray(v)[:, 0] for k, v in m2.mole_fractions.items()}
        shown = [(k, v) for k, v in y.items() if np.nanmax(np.nan_to_num(v)) > 0]
        ymax = max(float(np.nanmax(v)) for _, v in shown)
        small = [float(np.nanmin(v[v > 0])) for _, v in shown if np.any(v > 0)]
        log_scale = bool(small) and min(small) < 1e-3 * ymax
        fig = plots.composition_vs_temperature(self.T_grid, shown, pressure=P_comp, log_scale=log_scale)
        self.add_figure("outlet_composition", f"Outlet composition at {P_comp / 1e5:g} bar",
                        f"Equilibrium gas composition leaving the reactor at {P_comp / 1e5:g} bar"
                        + (" (mole fraction on a logarithmic axis)" if log_scale else "") + ".", fig)
        cols = ["T [degC]"] + [f"y {k} [-]" for k, _ in shown]
        rows = [[float(_c(t))] + [float(v[i]) for _, v in shown] for i, t in enumerate(self.T_grid)]
        self.add_table(Table("outlet_composition", f"Equilibrium outlet composition at {P_comp / 1e5:g} bar",
                             cols, rows, html_every=max(1, len(rows) // 12)))

    # --------------------------------------------------------------- targets
    def targets(self) -> None:
        c = self.case
        kw = self.common()
        rows = []
        with self.study("target questions"):
            for qi, q in enumerate(c.studies.targets):
                if q.solve_for == "temperature":
                    Ps = [q.pressure] if q.pressure else list(c.pressures)
                    ans = temperature_for_conversion(list(c.species), c.feed, np.array(Ps), c.key, q.conversion,
                                                     T_range=q.search, **kw)
                    self.temperature_answers[qi] = (Ps, ans)
                    Ts, reached = np.atleast_1d(ans.T), np.atleast_1d(ans.reached)
                    msgs = np.atleast_1d(ans.message)
                    xs = np.atleast_1d(ans.conversion_at_T)
                    best = np.atleast_1d(ans.best_conversion)
                    for i, P in enumerate(Ps):
                        self.target_rows.append((qi, i))
                        rows.append([q.label, "temperature", f"{P / 1e5:g} bar", 100 * q.conversion,
                                     float(_c(Ts[i])) if reached[i] else float("nan"), "degC", bool(reached[i]),
                                     100 * float(best[i]), str(msgs[i])])
                        if reached[i]:
                            self.design_points.append((f"{Ts[i] - ZERO_CELSIUS:.0f} °C ({P / 1e5:g} bar)",
                                                       float(Ts[i]), float(xs[i])))
                            self.design_keys.append((qi, i))
                            self.rec.temperatures(np.atleast_1d(ans.T_equilibrium)[i])
                        head = (f"{q.label} at {P / 1e5:g} bar: {_fmt_T(float(Ts[i]))}. " if reached[i] else
                                f"{q.label} at {P / 1e5:g} bar: not reached. ")
                        self.findings.append(head + str(msgs[i]) + ".")
                    self.target_line = q.conversion if self.target_line is None else self.target_line
                elif q.solve_for == "pressure":
                    ans = pressure_for_conversion(list(c.species), c.feed, q.temperature, c.key, q.conversion,
                                                  P_range=q.search, **kw)
                    reached = bool(ans.reached)
                    self.rec.temperatures([q.temperature])
                    self.target_rows.append((qi, None))
                    rows.append([q.label, "pressure", f"{q.temperature - ZERO_CELSIUS:g} degC", 100 * q.conversion,
                                 float(ans.P) / 1e5 if reached else float("nan"), "bar", reached,
                                 100 * float(ans.best_conversion), str(ans.message)])
                    head = f"{q.label}: {float(ans.P) / 1e5:.4g} bar. " if reached else f"{q.label}: not reached. "
                    self.findings.append(head + f"{ans.message}.")
                else:
                    P = q.pressure or c.pressures[0]
                    lo, hi = q.search
                    ans = feed_ratio_for_conversion(list(c.species), c.feed, q.temperature, P, c.key, q.conversion,
                                                    ratio=_api_ratio(q.feed_ratio), ratio_range=(lo, hi), **kw)
                    reached = bool(ans.reached)
                    self.rec.temperatures([q.temperature])
                    self.target_rows.append((qi, None))
                    rows.append([q.label, q.feed_ratio.label,
                                 f"{q.temperature - ZERO_CELSIUS:g} degC, {P / 1e5:g} bar", 100 * q.conversion,
                                 float(ans.ratio) if reached else float("nan"), "mol/mol", reached,
                                 100 * float(ans.best_conversion), str(ans.message)])
                    head = (f"{q.label}: {q.feed_ratio.label} {float(ans.ratio):.4g}. " if reached else
                            f"{q.label}: not reached. ")
                    self.findings.append(head + f"{ans.message}.")
        cols = ["question", "solve for", "fixed condition", f"target conversion {c.key} [%]", "answer [value]",
                "answer unit", "reached [-]", "best conversion in range [%]", "message"]
        self.add_table(Table("targets", "Target questions", cols, rows,
                             note="The answer is the operating value; with an approach margin the equilibrium "
                                  "is taken that many kelvin on the side that lowers conversion."))

    # --------------------------------------------------------------- data uncertainty
    def uncertainty(self) -> None:
        """Propagate the uncertainty of the species data (ΔfH°, S°) to the conversion map
        (one batched call over temperature × pressure option) and to every temperature
        target (one call per question, all its pressures together); add the interval
        columns to the targets table, the band and ranking tables, and the record the
        report states."""
        c = self.case
        st = c.studies.uncertainty
        kw = st.as_kwargs()
        defaults = kw.get("defaults") or UncertaintyDefaults.bundled()
        common = dict(reactions=c.solver_reactions, gas_model=c.gas_model, approach=c.approach or None,
                      database=self.db)
        species = list(c.species)
        band = None
        answers: dict = {}
        with self.study("data uncertainty"):
            if self.map is not None:
                T_b = _subsample(self.T_grid, BAND_POINTS)
                TT, PP = np.meshgrid(T_b, np.array(c.pressures), indexing="ij")
                band = propagate_equilibrium(species, c.feed, TT, PP, key=c.key, **common, **kw)
                self.rec.temperatures(band.T_equilibrium)
            for qi, q in enumerate(c.studies.targets):
                if q.solve_for != "temperature":
                    continue
                Ps = [q.pressure] if q.pressure else list(c.pressures)
                ti = temperature_interval(species, c.feed, np.array(Ps), c.key, q.conversion, T_range=q.search,
                                          **common, **kw)
                answers[qi] = (Ps, ti)
                self._record_interval_temperatures(qi, ti)
            p_answers = {qi: pressure_interval(species, c.feed, q.temperature, c.key, q.conversion,
                                               P_range=q.search, **common, **kw)
                         for qi, q in enumerate(c.studies.targets) if q.solve_for == "pressure"}
            r_answers = {qi: feed_ratio_interval(species, c.feed, q.temperature, q.pressure or c.pressures[0],
                                                 c.key, q.conversion, ratio=_api_ratio(q.feed_ratio),
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
            intervals=[], references=_cited_references(first.data, defaults),
            classes=_classes_used(first.data, defaults), defaults_origin=defaults.origin,
            untreated=[])
        self.uncertainty_record = record
        lo_txt, hi_txt = f"lower {record.level_text}", f"upper {record.level_text}"
        if band is not None:
            self._band_tables(band, record, lo_txt, hi_txt)
            self.bands = [Band(x=np.asarray(band.T, dtype=float)[:, j], nominal=self._q(band.nominal)[:, j],
                               lower=self._q(band.lower)[:, j], median=self._q(band.median)[:, j],
                               upper=self._q(band.upper)[:, j], level=band.level, quantity=f"conversion {c.key}",
                               unit="-", x_label="temperature [K]", method=band.method, samples=band.samples)
                          for j in range(len(c.pressures))]
        if answers:
            self._interval_tables(answers, record, lo_txt, hi_txt)
        if p_answers:
            self._answer_interval_columns(p_answers, record, lo_txt, hi_txt, "P", "bar", 1e5, "u(ln P)")
        if r_answers:
            self._answer_interval_columns(r_answers, record, lo_txt, hi_txt, "ratio", "mol/mol", 1.0,
                                          "u(ln ratio)")
        self._ranking_tables(band, answers, record)
        rows = [[d.label, d.species, d.u, d.unit, d.origin] for d in record.data]
        self.add_table(Table("uncertainty_data", "Standard uncertainties of the species data used",
                             ["datum", "species", "u [unit of u]", "unit of u", "source of u"], rows,
                             note="One standard deviation (GUM). Data of elements in their reference state have "
                                  "ΔfH° = 0 exactly.", section="uncertainty"))

    def _q(self, values: dict) -> np.ndarray:
        return np.asarray(values[f"conversion {self.case.key}"], dtype=float)

    def _record_interval_temperatures(self, qi: int, ti) -> None:
        """Temperatures the interval search evaluated (for the data-provenance note)."""
        Ps, ans = self.temperature_answers.get(qi, (None, None))
        side = 0.0
        if ans is not None and ti.approach:
            d = np.asarray(ans.T_equilibrium, dtype=float) - np.asarray(ans.T, dtype=float)
            d = d[np.isfinite(d)]
            side = float(np.sign(d[0])) if d.size else 0.0
        T = np.asarray(ti.sample_T if ti.sample_T is not None else [ti.lower, ti.upper], dtype=float)
        self.rec.temperatures(T[np.isfinite(T)] + side * (ti.approach or 0.0))

    def _band_tables(self, band, record: UncertaintyRecord, lo_txt: str, hi_txt: str) -> None:
        c = self.case
        q = f"conversion {c.key}"
        T = np.asarray(band.T, dtype=float)
        nom, lo, md, hi = (100.0 * self._q(d) for d in (band.nominal, band.lower, band.median, band.upper))
        u = 100.0 * self._q(band.standard_uncertainty)
        failed = np.asarray(band.n_failed, dtype=float)
        T_eq = np.asarray(band.T_equilibrium, dtype=float)
        rows = []
        for i in range(T.shape[0]):
            for j, p in enumerate(c.pressures):
                row = [float(_c(T[i, j])), float(T[i, j]), p / 1e5]
                if c.approach:
                    row.append(float(_c(T_eq[i, j])))
                row += [nom[i, j], lo[i, j], md[i, j], hi[i, j], u[i, j], int(failed[i, j])]
                rows.append(row)
        cols = ["T [degC]", "T [K]", "P [bar]"] + (["T equilibrium [degC]"] if c.approach else []) + \
            [f"{q} [%]", f"{q} {lo_txt} [%]", f"{q} median [%]", f"{q} {hi_txt} [%]", f"u({q}) [% points]",
             "draws failed [-]"]
        self.add_table(Table("conversion_band", f"Equilibrium conversion of {c.key} with its {record.level_text} "
                             "interval from the species data: every point", cols, rows, in_report=False,
                             section="uncertainty", note="Long format, one row per temperature and pressure option."))
        wide_cols = ["T [degC]"]
        for p in c.pressures:
            wide_cols += [f"{p / 1e5:g} bar [%]", f"{p / 1e5:g} bar {lo_txt} [%]", f"{p / 1e5:g} bar {hi_txt} [%]"]
        wide = []
        for i in range(T.shape[0]):
            row = [float(_c(T[i, 0]))]
            for j in range(len(c.pressures)):
                row += [nom[i, j], lo[i, j], hi[i, j]]
            wide.append(row)
        self.add_table(Table("conversion_band_by_temperature", f"Equilibrium conversion of {c.key} with its "
                             f"{record.level_text} interval, by temperature and pressure option", wide_cols, wide,
                             html_every=max(1, len(wide) // 10), section="uncertainty",
                             note=(f"Operating temperature; equilibrium taken with a {c.approach:g} K approach. "
                                   if c.approach else "") + f"{record.how}."))
        half = 0.5 * (hi - lo)
        if np.isfinite(half).any():
            k = np.unravel_index(np.nanargmax(half), half.shape)
            self.findings.append(
                f"Data uncertainty ({record.how}): the widest {record.level_text} interval of the equilibrium "
                f"conversion of {c.key} over the map is {lo[k]:.1f}-{hi[k]:.1f} % around {nom[k]:.1f} % "
                f"({_c(T[k]):.0f} degC, {c.pressures[k[1]] / 1e5:g} bar).")
        n_failed = int(failed.sum())
        self.checks.append(SolverCheck(
            "data uncertainty: conversion band", int(failed.size * max(band.samples, 1)), n_failed, float("nan"),
            (f"{band.samples} draws at each of {failed.size} states in one batched call" if band.samples else
             f"linearised at {failed.size} states") + "; sensitivities by central differences in each g°"
            + (f"; {n_failed} draw-state(s) did not converge and are left out of the percentiles" if n_failed
               else "")))

    def _interval_tables(self, answers: dict, record: UncertaintyRecord, lo_txt: str, hi_txt: str) -> None:
        c = self.case
        targets = self.table("targets")
        at = targets.columns.index("answer unit") + 1
        new_cols = [f"T {lo_txt} [degC]", f"T {hi_txt} [degC]", "u(T) [K]", "draws beyond search range [%]"]
        targets.columns[at:at] = new_cols
        for row, (qi, i) in zip(targets.rows, self.target_rows):
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
            ans = self.temperature_answers.get(qi, (None, None))[1]
            flat = {k: np.asarray(getattr(ti, k), dtype=float).reshape(-1)
                    for k in ("T", "lower", "median", "upper", "standard_uncertainty", "beyond_range", "n_failed")}
            for i, P in enumerate(Ps):
                T, lo, hi = flat["T"][i], flat["lower"][i], flat["upper"][i]
                falls = _falls_with_temperature(ans, i)
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
                    self.intervals.append((ti, i, plots.series_style(j)["color"] if j is not None else "black"))
                    if (qi, i) in self.design_keys:       # the label of the design point gains the interval
                        k = self.design_keys.index((qi, i))
                        label, T_pt, x_pt = self.design_points[k]
                        ends = [f"{v - ZERO_CELSIUS:.0f}" if np.isfinite(v) else "beyond" if np.isinf(v) else "?"
                                for v in (lo, hi)]
                        self.design_points[k] = (f"{label}\n{ends[0]}-{ends[1]} °C", T_pt, x_pt)
            parts = []
            for e in record.intervals[-len(Ps):]:
                parts.append(f"at {e['P'] / 1e5:g} bar {_fmt_interval(e)}" if np.isfinite(e["T"]) else
                             f"at {e['P'] / 1e5:g} bar not reached")
            top = _ranked(ti.ranking())[:2]
            lead = "; ".join(f"{e.datum.label} carries {100 * e.share:.0f} % of the variance" for e in top)
            self.findings.append(f"Data uncertainty ({record.how}), {q.label}: " + ", ".join(parts)
                                 + (f". {lead}." if lead else "."))
            n_failed = int(np.nansum(flat["n_failed"]))
            self.checks.append(SolverCheck(
                f"data uncertainty: {q.label}", len(Ps) * max(ti.samples, 1), n_failed, float("nan"),
                ("each draw's temperature by bracketed regula falsi, all draws together" if ti.samples else
                 "linearised by implicit differentiation") + " (root tolerance 1e-7 K)"
                + (f"; {n_failed} draw(s) failed and are left out" if n_failed else "")))
        self.add_table(Table(
            "temperature_intervals", f"Design temperatures with their {record.level_text} intervals from the "
            "species data", ["question", "P [bar]", "T [degC]", f"T {lo_txt} [degC]", "T median [degC]",
                             f"T {hi_txt} [degC]", "u(T) [K]", "conservative end [degC]", "margin from the data [K]",
                             "draws beyond search range [%]", "draws failed [-]"], rows, section="uncertainty",
            note="Conservative end: the end of the interval on the side where the target is still met for "
                 "(nearly) every draw - the lower end where conversion falls with temperature, the upper end "
                 "where it rises. Margin from the data: its distance from the nominal answer. T here is the "
                 "nominal answer refined to 1e-7 K; it differs from the targets table by less than 0.01 K."))

    def _answer_interval_columns(self, found: dict, record: UncertaintyRecord, lo_txt: str, hi_txt: str,
                                 symbol: str, unit: str, scale: float, spread_label: str) -> None:
        """Interval columns of pressure or feed-ratio answers in the targets table, and one
        finding each (``found``: question index -> Pressure/FeedRatioUncertainty)."""
        c = self.case
        targets = self.table("targets")
        at = targets.columns.index("reached [-]")
        new_cols = [f"{symbol} {lo_txt} [{unit}]", f"{symbol} {hi_txt} [{unit}]", f"{spread_label} [-]"]
        targets.columns[at:at] = new_cols
        for row, (qi, i) in zip(targets.rows, self.target_rows):
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
            top = _ranked(a.ranking())[:1]
            lead = "; ".join(f"{e.datum.label} carries {100 * e.share:.0f} % of the variance" for e in top)
            self.findings.append(f"Data uncertainty ({record.how}), {q.label}: {value / scale:.4g} {unit} "
                                 f"({ends[0]} to {ends[1]}, {spread_label} {float(a.relative_uncertainty):.3f})"
                                 + (f". {lead}." if lead else "."))

    def _ranking_tables(self, band, answers: dict, record: UncertaintyRecord) -> None:
        c = self.case
        cols_tail = ["sensitivity [{a} per unit of u]", "contribution [{a}]", "share of variance [%]"]
        head = ["rank [-]", "datum", "species", "u [unit of u]", "unit of u", "source of u"]
        if answers:
            rows = []
            for qi, (Ps, ti) in answers.items():
                for e in _ranked(ti.ranking()):
                    d = e.datum
                    rows.append([c.studies.targets[qi].label, e.rank, d.label, d.species, d.u, d.unit, d.origin,
                                 e.sensitivity, e.contribution, 100.0 * e.share])
            self.add_table(Table("uncertainty_ranking_temperature", "Which data move the design temperatures most",
                                 ["question"] + head + [t.format(a="K") for t in cols_tail], rows,
                                 section="uncertainty",
                                 note="First-order sensitivity coefficients (implicit differentiation, central "
                                      "differences) times the standard uncertainties, averaged over the pressure "
                                      "options of each question; contribution: the u(T) from that datum alone. "
                                      + _RANKING_NOTE))
        if band is not None:
            rows = []
            for e in _ranked(band.ranking(f"conversion {c.key}")):
                d = e.datum
                rows.append([e.rank, d.label, d.species, d.u, d.unit, d.origin, 100.0 * e.sensitivity,
                             100.0 * e.contribution, 100.0 * e.share])
            self.add_table(Table("uncertainty_ranking_conversion", f"Which data move the conversion of {c.key} most",
                                 head + [t.format(a="% points") for t in cols_tail], rows, section="uncertainty",
                                 note="Shares averaged over every temperature and pressure option of the band "
                                      "(first-order sensitivity coefficients). " + _RANKING_NOTE))

    # --------------------------------------------------------------- pressure options
    def pressure_options(self) -> None:
        c = self.case
        st = c.studies.pressure_options
        T = np.array(st.temperatures)
        P = np.array(c.pressures)
        rows, series = [], []
        key_flow = None
        if c.feed_flow:
            key_flow = c.feed_flow * c.feed[c.key]       # mol/s of key
        for model in st.gas_models:
            with self.study(f"pressure options ({model})"):
                m = self._map(f"pressure options, {model} gas", T=T, P=P, gas_model=model)
            conv = np.asarray(m.conversion)
            for i, t in enumerate(T):
                series.append((f"{model} gas, {t - ZERO_CELSIUS:g} degC", conv[i]))
                for j, p in enumerate(P):
                    row = [model, float(_c(t)), float(p / 1e5), 100 * float(conv[i, j])]
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
        self.add_table(Table("pressure_options", "Pressure options compared", cols, rows, note=note))
        self.add_figure("pressure_options", "Pressure options", "Equilibrium conversion at each pressure option"
                        + (", ideal gas against Peng-Robinson" if len(st.gas_models) > 1 else "")
                        + (f"; {c.approach:g} K approach margin" if c.approach else "") + ".",
                        plots.pressure_option_comparison(P, series, key=c.key))
        if len(st.gas_models) > 1:
            by = {(r[0], r[1], r[2]): r[3] for r in rows}
            diffs = [by[(st.gas_models[1], t, p)] - by[(st.gas_models[0], t, p)]
                     for (_, t, p) in by if (st.gas_models[1], t, p) in by and (st.gas_models[0], t, p) in by]
            if diffs:
                worst = max(diffs, key=abs)
                self.findings.append(f"Gas model matters by up to {worst:+.2f} percentage points of conversion "
                                     f"({st.gas_models[1]} against {st.gas_models[0]}) over the pressure options.")

    # --------------------------------------------------------------- staged beds
    def staged_beds(self) -> None:
        c = self.case
        st = c.studies.staged_beds
        kw = self.common()
        kw["approach"] = c.approach
        inlet = st.inlet_temperature if len(st.inlet_temperatures) == 1 else list(st.inlet_temperatures)
        with self.study("staged beds"):
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
        self.add_table(Table("staged_beds", "Staged adiabatic beds with interstage cooling", cols, rows,
                             note=res.message))
        d = res.diagram
        for b in res.beds:
            self.rec.temperatures([b.inlet_T, b.outlet_T])
        if d.bed_lines:
            fig = plots.conversion_temperature_diagram(d.equilibrium_curves, d.bed_lines, d.cooling_lines,
                                                       key=c.key, target=st.target)
            self.add_figure("conversion_temperature_diagram", "Conversion-temperature diagram",
                            f"Equilibrium conversion of {c.key} at {st.pressure / 1e5:g} bar (black) and each "
                            "bed's adiabatic operating line; dotted grey lines are interstage cooling"
                            + (" (and removal of " + ", ".join(sorted({n for v in st.removal.values() for n in v}))
                               + ")" if st.removal else "") + ".", fig)
        self.findings.append(f"Staged beds at {st.pressure / 1e5:g} bar: {res.message}"
                             + (f" Hottest bed outlet {max(b.outlet_T for b in res.beds) - ZERO_CELSIUS:.0f} degC."
                                if res.beds else ""))
        flagged = 1 if "did not converge" in res.message else 0
        its = max((b.iterations for b in res.beds), default=0)
        self.checks.append(SolverCheck("staged beds", len(res.beds), flagged, float("nan"),
                                       f"adiabatic energy balance per bed (relative tolerance 1e-10); up to {its} "
                                       "equilibrium evaluations per bed"))
        self.notes.append("staged beds: " + res.caution)

    # --------------------------------------------------------------- carbon limit
    def carbon_limit(self) -> None:
        c = self.case
        st = c.studies.carbon_limit
        T = st.temperature.values()
        ratios = np.asarray(st.feed_ratio.values, dtype=float)
        if self.coarse:
            T = _subsample(T, COARSE_POINTS)
            ratios = _subsample(ratios, 7)
        spec = _api_ratio(st.feed_ratio)
        kw = dict(T=T, P=st.pressure, gas_model=c.gas_model, database=self.db,
                  ratio_range=(max(min(ratios) / 4, 0.01), max(ratios) * 4))
        if spec == "steam_to_carbon":
            kw["steam_to_carbon"] = ratios
        else:
            kw["feed_ratio"] = (spec[0], spec[1], ratios)
        feed = {k: v for k, v in c.feed.items()}
        species = [s for s in c.species if self.db[s].is_gas]
        with self.study("carbon limit"):
            lim = carbon_limit(species, feed, **kw)
        self.rec.temperatures(T)
        a = np.asarray(lim.carbon_activity)
        stable = np.asarray(lim.graphite_stable)
        crit = np.asarray(lim.critical_ratio)
        status = np.asarray(lim.status)
        rows = []
        for i, t in enumerate(T):
            for k, r in enumerate(ratios):
                rows.append([float(_c(t)), float(r), float(a[i, k]), bool(stable[i, k])])
        label = st.feed_ratio.label
        self.add_table(Table("carbon_limit_map", f"Graphite activity over temperature and {label} at "
                             f"{st.pressure / 1e5:g} bar", ["T [degC]", f"{label} [mol/mol]", "graphite activity [-]",
                                                           "carbon forms [-]"], rows, in_report=False))
        brow = [[float(_c(t)), float(crit[i]), str(status[i])] for i, t in enumerate(T)]
        self.add_table(Table("carbon_limit", f"Carbon limit: lowest {label} free of graphite at "
                             f"{st.pressure / 1e5:g} bar", ["T [degC]", f"critical {label} [mol/mol]", "status"],
                             brow, note="Graphite is thermodynamically stable below the critical ratio (gas at "
                                        "equilibrium without carbon, graphite activity above 1). 'carbon-free': "
                                        "no carbon even at the low end of the search range; 'carbon': carbon "
                                        "even at the high end.", html_every=max(1, len(brow) // 14)))
        edge = np.where(status == "carbon", np.inf, np.where(status == "carbon-free", -np.inf, crit))
        fig = plots.carbon_limit_map(T, ratios, stable, ratio_label=label, boundary=edge.astype(float),
                                     pressure=st.pressure)
        self.add_figure("carbon_limit", "Carbon limit map", f"Where graphite is thermodynamically stable (hatched) "
                        f"over temperature and {label} at {st.pressure / 1e5:g} bar; the line is the critical "
                        "ratio. Catalyst-specific limits (whisker carbon, gum) differ and are not shown.", fig)
        finite = np.isfinite(crit)
        if finite.any():
            worst = int(np.nanargmax(np.where(finite, crit, -np.inf)))
            self.findings.append(f"Carbon limit at {st.pressure / 1e5:g} bar: graphite is stable below {label} "
                                 f"{crit[worst]:.3g} at {T[worst] - ZERO_CELSIUS:.0f} degC, the most demanding "
                                 f"temperature of the range studied.")
        n_bad = int(np.count_nonzero(status == "failed"))
        self.checks.append(SolverCheck("carbon limit", int(T.size), n_bad, float("nan"), lim.message))

    # --------------------------------------------------------------- provenance and diagnostics
    def provenance_table(self) -> None:
        c = self.case
        lo, hi = self.rec.T_min, self.rec.T_max
        rows = []
        records = c.records()
        if c.studies.carbon_limit and "C(gr)" in self.db and all(sp.name != "C(gr)" for sp in records):
            records.append(self.db["C(gr)"])
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
        self.add_table(Table("data_provenance", "Data provenance of every species used",
                             ["species", "name", "phase", "data source", "note", "valid from [K]", "valid to [K]",
                              "extrapolated"], rows,
                             note=(f"Temperatures evaluated in this run: {lo:.1f}-{hi:.1f} K."
                                   if np.isfinite(lo) else "")))

    def diagnostics_table(self) -> None:
        rows = [[ch.study, ch.points, ch.flagged, ch.largest_residual, ch.note] for ch in self.checks]
        self.add_table(Table("solver_diagnostics", "Solver diagnostics",
                             ["study", "points [-]", "points flagged [-]", "largest residual [-]", "note"], rows,
                             note="A flagged point did not converge; its results are blank (NaN), never "
                                  "guessed."))


_RANKING_NOTE = (f"At most {RANKING_TOP} entries; data known exactly (ΔfH° of elements) and data with a share "
                 f"below {100 * RANKING_MIN_SHARE:g} % (for example those of inert species) are not listed.")


def _ranked(ranking) -> list:
    """The leading entries of a sensitivity ranking, negligible shares left out."""
    return [e for e in ranking if e.share >= RANKING_MIN_SHARE][:RANKING_TOP]


def _falls_with_temperature(ans, i: int) -> bool | None:
    """Whether conversion falls with temperature through the i-th answer of a
    :class:`eqdesign.solve.studies.inverse.TemperatureAnswer` (None when unknown)."""
    if ans is None:
        return None
    crossings = np.asarray(ans.crossings, dtype=object).reshape(-1)
    if i >= crossings.size or not crossings[i]:
        return None
    T_eq = float(np.asarray(ans.T_equilibrium, dtype=float).reshape(-1)[i])
    if not np.isfinite(T_eq):
        return None
    nearest = min(crossings[i], key=lambda cr: abs(cr.value - T_eq))
    return not nearest.rising


def _fmt_interval(e: dict) -> str:
    """``"454.8 degC (445.7 to 464.2 degC, u(T) 5.1 K)"``; interval ends beyond the search
    range are said so, and an answer at the end of the range has no interval."""
    if np.isnan(e["lower"]) and np.isnan(e["upper"]):
        return (f"{e['T'] - ZERO_CELSIUS:.1f} degC (the end of the search range: the target is met over all of "
                "it, so the data fix no interval)")

    def end(x):
        return (f"{x - ZERO_CELSIUS:.1f} degC" if np.isfinite(x) else
                "beyond the search range" if x > 0 else "below the search range")
    u = f", u(T) {e['u']:.1f} K" if np.isfinite(e["u"]) else ""
    return f"{e['T'] - ZERO_CELSIUS:.1f} degC ({end(e['lower'])} to {end(e['upper'])}{u})"


def _cited_references(data, defaults) -> list:
    """(key, citation) of the defaults' references behind the key values used."""
    out = []
    for d in data:
        if not d.origin.startswith("key value "):
            continue
        key = d.origin.split()[-1]
        ref = defaults.references.get(key)
        if isinstance(ref, dict) and key not in [k for k, _ in out]:
            cite = re.sub(r",?\s*https?://\S+", "", str(ref.get("cite", key))).strip()
            out.append((key, cite))
    return out


def _classes_used(data, defaults) -> list:
    """(class, basis) of the class defaults used."""
    out = []
    for d in data:
        if not d.origin.startswith("class: "):
            continue
        name = d.origin[len("class: "):]
        basis = next((c["basis"] for c in defaults.classes if c["class"] == name), "")
        basis = re.sub(r"\s+", " ", re.sub(r"https?://\S+", "", basis)).strip()
        if name not in [n for n, _ in out]:
            out.append((name, basis))
    return out


def _unit_header(key: str) -> str:
    """Column header with a unit in brackets (pass through headers that have one)."""
    return key if "[" in key else f"{key} [-]"


def _long_table(name: str, title: str, m, case: Case, ratio=None) -> Table:
    """A conversion map in long format: one row per grid point, units in the headers."""
    shape = m.shape
    T = np.broadcast_to(m.T, shape).reshape(-1)
    P = np.broadcast_to(m.P, shape).reshape(-1)
    cols = ["T [degC]", "T [K]", "P [bar]"]
    data = [_c(T), T, _bar(P)]
    if ratio is not None:
        fr, values = ratio
        cols.append(f"{fr.label} [mol/mol]")
        data.append(np.broadcast_to(values.reshape((1,) * (len(shape) - 1) + (-1,)), shape).reshape(-1))
    if m.approach:
        cols.append("T equilibrium [degC]")
        data.append(_c(np.asarray(m.T_equilibrium).reshape(-1)))
    cols.append(f"conversion {case.key} [-]")
    data.append(np.asarray(m.conversion).reshape(-1))
    if m.product_yield is not None:
        cols.append(f"yield {m.product} [mol/mol {case.key} fed]")
        data.append(np.asarray(m.product_yield).reshape(-1))
    for sp, y in m.mole_fractions.items():
        cols.append(f"y {sp} [-]")
        data.append(np.asarray(y).reshape(-1))
    cols.append(f"reaction enthalpy [kJ/mol {case.key} converted]")
    data.append(np.asarray(m.reaction_enthalpy).reshape(-1) / 1000.0)
    if m.carbon_activity is not None:
        cols.append("graphite activity [-]")
        data.append(np.asarray(m.carbon_activity).reshape(-1))
    cols.append("converged [-]")
    data.append(np.asarray(m.converged).reshape(-1).astype(int))
    rows = [list(r) for r in zip(*[np.asarray(d).tolist() for d in data])]
    return Table(name, title, cols, rows, in_report=False,
                 note="Long format, one row per grid point.")
