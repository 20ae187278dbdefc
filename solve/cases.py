"""Case files: the YAML layout of an eqdesign design study, read and checked in full.

A case file describes one design question for one reacting system: the species, the
feed, optional named reactions, the gas model and approach margin, the temperature and
pressure window, the studies to run and the outputs wanted.  :func:`load_case` reads the
file, checks *everything* before any work starts, and returns a frozen :class:`Case` with
SI floats inside (K, Pa, mol, mol/s, J/mol).  Every problem found becomes one
:class:`CaseProblem` naming the file, the key path, the line and the fix; they are raised
together as :class:`CaseError`.

Layout (``layout: eqdesign-case/1``; the demo cases in ``cases/`` show every block)::

    layout: eqdesign-case/1
    job:          {title, scenario, prepared_by, notes}
    chemistry:    {species, key, product, reactions, only_named_reactions, gas_model, approach}
    user_species: {NAME: {formula, phase, source, critical, formation_data | reaction_data}}
    feed:         {composition: {SPECIES: amount}, flow}
    conditions:   {temperature: {low, high, points}, pressure: [options] | {low, high, points}}
    studies:      {conversion_map, targets, pressure_options, staged_beds, carbon_limit, uncertainty}
    output:       {plots: [png, svg], tables: true, report: true}

Numbers carry units as text read by pint (``"450 degC"``, ``"30 bar"``, ``"kmol/h"``,
``"-92.2 kJ/mol"``); ``mol%`` in a feed is read here (pint would read it as
mol × percent).  Temperatures and pressures must carry a unit; gauge pressures
(``barg``, ``psig``) are refused because equilibrium needs absolute pressure.
"""
from __future__ import annotations

import difflib
import math
import re
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, Iterable, Mapping

import numpy as np
import pint
import yaml

from ..thermo.database import DatabaseError, SpeciesDatabase, UnknownSpeciesError, species_from_mapping
from ..thermo.elements import molar_mass as molar_mass_of, parse_formula
from ..thermo.models import R, T_REF, FormationDataModel
from ..thermo.reactions import (
    Reaction, ReactionDerivedModel, ReactionError, ReactionLevelData, bundled_database, parse_side,
)
from ..thermo.species import CriticalConstants, Species
from ..thermo.units import UREG
from .uncertainty import (
    DATUM_KINDS, SETTINGS_KEYS, UncertaintyDefaults, UncertaintyInputError, UncertaintySettings, parameter_map,
    settings_from_mapping,
)

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
USER_SPECIES_KEYS = ("formula", "phase", "source", "critical", "formation_data", "reaction_data")
FORMATION_KEYS = ("enthalpy", "entropy", "cp", "valid", "uncertainty")
REACTION_DATA_KEYS = ("reaction", "enthalpy", "entropy", "K", "at", "cp_change", "valid", "uncertainty")
#: Standard uncertainties a species of the case file may carry (formation or reaction data).
USER_UNCERTAINTY_KEYS = ("enthalpy", "entropy")
#: The ``studies.uncertainty`` block (read by :func:`eqdesign.solve.uncertainty.settings_from_mapping`).
UNCERTAINTY_KEYS = SETTINGS_KEYS
#: Data kinds of ``studies.uncertainty.overrides.SPECIES``.
UNCERTAINTY_OVERRIDE_KEYS = DATUM_KINDS
CRITICAL_KEYS = ("Tc", "Pc", "omega")


# ====================================================================== problems
@dataclass(frozen=True)
class CaseProblem:
    """One problem in a case file: where it is and how to fix it.

    Attributes
    ----------
    file : str
        The case file as named by the user.
    key : str
        Key path inside the file, e.g. ``studies.targets[0].conversion`` ('' for the file).
    message : str
        What is wrong and how to fix it, in one sentence.
    line : int | None
        1-based line of the key in the file, when known.
    """

    file: str
    key: str
    message: str
    line: int | None = None

    def __str__(self) -> str:
        where = self.file
        if self.key:
            where += f": {self.key}"
        if self.line:
            where += f" (line {self.line})"
        return f"{where}: {self.message}"


class CaseError(Exception):
    """A case file has problems; ``problems`` lists each, ``str()`` gives one per line."""

    def __init__(self, problems: Iterable[CaseProblem]):
        self.problems = tuple(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


# ====================================================================== YAML with lines
class _Map(dict):
    """A YAML mapping that remembers the line of each key."""

    def __init__(self, *a, line: int | None = None, **kw):
        super().__init__(*a, **kw)
        self.line = line
        self.lines: dict = {}
        self.duplicates: list = []      # (key, line) of keys given twice


class _Seq(list):
    """A YAML sequence that remembers the line of each item."""

    line: int | None = None

    def __init__(self, *a, **kw):
        super().__init__(*a, **kw)
        self.lines: list = []


class _CaseLoader(yaml.SafeLoader):
    """Safe loader: keeps line numbers, flags duplicate keys, and reads only true/false
    as booleans (so that a species called NO or a key 'on' stays text)."""


_CaseLoader.yaml_implicit_resolvers = {
    first: [(tag, rx) for tag, rx in resolvers if tag != "tag:yaml.org,2002:bool"]
    for first, resolvers in yaml.SafeLoader.yaml_implicit_resolvers.items()}
_CaseLoader.add_implicit_resolver("tag:yaml.org,2002:bool", re.compile(r"^(?:true|True|TRUE|false|False|FALSE)$"),
                                  list("tTfF"))


def _construct_map(loader: _CaseLoader, node):
    loader.flatten_mapping(node)
    out = _Map()
    out.line = node.start_mark.line + 1
    for key_node, value_node in node.value:
        key = loader.construct_object(key_node, deep=True)
        if not isinstance(key, (str, int, float, bool)) or key is None:
            key = str(key)
        if key in out:
            out.duplicates.append((key, key_node.start_mark.line + 1))
            loader.duplicates.append((out, key, key_node.start_mark.line + 1))
        out[key] = loader.construct_object(value_node, deep=True)
        out.lines[key] = key_node.start_mark.line + 1
    return out


def _construct_seq(loader: _CaseLoader, node):
    out = _Seq()
    out.line = node.start_mark.line + 1
    for item in node.value:
        out.append(loader.construct_object(item, deep=True))
        out.lines.append(item.start_mark.line + 1)
    return out


_CaseLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, _construct_map)
_CaseLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_SEQUENCE_TAG, _construct_seq)


def _read_yaml(text: str):
    loader = _CaseLoader(text)
    loader.duplicates = []
    try:
        return loader.get_single_data(), loader.duplicates
    finally:
        loader.dispose()


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
class FeedRatio:
    """A feed ratio varied in a study, e.g. steam-to-carbon: ``vary`` H2O ``per`` carbon.

    Attributes
    ----------
    vary : str
        Feed species whose amount is set by the ratio.
    per : str
        ``"carbon"`` (carbon atoms of the feed species holding carbon and hydrogen, the
        usual steam-to-carbon basis; ``vary`` must then be H2O) or a feed species name
        (mol per mol).
    values : tuple[float, ...]
        Ratios [mol/mol] (for a study grid); empty for a target search.
    label : str
        Text for tables and axes, e.g. ``"steam-to-carbon ratio"``.
    """

    vary: str
    per: str
    values: tuple = ()
    label: str = ""

    def basis(self, feed: Mapping[str, float], database: SpeciesDatabase) -> float:
        """Amount [mol] of the ratio's denominator in ``feed``: a species, or the carbon
        atoms of the feed species holding both carbon and hydrogen (as
        :func:`eqdesign.solve.sweep.hydrocarbon_carbon` counts them)."""
        if self.per == "carbon":
            from .sweep import hydrocarbon_carbon
            return float(hydrocarbon_carbon(feed, database))
        return float(feed.get(self.per, 0.0))

    def current(self, feed: Mapping[str, float], database: SpeciesDatabase) -> float:
        """The ratio [mol/mol] in ``feed`` as given."""
        return float(feed.get(self.vary, 0.0)) / self.basis(feed, database)

    def feed_at(self, feed: Mapping[str, float], ratio, database: SpeciesDatabase) -> dict:
        """``feed`` with the amount of ``vary`` set to ``ratio`` × basis [mol]."""
        out = dict(feed)
        out[self.vary] = np.asarray(ratio, dtype=float) * self.basis(feed, database)
        if np.ndim(out[self.vary]) == 0:
            out[self.vary] = float(out[self.vary])
        return out


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


