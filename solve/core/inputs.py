"""Checks of the arguments at the Python API's boundary, one clear message each.

Every public entry point of core/ and studies/ reads its arguments through these
functions, so a wrong type, shape, sign or non-finite number is refused with an
:class:`~eqdesign.solve.core.result.EquilibriumInputError` (a ValueError) that names the
argument and the fix, instead of a TypeError or IndexError from deep inside numpy.  Unit
strings are read by :mod:`eqdesign.thermo.units` (its UnitError is a ValueError too).
"""
from __future__ import annotations

import numbers
from typing import Mapping

import numpy as np

from ...thermo.database import SpeciesDatabase
from ...thermo.reactions import Reaction
from ...thermo.units import to_kelvin, to_pascal, to_si
from .result import EquilibriumInputError


def species_names(species, what: str = "species") -> list:
    """A list of species names from a sequence of strings.

    Refuses a single string (``"N2"`` would be read letter by letter), non-sequences and
    non-string entries.

    Examples
    --------
    >>> species_names(("N2", "H2"))
    ['N2', 'H2']
    >>> species_names("N2")
    Traceback (most recent call last):
    ...
    eqdesign.solve.core.result.EquilibriumInputError: species must be a list of species names, e.g. ['N2', 'H2', 'NH3'], got 'N2'
    """
    if isinstance(species, (str, bytes)) or not _is_sequence(species):
        raise EquilibriumInputError(f"{what} must be a list of species names, e.g. ['N2', 'H2', 'NH3'], "
                                    f"got {species!r}")
    out = list(species)
    bad = [s for s in out if not isinstance(s, str)]
    if bad:
        raise EquilibriumInputError(f"{what}: every entry must be a species name (text), got {bad[0]!r}")
    return out


def feed_mapping(feed, what: str = "feed") -> Mapping:
    """The feed as a mapping of species name to amount; refuses other types and empty feeds.

    Examples
    --------
    >>> feed_mapping({"N2": 1, "H2": 3})
    {'N2': 1, 'H2': 3}
    """
    if not isinstance(feed, Mapping):
        raise EquilibriumInputError(f"{what} must be a mapping of species name to amount, e.g. "
                                    f"{{'N2': 1, 'H2': 3}}, got {type(feed).__name__}")
    if not feed:
        raise EquilibriumInputError(f"{what} is empty; give at least one species with a positive amount")
    bad = [k for k in feed if not isinstance(k, str)]
    if bad:
        raise EquilibriumInputError(f"{what}: every key must be a species name (text), got {bad[0]!r}")
    return feed


def _is_sequence(x) -> bool:
    try:
        iter(x)
        len(x)
    except TypeError:
        return False
    return True


def _read(value, reader, what: str, kind: str) -> np.ndarray:
    """``reader(value)`` as a float array; non-numeric input refused with the key named."""
    if value is None or isinstance(value, (bool, np.bool_)):
        raise EquilibriumInputError(f"{what} must be a {kind} (a number in SI units or text such as "
                                    f"{_EXAMPLES[kind]}), got {value!r}")
    try:
        arr = np.asarray(reader(value))
    except (TypeError, AttributeError) as exc:
        raise EquilibriumInputError(f"{what} must be a {kind} (a number in SI units or text such as "
                                    f"{_EXAMPLES[kind]}), got {value!r}: {exc}") from None
    if arr.dtype.kind == "c" or arr.dtype.kind not in "biuf":
        raise EquilibriumInputError(f"{what} must be real numbers, got {value!r}")
    return arr.astype(float)


_EXAMPLES = {"temperature": "'450 degC'", "pressure": "'30 bar'", "amount": "'2 kmol'",
             "energy": "'1.5 MJ'", "number": "0.5"}


def temperatures(T, what: str = "T") -> np.ndarray:
    """Temperatures [K] as a float array: finite and above 0 K."""
    arr = _read(T, to_kelvin, what, "temperature")
    if np.any(~np.isfinite(arr)) or np.any(arr <= 0):
        raise EquilibriumInputError(f"{what}: temperatures must be finite and above 0 K")
    return arr


def pressures(P, what: str = "P") -> np.ndarray:
    """Pressures [Pa] as a float array: finite and above 0 Pa."""
    arr = _read(P, to_pascal, what, "pressure")
    if np.any(~np.isfinite(arr)) or np.any(arr <= 0):
        raise EquilibriumInputError(f"{what}: pressures must be finite and above 0 Pa")
    return arr


