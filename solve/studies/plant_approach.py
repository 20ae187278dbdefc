"""Approach to equilibrium of measured compositions (plant analyses).

For each sample of a measured gas (temperature T, pressure P, analysis y) and each reaction:

* the reaction quotient ``Q = Π (φ_i y_i P / P°)^ν_i`` (φ_i = 1 for the ideal gas, Peng-Robinson
  fugacity coefficients otherwise; pure condensed species have activity 1);
* the equilibrium constant K(T) from the species database (Gibbs route);
* the equilibrium temperature T_eq, the temperature within the reaction's data range at which
  the measured mixture would be at equilibrium, ``K(T_eq) = Q`` (with φ evaluated at T_eq);
* the approach ΔT = |T_eq - T|, signed **positive when the mixture falls short of equilibrium
  for the reaction as written** (Q < K(T): the forward reaction still has room) and negative
  when it lies beyond it (Q > K(T)).  For an exothermic reaction a mixture short of
  equilibrium has T_eq > T, so ΔT = T_eq - T; for an endothermic one T_eq < T and
  ΔT = T - T_eq.  Write each reaction in the direction the bed drives it.

Comparing T_eq with the measured temperature is common plant practice (no single source).
Dry analyses are put back on a wet basis from a separately measured water content or from
the feed's steam-to-carbon ratio by an oxygen balance (see :func:`dry_to_wet`).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from ...thermo.database import SpeciesDatabase, UnknownSpeciesError
from ...thermo.models import P_STANDARD
from ...thermo.peng_robinson import CubicParameters, binary_interaction_matrix, log_fugacity_coefficients
from ...thermo.reactions import Reaction, ReactionError, bundled_database
from ...thermo.units import to_fraction, to_kelvin, to_pascal, to_si

GAS_MODELS = ("ideal", "peng-robinson")
BASES = ("wet", "dry")

#: Grid used to bracket K(T) = Q over a reaction's data range (points).
_GRID_POINTS = 241

CAUTION = ("An approach temperature diagnoses the analysis, not the plant: a sample that reacts or "
           "condenses in the sample line, or an unrepresentative thermocouple, moves it. Decisions on "
           "operating a converter at high temperature and pressure with flammable and toxic gases "
           "(H2, CO) rest with the site's operating procedures, local codes and licensed engineering "
           "review.")


class PlantApproachInputError(ValueError):
    """The reactions, analysis, conditions or basis given for an approach calculation are unusable."""


@dataclass(frozen=True)
class ReactionApproach:
    """Approach to equilibrium of one reaction at every sample, shape (n_samples,).

    Attributes
    ----------
    reaction : Reaction
    quotient : ndarray
        Q at the measured T and P [-] (1 bar standard state; fugacities for Peng-Robinson).
    equilibrium_constant : ndarray
        K at the measured temperature [-].
    ln_quotient_over_K : ndarray
        ln(Q/K) [-]: negative when the forward reaction still has room.
    direction : ndarray of str
        ``"forward"`` (Q < K), ``"reverse"`` (Q > K) or ``"at equilibrium"``.
    equilibrium_temperature : ndarray
        T_eq [K] with K(T_eq) = Q; NaN where no temperature in the data range gives it.
    approach : ndarray
        ΔT [K], positive = short of equilibrium for the reaction as written (module notes);
        NaN where T_eq was not found.
    found : ndarray of bool
        True where T_eq and ΔT are answers.
    status : ndarray of str
        ``""`` where found, otherwise why not.
    T_range : tuple
        Temperature range [K] searched for T_eq (the data range of every species).
    """

    reaction: Reaction
    quotient: np.ndarray = field(repr=False)
    equilibrium_constant: np.ndarray = field(repr=False)
    ln_quotient_over_K: np.ndarray = field(repr=False)
    direction: np.ndarray = field(repr=False)
    equilibrium_temperature: np.ndarray = field(repr=False)
    approach: np.ndarray = field(repr=False)
    found: np.ndarray = field(repr=False)
    status: np.ndarray = field(repr=False)
    T_range: tuple = ()

    @property
    def text(self) -> str:
        return self.reaction.text


@dataclass(frozen=True)
class ApproachResult:
    """Approach to equilibrium of every reaction at every sample.

    Attributes
    ----------
    species : tuple[str, ...]
        Gas species of the (wet) analysis, the column order of ``mole_fraction_array``.
    T, P : ndarray, shape (n_samples,)
        Measured temperature [K] and pressure [Pa].
    mole_fraction_array : ndarray, shape (n_samples, n_species)
        Wet, normalised mole fractions used for Q [-].
    analysis_total : ndarray, shape (n_samples,)
        Sum of the readings as given (1 for a closed analysis; dry sum for a dry analysis) [-].
    basis, gas_model : str
    reactions : tuple[ReactionApproach, ...]
    balance_deviation : dict
        ``"H/C"`` etc. -> relative deviation of the sample's element ratio from the feed's [-]
        (empty without a feed).
    sample_flags : ndarray of str, shape (n_samples,)
        Problems of the sample itself (element balance, water), ``""`` if none.
    usable : ndarray of bool, shape (n_samples,)
        True where every reaction's T_eq was found and the sample carries no flag; trends
        use only these samples.
    message : str
    notes : tuple[str, ...]
        Assumptions and cautions to print with the numbers.
    """

    species: tuple
    T: np.ndarray = field(repr=False)
    P: np.ndarray = field(repr=False)
    mole_fraction_array: np.ndarray = field(repr=False)
    analysis_total: np.ndarray = field(repr=False)
    basis: str
    gas_model: str
    reactions: tuple
    balance_deviation: dict = field(repr=False)
    sample_flags: np.ndarray = field(repr=False)
    usable: np.ndarray = field(repr=False)
    message: str = ""
    notes: tuple = ()

    @property
    def mole_fractions(self) -> dict:
        """Species name -> wet mole fraction array [-]."""
        return {n: self.mole_fraction_array[:, k] for k, n in enumerate(self.species)}

    @property
    def converged(self) -> np.ndarray:
        """Alias of ``usable``: the per-sample answer flag, as on other result objects."""
        return self.usable

    def __getitem__(self, key) -> ReactionApproach:
        """A reaction's record by index or by its text as written."""
        if isinstance(key, int):
            return self.reactions[key]
        for rec in self.reactions:
            if rec.text == key or rec.text == str(key).strip():
                return rec
        raise KeyError(f"no reaction {key!r}; the reactions are {[r.text for r in self.reactions]}")

    def flags(self) -> np.ndarray:
        """All problems of each sample (its own and each reaction's), joined with '; '."""
        parts = [self.sample_flags] + [np.where(r.status != "", r.text + ": " + r.status, "")
                                       for r in self.reactions]
        out = []
        for row in zip(*parts):
            out.append("; ".join(s for s in row if s))
        return np.array(out, dtype=object)


