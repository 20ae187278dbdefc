"""Intervals on the answers of the inverse questions from the data uncertainty.

Temperature, pressure and feed ratio for a target conversion, by Monte Carlo (JCGM
101:2008) with every draw solved together, or linearised (the GUM law of propagation with
the implicit-function rule ``dT/dθ = −(∂X/∂θ)/(∂X/∂T)``).
"""
from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field
from typing import ClassVar, Mapping, Sequence

import numpy as np

from ...thermo.data_uncertainty import UncertaintyDefaults
from ...thermo.database import SpeciesDatabase
from ...thermo.reactions import bundled_database
from ...thermo.units import to_kelvin, to_pascal, to_si
from ..core.equilibrium import equilibrium
from .answers import InverseAnswer, shape_out
from .data_parameters import parameter_map
from .feeds import feed_ratio_spec
from .inverse import feed_ratio_for_conversion, pressure_for_conversion, temperature_for_conversion
from .roots import bracketed_roots
from .perturbed_system import BatchedSystem, batched_system, output_gibbs_derivatives
from .uncertainty import ASSUMPTIONS, ROOT_FTOL, ROOT_XTOL, T_STEP
from .uncertainty_statistics import check_method, coverage_factor, percent_labels, quantiles, rank_data


# =========================================================================== inverse: temperature
class _AnswerRanking:
    """Ranking shared by the interval results of the inverse questions."""

    def ranking(self, *, at=None, by: str = "datum") -> tuple:
        """Data ranked by their share of the answer's variance (averaged over the questions
        unless ``at`` picks one)."""
        c = self.sensitivity if at is None else self.sensitivity[at]
        return rank_data(self.data, np.reshape(c, (-1, len(self.data))), np.array([d.u for d in self.data]), by)


@dataclass(frozen=True)
class TemperatureUncertainty(_AnswerRanking, InverseAnswer):
    """The temperature for a target conversion, with its interval from data uncertainty.

    Scalars for one question; arrays of the broadcast shape of P and target otherwise.

    Attributes
    ----------
    T : float | ndarray
        Operating temperature with the nominal data [K] (NaN where the target is not reached).
    lower, median, upper : float | ndarray
        Interval ends at coverage ``level`` and the median [K]; ±inf where that share of the
        draws reaches the target only beyond ``T_range``.
    standard_uncertainty : float | ndarray
        u(T) [K]: sample standard deviation (Monte Carlo; NaN if any draw is beyond the range)
        or the linearised value.
    reached : bool | ndarray
        Whether the nominal answer exists in ``T_range``.
    beyond_range : float | ndarray
        Share of the draws whose answer lies outside ``T_range`` [-].
    sensitivity : ndarray, shape (*shape, n_data)
        dT/dθ_k by implicit differentiation, −(∂X/∂θ_k)/(∂X/∂T) [K per J/mol or K per J/(mol K)].
    data : tuple[UncertainDatum, ...]
    sample_T : ndarray | None
        Monte Carlo answers, shape (samples, *shape) [K].
    P, target, key, approach, method, level, samples, seed, message
    at_range_end : bool | ndarray
        The nominal target is met over the whole ``T_range`` (the value is a range end).
    value, unit, status, shape
        The shared answer shape (:class:`~eqdesign.solve.studies.answers.InverseAnswer`):
        ``value`` is ``T`` [K]; ``status`` per question ``"reached"``, ``"search-range end"``
        or ``"not reachable"``.
    """

    value_field: ClassVar[str] = "T"
    unit: ClassVar[str] = "K"

    T: object
    lower: object
    median: object
    upper: object
    standard_uncertainty: object
    reached: object
    beyond_range: object
    P: object
    target: object
    key: str
    method: str
    level: float
    samples: int
    seed: int | None
    sensitivity: np.ndarray = field(repr=False)
    data: tuple = field(repr=False)
    sample_T: np.ndarray | None = field(default=None, repr=False)
    n_failed: object = 0
    approach: float | None = None
    T_range: tuple = (np.nan, np.nan)
    message: object = ""
    at_range_end: object = False


    def summary(self, at=None) -> str:
        """One sentence per question, e.g. ``"temperature for 20 % conversion of N2 at 200 bar:
        833.2 K, 95 % interval 822.0 K to 842.0 K (Monte Carlo, 400 draws)"``; ``at`` picks the
        question of an array answer."""
        sel = (lambda v: np.asarray(v)[at] if at is not None else np.asarray(v))   # noqa: E731
        T, lo, hi, P, tg = (float(sel(v)) for v in (self.T, self.lower, self.upper, self.P, self.target))
        head = f"temperature for {100 * tg:.4g} % conversion of {self.key} at {P / 1e5:.4g} bar"
        if not math.isfinite(T):
            return f"{head}: not reached in {self.T_range[0]:g}-{self.T_range[1]:g} K"
        how = f"Monte Carlo, {self.samples} draws" if self.method == "monte-carlo" else "linearised"
        return (f"{head}: {T:.1f} K, {100 * self.level:.3g} % interval {_fmt_T(lo)} to {_fmt_T(hi)} "
                f"({how})")

    def rows(self) -> list[dict]:
        """One row per question, headers carrying units."""
        lo, hi = percent_labels(self.level)
        cols = {f"target conversion {self.key} [-]": self.target, "P [Pa]": self.P, "T [K]": self.T,
                f"T {lo} [K]": self.lower, "T median [K]": self.median, f"T {hi} [K]": self.upper,
                "u(T) [K]": self.standard_uncertainty, "draws beyond range [-]": self.beyond_range}
        flat = {k: np.asarray(v, dtype=float).reshape(-1) for k, v in cols.items()}
        n = flat["T [K]"].size
        return [{k: float(v[i]) for k, v in flat.items()} for i in range(n)]


