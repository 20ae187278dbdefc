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

import statistics
import warnings
from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numbers
import numpy as np

from ...thermo.data_uncertainty import (METHODS, REACTION_ENTHALPY, REACTION_ENTROPY, UncertainDatum,
                                        UncertaintyDefaults, UncertaintyInputError, bundled_defaults,
                                        kinds_of, normalise_overrides, read_u, species_uncertainty)
from ...thermo.database import SpeciesDatabase
from ...thermo.models import R
from ...thermo.reactions import Reaction, ReactionLevelData, bundled_database
from ...thermo.species import Species
from ...thermo.units import to_kelvin
from ..core.equilibrium import equilibrium
from ..core.inputs import pressures, temperatures
from .feeds import approach_kelvin, approach_side, approach_temperatures


#: Largest number of states handed to one call of :func:`equilibrium` (memory bound);
#: below it, every propagation is a single batched call.
MAX_STATES_PER_CALL = 200_000

#: Finite-difference step in g°/RT for the sensitivity coefficients [-].
G_STEP = 1e-3
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

# =========================================================================== parameter map
@dataclass(frozen=True)
class ParameterMap:
    """How the uncertain data move the standard Gibbs energies of a system's species.

    ``δg°_j(T) = Σ_k θ_k coefficients[k, j] × (1 for enthalpies, −T for entropies)``, where
    θ_k is the error of datum k.  A species defined by reaction-level data takes
    ``(δΔrH° − T δΔrS°)/ν_X − Σ_i (ν_i/ν_X) δg°_i`` (Hess's law over its partners).

    Attributes
    ----------
    species : tuple[str, ...]
        The system's species, in the column order of ``coefficients``.
    data : tuple[UncertainDatum, ...]
        The uncertain data, in the row order of ``coefficients``.
    coefficients : ndarray, shape (n_data, n_species)
    """

    species: tuple
    data: tuple
    coefficients: np.ndarray = field(repr=False)

    @property
    def u(self) -> np.ndarray:
        """Standard uncertainties, shape (n_data,) [J/mol or J/(mol K)]."""
        return np.array([d.u for d in self.data], dtype=float)

    @property
    def is_entropy(self) -> np.ndarray:
        return np.array([d.is_entropy for d in self.data], dtype=bool)

    def shift_parts(self, theta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(A, B) with ``δg° = A + T B`` [J/mol], both shape (..., n_species), for data errors
        ``theta`` of shape (..., n_data)."""
        theta = np.asarray(theta, dtype=float)
        e = self.is_entropy
        A = (theta * ~e) @ self.coefficients
        B = -(theta * e) @ self.coefficients
        return A, B

    def chain_factors(self, T) -> np.ndarray:
        """∂g°_j/∂θ_k at temperatures T [K]: shape (*shape(T), n_data, n_species)."""
        T = np.asarray(T, dtype=float)
        f = np.where(self.is_entropy, -T[..., None], 1.0)          # (..., n_data)
        return f[..., None] * self.coefficients


def parameter_map(species: Sequence[str], *, database: SpeciesDatabase | None = None,
                  overrides: Mapping | None = None, defaults: UncertaintyDefaults | None = None) -> ParameterMap:
    """The uncertain data of a system of species and how they shift each species' g°.

    Parameters
    ----------
    species : sequence of str
        The system's species (database names or aliases).
    database : SpeciesDatabase, optional
        Defaults to the bundled database.
    overrides : mapping, optional
        The user's own standard uncertainties, ``{species: {kind: u}}`` with ``kind`` one of
        ``formation_enthalpy`` [J/mol], ``entropy`` [J/(mol K)] (``reaction_enthalpy``,
        ``reaction_entropy`` for a species defined by reaction-level data); numbers in SI or
        strings with units (``"0.4 kJ/mol"``).
    defaults : UncertaintyDefaults, optional
        Defaults to :meth:`UncertaintyDefaults.bundled`.

    Returns
    -------
    ParameterMap

    Examples
    --------
    >>> pm = parameter_map(["N2", "H2", "NH3"])
    >>> [(d.label, d.u) for d in pm.data]
    [('ΔfH°(N2)', 0.0), ('S°(N2)', 0.004), ('ΔfH°(H2)', 0.0), ('S°(H2)', 0.003),
     ('ΔfH°(NH3)', 350.0), ('S°(NH3)', 0.05)]
    """
    db = database or bundled_database()
    names = []
    for n in species:
        r = db.resolve(n)
        if r not in names:
            names.append(r)
    user = normalise_overrides(overrides, db)
    defaults = defaults or bundled_defaults()
    order: list[tuple[str, str]] = []
    data: dict[tuple[str, str], UncertainDatum] = {}
    columns: list[dict] = []

    def expand(sp: Species, coef: float, acc: dict, depth: int = 0):
        if depth > 20:
            raise UncertaintyInputError(f"species {sp.name}: reaction-level definitions nest too deeply")
        kinds = kinds_of(sp)
        if (sp.name, kinds[0]) not in data:
            for k, d in species_uncertainty(sp, overrides=user.get(sp.name), defaults=defaults).items():
                data[(sp.name, k)] = d
                order.append((sp.name, k))
        scale = float(sp.model.nu) if kinds[0] == REACTION_ENTHALPY else 1.0
        for k in kinds:
            acc[(sp.name, k)] = acc.get((sp.name, k), 0.0) + coef / scale
        if kinds[0] == REACTION_ENTHALPY:
            for partner, nu_i in sp.model.partners:
                expand(partner, -coef * float(nu_i) / float(sp.model.nu), acc, depth + 1)

    for n in names:
        acc: dict = {}
        expand(db.species[n], 1.0, acc)
        columns.append(acc)
    C = np.zeros((len(order), len(names)))
    for j, acc in enumerate(columns):
        for key, c in acc.items():
            C[order.index(key), j] += c
    C.setflags(write=False)
    return ParameterMap(species=tuple(names), data=tuple(data[k] for k in order), coefficients=C)


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


# =========================================================================== batched solving
@dataclass(frozen=True)
class BatchedSystem:
    names: tuple
    feed: dict                 # name -> (p,) feed amounts per state
    gas_mask: np.ndarray
    key: str | None
    reactions: tuple
    gas_model: str
    database: SpeciesDatabase
    binary_interaction: Mapping | None

    def solve(self, T, P, state, shift=None):
        """Amounts (n, ns), converged (n,) at flat T, P (n,), feed row ``state`` (n,) and
        g° shifts ``shift`` (n, ns) [J/mol]; one equilibrium call per MAX_STATES_PER_CALL."""
        T = np.asarray(T, dtype=float).reshape(-1)
        P = np.broadcast_to(np.asarray(P, dtype=float).reshape(-1), T.shape)
        n, ns = T.size, len(self.names)
        amounts = np.full((n, ns), np.nan)
        feed_out = np.zeros((n, ns))
        conv = np.zeros(n, dtype=bool)
        for s in range(0, n, MAX_STATES_PER_CALL):
            sl = slice(s, min(n, s + MAX_STATES_PER_CALL))
            feed = {k: v[state[sl]] for k, v in self.feed.items()}
            g0_shift = None
            if shift is not None:
                g0_shift = {name: shift[sl, j] for j, name in enumerate(self.names) if np.any(shift[sl, j] != 0)}
            res = equilibrium(list(self.names), feed, T[sl], P[sl], reactions=self.reactions or None,
                              gas_model=self.gas_model, database=self.database,
                              binary_interaction=self.binary_interaction, g0_shift=g0_shift or None, warn=False)
            if tuple(res.species) != self.names:
                raise RuntimeError("species order changed between solver calls")   # pragma: no cover
            amounts[sl] = res.amount_array
            feed_out[sl] = res.feed_array
            conv[sl] = res.converged
        return amounts, feed_out, conv

    def conversion(self, amounts, feed):
        k = self.names.index(self.key)
        with np.errstate(invalid="ignore", divide="ignore"):
            return (feed[..., k] - amounts[..., k]) / feed[..., k]

    def quantities(self, amounts, feed) -> np.ndarray:
        """(..., n_quantities): conversion of the key (if any), then gas mole fractions."""
        gas = np.where(self.gas_mask, amounts, 0.0)
        with np.errstate(invalid="ignore", divide="ignore"):
            y = gas / gas.sum(axis=-1, keepdims=True)
        cols = [y[..., j] for j in np.flatnonzero(self.gas_mask)]
        if self.key is not None:
            cols.insert(0, self.conversion(amounts, feed))
        return np.stack(cols, axis=-1)

    def quantity_names(self) -> list[str]:
        names = [f"y {self.names[j]}" for j in np.flatnonzero(self.gas_mask)]
        if self.key is not None:
            names.insert(0, f"conversion {self.key}")
        return names


def batched_system(species, feed_by_state: np.ndarray, names, gas_mask, *, key, reactions, gas_model, database,
            binary_interaction) -> BatchedSystem:
    fa = feed_by_state.reshape(-1, len(names))
    feed = {names[j]: fa[:, j].copy() for j in range(len(names)) if np.any(fa[:, j] > 0)}
    return BatchedSystem(tuple(names), feed, gas_mask, key, tuple(reactions or ()), gas_model, database, binary_interaction)


def g_steps(T: np.ndarray) -> np.ndarray:
    return G_STEP * R * np.asarray(T, dtype=float)


def output_gibbs_derivatives(system: BatchedSystem, T, P) -> np.ndarray:
    """Central differences ∂Y/∂g°_j at flat states T, P (p,): shape (p, n_q, ns) [per J/mol]."""
    T = np.asarray(T, dtype=float)
    p, ns = T.size, len(system.names)
    h = g_steps(T)                                       # (p,)
    sign = np.array([1.0, -1.0])
    # rows: (species j, sign, state)
    shift = np.zeros((ns, 2, p, ns))
    for j in range(ns):
        shift[j, :, :, j] = sign[:, None] * h[None, :]
    state = np.broadcast_to(np.arange(p), (ns, 2, p)).reshape(-1)
    amounts, feed, _ = system.solve(np.broadcast_to(T, (ns, 2, p)).reshape(-1),
                                    np.broadcast_to(P, (ns, 2, p)).reshape(-1), state,
                                    shift.reshape(-1, ns))
    Y = system.quantities(amounts, feed).reshape(ns, 2, p, -1)
    d = (Y[:, 0] - Y[:, 1]) / (2.0 * h[None, :, None])    # (ns, p, nq)
    return np.moveaxis(d, 0, -1)                           # (p, nq, ns)


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


def percent_labels(level: float) -> tuple[str, str]:
    lo = 50.0 * (1.0 - level)
    return f"{lo:.3g} %", f"{100.0 - lo:.3g} %"


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
    dT = _approach(approach)
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
    system = batched_system(species, res0.feed_array, names, res0.gas_mask, key=key_r, reactions=res0.reactions,
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


def shape_out(x, shape):
    x = np.asarray(x)
    return x.reshape(shape) if shape else x.reshape(()).item()


def _approach(approach) -> float | None:
    if approach is None:
        return None
    return approach_kelvin(approach)


# =========================================================================== K(T)
@dataclass(frozen=True)
class LnKUncertainty:
    """ln K(T) of a reaction with its standard uncertainty from the data.

    Attributes
    ----------
    T : float | ndarray
        Temperature [K].
    ln_K : float | ndarray
        ln K with the nominal data [-].
    standard_uncertainty : float | ndarray
        u(ln K) [-] (exact: ln K is linear in the data).
    K_lower, K_upper : float | ndarray
        exp(ln K ∓ z u) at coverage ``level`` [-].
    level : float
    sensitivity : ndarray, shape (*shape(T), n_data)
        ∂ ln K/∂datum [per J/mol or per J/(mol K)].
    data : tuple[UncertainDatum, ...]
    """

    T: object
    ln_K: object
    standard_uncertainty: object
    K_lower: object
    K_upper: object
    level: float
    sensitivity: np.ndarray = field(repr=False)
    data: tuple = field(repr=False)

    def ranking(self, *, at=None, by: str = "datum") -> tuple:
        """Data ranked by their share of Var ln K (averaged over T unless ``at`` is given)."""
        c = self.sensitivity if at is None else self.sensitivity[at]
        return rank_data(self.data, np.reshape(c, (-1, len(self.data))), np.array([d.u for d in self.data]), by)


def ln_K_uncertainty(reaction: str | Reaction, T, *, database: SpeciesDatabase | None = None,
                     overrides: Mapping | None = None, defaults: UncertaintyDefaults | None = None,
                     level: float = 0.95) -> LnKUncertainty:
    """Standard uncertainty of ln K(T) of a reaction from its species' data.

    ``δ ln K = −Σ_i ν_i δg°_i/(RT)`` with ``δg°_i = δΔfH°_i − T δS°_i``; for independent data
    ``u²(ln K) = Σ_i ν_i² (u²(ΔfH°_i)/(RT)² + u²(S°_i)/R²)`` (species defined by
    reaction-level data contribute through their ΔrH°, ΔrS° and partners).  Exact, since
    ln K is linear in the data.

    Parameters
    ----------
    reaction : str | Reaction
    T : float | array_like | str
        Temperature [K].
    database, overrides, defaults
        As for :func:`parameter_map`.
    level : float
        Coverage probability of the K interval [-].

    Returns
    -------
    LnKUncertainty

    Examples
    --------
    N2 + 3 H2 = 2 NH3 at 700 K: 2 × 350 J/mol (u(ΔfH°(NH3)), CODATA, from memory) over RT
    gives 0.1203; the entropies (2 × 0.05, 3 × 0.003, 0.004 J/(mol K)) over R add in quadrature:

    >>> r = ln_K_uncertainty("N2 + 3 H2 = 2 NH3", 700.0)
    >>> round(r.standard_uncertainty, 4)
    0.1209
    """
    db = database or bundled_database()
    rxn = reaction if isinstance(reaction, Reaction) else Reaction.parse(reaction, db)
    T = np.asarray(to_kelvin(T), dtype=float)
    pm = parameter_map(rxn.names, database=db, overrides=overrides, defaults=defaults)
    nu = np.array([rxn.stoichiometry[n] for n in pm.species])
    chain = pm.chain_factors(T)                                      # (..., nd, ns)
    sens = -(chain @ nu) / (R * T[..., None])                          # (..., nd)
    u = pm.u
    su = np.sqrt(((sens * u) ** 2).sum(axis=-1))
    lnK = np.asarray(rxn.ln_K(T), dtype=float)
    z = coverage_factor(level)
    f = (lambda a: float(a) if np.ndim(a) == 0 else a)   # noqa: E731
    return LnKUncertainty(T=f(T), ln_K=f(lnK), standard_uncertainty=f(su), K_lower=f(np.exp(lnK - z * su)),
                          K_upper=f(np.exp(lnK + z * su)), level=float(level), sensitivity=sens, data=pm.data)


def reaction_level_ln_K_uncertainty(data: ReactionLevelData, T, *, u_delta_h, u_delta_s, correlation: float = 0.0,
                                    level: float = 0.95) -> LnKUncertainty:
    """Standard uncertainty of ln K(T) from reaction-level data (van 't Hoff / Kirchhoff).

    ``ln K = −ΔrH°(T)/RT + ΔrS°(T)/R`` with ΔrCp taken as exact, so
    ``u²(ln K) = u²(ΔrH°)/(RT)² + u²(ΔrS°)/R² − 2 r u(ΔrH°) u(ΔrS°)/(R² T)`` (GUM, with
    correlation coefficient r between the two; fitted ΔrH° and ΔrS° are usually strongly
    positively correlated, r = 0 is then conservative).

    Parameters
    ----------
    data : ReactionLevelData
    T : float | array_like | str
        Temperature [K].
    u_delta_h : float | str
        u(ΔrH°) [J/mol] (or a quantity such as ``"2 kJ/mol"``).
    u_delta_s : float | str
        u(ΔrS°) [J/(mol K)].
    correlation : float
        Correlation coefficient of the ΔrH° and ΔrS° errors [-], from −1 to 1.
    level : float

    Returns
    -------
    LnKUncertainty
        ``data`` holds two :class:`UncertainDatum` entries (species ``data.text`` or
        ``"reaction"``); ``sensitivity`` their coefficients.

    Examples
    --------
    >>> d = ReactionLevelData.from_K(K_ref=2.0, T_ref=500.0, delta_h=-50e3)
    >>> r = reaction_level_ln_K_uncertainty(d, 500.0, u_delta_h=2000.0, u_delta_s=0.0)
    >>> round(r.standard_uncertainty, 4)                 # 2000 / (R × 500)
    0.4811
    """
    uh = read_u(u_delta_h, REACTION_ENTHALPY, "u_delta_h")
    us = read_u(u_delta_s, REACTION_ENTROPY, "u_delta_s")
    if not -1.0 <= correlation <= 1.0:
        raise UncertaintyInputError(f"correlation {correlation!r}: give a coefficient from -1 to 1")
    T = np.asarray(to_kelvin(T), dtype=float)
    cH = -1.0 / (R * T)
    cS = np.full_like(T, 1.0 / R)
    var = (cH * uh) ** 2 + (cS * us) ** 2 + 2.0 * correlation * cH * cS * uh * us
    su = np.sqrt(np.maximum(var, 0.0))
    lnK = np.asarray(data.ln_K(T), dtype=float)
    z = coverage_factor(level)
    label = data.text or "reaction"
    f = (lambda a: float(a) if np.ndim(a) == 0 else a)   # noqa: E731
    return LnKUncertainty(T=f(T), ln_K=f(lnK), standard_uncertainty=f(su), K_lower=f(np.exp(lnK - z * su)),
                          K_upper=f(np.exp(lnK + z * su)), level=float(level),
                          sensitivity=np.stack([cH, cS], axis=-1),
                          data=(UncertainDatum(label, REACTION_ENTHALPY, uh, "user"),
                                UncertainDatum(label, REACTION_ENTROPY, us, "user")))


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
