"""Plant-sample files: read, check, and trend the approach to equilibrium.

A sample file is CSV text of our own layout (``cases/README.md``, "Plant-sample files"):

    # comment lines first (optional)
    time,temperature,pressure,H2,CO,CO2,CH4
    ISO 8601,degC,bar,mol% dry,mol% dry,mol% dry,mol% dry
    2026-01-05T08:00,214.8,27.6,75.12,0.31,19.02,5.55

The second row gives every column's unit.  Temperatures and pressures need a unit
(pressures absolute; ``barg`` and ``psig`` are refused).  The analysis columns are species
names or aliases, all on one basis: ``mol% wet``, ``mol% dry``, ``fraction wet`` or
``fraction dry``; a dry analysis may carry a separately measured water column ``H2O`` in
``mol% wet`` (or ``fraction wet``).  Every problem in a file is reported at once, each with
the file, the line, the column and the fix; nothing is computed from a file with a problem.
"""
from __future__ import annotations

import csv
import io
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path
from typing import Mapping, Sequence

import numpy as np

from ...thermo.database import SpeciesDatabase, UnknownSpeciesError
from ...thermo.reactions import bundled_database
from ...thermo.units import UnitError, to_si
from ..studies.plant_approach import ApproachResult, approach_to_equilibrium

REQUIRED = ("time", "temperature", "pressure")
TIME_UNIT = "ISO 8601"
ANALYSIS_UNITS = {"mol% wet": (0.01, "wet"), "mol% dry": (0.01, "dry"),
                  "fraction wet": (1.0, "wet"), "fraction dry": (1.0, "dry")}
GAUGE_UNITS = ("barg", "psig", "kpag", "mpag")

#: Default tolerance on the analysis total [mol%] (100 ± this).
CLOSURE_TOLERANCE = 1.0


@dataclass(frozen=True)
class PlantDataProblem:
    """One problem in a sample file: where it is and how to fix it."""

    file: str
    line: int | None
    column: str | None
    message: str

    def __str__(self) -> str:
        where = [self.file]
        if self.line is not None:
            where.append(f"line {self.line}")
        if self.column is not None:
            where.append(f"column {self.column}")
        return ", ".join(where) + ": " + self.message


class PlantDataError(ValueError):
    """A sample file has problems; ``problems`` lists every one."""

    def __init__(self, problems: Sequence[PlantDataProblem]):
        self.problems = list(problems)
        head = f"{len(self.problems)} problem(s) in the sample file; nothing was computed"
        super().__init__(head + "\n" + "\n".join(f"  {p}" for p in self.problems))


@dataclass(frozen=True)
class PlantSamples:
    """The checked contents of a sample file, one entry per sample (n,).

    Attributes
    ----------
    source : str
    times : ndarray of datetime64[s]
        Sample times (UTC where the file gave an offset).
    T : ndarray
        Temperature [K].
    P : ndarray
        Absolute pressure [Pa].
    basis : str
        ``"wet"`` or ``"dry"``.
    analysis : dict
        Species -> reading as a fraction [-] on ``basis``.
    water : ndarray or None
        Dry analyses: the separately measured wet-basis water fraction [-].
    units : dict
        Column -> unit text as written.
    """

    source: str
    times: np.ndarray = field(repr=False)
    T: np.ndarray = field(repr=False)
    P: np.ndarray = field(repr=False)
    basis: str
    analysis: dict = field(repr=False)
    water: np.ndarray | None = field(repr=False)
    units: dict = field(repr=False)

    def __len__(self) -> int:
        return int(self.T.size)


def _parse_time(text: str) -> np.datetime64:
    stamp = datetime.fromisoformat(text.strip().replace("Z", "+00:00"))
    if stamp.tzinfo is not None:
        stamp = stamp.astimezone(timezone.utc).replace(tzinfo=None)
    return np.datetime64(stamp, "s")