def quantity(value, kind: str, what: str) -> np.ndarray:
    """``value`` in SI of ``kind`` (``"amount"``, ``"energy"``, ``"dimensionless"``) as a
    float array, finite."""
    arr = _read(value, lambda v: to_si(v, kind), what, "number" if kind == "dimensionless" else kind)
    if np.any(~np.isfinite(arr)):
        raise EquilibriumInputError(f"{what} must be finite, got {value!r}")
    return arr


def broadcast_shape(**arrays) -> tuple:
    """The common shape of named arrays; refused with every shape named where they do not
    broadcast.

    Examples
    --------
    >>> broadcast_shape(T=np.zeros(3), P=np.zeros(()))
    (3,)
    >>> broadcast_shape(T=np.zeros(2), P=np.zeros(3))
    Traceback (most recent call last):
    ...
    eqdesign.solve.core.result.EquilibriumInputError: the shapes of T (2,), P (3,) do not broadcast together; give arrays of one shape, or scalars
    """
    try:
        return np.broadcast_shapes(*(np.shape(a) for a in arrays.values()))
    except ValueError:
        shapes = ", ".join(f"{k} {np.shape(a)}" for k, a in arrays.items())
        raise EquilibriumInputError(f"the shapes of {shapes} do not broadcast together; give arrays of one "
                                    "shape, or scalars") from None


def whole_number(n, what: str, minimum: int) -> int:
    """``n`` as an int, at least ``minimum``; refuses floats, bools and text.

    Examples
    --------
    >>> whole_number(41, "n_scan", 2)
    41
    >>> whole_number(1, "n_scan", 2)
    Traceback (most recent call last):
    ...
    eqdesign.solve.core.result.EquilibriumInputError: n_scan must be a whole number of at least 2, got 1
    """
    ok = isinstance(n, numbers.Integral) and not isinstance(n, (bool, np.bool_))
    if not ok or n < minimum:
        raise EquilibriumInputError(f"{what} must be a whole number of at least {minimum}, got {n!r}")
    return int(n)


def positive_number(x, what: str) -> float:
    """``x`` as a finite float above 0."""
    if isinstance(x, (bool, np.bool_)) or not isinstance(x, numbers.Real) or not np.isfinite(x) or x <= 0:
        raise EquilibriumInputError(f"{what} must be a finite number above 0, got {x!r}")
    return float(x)


def conversion_targets(target, what: str = "target") -> np.ndarray:
    """Wanted conversions [-] as a float array, each strictly between 0 and 1.

    A conversion of 0 is the feed itself and 1 is never reached at equilibrium (K is
    finite), so both ends are refused.
    """
    arr = quantity(target, "dimensionless", what)
    if np.any(arr <= 0) or np.any(arr >= 1):
        raise EquilibriumInputError(f"{what} conversion must lie strictly between 0 and 1 (e.g. 0.25 for 25 %), "
                                    f"got {target!r}")
    return arr


def mapping_or_none(value, what: str, example: str):
    """``value`` if it is a mapping or None; refused otherwise."""
    if value is not None and not isinstance(value, Mapping):
        raise EquilibriumInputError(f"{what} must be a mapping such as {example}, got {type(value).__name__}")
    return value


def reaction_list(reactions, database: SpeciesDatabase) -> tuple:
    """Named reactions as :class:`~eqdesign.thermo.reactions.Reaction` records (texts are
    parsed); ``None`` gives ``()``.  A single text is refused: give a list."""
    if reactions is None:
        return ()
    if isinstance(reactions, (str, Reaction)) or not _is_sequence(reactions):
        raise EquilibriumInputError(f"reactions must be a list of reaction texts, e.g. ['N2 + 3 H2 = 2 NH3'], "
                                    f"got {reactions!r}")
    out = []
    for r in reactions:
        if not isinstance(r, (str, Reaction)):
            raise EquilibriumInputError(f"reactions: every entry must be a reaction text such as "
                                        f"'CO + H2O = CO2 + H2', got {r!r}")
        out.append(Reaction.parse(r, database) if isinstance(r, str) else r)
    return tuple(out)