def _fmt_T(x: float) -> str:
    if math.isinf(x):
        return "beyond the search range" if x > 0 else "below the search range"
    return f"{x:.1f} K"


# Stays long: nominal answer, its refinement and the interval, one sequential routine.
def temperature_interval(species: Sequence[str], feed: Mapping[str, object], P, key: str, target, *,
                         T_range=(300.0, 1500.0), reactions: Sequence[str] | None = None,
                         gas_model: str = "ideal", approach=None, database: SpeciesDatabase | None = None,
                         method: str = "monte-carlo", samples: int = 400, seed: int | None = 1,
                         level: float = 0.95, overrides: Mapping | None = None,
                         defaults: UncertaintyDefaults | None = None) -> TemperatureUncertainty:
    """Temperature at which the conversion of ``key`` reaches ``target``, with its interval.

    The nominal answer is that of :func:`eqdesign.solve.studies.inverse.temperature_for_conversion`
    (same rule for which crossing of the target counts), refined further.  Monte Carlo: for
    every draw of the data the crossing nearest the nominal one is bracketed and refined, all
    draws together (a vectorised Illinois regula falsi, one batched equilibrium call per
    iteration; no loop over draws).  Linearised: ``dT/dθ = −(∂X/∂θ)/(∂X/∂T)`` by central
    differences at the nominal answer (implicit-function rule).

    Parameters
    ----------
    species, feed, P, key, target, T_range, reactions, gas_model, approach, database
        As for :func:`eqdesign.solve.studies.inverse.temperature_for_conversion` (P [Pa], target [-],
        T_range [K], approach ΔT [K]).
    method, samples, seed, level, overrides, defaults
        As for :func:`propagate_equilibrium`.

    Returns
    -------
    TemperatureUncertainty

    Examples
    --------
    Ammonia from 1:3 N2:H2 at 200 bar: highest temperature giving 20 % conversion of N2,
    linearised:

    >>> r = temperature_interval(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, "200 bar", "N2", 0.20,
    ...                          T_range=(500, 1000), method="linear")
    >>> round(r.T, 1), round(r.standard_uncertainty, 1)
    (833.2, 5.4)
    """
    check_method(method, samples, level, seed)
    db = database or bundled_database()
    nominal = temperature_for_conversion(species, feed, P, key, target, T_range=T_range, reactions=reactions,
                                         gas_model=gas_model, approach=approach, database=db)
    dT = nominal.approach or 0.0
    shape = np.shape(nominal.T)
    T_op0 = np.asarray(nominal.T, dtype=float).reshape(-1)
    T_eq0 = np.asarray(nominal.T_equilibrium, dtype=float).reshape(-1)
    P_c = np.broadcast_to(np.asarray(nominal.P, dtype=float), shape).reshape(-1)
    tg = np.broadcast_to(np.asarray(nominal.target, dtype=float), shape).reshape(-1)
    m = T_op0.size
    lo, hi = float(to_kelvin(T_range[0])), float(to_kelvin(T_range[1]))
    reached = np.isfinite(T_op0) & np.isfinite(T_eq0)
    side = np.where(reached, np.sign(np.nan_to_num(T_eq0 - T_op0)), 0.0)   # +1: equilibrium at T + ΔT
    key_r = db.resolve(key)

    res_probe = equilibrium(species, feed, 0.5 * (lo + hi), P_c[0], reactions=reactions, gas_model=gas_model,
                            key=key_r, database=db, warn=False)
    names = list(res_probe.species)
    feed_one = np.asarray(res_probe.feed_array, dtype=float)[None, :]
    system = batched_system(feed_one, names, res_probe.gas_mask, key=key_r, reactions=res_probe.reactions,
                     gas_model=gas_model, database=db, binary_interaction=None)
    pm = parameter_map(names, database=db, overrides=overrides, defaults=defaults)

    def conversion_at(T, cases, shift=None):
        am, fe, _ = system.solve(T, P_c[cases], np.zeros(np.size(T), dtype=int), shift)
        return system.conversion(am, fe)

    T_eq_ref = T_eq0.copy()
    # refine the nominal crossing further (design stops at 1e-6 in conversion or 1e-4 K); a
    # nominal answer with no crossing nearby (target met over the whole range: the answer is
    # the end of the range, not fixed by the data) gets no interval
    crossing = np.zeros(m, dtype=bool)
    rc = np.flatnonzero(reached)
    for half_width in (0.05, 2.0, 20.0):
        if rc.size == 0:
            break
        lo_eq_c, hi_eq_c = lo + side[rc] * dT, hi + side[rc] * dT
        xa = np.maximum(T_eq0[rc] - half_width, lo_eq_c)
        xb = np.minimum(T_eq0[rc] + half_width, hi_eq_c)
        fab = conversion_at(np.concatenate([xa, xb]), np.concatenate([rc, rc])) - np.concatenate([tg[rc], tg[rc]])
        fa, fb = fab[:rc.size], fab[rc.size:]
        good = np.isfinite(fa) & np.isfinite(fb) & (np.sign(fa) != np.sign(fb))
        if good.any():
            gi = rc[good]

            def f_nom(x, idx, _gi=gi):
                return conversion_at(x, _gi[idx]) - tg[_gi[idx]]
            roots, _, okr = bracketed_roots(f_nom, xa[good], xb[good], fa[good], fb[good], xtol=ROOT_XTOL,
                                            ftol=ROOT_FTOL)
            T_eq_ref[gi] = np.where(okr, roots, T_eq0[gi])
            crossing[gi] = okr
        rc = rc[~good]
    T_nom = np.where(reached, T_eq_ref - side * dT, np.nan)
    found = _inverse_interval(
        conversion_at,
        lambda rows: output_gibbs_derivatives(_system_for_cases(system, P_c[rows]), T_eq_ref[rows], P_c[rows])[:, 0, :],
        T_eq_ref, crossing, tg, T_eq_ref, lo + side * dT, hi + side * dT, pm, method=method,
        samples=samples, seed=seed, level=level, x_step=T_STEP, min_width=0.5,
        temperature_of=lambda x, cases: x)
    sens = found["sens"]
    lower, median, upper = (found[k] - side * dT for k in ("lower", "median", "upper"))
    std, beyond, n_failed = found["spread"], found["beyond"], found["n_failed"]
    if method == "linear":
        median = T_nom.copy()
        n_samples, sample_T = 0, None
        msg = "linearised (implicit differentiation)"
    else:
        n_samples = samples
        sample_T = (found["samples"] - side[None, :] * dT).reshape((samples,) + shape)
        msg = f"Monte Carlo, {samples} draws, seed {seed}"
        if np.any(beyond > 0):
            msg += "; some draws reach the target only beyond the search range (interval ends shown as ±inf)"
        if np.any(n_failed):
            msg += f"; {int(np.sum(n_failed))} draw(s) failed to solve and are left out"
    messages = [m_ for m_ in np.asarray(nominal.message, dtype=object).reshape(-1)]
    if np.any(reached & ~crossing):
        msg += "; no interval where the nominal answer is the end of the search range (no crossing of the target)"
    full = [f"{msg}; {ASSUMPTIONS}; nominal: {t}" for t in messages]
    return TemperatureUncertainty(
        T=shape_out(T_nom, shape), lower=shape_out(lower, shape), median=shape_out(median, shape),
        upper=shape_out(upper, shape), standard_uncertainty=shape_out(std, shape),
        reached=shape_out(reached, shape), beyond_range=shape_out(beyond, shape), P=shape_out(P_c, shape),
        target=shape_out(tg, shape), key=key_r, method=method, level=float(level), samples=n_samples,
        seed=seed if method == "monte-carlo" else None, sensitivity=sens.reshape(shape + (len(pm.data),)),
        data=pm.data, sample_T=sample_T, n_failed=shape_out(n_failed, shape), approach=dT or None, T_range=(lo, hi),
        message=full[0] if not shape else np.array(full, dtype=object).reshape(shape),
        at_range_end=nominal.at_range_end)