def read_plant_samples(path: str | Path, *, closure_tolerance: float = CLOSURE_TOLERANCE,
                       database: SpeciesDatabase | None = None, text: str | None = None) -> PlantSamples:
    """Read and check a plant-sample file.

    Parameters
    ----------
    path : str | Path
        The CSV file (its name is used in messages).
    closure_tolerance : float
        Accepted deviation of each analysis total from 100 mol% [mol%] (default 1.0).
    database : SpeciesDatabase, optional
    text : str, optional
        File contents (instead of reading ``path``).

    Returns
    -------
    PlantSamples

    Raises
    ------
    PlantDataError
        With every problem found (file, line, column, fix).
    """
    db = database or bundled_database()
    name = str(path)
    if text is None:
        try:
            text = Path(path).read_text(encoding="utf-8-sig")
        except OSError as exc:
            raise PlantDataError([PlantDataProblem(name, None, None, f"cannot read the file ({exc.strerror})")])
    problems: list[PlantDataProblem] = []
    rows = [(k + 1, r) for k, r in enumerate(csv.reader(io.StringIO(text)))]
    rows = [(ln, [c.strip() for c in r]) for ln, r in rows if r and any(c.strip() for c in r)]
    rows = [(ln, r) for ln, r in rows if not r[0].startswith("#")]

    def problem(line, column, message):
        problems.append(PlantDataProblem(name, line, column, message))

    if len(rows) < 3:
        problem(None, None, "needs a header row, a units row and at least one sample row "
                            "(see cases/README.md, 'Plant-sample files')")
        raise PlantDataError(problems)
    (h_line, header), (u_line, units), data = rows[0], rows[1], rows[2:]
    lower = [h.lower() for h in header]
    for req in REQUIRED:
        if req not in lower:
            problem(h_line, req, f"missing column '{req}'; add it to the header row")
    seen = {}
    for k, h in enumerate(header):
        if not h:
            problem(h_line, f"{k + 1}", "empty column name; name the column or delete it")
        elif h.lower() in seen:
            problem(h_line, h, f"column '{h}' appears twice; keep one")
        seen[h.lower()] = k
    if len(units) != len(header):
        problem(u_line, None, f"the units row has {len(units)} entries for {len(header)} columns; "
                              "give one unit under every column")
    if problems:
        raise PlantDataError(problems)

    unit_of = dict(zip(header, units))
    species_cols: dict[str, int] = {}
    basis = None
    water_col = None
    water_scale = 1.0
    col_scale: dict[str, float] = {}
    for k, h in enumerate(header):
        u = units[k]
        low = h.lower()
        if low == "time":
            if u != TIME_UNIT:
                problem(u_line, h, f"unit {u!r}: the time column's unit must be '{TIME_UNIT}' "
                                   "(times such as 2026-01-05T08:00)")
            continue
        if low in ("temperature", "pressure"):
            kind = low
            if not u:
                problem(u_line, h, f"{kind} without unit; write e.g. "
                                   f"{'degC or K' if kind == 'temperature' else 'bar or kPa (absolute)'}")
            elif u.lower() in GAUGE_UNITS:
                problem(u_line, h, f"unit {u!r} is a gauge pressure; convert to absolute and write bar, kPa or psi")
            else:
                try:
                    to_si(f"1 {u}", kind)
                except UnitError:
                    problem(u_line, h, f"unit {u!r} is not a {kind} unit; write e.g. "
                                       f"{'degC or K' if kind == 'temperature' else 'bar or kPa (absolute)'}")
            continue
        try:
            sp = db.resolve(h)
        except UnknownSpeciesError as exc:
            problem(h_line, h, f"{exc}; name a species of the database or remove the column")
            continue
        if not db.species[sp].is_gas:
            problem(h_line, h, f"{sp} is not a gas; the analysis lists gas species only")
            continue
        if sp in species_cols or (sp == "H2O" and water_col is not None):
            problem(h_line, h, f"{sp} appears twice (names and aliases); keep one column")
            continue
        if u not in ANALYSIS_UNITS:
            problem(u_line, h, f"unit {u!r}: write the analysis unit as one of "
                               + ", ".join(f"'{a}'" for a in ANALYSIS_UNITS))
            continue
        scale, col_basis = ANALYSIS_UNITS[u]
        if sp == "H2O" and col_basis == "wet" and (basis == "dry" or any(
                ANALYSIS_UNITS.get(unit_of[c], (0, ""))[1] == "dry" for c in header if c != h)):
            water_col, water_scale = k, scale        # separately measured water of a dry analysis
            continue
        if sp == "H2O" and col_basis == "dry":
            problem(u_line, h, "water cannot be on a dry basis; give it in 'mol% wet' or leave it out")
            continue
        if basis is None:
            basis = col_basis
        elif col_basis != basis:
            problem(u_line, h, f"basis '{col_basis}' differs from the other analysis columns ('{basis}'); "
                               "give the whole analysis on one basis")
            continue
        species_cols[sp] = k
        col_scale[sp] = scale
    if not species_cols and not problems:
        problem(h_line, None, "no analysis columns; add one column per species after time, temperature, pressure")
    if problems:
        raise PlantDataError(problems)

    n = len(data)
    times = np.empty(n, dtype="datetime64[s]")
    T = np.full(n, np.nan)
    P = np.full(n, np.nan)
    readings = {sp: np.full(n, np.nan) for sp in species_cols}
    water = np.full(n, np.nan) if water_col is not None else None
    i_time, i_T, i_P = (lower.index(c) for c in REQUIRED)
    for q, (ln, row) in enumerate(data):
        if len(row) != len(header):
            problem(ln, None, f"{len(row)} entries for {len(header)} columns; fix the row or delete it")
            continue
        try:
            times[q] = _parse_time(row[i_time])
        except ValueError:
            problem(ln, header[i_time], f"{row[i_time]!r} is not an ISO 8601 time; write e.g. 2026-01-05T08:00")
        values = {}
        for label, k in [(header[i_T], i_T), (header[i_P], i_P)] + \
                [(header[k], k) for k in species_cols.values()] + \
                ([(header[water_col], water_col)] if water_col is not None else []):
            cell = row[k]
            try:
                v = float(cell)
            except ValueError:
                problem(ln, label, f"{cell!r} is not a number; " +
                        ("fill in the reading or delete the row" if not cell else "write a plain number"))
                continue
            if not np.isfinite(v):
                problem(ln, label, f"{cell!r} is not a finite number; correct it or delete the row")
                continue
            if v < 0:
                problem(ln, label, f"negative reading {cell}; correct it or delete the row")
                continue
            values[k] = v
        if i_T in values:
            T[q] = to_si(f"{values[i_T]} {units[i_T]}", "temperature")
            if T[q] <= 0:
                problem(ln, header[i_T], f"{row[i_T]} {units[i_T]} is not above absolute zero")
        if i_P in values:
            P[q] = to_si(f"{values[i_P]} {units[i_P]}", "pressure")
            if P[q] <= 0:
                problem(ln, header[i_P], "pressure must be above zero (absolute)")
        if all(k in values for k in species_cols.values()):
            total = 0.0
            for sp, k in species_cols.items():
                readings[sp][q] = values[k] * col_scale[sp]
                total += values[k] * col_scale[sp]
            if abs(100.0 * total - 100.0) > closure_tolerance:
                problem(ln, None, f"the analysis sums to {100 * total:.2f} mol%, not 100 ± {closure_tolerance:g}; "
                                  "check the readings or add the missing species")
        if water is not None and water_col in values:
            water[q] = values[water_col] * water_scale
            if water[q] >= 1.0:
                problem(ln, header[water_col], "water must be below 100 mol% of the wet gas")
    if n > 1 and not problems:
        back = np.flatnonzero(np.diff(times) <= np.timedelta64(0, "s"))
        for q in back:
            problem(data[q + 1][0], header[i_time], "time is not later than the row before; sort the rows by time")
    if problems:
        raise PlantDataError(problems)
    return PlantSamples(source=name, times=times, T=T, P=P, basis=basis, analysis=readings, water=water,
                        units=dict(unit_of))


