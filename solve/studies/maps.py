"""Conversion maps: equilibrium over a grid of temperature, pressure, feed ratio and inert.

    from eqdesign.solve import conversion_map
    m = conversion_map(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, T=[650, 700, 750],
                       P=["100 bar", "200 bar"], key="N2", product="NH3")
    m.conversion            # shape (3, 2): temperature axis first, then pressure

The grid is the outer product of the axes given as 1-D arrays (scalars fix a condition
without adding an axis), in the order temperature, pressure, feed ratio (or steam-to-carbon
ratio), inert fraction.  The points are solved in chunks, one batched call of
:func:`eqdesign.solve.equilibrium` per chunk; there is no loop over points.

The maps report thermodynamic equilibrium only: a real reactor reaches less (kinetics,
catalyst activity, heat transfer).  The ``approach`` option is the customary allowance for
that.  Reactors that these maps describe often run at high pressure with flammable or toxic
gases (hydrogen, carbon monoxide, ammonia): equipment design and operation must follow the
applicable local codes and licensed engineering practice.
"""
from __future__ import annotations

import dataclasses
import warnings
from dataclasses import dataclass, field
from typing import Callable, Mapping, Sequence

import numpy as np

from ...thermo.database import SpeciesDatabase
from ...thermo.reactions import bundled_database
from ..core.equilibrium import equilibrium
from ..core.inputs import feed_mapping, reaction_list, species_names, whole_number
from ..core.result import EquilibriumInputError, EquilibriumResult, NotConvergedWarning
from .carbon import carbon_activity
from .feeds import (DEFAULT_CHUNK, FeedRatio, STEAM, apply_inert, approach_kelvin, approach_side,
                    approach_temperatures, axis_values, feed_ratio_spec, product_per_key_from_reactions,
                    resolve_feed)


def solve_points(names: Sequence[str], feed: Mapping[str, np.ndarray], T: np.ndarray, P: np.ndarray, *,
                 key: str, reactions=None, gas_model: str = "ideal", approach: float | None = None,
                 database: SpeciesDatabase | None = None) -> tuple[EquilibriumResult, np.ndarray]:
    """Equilibrium at flat arrays of states, with an optional temperature approach.

    With ``approach`` = ΔT [K] the equilibrium is evaluated at both T − ΔT and T + ΔT in
    one batched call and, at every state, the side giving the *lower* conversion of
    ``key`` is kept: the side that lowers conversion, T + ΔT for an exothermic reaction
    and T − ΔT for an endothermic one (van 't Hoff: d ln K/dT = ΔrH°/RT²).  A state is
    flagged not converged unless both sides converged, and not trustworthy where either side
    used a species outside its data range.

    Returns
    -------
    (EquilibriumResult, ndarray)
        The result at the equilibrium temperatures, and the side chosen per state
        (+1: T + ΔT, −1: T − ΔT, 0: no approach).
    """
    T = np.asarray(T, dtype=float)
    P = np.asarray(P, dtype=float)
    m = T.size
    if not approach:
        res = equilibrium(names, feed, T, P, reactions=reactions, gas_model=gas_model, key=key,
                          database=database, warn=False)
        return res, np.zeros(m, dtype=int)
    T2 = approach_temperatures(T, approach)
    P2 = np.concatenate([np.broadcast_to(P, T.shape)] * 2)
    feed2 = {k: np.concatenate([np.broadcast_to(np.asarray(v, dtype=float), T.shape)] * 2)
             for k, v in feed.items()}
    both = equilibrium(names, feed2, T2, P2, reactions=reactions, gas_model=gas_model, key=key,
                       database=database, warn=False)
    side = approach_side(both.conversion(key))
    use_hi = side > 0
    idx = np.where(use_hi, np.arange(m) + m, np.arange(m))
    conv = both.converged[:m] & both.converged[m:]
    amounts = both.amount_array[idx].copy()
    amounts[~conv] = np.nan
    res = dataclasses.replace(
        both, T=both.T[idx], P=both.P[idx], amount_array=amounts, feed_array=both.feed_array[idx],
        converged=conv, iterations=both.iterations[:m] + both.iterations[m:],
        max_residual=np.maximum(both.max_residual[:m], both.max_residual[m:]),
        g0_RT=both.g0_RT[idx], ln_phi_array=None if both.ln_phi_array is None else both.ln_phi_array[idx],
        out_of_range_array=both.out_of_range_array[:m] | both.out_of_range_array[m:],
        excluded_array=both.excluded_array[:m] | both.excluded_array[m:],
        condensation_possible=None if both.condensation_possible is None
        else both.condensation_possible[:m] | both.condensation_possible[m:],
        message=f"{int(m - conv.sum())} of {m} state(s) did not converge on one side of the approach"
        if not conv.all() else "all states converged")
    return res, side


