"""Energy balances on equilibrium mixtures, adiabatic equilibrium, staged adiabatic beds.

    from eqdesign.solve.energy import adiabatic_equilibrium, staged_converter
    out = adiabatic_equilibrium(["SO2", "O2", "SO3", "N2"],
                                {"SO2": 0.10, "O2": 0.11, "N2": 0.79}, "420 degC", "1.2 bar")
    out.T            # adiabatic outlet temperature [K]

Enthalpies are on the formation basis: the standard molar enthalpy of every species is
``h°_i(T) = ΔfH°_i(298.15 K) + ∫ cp°_i dT``, so a sum ``Σ n_i h°_i(T)`` over a reacting
mixture carries the heat of reaction with it and the energy balance of an adiabatic,
isobaric, work-free reactor is simply ``H_out(T_out) = H_in(T_in)`` (first law for a
steady-flow system; e.g. J. M. Smith, H. C. Van Ness, M. M. Abbott, *Introduction to
Chemical Engineering Thermodynamics*, 7th ed., McGraw-Hill, 2005, ch. 4).  With the
Peng-Robinson gas model the gas adds ``n_gas H_res(T, P, y)``, the residual enthalpy of
D.-Y. Peng, D. B. Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59-64.

The adiabatic temperature solves ``H_eq(T) = H_in`` for every state of a batch at once:
one batched :func:`eqdesign.solve.equilibrium` call per iteration, safeguarded Newton on T
with the exact slope of the equilibrium enthalpy.  That slope comes from the temperature
derivatives of the equilibrium composition at fixed pressure and conserved amounts, the
linear system of S. Gordon and B. J. McBride, NASA Reference Publication RP-1311, Part I:
Analysis (1994), section 2.5 (derivatives with respect to temperature), which also
predicts the composition at the next temperature for the warm start.

CAUTION: adiabatic equilibrium temperatures are the hottest a bed can become (infinite
catalyst, no heat loss); real beds run below them, and hot spots, runaway exotherms and
the toxic or flammable gases of these processes (SO2, SO3, CO, H2, NH3) need a design
checked against local codes and licensed engineering practice.
"""
from __future__ import annotations

import dataclasses
import warnings
from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numpy as np

from ..thermo.database import SpeciesDatabase
from ..thermo.models import R, Nasa7Polynomial
from ..thermo.reactions import bundled_database
from ..thermo.units import to_kelvin, to_pascal, to_si
from .equilibrium import (
    EquilibriumInputError, EquilibriumResult, NotConvergedWarning, element_matrix, equilibrium,
    invariant_basis,
)

#: The caution that goes with every adiabatic-bed answer (see the module docstring).
CAUTION = ("Equilibrium adiabatic beds: temperatures and conversions are limits (infinite "
           "catalyst, no heat loss), not a design. Hot spots, runaway exotherms and toxic or "
           "flammable gases need checking against local codes and licensed engineering practice.")

__all__ = [
    "AdiabaticResult", "BedRecord", "CAUTION", "StagedConverterResult", "adiabatic_equilibrium",
    "feed_enthalpy", "isothermal_duty", "mixture_enthalpy", "staged_converter",
]


# ====================================================================== enthalpy models
class _MixtureEnthalpy:
    """Enthalpy of a mixture of fixed species: ideal gas plus pure condensed species,
    optionally with the Peng-Robinson residual enthalpy of the gas."""

    def __init__(self, records, gas_model: str = "ideal", binary_interaction=None):
        self.records = list(records)
        self.is_gas = np.array([sp.is_gas for sp in self.records])
        self.gas_columns = np.flatnonzero(self.is_gas)
        # two-range NASA polynomials (nearly every species) evaluated together
        ns = len(self.records)
        self._low = np.zeros((ns, 7))
        self._high = np.zeros((ns, 7))
        self._T_mid = np.full(ns, np.inf)
        self._other = []
        for j, sp in enumerate(self.records):
            m = sp.model
            if isinstance(m, Nasa7Polynomial) and len(m.T_bounds) == 3:
                self._low[j], self._high[j] = m.coefficients
                self._T_mid[j] = m.T_bounds[1]
            elif isinstance(m, Nasa7Polynomial) and len(m.T_bounds) == 2:
                self._low[j] = self._high[j] = m.coefficients[0]
            else:
                self._other.append(j)
        self.eos = None
        if gas_model == "peng-robinson":
            from .real_gas import FugacityModel
            self.eos = FugacityModel([sp for sp in self.records if sp.is_gas], binary_interaction)
        elif gas_model != "ideal":
            raise EquilibriumInputError(f"gas_model {gas_model!r}: use one of ideal, peng-robinson")

    def species_properties(self, T):
        """cp° [J/(mol K)] and h° [J/mol] of every species, each shape (*T.shape, n_species)."""
        T = np.asarray(T, dtype=float)
        if T.size:
            ends = np.array([np.nanmin(T), np.nanmax(T)])
            for sp in self.records:
                sp.check_temperature(ends[np.isfinite(ends)])
        Tc = T[..., None]
        use_low = Tc <= self._T_mid
        a = [np.where(use_low, lo, hi) for lo, hi in zip(self._low.T, self._high.T)]
        cp_R = a[0] + Tc * (a[1] + Tc * (a[2] + Tc * (a[3] + Tc * a[4])))
        h_RT = a[0] + Tc * (a[1] / 2 + Tc * (a[2] / 3 + Tc * (a[3] / 4 + Tc * a[4] / 5))) + a[5] / Tc
        cp = R * cp_R
        h = R * Tc * h_RT
        for j in self._other:
            cp_j, h_j, _ = self.records[j].model.dimensionless(T)
            cp[..., j] = R * cp_j
            h[..., j] = R * T * h_j
        return cp, h

    def residual(self, amounts, T, P):
        """n_gas H_res [J] of the gas part (0 for the ideal gas), shape of T."""
        T = np.asarray(T, dtype=float)
        if self.eos is None:
            return np.zeros(T.shape)
        gas = amounts[..., self.gas_columns]
        n_gas = gas.sum(axis=-1)
        out = np.zeros(T.shape)
        ok = np.isfinite(n_gas) & (n_gas > 0)
        if np.any(ok):
            Tb, Pb = np.broadcast_to(T, ok.shape)[ok], np.broadcast_to(P, ok.shape)[ok]
            y = gas[ok] / n_gas[ok][..., None]
            out[ok] = n_gas[ok] * self.eos.residual_enthalpy(Tb, Pb, y, np.arange(y.shape[-1]))
        out[~np.isfinite(n_gas)] = np.nan
        return out

    def total(self, amounts, T, P, h=None):
        """H = Σ n_i h°_i(T) (+ n_gas H_res) [J], shape of T."""
        if h is None:
            h = self.species_properties(T)[1]
        return (amounts * h).sum(axis=-1) + self.residual(amounts, T, P)

    def frozen_heat_capacity(self, amounts, T, P, cp=None):
        """dH/dT at fixed composition [J/K] (Peng-Robinson part by a central difference)."""
        if cp is None:
            cp = self.species_properties(T)[0]
        c = (amounts * cp).sum(axis=-1)
        if self.eos is not None:
            dT = 1e-3 * np.asarray(T, dtype=float)
            c = c + (self.residual(amounts, T + dT, P) - self.residual(amounts, T - dT, P)) / (2 * dT)
        return c


