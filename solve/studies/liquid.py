"""Concentration-basis equilibria of reactions in a liquid of constant volume.

Each reaction j obeys, at equilibrium,

    Π_i c_i^ν_ij = Kc_j(T)         (c_i in mol/L; Kc_j in (mol/L)^Δn_j, Δn_j = Σ_i ν_ij)

in an ideal solution (activity = concentration / 1 mol/L).  Kc(T) follows from the user's
ΔrH°, ΔrS° or K at one temperature, by the integrated van 't Hoff equation, with Kirchhoff's
ΔrCp correction when given (:class:`eqdesign.thermo.reactions.ReactionLevelData`).

The extents ξ_j of all reactions are found together by minimising the convex function

    F(ξ) = Σ_i n_i (γ_i + ln(c_i / c°) - 1),   n = n0 + N ξ,   N^T γ = -ln Kc,

whose stationary point is the set of equilibrium conditions (∂F/∂ξ_j = ln Q_j - ln Kc_j);
F is convex in ξ, so the minimum inside the polytope n ≥ 0 is the one equilibrium
(W. R. Smith, R. W. Missen, *Chemical Reaction Equilibrium Analysis*, Wiley, 1982: the
stoichiometric formulation).  Damped Newton steps, kept inside n > 0 and accepted by an
Armijo test, run on all states at once.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from ...thermo.database import SpeciesDatabase
from ...thermo.reactions import ReactionLevelData, bundled_database, parse_side, _ARROW
from ...thermo.units import UnitError, concentration_power_value, to_kelvin, to_si

#: Standard concentration of the concentration basis [mol/m³] (1 mol/L).
C_STANDARD = 1000.0

IDEAL_SOLUTION_NOTE = ("Ideal solution: activities are concentrations over 1 mol/L (no activity "
                       "coefficients); the liquid volume is constant (stated volume, or the stated "
                       "density times the conserved mass).")
CAUTION = ("Equilibrium limits only, not rates or heat release: check the reaction heat and the cooling "
           "before scaling up a batch, and follow local codes and licensed engineering review for "
           "flammable or corrosive liquids.")


class LiquidInputError(ValueError):
    """Reactions, amounts, volume or temperatures given for a liquid equilibrium are unusable."""


def concentration_unit(delta_n: float) -> str:
    """Unit text of a concentration-basis K, (mol/L)^Δn.

    >>> concentration_unit(0), concentration_unit(-1), concentration_unit(2)
    ('-', 'L/mol', '(mol/L)^2')
    """
    if delta_n == 0:
        return "-"
    if delta_n == 1:
        return "mol/L"
    if delta_n == -1:
        return "L/mol"
    return f"(mol/L)^{delta_n:g}"


@dataclass(frozen=True)
class LiquidReaction:
    """A reaction among liquid-phase solutes with its concentration-basis K(T).

    Attributes
    ----------
    text : str
        The reaction as written, e.g. ``"CH3COOH + C2H5OH = CH3COOC2H5 + H2O"``.
    species : tuple[str, ...]
    coefficients : ndarray
        ν_i (negative for reactants).
    k_data : ReactionLevelData
        ln K(T) of the dimensionless K = Kc / (1 mol/L)^Δn.
    source : str
        Where the K data come from.

    Examples
    --------
    >>> r = LiquidReaction.define("A + B = C + D", K=4.0, at="25 degC")
    >>> r.delta_n, r.K_unit, round(r.concentration_K(350.0), 12)
    (0.0, '-', 4.0)
    """

    text: str
    species: tuple
    coefficients: np.ndarray = field(repr=False)
    k_data: ReactionLevelData = field(repr=False)
    source: str = ""

    @classmethod
    def define(cls, text: str, *, K=None, at=None, delta_h=None, delta_s=None, delta_cp=(0.0,),
               valid=None, source: str = "") -> "LiquidReaction":
        """Build from reaction text and K data.

        Parameters
        ----------
        text : str
            ``"reactants = products"``; species names are free text (no database needed).
        K : float | str, optional
            Kc at ``at`` in (mol/L)^Δn (a number, or a quantity string such as ``"0.5 L/mol"``).
        at : float | str, optional
            Temperature of ``K``, or the reference temperature of ``delta_h``/``delta_s`` [K]
            (default 298.15 K).
        delta_h : float | str, optional
            ΔrH° [J/mol] (``"-4 kJ/mol"``); with ``K`` alone, K is taken independent of T.
        delta_s : float | str, optional
            ΔrS° [J/(mol K)] on the 1 mol/L standard state (instead of ``K``).
        delta_cp : float | str | tuple
            ΔrCp° [J/(mol K)], a constant or ``(c0, c1, c2, c3, c_2)`` in SI.
        valid : (low, high), optional
            Temperatures over which the data are trusted [K] (default 250-500 K); states
            outside are refused per state.
        """
        parts = _ARROW.split(str(text).strip())
        if len(parts) != 2 or not parts[0].strip() or not parts[1].strip():
            raise LiquidInputError(f"reaction {text!r}: write it as 'reactants = products', "
                                   "e.g. 'A + B = C + D'")
        stoich: dict[str, float] = {}
        for sign, side in ((-1.0, parts[0]), (1.0, parts[1])):
            try:
                terms = parse_side(side, None, text)
            except ValueError as exc:
                raise LiquidInputError(str(exc)) from None
            for name, coeff in terms.items():
                stoich[name] = stoich.get(name, 0.0) + sign * coeff
        stoich = {k: v for k, v in stoich.items() if v != 0.0}
        coefficients = np.array(list(stoich.values()), dtype=float)
        coefficients.setflags(write=False)
        dn = float(coefficients.sum())
        T_ref = 298.15 if at is None else float(to_kelvin(at))
        if isinstance(delta_cp, (str, int, float)):
            delta_cp = (float(to_si(delta_cp, "molar_entropy")),)
        bounds = (250.0, 500.0) if valid is None else tuple(float(to_kelvin(v)) for v in valid)
        where = f"reaction {text!r}"
        if (K is None) == (delta_s is None):
            raise LiquidInputError(f"{where}: give either K (at a temperature) or delta_s with delta_h")
        dh = 0.0 if delta_h is None else float(to_si(delta_h, "molar_energy"))
        if K is not None:
            try:
                k_value = concentration_power_value(K, dn)
            except UnitError as exc:
                raise LiquidInputError(f"{where}: K {exc}") from None
            if not np.isfinite(k_value) or k_value <= 0:
                raise LiquidInputError(f"{where}: K must be a positive number")
            data = ReactionLevelData.from_K(k_value, T_ref, dh, tuple(delta_cp), T_bounds=bounds, text=text)
        else:
            if delta_h is None:
                raise LiquidInputError(f"{where}: delta_s needs delta_h as well")
            data = ReactionLevelData(dh, float(to_si(delta_s, "molar_entropy")), T_ref, tuple(delta_cp),
                                     bounds, 0.0, text)
        return cls(text=str(text).strip(), species=tuple(stoich), coefficients=coefficients,
                   k_data=data, source=source)

    @property
    def delta_n(self) -> float:
        """Δn = Σ ν_i, the power of (mol/L) in Kc."""
        return float(self.coefficients.sum())

    @property
    def K_unit(self) -> str:
        """Unit of :meth:`concentration_K`, e.g. ``"L/mol"``."""
        return concentration_unit(self.delta_n)

    def ln_K(self, T):
        """ln of the dimensionless K = Kc / (1 mol/L)^Δn at T [K]."""
        return self.k_data.ln_K(T)

    def concentration_K(self, T):
        """Kc(T) [(mol/L)^Δn]."""
        return self.k_data.equilibrium_constant(T)


@dataclass(frozen=True)
class LiquidEquilibriumResult:
    """Liquid-phase equilibrium at every state, arrays of shape ``shape`` (+ trailing axis).

    Attributes
    ----------
    species : tuple[str, ...]
        Column order of the per-species arrays.
    reactions : tuple[LiquidReaction, ...]
    T : ndarray
        Temperature [K].
    volume : ndarray
        Liquid volume [m³].
    initial_array, amount_array : ndarray, shape (*shape, n_species)
        Initial and equilibrium amounts [mol]; NaN where not converged.
    extent_array : ndarray, shape (*shape, n_reactions)
        Extents ξ [mol].
    K_array : ndarray, shape (*shape, n_reactions)
        Kc of each reaction [(mol/L)^Δn, see ``K_units``].
    converged : ndarray of bool
    iterations : ndarray of int
    max_residual : ndarray
        Largest |ln Q_j - ln Kc_j| at the end [-].
    flags : ndarray of str
        Why a state has no answer, ``""`` otherwise.
    message : str
    notes : tuple[str, ...]
    key : str | None
    """

    species: tuple
    reactions: tuple
    T: np.ndarray = field(repr=False)
    volume: np.ndarray = field(repr=False)
    initial_array: np.ndarray = field(repr=False)
    amount_array: np.ndarray = field(repr=False)
    extent_array: np.ndarray = field(repr=False)
    K_array: np.ndarray = field(repr=False)
    converged: np.ndarray = field(repr=False)
    iterations: np.ndarray = field(repr=False)
    max_residual: np.ndarray = field(repr=False)
    flags: np.ndarray = field(repr=False)
    message: str = ""
    notes: tuple = ()
    key: str | None = None

    @property
    def shape(self) -> tuple:
        return np.shape(self.T)

    @property
    def all_converged(self) -> bool:
        return bool(np.all(self.converged))

    @property
    def K_units(self) -> tuple:
        """Unit of each reaction's Kc."""
        return tuple(r.K_unit for r in self.reactions)

    def _per_species(self, arr) -> dict:
        return {n: (float(arr[..., k]) if arr.ndim == 1 else arr[..., k]) for k, n in enumerate(self.species)}

    @property
    def amounts(self) -> dict:
        """Species -> equilibrium amount [mol]."""
        return self._per_species(self.amount_array)

    @property
    def initial(self) -> dict:
        """Species -> initial amount [mol]."""
        return self._per_species(self.initial_array)

    @property
    def change(self) -> dict:
        """Species -> change in amount, equilibrium minus initial [mol]."""
        return self._per_species(self.amount_array - self.initial_array)

    @property
    def concentrations(self) -> dict:
        """Species -> equilibrium concentration [mol/L]."""
        litres = np.asarray(self.volume)[..., None] * 1000.0
        return self._per_species(self.amount_array / litres)

    @property
    def extents(self) -> dict:
        """Reaction text -> extent ξ [mol]."""
        return {r.text: (float(self.extent_array[..., j]) if self.extent_array.ndim == 1
                         else self.extent_array[..., j]) for j, r in enumerate(self.reactions)}

    def conversion(self, key: str | None = None):
        """Fractional conversion of a reactant, (n0 - n) / n0 [-]."""
        key = key or self.key
        if key not in self.species:
            raise LiquidInputError(f"key {key!r}: name a species among {list(self.species)}")
        k = self.species.index(key)
        n0 = self.initial_array[..., k]
        with np.errstate(divide="ignore", invalid="ignore"):
            x = (n0 - self.amount_array[..., k]) / n0
        return float(x) if np.ndim(x) == 0 else x

    def species_table(self, state=()) -> list[tuple]:
        """Rows ``(species, initial [mol], change [mol], equilibrium [mol], concentration [mol/L])``
        at one state (an index into ``shape``)."""
        n0 = self.initial_array[state]
        n = self.amount_array[state]
        litres = float(np.asarray(self.volume)[state]) * 1000.0
        return [(s, float(n0[k]), float(n[k] - n0[k]), float(n[k]), float(n[k] / litres))
                for k, s in enumerate(self.species)]