def reaction_enthalpy_per_key(result: EquilibriumResult, key: str, T, database: SpeciesDatabase) -> np.ndarray:
    """Isothermal reaction enthalpy per mole of key reactant converted [J/mol].

    ``Σ_i (n_i,out − n_i,in) h°_i(T) / (n_key,in − n_key,out)`` with the standard molar
    enthalpies h°_i(T) of the database (ideal gas, pure condensed species): the heat an
    isothermal reactor at T releases (negative) or takes up (positive) per mole of key
    converted, feed and products both at T.  NaN where nothing is converted.
    """
    T = np.broadcast_to(np.asarray(T, dtype=float), result.amount_array.shape[:-1])
    delta = result.amount_array - result.feed_array
    # a map has few distinct temperatures: evaluate h°(T) once per distinct value
    T_unique, where = np.unique(T, return_inverse=True)
    h = np.stack([np.asarray(database[name].enthalpy(T_unique), dtype=float).reshape(-1)
                  for name in result.species], axis=-1)                 # (n_unique, n_species)
    total = np.einsum("...j,...j->...", delta, h[where.reshape(T.shape)])
    k = result.species.index(key)
    converted = -delta[..., k]
    scale = np.abs(result.feed_array[..., k])
    with np.errstate(invalid="ignore", divide="ignore"):
        out = np.where(np.abs(converted) > 1e-12 * scale, total / converted, np.nan)
    return out


# --------------------------------------------------------------------------- result
@dataclass(frozen=True)
class SweepAxis:
    """One axis of a conversion map.

    Attributes
    ----------
    name : str
        ``"T"``, ``"P"``, the ratio label (``"H2O/CH4"``, ``"steam-to-carbon"``) or
        ``"<inert> fraction"``.
    values : ndarray
        Axis values in SI.
    unit : str
        Unit of ``values`` (``"K"``, ``"Pa"``, ``"mol/mol"``, ``"-"``).
    """

    name: str
    values: np.ndarray
    unit: str

    @property
    def header(self) -> str:
        return f"{self.name} [{self.unit}]"


