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
    """A feed-ratio specification: ``numerator`` amount = ratio × ``denominator`` amount.

    ``denominator`` is a species name, or ``"carbon"`` for the steam-to-carbon ratio
    (carbon atoms of the feed species containing C and H, see :func:`hydrocarbon_carbon`).
    """

    numerator: str
    denominator: str

    @property
    def label(self) -> str:
        if self.denominator == "carbon":
            return "steam-to-carbon"
        return f"{self.numerator}/{self.denominator}"

    def denominator_amount(self, feed: Mapping[str, float], db: SpeciesDatabase) -> float:
        if self.denominator == "carbon":
            amount = hydrocarbon_carbon(feed, db)
            if amount <= 0:
                raise EquilibriumInputError("steam-to-carbon ratio: the feed holds no hydrocarbon "
                                            "(no species with both C and H)")
            return amount
        amount = feed.get(self.denominator, 0.0)
        if amount <= 0:
            raise EquilibriumInputError(f"feed ratio {self.label}: the feed has no {self.denominator}")
        return amount

    def apply(self, feed: Mapping[str, float], ratio: np.ndarray, db: SpeciesDatabase) -> dict:
        """Feed amounts with the numerator set from ``ratio`` (array) [mol]."""
        out = {k: np.asarray(v, dtype=float) for k, v in feed.items()}
        out[self.numerator] = np.asarray(ratio, dtype=float) * self.denominator_amount(feed, db)
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
    num, den = db.resolve(num), db.resolve(den)
    if num == den:
        raise EquilibriumInputError(f"feed ratio {num}/{den}: numerator and denominator are the same species")
    return FeedRatio(num, den)


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
