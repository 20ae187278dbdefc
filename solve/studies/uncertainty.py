"""From the uncertainty of thermodynamic data to a design margin.

The standard enthalpy of formation ΔfH° and the standard entropy S° of every species are
known only to within a standard uncertainty u (one standard deviation, as in the GUM:
JCGM 100:2008, *Evaluation of measurement data - Guide to the expression of uncertainty
in measurement*, BIPM, 2008).  An error δΔfH°, δS° moves the species' standard Gibbs
energy at every temperature by ``δg°(T) = δΔfH° − T δS°`` (cp taken as exact), hence
K(T), the equilibrium composition, the conversion and the answers of the inverse
questions ("the temperature for 20 % conversion").  This module carries the data
uncertainty through to those answers in two ways:

* **Monte Carlo** (JCGM 101:2008, *Propagation of distributions using a Monte Carlo
  method*, BIPM, 2008): the data are drawn ``samples`` times from independent normal
  distributions (``numpy.random.default_rng(seed)``, reproducible) and every draw at
  every state is solved in one batched call of :func:`eqdesign.solve.equilibrium` with
  ``g0_shift``; intervals are percentiles of the results.  Inverse questions are solved
  for every draw together by a bracketed, vectorised Illinois regula falsi
  (M. Dowell, P. Jarratt, BIT 11 (1971) 168-174).
* **Linearised** (the GUM law of propagation of uncertainty): sensitivity coefficients
  from central finite differences in each species' g° (one batched call), with
  ``∂Y/∂ΔfH°_i = ∂Y/∂g°_i`` and ``∂Y/∂S°_i = −T ∂Y/∂g°_i``; for an inverse question the
  implicit-function rule ``dT/dθ = −(∂X/∂θ)/(∂X/∂T)``.  ``u(Y)² = Σ_k (c_k u_k)²``.

The variance shares ``(c_k u_k)² / u(Y)²`` rank the data by how much they move the
answer: check the top entries before committing a design.

Where the uncertainties come from (first that applies, per datum): the user's
``overrides``; the species file's ``uncertainty:`` block; the key values and class
defaults of ``eqdesign/data/uncertainty_defaults.yaml``.  Species defined by
reaction-level data (ΔrH°, ΔrS°) carry u(ΔrH°), u(ΔrS°), and the data of their partner
species enter through Hess's law.

Assumptions, stated with every result: the data of different species are independent;
ΔfH° and S° of a species are independent; errors are normal; cp data are exact.  Only the
thermodynamic data are uncertain here: the answers remain equilibrium limits, and a real
reactor reaches less.  Equipment that runs near these answers handles flammable and toxic
gases at high pressure: its design must follow the applicable local codes and licensed
engineering practice.
"""
from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numpy as np

from ...thermo.data_uncertainty import UncertaintyDefaults, UncertaintyInputError
from ...thermo.database import SpeciesDatabase
from ...thermo.reactions import bundled_database
from ..core.equilibrium import equilibrium
from ..core.inputs import pressures, temperatures
from .answers import shape_out
# ParameterMap, LnKUncertainty, the ln K functions, BatchedSystem, RankedDatum and ranking_rows
# are served from here too: the public names of the uncertainty studies keep their address.
from .data_parameters import ParameterMap, parameter_map
from .feeds import approach_kelvin, approach_side, approach_temperatures
from .ln_k_uncertainty import LnKUncertainty, ln_K_uncertainty, reaction_level_ln_K_uncertainty
from .perturbed_system import BatchedSystem, batched_system, output_gibbs_derivatives
from .uncertainty_statistics import (RankedDatum, check_method, coverage_factor, percent_labels, quantiles,
                                     rank_data, ranking_rows)


#: Finite-difference step in temperature for ∂X/∂T [K].
T_STEP = 0.02
#: Root tolerances of the inverse questions: bracket width [K] and |X − target| [-].
ROOT_XTOL = 1e-7
ROOT_FTOL = 1e-11

#: Statement of the assumptions, shown wherever results are.
ASSUMPTIONS = ("data of different species treated as independent (no correlation); ΔfH° and S° of a "
               "species independent of each other; normal distributions; heat-capacity data taken as "
               "exact, so δg°(T) = δΔfH° − T δS°")

