"""Carbon limit: the steam-to-carbon ratio below which graphite forms, over temperature and pressure."""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numpy as np

from ...thermo.database import SpeciesDatabase
from ...thermo.reactions import bundled_database
from ...thermo.units import to_si
from ..core.equilibrium import equilibrium
from ..core.inputs import broadcast_shape, feed_mapping, pressures, species_names, temperatures
from ..core.result import EquilibriumInputError
from .carbon import carbon_activity
from .feeds import FeedRatio, STEAM, feed_ratio_spec, resolve_feed
from .inverse import BATCH, search_range, species_list
from .roots import bracketed_roots


@dataclass(frozen=True)
class CarbonLimit:
    """The feed ratio below which graphite is thermodynamically stable, at each (T, P).

    Attributes
    ----------
    T, P : ndarray
        Temperature [K] and pressure [Pa] (broadcast shape of the inputs).
    ratio_name : str
        ``"steam-to-carbon"`` or ``"<numerator>/<denominator>"``.
    critical_ratio : ndarray
        The ratio [mol/mol] at which a_C = 1: graphite is stable below it and not above it.
        NaN where the boundary lies outside ``ratio_range`` (see ``status``).
    status : ndarray of str
        ``"bracketed"``; ``"carbon-free"`` (a_C < 1 already at the low end of the range);
        ``"carbon"`` (a_C > 1 even at the high end); ``"failed"``.
    ratio_range : (float, float)
    ratio_values : ndarray | None
        Ratios [mol/mol] at which ``carbon_activity`` was also evaluated.
    carbon_activity : ndarray | None
        a_C [-] on the grid (*shape, len(ratio_values)).
    graphite_stable : ndarray | None
        ``carbon_activity > 1``.
    message : str
    """

    T: np.ndarray
    P: np.ndarray
    ratio_name: str
    critical_ratio: np.ndarray
    status: np.ndarray
    ratio_range: tuple
    ratio_values: np.ndarray | None = None
    carbon_activity: np.ndarray | None = field(default=None, repr=False)
    graphite_stable: np.ndarray | None = field(default=None, repr=False)
    message: str = ""