# ====================================================================== units
_DIMENSION_NAMES = [
    ("K", "a temperature"), ("Pa", "a pressure"), ("mol", "an amount of substance"),
    ("mol/s", "a molar flow"), ("kg", "a mass"), ("kg/s", "a mass flow"),
    ("J/mol", "an energy per mole"), ("J/mol/K", "an entropy or heat capacity per mole"),
    ("J", "an energy"), ("m", "a length"), ("s", "a time"), ("m**3", "a volume"),
]


_KINDS = {
    # kind: (SI unit, noun, example)
    "temperature": ("K", "a temperature", "'450 degC' or '723.15 K'"),
    "temperature_difference": ("K", "a temperature difference", "'10 K'"),
    "pressure": ("Pa", "a pressure", "'30 bar' or '3 MPa' (absolute)"),
    "molar_energy": ("J/mol", "an energy per mole", "'-92.2 kJ/mol'"),
    "molar_entropy": ("J/mol/K", "an entropy per mole", "'-198.1 J/(mol K)'"),
    "molar_heat_capacity": ("J/mol/K", "a heat capacity per mole", "'29.1 J/(mol K)'"),
    "molar_flow": ("mol/s", "a molar flow", "'1200 kmol/h'"),
}

_GAUGE = re.compile(r"\b(barg|psig|kPag|MPag)\b")
_ABSOLUTE = {"bara": "bar", "psia": "psi", "kPaa": "kPa", "MPaa": "MPa"}
_MOL_PERCENT = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(?:mol|mole|vol)\s*-?\s*%\s*$")
_PERCENT = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(?:%|percent)\s*$")


def _dimension_name(quantity) -> str:
    """'a pressure', 'a temperature', ... for an error message."""
    for unit, name in _DIMENSION_NAMES:
        if quantity.dimensionality == UREG.Quantity(1, unit).dimensionality:
            return name
    return f"a quantity of dimension {quantity.dimensionality}"


class _UnitProblem(ValueError):
    pass


def _parse_quantity(value: Any):
    """pint quantity (or float for a bare number) from a YAML value."""
    if isinstance(value, bool):
        raise _UnitProblem(f"{value!r} is a yes/no value, not a number")
    if isinstance(value, (int, float)):
        return float(value)
    if not isinstance(value, str):
        raise _UnitProblem(f"expected a number with a unit, got a {type(value).__name__}")
    text = value.strip()
    if _GAUGE.search(text):
        raise _UnitProblem(f"{value!r} is a gauge pressure; equilibrium needs absolute pressure: add "
                           "the atmospheric pressure and write e.g. '31 bar'")
    for old, new in _ABSOLUTE.items():
        text = re.sub(rf"\b{old}\b", new, text)
    try:
        q = UREG.Quantity(text)
    except Exception as exc:
        detail = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise _UnitProblem(f"cannot read {value!r} as a number with a unit ({detail})") from None
    if not isinstance(q, pint.Quantity):
        return float(q)
    if np.ndim(q.magnitude) != 0:
        raise _UnitProblem(f"{value!r} is not a single value")
    return q


def _to_si(value: Any, kind: str, *, require_unit: bool = True) -> float:
    """Convert a YAML value to SI (see _KINDS); raise _UnitProblem with a fix."""
    unit, noun, example = _KINDS[kind]
    q = _parse_quantity(value)
    if not isinstance(q, pint.Quantity) or q.dimensionless:
        if isinstance(q, pint.Quantity):
            q = float(q.to("dimensionless").magnitude)
        if require_unit:
            raise _UnitProblem(f"{value!r} has no unit; write {noun} with its unit, e.g. {example}")
        return float(q)
    if kind == "temperature_difference":
        units = str(q.units)
        if units in ("degree_Celsius", "delta_degree_Celsius"):
            return float(q.magnitude)
        if units in ("degree_Fahrenheit", "delta_degree_Fahrenheit"):
            return float(q.magnitude) * 5.0 / 9.0
    try:
        return float(q.to(unit).magnitude)
    except pint.DimensionalityError:
        raise _UnitProblem(f"{value!r} is {_dimension_name(q)}, not {noun}; write {noun} such as {example}") from None


def _fraction(value: Any) -> float:
    """A fraction from 0.25, '25 %' or '25 percent' (no range check here)."""
    if isinstance(value, bool):
        raise _UnitProblem(f"{value!r} is a yes/no value, not a fraction")
    if isinstance(value, (int, float)):
        return float(value)
    if isinstance(value, str):
        m = _PERCENT.match(value)
        if m:
            return float(m.group(1)) / 100.0
        try:
            return float(value)
        except ValueError:
            pass
    raise _UnitProblem(f"{value!r} is not a fraction; write e.g. 0.25 or '25 %'")