def _records_for(names, db: SpeciesDatabase):
    return [db.species[db.resolve(n)] for n in names]


def mixture_enthalpy(result: EquilibriumResult, *, database: SpeciesDatabase | None = None,
                     binary_interaction: Mapping | None = None):
    """Total enthalpy [J] of the amounts of an :class:`EquilibriumResult` at its T and P.

    ``H = Σ n_i h°_i(T)`` on the formation basis (h°(298.15 K) = ΔfH°), so heats of
    reaction are included; with ``result.gas_model == "peng-robinson"`` the gas adds
    ``n_gas H_res(T, P, y)`` (Peng and Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59-64).

    Parameters
    ----------
    result : EquilibriumResult
        Amounts [mol] (any basis: J per that basis come out), T [K], P [Pa].
    database : SpeciesDatabase, optional
        The database the result was computed with (default: the bundled one).
    binary_interaction : mapping, optional
        Peng-Robinson kij overrides used for the result.

    Returns
    -------
    float | ndarray
        H [J], the shape of ``result.T``; NaN where the result did not converge.

    Examples
    --------
    Elements in their reference states have zero enthalpy at 298.15 K, so the enthalpy of
    2 mol of ammonia brought to equilibrium at 298.15 K and 1 bar is n_NH3 ΔfH°(NH3)
    (CODATA key value -45.94 kJ/mol, Cox, Wagman and Medvedev 1989); about 3 % of the
    ammonia dissociates:

    >>> from eqdesign.solve import equilibrium
    >>> r = equilibrium(["N2", "H2", "NH3"], {"NH3": 2.0}, 298.15, 1e5)
    >>> print(f"{r.amounts['NH3']:.4f} mol, {mixture_enthalpy(r) / 1000:.2f} kJ")
    1.9359 mol, -88.93 kJ
    """
    db = database or bundled_database()
    model = _MixtureEnthalpy(_records_for(result.species, db), result.gas_model, binary_interaction)
    T = np.asarray(result.T, dtype=float)
    H = model.total(np.asarray(result.amount_array, dtype=float), T, np.asarray(result.P, dtype=float))
    return float(H) if np.ndim(H) == 0 else H


def _broadcast_inputs(db, species, feed, T, P, T_other=None):
    """Resolve names and broadcast feed, T [K], P [Pa] (and a second temperature [K]);
    returns names, shape, flat T, flat P, feed amounts (p, n_species) and flat T_other."""
    names: list[str] = []
    for n in list(species) + list(feed):
        r = db.resolve(n)
        if r not in names:
            names.append(r)
    T_arr = np.asarray(to_kelvin(T), dtype=float)
    P_arr = np.asarray(to_pascal(P), dtype=float)
    T2_arr = np.asarray(to_kelvin(T_other if T_other is not None else 0.0), dtype=float)
    feed_arrays = {db.resolve(k): np.asarray(to_si(v, "amount"), dtype=float) for k, v in feed.items()}
    shape = np.broadcast_shapes(T_arr.shape, P_arr.shape, T2_arr.shape,
                                *(a.shape for a in feed_arrays.values()))
    p = int(np.prod(shape)) if shape else 1
    n0 = np.zeros((p, len(names)))
    for name, arr in feed_arrays.items():
        n0[:, names.index(name)] += np.broadcast_to(arr, shape).reshape(p)

    def flat(a):
        return np.broadcast_to(a, shape).reshape(p).copy()

    return names, shape, flat(T_arr), flat(P_arr), n0, flat(T2_arr)


def feed_enthalpy(species: Sequence[str], feed: Mapping[str, object], T, P, *,
                  gas_model: str = "ideal", database: SpeciesDatabase | None = None,
                  binary_interaction: Mapping | None = None):
    """Total enthalpy [J] of a feed at T and P, unreacted.

    Parameters
    ----------
    species : sequence of str
        Species of the mixture (feed species are added when missing; extra species have
        zero amount and change nothing).
    feed : mapping of str to amount
        Amounts [mol] (numbers, arrays or strings with units), broadcast with T and P.
    T : float | array_like | str
        Temperature [K] or a quantity string (``"420 degC"``).
    P : float | array_like | str
        Pressure [Pa] or a quantity string; used only by the Peng-Robinson model.
    gas_model : {"ideal", "peng-robinson"}
    database : SpeciesDatabase, optional
    binary_interaction : mapping, optional

    Returns
    -------
    float | ndarray
        H [J] on the formation basis, the broadcast shape of the inputs.

    Examples
    --------
    One mole of nitrogen heated from 298.15 K to 1000 K takes 21.46 kJ (NIST-JANAF,
    Chase 1998: H(1000) - H(298.15) = 21.460 kJ/mol):

    >>> round(float(feed_enthalpy(["N2"], {"N2": 1.0}, 1000.0, 1e5)) / 1000, 2)
    21.46
    """
    db = database or bundled_database()
    names, shape, T_f, P_f, n0, _ = _broadcast_inputs(db, species, feed, T, P)
    model = _MixtureEnthalpy(_records_for(names, db), gas_model, binary_interaction)
    H = model.total(n0, T_f, P_f).reshape(shape)
    return float(H) if H.ndim == 0 else H


def isothermal_duty(species: Sequence[str], feed: Mapping[str, object], T_in, T, P,
                    **equilibrium_kwargs):
    """Heat [J] to add to take a feed at T_in to equilibrium at T (negative: heat removed).

    ``Q = H_eq(T, P) - H_feed(T_in, P)``: a steady-flow energy balance with no work, the
    amounts being those of the feed (J per mol-basis of ``feed``; W for mol/s).

    Parameters
    ----------
    species, feed
        As for :func:`eqdesign.solve.equilibrium`.
    T_in : float | array_like | str
        Feed temperature [K].
    T : float | array_like | str
        Outlet (equilibrium) temperature [K].
    P : float | array_like | str
        Pressure [Pa].
    **equilibrium_kwargs
        Passed to :func:`eqdesign.solve.equilibrium` (``reactions``, ``gas_model``,
        ``database``, ``binary_interaction``, ...).

    Returns
    -------
    float | ndarray
        Q [J], broadcast shape of the inputs; NaN where the equilibrium did not converge.

    Examples
    --------
    With nothing to react, the duty is the sensible heat: 1 mol N2 from 298.15 K to
    1000 K, 21.46 kJ (NIST-JANAF, Chase 1998):

    >>> round(float(isothermal_duty(["N2"], {"N2": 1.0}, 298.15, 1000.0, 1e5)) / 1000, 2)
    21.46
    """
    db = equilibrium_kwargs.get("database") or bundled_database()
    gas_model = equilibrium_kwargs.get("gas_model", "ideal")
    kij = equilibrium_kwargs.get("binary_interaction")
    names, shape, T_in_f, P_f, n0, T_f = _broadcast_inputs(db, species, feed, T_in, P, T_other=T)
    feed_flat = {n: n0[:, k] for k, n in enumerate(names) if np.any(n0[:, k] > 0)}
    res = equilibrium(names, feed_flat, T_f, P_f, **equilibrium_kwargs)
    model = _MixtureEnthalpy(_records_for(res.species, db), gas_model, kij)
    n_in = np.zeros((T_f.size, len(res.species)))
    n_in[:, [res.species.index(n) for n in names]] = n0
    Q = (model.total(res.amount_array, T_f, P_f) - model.total(n_in, T_in_f, P_f)).reshape(shape)
    return float(Q) if Q.ndim == 0 else Q


