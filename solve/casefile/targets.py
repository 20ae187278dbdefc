"""The ``studies.targets`` block of a case file: design questions and their search ranges.
"""
from __future__ import annotations

import difflib
from typing import Mapping

import numpy as np

from ...thermo.units import UnitError, excerpt, fraction
from ..core.problem import element_matrix, invariant_basis, stoichiometric_matrix
from .checker import check_data_range
from .schema import SOLVE_FOR, SPAN_KEYS, TARGET_KEYS, FeedRatio, TargetQuestion
from .study_inputs import read_feed_ratio


def read_targets(sec, ck, ctx) -> list | None:
    """The ``studies.targets`` list: a :class:`TargetQuestion` per valid entry (None: not a list)."""
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
        question = _target(ck, q, path, i, ctx)
        if question is not None:
            out.append(question)
    return out


def _target(ck, q, path: str, i: int, ctx) -> TargetQuestion | None:
    """One checked target question (None on a problem, which is reported)."""
    label = ck.text(q, "label", f"{path}.label") or f"target {i + 1}"
    try:
        x = fraction(q["conversion"])
    except UnitError as exc:
        ck.add(f"{path}.conversion", str(exc), ck.line_of(q, "conversion"))
        return None
    if not 0.0 < x < 1.0:
        ck.add(f"{path}.conversion", f"{excerpt(q['conversion'])} is impossible: a conversion lies strictly between "
               "0 and 1 (0-100 %); give e.g. 0.25 or '25 %'", ck.line_of(q, "conversion"))
        return None
    if ctx.feed is not None and ctx.key is not None and ctx.records:
        x_max, limiting = _max_conversion(ctx)
        if x_max is not None and x > x_max + 1e-9:
            ck.add(f"{path}.conversion", f"{x:.4g} cannot be reached: with this feed at most {x_max:.4g} of "
                   f"{ctx.key} can react ({limiting} runs out first); lower the target or change the feed",
                   ck.line_of(q, "conversion"))
            return None
    solve_for = q["solve_for"]
    if solve_for not in SOLVE_FOR:
        close = difflib.get_close_matches(str(solve_for), SOLVE_FOR, n=1, cutoff=0.4)
        ck.add(f"{path}.solve_for", f"{excerpt(solve_for)} is not something eqdesign can solve for; use "
               + (f"'{close[0]}'" if close else "temperature, pressure or feed_ratio"), ck.line_of(q, "solve_for"))
        return None
    P = T = None
    if "pressure" in q:
        P = ck.quantity(q, "pressure", f"{path}.pressure", "pressure", positive=True)
        if P is None:
            return None
    if "temperature" in q:
        T = ck.quantity(q, "temperature", f"{path}.temperature", "temperature")
        if T is None:
            return None
        if ctx.records and not check_data_range(ck, ctx.records, T, T, f"{path}.temperature",
                                                 ck.line_of(q, "temperature")):
            return None
    unknown = _unknown_range(ck, q, path, solve_for, T, ctx)
    if unknown is None:
        return None
    search, ratio = unknown
    if "feed_ratio" in q and solve_for != "feed_ratio":
        ck.add(f"{path}.feed_ratio", "only used with solve_for: feed_ratio; remove it", ck.line_of(q, "feed_ratio"))
        return None
    return TargetQuestion(label, x, solve_for, P, T, search, ratio, path)


def _unknown_range(ck, q, path: str, solve_for: str, T, ctx) -> tuple | None:
    """(search range of the unknown in SI, feed ratio or None) of one question."""
    ratio = None
    if solve_for == "temperature":
        if "temperature" in q:
            ck.add(f"{path}.temperature", "is the unknown here (solve_for: temperature); remove it or set "
                   "search: {low, high} for the range searched", ck.line_of(q, "temperature"))
            return None
        search = _search_range(ck, q, path, "temperature", ctx)
        if search is None:
            return None
        if "search" in q and ctx.records and not check_data_range(
                ck, ctx.records, search[0], search[1], f"{path}.search", ck.line_of(q, "search")):
            return None
    elif solve_for == "pressure":
        if "pressure" in q:
            ck.add(f"{path}.pressure", "is the unknown here (solve_for: pressure); remove it or set "
                   "search: {low, high} for the range searched", ck.line_of(q, "pressure"))
            return None
        if T is None:
            ck.add(path, "missing key 'temperature': a pressure search needs a fixed temperature, e.g. "
                   "temperature: '450 degC'", getattr(q, "line", None))
            return None
        search = _search_range(ck, q, path, "pressure", ctx)
        if search is None:
            return None
    else:
        if "feed_ratio" not in q:
            ck.add(path, "missing key 'feed_ratio' (vary and per, e.g. {vary: H2O, per: CO, low: 1, high: 5})",
                   getattr(q, "line", None))
            return None
        if T is None:
            ck.add(path, "missing key 'temperature': a feed-ratio search needs a fixed temperature",
                   getattr(q, "line", None))
            return None
        ratio = read_feed_ratio(ck, q, "feed_ratio", f"{path}.feed_ratio", ctx, need_values=False)
        if ratio is None:
            return None
        if "search" in q:
            ck.add(f"{path}.search", "give the ratio range as feed_ratio.low and feed_ratio.high",
                   ck.line_of(q, "search"))
            return None
        lo_hi = ratio.values
        search = (min(lo_hi), max(lo_hi)) if len(lo_hi) >= 2 else (0.25 * _ratio_now(ratio, ctx),
                                                                   8.0 * _ratio_now(ratio, ctx))
    return search, ratio


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
    names = list(ctx.species)
    recs = [ctx.db[n] for n in names]
    if ctx.solver_reactions:
        C = invariant_basis(stoichiometric_matrix(ctx.reactions, names))
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