@dataclass(frozen=True)
class PlantTrend:
    """Approach to equilibrium sample by sample, with the trend over time.

    Attributes
    ----------
    samples : PlantSamples
    result : ApproachResult
    """

    samples: PlantSamples = field(repr=False)
    result: ApproachResult = field(repr=False)

    def drift(self, reaction) -> tuple[float, float]:
        """Least-squares line through the usable samples' approach:
        (approach at the first sample time [K], change per 30 days [K]).  NaN with fewer than
        two usable samples."""
        rec = self.result[reaction]
        use = self.result.usable
        if use.sum() < 2:
            return float("nan"), float("nan")
        days = (self.samples.times - self.samples.times[0]) / np.timedelta64(1, "D")
        slope, intercept = np.polyfit(days[use].astype(float), rec.approach[use], 1)
        return float(intercept), float(30.0 * slope)

    def table(self) -> tuple[list[str], list[list]]:
        """Trend table: header (units in brackets) and rows; T_eq and ΔT are blank where the
        sample is not usable, and the flags column says why."""
        header = ["time", "T [degC]"]
        for rec in self.result.reactions:
            header += [f"T_eq {rec.text} [degC]", f"approach {rec.text} [K]"]
        header.append("flags")
        flags = self.result.flags()
        rows = []
        for q in range(len(self.samples)):
            row = [str(self.samples.times[q]), round(float(self.samples.T[q]) - 273.15, 2)]
            for rec in self.result.reactions:
                ok = bool(self.result.usable[q])
                row += [round(float(rec.equilibrium_temperature[q]) - 273.15, 2) if ok else "",
                        round(float(rec.approach[q]), 2) if ok else ""]
            row.append(flags[q])
            rows.append(row)
        return header, rows

    def write_csv(self, path: str | Path) -> None:
        """Write :meth:`table` as CSV."""
        header, rows = self.table()
        with open(path, "w", newline="", encoding="utf-8") as fh:
            w = csv.writer(fh)
            w.writerow(header)
            w.writerows(rows)