# ====================================================================== temperature derivatives
def _conservation_matrix(result: EquilibriumResult, records) -> np.ndarray:
    """Rows conserved by the result's problem: element counts, or reaction invariants."""
    if result.reactions:
        names = list(result.species)
        N = np.zeros((len(names), len(result.reactions)))
        for j, r in enumerate(result.reactions):
            for name, nu in zip(r.names, r.coefficients):
                N[names.index(name), j] += nu
        return invariant_basis(N)
    return element_matrix(records)[1]


def _composition_temperature_derivative(amounts, h, T, C, is_gas):
    """d n_j / dT [mol/K] of an equilibrium mixture at fixed P and conserved ``C n``.

    Ideal gas plus pure condensed species (those present, n > 0); the linear system is
    that of Gordon and McBride, NASA RP-1311 Part I (1994), section 2.5: with
    ``ĥ = h°/(R T²)``,

        Σ_l [C diag(n_g) Cᵀ]_il δπ_l + Σ_k c_ik δn_k + (C n_g)_i δlnN = -Σ_j c_ij n_j ĥ_j
        Σ_l c_lk δπ_l = -ĥ_k                              (condensed k present)
        Σ_l (C n_g)_l δπ_l = -Σ_j n_j ĥ_j
        δ ln n_j = ĥ_j + δlnN + Σ_l c_lj δπ_l            (gas j)

    solved for every state at once.  Amounts are scaled to 1 mol per state inside.
    """
    p, ns = amounts.shape
    scale = np.nansum(amounts, axis=1, keepdims=True)
    n = np.nan_to_num(amounts / np.where(scale > 0, scale, 1.0))
    h_hat = h / (R * T[:, None] ** 2)
    gas = np.where(is_gas, n, 0.0)
    cond_idx = np.flatnonzero(~is_gas)
    m, nc = C.shape[0], cond_idx.size
    k = m + nc + 1
    M = np.zeros((p, k, k))
    rhs = np.zeros((p, k))
    Cn = gas @ C.T                                             # (p, m)
    M[:, :m, :m] = (C[None, :, :] * gas[:, None, :]) @ C.T
    M[:, :m, -1] = Cn
    M[:, -1, :m] = Cn
    gh = gas * h_hat
    rhs[:, :m] = -(gh @ C.T)
    rhs[:, -1] = -gh.sum(axis=1)
    if nc:
        present = n[:, cond_idx] > 0                           # (p, nc)
        block = C[:, cond_idx][None, :, :] * present[:, None, :]
        M[:, :m, m:m + nc] = block
        M[:, m:m + nc, :m] = block.transpose(0, 2, 1)
        rhs[:, m:m + nc] = np.where(present, -h_hat[:, cond_idx], 0.0)
    # Rows of absent elements or phases are empty; rows of elements locked in fixed ratios
    # are dependent.  A tiny Tikhonov term (relative 1e-13) makes every system regular and
    # leaves consistent solutions unchanged to that order.
    row_size = np.abs(M).max(axis=2)                          # (p, k)
    big = np.maximum(row_size.max(axis=1, keepdims=True), 1e-300)
    diagonal = M.reshape(p, k * k)[:, ::k + 1]                  # a view of M's diagonals
    diagonal += np.where(row_size > 1e-13 * big, 1e-13 * big, 1.0)
    with np.errstate(invalid="ignore", over="ignore"):
        try:
            sol = np.linalg.solve(M, rhs[..., None])[..., 0]
        except np.linalg.LinAlgError:
            sol = np.einsum("pij,pj->pi", np.linalg.pinv(M, rcond=1e-13), rhs)
    d_ln_n = h_hat + sol[:, -1:] + sol[:, :m] @ C
    dn = np.where(is_gas, gas * d_ln_n, 0.0)
    if nc:
        dn[:, cond_idx] = np.where(present, sol[:, m:m + nc], 0.0)
    return dn * scale, np.where(is_gas, d_ln_n, 0.0)


# ====================================================================== adiabatic equilibrium
@dataclass(frozen=True)
class AdiabaticResult:
    """Adiabatic equilibrium at every state of a batch.

    Arrays have the broadcast shape of the inputs.  States that did not converge hold NaN
    in ``T`` and in the equilibrium amounts, with ``converged`` False.

    Attributes
    ----------
    T : ndarray
        Adiabatic outlet temperature [K].
    equilibrium : EquilibriumResult
        Composition at the outlet: equilibrium at ``T`` (at ``T ± approach`` when an
        approach to equilibrium was asked for; its own ``.T`` is that temperature).
    converged : ndarray of bool
    iterations : ndarray of int
        Equilibrium evaluations used (one batched call each).
    enthalpy_residual : ndarray
        ``|H_out - H_in| / H_scale`` [-] with ``H_scale = Σ n_i |h°_i(T_in)| + n R T_in``.
    T_in : ndarray
        Inlet temperature [K].
    P : ndarray
        Pressure [Pa].
    inlet_enthalpy : ndarray
        H_in [J] of the feed at T_in (formation basis).
    approach : float
        Approach to equilibrium [K] used (0: full equilibrium).
    message : str
    """

    T: np.ndarray
    equilibrium: EquilibriumResult = field(repr=False)
    converged: np.ndarray = field(repr=False)
    iterations: np.ndarray = field(repr=False)
    enthalpy_residual: np.ndarray = field(repr=False)
    T_in: np.ndarray = field(repr=False)
    P: np.ndarray = field(repr=False)
    inlet_enthalpy: np.ndarray = field(repr=False)
    approach: float = 0.0
    message: str = ""

    @property
    def shape(self) -> tuple:
        return np.shape(self.T)

    @property
    def all_converged(self) -> bool:
        return bool(np.all(self.converged))

    @property
    def temperature_rise(self):
        """T_out - T_in [K] (negative for an endothermic change)."""
        d = np.asarray(self.T) - np.asarray(self.T_in)
        return float(d) if d.ndim == 0 else d

    def conversion(self, key: str | None = None):
        """Conversion of a reactant at the outlet [-] (see EquilibriumResult.conversion)."""
        return self.equilibrium.conversion(key)


def _take(result: EquilibriumResult, rows: np.ndarray, p: int, **override) -> EquilibriumResult:
    """The states ``rows`` of a flat result of ``p`` states (every per-state array field)."""
    changes = {}
    for f in dataclasses.fields(result):
        v = getattr(result, f.name)
        if isinstance(v, np.ndarray) and v.ndim >= 1 and v.shape[0] == p:
            changes[f.name] = v[rows]
    changes.update(override)
    return dataclasses.replace(result, **changes)


