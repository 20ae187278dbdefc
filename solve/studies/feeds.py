"""Inputs shared by the studies: feeds, feed ratios, inert dilution and the approach margin.

One reader for each: :func:`approach_kelvin` (the approach to equilibrium as a temperature
difference), :class:`FeedRatio` (a ratio of two feed species, or steam to carbon), and the
helpers that build feeds for a grid of states.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Mapping, Sequence

import numpy as np

from ...thermo.database import SpeciesDatabase
from ...thermo.reactions import Reaction
from ...thermo.units import temperature_difference, to_si
from ..core.result import EquilibriumInputError


#: Points solved per batched call of :func:`equilibrium` in a map.
DEFAULT_CHUNK = 2000

#: Name of the steam species used by steam-to-carbon ratios.
STEAM = "H2O"


# --------------------------------------------------------------------------- input helpers
def approach_kelvin(approach) -> float | None:
    """A temperature approach to equilibrium as a temperature *difference* [K].

    Parameters
    ----------
    approach : None | float | str | pint.Quantity
        ``None`` (no approach), a number [K], or a temperature difference such as
        ``"10 K"`` or ``"10 delta_degC"``.  Offset units (``"10 degC"``) are refused
        because they denote a temperature, not a difference.

    Returns
    -------
    float | None
        ΔT [K], non-negative.

    Examples
    --------
    >>> approach_kelvin("10 delta_degC")
    10.0
    >>> approach_kelvin(15)
    15.0
    """
    if approach is None:
        return None
    value = temperature_difference(approach, "approach")
    if not np.isfinite(value) or value < 0:
        raise EquilibriumInputError(
            f"approach must be a finite, non-negative temperature difference, got {approach!r}")
    return value


def approach_temperatures(T, approach: float) -> np.ndarray:
    """Both candidate equilibrium temperatures of an approach, stacked: T − ΔT then T + ΔT.

    Parameters
    ----------
    T : ndarray, shape (m,)
        Operating temperatures [K].
    approach : float
        ΔT [K], positive.

    Returns
    -------
    ndarray, shape (2 m,)
        ``[T − ΔT, T + ΔT]`` [K]; solve both in one batched call and pick the side per state
        with :func:`approach_side`.  Refused (EquilibriumInputError) where T − ΔT ≤ 0 K.
    """
    T = np.asarray(T, dtype=float).reshape(-1)
    if np.any(T - approach <= 0):
        raise EquilibriumInputError(f"approach {approach:g} K takes temperatures to or below 0 K")
    return np.concatenate([T - approach, T + approach])


def approach_side(conversion_both) -> np.ndarray:
    """The approach-side rule: per state, the side of the approach that lowers conversion.

    An approach to equilibrium ΔT is applied on the side that lowers the conversion of the
    key reactant: T + ΔT for an exothermic reaction, T − ΔT for an endothermic one (van 't
    Hoff: d ln K/dT = ΔrH°/RT²).  The side is found from the conversions themselves, so it
    also holds for several reactions.  This is the one place the rule is written.

    Parameters
    ----------
    conversion_both : ndarray, shape (2 m,)
        Conversion of the key [-] at :func:`approach_temperatures` (T − ΔT first).

    Returns
    -------
    ndarray of int, shape (m,)
        +1 where T + ΔT gives the lower conversion, −1 otherwise (ties and NaN: −1).

    Examples
    --------
    >>> approach_side(np.array([0.30, 0.20, 0.25, 0.35])).tolist()
    [1, -1]
    """
    x = np.asarray(conversion_both, dtype=float).reshape(-1)
    m = x.size // 2
    return np.where(x[m:] < x[:m], 1, -1)


def axis_values(value, kind: str, what: str) -> np.ndarray | None:
    """A sweep axis as a float array in SI: 0-d for a fixed value, 1-d for an axis.

    Numbers are taken as SI; strings and pint quantities are converted; a list of strings
    (``["400 degC", "450 degC"]``) is converted element by element.
    """
    if value is None:
        return None
    if isinstance(value, (list, tuple)) and len(value) and all(isinstance(v, str) for v in value):
        arr = np.array([to_si(v, kind) for v in value], dtype=float)
    else:
        arr = np.asarray(to_si(value, kind), dtype=float)
    if arr.ndim > 1:
        raise EquilibriumInputError(f"{what} must be a single value or a 1-D array, got shape {arr.shape}")
    if arr.ndim == 1 and arr.size == 0:
        raise EquilibriumInputError(f"{what} is an empty array")
    if np.any(~np.isfinite(arr)):
        raise EquilibriumInputError(f"{what} must be finite")
    return arr


def resolve_feed(feed: Mapping[str, object], db: SpeciesDatabase) -> dict[str, float]:
    """Feed mapping with database names and amounts [mol] as floats (one feed, no arrays)."""
    out: dict[str, float] = {}
    for name, amount in feed.items():
        v = to_si(amount, "amount")
        if np.ndim(v) != 0:
            raise EquilibriumInputError(
                f"feed of {name} must be a single amount here; sweep it with feed_ratio= or inert=")
        v = float(v)
        if not np.isfinite(v) or v < 0:
            raise EquilibriumInputError(f"feed of {name} must be finite and non-negative")
        out[db.resolve(name)] = out.get(db.resolve(name), 0.0) + v
    return out


def hydrocarbon_carbon(feed: Mapping[str, float], db: SpeciesDatabase) -> float:
    """Carbon atoms [mol] in the feed species that contain both carbon and hydrogen.

    This is the carbon of the steam-to-carbon ratio as reformer operators use it: the
    carbon of the hydrocarbon (and other organic) feed, not that of CO or CO2.
    """
    total = 0.0
    for name, n in feed.items():
        el = db[name].elements
        if el.get("C", 0) > 0 and el.get("H", 0) > 0:
            total += n * el["C"]
    return total


@dataclass(frozen=True)
class FeedRatio:
    """A feed ratio: ``numerator`` amount = ratio × ``denominator`` amount [mol/mol].

    The one feed-ratio record of the package: the studies take it (``ratio=``), and the
    case-file reader builds it from a study's ``feed_ratio`` section (with the grid of
    ``values`` of a map).

    Attributes
    ----------
    numerator : str
        Feed species whose amount the ratio sets (database name), e.g. ``"H2O"``.
    denominator : str
        A feed species name, or ``"carbon"`` for the steam-to-carbon ratio: the carbon
        atoms of the feed species holding both carbon and hydrogen (see
        :func:`hydrocarbon_carbon`).
    values : tuple[float, ...]
        Ratios [mol/mol] of a study grid; empty for a target search or a single use.
    label : str
        Text for tables and axes; default ``"<name> ratio"``, e.g. ``"steam-to-carbon ratio"``.

    Examples
    --------
    >>> r = FeedRatio("H2O", "CO")
    >>> r.name, r.label
    ('H2O/CO', 'H2O/CO ratio')
    >>> FeedRatio("H2O", "carbon").name
    'steam-to-carbon'
    """

    numerator: str
    denominator: str
    values: tuple = ()
    label: str = ""

    def __post_init__(self):
        for field_name in ("numerator", "denominator"):
            v = getattr(self, field_name)
            if not isinstance(v, str) or not v:
                raise EquilibriumInputError(f"feed ratio {field_name} must be a species name, got {v!r}")
        if self.numerator == self.denominator:
            raise EquilibriumInputError(f"feed ratio {self.numerator}/{self.denominator}: numerator and "
                                        "denominator are the same species")
        object.__setattr__(self, "values", tuple(float(v) for v in self.values))
        if not self.label:
            object.__setattr__(self, "label", f"{self.name} ratio")

    @property
    def name(self) -> str:
        """Short name used in answers and map axes: ``"steam-to-carbon"`` or ``"H2O/CO"``."""
        if self.denominator == "carbon":
            return "steam-to-carbon"
        return f"{self.numerator}/{self.denominator}"

    def basis(self, feed: Mapping[str, float], database: SpeciesDatabase) -> float:
        """Amount [mol] of the denominator in ``feed`` (0 where it is not fed)."""
        if self.denominator == "carbon":
            return float(hydrocarbon_carbon(feed, database))
        return float(feed.get(self.denominator, 0.0))

    def checked_basis(self, feed: Mapping[str, float], database: SpeciesDatabase) -> float:
        """:meth:`basis`, refused (EquilibriumInputError) where it is not positive."""
        amount = self.basis(feed, database)
        if amount <= 0:
            if self.denominator == "carbon":
                raise EquilibriumInputError("steam-to-carbon ratio: the feed holds no hydrocarbon "
                                            "(no species with both C and H)")
            raise EquilibriumInputError(f"feed ratio {self.name}: the feed has no {self.denominator}")
        return amount

    def current(self, feed: Mapping[str, float], database: SpeciesDatabase) -> float:
        """The ratio [mol/mol] in ``feed`` as given."""
        return float(feed.get(self.numerator, 0.0)) / self.basis(feed, database)

    def feed_at(self, feed: Mapping[str, float], ratio, database: SpeciesDatabase) -> dict:
        """``feed`` as arrays with the numerator set to ``ratio`` × :meth:`checked_basis` [mol]."""
        out = {k: np.asarray(v, dtype=float) for k, v in feed.items()}
        out[self.numerator] = np.asarray(ratio, dtype=float) * self.checked_basis(feed, database)
        return out


def feed_ratio_spec(ratio, db: SpeciesDatabase) -> FeedRatio:
    """Read ``("H2O", "CH4")`` or ``"steam_to_carbon"`` as a :class:`FeedRatio`."""
    if isinstance(ratio, FeedRatio):
        return ratio
    if isinstance(ratio, str):
        if ratio.replace("-", "_").lower() in ("steam_to_carbon", "s/c"):
            return FeedRatio(STEAM, "carbon")
        raise EquilibriumInputError(f"ratio {ratio!r}: give a pair such as ('H2O', 'CO') or 'steam_to_carbon'")
    try:
        num, den = ratio
    except (TypeError, ValueError):
        raise EquilibriumInputError(f"ratio {ratio!r}: give a pair such as ('H2O', 'CO')") from None
    return FeedRatio(db.resolve(num), db.resolve(den))


def apply_inert(feed: Mapping[str, np.ndarray], inert: str, fraction: np.ndarray) -> dict:
    """Feed with the mole fraction of ``inert`` set to ``fraction`` [-]; the other species
    keep their ratios and their total is scaled by (1 − fraction), so the total feed is
    the total of the other species as given."""
    fraction = np.asarray(fraction, dtype=float)
    if np.any(fraction < 0) or np.any(fraction >= 1):
        raise EquilibriumInputError(f"inert fraction of {inert} must lie in [0, 1)")
    others = {k: np.asarray(v, dtype=float) for k, v in feed.items() if k != inert}
    total = sum(others.values())
    out = {k: v * (1.0 - fraction) for k, v in others.items()}
    out[inert] = fraction * total
    return out


def product_per_key_from_reactions(reactions: Sequence[Reaction], key: str, product: str) -> float | None:
    """Moles of product per mole of key reactant in the first named reaction holding both."""
    for r in reactions:
        st = r.stoichiometry
        if st.get(key, 0.0) < 0 and st.get(product, 0.0) > 0:
            return st[product] / -st[key]
    return None


# --------------------------------------------------------------------------- solving