def plant_trend(source: str | Path | PlantSamples, reactions, *, steam_ratio=None,
                feed: Mapping[str, float] | None = None, balance_tolerance: float = 0.02,
                gas_model: str = "ideal", closure_tolerance: float = CLOSURE_TOLERANCE,
                database: SpeciesDatabase | None = None) -> PlantTrend:
    """Read a sample file (or take checked samples) and compute the approach to equilibrium.

    Parameters
    ----------
    source : path or PlantSamples
    reactions : str | sequence of str
        Written in the direction the bed drives them.
    steam_ratio : float, optional
        Feed steam-to-carbon ratio [mol/mol] for a dry analysis without a water column.
    feed : mapping, optional
        Relative feed amounts for the per-sample element-balance check (e.g.
        ``{"CH4": 1, "H2O": 3}``); samples off by more than ``balance_tolerance`` are flagged
        and left out of the trend.
    gas_model, database
        As for :func:`approach_to_equilibrium`.

    Returns
    -------
    PlantTrend
    """
    samples = source if isinstance(source, PlantSamples) else read_plant_samples(
        source, closure_tolerance=closure_tolerance, database=database)
    kwargs = {}
    if samples.basis == "dry":
        if samples.water is not None:
            if steam_ratio is not None:
                raise PlantDataError([PlantDataProblem(samples.source, None, "H2O",
                                                       "the file gives the water; drop steam_ratio")])
            kwargs["water"] = samples.water
        elif steam_ratio is None:
            raise PlantDataError([PlantDataProblem(
                samples.source, None, None, "a dry analysis without an H2O column needs the feed "
                "steam-to-carbon ratio (steam_ratio=...) to restore the water")])
        else:
            kwargs["steam_ratio"] = steam_ratio
    result = approach_to_equilibrium(reactions, samples.analysis, samples.T, samples.P, basis=samples.basis,
                                     gas_model=gas_model, database=database, feed=feed,
                                     balance_tolerance=balance_tolerance, **kwargs)
    return PlantTrend(samples=samples, result=result)