def carbon_limit(species: Sequence[str], feed: Mapping[str, object], *, T, P, steam_to_carbon=None,
                 feed_ratio=None, ratio_range=(0.05, 10.0), gas_model: str = "ideal",
                 database: SpeciesDatabase | None = None, tolerance: float = 1e-8) -> CarbonLimit:
    """Critical steam-to-carbon (or other feed) ratio for graphite formation at each (T, P).

    The gas is equilibrated *without* graphite (condensed species in ``species`` are left
    out) and the graphite activity a_C is taken from its element potentials
    (:func:`carbon_activity`); the ratio where a_C = 1 is found by a vectorised bracketed
    search in ln(ratio) (Illinois regula falsi), every (T, P) at once.  a_C is taken to
    fall as the ratio rises (more oxidant per carbon).

    Parameters
    ----------
    species : sequence of str
        C-H-O gas species (e.g. CH4, H2O, CO, CO2, H2).
    feed : mapping of str to amount
        Base feed [mol], e.g. ``{"CH4": 1}``; the ratio numerator is set from the ratio.
    T, P : float | array_like | str | pint.Quantity
        Temperature [K] and pressure [Pa]; they broadcast (use ``T[:, None]`` and
        ``P[None, :]`` for a grid).
    steam_to_carbon : array_like, optional
        Steam-to-carbon ratios [mol/mol] at which a_C is also returned.  The default ratio
        is steam-to-carbon (steam per carbon atom of the feed species holding C and H).
    feed_ratio : (str, str) or (str, str, array_like), optional
        Another ratio instead (``("CO2", "CH4")``), optionally with values at which a_C is
        returned.
    ratio_range : (low, high)
        Search range of the ratio [mol/mol], low > 0.
    gas_model : {"ideal", "peng-robinson"}
    database : SpeciesDatabase, optional
    tolerance : float
        On |ln a_C| at the boundary.

    Returns
    -------
    CarbonLimit

    Examples
    --------
    Methane steam reforming at 1 bar, 1073.15 K (800 degC), ideal gas:

    >>> lim = carbon_limit(["CH4", "H2O", "CO", "CO2", "H2"], {"CH4": 1}, T=1073.15, P=1e5)
    >>> round(float(lim.critical_ratio), 2)
    1.02
    """
    db = database or bundled_database()
    base = resolve_feed(feed_mapping(feed), db)
    species = species_names(species)
    values = None
    if feed_ratio is not None:
        if steam_to_carbon is not None:
            raise EquilibriumInputError("give steam_to_carbon or feed_ratio, not both")
        if isinstance(feed_ratio, (tuple, list)) and len(feed_ratio) == 3:
            spec, values = feed_ratio_spec(feed_ratio[:2], db), feed_ratio[2]
        else:
            spec = feed_ratio_spec(feed_ratio, db)
    else:
        spec = FeedRatio(STEAM, "carbon")
        values = steam_to_carbon
    names = [n for n in species_list(species, base, (), db, (spec.numerator,)) if db[n].is_gas]
    if not any(db[n].elements.get("C", 0) > 0 for n in names):
        raise EquilibriumInputError("no carbon-containing gas species: graphite cannot form")
    spec.checked_basis(base, db)
    T_arr = temperatures(T)
    P_arr = pressures(P)
    shape = broadcast_shape(T=T_arr, P=P_arr)
    T_c = np.broadcast_to(T_arr, shape).reshape(-1)
    P_c = np.broadcast_to(P_arr, shape).reshape(-1)
    lo, hi = search_range(ratio_range, "dimensionless", "ratio_range")
    S = T_c.size

    def ln_a_c(u, case):
        out = np.empty(u.size)
        for s in range(0, u.size, BATCH):
            sl = slice(s, min(s + BATCH, u.size))
            f = spec.feed_at(base, np.exp(u[sl]), db)
            f = {k: np.broadcast_to(v, u[sl].shape) for k, v in f.items()}
            res = equilibrium(names, f, T_c[case[sl]], P_c[case[sl]], gas_model=gas_model, database=db, warn=False)
            with np.errstate(divide="ignore"):
                out[sl] = np.log(carbon_activity(res, database=db))
        return out

    cases = np.arange(S)
    ends = ln_a_c(np.concatenate([np.full(S, np.log(lo)), np.full(S, np.log(hi))]), np.concatenate([cases, cases]))
    f_lo, f_hi = ends[:S], ends[S:]
    status = np.full(S, "bracketed", dtype=object)
    status[np.isfinite(f_lo) & (f_lo < 0)] = "carbon-free"
    status[np.isfinite(f_hi) & (f_hi >= 0)] = "carbon"
    status[~np.isfinite(f_lo) | ~np.isfinite(f_hi)] = "failed"
    br = np.flatnonzero(status == "bracketed")
    critical = np.full(S, np.nan)
    if br.size:
        u, fu, ok = bracketed_roots(lambda x, idx: ln_a_c(x, br[idx]), np.full(br.size, np.log(lo)),
                                    np.full(br.size, np.log(hi)), f_lo[br], f_hi[br], ftol=tolerance, xtol=1e-10)
        critical[br] = np.where(ok, np.exp(u), np.nan)
        status[br[~ok]] = "failed"

    a_grid = stable = ratio_values = None
    if values is not None:
        ratio_values = np.atleast_1d(np.asarray(to_si(values, "dimensionless"), dtype=float))
        nv = ratio_values.size
        u = np.tile(np.log(ratio_values), S)
        case = np.repeat(cases, nv)
        a_grid = np.exp(ln_a_c(u, case)).reshape(shape + (nv,))
        with np.errstate(invalid="ignore"):
            stable = a_grid > 1.0
    n_out = int(np.count_nonzero(status != "bracketed"))
    message = (f"{S} state(s): boundary found at {S - n_out}"
               + (f"; {n_out} outside {spec.name} {lo:g}-{hi:g} or failed (see status)" if n_out else ""))
    return CarbonLimit(T=np.broadcast_to(T_arr, shape).copy(), P=np.broadcast_to(P_arr, shape).copy(),
                       ratio_name=spec.name, critical_ratio=critical.reshape(shape),
                       status=status.reshape(shape), ratio_range=(lo, hi), ratio_values=ratio_values,
                       carbon_activity=a_grid, graphite_stable=stable, message=message)
