"""The checker that collects every problem of a case file with its key path and line.
"""
from __future__ import annotations

import difflib
import math
from typing import Mapping


from ...thermo.database import SpeciesDatabase, UnknownSpeciesError
from ...thermo.units import UnitError, excerpt, pure_number, scalar_to_si
from .schema import GRID_KEYS, LAYOUT_ID, LOW_T_MARGIN, MAX_POINTS, Grid
from .yaml_lines import CaseProblem, LineList, LineMap
# ====================================================================== the checker


class Checker:
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
        if isinstance(parent, LineMap):
            return parent.lines.get(key, parent.line)
        if isinstance(parent, LineList) and isinstance(key, int) and key < len(parent.lines):
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
                         + REQUIRED_HINTS.get(req, ""), getattr(value, "line", line))
        return value

    def duplicates(self, mapping: Mapping, path: str) -> None:
        """Report keys given twice in one block (YAML would silently keep the last)."""
        for k, line in getattr(mapping, "duplicates", ()):
            self.add(join_path(path, str(k)), f"key '{k}' appears twice in the same block; keep one", line)
        self.reported.add(id(mapping))

    def unknown_keys(self, mapping: Mapping, path: str, allowed: tuple) -> None:
        self.duplicates(mapping, path)
        for k in mapping:
            if k not in allowed:
                close = difflib.get_close_matches(str(k), allowed, n=1, cutoff=0.5)
                hint = f"did you mean '{close[0]}'?" if close else "valid keys here: " + ", ".join(allowed)
                self.add(join_path(path, str(k)), f"unknown key {excerpt(str(k))}; {hint}", self.line_of(mapping, k))

    def quantity(self, parent, key, path, kind, *, require_unit=True, positive=False) -> float | None:
        value = parent[key]
        line = self.line_of(parent, key)
        try:
            si = scalar_to_si(value, kind, require_unit=require_unit)
        except UnitError as exc:
            self.add(path, str(exc), line)
            return None
        if not math.isfinite(si):
            self.add(path, f"{excerpt(value)} is not a finite number", line)
            return None
        if kind == "temperature" and si <= 0:
            self.add(path, f"{excerpt(value)} is at or below absolute zero; give a temperature above 0 K", line)
            return None
        if positive and si <= 0:
            self.add(path, f"{excerpt(value)} must be greater than zero", line)
            return None
        return si

    def integer(self, parent, key, path, low: int, high: int) -> int | None:
        value = parent[key]
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) \
                or int(value) != value:
            self.add(path, f"{excerpt(value)} is not a whole number; give a count such as {max(low, 5)}",
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
            self.add(path, f"{excerpt(value)} is not true or false; write true or false", self.line_of(parent, key))
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
            self.add(path, f"low ({excerpt(g['low'])}) is above high ({excerpt(g['high'])}); swap them", self.line_of(g, "low"))
            return None
        if hi == lo and n > 1:
            self.add(path, f"low and high are equal ({excerpt(g['low'])}); widen the range or set points: 1",
                     self.line_of(g, "low"))
            return None
        return Grid(lo, hi, n)

    def ratio_number(self, parent, key, path) -> float | None:
        try:
            v = pure_number(parent[key])
        except UnitError as exc:
            self.add(path, str(exc) + "; give a ratio in mol/mol such as 3.0", self.line_of(parent, key))
            return None
        if not math.isfinite(v) or v < 0:
            self.add(path, f"{excerpt(parent[key])}: a feed ratio must be zero or positive", self.line_of(parent, key))
            return None
        return v


_TYPE_WORDS = {"LineList": "a list", "list": "a list", "str": "text", "int": "a number", "float": "a number",
               "bool": "true/false"}

REQUIRED_HINTS = {
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


def report_non_finite(ck: Checker, doc) -> int:
    """Report every number of the document that is not finite (YAML ``.nan``, ``.inf``,
    ``1e999``); returns how many.  Done once before the checks, so none of them meets one."""
    found = 0
    stack = [(doc, "")]
    while stack:
        node, path = stack.pop()
        items = node.items() if isinstance(node, Mapping) else enumerate(node) if isinstance(node, list) else ()
        for key, value in items:
            sub = join_path(path, key if isinstance(node, list) else str(key))
            if isinstance(value, float) and not math.isfinite(value):
                ck.add(sub, f"{value!r} is not a finite number; give a finite value", ck.line_of(node, key))
                found += 1
            elif isinstance(value, (Mapping, list)):
                stack.append((value, sub))
    return found


def join_path(path: str, key) -> str:
    if isinstance(key, int):
        return f"{path}[{key}]"
    return f"{path}.{key}" if path else str(key)


def resolve_species(ck: Checker, db: SpeciesDatabase, name, path: str, line) -> str | None:
    if not isinstance(name, str) or not name.strip():
        ck.add(path, f"{excerpt(name)} is not a species name; write a name such as NH3", line)
        return None
    try:
        return db.resolve(name)
    except UnknownSpeciesError as exc:
        ck.add(path, f"{exc} (or add it under user_species with its data)", line)
        return None


def check_critical(ck, db, species, path, line):
    missing = [n for n in species if db[n].is_gas and db[n].critical is None]
    if missing:
        ck.add(path, "peng-robinson needs critical constants, which the data lack for "
               + ", ".join(missing) + "; use gas_model: ideal, or give critical constants under user_species", line)


def check_data_range(ck, records, low: float, high: float, path: str, line) -> bool:
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