def _hermite_root(T0, f0, s0, T1, f1, s1):
    """Root in (T0, T1) of the cubic Hermite interpolant through (T0, f0, f0' = s0) and
    (T1, f1, s1), f0 < 0 < f1: Newton on the cubic from the secant point, kept inside a
    shrinking bracket (bisection when a step leaves it); vectorised."""
    L = T1 - T0
    a, b, c, d = f0, s0 * L, f1, s1 * L
    # power-basis coefficients of the cubic in t = (T - T0)/L
    k3 = 2 * a + b - 2 * c + d
    k2 = -3 * a - 2 * b + 3 * c - d
    k1 = b
    k0 = a
    lo = np.zeros_like(T0)
    hi = np.ones_like(T0)
    with np.errstate(invalid="ignore", divide="ignore"):
        t = np.clip(-a / (c - a), 0.0, 1.0)
        for _ in range(16):
            value = ((k3 * t + k2) * t + k1) * t + k0
            neg = value < 0
            lo = np.where(neg, t, lo)
            hi = np.where(neg, hi, t)
            t_new = t - value / ((3 * k3 * t + 2 * k2) * t + k1)
            t = np.where((t_new > lo) & (t_new < hi), t_new, 0.5 * (lo + hi))
    return T0 + t * L


def adiabatic_equilibrium(species: Sequence[str], feed: Mapping[str, object], T_in, P, *,
                          reactions: Sequence[str] | None = None, gas_model: str = "ideal",
                          database: SpeciesDatabase | None = None,
                          binary_interaction: Mapping | None = None, key: str | None = None,
                          approach: float = 0.0, T_limits: tuple | None = None,
                          tolerance: float = 1e-10, max_iterations: int = 50,
                          max_step: float = 2000.0, warn: bool = True) -> AdiabaticResult:
    """Adiabatic, isobaric equilibrium: the outlet temperature where H_eq(T) = H_in.

    Every state of the batch is solved together: each iteration is one batched
    :func:`eqdesign.solve.equilibrium` call on the states not yet converged, warm-started
    from the previous composition moved along d ln n/dT when the step is small.  The step
    in T is Newton's with the exact slope of the equilibrium enthalpy,
    ``dH/dT = Σ n_i cp°_i + Σ h°_i dn_i/dT`` (composition derivatives as in NASA RP-1311
    Part I, 1994, section 2.5; for Peng-Robinson the fugacity terms of the slope are left
    out, which only slows Newton down), safeguarded by a bracket: once both sides are
    known the step goes to the root of the cubic through H and dH/dT at the two ends, and
    steps that leave the bracket or stall become bisections; steps are limited to
    ``max_step``.  A state counts as converged when its equilibrium converged and
    ``|H_out - H_in| <= tolerance * H_scale``, ``H_scale = Σ n_i |h°_i(T_in)| + n R T_in``.
    A state whose equilibrium fails is retried halfway back to its last good temperature
    (or higher up, if it has none).

    Parameters
    ----------
    species : sequence of str
        Species that may be present (as for :func:`eqdesign.solve.equilibrium`).
    feed : mapping of str to amount
        Feed amounts [mol] (numbers, arrays broadcast with T_in and P, or strings).
    T_in : float | array_like | str
        Inlet temperature [K] or a quantity string (``"420 degC"``).
    P : float | array_like | str
        Pressure [Pa] or a quantity string (``"1.2 bar"``).
    reactions : sequence of str, optional
        Named-reactions mode (only these reactions proceed).
    gas_model : {"ideal", "peng-robinson"}
    database : SpeciesDatabase, optional
    binary_interaction : mapping, optional
        Peng-Robinson kij overrides.
    key : str, optional
        Key reactant for ``.conversion()``.
    approach : float
        Approach to equilibrium [K]: the outlet composition is the equilibrium
        composition at ``T_out + approach`` for a heat-releasing change (at
        ``T_out - approach`` for a heat-absorbing one), i.e. short of equilibrium.
    T_limits : (float, float), optional
        Search range for T_out [K]; default: the range common to the gas species' data.
        A state whose outlet lies outside is flagged as not converged.
    tolerance : float
        Relative enthalpy tolerance [-].
    max_iterations : int
        Most equilibrium evaluations per state (general path; the compiled
        fixed-enthalpy path, used for ideal gases with NASA data and no approach
        margin when this is at least 20, iterates on T inside each Newton step).
    max_step : float
        Largest change of T in one iteration [K].
    warn : bool
        Warn (NotConvergedWarning) when some states did not converge.

    Returns
    -------
    AdiabaticResult

    Examples
    --------
    SO2 oxidation in air, 10 % SO2 and 11 % O2, inlet 420 degC, 1.2 bar (an invented
    converter; the adiabatic heat-up and equilibrium curves of such feeds are discussed in
    M. J. King, W. G. Davenport, M. S. Moats, *Sulfuric Acid Manufacture*, 2nd ed.,
    Elsevier, 2013):

    >>> out = adiabatic_equilibrium(["SO2", "O2", "SO3", "N2"],
    ...                             {"SO2": 0.10, "O2": 0.11, "N2": 0.79}, "420 degC", "1.2 bar",
    ...                             key="SO2")
    >>> print(f"{float(out.T):.1f} K, conversion {out.conversion():.3f}")
    894.0 K, conversion 0.691
    """
    db = database or bundled_database()
    names, shape, T_in_f, P_f, n0, _ = _broadcast_inputs(db, species, feed, T_in, P)
    p = T_in_f.size
    if np.any(~np.isfinite(T_in_f)) or np.any(T_in_f <= 0):
        raise EquilibriumInputError("inlet temperatures must be finite and above 0 K")
    approach = float(approach)
    if approach < 0:
        raise EquilibriumInputError("approach to equilibrium must be >= 0 K")
    feed_flat = {n: n0[:, k] for k, n in enumerate(names) if np.any(n0[:, k] > 0)}
    rxns = tuple(reactions or ())
    # the compiled fixed-enthalpy Newton when it applies (it iterates on T inside each
    # Newton step, so ``max_iterations``, which counts equilibrium evaluations of the
    # general path below, only needs to allow a normal solve)
    if gas_model == "ideal" and approach == 0.0 and T_limits is None and max_iterations >= 20:
        fast = _adiabatic_compiled(db, names, shape, feed_flat, n0, T_in_f, P_f, rxns, key,
                                   tolerance)
        if fast is not None:
            return fast
    common = dict(reactions=rxns or None, gas_model=gas_model, database=db,
                  binary_interaction=binary_interaction, key=key, warn=False)

    # --- first evaluation: equilibrium at the inlet temperature (every state)
    first = equilibrium(names, feed_flat, T_in_f, P_f, **common)
    names = list(first.species)
    common["reactions"] = first.reactions or None
    feed_flat = {n: first.feed_array[:, k] for k, n in enumerate(names) if np.any(first.feed_array[:, k] > 0)}
    records = _records_for(names, db)
    model = _MixtureEnthalpy(records, gas_model, binary_interaction)
    C = _conservation_matrix(first, records)
    is_gas = model.is_gas
    n_feed = first.feed_array
    h_in = model.species_properties(T_in_f)[1]
    H_in = model.total(n_feed, T_in_f, P_f, h=h_in)
    H_scale = (n_feed * np.abs(h_in)).sum(axis=1) + n_feed.sum(axis=1) * R * T_in_f

    gas_records = [sp for sp in records if sp.is_gas]
    lo_lim = max(sp.T_min for sp in gas_records)
    hi_lim = min(sp.T_max for sp in gas_records)
    if T_limits is not None:
        lo_lim, hi_lim = float(T_limits[0]), float(T_limits[1])
    lo_lim = min(lo_lim, float(T_in_f.min())) if T_limits is None else lo_lim

    # full-size stores of the answer: every per-state array field of the result
    store = {}
    for f_ in dataclasses.fields(first):
        v = getattr(first, f_.name)
        if isinstance(v, np.ndarray) and v.ndim >= 1 and v.shape[0] == p:
            store[f_.name] = np.array(v, copy=True)
    T_out = np.full(p, np.nan)
    done = np.zeros(p, dtype=bool)
    failed = np.zeros(p, dtype=bool)
    iterations = np.ones(p, dtype=int)
    residual = np.full(p, np.nan)
    outside = np.zeros(p, dtype=bool)     # outlet beyond the temperature range
    direction = np.ones(p)                # +1 heat-releasing (T rises), -1 heat-absorbing

    # per-state iteration variables
    T = T_in_f.copy()
    # bracket ends: T, H_eq - H_in and dH_eq/dT at the largest T known to be below the
    # answer (H_eq < H_in) and the smallest known to be above it
    lower = (np.full(p, -np.inf), np.full(p, np.nan), np.full(p, np.nan))
    upper = (np.full(p, np.inf), np.full(p, np.nan), np.full(p, np.nan))
    T_lo, T_hi = lower[0], upper[0]
    f_prev = np.full(p, np.inf)
    bracketed = np.zeros(p, dtype=bool)   # the last step was taken inside a bracket
    misses = np.zeros(p, dtype=int)       # failed equilibrium evaluations
    T_good = np.full(p, np.nan)           # last T whose equilibrium converged
    T_eq_good = np.full(p, np.nan)        # ... and the temperature of its composition
    n_good = np.full_like(n_feed, np.nan)
    dlnn_good = np.zeros_like(n_feed)
    cold = np.where(is_gas, np.maximum(n_feed, 1e-6 * n_feed.sum(axis=1, keepdims=True)), 0.0)

    current = first
    rows = np.arange(p)
    for it in range(max_iterations + 1):
        k = rows.size
        amounts = current.amount_array
        T_r = T[rows]
        T_eq = np.asarray(current.T, dtype=float).reshape(k)
        ok_eq = np.asarray(current.converged).reshape(k) & np.all(np.isfinite(amounts), axis=1)
        safe = np.where(ok_eq[:, None], amounts, 0.0)
        cp_r, h_r = model.species_properties(T_r)
        H = model.total(safe, T_r, P_f[rows], h=h_r)
        f = np.where(ok_eq, H - H_in[rows], np.nan)
        rel = np.abs(f) / H_scale[rows]
        # with an approach to equilibrium, the first evaluation (composition at T_in) is
        # only a starting point: its composition is not the one the balance needs
        exact = it > 0 or approach == 0.0
        if it == 0:
            direction[rows] = np.where(f > 0, -1.0, 1.0)
        conv_now = ok_eq & (rel <= tolerance) & exact
        if np.any(conv_now):
            sub = np.flatnonzero(conv_now)
            sel = rows[sub]
            done[sel] = True
            T_out[sel] = T_r[sub]
            residual[sel] = rel[sub]
            for name, full in store.items():
                full[sel] = getattr(current, name)[sub]
        active = ~conv_now
        if it == max_iterations or not np.any(active):
            failed[rows[active]] = True
            break

        # --- bracket and safeguarded Newton step for the states still active
        idx = np.flatnonzero(active)
        st = rows[idx]
        fa, Ta, good = f[idx], T_r[idx], ok_eq[idx]
        am = safe[idx]
        T_eq_a = T_eq[idx]
        h_eq = h_r[idx] if np.array_equal(T_eq_a, Ta) else model.species_properties(T_eq_a)[1]
        with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
            dn, dlnn = _composition_temperature_derivative(am, h_eq, T_eq_a, C, is_gas)
            slope = model.frozen_heat_capacity(am, Ta, P_f[st], cp=cp_r[idx])
            slope = slope + (h_r[idx] * dn).sum(axis=1)
            step = -fa / slope
        newton_ok = good & np.isfinite(step) & (slope > 0)
        if exact:
            below = good & (fa < 0) & (Ta > T_lo[st])
            above = good & (fa > 0) & (Ta < T_hi[st])
            for side, sel in ((lower, below), (upper, above)):
                side[0][st[sel]] = Ta[sel]
                side[1][st[sel]] = fa[sel]
                side[2][st[sel]] = np.where(newton_ok[sel], slope[sel], np.nan)
        # where the slope is unusable, a fixed move towards the missing side
        step = np.where(newton_ok, step, np.where(fa > 0, -50.0, 50.0))
        step = np.clip(step, -max_step, max_step)
        T_new = Ta + step
        lo_b, hi_b = T_lo[st], T_hi[st]
        both = np.isfinite(lo_b) & np.isfinite(hi_b)
        # with both sides known, the root of the cubic through f and dH/dT at both ends
        cubic = both & np.isfinite(lower[2][st]) & np.isfinite(upper[2][st])
        if np.any(cubic):
            c = np.flatnonzero(cubic)
            s_ = st[c]
            T_new[c] = _hermite_root(T_lo[s_], lower[1][s_], lower[2][s_],
                                     T_hi[s_], upper[1][s_], upper[2][s_])
        # safeguard: a step leaving the bracket, or |f| not halved since last time -> bisect
        slow = good & bracketed[st] & (np.abs(fa) > 0.5 * np.abs(f_prev[st]))
        bracketed[st] = both
        use_bisect = both & ((T_new <= lo_b) | (T_new >= hi_b) | slow | ~np.isfinite(T_new))
        T_new = np.where(use_bisect, 0.5 * (np.where(both, lo_b, 0.0) + np.where(both, hi_b, 0.0)), T_new)
        # failed equilibrium: halve the way back to the last good temperature
        # (no good point yet: move up in widening steps, where mixtures are less extreme)
        bad = ~good
        if np.any(bad):
            misses[st[bad]] += 1
            away = Ta + 50.0 * 2.0 ** np.minimum(misses[st], 6)
            back = np.where(np.isfinite(T_good[st]), 0.5 * (Ta + T_good[st]), away)
            T_new = np.where(bad, back, T_new)
        # the temperature range: an outlet beyond it cannot be found
        stuck = good & exact & (((Ta >= hi_lim) & (fa < 0)) | ((Ta <= lo_lim) & (fa > 0)))
        T_new = np.clip(T_new, lo_lim, hi_lim)
        failed[st[stuck]] = True
        outside[st[stuck]] = True
        # remember the last good point for damping and warm starts
        T_good[st[good]] = Ta[good]
        T_eq_good[st[good]] = T_eq_a[good]
        n_good[st[good]] = am[good]
        dlnn_good[st[good]] = dlnn[good]
        f_prev[st[good]] = np.where(exact, fa[good], np.inf)

        keep = ~stuck
        st, T_new = st[keep], T_new[keep]
        if st.size == 0:
            break
        T[st] = T_new
        # --- warm start: the last good composition moved along d ln n / dT, used when
        # most states move little (the predicted change of every species above 1e-6 of
        # the mixture within a factor e); after big moves the solver's own start is better
        T_eq_new = T_new + approach * direction[st]
        dT = np.nan_to_num(T_eq_new - T_eq_good[st])
        with np.errstate(over="ignore", invalid="ignore"):
            shift = dlnn_good[st] * dT[:, None]
            pred = np.where(is_gas, n_good[st] * np.exp(np.clip(shift, -30.0, 30.0)), n_good[st])
            major = n_good[st] > 1e-6 * np.nansum(n_good[st], axis=1, keepdims=True)
            small = np.all(np.where(major, np.abs(shift) <= 1.0, True), axis=1)
        usable = small & np.all(np.isfinite(pred), axis=1)
        warm = None
        if np.count_nonzero(usable) >= 0.75 * st.size:
            pred = np.where(usable[:, None], pred, cold[st])
            warm = _take(first, st, p, amount_array=pred)
        current = equilibrium(names, {n: v[st] for n, v in feed_flat.items()}, T_eq_new, P_f[st],
                              initial=warm, **common)
        rows = st
        iterations[st] += 1

    # --- assemble the answer
    ok = done & ~failed
    T_out[~ok] = np.nan
    for name, full in store.items():
        if name == "converged":
            full &= ok
        elif name in ("amount_array", "ln_phi_array", "T", "g0_RT") and full.dtype.kind == "f":
            full[~ok] = np.nan
    out_fields = {name: full.reshape(shape + full.shape[1:]) for name, full in store.items()}
    if shape == ():
        for name in ("T", "P"):
            if name in out_fields:
                out_fields[name] = np.float64(out_fields[name])
    n_bad = int(p - ok.sum())
    if n_bad == 0:
        message = "all states converged"
    else:
        message = f"{n_bad} of {p} state(s) did not converge (NaN)"
        if np.any(outside):
            message += (f"; {int(outside.sum())} with the outlet temperature outside "
                        f"{lo_lim:.6g}-{hi_lim:.6g} K")
    eq = dataclasses.replace(first, message=message, **out_fields)
    if n_bad and warn:
        warnings.warn(f"adiabatic equilibrium: {message}", NotConvergedWarning, stacklevel=2)

    def shaped(a, scalar_as_float=False):
        a = np.asarray(a).reshape(shape)
        return np.float64(a) if (scalar_as_float and shape == ()) else a

    return AdiabaticResult(
        T=shaped(T_out, True), equilibrium=eq, converged=shaped(ok), iterations=shaped(iterations),
        enthalpy_residual=shaped(np.where(ok, residual, np.nan)), T_in=shaped(T_in_f, True),
        P=shaped(P_f, True), inlet_enthalpy=shaped(H_in, True), approach=approach, message=message)