# ----------------------------------------------------------------------- helpers
def _as_reactions(reaction, db: SpeciesDatabase) -> tuple:
    items = [reaction] if isinstance(reaction, (str, Reaction)) else list(reaction)
    if not items:
        raise PlantApproachInputError("reaction: give at least one reaction, e.g. 'CO + H2O = CO2 + H2'")
    out = []
    for r in items:
        if isinstance(r, Reaction):
            out.append(r)
        elif isinstance(r, str):
            try:
                out.append(Reaction.parse(r, db))
            except ReactionError as exc:
                raise PlantApproachInputError(str(exc)) from None
        else:
            raise PlantApproachInputError(f"reaction: {r!r} is neither reaction text nor a Reaction")
    return tuple(out)


def _resolve(db: SpeciesDatabase, name: str, where: str) -> str:
    try:
        return db.resolve(str(name))
    except UnknownSpeciesError as exc:
        raise PlantApproachInputError(f"{where}: {exc}") from None


def _fractions(value, where: str) -> np.ndarray:
    try:
        arr = np.asarray(to_fraction(value), dtype=float)
    except ValueError as exc:
        raise PlantApproachInputError(f"{where}: {exc}; write a fraction (0.125) or a "
                                      "percentage ('12.5 mol%')") from None
    if np.any(~np.isfinite(arr)) or np.any(arr < 0):
        raise PlantApproachInputError(f"{where}: readings must be finite and not negative; "
                                      "correct or drop the sample")
    return arr