CAUTION = ("These intervals cover the uncertainty of the thermodynamic data only. They do not cover "
           "kinetics, catalyst activity, heat-transfer limits, measurement and control error, or the "
           "choice of the equilibrium model, and a real reactor stops short of equilibrium. The "
           "reactors in question often handle flammable or toxic gases at high pressure and "
           "temperature: the design must follow the applicable local codes and licensed engineering "
           "practice.")

# =========================================================================== forward propagation
@dataclass(frozen=True)
class EquilibriumUncertainty:
    """Equilibrium conversion and outlet composition with intervals from data uncertainty.

    Quantities are named ``"conversion <key>"`` and ``"y <species>"`` (gas mole fractions),
    all dimensionless; each dict maps a quantity to an array of the state shape ``shape``
    (floats for a single state).

    Attributes
    ----------
    method : str
        ``"monte-carlo"`` or ``"linear"``.
    level : float
        Coverage probability of the intervals [-] (0.95: from the 2.5th to the 97.5th percentile).
    samples : int
        Monte Carlo draws (0 for the linearised method).
    seed : int | None
    T, T_equilibrium, P : ndarray
        Operating temperature [K], temperature at which equilibrium is evaluated (T ± the
        approach) [K] and pressure [Pa] of each state.
    quantities : tuple[str, ...]
    nominal, lower, median, upper, standard_uncertainty : dict
        Values with the nominal data; interval ends; median (the nominal for the linearised
        method); standard uncertainty (sample standard deviation for Monte Carlo).
    sensitivity : dict
        Quantity -> sensitivity coefficients, shape (*shape, n_data) [per J/mol or per J/(mol K)].
    data : tuple[UncertainDatum, ...]
    sample_values : dict | None
        Quantity -> Monte Carlo values, shape (samples, *shape).
    n_failed : ndarray
        Monte Carlo draws that did not converge, per state (excluded from the statistics).
    approach : float | None
        Temperature approach [K].
    """

    method: str
    level: float
    samples: int
    seed: int | None
    T: np.ndarray
    T_equilibrium: np.ndarray
    P: np.ndarray
    key: str | None
    quantities: tuple
    nominal: dict = field(repr=False)
    lower: dict = field(repr=False)
    median: dict = field(repr=False)
    upper: dict = field(repr=False)
    standard_uncertainty: dict = field(repr=False)
    sensitivity: dict = field(repr=False)
    data: tuple = field(repr=False)
    sample_values: dict | None = field(default=None, repr=False)
    n_failed: np.ndarray | None = field(default=None, repr=False)
    approach: float | None = None
    message: str = ""

    @property
    def shape(self) -> tuple:
        return np.shape(self.T)

    def _q(self, quantity: str | None) -> str:
        if quantity is None:
            quantity = self.quantities[0]
        if quantity not in self.quantities:
            raise UncertaintyInputError(f"quantity {quantity!r}: choose one of {', '.join(self.quantities)}")
        return quantity

    def contributions(self, quantity: str | None = None) -> np.ndarray:
        """Variance contribution (c_k u_k)² of each datum, shape (*shape, n_data) [quantity unit²]."""
        c = np.asarray(self.sensitivity[self._q(quantity)])
        return (c * np.array([d.u for d in self.data])) ** 2

    def ranking(self, quantity: str | None = None, *, at=None, by: str = "datum") -> tuple:
        """Data ranked by their share of the variance of ``quantity``.

        Parameters
        ----------
        quantity : str, optional
            Defaults to the first quantity (the conversion of the key when one was given).
        at : int | tuple, optional
            Index of one state; by default the shares are averaged over all states.
        by : {"datum", "species"}
            Rank single data (ΔfH°, S° separately; :class:`RankedDatum` entries) or species
            (both data together; ``(rank, species, contribution, share)`` tuples).  Data
            with zero uncertainty (ΔfH° of elements in their reference state) are left out.
        """
        c = np.asarray(self.sensitivity[self._q(quantity)])
        c = c[at] if at is not None else c
        return rank_data(self.data, c.reshape(-1, len(self.data)), np.array([d.u for d in self.data]), by)

    def band(self, quantity: str | None = None) -> "Band":
        """Band data for a plot of ``quantity`` against the operating temperature."""
        q = self._q(quantity)
        T = np.asarray(self.T, dtype=float)
        if T.ndim != 1:
            raise UncertaintyInputError("a band needs a 1-D temperature axis; propagate over T as a 1-D array")
        order = np.argsort(T)
        pick = lambda d: np.asarray(d[q], dtype=float)[order]   # noqa: E731
        return Band(x=T[order], nominal=pick(self.nominal), lower=pick(self.lower), median=pick(self.median),
                    upper=pick(self.upper), level=self.level, quantity=q, unit="-", x_label="temperature [K]",
                    method=self.method, samples=self.samples)

    def columns(self, quantity: str | None = None) -> dict:
        """Interval columns for a table, headers carrying units: ``"<q> [-]"`` (nominal),
        ``"<q> 2.5 % [-]"``, ``"<q> median [-]"``, ``"<q> 97.5 % [-]"``, ``"u(<q>) [-]"``."""
        q = self._q(quantity)
        lo, hi = percent_labels(self.level)
        return {f"{q} [-]": self.nominal[q], f"{q} {lo} [-]": self.lower[q], f"{q} median [-]": self.median[q],
                f"{q} {hi} [-]": self.upper[q], f"u({q}) [-]": self.standard_uncertainty[q]}

    def rows(self, quantities: Sequence[str] | None = None) -> list[dict]:
        """One row per state: ``T [K]``, ``P [Pa]`` (and ``T equilibrium [K]`` with an approach),
        then the interval columns of each quantity (default: all)."""
        cols: dict = {"T [K]": self.T, "P [Pa]": self.P}
        if self.approach:
            cols["T equilibrium [K]"] = self.T_equilibrium
        for q in (quantities or self.quantities):
            cols.update(self.columns(q))
        flat = {k: np.broadcast_to(np.asarray(v, dtype=float), self.shape).reshape(-1) for k, v in cols.items()}
        n = int(np.prod(self.shape)) if self.shape else 1
        return [{k: float(v[i]) for k, v in flat.items()} for i in range(n)]