def _adiabatic_compiled(db, names, shape, feed_flat, n0, T_in_f, P_f, rxns, key, tolerance):
    """Ideal gas, NASA data, no approach margin: the fixed-enthalpy Newton of the compiled
    kernel (temperature as one more unknown; NASA RP-1311 Part I §2.5), every state in one
    call.  Returns None (the general path then runs) unless every state converged with
    the enthalpy balance closed to ``tolerance``."""
    records = [db[n] for n in names]
    if not all(isinstance(sp.model, Nasa7Polynomial) for sp in records):
        return None
    h_in = np.stack([sp.model.enthalpy(T_in_f) for sp in records], axis=1)
    H_in = (n0 * h_in).sum(axis=1)
    try:
        eq = equilibrium(names, {n: v.reshape(shape) for n, v in feed_flat.items()},
                         T_in_f.reshape(shape), P_f.reshape(shape), reactions=rxns or None,
                         key=key, database=db, enthalpy=H_in.reshape(shape), tolerance=1e-13,
                         warn=False)
    except EquilibriumInputError:
        return None
    if not eq.all_converged:
        return None
    T_out = np.asarray(eq.T, dtype=float).reshape(-1)
    amounts = eq.amount_array.reshape(T_out.size, -1)
    h_out = np.stack([sp.model.enthalpy(T_out) for sp in records], axis=1)
    H_scale = (n0 * np.abs(h_in)).sum(axis=1) + n0.sum(axis=1) * R * T_in_f
    residual = np.abs((amounts * h_out).sum(axis=1) - H_in) / H_scale
    if not np.all(residual <= max(tolerance, 1e-10)):
        return None

    def shaped(a, scalar_as_float=False):
        a = np.asarray(a).reshape(shape)
        return np.float64(a) if (scalar_as_float and shape == ()) else a

    return AdiabaticResult(
        T=shaped(T_out, True), equilibrium=eq, converged=shaped(np.ones(T_out.size, dtype=bool)),
        iterations=shaped(np.asarray(eq.iterations).reshape(-1)),
        enthalpy_residual=shaped(residual), T_in=shaped(T_in_f, True), P=shaped(P_f, True),
        inlet_enthalpy=shaped(H_in, True), approach=0.0, message="all states converged")