def _as_reactions(reactions) -> tuple:
    items = [reactions] if isinstance(reactions, LiquidReaction) else list(reactions)
    if not items or not all(isinstance(r, LiquidReaction) for r in items):
        raise LiquidInputError("reactions: give LiquidReaction objects (LiquidReaction.define(...))")
    return tuple(items)


def _volume(volume, density, molar_masses, database, names, n0):
    """Liquid volume [m³] per state, shape (p,)."""
    if (volume is None) == (density is None):
        raise LiquidInputError("give exactly one of volume (e.g. '1 L') or density (e.g. '900 kg/m**3')")
    if volume is not None:
        try:
            V = np.asarray(to_si(volume, "volume"), dtype=float)
        except UnitError as exc:
            raise LiquidInputError(f"volume: {exc}") from None
        return V
    try:
        rho = np.asarray(to_si(density, "density"), dtype=float)
    except UnitError as exc:
        raise LiquidInputError(f"density: {exc}") from None
    masses = []
    db = database
    for name in names:
        if molar_masses and name in molar_masses:
            masses.append(float(molar_masses[name]))
            continue
        db = db or bundled_database()
        if name in db:
            masses.append(db[name].molar_mass)
        else:
            raise LiquidInputError(f"density: the molar mass of {name!r} is needed for the volume; give "
                                   f"molar_masses={{{name!r}: g/mol}} or a volume instead")
    mass = n0 @ np.array(masses) / 1000.0                       # kg
    return mass / rho