def _number(value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise _UnitProblem(f"{value!r} is not a number")
    try:
        return float(value)
    except ValueError:
        q = _parse_quantity(value)
        if isinstance(q, pint.Quantity):
            if not q.dimensionless:
                raise _UnitProblem(f"{value!r} is {_dimension_name(q)}; a pure number (mol/mol) belongs here") from None
            return float(q.to("dimensionless").magnitude)
        return float(q)


# ====================================================================== the checker
class _Checker:
    """Walks a parsed case, collecting problems; each helper returns None on a problem."""

    def __init__(self, file: str):
        self.file = file
        self.problems: list[CaseProblem] = []
        self.reported: set = set()        # ids of mappings whose duplicate keys were reported

    def add(self, key: str, message: str, line: int | None = None) -> None:
        self.problems.append(CaseProblem(self.file, key, message, line))

    # -------------------------------------------------------------- structure
    @staticmethod
    def line_of(parent, key) -> int | None:
        if isinstance(parent, _Map):
            return parent.lines.get(key, parent.line)
        if isinstance(parent, _Seq) and isinstance(key, int) and key < len(parent.lines):
            return parent.lines[key]
        return getattr(parent, "line", None)

    def section(self, parent, key, path: str, allowed: tuple, required: tuple = (),
                what: str = "section") -> dict | None:
        """parent[key] checked to be a mapping with only ``allowed`` keys, all ``required``."""
        if isinstance(parent, Mapping):
            value, line = parent.get(key), self.line_of(parent, key)
        elif isinstance(parent, list):
            value, line = parent[key], self.line_of(parent, key)
        else:
            value, line = parent, getattr(parent, "line", None)
        if not isinstance(value, Mapping):
            shown = "nothing" if value is None else _TYPE_WORDS.get(type(value).__name__, "a " + type(value).__name__)
            self.add(path, f"expected a mapping of {what} keys ({', '.join(allowed)}), found {shown}; "
                     f"indent the keys under '{path.split('.')[-1]}:'", line)
            return None
        self.unknown_keys(value, path, allowed)
        for req in required:
            if req not in value:
                self.add(path, f"missing key '{req}'; add '{req}:' under '{path.split('.')[-1]}:'"
                         + _REQUIRED_HINTS.get(req, ""), getattr(value, "line", line))
        return value

    def duplicates(self, mapping: Mapping, path: str) -> None:
        """Report keys given twice in one block (YAML would silently keep the last)."""
        for k, line in getattr(mapping, "duplicates", ()):
            self.add(_join(path, str(k)), f"key '{k}' appears twice in the same block; keep one", line)
        self.reported.add(id(mapping))

    def unknown_keys(self, mapping: Mapping, path: str, allowed: tuple) -> None:
        self.duplicates(mapping, path)
        for k in mapping:
            if k not in allowed:
                close = difflib.get_close_matches(str(k), allowed, n=1, cutoff=0.5)
                hint = f"did you mean '{close[0]}'?" if close else "valid keys here: " + ", ".join(allowed)
                self.add(_join(path, str(k)), f"unknown key '{k}'; {hint}", self.line_of(mapping, k))

    def quantity(self, parent, key, path, kind, *, require_unit=True, positive=False) -> float | None:
        value = parent[key]
        line = self.line_of(parent, key)
        try:
            si = _to_si(value, kind, require_unit=require_unit)
        except _UnitProblem as exc:
            self.add(path, str(exc), line)
            return None
        if not math.isfinite(si):
            self.add(path, f"{value!r} is not a finite number", line)
            return None
        if kind == "temperature" and si <= 0:
            self.add(path, f"{value!r} is at or below absolute zero; give a temperature above 0 K", line)
            return None
        if positive and si <= 0:
            self.add(path, f"{value!r} must be greater than zero", line)
            return None
        return si

    def integer(self, parent, key, path, low: int, high: int) -> int | None:
        value = parent[key]
        if isinstance(value, bool) or not isinstance(value, (int, float)) or int(value) != value:
            self.add(path, f"{value!r} is not a whole number; give a count such as {max(low, 5)}",
                     self.line_of(parent, key))
            return None
        if not low <= int(value) <= high:
            self.add(path, f"{int(value)} is outside {low}-{high}; give a count in that range",
                     self.line_of(parent, key))
            return None
        return int(value)

    def text(self, parent, key, path, *, required=False) -> str:
        value = parent.get(key)
        if value is None:
            if required:
                self.add(path, "missing; give it as text", getattr(parent, "line", None))
            return ""
        if not isinstance(value, (str, int, float)) or isinstance(value, bool):
            self.add(path, f"expected text, found a {type(value).__name__}; quote it", self.line_of(parent, key))
            return ""
        return str(value).strip()

    def boolean(self, parent, key, path, default: bool) -> bool:
        value = parent.get(key, default)
        if not isinstance(value, bool):
            self.add(path, f"{value!r} is not true or false; write true or false", self.line_of(parent, key))
            return default
        return value

    def grid(self, parent, key, path, kind: str, *, default_points: int | None = None,
             min_points: int = 2) -> Grid | None:
        g = self.section(parent, key, path, GRID_KEYS, ("low", "high") if default_points else GRID_KEYS,
                         what="range")
        if g is None or "low" not in g or "high" not in g:
            return None
        lo = self.quantity(g, "low", f"{path}.low", kind) if kind else self.ratio_number(g, "low", f"{path}.low")
        hi = self.quantity(g, "high", f"{path}.high", kind) if kind else self.ratio_number(g, "high", f"{path}.high")
        n = default_points
        if "points" in g:
            n = self.integer(g, "points", f"{path}.points", min_points, MAX_POINTS)
        elif default_points is None:
            return None
        if lo is None or hi is None or n is None:
            return None
        if hi < lo:
            self.add(path, f"low ({g['low']!r}) is above high ({g['high']!r}); swap them", self.line_of(g, "low"))
            return None
        if hi == lo and n > 1:
            self.add(path, f"low and high are equal ({g['low']!r}); widen the range or set points: 1",
                     self.line_of(g, "low"))
            return None
        return Grid(lo, hi, n)

    def ratio_number(self, parent, key, path) -> float | None:
        try:
            v = _number(parent[key])
        except _UnitProblem as exc:
            self.add(path, str(exc) + "; give a ratio in mol/mol such as 3.0", self.line_of(parent, key))
            return None
        if not math.isfinite(v) or v < 0:
            self.add(path, f"{parent[key]!r}: a feed ratio must be zero or positive", self.line_of(parent, key))
            return None
        return v


_TYPE_WORDS = {"_Seq": "a list", "list": "a list", "str": "text", "int": "a number", "float": "a number",
               "bool": "true/false"}

_REQUIRED_HINTS = {
    "layout": f" (write 'layout: {LAYOUT_ID}' as the first line)",
    "job": " (with at least a title)",
    "title": " (a one-line name of the study)",
    "chemistry": " (with species and key)",
    "species": " (a list of species names, e.g. [N2, H2, NH3])",
    "key": " (the key reactant whose conversion is reported, e.g. N2)",
    "feed": " (with a composition)",
    "composition": " (species: amount, e.g. N2: 1 and H2: 3)",
    "conditions": " (with temperature and pressure)",
    "temperature": " (low, high and points, e.g. low: '350 degC')",
    "pressure": " (a list of options, e.g. ['100 bar', '200 bar'])",
    "studies": " (at least conversion_map: {})",
    "low": "",
    "high": "",
    "points": " (the number of grid values, e.g. 41)",
    "inlet_temperature": " (the gas temperature entering each bed, e.g. '420 degC')",
    "conversion": " (the target as a fraction or percent, e.g. '25 %')",
    "solve_for": " (temperature, pressure or feed_ratio)",
    "feed_ratio": " (vary, per and a range, e.g. {vary: H2O, per: carbon, low: 1.5, high: 4, points: 11})",
    "vary": " (the feed species whose amount the ratio sets, e.g. H2O)",
    "per": " ('carbon' or a feed species, e.g. CO)",
    "reaction": " (e.g. 'CH3OH + CO = HCOOCH3')",
    "source": " (where the numbers come from: authors, title, year)",
    "enthalpy": " (e.g. '-92.2 kJ/mol')",
    "Tc": "", "Pc": "", "omega": "",
}


def _join(path: str, key) -> str:
    if isinstance(key, int):
        return f"{path}[{key}]"
    return f"{path}.{key}" if path else str(key)


# ====================================================================== loading
def load_case(path: str | Path, *, database: SpeciesDatabase | None = None) -> Case:
    """Read and check a case file completely.

    Parameters
    ----------
    path : str | Path
        The case file (YAML, layout ``eqdesign-case/1``).
    database : SpeciesDatabase, optional
        Base species database (the bundled one by default); user species are added to it.

    Returns
    -------
    Case

    Raises
    ------
    CaseError
        With one :class:`CaseProblem` per problem found; nothing has been computed.
    """
    file = str(path)
    try:
        text = Path(path).read_text(encoding="utf-8")
    except FileNotFoundError:
        raise CaseError([CaseProblem(file, "", "no such file; check the path (the demo cases are in "
                                     "cases/)")]) from None
    except IsADirectoryError:
        raise CaseError([CaseProblem(file, "", "is a folder, not a case file; name a .yaml file")]) from None
    except UnicodeDecodeError:
        raise CaseError([CaseProblem(file, "", "is not UTF-8 text; save the case file as UTF-8")]) from None
    except OSError as exc:
        raise CaseError([CaseProblem(file, "", f"cannot read the file ({exc.strerror})")]) from None
    return parse_case(text, file, database=database)


def parse_case(text: str, file: str = "<case>", *, database: SpeciesDatabase | None = None) -> Case:
    r"""Check a case given as text (see :func:`load_case`).

    Examples
    --------
    >>> case = parse_case('''
    ... layout: eqdesign-case/1
    ... job: {title: "Example"}
    ... chemistry: {species: [N2, H2, NH3], key: N2}
    ... feed: {composition: {N2: "25 mol%", H2: "75 mol%"}}
    ... conditions:
    ...   temperature: {low: "400 degC", high: "500 degC", points: 3}
    ...   pressure: ["200 bar"]
    ... studies: {conversion_map: {}}
    ... ''', "example.yaml")
    >>> case.temperature.low, case.pressures, case.feed["H2"]
    (673.15, (20000000.0,), 0.75)
    >>> parse_case("layout: eqdesign-case/1\njob: {title: x}\n", "bad.yaml")
    Traceback (most recent call last):
    ...
    eqdesign.solve.cases.CaseError: bad.yaml: chemistry: missing block; add it (with species and key)
    bad.yaml: feed: missing block; add it (with a composition)
    bad.yaml: conditions: missing block; add it (with temperature and pressure)
    bad.yaml: studies: missing block; add it (at least conversion_map: {})
    """
    try:
        doc, duplicates = _read_yaml(text)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark
        line = mark.line + 1 if mark else None
        raise CaseError([CaseProblem(file, "", f"not valid YAML: {exc.problem}; check the indentation and "
                                     "quoting near that line", line)]) from None
    except yaml.YAMLError as exc:
        raise CaseError([CaseProblem(file, "", f"not valid YAML ({exc})")]) from None
    ck = _Checker(file)
    if not isinstance(doc, Mapping):
        ck.add("", "a case file is a YAML mapping of blocks (layout, job, chemistry, feed, conditions, "
               "studies, output); see the files in cases/ for the layout")
        raise CaseError(ck.problems)
    case = _build(doc, text, ck, database or bundled_database())
    for mapping, key, line in duplicates:        # duplicates in blocks the checks did not visit
        if id(mapping) not in ck.reported:
            ck.add(str(key), f"key '{key}' appears twice in the same block; keep one", line)
    if ck.problems:
        raise CaseError(ck.problems)
    return case


def _build(doc: Mapping, text: str, ck: _Checker, base_db: SpeciesDatabase) -> Case | None:
    ck.unknown_keys(doc, "", TOP_KEYS)
    for req in TOP_REQUIRED:
        if req not in doc:
            ck.add(req, "missing block; add it" + _REQUIRED_HINTS.get(req, ""), None)
    if "layout" in doc and doc["layout"] != LAYOUT_ID:
        ck.add("layout", f"{doc['layout']!r} is not a layout this version reads; write 'layout: {LAYOUT_ID}'",
               ck.line_of(doc, "layout"))

    # ------------------------------------------------------------------ job
    title = scenario = prepared_by = notes = ""
    if "job" in doc:
        job = ck.section(doc, "job", "job", JOB_KEYS, ("title",))
        if job is not None:
            title = ck.text(job, "title", "job.title")
            scenario = ck.text(job, "scenario", "job.scenario")
            prepared_by = ck.text(job, "prepared_by", "job.prepared_by")
            notes = ck.text(job, "notes", "job.notes")

    # ------------------------------------------------------------------ user species
    db = base_db
    user_records: list[UserSpeciesRecord] = []
    if "user_species" in doc:
        user_records = _user_species(doc, ck, base_db)
        if user_records:
            db = base_db.extended([u.species for u in user_records])

    # ------------------------------------------------------------------ chemistry
    species: list[str] = []
    key = product = None
    reactions: list[tuple[str, str]] = []
    parsed_reactions: list[Reaction] = []
    only_named = True
    gas_model = "ideal"
    approach = 0.0
    chem = ck.section(doc, "chemistry", "chemistry", CHEMISTRY_KEYS, ("species", "key")) if "chemistry" in doc else None
    chem_ok = chem is not None
    if chem is not None:
        raw = chem.get("species")
        if "species" in chem:
            if isinstance(raw, str):
                raw = [s for s in re.split(r"[,\s]+", raw) if s]
            if not isinstance(raw, list) or not raw:
                ck.add("chemistry.species", "give a list of species names, e.g. [N2, H2, NH3]",
                       ck.line_of(chem, "species"))
                chem_ok = False
            else:
                for i, name in enumerate(raw):
                    resolved = _resolve(ck, db, name, f"chemistry.species[{i}]", ck.line_of(chem, "species"))
                    if resolved is None:
                        chem_ok = False
                    elif resolved not in species:
                        species.append(resolved)
        if "reactions" in chem:
            rx = chem["reactions"]
            items: list = []
            if isinstance(rx, Mapping):
                ck.duplicates(rx, "chemistry.reactions")
                items = [(str(k), v, _join("chemistry.reactions", str(k)), ck.line_of(rx, k)) for k, v in rx.items()]
            elif isinstance(rx, list):
                items = [(f"R{i + 1}", v, f"chemistry.reactions[{i}]", ck.line_of(rx, i)) for i, v in enumerate(rx)]
            else:
                ck.add("chemistry.reactions", "give named reactions as 'name: \"A + B = C\"' lines or a list "
                       "of reaction texts", ck.line_of(chem, "reactions"))
                chem_ok = False
            for name, value, path, line in items:
                if not isinstance(value, str):
                    ck.add(path, "a reaction is text such as 'N2 + 3 H2 = 2 NH3'", line)
                    chem_ok = False
                    continue
                try:
                    r = Reaction.parse(value, db)
                except ReactionError as exc:
                    msg = str(exc)
                    if "does not balance" in msg:
                        msg += "; correct the coefficients"
                    elif "unknown species" in msg:
                        msg += " (a species missing from the database can be added under user_species)"
                    ck.add(path, msg, line)
                    chem_ok = False
                    continue
                reactions.append((name, r.text))
                parsed_reactions.append(r)
                for n in r.names:
                    if n not in species:
                        species.append(n)
        only_named = ck.boolean(chem, "only_named_reactions", "chemistry.only_named_reactions", True)
        if only_named and "only_named_reactions" in chem and chem["only_named_reactions"] is True and not reactions \
                and "reactions" not in chem:
            ck.add("chemistry.only_named_reactions", "is true but no reactions are named; add "
                   "chemistry.reactions or remove only_named_reactions", ck.line_of(chem, "only_named_reactions"))
        if "gas_model" in chem:
            gm = chem["gas_model"]
            if gm not in GAS_MODELS:
                close = difflib.get_close_matches(str(gm), GAS_MODELS, n=1, cutoff=0.4)
                ck.add("chemistry.gas_model", f"{gm!r} is not a gas model; use "
                       + (f"'{close[0]}'" if close else " or ".join(GAS_MODELS)), ck.line_of(chem, "gas_model"))
            else:
                gas_model = gm
        if "approach" in chem:
            a = ck.quantity(chem, "approach", "chemistry.approach", "temperature_difference")
            if a is not None:
                if a < 0 or a > 200:
                    ck.add("chemistry.approach", f"{chem['approach']!r}: an approach margin lies between 0 and "
                           "200 K; a typical value is 0-30 K", ck.line_of(chem, "approach"))
                else:
                    approach = a

    # ------------------------------------------------------------------ feed
    feed, feed_flow, feed_as_given = _feed(doc, ck, db) if "feed" in doc else (None, None, ())
    if feed:
        for name in feed:
            if name not in species:
                species.append(name)

    if chem is not None and "key" in chem:
        key = _resolve(ck, db, chem["key"], "chemistry.key", ck.line_of(chem, "key"))
        if key is not None and feed is not None and feed.get(key, 0.0) <= 0:
            ck.add("chemistry.key", f"the key reactant {key} is not in the feed, so its conversion is "
                   "undefined; feed it or choose a fed reactant as key", ck.line_of(chem, "key"))
            key = None
    if chem is not None and "product" in chem:
        product = _resolve(ck, db, chem["product"], "chemistry.product", ck.line_of(chem, "product"))
        if product is not None and product not in species:
            ck.add("chemistry.product", f"{product} is not among the species of the system; add it to "
                   "chemistry.species", ck.line_of(chem, "product"))
            product = None
    solver_reactions = bool(reactions) and only_named
    if solver_reactions and key is not None and parsed_reactions:
        if not any(key in r.names for r in parsed_reactions):
            ck.add("chemistry.key", f"{key} takes part in none of the named reactions, so it cannot convert; "
                   "choose a reactant of the named reactions", ck.line_of(chem, "key"))
            key = None

    # gas model needs critical constants
    if gas_model == "peng-robinson" and chem_ok:
        _check_critical(ck, db, species, "chemistry.gas_model", ck.line_of(chem, "gas_model"))

    # ------------------------------------------------------------------ conditions
    temperature = None
    pressures: tuple = ()
    if "conditions" in doc:
        cond = ck.section(doc, "conditions", "conditions", CONDITIONS_KEYS, CONDITIONS_KEYS)
        if cond is not None:
            if "temperature" in cond:
                temperature = ck.grid(cond, "temperature", "conditions.temperature", "temperature")
            if "pressure" in cond:
                pressures = _pressures(ck, cond, "pressure", "conditions.pressure")
    records = []
    if chem_ok and feed is not None:
        records = [db[n] for n in species]
    if temperature is not None and records:
        _check_data_range(ck, records, temperature.low, temperature.high, "conditions.temperature",
                          ck.line_of(doc.get("conditions"), "temperature"))

    # ------------------------------------------------------------------ studies
    ctx = _StudyContext(db=db, feed=feed, species=species, key=key, temperature=temperature,
                        pressures=pressures, records=records, reactions=parsed_reactions,
                        solver_reactions=solver_reactions,
                        user_uncertainty={u.name: dict(u.uncertainty) for u in user_records if u.uncertainty},
                        folder=Path(ck.file).parent)
    studies = _studies(doc, ck, ctx) if "studies" in doc else None

    # ------------------------------------------------------------------ output
    output = OutputChoices()
    if "output" in doc:
        output = _output(doc, ck)

    if ck.problems or temperature is None or studies is None or feed is None or key is None:
        if not ck.problems:   # defensive: never return a half-built case silently
            ck.add("", "the case is incomplete; check the blocks named above")
        return None
    return Case(
        file=ck.file, text=text, title=title, scenario=scenario, prepared_by=prepared_by, notes=notes,
        species=tuple(species), feed_items=tuple(feed.items()), feed_flow=feed_flow,
        feed_as_given=tuple(feed_as_given), key=key, product=product, reactions=tuple(reactions),
        only_named_reactions=bool(only_named and reactions), gas_model=gas_model, approach=approach,
        temperature=temperature, pressures=pressures, studies=studies, output=output,
        user_species=tuple(user_records), database=db)


def _resolve(ck: _Checker, db: SpeciesDatabase, name, path: str, line) -> str | None:
    if not isinstance(name, str) or not name.strip():
        ck.add(path, f"{name!r} is not a species name; write a name such as NH3", line)
        return None
    try:
        return db.resolve(name)
    except UnknownSpeciesError as exc:
        ck.add(path, f"{exc} (or add it under user_species with its data)", line)
        return None


def _check_critical(ck, db, species, path, line):
    missing = [n for n in species if db[n].is_gas and db[n].critical is None]
    if missing:
        ck.add(path, "peng-robinson needs critical constants, which the data lack for "
               + ", ".join(missing) + "; use gas_model: ideal, or give critical constants under user_species", line)


def _check_data_range(ck, records, low: float, high: float, path: str, line) -> bool:
    lo_sp = max(records, key=lambda sp: sp.T_min)
    hi_sp = min(records, key=lambda sp: sp.T_max)
    ok = True
    if low < lo_sp.T_min - LOW_T_MARGIN:
        ck.add(path, f"{low:.2f} K ({low - 273.15:.2f} degC) is below the data range of {lo_sp.name} "
               f"({lo_sp.T_min:g}-{lo_sp.T_max:g} K); raise it to at least {lo_sp.T_min - 273.15:g} degC", line)
        ok = False
    if high > hi_sp.T_max + 1e-9:
        ck.add(path, f"{high:.2f} K ({high - 273.15:.2f} degC) is above the data range of {hi_sp.name} "
               f"({hi_sp.T_min:g}-{hi_sp.T_max:g} K); lower it to at most {hi_sp.T_max - 273.15:g} degC", line)
        ok = False
    return ok


def _pressures(ck: _Checker, parent, key, path) -> tuple:
    value = parent[key]
    line = ck.line_of(parent, key)
    if isinstance(value, Mapping):
        g = ck.grid(parent, key, path, "pressure")
        if g is None:
            return ()
        if g.low <= 0:
            ck.add(path + ".low", "pressures must be above zero", line)
            return ()
        return tuple(float(p) for p in g.values())
    items = value if isinstance(value, list) else [value]
    out = []
    for i, item in enumerate(items):
        sub = f"{path}[{i}]" if isinstance(value, list) else path
        holder = {0: item}
        p = ck.quantity(holder, 0, sub, "pressure", positive=True)
        if p is None:
            if ck.problems and ck.problems[-1].line is None:
                ck.problems[-1] = CaseProblem(ck.file, sub, ck.problems[-1].message,
                                              ck.line_of(value, i) if isinstance(value, list) else line)
            continue
        if p in out:
            ck.add(sub, f"{item!r} is listed twice; list each pressure option once",
                   ck.line_of(value, i) if isinstance(value, list) else line)
            continue
        out.append(p)
    if not items:
        ck.add(path, "give at least one pressure, e.g. ['150 bar']", line)
    return tuple(out) if len(out) == len(items) else ()


def _feed(doc, ck: _Checker, db: SpeciesDatabase):
    feed_sec = ck.section(doc, "feed", "feed", FEED_KEYS, ("composition",))
    if feed_sec is None or "composition" not in feed_sec:
        return None, None, ()
    comp = feed_sec["composition"]
    if not isinstance(comp, Mapping) or not comp:
        ck.add("feed.composition", "give each feed species and its amount, e.g. {N2: 1, H2: 3} or "
               "{N2: '25 mol%', H2: '75 mol%'}", ck.line_of(feed_sec, "composition"))
        return None, None, ()
    ck.duplicates(comp, "feed.composition")
    kinds: dict[str, str] = {}
    amounts: dict[str, float] = {}
    as_given = []
    ok = True
    for raw_name, value in comp.items():
        path = _join("feed.composition", str(raw_name))
        line = ck.line_of(comp, raw_name)
        name = _resolve(ck, db, str(raw_name), path, line)
        if name is None:
            ok = False
            continue
        if name in amounts:
            ck.add(path, f"{raw_name} names {name} again; give each species once", line)
            ok = False
            continue
        try:
            kind, amount = _feed_amount(value, db[name])
        except _UnitProblem as exc:
            ck.add(path, str(exc), line)
            ok = False
            continue
        if not math.isfinite(amount):
            ck.add(path, f"{value!r} is not a finite amount", line)
            ok = False
            continue
        if amount < 0:
            ck.add(path, f"{value!r} is negative; feed amounts must be zero or positive", line)
            ok = False
            continue
        kinds[name] = kind
        amounts[name] = amount
        as_given.append((name, str(value)))
    if not ok:
        return None, None, ()
    distinct = sorted(set(kinds.values()))
    if len(distinct) > 1:
        ck.add("feed.composition", "mixes " + " with ".join(_KIND_WORDS[k] for k in distinct)
               + "; give every entry in the same kind (all mol%, all flows, or all plain numbers)",
               ck.line_of(feed_sec, "composition"))
        return None, None, ()
    kind = distinct[0]
    total = sum(amounts.values())
    if total <= 0:
        ck.add("feed.composition", "every feed amount is zero; feed at least one species",
               ck.line_of(feed_sec, "composition"))
        return None, None, ()
    if kind == "percent" and abs(total - 100.0) > 0.1:
        ck.add("feed.composition", f"the mol% values add up to {total:.6g}, not 100; correct them, or give "
               "relative amounts as plain numbers", ck.line_of(feed_sec, "composition"))
        return None, None, ()
    flow = total if kind == "flow" else None
    if "flow" in feed_sec:
        if kind == "flow":
            ck.add("feed.flow", "the composition already gives flows; remove feed.flow or give the composition "
                   "in mol%", ck.line_of(feed_sec, "flow"))
            return None, None, ()
        mean_mass = sum(amounts[n] / total * db[n].molar_mass for n in amounts) / 1000.0   # kg/mol
        try:
            q = _parse_quantity(feed_sec["flow"])
            if isinstance(q, pint.Quantity) and q.check("[mass] / [time]"):
                flow = float(q.to("kg/s").magnitude) / mean_mass
            else:
                flow = _to_si(feed_sec["flow"], "molar_flow")
        except _UnitProblem as exc:
            ck.add("feed.flow", str(exc), ck.line_of(feed_sec, "flow"))
            return None, None, ()
        if flow <= 0:
            ck.add("feed.flow", f"{feed_sec['flow']!r} must be above zero", ck.line_of(feed_sec, "flow"))
            return None, None, ()
    feed = {n: a / total for n, a in amounts.items()}
    return feed, flow, as_given


_KIND_WORDS = {"percent": "mol%", "flow": "flows (e.g. kmol/h)", "amount": "amounts (e.g. kmol)",
               "relative": "plain numbers"}


def _feed_amount(value, sp: Species) -> tuple[str, float]:
    """(kind, value) of one feed entry: percent [mol%], flow [mol/s], amount [mol], relative."""
    if isinstance(value, str):
        m = _MOL_PERCENT.match(value) or _PERCENT.match(value)
        if m:
            return "percent", float(m.group(1))
    q = _parse_quantity(value)
    if not isinstance(q, pint.Quantity):
        return "relative", float(q)
    if q.dimensionless:
        return "relative", float(q.to("dimensionless").magnitude)
    if q.check("[substance]"):
        return "amount", float(q.to("mol").magnitude)
    if q.check("[substance] / [time]"):
        return "flow", float(q.to("mol/s").magnitude)
    if q.check("[mass]"):
        return "amount", float(q.to("g").magnitude) / sp.molar_mass
    if q.check("[mass] / [time]"):
        return "flow", float(q.to("g/s").magnitude) / sp.molar_mass
    raise _UnitProblem(f"{value!r} is {_dimension_name(q)}, not a feed amount; write mol%, a molar flow "
                       "('300 kmol/h'), an amount ('1 kmol'), a mass flow ('600 t/d') or a plain number")


# ====================================================================== user species
def _user_species(doc, ck: _Checker, base_db: SpeciesDatabase) -> list[UserSpeciesRecord]:
    block = doc["user_species"]
    if not isinstance(block, Mapping):
        ck.add("user_species", "give a mapping NAME: {formula, source, formation_data or reaction_data}",
               ck.line_of(doc, "user_species"))
        return []
    out = []
    for name, entry in block.items():
        path = _join("user_species", str(name))
        line = ck.line_of(block, name)
        name = str(name)
        if name in base_db:
            ck.add(path, f"{name} is already in the database (as {base_db.resolve(name)}); choose another name "
                   "for your own data", line)
            continue
        sec = ck.section(block, name, path, USER_SPECIES_KEYS, ("source",), what="species")
        if sec is None:
            continue
        has_f, has_r = "formation_data" in sec, "reaction_data" in sec
        if has_f == has_r:
            ck.add(path, "give exactly one of formation_data (ΔfH°, S°, cp) or reaction_data (a reaction and "
                   "its ΔrH°, ΔrS° or K)", line)
            continue
        source = ck.text(sec, "source", f"{path}.source")
        phase = str(sec.get("phase", "gas"))
        if phase not in ("gas", "solid", "liquid"):
            ck.add(f"{path}.phase", f"{phase!r} is not gas, solid or liquid", ck.line_of(sec, "phase"))
            continue
        critical = None
        if "critical" in sec:
            crit = ck.section(sec, "critical", f"{path}.critical", CRITICAL_KEYS, CRITICAL_KEYS,
                              what="critical-constant")
            if crit is None or not all(k in crit for k in CRITICAL_KEYS):
                continue
            tc = ck.quantity(crit, "Tc", f"{path}.critical.Tc", "temperature")
            pc = ck.quantity(crit, "Pc", f"{path}.critical.Pc", "pressure", positive=True)
            try:
                om = _number(crit["omega"])
            except _UnitProblem as exc:
                ck.add(f"{path}.critical.omega", str(exc), ck.line_of(crit, "omega"))
                continue
            if tc is None or pc is None:
                continue
            critical = CriticalConstants(tc, pc, om, source)
        if has_f:
            rec = _formation_species(ck, sec, name, path, phase, source, critical)
        else:
            rec = _reaction_species(ck, sec, name, path, phase, source, critical, base_db)
        if rec is not None:
            out.append(rec)
    return out


def _valid_range(ck, sec, path, default):
    if "valid" not in sec:
        return default
    g = ck.section(sec, "valid", f"{path}.valid", SPAN_KEYS, SPAN_KEYS, what="range")
    if g is None or "low" not in g or "high" not in g:
        return None
    lo = ck.quantity(g, "low", f"{path}.valid.low", "temperature")
    hi = ck.quantity(g, "high", f"{path}.valid.high", "temperature")
    if lo is None or hi is None:
        return None
    if hi <= lo:
        ck.add(f"{path}.valid", "high must be above low", ck.line_of(sec, "valid"))
        return None
    return (lo, hi)


def _cp_coefficients(ck, parent, key, path) -> tuple | None:
    value = parent[key]
    if isinstance(value, list):
        if not 1 <= len(value) <= 5:
            ck.add(path, "give 1 to 5 coefficients [c0, c1, c2, c3, c_2] (SI: J/(mol K), J/(mol K²), ...)",
                   ck.line_of(parent, key))
            return None
        try:
            return tuple(_number(v) for v in value)
        except _UnitProblem as exc:
            ck.add(path, str(exc) + "; list coefficients as plain SI numbers", ck.line_of(parent, key))
            return None
    v = ck.quantity(parent, key, path, "molar_heat_capacity")
    return None if v is None else (v,)


def _formation_species(ck, sec, name, path, phase, source, critical) -> UserSpeciesRecord | None:
    fpath = f"{path}.formation_data"
    f = ck.section(sec, "formation_data", fpath, FORMATION_KEYS, ("enthalpy", "entropy", "cp"), what="formation-data")
    if f is None or not all(k in f for k in ("enthalpy", "entropy", "cp")):
        return None
    if "formula" not in sec:
        ck.add(path, "missing key 'formula'; give the chemical formula, e.g. formula: C2H6O",
               getattr(sec, "line", None))
        return None
    dh = ck.quantity(f, "enthalpy", f"{fpath}.enthalpy", "molar_energy")
    s = ck.quantity(f, "entropy", f"{fpath}.entropy", "molar_entropy")
    cp = _cp_coefficients(ck, f, "cp", f"{fpath}.cp")
    bounds = _valid_range(ck, f, fpath, (T_REF, 1500.0))
    unc = _data_uncertainty(ck, f, fpath, ("formation_enthalpy", "entropy"))
    if None in (dh, s, cp, bounds, unc):
        return None
    if s <= 0:
        ck.add(f"{fpath}.entropy", "a standard entropy is positive (third law)", ck.line_of(f, "entropy"))
        return None
    entry = {"formula": str(sec["formula"]), "phase": phase,
             "thermo": {"model": "formation-data", "formation_enthalpy": dh, "entropy": s, "cp": list(cp),
                        "T_bounds": list(bounds), "reference": "CASE"}}
    try:
        sp = species_from_mapping(name, entry, {"CASE": {"cite": source, "standard_pressure_Pa": 1e5}}, ck.file)
    except DatabaseError as exc:
        ck.add(f"{path}.formula", str(exc).split(": ", 2)[-1], ck.line_of(sec, "formula"))
        return None
    if critical is not None:
        sp = _with_critical(sp, critical)
    detail = (f"ΔfH°(298.15 K) = {dh / 1000:g} kJ/mol, S° = {s:g} J/(mol K), cp coefficients {list(cp)}, "
              f"valid {bounds[0]:g}-{bounds[1]:g} K" + _uncertainty_detail(unc))
    return UserSpeciesRecord(name, "formation data", source, detail, sp, unc)


_UNCERTAINTY_SYMBOLS = {"formation_enthalpy": ("ΔfH°", 1000.0, "kJ/mol"), "entropy": ("S°", 1.0, "J/(mol K)"),
                        "reaction_enthalpy": ("ΔrH°", 1000.0, "kJ/mol"),
                        "reaction_entropy": ("ΔrS°", 1.0, "J/(mol K)")}


def _data_uncertainty(ck, parent, path, kinds: tuple) -> dict | None:
    """Standard uncertainties given with a species' own data (``uncertainty: {enthalpy,
    entropy}`` inside ``formation_data`` or ``reaction_data``), as {datum kind: SI value};
    {} when none are given, None on a problem."""
    if "uncertainty" not in parent:
        return {}
    upath = f"{path}.uncertainty"
    m = ck.section(parent, "uncertainty", upath, USER_UNCERTAINTY_KEYS, what="uncertainty")
    if m is None:
        return None
    out, ok = {}, True
    for key, kind, unit_kind, example in (("enthalpy", kinds[0], "molar_energy", "'1.5 kJ/mol'"),
                                          ("entropy", kinds[1], "molar_entropy", "'0.5 J/(mol K)'")):
        if key not in m:
            continue
        v = ck.quantity(m, key, f"{upath}.{key}", unit_kind)
        if v is None:
            ok = False
            continue
        if v < 0:
            ck.add(f"{upath}.{key}", f"{m[key]!r}: a standard uncertainty is zero or positive; give e.g. {example}",
                   ck.line_of(m, key))
            ok = False
            continue
        out[kind] = v
    return out if ok else None


def _uncertainty_detail(unc: dict) -> str:
    parts = []
    for kind, u in unc.items():
        symbol, scale, unit = _UNCERTAINTY_SYMBOLS[kind]
        parts.append(f"u({symbol}) = {u / scale:g} {unit}")
    return ("; standard uncertainties " + ", ".join(parts)) if parts else ""


def _with_critical(sp: Species, critical: CriticalConstants) -> Species:
    from dataclasses import replace
    return replace(sp, critical=critical)


def _reaction_species(ck, sec, name, path, phase, source, critical, db) -> UserSpeciesRecord | None:
    rpath = f"{path}.reaction_data"
    r = ck.section(sec, "reaction_data", rpath, REACTION_DATA_KEYS, ("reaction", "enthalpy"), what="reaction-data")
    if r is None or "reaction" not in r or "enthalpy" not in r:
        return None
    text = r["reaction"]
    if not isinstance(text, str) or "=" not in text:
        ck.add(f"{rpath}.reaction", f"write the reaction that forms {name} as text, e.g. 'A + B = {name}'",
               ck.line_of(r, "reaction"))
        return None
    sides = re.split(r"\s*(?:<=>|<->|=)\s*", text.strip())
    if len(sides) != 2:
        ck.add(f"{rpath}.reaction", "write it as 'reactants = products' with one '='", ck.line_of(r, "reaction"))
        return None
    stoich: dict[str, float] = {}
    try:
        for sign, side in ((-1.0, sides[0]), (1.0, sides[1])):
            for term, c in parse_side(side, db, text).items():
                stoich[term] = stoich.get(term, 0.0) + sign * c
    except ReactionError as exc:
        ck.add(f"{rpath}.reaction", str(exc), ck.line_of(r, "reaction"))
        return None
    if name not in stoich or stoich[name] == 0:
        ck.add(f"{rpath}.reaction", f"{text!r} does not contain {name}; write the reaction that forms it",
               ck.line_of(r, "reaction"))
        return None
    partners = []
    for term, nu in stoich.items():
        if term == name or nu == 0:
            continue
        try:
            partners.append((db[term], nu))
        except UnknownSpeciesError as exc:
            ck.add(f"{rpath}.reaction", f"{exc}; every other species of the reaction must be in the database",
                   ck.line_of(r, "reaction"))
            return None
    nu_x = stoich[name]
    elements: dict[str, float] = {}
    for sp, nu in partners:
        for el, n in sp.elements.items():
            elements[el] = elements.get(el, 0.0) - nu * n / nu_x
    elements = {el: round(n, 9) for el, n in elements.items() if abs(n) > 1e-9}
    if any(n < 0 for n in elements.values()) or not elements:
        ck.add(f"{rpath}.reaction", f"{text!r} cannot balance for any composition of {name}; check the reaction",
               ck.line_of(r, "reaction"))
        return None
    formula = str(sec.get("formula", name))
    if "formula" in sec:
        try:
            given = {k: float(v) for k, v in parse_formula(formula).items()}
        except ValueError as exc:
            ck.add(f"{path}.formula", str(exc), ck.line_of(sec, "formula"))
            return None
        if given != elements:
            detail = ", ".join(f"{el} {n:g}" for el, n in sorted(elements.items()))
            ck.add(f"{rpath}.reaction", f"{text!r} does not balance with formula {formula} (the reaction needs "
                   f"{detail}); correct the coefficients or the formula", ck.line_of(r, "reaction"))
            return None
    dh = ck.quantity(r, "enthalpy", f"{rpath}.enthalpy", "molar_energy")
    t_ref = T_REF
    if "at" in r:
        t_ref = ck.quantity(r, "at", f"{rpath}.at", "temperature")
    has_s, has_k = "entropy" in r, "K" in r
    if has_s == has_k:
        ck.add(rpath, "give exactly one of entropy (ΔrS° at 'at') or K (the equilibrium constant at 'at')",
               getattr(r, "line", None))
        return None
    dcp = (0.0,)
    if "cp_change" in r:
        dcp = _cp_coefficients(ck, r, "cp_change", f"{rpath}.cp_change")
    bounds = _valid_range(ck, r, rpath, (200.0, 3000.0))
    unc = _data_uncertainty(ck, r, rpath, ("reaction_enthalpy", "reaction_entropy"))
    if None in (dh, t_ref, dcp, bounds, unc):
        return None
    dn = float(sum(nu for sp, nu in partners if sp.is_gas) + (nu_x if phase == "gas" else 0.0))
    if has_k:
        if "at" not in r:
            ck.add(f"{rpath}.at", "missing: say at which temperature K applies, e.g. at: '500 K'",
                   getattr(r, "line", None))
            return None
        try:
            K = _number(r["K"])
        except _UnitProblem as exc:
            ck.add(f"{rpath}.K", str(exc) + "; K is dimensionless on the 1 bar standard state", ck.line_of(r, "K"))
            return None
        if not K > 0:
            ck.add(f"{rpath}.K", f"{r['K']!r}: an equilibrium constant is positive", ck.line_of(r, "K"))
            return None
        level = ReactionLevelData.from_K(K, t_ref, dh, delta_cp=dcp, T_bounds=bounds, delta_n_gas=dn, text=text)
        shown = f"K = {K:g} at {t_ref:g} K"
    else:
        ds = ck.quantity(r, "entropy", f"{rpath}.entropy", "molar_entropy")
        if ds is None:
            return None
        level = ReactionLevelData(dh, ds, t_ref, tuple(dcp), tuple(bounds), dn, text)
        shown = f"ΔrS° = {ds:g} J/(mol K) at {t_ref:g} K"
    model = ReactionDerivedModel(level, tuple(partners), nu_x)
    sp = Species(name=name, formula=formula, elements=elements, phase=phase,
                 molar_mass=molar_mass_of(elements), model=model, critical=critical, reference=source,
                 data_note=f"derived from reaction data: {text}")
    detail = (f"{text}: ΔrH° = {dh / 1000:g} kJ/mol, {shown}, ΔrCp coefficients {list(dcp)}, valid "
              f"{model.T_min:g}-{model.T_max:g} K" + _uncertainty_detail(unc))
    return UserSpeciesRecord(name, "reaction data", source, detail, sp, unc)


# ====================================================================== studies
@dataclass
class _StudyContext:
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


def _studies(doc, ck: _Checker, ctx: _StudyContext) -> Studies | None:
    sec = ck.section(doc, "studies", "studies", STUDY_KEYS, what="study")
    if sec is None:
        return None
    kept = _Map({k: v for k, v in sec.items() if v is not False}, line=getattr(sec, "line", None))
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
def _uncertainty(sec, ck: _Checker, ctx: _StudyContext) -> UncertaintySettings | None:
    """The ``studies.uncertainty`` switch: settings checked by the uncertainty module
    (:func:`eqdesign.solve.uncertainty.settings_from_mapping`), each of its problem lines
    turned into a case problem with the line of its key; then the overrides checked against
    the case's species (names, data kinds, a default for every datum) and merged with the
    uncertainties given with the case's own species."""
    path = "studies.uncertainty"
    line = ck.line_of(sec, "uncertainty")
    block = sec["uncertainty"]
    if block is True or block is None:                    # 'uncertainty: true' or '{}': the defaults
        block = _Map(line=line)
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
        name = _resolve(ck, ctx.db, raw, opath, oline)
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


def _line_of_path(ck: _Checker, block, rest: str, line) -> int | None:
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
        return _Map()
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
    vary = _resolve(ck, ctx.db, r["vary"], f"{path}.vary", ck.line_of(r, "vary"))
    per_raw = r["per"]
    per = "carbon" if isinstance(per_raw, str) and per_raw.strip().lower() == "carbon" else \
        _resolve(ck, ctx.db, per_raw, f"{path}.per", ck.line_of(r, "per"))
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
                ck.add(path, f"missing key '{req}' of the ratio range" + _REQUIRED_HINTS.get(req, ""),
                       getattr(r, "line", None))
                return None
        lo = ck.ratio_number(r, "low", f"{path}.low")
        hi = ck.ratio_number(r, "high", f"{path}.high")
        n = ck.integer(r, "points", f"{path}.points", 2, MAX_POINTS) if "points" in r else 2
        if lo is None or hi is None or n is None:
            return None
        if hi <= lo:
            ck.add(path, f"low ({r['low']!r}) must be below high ({r['high']!r})", ck.line_of(r, "low"))
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
            x = _fraction(q["conversion"])
        except _UnitProblem as exc:
            ck.add(f"{path}.conversion", str(exc), ck.line_of(q, "conversion"))
            continue
        if not 0.0 < x < 1.0:
            ck.add(f"{path}.conversion", f"{q['conversion']!r} is impossible: a conversion lies strictly between "
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
            ck.add(f"{path}.solve_for", f"{solve_for!r} is not something eqdesign can solve for; use "
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
            if ctx.records and not _check_data_range(ck, ctx.records, T, T, f"{path}.temperature",
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
            if "search" in q and ctx.records and not _check_data_range(
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
    from .equilibrium import _stoichiometric_matrix, element_matrix, invariant_basis
    names = list(ctx.species)
    recs = [ctx.db[n] for n in names]
    if ctx.solver_reactions:
        C = invariant_basis(_stoichiometric_matrix(ctx.reactions, names))
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
            if ctx.records and not _check_data_range(ck, ctx.records, T, T, f"{path}.temperatures[{i}]",
                                                     ck.line_of(m, "temperatures")):
                return None
            temps.append(T)
    elif ctx.temperature is not None:
        temps = [0.5 * (ctx.temperature.low + ctx.temperature.high)]
    models = ["ideal"]
    if "gas_models" in m:
        raw = m["gas_models"] if isinstance(m["gas_models"], list) else [m["gas_models"]]
        models = []
        for v in raw:
            if v not in GAS_MODELS:
                ck.add(f"{path}.gas_models", f"{v!r} is not a gas model; use ideal and/or peng-robinson",
                       ck.line_of(m, "gas_models"))
                return None
            if v not in models:
                models.append(v)
        if "peng-robinson" in models and ctx.records:
            _check_critical(ck, ctx.db, ctx.species, f"{path}.gas_models", ck.line_of(m, "gas_models"))
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
        if ctx.records and not _check_data_range(ck, ctx.records, T_in, T_in, sub, ck.line_of(m, "inlet_temperature")):
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
        if len(inlets) > 1 and beds > len(inlets):
            ck.add(f"{path}.beds", f"{beds} beds but {len(inlets)} inlet temperatures; give one inlet temperature "
                   "per bed, or a single one for every bed", ck.line_of(m, "beds"))
            return None
    if "target" in m:
        try:
            target = _fraction(m["target"])
        except _UnitProblem as exc:
            ck.add(f"{path}.target", str(exc), ck.line_of(m, "target"))
            return None
        if not 0.0 < target < 1.0:
            ck.add(f"{path}.target", f"{m['target']!r} is impossible: a conversion lies strictly between 0 and 1 "
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
                ck.add(bpath, f"{b!r} is not a bed with another bed after it; use a bed number from 1 to {n_max - 1}",
                       line)
                return None
            pairs = {spec: 1.0} if isinstance(spec, str) else spec if isinstance(spec, Mapping) else None
            if pairs is None:
                ck.add(bpath, "give a species (all of it is removed) or {species: fraction}", line)
                return None
            fractions = {}
            for name, frac in pairs.items():
                resolved = _resolve(ck, ctx.db, name, bpath, line)
                if resolved is None:
                    return None
                if resolved not in ctx.species:
                    ck.add(bpath, f"{resolved} is not a species of the system", line)
                    return None
                try:
                    f = _fraction(frac)
                except _UnitProblem as exc:
                    ck.add(bpath, str(exc), line)
                    return None
                if not 0.0 < f <= 1.0:
                    ck.add(bpath, f"{frac!r}: the fraction removed lies between 0 and 1 (0-100 %)", line)
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
        if grid is not None and ctx.records and not _check_data_range(
                ck, ctx.records, grid.low, grid.high, f"{path}.temperature", ck.line_of(m, "temperature")):
            return None
    if P is None or grid is None:
        return None
    return CarbonLimitStudy(ratio, P, grid)


def _output(doc, ck) -> OutputChoices:
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
                    ck.add("output.plots", f"{v!r} is not a plot format eqdesign writes; use png and/or svg "
                           "(or false for none)", ck.line_of(m, "plots"))
                    return OutputChoices()
                if v not in formats:
                    formats.append(v)
            formats = tuple(formats)
    tables = ck.boolean(m, "tables", "output.tables", True)
    report = ck.boolean(m, "report", "output.report", True)
    return OutputChoices(tuple(formats), tables, report)
