"""The target questions of a run: the temperature, pressure or feed ratio that gives a
target conversion, as a table and one finding per answer.
"""
from __future__ import annotations

import numpy as np

from ..studies.inverse import feed_ratio_for_conversion, pressure_for_conversion, temperature_for_conversion
from ..studies.answers import NOT_REACHABLE, RANGE_END
from .context import RunContext, api_ratio
from .numbers import ZERO_CELSIUS, celsius, temperature_text
from .records import Table


def run_targets(run: RunContext) -> None:
    """Answer each target question (temperature, pressure or feed ratio for a target conversion):
    the targets table, one finding per answer, the design points of the conversion figure."""
    c = run.case
    kw = run.common()
    rows = []
    with run.study("target questions"):
        for qi, q in enumerate(c.studies.targets):
            if q.solve_for == "temperature":
                Ps = [q.pressure] if q.pressure else list(c.pressures)
                ans = temperature_for_conversion(list(c.species), c.feed, np.array(Ps), c.key, q.conversion,
                                                 T_range=q.search, **kw)
                run.temperature_answers[qi] = (Ps, ans)
                Ts, reached = np.atleast_1d(ans.T), np.atleast_1d(ans.reached)
                msgs = np.atleast_1d(ans.message)
                statuses = np.atleast_1d(ans.status)
                flags = np.atleast_1d(ans.flags)
                xs = np.atleast_1d(ans.conversion_at_T)
                best = np.atleast_1d(ans.best_conversion)
                for i, P in enumerate(Ps):
                    run.target_rows.append((qi, i))
                    rows.append([q.label, "temperature", f"{P / 1e5:g} bar", 100 * q.conversion,
                                 float(celsius(Ts[i])) if reached[i] else float("nan"), "degC", bool(reached[i]),
                                 str(statuses[i]), 100 * float(best[i]), str(msgs[i])])
                    _caution_status(run, f"{q.label} at {P / 1e5:g} bar", str(statuses[i]), "temperature",
                                    str(flags[i]))
                    if reached[i]:
                        run.design_points.append((f"{Ts[i] - ZERO_CELSIUS:.0f} °C ({P / 1e5:g} bar)",
                                                   float(Ts[i]), float(xs[i])))
                        run.design_keys.append((qi, i))
                        run.rec.temperatures(np.atleast_1d(ans.T_equilibrium)[i])
                    head = (f"{q.label} at {P / 1e5:g} bar: {temperature_text(float(Ts[i]))}. " if reached[i] else
                            f"{q.label} at {P / 1e5:g} bar: not reached. ")
                    run.findings.append(head + str(msgs[i]) + ".")
                run.target_line = q.conversion if run.target_line is None else run.target_line
            elif q.solve_for == "pressure":
                ans = pressure_for_conversion(list(c.species), c.feed, q.temperature, c.key, q.conversion,
                                              P_range=q.search, **kw)
                reached = bool(ans.reached)
                run.rec.temperatures([q.temperature])
                run.target_rows.append((qi, None))
                rows.append([q.label, "pressure", f"{q.temperature - ZERO_CELSIUS:g} degC", 100 * q.conversion,
                             float(ans.P) / 1e5 if reached else float("nan"), "bar", reached, str(ans.status),
                             100 * float(ans.best_conversion), str(ans.message)])
                _caution_status(run, q.label, str(ans.status), "pressure", str(ans.flags))
                head = f"{q.label}: {float(ans.P) / 1e5:.4g} bar. " if reached else f"{q.label}: not reached. "
                run.findings.append(head + f"{ans.message}.")
            else:
                P = q.pressure or c.pressures[0]
                lo, hi = q.search
                ans = feed_ratio_for_conversion(list(c.species), c.feed, q.temperature, P, c.key, q.conversion,
                                                ratio=api_ratio(q.feed_ratio), ratio_range=(lo, hi), **kw)
                reached = bool(ans.reached)
                run.rec.temperatures([q.temperature])
                run.target_rows.append((qi, None))
                rows.append([q.label, q.feed_ratio.label,
                             f"{q.temperature - ZERO_CELSIUS:g} degC, {P / 1e5:g} bar", 100 * q.conversion,
                             float(ans.ratio) if reached else float("nan"), "mol/mol", reached, str(ans.status),
                             100 * float(ans.best_conversion), str(ans.message)])
                _caution_status(run, q.label, str(ans.status), q.feed_ratio.label, str(ans.flags))
                head = (f"{q.label}: {q.feed_ratio.label} {float(ans.ratio):.4g}. " if reached else
                        f"{q.label}: not reached. ")
                run.findings.append(head + f"{ans.message}.")
    cols = ["question", "solve for", "fixed condition", f"target conversion {c.key} [%]", "answer [value]",
            "answer unit", "reached [-]", "status", "best conversion in range [%]", "message"]
    run.add_table(Table("targets", "Target questions", cols, rows,
                         note="The answer is the operating value; with an approach margin the equilibrium "
                              "is taken that many kelvin on the side that lowers conversion. Status: reached "
                              "(the target is crossed inside the search range), search-range end (met over the "
                              "whole range: the answer is the end of the range, not a limit) or not reachable."))


def _caution_status(run: RunContext, where: str, status: str, what: str, flags: str = "") -> None:
    """A "range-end" or "not-reachable" caution for an answer that is not a crossing, and an
    "extrapolation" or "condensation" caution where the state at the answer is flagged."""
    if "outside data range" in flags:
        run.add_caution("extrapolation", where, f"The state at this answer is not trustworthy ({flags}): the "
                                                "species data are extrapolated there.")
    if "condensation possible" in flags:
        run.add_caution("condensation", where, "At this answer the gas may condense (a liquid-like root of the "
                                               "equation of state is more stable): the gas-phase answer does not apply.")
    if status == RANGE_END:
        run.add_caution("range-end", where, f"The target is met over the whole search range, so the {what} given "
                                            "is the end of the range, not a limit: widen the search range to find "
                                            "the limit.")
    elif status == NOT_REACHABLE:
        run.add_caution("not-reachable", where, f"The target is not reached anywhere in the {what} search range.")
