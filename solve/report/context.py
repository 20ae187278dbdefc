"""What the studies of one run share: the case, the grid, the collected tables, figures,
findings and solver checks, and the bookkeeping of temperatures and warnings.

Each study module (``study_*.py``) is a set of functions taking a :class:`RunContext`;
:func:`eqdesign.solve.report.run.run_case` makes one context and calls them in order.
"""
from __future__ import annotations

import math
import time
import warnings
from typing import Callable

import numpy as np

from ...thermo.species import ExtrapolationWarning
from ..casefile.schema import Case
from ..studies.feeds import FeedRatio
from ..core.result import CondensationWarning, NotConvergedWarning
from ..studies.maps import conversion_map
from .records import Caution, FigureRecord, SolverCheck, Table, UncertaintyRecord

#: Reduced resolution (``coarse=True``): at most this many temperatures in a grid.
COARSE_POINTS = 13

ProgressFactory = Callable[[str], Callable[[int, int], None]]


def api_ratio(fr: FeedRatio):
    """The ratio in the form the sweep and design functions take."""
    if fr.denominator == "carbon":
        return "steam_to_carbon"
    return (fr.numerator, fr.denominator)


def subsample(values: np.ndarray, n: int) -> np.ndarray:
    """At most n values of a grid, keeping both ends."""
    if values.size <= n:
        return values
    idx = np.unique(np.round(np.linspace(0, values.size - 1, n)).astype(int))
    return values[idx]


class Recorder:
    """Collects the temperatures evaluated and the warnings raised during a run."""

    def __init__(self):
        self.T_min = math.inf
        self.T_max = -math.inf
        self.extrapolations: list[str] = []
        self.not_converged: list[str] = []

    def temperatures(self, T) -> None:
        """Widen the range of temperatures evaluated by ``T`` [K] (NaN ignored)."""
        T = np.asarray(T, dtype=float)
        T = T[np.isfinite(T)]
        if T.size:
            self.T_min = min(self.T_min, float(T.min()))
            self.T_max = max(self.T_max, float(T.max()))

    def take(self, caught) -> None:
        """Keep the text of each distinct extrapolation, convergence and condensation warning."""
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


class StudyTimer:
    """Context manager: records the warnings and the elapsed time of one study."""

    def __init__(self, recorder: Recorder, times: dict, name: str, status: Callable[[str], None] | None):
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


