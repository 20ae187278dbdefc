"""What every study block of a case file needs: the context of the checked case, optional
study sections, and feed ratios (``vary`` per ``per``, with values or a range).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from ...thermo.database import SpeciesDatabase
from ...thermo.units import excerpt
from .checker import REQUIRED_HINTS, resolve_species
from .schema import GRID_KEYS, MAX_POINTS, RATIO_KEYS, SPAN_KEYS, FeedRatio, Grid
from .yaml_lines import LineMap


@dataclass
class StudyContext:
    """The checked parts of a case that the study blocks need (None where a block had problems)."""

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


def optional_section(sec, key, ck, path, allowed, required=()):
    """A study may be written as 'name: {}' or 'name: true' for its defaults."""
    value = sec[key]
    if value is True or value is None:
        return LineMap()
    return ck.section(sec, key, path, allowed, required, what="study")


def read_feed_ratio(ck, parent, key, path, ctx, *, need_values: bool) -> FeedRatio | None:
    """A feed ratio block; ``need_values``: values or low/high/points required (maps), else
    only an optional low/high range (a target's search)."""
    r = ck.section(parent, key, path, RATIO_KEYS, ("vary", "per"), what="feed-ratio")
    if r is None or "vary" not in r or "per" not in r:
        return None
    vary = resolve_species(ck, ctx.db, r["vary"], f"{path}.vary", ck.line_of(r, "vary"))
    per_raw = r["per"]
    per = "carbon" if isinstance(per_raw, str) and per_raw.strip().lower() == "carbon" else \
        resolve_species(ck, ctx.db, per_raw, f"{path}.per", ck.line_of(r, "per"))
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
                ck.add(path, f"missing key '{req}' of the ratio range" + REQUIRED_HINTS.get(req, ""),
                       getattr(r, "line", None))
                return None
        lo = ck.ratio_number(r, "low", f"{path}.low")
        hi = ck.ratio_number(r, "high", f"{path}.high")
        n = ck.integer(r, "points", f"{path}.points", 2, MAX_POINTS) if "points" in r else 2
        if lo is None or hi is None or n is None:
            return None
        if hi <= lo:
            ck.add(path, f"low ({excerpt(r['low'])}) must be below high ({excerpt(r['high'])})", ck.line_of(r, "low"))
            return None
        values = tuple(float(v) for v in Grid(lo, hi, n).values())
    elif need_values:
        ck.add(path, "give the ratios: values: [2.5, 3.0] or low, high and points", getattr(r, "line", None))
        return None
    if any(v <= 0 for v in values) and vary == ctx.key:
        ck.add(path, f"a zero ratio removes the key reactant {vary}; use ratios above zero", getattr(r, "line", None))
        return None
    return FeedRatio(vary, per, values, label)