def wet_to_dry(mole_fractions: Mapping[str, object]) -> tuple[dict, np.ndarray]:
    """Dry analysis and water content of a wet gas.

    Parameters
    ----------
    mole_fractions : mapping str -> fraction or array [-]
        Wet composition including ``"H2O"``.

    Returns
    -------
    (dict, ndarray)
        Dry mole fractions (normalised, water removed) and the wet-basis water fraction [-].

    >>> dry, water = wet_to_dry({"H2": 0.5, "CO2": 0.25, "H2O": 0.25})
    >>> round(float(dry["H2"]), 6), float(water)
    (0.666667, 0.25)
    """
    y = {k: np.asarray(to_fraction(v), dtype=float) for k, v in mole_fractions.items()}
    total = sum(y.values())
    water = y.get("H2O", np.zeros_like(total)) / total
    dry_total = total * (1.0 - water)
    return {k: v / dry_total for k, v in y.items() if k != "H2O"}, water


def dry_to_wet(dry: Mapping[str, object], *, water=None, steam_ratio=None,
               database: SpeciesDatabase | None = None) -> tuple[dict, np.ndarray]:
    """Wet composition of a dry analysis.

    Either ``water``, the wet-basis water fraction measured separately, or ``steam_ratio``,
    the feed's steam-to-carbon ratio S/C [mol H2O per mol C]: the feed's oxygen then
    comes with its steam alone (hydrocarbon feed without CO2 or oxygenates), and an oxygen
    balance on carbon gives the water per mole of dry gas,
    ``w = S/C × Σ y_i C_i - Σ y_i O_i`` (element balance; the ratio O/C is conserved through
    reforming and shift).  A negative ``w`` means the analysis and the stated ratio disagree;
    those samples get NaN.

    Parameters
    ----------
    dry : mapping str -> fraction or array [-]
        Dry analysis (normalised here).
    water : float or array, optional
        Water fraction of the wet gas [-].
    steam_ratio : float or array, optional
        Feed steam-to-carbon ratio [mol/mol].

    Returns
    -------
    (dict, ndarray)
        Wet mole fractions with ``"H2O"`` and the water per mole of dry gas w [mol/mol].

    >>> wet, w = dry_to_wet({"H2": 0.75, "CO2": 0.25}, steam_ratio=3.0)
    >>> round(float(wet["H2O"]), 6), round(float(w), 6)
    (0.2, 0.25)
    """
    if (water is None) == (steam_ratio is None):
        raise PlantApproachInputError("a dry analysis needs exactly one of water (the measured wet-basis "
                                      "water fraction) or steam_ratio (the feed steam-to-carbon ratio)")
    y = {k: np.asarray(to_fraction(v), dtype=float) for k, v in dry.items()}
    total = sum(y.values())
    y = {k: v / total for k, v in y.items()}
    if water is not None:
        x_w = _fractions(water, "water")
        if np.any(x_w >= 1):
            raise PlantApproachInputError("water: the wet-basis water fraction must be below 1 (100 mol%)")
        w = x_w / (1.0 - x_w)
    else:
        db = database or bundled_database()
        ratio = np.asarray(to_si(steam_ratio, "dimensionless"), dtype=float)
        if np.any(~np.isfinite(ratio)) or np.any(ratio <= 0):
            raise PlantApproachInputError("steam_ratio: the feed steam-to-carbon ratio must be positive")
        carbon = sum(v * db[k].elements.get("C", 0.0) for k, v in y.items())
        oxygen = sum(v * db[k].elements.get("O", 0.0) for k, v in y.items())
        w = ratio * carbon - oxygen
        w = np.where(w >= 0, w, np.nan)
    wet = {k: v / (1.0 + w) for k, v in y.items()}
    wet["H2O"] = w / (1.0 + w)
    return wet, w