def liquid_equilibrium(reactions, initial: Mapping[str, object], T, *, volume=None, density=None,
                       molar_masses: Mapping[str, float] | None = None,
                       database: SpeciesDatabase | None = None, key: str | None = None,
                       tolerance: float = 1e-11, max_iterations: int = 200) -> LiquidEquilibriumResult:
    """Equilibrium of one or more simultaneous liquid-phase reactions at constant volume.

    Parameters
    ----------
    reactions : LiquidReaction | sequence of LiquidReaction
        Linearly independent reactions.
    initial : mapping str -> amount
        Initial amounts [mol] (numbers, arrays broadcast with T, or ``"2 mol"``); species not
        in any reaction count as inert solvent (volume from density only).
    T : float | array_like | str
        Temperature [K] or quantity.
    volume : float | array_like | str, optional
        Liquid volume [m³] or quantity (``"1 L"``).
    density : float | str, optional
        Liquid density [kg/m³] or quantity; the volume is then mass / density with molar
        masses from ``molar_masses`` [g/mol] or the species database.
    key : str, optional
        Species for :meth:`LiquidEquilibriumResult.conversion`.
    tolerance : float
        Largest accepted |ln Q_j - ln Kc_j| [-].

    Returns
    -------
    LiquidEquilibriumResult

    Examples
    --------
    Equimolar acid and alcohol to ester and water with Kc = 4 (the classic ethyl acetate
    value, from memory): two thirds of the acid reacts.

    >>> ester = LiquidReaction.define("acid + alcohol = ester + water", K=4.0)
    >>> r = liquid_equilibrium(ester, {"acid": 1.0, "alcohol": 1.0}, 298.15, volume="0.1 L", key="acid")
    >>> round(r.conversion(), 6)
    0.666667
    """
    rxns = _as_reactions(reactions)
    names: list[str] = []
    for r in rxns:
        for s in r.species:
            if s not in names:
                names.append(s)
    for s in initial:
        if s not in names:
            names.append(str(s))
    ns, nr = len(names), len(rxns)
    N = np.zeros((ns, nr))
    for j, r in enumerate(rxns):
        for s, nu in zip(r.species, r.coefficients):
            N[names.index(s), j] += nu
    if np.linalg.matrix_rank(N) < nr:
        raise LiquidInputError("reactions: they are linearly dependent; drop the ones that are sums "
                               "of the others")
    if key is not None and key not in names:
        raise LiquidInputError(f"key {key!r}: name a species among {names}")
    amounts = {}
    for s, v in initial.items():
        try:
            a = np.asarray(to_si(v, "amount"), dtype=float)
        except UnitError as exc:
            raise LiquidInputError(f"initial[{s!r}]: {exc}") from None
        if np.any(~np.isfinite(a)) or np.any(a < 0):
            raise LiquidInputError(f"initial[{s!r}]: amounts must be finite and not negative")
        amounts[str(s)] = a
    T_arr = np.asarray(to_kelvin(T), dtype=float)
    if np.any(~np.isfinite(T_arr)) or np.any(T_arr <= 0):
        raise LiquidInputError("T: temperatures must be finite and above 0 K")
    V_in = None
    if volume is not None:
        try:
            V_in = np.asarray(to_si(volume, "volume"), dtype=float)
        except UnitError as exc:
            raise LiquidInputError(f"volume: {exc}") from None
    shape = np.broadcast_shapes(T_arr.shape, *(a.shape for a in amounts.values()),
                                *(() if V_in is None else (V_in.shape,)))
    p = int(np.prod(shape)) if shape else 1
    n0 = np.zeros((p, ns))
    for s, a in amounts.items():
        n0[:, names.index(s)] = np.broadcast_to(a, shape).reshape(p)
    Tf = np.broadcast_to(T_arr, shape).reshape(p)
    V = _volume(volume, density, molar_masses, database, names, n0)
    V = np.broadcast_to(V, shape).reshape(p) if volume is not None else np.broadcast_to(V, (p,))
    if np.any(~np.isfinite(V)) or np.any(V <= 0):
        raise LiquidInputError("volume: the liquid volume must be positive (check volume or density "
                               "and the initial amounts)")
    scale = n0.sum(axis=1)
    if np.any(scale <= 0):
        raise LiquidInputError("initial: the mixture is empty at some state")

    flags = np.full(p, "", dtype=object)
    lnK = np.column_stack([np.asarray(r.ln_K(Tf), dtype=float).reshape(p) for r in rxns])  # (p, nr)
    for r in rxns:
        lo, hi = r.k_data.T_bounds
        out = (Tf < lo) | (Tf > hi)
        flags[out & (flags == "")] = (f"temperature outside the {lo:g}-{hi:g} K range of the K data of "
                                      f"{r.text!r}")
    x0 = n0 / scale[:, None]                                 # scaled amounts
    ln_cV = np.log(scale * 1.0 / (V * C_STANDARD))           # c/c° = x * scale / (V c°)

    # interior start: each reaction moves half-way to the middle of its feasible interval
    # (which keeps present species present and makes absent ones); nr passes reach every
    # species a chain of reactions can make.  Reactions left with an absent species cannot proceed (ξ = 0).
    x = x0.copy()
    xi = np.zeros((p, nr))
    for _ in range(nr):
        for j in range(nr):
            col = N[:, j]
            with np.errstate(divide="ignore", invalid="ignore"):
                hi = np.min(np.where(col < 0, x / -col, np.inf), axis=1)
                lo = -np.min(np.where(col > 0, x / col, np.inf), axis=1)
            t = np.where(hi > lo, 0.25 * (hi + lo), 0.0)
            x = np.maximum(x + t[:, None] * col, 0.0)
            xi[:, j] += t
    active = np.column_stack([np.all((N[:, j] == 0) | (x > 0), axis=1) for j in range(nr)])
    involved = (np.abs(N)[None] * active[:, None, :]).sum(axis=2) > 0          # (p, ns)
    gamma = -(N @ np.linalg.pinv(N.T @ N) @ lnK.T).T                           # (p, ns): N^T γ = -ln K

    def objective(xr, rows):
        """F of the states ``rows`` at scaled amounts ``xr`` (0 ln 0 = 0)."""
        with np.errstate(divide="ignore", invalid="ignore"):
            terms = np.where(xr > 0, xr * (gamma[rows] + np.log(xr) + ln_cV[rows, None] - 1.0), 0.0)
        return np.where(involved[rows], terms, 0.0).sum(axis=1)

    def gradient(x_amounts):
        with np.errstate(divide="ignore"):
            ln_c = np.where(involved, np.log(np.where(involved, x_amounts, 1.0)) + ln_cV[:, None], 0.0)
        return np.where(active, ln_c @ N - lnK, 0.0)

    ok = flags == ""
    converged = np.zeros(p, dtype=bool)
    iterations = np.zeros(p, dtype=int)
    residual = np.full(p, np.inf)
    run = ok.copy()
    for it in range(max_iterations):
        g = gradient(x)
        res = np.max(np.abs(g), axis=1) if nr else np.zeros(p)
        residual = np.where(run | converged, res, residual)
        newly = run & (res <= tolerance)
        converged |= newly
        run &= ~newly
        if not run.any():
            break
        rows = np.flatnonzero(run)
        iterations[rows] += 1
        xr = x[rows]
        w = np.where(involved[rows], 1.0 / np.where(xr > 0, xr, np.inf), 0.0)
        H = np.einsum("ij,pi,ik->pjk", N, w, N)
        act = active[rows]
        eye = np.eye(nr)[None]
        H = np.where(act[:, :, None] & act[:, None, :], H, eye * (~act[:, :, None]))
        d = -np.linalg.solve(H, g[rows][..., None])[..., 0]
        d = np.where(act, d, 0.0)
        dx = d @ N.T
        with np.errstate(divide="ignore", invalid="ignore"):
            limit = np.min(np.where(dx < 0, -xr / dx, np.inf), axis=1)
        alpha = np.minimum(1.0, 0.99 * limit)
        f0 = objective(xr, rows)
        slope = np.einsum("pj,pj->p", g[rows], d)
        for _ in range(50):
            trial = xr + alpha[:, None] * dx
            f1 = objective(trial, rows)
            bad = ~(f1 <= f0 + 1e-4 * alpha * slope + 1e-15 * np.abs(f0))
            if not bad.any():
                break
            alpha = np.where(bad, 0.5 * alpha, alpha)
        x[rows] = xr + alpha[:, None] * dx
        xi[rows] += alpha[:, None] * d
    bad = ~converged
    if np.any(bad & ok):
        flags[bad & ok] = "did not converge"
    amounts_out = np.where(converged[:, None], x * scale[:, None], np.nan)
    extents = np.where(converged[:, None], xi * scale[:, None], np.nan)
    n_bad = int(bad.sum())
    message = "all states converged" if n_bad == 0 else f"{n_bad} of {p} state(s) have no answer (NaN; see flags)"
    return LiquidEquilibriumResult(
        species=tuple(names), reactions=rxns, T=Tf.reshape(shape).copy(), volume=V.reshape(shape).copy(),
        initial_array=n0.reshape(shape + (ns,)), amount_array=amounts_out.reshape(shape + (ns,)),
        extent_array=extents.reshape(shape + (nr,)), K_array=np.exp(lnK).reshape(shape + (nr,)),
        converged=converged.reshape(shape), iterations=iterations.reshape(shape),
        max_residual=residual.reshape(shape), flags=flags.reshape(shape), message=message,
        notes=(IDEAL_SOLUTION_NOTE, CAUTION), key=key)