# ====================================================================== staged adiabatic beds
def _frozen_temperature(model: _MixtureEnthalpy, amounts, H_target, P, T_guess,
                        tolerance: float = 1e-12, max_iterations: int = 60):
    """Temperature [K] at which mixtures of fixed composition have enthalpy ``H_target`` [J].

    Newton on T with the frozen heat capacity (positive, so H is increasing in T),
    vectorised over rows; NaN where it fails.
    """
    T = np.array(T_guess, dtype=float)
    scale = np.abs(amounts).sum(axis=-1) * R * T + np.abs(H_target)
    for _ in range(max_iterations):
        cp, h = model.species_properties(T)
        f = model.total(amounts, T, P, h=h) - H_target
        if np.all(np.abs(f) <= tolerance * scale):
            return T
        c = model.frozen_heat_capacity(amounts, T, P, cp=cp)
        T = np.clip(T - np.clip(f / c, -500.0, 500.0), 50.0, 2.0e4)
    return np.where(np.abs(f) <= 1e3 * tolerance * scale, T, np.nan)


@dataclass(frozen=True)
class BedRecord:
    """One adiabatic bed of a staged converter (amounts on the basis of the feed).

    Attributes
    ----------
    bed : int
        1 for the first bed.
    inlet_T, outlet_T : float
        Bed inlet and adiabatic-equilibrium outlet temperatures [K].
    bed_conversion : float
        Conversion of the key reactant within this bed, relative to the amount entering it [-].
    overall_conversion : float
        Conversion of the key reactant relative to the original feed [-].
    interstage_heat_removed : float
        Heat taken out after the bed to cool the outlet gas, at its composition, to the next
        bed's inlet temperature [J] (NaN after the last bed).
    removed : dict
        Species name -> amount taken out between this bed and the next [mol].
    inlet_amounts, outlet_amounts : dict
        Species name -> amount [mol] entering and leaving the bed.
    iterations : int
        Equilibrium evaluations of the adiabatic solve.
    """

    bed: int
    inlet_T: float
    outlet_T: float
    bed_conversion: float
    overall_conversion: float
    interstage_heat_removed: float
    removed: dict
    inlet_amounts: dict = field(repr=False)
    outlet_amounts: dict = field(repr=False)
    iterations: int = 0


@dataclass(frozen=True)
class ConversionTemperatureDiagram:
    """Data of a conversion-temperature diagram; conversions are overall (relative to the
    original feed) throughout.

    Attributes
    ----------
    equilibrium_curves : tuple of (str, ndarray, ndarray)
        ``(label, T [K], overall conversion [-])``: equilibrium of the original feed, and,
        after each interstage removal, of the gas leaving it.
    bed_lines : tuple of (ndarray, ndarray)
        Each bed's adiabatic operating line ``(T [K], overall conversion [-])`` from inlet
        to outlet: states of the bed inlet's enthalpy, along the bed's net change of
        composition (exact for one reaction).
    cooling_lines : tuple of (ndarray, ndarray)
        Interstage cooling at constant composition, ``(T [K], overall conversion [-])``.
    """

    equilibrium_curves: tuple
    bed_lines: tuple
    cooling_lines: tuple