@dataclass(frozen=True)
class PressureUncertainty(_AnswerRanking, InverseAnswer):
    """The pressure for a target conversion, with its interval from data uncertainty.

    Scalars for one question; arrays of the broadcast shape of T and target otherwise.

    Attributes
    ----------
    P : float | ndarray
        Pressure with the nominal data [Pa] (NaN where the target is not reached).
    lower, median, upper : float | ndarray
        Interval ends at coverage ``level`` and the median [Pa]; ±inf where that share of
        the draws reaches the target only beyond ``P_range``.
    relative_uncertainty : float | ndarray
        u(ln P) [-], the relative standard uncertainty of the pressure.
    reached, beyond_range, T, target, key, method, level, samples, seed, message, at_range_end
        As for :class:`TemperatureUncertainty` (T [K] is the operating temperature).
    value, unit, status, shape
        The shared answer shape: ``value`` is ``P`` [Pa].
    sensitivity : ndarray, shape (*shape, n_data)
        d ln P/dθ_k = −(∂X/∂θ_k)/(∂X/∂ln P) [per J/mol or per J/(mol K)].
    sample_P : ndarray | None
        Monte Carlo answers, shape (samples, *shape) [Pa].
    """

    value_field: ClassVar[str] = "P"
    unit: ClassVar[str] = "Pa"

    P: object
    lower: object
    median: object
    upper: object
    relative_uncertainty: object
    reached: object
    beyond_range: object
    T: object
    target: object
    key: str
    method: str
    level: float
    samples: int
    seed: int | None
    sensitivity: np.ndarray = field(repr=False)
    data: tuple = field(repr=False)
    sample_P: np.ndarray | None = field(default=None, repr=False)
    n_failed: object = 0
    P_range: tuple = (np.nan, np.nan)
    message: object = ""
    at_range_end: object = False