@dataclass(frozen=True)
class LiquidMap:
    """A liquid equilibrium over a temperature × feed-ratio grid.

    Attributes
    ----------
    temperatures : ndarray, shape (n_T,)
        [K].
    ratios : ndarray, shape (n_r,)
        Feed ratio ``vary : per`` [mol/mol].
    vary, per : str
    result : LiquidEquilibriumResult
        Shape (n_T, n_r).
    """

    temperatures: np.ndarray = field(repr=False)
    ratios: np.ndarray = field(repr=False)
    vary: str
    per: str
    result: LiquidEquilibriumResult = field(repr=False)

    def conversion(self, key: str | None = None) -> np.ndarray:
        """Conversion of ``key`` [-], shape (n_T, n_r); NaN where a state has no answer."""
        return self.result.conversion(key)


def liquid_map(reactions, initial: Mapping[str, object], temperatures, *, vary: str, per: str,
               ratios, **kwargs) -> LiquidMap:
    """Liquid equilibrium over temperatures × feed ratios in one vectorised solve.

    Parameters
    ----------
    reactions, initial, kwargs
        As for :func:`liquid_equilibrium`; ``initial[vary]`` is replaced by
        ``ratio × initial[per]``.
    temperatures : array_like
        [K] or quantities.
    vary, per : str
        The species whose initial amount the ratio sets, and the one it is counted against.
    ratios : array_like
        Feed ratios [mol/mol].

    Examples
    --------
    >>> ester = LiquidReaction.define("acid + alcohol = ester + water", K=4.0)
    >>> m = liquid_map(ester, {"acid": 1.0}, [298.15, 330.0], vary="alcohol", per="acid",
    ...                ratios=[1.0, 3.0], volume="0.2 L", key="acid")
    >>> m.conversion().round(3).tolist()
    [[0.667, 0.903], [0.667, 0.903]]
    """
    T = np.atleast_1d(np.asarray(to_kelvin(temperatures), dtype=float))
    r = np.atleast_1d(np.asarray(to_si(ratios, "dimensionless"), dtype=float))
    if per not in initial:
        raise LiquidInputError(f"per {per!r}: it must be in the initial amounts")
    if np.any(r < 0) or np.any(~np.isfinite(r)):
        raise LiquidInputError("ratios: feed ratios must be finite and not negative")
    base = dict(initial)
    n_per = np.asarray(to_si(base[per], "amount"), dtype=float)
    grid = {k: np.broadcast_to(np.asarray(to_si(v, "amount"), dtype=float), (T.size, r.size))
            for k, v in base.items()}
    grid[vary] = np.broadcast_to(r[None, :] * n_per, (T.size, r.size))
    res = liquid_equilibrium(reactions, grid, T[:, None], **kwargs)
    return LiquidMap(temperatures=T, ratios=r, vary=vary, per=per, result=res)