def propagate_equilibrium(species: Sequence[str], feed: Mapping[str, object], T, P, *, key: str | None = None,
                          reactions: Sequence[str] | None = None, gas_model: str = "ideal", approach=None,
                          database: SpeciesDatabase | None = None, method: str = "monte-carlo",
                          samples: int = 400, seed: int | None = 1, level: float = 0.95,
                          overrides: Mapping | None = None, defaults: UncertaintyDefaults | None = None,
                          binary_interaction: Mapping | None = None) -> EquilibriumUncertainty:
    """Equilibrium conversion and outlet composition with intervals from the data uncertainty.

    Monte Carlo (JCGM 101:2008): ``samples`` draws of every uncertain datum (independent
    normal errors with the standard uncertainties of :func:`parameter_map`), all draws at
    all states solved in one batched :func:`eqdesign.solve.equilibrium` call (``g0_shift``
    ``= δΔfH° − T δS°``); percentiles give the interval.  Linearised (GUM): sensitivity
    coefficients by central differences in each g° (step 1e-3 RT), interval nominal ± z u.
    The sensitivities, and so :meth:`EquilibriumUncertainty.ranking`, are computed for both.

    Parameters
    ----------
    species, feed, T, P, reactions, gas_model, database, binary_interaction
        As for :func:`eqdesign.solve.equilibrium` (arrays broadcast; T [K], P [Pa], feed [mol]).
    key : str, optional
        Key reactant: adds ``"conversion <key>"`` as the first quantity.
    approach : float | str, optional
        Temperature approach ΔT [K]; equilibrium is evaluated at T + ΔT or T − ΔT, whichever
        gives the lower nominal conversion of ``key`` (needs ``key``).
    method : {"monte-carlo", "linear"}
    samples : int
        Monte Carlo draws (20 to 100000).
    seed : int | None
        Seed of ``numpy.random.default_rng``; the same seed gives the same result.
    level : float
        Coverage probability of the intervals [-].
    overrides : mapping, optional
        The user's standard uncertainties (see :func:`parameter_map`).
    defaults : UncertaintyDefaults, optional

    Returns
    -------
    EquilibriumUncertainty

    Examples
    --------
    Ammonia from 1:3 N2:H2 at 200 bar and 800 K, linearised (CODATA key-value uncertainty
    of ΔfH°(NH3), 0.35 kJ/mol, from memory, dominates):

    >>> r = propagate_equilibrium(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, 800.0, "200 bar",
    ...                           key="N2", method="linear")
    >>> round(r.nominal["conversion N2"], 3), round(r.standard_uncertainty["conversion N2"], 4)
    (0.25, 0.0087)
    >>> r.ranking()[0].datum.label
    'ΔfH°(NH3)'
    """
    check_method(method, samples, level, seed)
    db = database or bundled_database()
    dT = approach_kelvin(approach)
    if dT and key is None:
        raise UncertaintyInputError("an approach needs the key reactant (key=...) to choose its side")
    T_arr = temperatures(T)
    P_arr = pressures(P)
    res0 = equilibrium(species, feed, T_arr, P_arr, reactions=reactions, gas_model=gas_model, key=key,
                       database=db, binary_interaction=binary_interaction, warn=False)
    names = list(res0.species)
    shape = res0.shape
    p = int(np.prod(shape)) if shape else 1
    key_r = db.resolve(key) if key else None
    system = batched_system(res0.feed_array, names, res0.gas_mask, key=key_r, reactions=res0.reactions,
                     gas_model=gas_model, database=db, binary_interaction=binary_interaction)
    T_op = np.broadcast_to(T_arr, shape).reshape(-1)
    P_f = np.broadcast_to(P_arr, shape).reshape(-1)
    state = np.arange(p)
    if dT:
        both_T = approach_temperatures(T_op, dT)
        am, fe, _ = system.solve(both_T, np.concatenate([P_f, P_f]), np.concatenate([state, state]))
        hot = approach_side(system.conversion(am, fe)) > 0
        T_eq = np.where(hot, T_op + dT, T_op - dT)
        am0, fe0 = np.where(hot[:, None], am[p:], am[:p]), np.where(hot[:, None], fe[p:], fe[:p])
    else:
        T_eq = T_op
        am0, fe0 = res0.amount_array.reshape(p, -1), res0.feed_array.reshape(p, -1)
    Y0 = system.quantities(am0, fe0)                                    # (p, nq)
    qnames = system.quantity_names()
    pm = parameter_map(names, database=db, overrides=overrides, defaults=defaults)
    u = pm.u
    # sensitivities (both methods): ∂Y/∂θ_k = Σ_j ∂Y/∂g_j ∂g_j/∂θ_k
    dYdg = output_gibbs_derivatives(system, T_eq, P_f)                        # (p, nq, ns)
    chain = pm.chain_factors(T_eq)                                       # (p, nd, ns)
    sens = np.einsum("pqj,pkj->pqk", dYdg, chain)                        # (p, nq, nd)
    sigma_lin = np.sqrt(((sens * u) ** 2).sum(axis=-1))                  # (p, nq)
    samples_out = None
    n_failed = np.zeros(p, dtype=int)
    if method == "linear":
        z = coverage_factor(level)
        lower, median, upper, std = Y0 - z * sigma_lin, Y0.copy(), Y0 + z * sigma_lin, sigma_lin
        n_samples = 0
        msg = "linearised propagation (GUM law of propagation of uncertainty)"
    else:
        rng = np.random.default_rng(seed)
        theta = rng.standard_normal((samples, len(u))) * u               # (S, nd)
        A, B = pm.shift_parts(theta)                                     # (S, ns)
        shift = A[:, None, :] + T_eq[None, :, None] * B[:, None, :]       # (S, p, ns)
        am, fe, conv = system.solve(np.broadcast_to(T_eq, (samples, p)).reshape(-1),
                                    np.broadcast_to(P_f, (samples, p)).reshape(-1),
                                    np.broadcast_to(state, (samples, p)).reshape(-1),
                                    shift.reshape(samples * p, -1))
        Ys = system.quantities(am, fe).reshape(samples, p, -1)            # (S, p, nq)
        n_failed = (~conv).reshape(samples, p).sum(axis=0)
        lo_q, hi_q = 0.5 - level / 2.0, 0.5 + level / 2.0
        lower, median, upper = quantiles(Ys, [lo_q, 0.5, hi_q])
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            std = np.nanstd(Ys, axis=0, ddof=1)
        n_samples = samples
        samples_out = {q: Ys[..., i].reshape((samples,) + shape) for i, q in enumerate(qnames)}
        msg = f"Monte Carlo, {samples} draws, seed {seed}"
        if n_failed.any():
            msg += f"; {int(n_failed.sum())} draw-state(s) did not converge and are left out"

    def as_dict(a):
        return {q: shape_out(a[:, i], shape) for i, q in enumerate(qnames)}

    return EquilibriumUncertainty(
        method=method, level=float(level), samples=n_samples, seed=seed if method == "monte-carlo" else None,
        T=shape_out(T_op, shape), T_equilibrium=shape_out(T_eq, shape), P=shape_out(P_f, shape), key=key_r,
        quantities=tuple(qnames), nominal=as_dict(Y0), lower=as_dict(lower), median=as_dict(median),
        upper=as_dict(upper), standard_uncertainty=as_dict(std),
        sensitivity={q: sens[:, i, :].reshape(shape + (len(u),)) for i, q in enumerate(qnames)},
        data=pm.data, sample_values=samples_out, n_failed=shape_out(n_failed, shape), approach=dT,
        message=msg + "; " + ASSUMPTIONS)



