"""Tables of a run as data: the long-format conversion map, and a table as CSV text.
"""
from __future__ import annotations

import csv
import io

import numpy as np

from ..casefile.schema import Case
from .numbers import bar, celsius, csv_cell
from .records import Table


def csv_text(table: Table) -> str:
    """The table as CSV text (units in the header row; missing values left empty).

    >>> print(csv_text(Table("t", "T", ["T [K]", "conversion [-]", "converged [-]"],
    ...                      [[700.0, 0.25, True], [800.0, float("nan"), False]])), end="")
    T [K],conversion [-],converged [-]
    700,0.25,1
    800,,0
    """
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(table.columns)
    for row in table.rows:
        w.writerow([csv_cell(v) for v in row])
    return buf.getvalue()


def long_table(name: str, title: str, m, case: Case, ratio=None) -> Table:
    """A conversion map in long format: one row per grid point, units in the headers."""
    shape = m.shape
    T = np.broadcast_to(m.T, shape).reshape(-1)
    P = np.broadcast_to(m.P, shape).reshape(-1)
    cols = ["T [degC]", "T [K]", "P [bar]"]
    data = [celsius(T), T, bar(P)]
    if ratio is not None:
        fr, values = ratio
        cols.append(f"{fr.label} [mol/mol]")
        data.append(np.broadcast_to(values.reshape((1,) * (len(shape) - 1) + (-1,)), shape).reshape(-1))
    if m.approach:
        cols.append("T equilibrium [degC]")
        data.append(celsius(np.asarray(m.T_equilibrium).reshape(-1)))
    cols.append(f"conversion {case.key} [-]")
    data.append(np.asarray(m.conversion).reshape(-1))
    if m.product_yield is not None:
        cols.append(f"yield {m.product} [mol/mol {case.key} fed]")
        data.append(np.asarray(m.product_yield).reshape(-1))
    for sp, y in m.mole_fractions.items():
        cols.append(f"y {sp} [-]")
        data.append(np.asarray(y).reshape(-1))
    cols.append(f"reaction enthalpy [kJ/mol {case.key} converted]")
    data.append(np.asarray(m.reaction_enthalpy).reshape(-1) / 1000.0)
    if m.carbon_activity is not None:
        cols.append("graphite activity [-]")
        data.append(np.asarray(m.carbon_activity).reshape(-1))
    cols.append("converged [-]")
    data.append(np.asarray(m.converged).reshape(-1).astype(int))
    if getattr(m, "trustworthy", None) is not None:
        cols += ["trustworthy [-]", "flags [text]"]
        data += [np.asarray(m.trustworthy).reshape(-1).astype(int), np.asarray(m.flags, dtype=object).reshape(-1)]
    rows = [list(r) for r in zip(*[np.asarray(d).tolist() for d in data])]
    return Table(name, title, cols, rows, in_report=False,
                 note="Long format, one row per grid point.")