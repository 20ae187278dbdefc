"""The ``feed`` block of a case file: composition (mol%, flows, amounts or relative numbers)
and an optional total flow.
"""
from __future__ import annotations

import math
from typing import Mapping

from ...thermo.database import SpeciesDatabase
from ...thermo.species import Species
from ...thermo.units import UnitError, dimension_name, excerpt, is_quantity, parse_quantity, percent_value, scalar_to_si
from .checker import Checker, join_path, resolve_species
from .schema import FEED_KEYS


def read_feed(doc, ck: Checker, db: SpeciesDatabase):
    """(feed {species: mol per mol of feed}, total flow [mol/s] or None, entries as written);
    (None, None, ()) on a problem."""
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
        path = join_path("feed.composition", str(raw_name))
        line = ck.line_of(comp, raw_name)
        name = resolve_species(ck, db, str(raw_name), path, line)
        if name is None:
            ok = False
            continue
        if name in amounts:
            ck.add(path, f"{raw_name} names {name} again; give each species once", line)
            ok = False
            continue
        try:
            kind, amount = _feed_amount(value, db[name])
        except UnitError as exc:
            ck.add(path, str(exc), line)
            ok = False
            continue
        if not math.isfinite(amount):
            ck.add(path, f"{excerpt(value)} is not a finite amount", line)
            ok = False
            continue
        if amount < 0:
            ck.add(path, f"{excerpt(value)} is negative; feed amounts must be zero or positive", line)
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
        flow = _total_flow(ck, feed_sec, kind, amounts, total, db)
        if flow is None:
            return None, None, ()
    feed = {n: a / total for n, a in amounts.items()}
    return feed, flow, as_given


def _total_flow(ck: Checker, feed_sec, kind: str, amounts: dict, total: float, db: SpeciesDatabase) -> float | None:
    """``feed.flow`` [mol/s], a molar flow or a mass flow through the feed's mean molar mass."""
    if kind == "flow":
        ck.add("feed.flow", "the composition already gives flows; remove feed.flow or give the composition "
               "in mol%", ck.line_of(feed_sec, "flow"))
        return None
    mean_mass = sum(amounts[n] / total * db[n].molar_mass for n in amounts) / 1000.0   # kg/mol
    try:
        q = parse_quantity(feed_sec["flow"])
        if is_quantity(q) and q.check("[mass] / [time]"):
            flow = float(q.to("kg/s").magnitude) / mean_mass
        else:
            flow = scalar_to_si(feed_sec["flow"], "molar_flow")
    except UnitError as exc:
        ck.add("feed.flow", str(exc), ck.line_of(feed_sec, "flow"))
        return None
    if flow <= 0:
        ck.add("feed.flow", f"{excerpt(feed_sec['flow'])} must be above zero", ck.line_of(feed_sec, "flow"))
        return None
    return flow


_KIND_WORDS = {"percent": "mol%", "flow": "flows (e.g. kmol/h)", "amount": "amounts (e.g. kmol)",
               "relative": "plain numbers"}


def _feed_amount(value, sp: Species) -> tuple[str, float]:
    """(kind, value) of one feed entry: percent [mol%], flow [mol/s], amount [mol], relative."""
    if isinstance(value, str):
        percent = percent_value(value)
        if percent is not None:
            return "percent", percent
    q = parse_quantity(value)
    if not is_quantity(q):
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
    raise UnitError(f"{excerpt(value)} is {dimension_name(q)}, not a feed amount; write mol%, a molar flow "
                       "('300 kmol/h'), an amount ('1 kmol'), a mass flow ('600 t/d') or a plain number")