def _ln_phi_model(records, gas_model: str):
    if gas_model == "ideal":
        return None
    try:
        params = CubicParameters.from_species(records, interaction=binary_interaction_matrix(
            [sp.name for sp in records]), quantum_gases=True)     # as the solver's gas model
    except ValueError as exc:
        raise PlantApproachInputError(f"gas_model 'peng-robinson': {exc}; use gas_model='ideal' or "
                                      "add critical constants to the database") from None
    return params


def _residual(reaction, idx, ln_q_ideal, y, P, params, T):
    """ln K(T) - ln Q(T) for samples (k,) at temperatures T (k,), φ evaluated at T."""
    f = np.asarray(reaction.ln_K(T), dtype=float) - ln_q_ideal
    if params is not None:
        ln_phi = log_fugacity_coefficients(params, T, P, y)
        f = f - ln_phi[:, idx] @ reaction_gas_nu(reaction, idx)
    return f


def reaction_gas_nu(reaction, idx) -> np.ndarray:
    """ν of the gas species of ``reaction`` (those with a column in ``idx``)."""
    return np.array([nu for sp, nu in zip(reaction.species, reaction.coefficients) if sp.is_gas])


def _equilibrium_temperature(reaction, idx, ln_q_ideal, y, P, params, T, lo, hi, ok):
    """Vectorised search for T_eq in [lo, hi]: bracket on a grid, then bisection.

    Picks the root nearest the measured T where there are several.  Returns (T_eq, status).
    """
    n = T.size
    T_eq = np.full(n, np.nan)
    status = np.full(n, "", dtype=object)
    rows = np.flatnonzero(ok)
    if rows.size == 0:
        return T_eq, status
    grid = np.linspace(lo, hi, _GRID_POINTS)
    if params is None:
        f_grid = np.asarray(reaction.ln_K(grid))[None, :] - ln_q_ideal[rows, None]
    else:
        k = rows.size
        rep = lambda a: np.repeat(a, _GRID_POINTS, axis=0)
        f_grid = _residual(reaction, idx, rep(ln_q_ideal[rows]), rep(y[rows]), rep(P[rows]), params,
                           np.tile(grid, k)).reshape(k, _GRID_POINTS)
    change = (f_grid[:, :-1] * f_grid[:, 1:]) <= 0                      # (k, G-1)
    has = change.any(axis=1)
    mids = 0.5 * (grid[:-1] + grid[1:])
    distance = np.where(change, np.abs(mids[None, :] - T[rows, None]), np.inf)
    j = np.argmin(distance, axis=1)
    none = rows[~has]
    above = f_grid[~has, 0] > 0
    status[none] = np.where(above, f"K stays above Q over the data range {lo:g}-{hi:g} K: "
                                   "no temperature there gives K = Q",
                            f"K stays below Q over the data range {lo:g}-{hi:g} K: "
                            "no temperature there gives K = Q")
    sel = rows[has]
    if sel.size == 0:
        return T_eq, status
    a = grid[j[has]].copy()
    b = grid[j[has] + 1].copy()
    fa = f_grid[has, j[has]].copy()
    args = (ln_q_ideal[sel], y[sel], P[sel])
    for _ in range(64):
        m = 0.5 * (a + b)
        fm = _residual(reaction, idx, *args, params, m)
        left = fa * fm <= 0
        b = np.where(left, m, b)
        a = np.where(left, a, m)
        fa = np.where(left, fa, fm)
        if np.all(b - a < 1e-10):
            break
    T_eq[sel] = 0.5 * (a + b)
    return T_eq, status