class RunContext:
    """The state one run's studies read and fill.

    Attributes filled by the studies: ``tables``, ``figures``, ``findings``, ``checks``,
    ``notes``; and what later studies read from earlier ones: ``map`` and ``ratio_map``
    (conversion map), ``design_points``, ``target_line``, ``target_rows``, ``design_keys``,
    ``temperature_answers`` (targets), ``bands``, ``intervals``, ``uncertainty_record``
    (data uncertainty).
    """

    def __init__(self, case: Case, coarse: bool, progress: ProgressFactory | None,
                 status: Callable[[str], None] | None):
        self.case = case
        self.db = case.database
        self.coarse = coarse
        self.progress = progress
        self.status = status
        self.rec = Recorder()
        self.times: dict = {}
        self.tables: list[Table] = []
        self.figures: list[FigureRecord] = []
        self.findings: list[str] = []
        self.checks: list[SolverCheck] = []
        self.notes: list[str] = []
        self.T_grid = case.temperature.values()
        if coarse:
            self.T_grid = subsample(self.T_grid, COARSE_POINTS)
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
        self.cautions: list[Caution] = []        # case-specific cautions (kind, where, text)

    def study(self, name: str) -> StudyTimer:
        """Time a study and record its warnings: ``with run.study("conversion map"): ...``."""
        return StudyTimer(self.rec, self.times, name, self.status)

    def common(self) -> dict:
        """Keyword arguments every study call shares (reactions, gas model, approach, database)."""
        c = self.case
        return dict(reactions=c.solver_reactions, gas_model=c.gas_model, approach=c.approach or None,
                    database=self.db)

    def callback(self, label: str):
        """A progress callback for one sweep, or None."""
        return self.progress(label) if self.progress else None

    def solve_map(self, label: str, *, T, P, feed_ratio: FeedRatio | None = None, gas_model=None, ratios=None):
        """A conversion map of the case feed over ``T`` [K] × ``P`` [Pa] (× feed ratios),
        with its temperatures recorded and its solver check added."""
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
        self.check_map(label, m)
        return m

    def check_map(self, label: str, m) -> None:
        """Solver diagnostics of a map from the residuals and iteration counts its own
        solves returned (every state carries them)."""
        ok = np.asarray(m.converged).reshape(-1)
        largest = float("nan")
        note = ""
        if ok.any():
            largest = float(np.max(np.asarray(m.max_residual).reshape(-1)[ok]))
            note = f"Newton iterations up to {int(np.max(np.asarray(m.iterations).reshape(-1)[ok]))}"
        self.checks.append(SolverCheck(label, int(ok.size), int(ok.size - ok.sum()), largest, note))
        self.caution_flags(label, m)
        self.caution_carbon(label, m)

    def add_caution(self, kind: str, where: str, text: str) -> None:
        """Add a :class:`Caution` once (the same kind, place and text are not repeated)."""
        c = Caution(kind, where, text)
        if c not in self.cautions:
            self.cautions.append(c)

    def caution_flags(self, label: str, m) -> None:
        """Cautions for converged map points that are not trustworthy: species used outside
        their data range ("extrapolation"), possible condensation ("condensation")."""
        if getattr(m, "trustworthy", None) is None:
            return
        ok = np.asarray(m.converged, dtype=bool).reshape(-1)
        bad = ok & ~np.asarray(m.trustworthy, dtype=bool).reshape(-1)
        if not bad.any():
            return
        flags = np.asarray(m.flags, dtype=object).reshape(-1)[bad]
        T = np.broadcast_to(m.T, m.shape).reshape(-1)[bad]
        span = f"{T.min() - 273.15:.0f}-{T.max() - 273.15:.0f} degC"
        outside = sorted({n.strip() for f in flags for part in str(f).split("; ")
                          if part.startswith("outside data range: ") for n in part[20:].split(",")})
        if outside:
            self.add_caution("extrapolation", label,
                             f"{int(bad.sum())} of {ok.size} points ({span}) use species outside their data range "
                             f"({', '.join(outside)}): those results are extrapolated and not trustworthy "
                             "(trustworthy 0 and the flags column in the CSV).")
        if any("condensation possible" in str(f) for f in flags):
            self.add_caution("condensation", label,
                             f"At some points ({span}) the gas may condense (a liquid-like root of the equation "
                             "of state is more stable): the gas-phase equilibrium does not apply there.")

    def caution_carbon(self, label: str, m) -> None:
        """In restricted-reaction cases with carbon-bearing gases: the largest graphite activity,
        and a "carbon" caution where it exceeds 1 (carbon can form by a route the named
        reactions exclude)."""
        a_C = getattr(m, "carbon_activity", None)
        if a_C is None or not self.case.solver_reactions:
            return
        a = np.asarray(a_C, dtype=float).reshape(-1)
        if not np.isfinite(a).any():
            return
        largest = float(np.nanmax(a))
        T = np.broadcast_to(m.T, m.shape).reshape(-1)
        if largest > 1.0:
            over = np.nan_to_num(a) > 1.0
            self.add_caution("carbon", label,
                             f"Graphite activity up to {largest:.3g} (above 1 at {int(over.sum())} of {a.size} points, "
                             f"{T[over].min() - 273.15:.0f}-{T[over].max() - 273.15:.0f} degC): carbon can form by a "
                             "route the named reactions exclude; the catalyst and the kinetics must suppress it.")
        else:
            text = (f"{label}: the largest graphite activity is {largest:.3g}, below 1: graphite is not stable at "
                    "any point, so the named reactions exclude no carbon route.")
            if text not in self.findings:
                self.findings.append(text)

    def add_table(self, table: Table) -> None:
        self.tables.append(table)

    def table(self, name: str) -> Table:
        return next(t for t in self.tables if t.name == name)

    def add_figure(self, name, title, caption, fig) -> None:
        self.figures.append(FigureRecord(name, title, caption, fig))
