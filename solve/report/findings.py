"""Helpers for the findings sentences and the uncertainty tables: which entries of a
sensitivity ranking to state, which way conversion moves through an answer, and the
citations and class bases behind the standard uncertainties used.
"""
from __future__ import annotations

import re

import numpy as np

#: Entries of each sensitivity ranking.
RANKING_TOP = 10
#: Data with a smaller share of the variance [-] are left out of a ranking (inert species).
RANKING_MIN_SHARE = 1e-6

RANKING_NOTE = (f"At most {RANKING_TOP} entries; data known exactly (ΔfH° of elements) and data with a share "
                f"below {100 * RANKING_MIN_SHARE:g} % (for example those of inert species) are not listed.")


def ranked(ranking) -> list:
    """The leading entries of a sensitivity ranking, negligible shares left out."""
    return [e for e in ranking if e.share >= RANKING_MIN_SHARE][:RANKING_TOP]


def falls_with_temperature(ans, i: int) -> bool | None:
    """Whether conversion falls with temperature through the i-th answer of a
    :class:`eqdesign.solve.studies.inverse.TemperatureAnswer` (None when unknown)."""
    if ans is None:
        return None
    crossings = np.asarray(ans.crossings, dtype=object).reshape(-1)
    if i >= crossings.size or not crossings[i]:
        return None
    T_eq = float(np.asarray(ans.T_equilibrium, dtype=float).reshape(-1)[i])
    if not np.isfinite(T_eq):
        return None
    nearest = min(crossings[i], key=lambda cr: abs(cr.value - T_eq))
    return not nearest.rising


def cited_references(data, defaults) -> list:
    """(key, citation) of the defaults' references behind the key values used."""
    out = []
    for d in data:
        if not d.origin.startswith("key value "):
            continue
        key = d.origin.split()[-1]
        ref = defaults.references.get(key)
        if isinstance(ref, dict) and key not in [k for k, _ in out]:
            cite = re.sub(r",?\s*https?://\S+", "", str(ref.get("cite", key))).strip()
            out.append((key, cite))
    return out


def classes_used(data, defaults) -> list:
    """(class, basis) of the class defaults used."""
    out = []
    for d in data:
        if not d.origin.startswith("class: "):
            continue
        name = d.origin[len("class: "):]
        basis = next((c["basis"] for c in defaults.classes if c["class"] == name), "")
        basis = re.sub(r"\s+", " ", re.sub(r"https?://\S+", "", basis)).strip()
        if name not in [n for n, _ in out]:
            out.append((name, basis))
    return out