# ----------------------------------------------------------------------- main
def approach_to_equilibrium(reaction, composition: Mapping[str, object], T, P, *, basis: str = "wet",
                            gas_model: str = "ideal", water=None, steam_ratio=None,
                            database: SpeciesDatabase | None = None,
                            feed: Mapping[str, float] | None = None, balance_tolerance: float = 0.02,
                            equilibrium_tolerance: float = 1e-6) -> ApproachResult:
    """Approach to equilibrium of measured gas compositions, sample by sample.

    Parameters
    ----------
    reaction : str | Reaction | sequence of them
        Reactions written in the direction the bed drives them, e.g. ``"CO + H2O = CO2 + H2"``.
    composition : mapping str -> array_like
        Analysis per species (names or aliases), one value per sample: fractions, or strings
        such as ``"12.5 mol%"``, or pint quantities.  Readings are normalised to sum 1; every
        gas species of the reactions must be present (water may come from ``water`` or
        ``steam_ratio`` on a dry basis).
    T : array_like | str | pint.Quantity
        Measured temperature [K] (numbers) or quantities (``"215 degC"``).
    P : array_like | str | pint.Quantity
        Measured absolute pressure [Pa] or quantities (``"30 bar"``).
    basis : {"wet", "dry"}
        Whether the analysis includes the water.
    gas_model : {"ideal", "peng-robinson"}
        Fugacity coefficients of the Peng-Robinson equation (D.-Y. Peng, D. B. Robinson,
        Ind. Eng. Chem. Fundam. 15 (1976) 59) in Q when not ideal.
    water : array_like, optional
        Dry basis: the measured water fraction of the wet gas [-].
    steam_ratio : array_like, optional
        Dry basis: the feed steam-to-carbon ratio [mol/mol] (see :func:`dry_to_wet`).
    database : SpeciesDatabase, optional
    feed : mapping str -> float, optional
        Relative feed amounts; each sample's element ratios (relative to carbon, or to the
        feed's first element without carbon) are checked against the feed's, and samples off
        by more than ``balance_tolerance`` (relative) are flagged.
    balance_tolerance : float
        Relative tolerance of the element-balance check [-] (default 0.02).
    equilibrium_tolerance : float
        |ln(Q/K)| below which a sample counts as "at equilibrium" [-].

    Returns
    -------
    ApproachResult

    Examples
    --------
    A shift-converter outlet (invented analysis) at 230 degC, 30 bar:

    >>> res = approach_to_equilibrium("CO + H2O = CO2 + H2",
    ...     {"CO": [0.004], "H2O": [0.21], "CO2": [0.14], "H2": [0.52], "N2": [0.126]},
    ...     "230 degC", "30 bar")
    >>> rec = res["CO + H2O = CO2 + H2"]
    >>> rec.direction[0], round(float(rec.approach[0]), 1)
    ('forward', 22.1)
    """
    db = database or bundled_database()
    if basis not in BASES:
        raise PlantApproachInputError(f"basis {basis!r}: use 'wet' (analysis includes water) or 'dry'")
    if gas_model not in GAS_MODELS:
        raise PlantApproachInputError(f"gas_model {gas_model!r}: use one of {', '.join(GAS_MODELS)}")
    rxns = _as_reactions(reaction, db)
    if not composition:
        raise PlantApproachInputError("composition: give the analysis as species -> readings")
    readings: dict[str, np.ndarray] = {}
    for name, value in composition.items():
        resolved = _resolve(db, name, f"composition[{name!r}]")
        if resolved in readings:
            raise PlantApproachInputError(f"composition: {name!r} and another key both mean {resolved}; "
                                          "give each species once")
        if not db[resolved].is_gas:
            raise PlantApproachInputError(f"composition[{name!r}]: {resolved} is a condensed phase; the "
                                          "analysis lists gas species only")
        readings[resolved] = _fractions(value, f"composition[{name!r}]")
    T_arr = np.asarray(to_kelvin(T), dtype=float)
    P_arr = np.asarray(to_pascal(P), dtype=float)
    shape = np.broadcast_shapes(T_arr.shape, P_arr.shape, *(v.shape for v in readings.values()))
    if len(shape) > 1:
        raise PlantApproachInputError("composition, T and P: give one value or a 1-D array of samples each")
    n = int(np.prod(shape)) if shape else 1
    T_s = np.broadcast_to(T_arr, shape).reshape(n).astype(float)
    P_s = np.broadcast_to(P_arr, shape).reshape(n).astype(float)
    if np.any(~np.isfinite(T_s)) or np.any(T_s <= 0):
        raise PlantApproachInputError("T: temperatures must be finite and above 0 K")
    if np.any(~np.isfinite(P_s)) or np.any(P_s <= 0):
        raise PlantApproachInputError("P: pressures must be finite and above 0 Pa (absolute)")
    readings = {k: np.broadcast_to(v, shape).reshape(n).astype(float) for k, v in readings.items()}
    total = sum(readings.values())
    if np.any(total <= 0):
        raise PlantApproachInputError("composition: the readings of a sample sum to zero")

    sample_flags = np.full(n, "", dtype=object)
    if basis == "wet":
        if water is not None or steam_ratio is not None:
            raise PlantApproachInputError("water and steam_ratio apply to a dry analysis; set basis='dry'")
        y = {k: v / total for k, v in readings.items()}
    else:
        if "H2O" in readings:
            raise PlantApproachInputError("composition: a dry analysis has no H2O reading; give the "
                                          "water as water=... or use basis='wet'")
        y, w = dry_to_wet(readings, water=water, steam_ratio=steam_ratio, database=db)
        y = {k: np.broadcast_to(v, (n,)).astype(float) for k, v in y.items()}
        bad_w = ~np.isfinite(np.broadcast_to(w, (n,)))
        sample_flags[bad_w] = ("the oxygen in the dry analysis exceeds what the stated steam-to-carbon "
                               "ratio supplies (water would be negative); check the analysis or the ratio")
    species = tuple(y)
    Y = np.column_stack([y[k] for k in species])                    # (n, ns)
    bad_y = ~np.all(np.isfinite(Y), axis=1)
    Y[bad_y] = np.nan

    # element balance against the feed
    deviation = {}
    if feed:
        feed_n = {_resolve(db, k, f"feed[{k!r}]"): float(to_si(v, "amount")) for k, v in feed.items()}
        elements: list[str] = []
        for k in feed_n:
            for el in db[k].elements:
                if el not in elements:
                    elements.append(el)
        ref = "C" if "C" in elements else elements[0]
        f_el = {el: sum(v * db[k].elements.get(el, 0.0) for k, v in feed_n.items()) for el in elements}
        s_el = {el: Y @ np.array([db[k].elements.get(el, 0.0) for k in species]) for el in elements}
        off = np.zeros(n, dtype=bool)
        worst = np.full(n, "", dtype=object)
        for el in elements:
            if el == ref:
                continue
            with np.errstate(divide="ignore", invalid="ignore"):
                dev = (s_el[el] / s_el[ref]) / (f_el[el] / f_el[ref]) - 1.0
            deviation[f"{el}/{ref}"] = dev
            this = ~(np.abs(dev) <= balance_tolerance)
            worst = np.where(this & ~off, f"{el}/{ref} of the analysis is off the feed's by "
                             + np.char.mod("%+.1f", 100 * np.nan_to_num(dev)).astype(object)
                             + f" % (tolerance {100 * balance_tolerance:g} %)", worst)
            off |= this & ~bad_y
        sample_flags = np.where(off & (sample_flags == ""), "element balance: " + worst, sample_flags)

    params = None
    if gas_model == "peng-robinson":
        params = _ln_phi_model([db[k] for k in species], gas_model)

    records = []
    lnP = np.log(P_s / P_STANDARD)
    for r in rxns:
        idx = []
        for sp in r.species:
            if not sp.is_gas:
                continue
            if sp.name not in species:
                fix = ("give the water as water=... or steam_ratio=..." if sp.name == "H2O"
                       else f"add a {sp.name} column to the analysis")
                raise PlantApproachInputError(f"reaction {r.text!r}: {sp.name} is not in the analysis; {fix}")
            idx.append(species.index(sp.name))
        idx = np.array(idx, dtype=int)
        nu = reaction_gas_nu(r, idx)
        with np.errstate(divide="ignore", invalid="ignore"):
            ln_q_ideal = (np.log(Y[:, idx]) + lnP[:, None]) @ nu
        lo, hi = r.T_range
        status = np.full(n, "", dtype=object)
        zero = np.any(Y[:, idx] <= 0, axis=1) & ~bad_y
        names = np.array([species[i] for i in idx])
        for q in np.flatnonzero(zero):
            status[q] = ("zero reading of " + ", ".join(names[Y[q, idx] <= 0])
                         + ": Q is 0 or infinite, no equilibrium temperature")
        status[bad_y] = "no wet composition (see the sample's flag)"
        outside = (T_s < lo) | (T_s > hi)
        status[outside & (status == "")] = (f"measured temperature outside the data range {lo:g}-{hi:g} K "
                                            "of this reaction")
        ok = status == ""
        ln_K = np.full(n, np.nan)
        f_T = np.full(n, np.nan)
        if ok.any():
            ln_K[ok] = r.ln_K(T_s[ok])
            f_T[ok] = _residual(r, idx, ln_q_ideal[ok], Y[ok], P_s[ok], params, T_s[ok])
        ln_q = ln_K - f_T                                       # includes φ for Peng-Robinson
        T_eq, why = _equilibrium_temperature(r, idx, ln_q_ideal, Y, P_s, params, T_s, lo, hi, ok)
        status = np.where(ok, why, status)
        found = ok & np.isfinite(T_eq)
        direction = np.where(np.abs(f_T) <= equilibrium_tolerance, "at equilibrium",
                             np.where(f_T > 0, "forward", "reverse")).astype(object)
        direction[~ok] = ""
        approach = np.where(found, np.sign(f_T) * np.abs(T_eq - T_s), np.nan)
        records.append(ReactionApproach(
            reaction=r, quotient=np.exp(ln_q), equilibrium_constant=np.exp(ln_K),
            ln_quotient_over_K=-f_T, direction=direction, equilibrium_temperature=np.where(found, T_eq, np.nan),
            approach=approach, found=found, status=status, T_range=(lo, hi)))

    usable = (sample_flags == "") & np.all([rec.found for rec in records], axis=0)
    n_bad = int(n - usable.sum())
    message = (f"{n} sample(s), all usable" if n_bad == 0 else
               f"{n} sample(s), {n_bad} flagged (see flags(); their numbers are not used in trends)")
    notes = (f"Gas model: {'ideal gas' if params is None else 'Peng-Robinson fugacity coefficients'}; "
             "standard state 1 bar; K(T) from the species database.",
             "Approach ΔT = |T_eq - T|, positive when the mixture falls short of equilibrium for the "
             "reaction as written (Q < K), negative beyond it.",
             CAUTION)
    return ApproachResult(species=species, T=T_s, P=P_s, mole_fraction_array=Y, analysis_total=total,
                          basis=basis, gas_model=gas_model, reactions=tuple(records),
                          balance_deviation=deviation, sample_flags=sample_flags, usable=usable,
                          message=message, notes=notes)