@dataclass(frozen=True)
class StagedConverterResult:
    """Staged adiabatic beds with interstage cooling to set inlet temperatures.

    Attributes
    ----------
    key : str
        Key reactant.
    P : float
        Pressure [Pa].
    beds : tuple of BedRecord
    target : float or None
        Overall conversion asked for [-].
    beds_needed : int or None
        First bed after which ``target`` is reached; None if not reached (or no target).
    target_reached : bool
    best_conversion : float
        Highest overall conversion reached [-].
    diagram : ConversionTemperatureDiagram
    message : str
        Plain statement of the outcome (target reached or not, within how many beds).
    caution : str
    """

    key: str
    P: float
    beds: tuple
    target: float | None
    beds_needed: int | None
    target_reached: bool
    best_conversion: float
    diagram: ConversionTemperatureDiagram = field(repr=False)
    message: str = ""
    caution: str = CAUTION

    def rows(self) -> list[dict]:
        """The bed table: one dict per bed, units in the keys."""
        out = []
        for b in self.beds:
            row = {
                "bed": b.bed,
                "inlet T [K]": b.inlet_T,
                "inlet T [degC]": b.inlet_T - 273.15,
                "outlet T [K]": b.outlet_T,
                "outlet T [degC]": b.outlet_T - 273.15,
                "temperature rise [K]": b.outlet_T - b.inlet_T,
                f"bed conversion of {self.key} [-]": b.bed_conversion,
                f"overall conversion of {self.key} [-]": b.overall_conversion,
                "interstage heat removed [J]": b.interstage_heat_removed,
            }
            if any(bb.removed for bb in self.beds):
                row["removed after bed [mol]"] = dict(b.removed)
            out.append(row)
        return out

    def table(self) -> str:
        """The bed table as aligned text, with the outcome and the caution."""
        head = (f"{'bed':>3}  {'inlet T [K]':>11}  {'outlet T [K]':>12}  {'rise [K]':>8}  "
                f"{'bed conv. [-]':>13}  {'overall conv. [-]':>17}  {'heat removed after [J]':>22}")
        lines = [f"Staged adiabatic beds, key reactant {self.key}, P = {self.P:.6g} Pa", head]
        for b in self.beds:
            q = "-" if not np.isfinite(b.interstage_heat_removed) else f"{b.interstage_heat_removed:.6g}"
            lines.append(f"{b.bed:>3}  {b.inlet_T:11.2f}  {b.outlet_T:12.2f}  {b.outlet_T - b.inlet_T:8.2f}  "
                         f"{b.bed_conversion:13.5f}  {b.overall_conversion:17.5f}  {q:>22}")
        lines += [self.message, "CAUTION: " + self.caution]
        return "\n".join(lines)


def _removal_plan(interstage_removal, db) -> dict:
    plan = {}
    for bed, spec in dict(interstage_removal or {}).items():
        if isinstance(spec, str):
            spec = {spec: 1.0}
        elif not isinstance(spec, Mapping):
            spec = {s: 1.0 for s in spec}
        fractions = {}
        for name, frac in spec.items():
            frac = float(frac)
            if not 0.0 <= frac <= 1.0:
                raise EquilibriumInputError(f"interstage removal of {name} after bed {bed}: "
                                            f"the fraction removed must lie in [0, 1], got {frac}")
            fractions[db.resolve(name)] = frac
        plan[int(bed)] = fractions
    return plan