# =========================================================================== outputs
@dataclass(frozen=True)
class Band:
    """Band data for a plot: a quantity against an axis with its interval.

    Attributes
    ----------
    x : ndarray
        Axis values, increasing (temperature [K]).
    nominal, lower, median, upper : ndarray
        Quantity with the nominal data, interval ends and median [``unit``].
    level : float
    quantity, unit, x_label, method : str
    samples : int
    """

    x: np.ndarray
    nominal: np.ndarray
    lower: np.ndarray
    median: np.ndarray
    upper: np.ndarray
    level: float
    quantity: str
    unit: str
    x_label: str
    method: str
    samples: int = 0

    @property
    def label(self) -> str:
        """Legend text, e.g. ``"95 % interval (Monte Carlo, 400 draws)"``."""
        how = f"Monte Carlo, {self.samples} draws" if self.method == "monte-carlo" else "linearised"
        return f"{100 * self.level:.3g} % interval ({how})"

    def rows(self) -> list[dict]:
        """The band as table rows, headers carrying units."""
        lo, hi = percent_labels(self.level)
        q, un = self.quantity, self.unit
        return [{self.x_label: float(x), f"{q} [{un}]": float(n), f"{q} {lo} [{un}]": float(a),
                 f"{q} median [{un}]": float(md), f"{q} {hi} [{un}]": float(b)}
                for x, n, a, md, b in zip(self.x, self.nominal, self.lower, self.median, self.upper)]