@dataclass(frozen=True)
class ConversionMap:
    """Equilibrium conversion and outlet composition over a grid of conditions.

    Every array has the grid shape ``shape`` = (len(axis) for axis in ``axes``).

    Attributes
    ----------
    axes : tuple[SweepAxis, ...]
        The swept axes, in grid order.
    key, product : str, str | None
        Key reactant; product whose yield is reported.
    T, P : ndarray
        Operating temperature [K] and pressure [Pa] at every grid point.
    T_equilibrium : ndarray
        Temperature at which the equilibrium was evaluated [K]: T, or T ± approach.
    approach : float | None
        Temperature approach to equilibrium ΔT [K].
    feed : dict[str, ndarray]
        Feed amounts [mol] at every point.
    conversion : ndarray
        Equilibrium conversion of ``key``, (n_in − n_out)/n_in [-].
    product_yield : ndarray | None
        Moles of ``product`` formed per mole of ``key`` fed [mol/mol].
    stoichiometric_yield : ndarray | None
        ``product_yield`` divided by the moles of product per mole of key of the reaction
        (``product=("NH3", 2)`` gives it; in named-reactions mode it is read from the first
        reaction holding both): 1 at complete conversion to the product [-].
    mole_fractions : dict[str, ndarray]
        Gas-phase outlet mole fractions [-].
    reaction_enthalpy : ndarray
        Isothermal reaction enthalpy at the operating T per mole of key converted [J/mol]
        (see :func:`reaction_enthalpy_per_key`); negative for heat released.
    carbon_activity : ndarray | None
        Activity of graphite implied by the equilibrium gas [-] (C-containing systems):
        above 1, graphite is thermodynamically stable (:func:`eqdesign.solve.studies.carbon.carbon_activity`).
    converged : ndarray of bool
        Non-converged points are NaN everywhere.
    trustworthy : ndarray of bool | None
        Converged, no species used outside its data range, no possible condensation
        (:attr:`EquilibriumResult.trustworthy`).
    flags : ndarray of str | None
        Per point, what makes it untrustworthy ("" where nothing does;
        :meth:`EquilibriumResult.state_flags`).
    conditions : dict[str, float]
        Fixed (non-swept) conditions, header -> SI value.
    message : str
    """

    axes: tuple
    key: str
    product: str | None
    T: np.ndarray = field(repr=False)
    P: np.ndarray = field(repr=False)
    T_equilibrium: np.ndarray = field(repr=False)
    approach: float | None
    feed: dict = field(repr=False)
    conversion: np.ndarray = field(repr=False)
    product_yield: np.ndarray | None = field(repr=False)
    stoichiometric_yield: np.ndarray | None = field(repr=False)
    mole_fractions: dict = field(repr=False)
    reaction_enthalpy: np.ndarray = field(repr=False)
    carbon_activity: np.ndarray | None = field(repr=False)
    converged: np.ndarray = field(repr=False)
    conditions: dict = field(default_factory=dict)
    message: str = ""
    max_residual: np.ndarray | None = field(default=None, repr=False)
    iterations: np.ndarray | None = field(default=None, repr=False)
    trustworthy: np.ndarray | None = field(default=None, repr=False)
    flags: np.ndarray | None = field(default=None, repr=False)

    @property
    def shape(self) -> tuple:
        return tuple(a.values.size for a in self.axes)

    @property
    def all_converged(self) -> bool:
        return bool(np.all(self.converged))

    def table(self) -> list[dict]:
        """One row per grid point (C order), column headers carrying units.

        Write it with ``csv.DictWriter(f, fieldnames=list(rows[0]))``.

        Returns
        -------
        list[dict[str, float]]
            Columns: operating ``T [K]`` and ``P [Pa]``, the ratio and inert axes,
            ``T equilibrium [K]`` (with an approach), feed amounts ``feed <X> [mol]``,
            ``conversion <key> [-]``, yields, ``y <X> [-]`` for every gas species,
            ``reaction enthalpy [J/mol <key> converted]``, ``graphite activity [-]``,
            ``converged [-]`` (1 or 0), ``trustworthy [-]`` (1 or 0) and ``flags [text]``.
        """
        cols: dict[str, np.ndarray] = {"T [K]": self.T, "P [Pa]": self.P}
        for ax in self.axes:
            if ax.name not in ("T", "P"):
                cols[ax.header] = np.broadcast_to(self._axis_grid(ax), self.shape)
        if self.approach:
            cols["T equilibrium [K]"] = self.T_equilibrium
        for name, v in self.feed.items():
            cols[f"feed {name} [mol]"] = np.broadcast_to(v, self.shape)
        cols[f"conversion {self.key} [-]"] = self.conversion
        if self.product_yield is not None:
            cols[f"yield {self.product} [mol/mol {self.key} fed]"] = self.product_yield
        if self.stoichiometric_yield is not None:
            cols[f"stoichiometric yield {self.product} [-]"] = self.stoichiometric_yield
        for name, v in self.mole_fractions.items():
            cols[f"y {name} [-]"] = v
        cols[f"reaction enthalpy [J/mol {self.key} converted]"] = self.reaction_enthalpy
        if self.carbon_activity is not None:
            cols["graphite activity [-]"] = self.carbon_activity
        cols["converged [-]"] = self.converged.astype(int)
        if self.trustworthy is not None:
            cols["trustworthy [-]"] = np.asarray(self.trustworthy).astype(int)
            cols["flags [text]"] = self.flags
        flat = {k: np.asarray(v).reshape(-1) for k, v in cols.items()}
        n = int(np.prod(self.shape)) if self.shape else 1
        return [{k: (v[i] if v.dtype == object else v[i].item()) for k, v in flat.items()} for i in range(n)]

    def _axis_grid(self, ax: SweepAxis) -> np.ndarray:
        i = self.axes.index(ax)
        shape = [1] * len(self.axes)
        shape[i] = ax.values.size
        return ax.values.reshape(shape)