def _inverse_interval(conversion_at, dX_dg, x0, reached, tg, T_eq, lo, hi, pm, *, method, samples, seed,
                      level, x_step=1e-4, min_width=0.02, temperature_of=None) -> dict:
    """Interval of an inverse answer x (a search variable such as ln P or ln ratio) from the
    species-data uncertainty, for the questions ``reached``.

    ``conversion_at(x, cases, shift)`` gives the conversion at x for the questions
    ``cases`` with g° shifts ``shift`` (n, ns) [J/mol]; ``dX_dg(rows)`` gives ∂X/∂g°_j
    (r, ns) at the nominal answers of the questions ``rows``.  Linearised:
    dx/dθ = −(∂X/∂θ)/(∂X/∂x) (implicit-function rule).  Monte Carlo: every draw's
    crossing is bracketed about the nominal one (widened to the search range when it
    left) and refined by the vectorised Illinois regula falsi, all draws together.
    ``lo``, ``hi``: search range of x, scalars or one per question.  ``temperature_of(x,
    cases)``: the temperature [K] at which the data shifts apply (default: ``T_eq`` of the
    question; the search variable itself when it is the temperature).
    """
    m = x0.size
    lo = np.broadcast_to(np.asarray(lo, dtype=float), (m,))
    hi = np.broadcast_to(np.asarray(hi, dtype=float), (m,))
    if temperature_of is None:
        def temperature_of(x, cases):
            return T_eq[cases]
    u, nd = pm.u, len(pm.data)
    sens = np.full((m, nd), np.nan)
    sigma = np.full(m, np.nan)
    slope = np.full(m, np.nan)
    rc = np.flatnonzero(reached)
    if rc.size:
        xs = conversion_at(np.concatenate([x0[rc] + x_step, x0[rc] - x_step]), np.concatenate([rc, rc]), None)
        slope[rc] = (xs[:rc.size] - xs[rc.size:]) / (2 * x_step)
        dXdtheta = np.einsum("rj,rkj->rk", dX_dg(rc), pm.chain_factors(T_eq[rc]))
        sens[rc] = -dXdtheta / slope[rc][:, None]
        sigma[rc] = np.sqrt(((sens[rc] * u) ** 2).sum(axis=-1))
    out = dict(sens=sens, sigma=sigma, beyond=np.zeros(m), n_failed=np.zeros(m, dtype=int), samples=None)
    if method == "linear":
        z = coverage_factor(level)
        out.update(lower=x0 - z * sigma, median=x0.copy(), upper=x0 + z * sigma, spread=sigma)
        return out
    rng = np.random.default_rng(seed)
    theta = rng.standard_normal((samples, nd)) * u
    A, B = pm.shift_parts(theta)                                        # (S, ns)
    X = np.full((samples, m), np.nan)
    if rc.size:
        S, r = samples, rc.size
        s_idx = np.repeat(np.arange(S), r)
        c_idx = np.tile(rc, S)
        tgt = tg[c_idx]

        lo_c, hi_c = lo[c_idx], hi[c_idx]

        def f(x, idx):
            sh = A[s_idx[idx]] + temperature_of(x, c_idx[idx])[:, None] * B[s_idx[idx]]
            return conversion_at(x, c_idx[idx], sh) - tgt[idx]

        n_all = s_idx.size
        width = np.where(np.isfinite(sigma[c_idx]), 5.0 * sigma[c_idx] + min_width, hi_c - lo_c)
        a = np.maximum(x0[c_idx] - width, lo_c)
        b = np.minimum(x0[c_idx] + width, hi_c)
        fab = f(np.concatenate([a, b]), np.concatenate([np.arange(n_all), np.arange(n_all)]))
        fa, fb = fab[:n_all], fab[n_all:]
        same = np.isfinite(fa) & np.isfinite(fb) & (np.sign(fa) == np.sign(fb)) & (fa != 0)
        direction = -np.sign(slope[c_idx]) * np.sign(fa)                # +1: root above b
        censored = np.zeros(n_all)
        ext = np.flatnonzero(same & (direction != 0))
        if ext.size:
            up = direction[ext] > 0
            end = np.where(up, hi_c[ext], lo_c[ext])
            fe = f(end, ext)
            crosses = np.isfinite(fe) & (np.sign(fe) != np.sign(fa[ext]))
            na, nb = np.where(up, b[ext], end), np.where(up, end, a[ext])
            nfa, nfb = np.where(up, fb[ext], fe), np.where(up, fe, fa[ext])
            a[ext], b[ext], fa[ext], fb[ext] = na, nb, nfa, nfb
            stuck = ~crosses & np.isfinite(fe)
            censored[ext[stuck]] = direction[ext[stuck]]
        todo = np.flatnonzero((np.isfinite(fa) & np.isfinite(fb) & (np.sign(fa) != np.sign(fb)))
                              | (fa == 0) | (fb == 0))
        roots = np.full(n_all, np.nan)
        if todo.size:
            xr, _, okr = bracketed_roots(lambda x, idx: f(x, todo[idx]), a[todo], b[todo], fa[todo], fb[todo],
                                         xtol=ROOT_XTOL, ftol=ROOT_FTOL)
            roots[todo] = np.where(okr, xr, np.nan)
        roots = np.where(censored > 0, np.inf, np.where(censored < 0, -np.inf, roots))
        X[:, rc] = roots.reshape(S, r)
    lower, median, upper = quantiles(X, [0.5 - level / 2.0, 0.5, 0.5 + level / 2.0])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        spread = np.nanstd(np.where(np.isfinite(X), X, np.nan), axis=0, ddof=1)
    beyond = np.isinf(X).sum(axis=0) / samples
    out.update(lower=np.where(reached, lower, np.nan), median=np.where(reached, median, np.nan),
               upper=np.where(reached, upper, np.nan),
               spread=np.where(reached & (beyond == 0), spread, np.nan), beyond=beyond,
               n_failed=np.isnan(X).sum(axis=0) * reached, samples=X)
    return out


