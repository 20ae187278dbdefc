"""The records a run produces: tables, figures, solver checks, the data-uncertainty record,
and the run result that holds them all before anything is written.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..casefile.schema import Case

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
class Caution:
    """A case-specific caution, shown next to the answer it concerns (design basis).

    ``kind`` is one of :data:`CAUTION_KINDS`; ``where`` says where it applies (a study, a
    pressure option, a temperature range), ``text`` is one sentence for the reader.
    """

    kind: str
    where: str
    text: str


#: Kinds of case-specific cautions, in the order a reviewer reads them.
CAUTION_KINDS = ("condensation", "carbon", "extrapolation", "range-end", "not-reachable",
                 "approach", "not-converged", "model")


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
    #: Case-specific cautions (:class:`Caution`), each with where it applies.
    cautions: list = field(default_factory=list)

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