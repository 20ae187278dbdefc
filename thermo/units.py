"""Unit handling at the edges: strings and pint quantities in, SI floats out.

Inside eqdesign every number is SI (K, Pa, mol, J, J/mol).  Values that arrive from
a user (API strings such as ``"450 degC"`` or ``"30 bar"``, pint quantities, case
files) are converted once, here.
"""
from __future__ import annotations

from typing import Any

import numpy as np
import pint

#: The one unit registry of the package.  Offset units ("degC") are allowed as
#: plain values, which is what an engineer writes ("450 degC").
UREG = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)

_DIMENSIONS = {
    "temperature": ("K", "[temperature]"),
    "pressure": ("Pa", "[mass] / [length] / [time] ** 2"),
    "amount": ("mol", "[substance]"),
    "energy": ("J", "[mass] * [length] ** 2 / [time] ** 2"),
    "molar_energy": ("J/mol", "[mass] * [length] ** 2 / [time] ** 2 / [substance]"),
    "molar_entropy": ("J/mol/K", "[mass] * [length] ** 2 / [time] ** 2 / [substance] / [temperature]"),
    "molar_flow": ("mol/s", "[substance] / [time]"),
    "dimensionless": ("", "[]"),
}


class UnitError(ValueError):
    """A value could not be read as a quantity of the expected dimension."""


def to_si(value: Any, kind: str) -> float | np.ndarray:
    """Convert a number, array, string or pint quantity to an SI float or array.

    Parameters
    ----------
    value : float | array_like | str | pint.Quantity
        A bare number or array is taken to be in SI already.  A string such as
        ``"450 degC"`` or a pint quantity is converted.
    kind : str
        One of ``"temperature"`` [K], ``"pressure"`` [Pa], ``"amount"`` [mol],
        ``"molar_energy"`` [J/mol], ``"molar_entropy"`` [J/(mol K)],
        ``"molar_flow"`` [mol/s] or ``"dimensionless"``.

    Returns
    -------
    float | ndarray
        The value in SI units; a float for scalar input.

    Examples
    --------
    >>> to_si("450 degC", "temperature")
    723.15
    >>> to_si("30 bar", "pressure")
    3000000.0
    """
    si_unit, _ = _DIMENSIONS[kind]
    if isinstance(value, str):
        try:
            quantity = UREG.Quantity(value)
        except Exception as exc:  # pint raises several kinds of errors
            raise UnitError(f"cannot read {value!r} as a {kind.replace('_', ' ')}: {exc}") from None
        if not isinstance(quantity, pint.Quantity):  # a plain number in a string
            return float(quantity)
        value = quantity
    if isinstance(value, pint.Quantity):
        try:
            converted = value.to(si_unit) if si_unit else value.to("dimensionless")
        except pint.DimensionalityError:
            raise UnitError(
                f"{value:~} is not a {kind.replace('_', ' ')} (expected units convertible to "
                f"{si_unit or 'a pure number'})") from None
        magnitude = converted.magnitude
        return float(magnitude) if np.ndim(magnitude) == 0 else np.asarray(magnitude, dtype=float)
    if np.ndim(value) == 0:
        return float(value)
    return np.asarray(value, dtype=float)


def to_kelvin(T: Any) -> float | np.ndarray:
    """Temperature [K] from a number (already K), array, string or pint quantity.

    >>> to_kelvin("25 degC")
    298.15
    """
    return to_si(T, "temperature")


def to_pascal(P: Any) -> float | np.ndarray:
    """Pressure [Pa] from a number (already Pa), array, string or pint quantity.

    >>> to_pascal("1 atm")
    101325.0
    """
    return to_si(P, "pressure")
