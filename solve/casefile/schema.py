"""The records a checked case file becomes: frozen, SI floats inside.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ...thermo.data_uncertainty import DATUM_KINDS
from ...thermo.database import SpeciesDatabase
from ...thermo.species import Species
from ..studies.feeds import FeedRatio
from ..studies.uncertainty import SETTINGS_KEYS, UncertaintySettings


LAYOUT_ID = "eqdesign-case/1"
GAS_MODELS = ("ideal", "peng-robinson")
PLOT_FORMATS = ("png", "svg")
SOLVE_FOR = ("temperature", "pressure", "feed_ratio")
#: Margin [K] below a species' lowest data temperature that is not called extrapolation
#: (NASA fits that start at 300 K are used at 298.15 K by construction).
LOW_T_MARGIN = 2.0
MAX_POINTS = 2001

TOP_KEYS = ("layout", "job", "chemistry", "user_species", "feed", "conditions", "studies", "output")
TOP_REQUIRED = ("layout", "job", "chemistry", "feed", "conditions", "studies")
JOB_KEYS = ("title", "scenario", "prepared_by", "notes")
CHEMISTRY_KEYS = ("species", "key", "product", "reactions", "only_named_reactions", "gas_model",
                  "approach")
FEED_KEYS = ("composition", "flow")
CONDITIONS_KEYS = ("temperature", "pressure")
GRID_KEYS = ("low", "high", "points")
SPAN_KEYS = ("low", "high")
STUDY_KEYS = ("conversion_map", "targets", "pressure_options", "staged_beds", "carbon_limit", "uncertainty")
MAP_KEYS = ("composition_at", "feed_ratio")
TARGET_KEYS = ("label", "conversion", "solve_for", "pressure", "temperature", "search", "feed_ratio")
RATIO_KEYS = ("vary", "per", "low", "high", "points", "values")
PRESSURE_OPTION_KEYS = ("temperatures", "gas_models")
BEDS_KEYS = ("inlet_temperature", "beds", "target", "pressure", "interstage_removal")
CARBON_KEYS = ("feed_ratio", "pressure", "temperature")
OUTPUT_KEYS = ("plots", "tables", "report")
USER_SPECIES_KEYS = ("formula", "phase", "source", "standard_pressure", "critical", "formation_data",
                     "reaction_data")
FORMATION_KEYS = ("enthalpy", "entropy", "cp", "valid", "uncertainty")
REACTION_DATA_KEYS = ("reaction", "enthalpy", "entropy", "K", "at", "cp_change", "valid", "uncertainty")
#: Standard uncertainties a species of the case file may carry (formation or reaction data).
USER_UNCERTAINTY_KEYS = ("enthalpy", "entropy")
#: The ``studies.uncertainty`` block (read by :func:`eqdesign.solve.casefile.uncertainty_settings.settings_from_mapping`).
UNCERTAINTY_KEYS = SETTINGS_KEYS
#: Data kinds of ``studies.uncertainty.overrides.SPECIES``.
UNCERTAINTY_OVERRIDE_KEYS = DATUM_KINDS
CRITICAL_KEYS = ("Tc", "Pc", "omega")



# ====================================================================== records
@dataclass(frozen=True)
class Grid:
    """An evenly spaced range ``low``..``high`` with ``points`` values (SI units)."""

    low: float
    high: float
    points: int

    def values(self, points: int | None = None) -> np.ndarray:
        """The grid [SI unit of the range]; ``points`` overrides the number of values.

        >>> Grid(600.0, 700.0, 3).values()
        array([600., 650., 700.])
        """
        n = self.points if points is None else points
        if n <= 1 or self.high == self.low:
            return np.array([self.low]) if n <= 1 else np.linspace(self.low, self.high, n)
        return np.linspace(self.low, self.high, n)


@dataclass(frozen=True)
class ConversionMapStudy:
    """Equilibrium conversion over the temperature grid at each pressure option.

    ``composition_at`` [Pa]: pressure of the outlet-composition plot (None: first option).
    ``feed_ratio``: optional ratio values giving extra curves.
    """

    composition_at: float | None = None
    feed_ratio: FeedRatio | None = None


@dataclass(frozen=True)
class TargetQuestion:
    """A design question: which temperature, pressure or feed ratio reaches ``conversion``.

    ``pressure`` [Pa] / ``temperature`` [K] fix the other condition (None: each pressure
    option, or the middle of the window); ``search`` is the range of the unknown in SI
    units (K, Pa, or mol/mol); ``feed_ratio`` names the ratio for ``solve_for: feed_ratio``.
    """

    label: str
    conversion: float
    solve_for: str
    pressure: float | None
    temperature: float | None
    search: tuple
    feed_ratio: FeedRatio | None
    key_path: str


@dataclass(frozen=True)
class PressureOptionsStudy:
    """Each pressure option at each temperature [K], for each gas model."""

    temperatures: tuple
    gas_models: tuple


@dataclass(frozen=True)
class StagedBedsStudy:
    """Adiabatic beds with interstage cooling at ``pressure`` [Pa]: a number of ``beds`` or a
    ``target`` conversion (or both).

    ``inlet_temperatures`` [K]: one value for every bed, or one per bed.  ``removal``:
    ``{bed: {species: fraction}}``, species taken out of the gas after that bed.
    """

    inlet_temperatures: tuple
    beds: int | None
    target: float | None
    pressure: float
    removal: dict = field(default_factory=dict)

    @property
    def inlet_temperature(self) -> float:
        """Inlet temperature of the first bed [K]."""
        return self.inlet_temperatures[0]


@dataclass(frozen=True)
class CarbonLimitStudy:
    """Graphite stability over temperature [K] × a feed ratio at ``pressure`` [Pa]."""

    feed_ratio: FeedRatio
    pressure: float
    temperature: Grid


@dataclass(frozen=True)
class Studies:
    """The studies of a case.

    ``uncertainty`` (None: off) propagates the uncertainty of the species data to the
    conversion map (a band at each pressure option) and to every temperature target (an
    interval); its ``overrides`` already hold, by database name, the uncertainties given
    with the case's own species as well as those of ``studies.uncertainty.overrides``, and
    ``defaults_file`` is resolved against the case file's folder.
    """

    conversion_map: ConversionMapStudy | None = None
    targets: tuple = ()
    pressure_options: PressureOptionsStudy | None = None
    staged_beds: StagedBedsStudy | None = None
    carbon_limit: CarbonLimitStudy | None = None
    uncertainty: UncertaintySettings | None = None

    @property
    def names(self) -> list[str]:
        out = []
        if self.conversion_map:
            out.append("conversion map")
        if self.targets:
            out.append(f"{len(self.targets)} target question(s)")
        if self.pressure_options:
            out.append("pressure-option comparison")
        if self.staged_beds:
            out.append("staged beds")
        if self.carbon_limit:
            out.append("carbon limit")
        if self.uncertainty:
            u = self.uncertainty
            how = (f"Monte Carlo, {u.samples} draws, " + (f"seed {u.seed}" if u.seed is not None else "no fixed seed")
                   if u.method == "monte-carlo" else "linearised")
            out.append(f"data uncertainty ({how}, {100 * u.level:.3g} % intervals)")
        return out


@dataclass(frozen=True)
class OutputChoices:
    plot_formats: tuple = PLOT_FORMATS
    tables: bool = True
    report: bool = True


@dataclass(frozen=True)
class UserSpeciesRecord:
    """A species supplied in the case file, with the provenance shown in the report."""

    name: str
    kind: str          # "formation data" or "reaction data"
    source: str
    detail: str        # the numbers as given, for the report
    species: Species = field(repr=False)
    #: Standard uncertainties given with the data: {"formation_enthalpy" | "reaction_enthalpy": J/mol,
    #: "entropy" | "reaction_entropy": J/(mol K)} (empty: the defaults apply).
    uncertainty: dict = field(default_factory=dict)


@dataclass(frozen=True)
class Case:
    """A validated case: every value in SI units, every name resolved in ``database``.

    Attributes
    ----------
    file : str
        The case file as named by the user.
    text : str
        The file's text (copied beside the outputs).
    species : tuple[str, ...]
        Database names of every species of the system (listed, fed, or in a reaction).
    feed_items : tuple[tuple[str, float], ...]
        Feed amounts [mol] on the basis of 1 mol of total feed.
    feed_flow : float | None
        Total feed flow [mol/s] when the case gives one.
    feed_as_given : tuple[tuple[str, str], ...]
        Feed entries as written, for the report.
    key : str
        Key reactant (conversion is of this species).
    product : str | None
    reactions : tuple[tuple[str, str], ...]
        (name, text) of each named reaction.
    only_named_reactions : bool
        True: only the named reactions may proceed (restricted mode).
    gas_model : str
    approach : float
        Approach-to-equilibrium temperature margin [K].
    temperature : Grid
        Temperature window [K].
    pressures : tuple[float, ...]
        Pressure options [Pa].
    """

    file: str
    text: str
    title: str
    scenario: str
    prepared_by: str
    notes: str
    species: tuple
    feed_items: tuple
    feed_flow: float | None
    feed_as_given: tuple
    key: str
    product: str | None
    reactions: tuple
    only_named_reactions: bool
    gas_model: str
    approach: float
    temperature: Grid
    pressures: tuple
    studies: Studies
    output: OutputChoices
    user_species: tuple
    database: SpeciesDatabase = field(repr=False, compare=False)

    @property
    def feed(self) -> dict:
        """Feed species -> amount [mol] (1 mol of total feed)."""
        return dict(self.feed_items)

    @property
    def solver_reactions(self) -> list | None:
        """Reaction texts passed to the solver (None in all-species mode)."""
        return [text for _, text in self.reactions] if self.only_named_reactions and self.reactions else None

    @property
    def stem(self) -> str:
        return Path(self.file).stem

    def records(self) -> list:
        """Species records of the system (for provenance)."""
        return [self.database[name] for name in self.species]

    def summary(self) -> str:
        """A few lines describing the validated case (``eqdesign check``)."""
        t = self.temperature
        lines = [
            f"{self.file}: valid ({LAYOUT_ID})",
            f"  job        {self.title}",
            f"  species    {', '.join(self.species)}",
            "  feed       " + ", ".join(f"{k} {v:.4g}" for k, v in self.feed_items) + " (mol per mol of feed)",
            f"  key        {self.key}" + (f", product {self.product}" if self.product else ""),
            "  mode       " + ("named reactions only: " + "; ".join(t for _, t in self.reactions)
                               if self.solver_reactions else "all species (element balances)"),
            f"  gas model  {self.gas_model}; approach margin {self.approach:g} K",
            f"  window     {t.low - 273.15:.1f}-{t.high - 273.15:.1f} degC in {t.points} points; "
            "pressures " + ", ".join(f"{p / 1e5:g}" for p in self.pressures) + " bar",
            "  studies    " + ", ".join(self.studies.names),
        ]
        if self.user_species:
            lines.append("  supplied   " + ", ".join(f"{u.name} ({u.kind})" for u in self.user_species))
        return "\n".join(lines)