# --------------------------------------------------------------------------- the map
# Stays long: reads up to four sweep axes, builds the grid and solves it chunk by chunk in order.
def conversion_map(species: Sequence[str], feed: Mapping[str, object], *, T, P, key: str,
                   product=None, feed_ratio=None, steam_to_carbon=None, inert=None,
                   reactions: Sequence[str] | None = None, gas_model: str = "ideal", approach=None,
                   progress: Callable[[int, int], None] | None = None,
                   database: SpeciesDatabase | None = None, chunk: int = DEFAULT_CHUNK) -> ConversionMap:
    """Equilibrium conversion over an outer-product grid of T, P, feed ratio and inert fraction.

    Parameters
    ----------
    species : sequence of str
        Species that may be present (as for :func:`eqdesign.solve.equilibrium`).
    feed : mapping of str to amount
        Base feed [mol] (single amounts; numbers or strings with units).
    T : float | array_like | str | pint.Quantity
        Temperature [K]: a single value, or a 1-D array that becomes an axis.  With an
        ``approach`` this is the operating temperature.
    P : float | array_like | str | pint.Quantity
        Pressure [Pa]: single value or 1-D axis.
    key : str
        Key reactant; its conversion is mapped.
    product : str | (str, float), optional
        Product whose yield is reported; ``("NH3", 2.0)`` also gives the moles of product
        per mole of key at complete conversion, for ``stoichiometric_yield``.
    feed_ratio : (str, str, array_like), optional
        ``("H2O", "CH4", [2, 3, 4])``: n_H2O = r × n_CH4 [mol/mol] along an axis (the
        numerator's base amount is replaced).
    steam_to_carbon : array_like, optional
        Steam-to-carbon ratio axis [mol H2O / mol C]: n_H2O = s × carbon atoms of the feed
        species holding both C and H.  Use instead of ``feed_ratio``.
    inert : (str, array_like), optional
        ``("Ar", [0, 0.05, 0.1])``: mole fraction of an inert in the feed [-]; the other
        feed species keep their ratios and are scaled by (1 − fraction).  Applied after the
        feed ratio.
    reactions : sequence of str, optional
        Named-reactions mode, as in :func:`equilibrium`.
    gas_model : {"ideal", "peng-robinson"}
    approach : float | str, optional
        Temperature approach to equilibrium ΔT [K] (``"10 K"``, ``"10 delta_degC"``): the
        equilibrium is evaluated at T + ΔT or T − ΔT, whichever gives the lower conversion
        (T + ΔT for an exothermic reaction, T − ΔT for an endothermic one).
    progress : callable(done, total), optional
        Called after every chunk with the number of points solved so far and the total.
    database : SpeciesDatabase, optional
    chunk : int
        Points per batched solver call.

    Returns
    -------
    ConversionMap

    Examples
    --------
    Ammonia synthesis, 3:1 H2:N2, ideal gas, at two temperatures and 200 bar:

    >>> m = conversion_map(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, T=[700, 800], P="200 bar",
    ...                    key="N2", product=("NH3", 2))
    >>> m.shape, [round(float(x), 3) for x in m.conversion]
    ((2,), [0.46, 0.25])
    """
    db = database or bundled_database()
    dT = approach_kelvin(approach)
    whole_number(chunk, "chunk", 1)
    base = resolve_feed(feed_mapping(feed), db)
    if not isinstance(key, str):
        raise EquilibriumInputError(f"key must be the name of the key reactant (text), got {key!r}")
    key = db.resolve(key)
    names: list[str] = []
    for n in species_names(species) + list(base):
        r = db.resolve(n)
        if r not in names:
            names.append(r)
    rxns = reaction_list(reactions, db)
    for r in rxns:
        for n in r.names:
            if n not in names:
                names.append(n)

    product_name, per_key = None, None
    if product is not None:
        if isinstance(product, (tuple, list)):
            product_name, per_key = db.resolve(product[0]), float(product[1])
        else:
            product_name = db.resolve(product)
            per_key = product_per_key_from_reactions(rxns, key, product_name)
        if product_name not in names:
            names.append(product_name)

    # ---- axes
    T_ax = axis_values(T, "temperature", "T")
    P_ax = axis_values(P, "pressure", "P")
    if np.any(T_ax <= 0) or np.any(P_ax <= 0):
        raise EquilibriumInputError("temperatures and pressures must be above zero")
    if feed_ratio is not None and steam_to_carbon is not None:
        raise EquilibriumInputError("give feed_ratio or steam_to_carbon, not both")
    ratio_spec, ratio_ax = None, None
    if feed_ratio is not None:
        try:
            num, den, values = feed_ratio
        except (TypeError, ValueError):
            raise EquilibriumInputError("feed_ratio: give (numerator, denominator, values), "
                                        "e.g. ('H2O', 'CH4', [2, 3, 4])") from None
        ratio_spec = feed_ratio_spec((num, den), db)
        ratio_ax = axis_values(values, "dimensionless", "feed ratio")
    elif steam_to_carbon is not None:
        ratio_spec = FeedRatio(STEAM, "carbon")
        ratio_ax = axis_values(steam_to_carbon, "dimensionless", "steam_to_carbon")
    if ratio_ax is not None and np.any(ratio_ax < 0):
        raise EquilibriumInputError("feed ratios must be non-negative")
    if ratio_spec is not None and ratio_spec.numerator not in names:
        names.append(ratio_spec.numerator)
    inert_name, inert_ax = None, None
    if inert is not None:
        try:
            inert_name, values = inert
        except (TypeError, ValueError):
            raise EquilibriumInputError("inert: give (species, fractions), e.g. ('Ar', [0, 0.05])") from None
        inert_name = db.resolve(inert_name)
        inert_ax = axis_values(values, "dimensionless", "inert fraction")
        if inert_name not in names:
            names.append(inert_name)
    if key not in names:
        raise EquilibriumInputError(f"key reactant {key!r} is not among the species {names}")

    specs = [("T", T_ax, "K"), ("P", P_ax, "Pa")]
    if ratio_ax is not None:
        specs.append((ratio_spec.name, ratio_ax, "mol/mol"))
    if inert_ax is not None:
        specs.append((f"{inert_name} fraction", inert_ax, "-"))
    axes = tuple(SweepAxis(n, v.copy(), u) for n, v, u in specs if v.ndim == 1)
    conditions = {f"{n} [{u}]": float(v) for n, v, u in specs if v.ndim == 0}
    shape = tuple(a.values.size for a in axes)
    n_points = int(np.prod(shape)) if shape else 1

    grids = np.meshgrid(*[a.values for a in axes], indexing="ij") if axes else []
    flat = {a.name: g.reshape(-1) for a, g in zip(axes, grids)}

    def column(name, arr):
        return flat[name] if name in flat else np.full(n_points, float(arr))

    T_flat = column("T", T_ax)
    P_flat = column("P", P_ax)
    feed_flat: dict[str, np.ndarray] = {k: np.full(n_points, v) for k, v in base.items()}
    if ratio_spec is not None:
        feed_flat = ratio_spec.feed_at(base, column(ratio_spec.name, ratio_ax), db)
        feed_flat = {k: np.broadcast_to(v, (n_points,)).copy() for k, v in feed_flat.items()}
    if inert_ax is not None:
        feed_flat = apply_inert(feed_flat, inert_name, column(f"{inert_name} fraction", inert_ax))
        feed_flat = {k: np.broadcast_to(v, (n_points,)).copy() for k, v in feed_flat.items()}
    if key not in feed_flat or np.any(feed_flat[key] <= 0):
        raise EquilibriumInputError(f"the key reactant {key} must be in the feed at every point")

    # ---- solve, chunk by chunk
    gas_names = [n for n in names if db[n].is_gas]
    has_carbon = any(db[n].elements.get("C", 0) > 0 for n in gas_names) and "C(gr)" in db
    conv = np.full(n_points, np.nan)
    yld = np.full(n_points, np.nan) if product_name else None
    y = {n: np.full(n_points, np.nan) for n in gas_names}
    dH = np.full(n_points, np.nan)
    a_C = np.full(n_points, np.nan) if has_carbon else None
    ok = np.zeros(n_points, dtype=bool)
    resid = np.full(n_points, np.nan)
    its = np.zeros(n_points, dtype=int)
    T_eq = T_flat.copy()
    trusted = np.zeros(n_points, dtype=bool)
    flags = np.full(n_points, "", dtype=object)
    for start in range(0, n_points, chunk):
        sl = slice(start, min(start + chunk, n_points))
        res, side = solve_points(names, {k: v[sl] for k, v in feed_flat.items()}, T_flat[sl], P_flat[sl],
                                 key=key, reactions=rxns, gas_model=gas_model, approach=dT, database=db)
        T_eq[sl] = res.T
        ok[sl] = res.converged
        trusted[sl] = res.trustworthy
        flags[sl] = res.state_flags()
        resid[sl] = res.max_residual
        its[sl] = res.iterations
        conv[sl] = res.conversion(key)
        yf = res.mole_fractions
        for n in gas_names:
            y[n][sl] = yf[n]
        if product_name:
            j, k = res.species.index(product_name), res.species.index(key)
            yld[sl] = (res.amount_array[:, j] - res.feed_array[:, j]) / res.feed_array[:, k]
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            dH[sl] = reaction_enthalpy_per_key(res, key, T_flat[sl], db)
        if has_carbon:
            a_C[sl] = carbon_activity(res, database=db)
        if progress is not None:
            progress(sl.stop, n_points)

    n_bad = int(n_points - ok.sum())
    message = f"{n_points} point(s), all converged" if n_bad == 0 else \
        f"{n_bad} of {n_points} point(s) did not converge (NaN)"
    if n_bad:
        warnings.warn(message, NotConvergedWarning, stacklevel=2)
    n_flagged = int((ok & ~trusted).sum())
    if n_flagged:
        message += f"; {n_flagged} converged point(s) not trustworthy (see flags)"

    def grid(a):
        return a.reshape(shape)

    return ConversionMap(
        axes=axes, key=key, product=product_name, T=grid(T_flat), P=grid(P_flat),
        T_equilibrium=grid(T_eq), approach=dT, feed={k: grid(v) for k, v in feed_flat.items()},
        conversion=grid(conv), product_yield=None if yld is None else grid(yld),
        stoichiometric_yield=None if (yld is None or not per_key) else grid(yld / per_key),
        mole_fractions={k: grid(v) for k, v in y.items()}, reaction_enthalpy=grid(dH),
        carbon_activity=None if a_C is None else grid(a_C), converged=grid(ok),
        conditions=conditions, message=message, max_residual=grid(resid), iterations=grid(its),
        trustworthy=grid(trusted), flags=grid(flags))