@dataclass(frozen=True)
class RemovalResult:
    """Equilibrium after taking part of one species out between equilibrium stages.

    Attributes
    ----------
    species_removed : str
    removed_fraction : ndarray
        Share of that species' equilibrium amount taken out at each stage [-], the axis of
        every array.
    stages : int
    removed_amount : ndarray
        Total amount taken out over all stages [mol].
    result : LiquidEquilibriumResult
        Equilibrium after the last removal (the initial amounts are the original charge, so
        ``result.conversion`` counts from the charge).
    """

    species_removed: str
    removed_fraction: np.ndarray = field(repr=False)
    stages: int
    removed_amount: np.ndarray = field(repr=False)
    result: LiquidEquilibriumResult = field(repr=False)

    def conversion(self, key: str | None = None) -> np.ndarray:
        """Conversion of ``key`` from the original charge after the last stage [-]."""
        return self.result.conversion(key)


def removal_sweep(reactions, initial: Mapping[str, object], T, *, species: str, removed_fraction,
                  stages: int = 1, **kwargs) -> RemovalResult:
    """Equilibrium, take out a share of one species, re-equilibrate; ``stages`` times.

    The lever of a reaction held back by its own product (water of an esterification taken
    overhead or by a drying agent).  Vectorised over ``removed_fraction`` (and T).

    Parameters
    ----------
    reactions, initial, T, kwargs
        As for :func:`liquid_equilibrium` (with ``density``, the volume follows the mass left).
    species : str
        The species taken out.
    removed_fraction : array_like
        Share of its equilibrium amount removed at each stage [-], 0 to 1.
    stages : int
        Number of removal steps, each followed by a new equilibrium.

    Examples
    --------
    Equimolar ester charge with K = 4: taking out all the water once lifts the conversion
    from 2/3 by the root x of (2/3 + x) x = 4 (1/3 - x)², x = (30 - √468)/54, to 0.8216:

    >>> ester = LiquidReaction.define("acid + alcohol = ester + water", K=4.0)
    >>> r = removal_sweep(ester, {"acid": 1.0, "alcohol": 1.0}, 298.15, species="water",
    ...                   removed_fraction=[0.0, 1.0], volume="0.1 L", key="acid")
    >>> r.conversion().round(4).tolist()
    [0.6667, 0.8216]
    """
    f = np.atleast_1d(np.asarray(to_si(removed_fraction, "dimensionless"), dtype=float))
    if np.any(f < 0) or np.any(f > 1) or np.any(~np.isfinite(f)):
        raise LiquidInputError("removed_fraction: give shares between 0 and 1 (0 % to 100 %)")
    if int(stages) != stages or stages < 1:
        raise LiquidInputError("stages: a whole number of removal steps, 1 or more")
    charge = {k: np.asarray(to_si(v, "amount"), dtype=float) for k, v in initial.items()}
    current = {k: v * np.ones_like(f) for k, v in charge.items()}
    res = liquid_equilibrium(reactions, current, T, **kwargs)
    if species not in res.species:
        raise LiquidInputError(f"species {species!r}: name one of {list(res.species)}")
    k = res.species.index(species)
    removed = np.zeros(np.broadcast_shapes(f.shape, res.shape))
    for _ in range(int(stages)):
        amounts = res.amount_array.copy()
        take = f * amounts[..., k]
        removed = removed + take
        amounts[..., k] -= take
        current = {s: amounts[..., j] for j, s in enumerate(res.species)}
        res = liquid_equilibrium(reactions, current, T, **kwargs)
    n0 = np.broadcast_to(np.stack([np.broadcast_to(charge.get(s, 0.0), res.shape) for s in res.species],
                                  axis=-1), res.initial_array.shape)
    final = LiquidEquilibriumResult(
        species=res.species, reactions=res.reactions, T=res.T, volume=res.volume, initial_array=n0.copy(),
        amount_array=res.amount_array, extent_array=res.extent_array, K_array=res.K_array,
        converged=res.converged, iterations=res.iterations, max_residual=res.max_residual, flags=res.flags,
        message=res.message, notes=res.notes + (f"{species} removed in {int(stages)} step(s); amounts "
                                                "and conversion count from the original charge.",),
        key=res.key)
    return RemovalResult(species_removed=species, removed_fraction=f, stages=int(stages),
                         removed_amount=removed, result=final)
