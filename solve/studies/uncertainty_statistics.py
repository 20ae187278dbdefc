"""Statistics shared by the uncertainty studies: coverage factors, quantiles, variance
shares and the ranking of the data by their contribution (JCGM 100:2008, the GUM; JCGM
101:2008 for Monte Carlo)."""
from __future__ import annotations
import numbers
import statistics
import warnings
from dataclasses import dataclass
from typing import Sequence

import numpy as np

from ...thermo.data_uncertainty import METHODS, UncertainDatum, UncertaintyInputError


# =========================================================================== statistics helpers
def coverage_factor(level: float) -> float:
    return statistics.NormalDist().inv_cdf(0.5 + level / 2.0)


def check_method(method: str, samples: int, level: float, seed=None):
    """Refuse (UncertaintyInputError) an unknown method, a coverage ``level`` outside
    [0.5, 1), a Monte Carlo ``samples`` that is not a whole number from 20 to 100000, or a
    ``seed`` that is neither None nor a whole number."""
    if method not in METHODS:
        raise UncertaintyInputError(f"method {method!r}: use one of {', '.join(METHODS)}")
    if (isinstance(level, (bool, np.bool_)) or not isinstance(level, numbers.Real)
            or not (0.5 <= float(level) < 1.0)):
        raise UncertaintyInputError(f"level {level!r}: give a coverage probability from 0.5 to below 1, e.g. 0.95")
    if method == "monte-carlo" and (isinstance(samples, (bool, np.bool_)) or not isinstance(samples, numbers.Integral)
                                    or not 20 <= samples <= 100_000):
        raise UncertaintyInputError(f"samples {samples!r}: give a whole number from 20 to 100000")
    if seed is not None and (isinstance(seed, (bool, np.bool_)) or not isinstance(seed, numbers.Integral)
                             or seed < 0):
        raise UncertaintyInputError(f"seed {seed!r}: give None or a whole number >= 0")


_HUGE = 1e300


def quantiles(values: np.ndarray, qs: Sequence[float]) -> np.ndarray:
    """Quantiles along axis 0 ignoring NaN (failed solves); ±inf (censored: beyond the search
    range) count as samples and give ±inf where a quantile falls among them."""
    v = np.where(np.isposinf(values), _HUGE, np.where(np.isneginf(values), -_HUGE, values))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        q = np.nanquantile(v, qs, axis=0)
    q = np.where(q > 1e290, np.inf, np.where(q < -1e290, -np.inf, q))
    return q


def share_rows(c: np.ndarray, u: np.ndarray):
    contrib = (c * u) ** 2
    total = contrib.sum(axis=-1, keepdims=True)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = np.where(total > 0, contrib / total, 0.0)
    return contrib, share


@dataclass(frozen=True)
class RankedDatum:
    """One entry of a sensitivity ranking.

    Attributes
    ----------
    rank : int
        1 for the datum that moves the answer most.
    datum : UncertainDatum
    sensitivity : float
        Sensitivity coefficient ∂answer/∂datum [answer unit per datum unit].
    contribution : float
        |sensitivity| × u: the answer's standard uncertainty from this datum alone [answer unit].
    share : float
        Share of the answer's variance (c u)²/u(answer)² [-].
    """

    rank: int
    datum: UncertainDatum
    sensitivity: float
    contribution: float
    share: float


def rank_data(data, c: np.ndarray, u: np.ndarray, by: str) -> tuple:
    """Ranking from sensitivities c of shape (n_states, n_data) (shares averaged over states)."""
    c = np.atleast_2d(c)
    ok = np.all(np.isfinite(c), axis=1)
    if not ok.any():
        return ()
    c = c[ok]
    contrib, share = share_rows(c, u)
    mean_share = share.mean(axis=0)
    mean_contrib = np.sqrt(contrib.mean(axis=0))
    mean_c = c.mean(axis=0)
    keep = [k for k in range(len(data)) if u[k] > 0]        # data known exactly cannot move the answer
    if by == "species":
        groups: dict[str, list[int]] = {}
        for k in keep:
            groups.setdefault(data[k].species, []).append(k)
        items = []
        for sp, ks in groups.items():
            items.append((float(mean_share[ks].sum()), sp, float(np.sqrt((contrib[:, ks].sum(axis=1)).mean()))))
        items.sort(key=lambda t: -t[0])
        return tuple((i + 1, sp, contr, sh) for i, (sh, sp, contr) in enumerate(items))
    if by != "datum":
        raise UncertaintyInputError(f"by={by!r}: use 'datum' or 'species'")
    order = sorted(keep, key=lambda k: (-mean_share[k], -abs(mean_c[k] * u[k]), k))
    return tuple(RankedDatum(i + 1, data[k], float(mean_c[k]), float(mean_contrib[k]), float(mean_share[k]))
                 for i, k in enumerate(order))


def percent_labels(level: float) -> tuple[str, str]:
    lo = 50.0 * (1.0 - level)
    return f"{lo:.3g} %", f"{100.0 - lo:.3g} %"


def ranking_rows(ranking: Sequence[RankedDatum], *, answer_unit: str = "K", top: int | None = None) -> list[dict]:
    """Table rows of a sensitivity ranking, headers carrying units.

    Columns: ``rank``, ``datum``, ``u`` and ``unit of u`` (J/mol or J/(mol K)), ``origin``,
    ``sensitivity [answer unit per datum unit]``, ``contribution [answer unit]``,
    ``share of variance [%]``.

    Examples
    --------
    >>> from eqdesign.solve import temperature_interval
    >>> t = temperature_interval(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, "200 bar", "N2", 0.2,
    ...                          T_range=(500, 1000), method="linear")
    >>> row = ranking_rows(t.ranking(), top=1)[0]
    >>> row["datum"], round(row["contribution [K]"], 1), round(row["share of variance [%]"])
    ('ΔfH°(NH3)', 5.4, 99)
    """
    rows = []
    for e in list(ranking)[:top]:
        d = e.datum
        rows.append({"rank": e.rank, "datum": d.label, "u": d.u, "unit of u": d.unit, "origin": d.origin,
                     f"sensitivity [{answer_unit} per {d.unit}]": e.sensitivity,
                     f"contribution [{answer_unit}]": e.contribution, "share of variance [%]": 100.0 * e.share})
    return rows