def staged_converter(species: Sequence[str], feed: Mapping[str, object], P, key: str, inlet_T, *,
                     n_beds: int | None = None, target: float | None = None, max_beds: int = 8,
                     reactions: Sequence[str] | None = None, gas_model: str = "ideal",
                     database: SpeciesDatabase | None = None,
                     binary_interaction: Mapping | None = None, approach: float = 0.0,
                     interstage_removal: Mapping | None = None, diagram_T=None,
                     diagram_points: int = 121, line_points: int = 41) -> StagedConverterResult:
    """Adiabatic equilibrium beds in series with interstage cooling to set inlet temperatures.

    Each bed takes its inlet gas to adiabatic equilibrium (:func:`adiabatic_equilibrium`);
    between beds the gas is cooled at constant composition (no catalyst, no reaction) to
    the next inlet temperature, and optionally loses named species (interstage absorption,
    e.g. SO3 in a double-absorption sulfuric-acid plant).  The beds are equilibrium limits:
    infinite catalyst, no heat loss.  The classic graphical treatment (equilibrium curve
    and adiabatic heat-up lines on a conversion-temperature diagram) is that of e.g.
    H. S. Fogler, *Elements of Chemical Reaction Engineering*, Prentice Hall, ch. on
    adiabatic equilibrium conversion and interstage cooling, and of M. J. King,
    W. G. Davenport, M. S. Moats, *Sulfuric Acid Manufacture*, 2nd ed., Elsevier, 2013.

    Parameters
    ----------
    species : sequence of str
        Species that may be present.
    feed : mapping of str to amount
        Original feed amounts [mol] (scalars: one converter design per call).
    P : float | str
        Pressure [Pa] or a quantity string, the same in every bed.
    key : str
        Key reactant, whose conversion is reported.
    inlet_T : float | str | sequence
        Inlet temperature of every bed [K], or one per bed (the sequence length then
        bounds the number of beds).
    n_beds : int, optional
        Number of beds to compute.
    target : float, optional
        Overall conversion of ``key`` to reach [-]; without ``n_beds``, beds are added until
        it is reached or ``max_beds`` is used up.
    max_beds : int
        Most beds tried for ``target``.
    reactions, gas_model, database, binary_interaction, approach
        As for :func:`adiabatic_equilibrium` (``approach`` [K] applies to every bed).
    interstage_removal : mapping, optional
        ``{bed: "SO3"}`` or ``{bed: {"SO3": 0.999}}``: after that bed, remove all (or the
        given fraction [-]) of the species before the next bed.
    diagram_T : array_like, optional
        Temperatures [K] of the equilibrium curves (default: spanning the beds).
    diagram_points, line_points : int
        Points on each equilibrium curve and each bed line.

    Returns
    -------
    StagedConverterResult

    Examples
    --------
    An invented SO2 converter: 10 % SO2, 11 % O2 in N2 at 1.2 bar, every bed entered at
    420 degC:

    >>> conv = staged_converter(["SO2", "O2", "SO3", "N2"], {"SO2": 10, "O2": 11, "N2": 79},
    ...                         "1.2 bar", "SO2", "420 degC", target=0.98)
    >>> conv.beds_needed
    3
    >>> print(f"{conv.beds[0].outlet_T - 273.15:.1f} degC, {conv.beds[-1].overall_conversion:.4f}")
    620.8 degC, 0.9860
    """
    db = database or bundled_database()
    key = db.resolve(key)
    P_f = float(to_pascal(P))
    names: list[str] = []
    for n in list(species) + list(feed) + [key]:
        r = db.resolve(n)
        if r not in names:
            names.append(r)
    feed0 = {db.resolve(k): float(to_si(v, "amount")) for k, v in feed.items()}
    if feed0.get(key, 0.0) <= 0:
        raise EquilibriumInputError(f"the key reactant {key} must be in the feed")
    if isinstance(inlet_T, (str, int, float)) or np.ndim(inlet_T) == 0:
        inlets = None
        T_common = float(to_kelvin(inlet_T))
    else:
        inlets = [float(to_kelvin(t)) for t in inlet_T]
        if not inlets:
            raise EquilibriumInputError("inlet_T: give one temperature or one per bed")
    if n_beds is None and target is None:
        raise EquilibriumInputError("give n_beds (how many beds) or target (the overall conversion to reach)")
    if target is not None and not 0.0 < float(target) < 1.0:
        raise EquilibriumInputError(f"target conversion must lie between 0 and 1, got {target}")
    if n_beds is not None:
        planned = int(n_beds)
        if planned < 1:
            raise EquilibriumInputError("n_beds must be at least 1")
        if inlets is not None and planned > len(inlets):
            raise EquilibriumInputError(f"n_beds = {planned} but only {len(inlets)} inlet "
                                        "temperature(s) given")
    else:
        planned = int(max_beds) if inlets is None else min(int(max_beds), len(inlets))
    plan = _removal_plan(interstage_removal, db)
    common = dict(reactions=reactions, gas_model=gas_model, database=db,
                  binary_interaction=binary_interaction, approach=approach, warn=False)

    n_key0 = feed0[key]
    current = dict(feed0)
    beds: list[BedRecord] = []
    sections = [(0, dict(feed0))]           # (first bed index, inlet gas) per removal section
    bed_ends = []                          # (inlet amounts, outlet amounts, H_in, T_in, T_out) per bed
    model = None
    beds_needed = None
    message_extra = ""
    for b in range(planned):
        T_b = T_common if inlets is None else inlets[b]
        ad = adiabatic_equilibrium(names, current, T_b, P_f, **common)
        if model is None:
            all_names = list(ad.equilibrium.species)
            model = _MixtureEnthalpy(_records_for(all_names, db), gas_model, binary_interaction)
        if not ad.all_converged:
            message_extra = (f" Bed {b + 1}: the adiabatic equilibrium did not converge "
                             f"({ad.message}); stopped.")
            break
        sp = list(ad.equilibrium.species)
        n_in = np.array([current.get(s, 0.0) for s in sp])
        n_out = np.asarray(ad.equilibrium.amount_array, dtype=float).reshape(len(sp))
        k = sp.index(key)
        T_out = float(ad.T)
        bed_conv = (n_in[k] - n_out[k]) / n_in[k] if n_in[k] > 0 else float("nan")
        overall = (n_key0 - n_out[k]) / n_key0
        bed_ends.append((n_in, n_out, float(ad.inlet_enthalpy), T_b, T_out))
        # interstage: cool at constant composition, then take out the named species
        has_next = b + 1 < planned
        removed = {}
        heat_removed = float("nan")
        n_next = n_out.copy()
        stop_now = target is not None and overall >= float(target) and beds_needed is None
        if stop_now:
            beds_needed = b + 1
        if has_next and not (stop_now and n_beds is None):
            T_next = T_common if inlets is None else inlets[b + 1]
            heat_removed = float(model.total(n_out, np.float64(T_out), P_f)
                                 - model.total(n_out, np.float64(T_next), P_f))
            for name, frac in plan.get(b + 1, {}).items():
                j = sp.index(name) if name in sp else None
                if j is not None and n_next[j] > 0:
                    removed[name] = float(frac * n_next[j])
                    n_next[j] -= removed[name]
        beds.append(BedRecord(bed=b + 1, inlet_T=T_b, outlet_T=T_out, bed_conversion=float(bed_conv),
                              overall_conversion=float(overall), interstage_heat_removed=heat_removed,
                              removed=removed, inlet_amounts=dict(zip(sp, n_in.tolist())),
                              outlet_amounts=dict(zip(sp, n_out.tolist())),
                              iterations=int(ad.iterations)))
        if stop_now and n_beds is None:
            break
        current = dict(zip(sp, n_next.tolist()))
        if removed:
            sections.append((b + 1, dict(current)))

    best = max((bb.overall_conversion for bb in beds), default=float("nan"))
    reached = beds_needed is not None
    if target is None:
        message = f"{len(beds)} bed(s): overall conversion of {key} {best:.6f} after bed {len(beds)}."
    elif reached:
        message = (f"Target overall conversion {float(target):.6g} of {key} reached after bed "
                   f"{beds_needed} ({beds[beds_needed - 1].overall_conversion:.6f}).")
    else:
        message = (f"Target overall conversion {float(target):.6g} of {key} is not reachable within "
                   f"{len(beds)} bed(s) at these inlet temperatures; the best is {best:.6f} "
                   f"after bed {len(beds)}.")
    message += message_extra

    diagram = _diagram(names, db, model, key, n_key0, P_f, sections, beds, bed_ends,
                       common, diagram_T, diagram_points, line_points)
    return StagedConverterResult(key=key, P=P_f, beds=tuple(beds),
                                 target=None if target is None else float(target),
                                 beds_needed=beds_needed, target_reached=reached, best_conversion=float(best),
                                 diagram=diagram, message=message)


def _diagram(names, db, model, key, n_key0, P, sections, beds, bed_ends, common, diagram_T,
             diagram_points, line_points) -> ConversionTemperatureDiagram:
    """Equilibrium curves (overall conversion), bed operating lines and cooling lines."""
    if not beds:
        return ConversionTemperatureDiagram((), (), ())
    if diagram_T is None:
        lo = min(b.inlet_T for b in beds) - 30.0
        hi = max(b.outlet_T for b in beds) + 60.0
        diagram_T = np.linspace(lo, hi, int(diagram_points))
    T_grid = np.asarray(to_kelvin(diagram_T), dtype=float)
    eq_kw = {k: v for k, v in common.items() if k not in ("approach",)}
    curves = []
    for first_bed, gas in sections:
        feed_arrays = {n: v for n, v in gas.items() if v > 0}
        res = equilibrium(names, feed_arrays, T_grid, P, **eq_kw)
        X = (n_key0 - res.amounts[key]) / n_key0
        label = "original feed" if first_bed == 0 else f"gas entering bed {first_bed + 1}"
        curves.append((label, T_grid.copy(), np.asarray(X, dtype=float)))
    lam = np.linspace(0.0, 1.0, int(line_points))
    lines = []
    k = list(model.records[j].name for j in range(len(model.records))).index(key)
    for (n_in, n_out, H_in, T_in, T_out) in bed_ends:
        n_path = n_in[None, :] + lam[:, None] * (n_out - n_in)[None, :]
        T_path = _frozen_temperature(model, n_path, np.full(lam.size, H_in), P,
                                     T_in + lam * (T_out - T_in))
        lines.append((T_path, (n_key0 - n_path[:, k]) / n_key0))
    cooling = []
    for b_this, b_next in zip(beds[:-1], beds[1:]):
        X = b_this.overall_conversion
        cooling.append((np.array([b_this.outlet_T, b_next.inlet_T]), np.array([X, X])))
    return ConversionTemperatureDiagram(tuple(curves), tuple(lines), tuple(cooling))