# =========================================================================== settings
@dataclass(frozen=True)
class UncertaintySettings:
    """What a case file's uncertainty switch maps to.

    Mapping layout (all keys optional)::

        {"method": "monte-carlo" | "linear",   # default "monte-carlo"
         "samples": 400,                        # Monte Carlo draws, 20 to 100000
         "seed": 1,                             # integer seed (reproducible); null for fresh entropy
         "level": 0.95,                         # coverage probability, or "95 %"
         "overrides": {"NH3": {"formation_enthalpy": "0.35 kJ/mol", "entropy": "0.05 J/(mol K)"}},
         "defaults": "path/to/uncertainty_defaults.yaml"}   # optional replacement defaults file

    :meth:`as_kwargs` gives the keyword arguments of :func:`propagate_equilibrium` and
    :func:`temperature_interval`.
    """

    method: str = "monte-carlo"
    samples: int = 400
    seed: int | None = 1
    level: float = 0.95
    overrides: Mapping = field(default_factory=dict)
    defaults_file: str | None = None

    def as_kwargs(self) -> dict:
        out = {"method": self.method, "samples": self.samples, "seed": self.seed, "level": self.level,
               "overrides": dict(self.overrides) or None}
        if self.defaults_file:
            out["defaults"] = UncertaintyDefaults.from_file(self.defaults_file)
        return out


SETTINGS_KEYS = ("method", "samples", "seed", "level", "overrides", "defaults")