def _probe_temperature(T_eq, T_op) -> float:
    """A temperature [K] for the probe solve that fixes the species and phases: the mean
    equilibrium temperature of the answered questions, or the operating temperature where no
    question was answered (its T_equilibrium is NaN: not reachable)."""
    finite = np.asarray(T_eq, dtype=float)[np.isfinite(T_eq)]
    return float(finite.mean()) if finite.size else float(np.nanmean(T_op))


def _interval_message(method, samples, seed, found: dict, at_end_any: bool, messages) -> list:
    if method == "linear":
        msg = "linearised (implicit differentiation)"
    else:
        msg = f"Monte Carlo, {samples} draws, seed {seed}"
        if np.any(found["beyond"] > 0):
            msg += "; some draws reach the target only beyond the search range (interval ends shown as ±inf)"
        if np.any(found["n_failed"]):
            msg += f"; {int(np.sum(found['n_failed']))} draw(s) failed to solve and are left out"
    if at_end_any:
        msg += "; no interval where the nominal answer is the end of the search range"
    return [f"{msg}; {ASSUMPTIONS}; nominal: {t}" for t in np.asarray(messages, dtype=object).reshape(-1)]


def pressure_interval(species: Sequence[str], feed: Mapping[str, object], T, key: str, target, *,
                      P_range=(1e5, 300e5), reactions: Sequence[str] | None = None,
                      gas_model: str = "ideal", approach=None, database: SpeciesDatabase | None = None,
                      method: str = "monte-carlo", samples: int = 400, seed: int | None = 1,
                      level: float = 0.95, overrides: Mapping | None = None,
                      defaults: UncertaintyDefaults | None = None) -> PressureUncertainty:
    """Pressure at which the conversion of ``key`` reaches ``target``, with its interval.

    The nominal answer is that of :func:`eqdesign.solve.studies.inverse.pressure_for_conversion`;
    the search variable is ln P.  Monte Carlo: every draw's crossing is refined, all draws
    together (one batched equilibrium call per iteration); linearised:
    d ln P/dθ = −(∂X/∂θ)/(∂X/∂ln P) at the nominal answer (implicit-function rule).

    Parameters
    ----------
    species, feed, T, key, target, P_range, reactions, gas_model, approach, database
        As for :func:`eqdesign.solve.studies.inverse.pressure_for_conversion` (T [K], P_range [Pa]).
    method, samples, seed, level, overrides, defaults
        As for :func:`propagate_equilibrium`.

    Returns
    -------
    PressureUncertainty

    Examples
    --------
    Ammonia from 1:3 N2:H2 at 700 K: the lowest pressure giving 40 % conversion of N2,
    linearised (relative standard uncertainty of the pressure):

    >>> r = pressure_interval(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, 700, "N2", 0.40,
    ...                       P_range=("10 bar", "1000 bar"), method="linear")
    >>> round(r.P / 1e5, 1), round(r.relative_uncertainty, 2)
    (146.1, 0.06)
    """
    check_method(method, samples, level, seed)
    db = database or bundled_database()
    nominal = pressure_for_conversion(species, feed, T, key, target, P_range=P_range, reactions=reactions,
                                      gas_model=gas_model, approach=approach, database=db)
    shape = np.shape(nominal.P)
    P0 = np.asarray(nominal.P, dtype=float).reshape(-1)
    T_op = np.broadcast_to(np.asarray(nominal.T, dtype=float), shape).reshape(-1)
    T_eq = np.broadcast_to(np.asarray(nominal.T_equilibrium, dtype=float), shape).reshape(-1)
    tg = np.broadcast_to(np.asarray(nominal.target, dtype=float), shape).reshape(-1)
    at_end = np.broadcast_to(np.asarray(nominal.at_range_end, dtype=bool), shape).reshape(-1)
    reached = np.isfinite(P0) & ~at_end
    lo, hi = (math.log(float(to_pascal(v))) for v in P_range)
    key_r = db.resolve(key)
    probe = equilibrium(species, feed, _probe_temperature(T_eq, T_op), math.exp(0.5 * (lo + hi)), reactions=reactions,
                        gas_model=gas_model, key=key_r, database=db, warn=False)
    system = batched_system(np.asarray(probe.feed_array, dtype=float)[None, :], list(probe.species),
                     probe.gas_mask, key=key_r, reactions=probe.reactions, gas_model=gas_model, database=db,
                     binary_interaction=None)
    pm = parameter_map(list(probe.species), database=db, overrides=overrides, defaults=defaults)

    def conversion_at(x, cases, shift):
        am, fe, _ = system.solve(T_eq[cases], np.exp(x), np.zeros(np.size(x), dtype=int), shift)
        return system.conversion(am, fe)

    x0 = np.log(np.where(reached, P0, 1.0))
    found = _inverse_interval(
        conversion_at, lambda rows: output_gibbs_derivatives(_system_for_cases(system, P0[rows]), T_eq[rows], P0[rows])[:, 0, :],
        x0, reached, tg, T_eq, lo, hi, pm, method=method, samples=samples, seed=seed, level=level)
    with np.errstate(over="ignore"):
        lower, median, upper = (np.exp(found[k]) for k in ("lower", "median", "upper"))
        sample_P = None if found["samples"] is None else np.exp(found["samples"]).reshape((samples,) + shape)
    full = _interval_message(method, samples, seed, found, bool(np.any(np.isfinite(P0) & at_end)),
                             nominal.message)
    return PressureUncertainty(
        P=shape_out(np.where(reached, P0, np.nan), shape), lower=shape_out(lower, shape),
        median=shape_out(median, shape), upper=shape_out(upper, shape),
        relative_uncertainty=shape_out(found["spread"], shape), reached=shape_out(reached, shape),
        beyond_range=shape_out(found["beyond"], shape), T=shape_out(T_op, shape),
        target=shape_out(tg, shape), key=key_r, method=method, level=float(level),
        samples=samples if method == "monte-carlo" else 0, seed=seed if method == "monte-carlo" else None,
        sensitivity=found["sens"].reshape(shape + (len(pm.data),)), data=pm.data, sample_P=sample_P,
        n_failed=shape_out(found["n_failed"], shape), P_range=(math.exp(lo), math.exp(hi)),
        message=full[0] if not shape else np.array(full, dtype=object).reshape(shape),
        at_range_end=nominal.at_range_end)


@dataclass(frozen=True)
class FeedRatioUncertainty(_AnswerRanking, InverseAnswer):
    """The feed ratio for a target conversion, with its interval from data uncertainty.

    Attributes as :class:`PressureUncertainty`, with ``ratio``, ``lower``, ``median``,
    ``upper`` [mol/mol], ``relative_uncertainty`` = u(ln ratio) [-], ``ratio_name``,
    ``sample_ratio`` and the operating ``T`` [K] and ``P`` [Pa]; the shared answer shape
    with ``value`` = ``ratio`` [mol/mol].
    """

    value_field: ClassVar[str] = "ratio"
    unit: ClassVar[str] = "mol/mol"

    ratio: object
    lower: object
    median: object
    upper: object
    relative_uncertainty: object
    reached: object
    beyond_range: object
    T: object
    P: object
    target: object
    key: str
    ratio_name: str
    method: str
    level: float
    samples: int
    seed: int | None
    sensitivity: np.ndarray = field(repr=False)
    data: tuple = field(repr=False)
    sample_ratio: np.ndarray | None = field(default=None, repr=False)
    n_failed: object = 0
    message: object = ""
    at_range_end: object = False


def feed_ratio_interval(species: Sequence[str], feed: Mapping[str, object], T, P, key: str, target, *,
                        ratio=("H2O", "CO"), ratio_range=(0.1, 10.0), reactions: Sequence[str] | None = None,
                        gas_model: str = "ideal", approach=None, database: SpeciesDatabase | None = None,
                        method: str = "monte-carlo", samples: int = 400, seed: int | None = 1,
                        level: float = 0.95, overrides: Mapping | None = None,
                        defaults: UncertaintyDefaults | None = None) -> FeedRatioUncertainty:
    """Feed ratio at which the conversion of ``key`` reaches ``target``, with its interval.

    The nominal answer is that of :func:`eqdesign.solve.studies.inverse.feed_ratio_for_conversion`;
    the search variable is ln(ratio), otherwise as :func:`pressure_interval`.

    Examples
    --------
    Water-gas shift of CO at 500 K and 20 bar: steam-to-CO ratio for 99 % conversion,
    linearised:

    >>> r = feed_ratio_interval(["CO", "H2O", "CO2", "H2"], {"CO": 1}, 500, "20 bar", "CO", 0.99,
    ...                         ratio=("H2O", "CO"), ratio_range=(0.5, 10), method="linear")
    >>> round(r.ratio, 3), r.relative_uncertainty < 0.05
    (1.705, True)
    """
    check_method(method, samples, level, seed)
    db = database or bundled_database()
    nominal = feed_ratio_for_conversion(species, feed, T, P, key, target, ratio=ratio, ratio_range=ratio_range,
                                        reactions=reactions, gas_model=gas_model, approach=approach, database=db)
    spec = feed_ratio_spec(ratio, db)
    shape = np.shape(nominal.ratio)
    r0 = np.asarray(nominal.ratio, dtype=float).reshape(-1)
    T_op = np.broadcast_to(np.asarray(nominal.T, dtype=float), shape).reshape(-1)
    P_c = np.broadcast_to(np.asarray(nominal.P, dtype=float), shape).reshape(-1)
    T_eq = np.broadcast_to(np.asarray(nominal.T_equilibrium, dtype=float), shape).reshape(-1)
    tg = np.broadcast_to(np.asarray(nominal.target, dtype=float), shape).reshape(-1)
    at_end = np.broadcast_to(np.asarray(nominal.at_range_end, dtype=bool), shape).reshape(-1)
    reached = np.isfinite(r0) & ~at_end
    lo, hi = (math.log(float(to_si(v, "dimensionless"))) for v in ratio_range)
    key_r = db.resolve(key)
    base = {db.resolve(k): float(to_si(v, "amount")) for k, v in feed.items()}
    species_all = list(species) + ([spec.numerator] if spec.numerator not in species else [])
    probe = equilibrium(species_all, spec.feed_at(base, np.exp(0.5 * (lo + hi)), db), _probe_temperature(T_eq, T_op),
                        float(np.nanmean(P_c)), reactions=reactions, gas_model=gas_model, key=key_r, database=db,
                        warn=False)
    names = list(probe.species)
    pm = parameter_map(names, database=db, overrides=overrides, defaults=defaults)

    def system_for(x):
        fed = spec.feed_at(base, np.exp(np.asarray(x, dtype=float)), db)
        rows = np.zeros((np.size(x), len(names)))
        for k, v in fed.items():
            rows[:, names.index(k)] = np.broadcast_to(v, np.shape(x))
        return batched_system(rows, names, probe.gas_mask, key=key_r, reactions=probe.reactions,
                       gas_model=gas_model, database=db, binary_interaction=None)

    def conversion_at(x, cases, shift):
        sysx = system_for(x)
        am, fe, _ = sysx.solve(T_eq[cases], P_c[cases], np.arange(np.size(x)), shift)
        return sysx.conversion(am, fe)

    x0 = np.log(np.where(reached, r0, 1.0))
    found = _inverse_interval(
        conversion_at, lambda rows: output_gibbs_derivatives(system_for(x0[rows]), T_eq[rows], P_c[rows])[:, 0, :],
        x0, reached, tg, T_eq, lo, hi, pm, method=method, samples=samples, seed=seed, level=level)
    with np.errstate(over="ignore"):
        lower, median, upper = (np.exp(found[k]) for k in ("lower", "median", "upper"))
        sample_r = None if found["samples"] is None else np.exp(found["samples"]).reshape((samples,) + shape)
    full = _interval_message(method, samples, seed, found, bool(np.any(np.isfinite(r0) & at_end)),
                             nominal.message)
    return FeedRatioUncertainty(
        ratio=shape_out(np.where(reached, r0, np.nan), shape), lower=shape_out(lower, shape),
        median=shape_out(median, shape), upper=shape_out(upper, shape),
        relative_uncertainty=shape_out(found["spread"], shape), reached=shape_out(reached, shape),
        beyond_range=shape_out(found["beyond"], shape), T=shape_out(T_op, shape), P=shape_out(P_c, shape),
        target=shape_out(tg, shape), key=key_r, ratio_name=nominal.ratio_name, method=method,
        level=float(level), samples=samples if method == "monte-carlo" else 0,
        seed=seed if method == "monte-carlo" else None,
        sensitivity=found["sens"].reshape(shape + (len(pm.data),)), data=pm.data, sample_ratio=sample_r,
        n_failed=shape_out(found["n_failed"], shape),
        message=full[0] if not shape else np.array(full, dtype=object).reshape(shape),
        at_range_end=nominal.at_range_end)


def _system_for_cases(system: BatchedSystem, P_cases) -> BatchedSystem:
    """The system with one feed row per case (the inverse questions share one feed)."""
    n = np.size(P_cases)
    return BatchedSystem(system.names, {k: np.broadcast_to(v[:1], (n,)).copy() for k, v in system.feed.items()},
                   system.gas_mask, system.key, system.reactions, system.gas_model, system.database,
                   system.binary_interaction)
