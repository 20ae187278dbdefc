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
    "volume": ("m**3", "[length] ** 3"),
    "density": ("kg/m**3", "[mass] / [length] ** 3"),
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
    if isinstance(value, (list, tuple)) and any(isinstance(v, (str, pint.Quantity)) for v in value):
        return np.array([to_si(v, kind) for v in value], dtype=float)   # ["450 degC", "460 degC"]
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


def to_fraction(value: Any) -> float | np.ndarray:
    """A mole fraction [-] from a fraction, a percentage string or a pint quantity.

    ``"12.5 mol%"``, ``"12.5 %"``, ``"12.5 percent"`` and ``0.125`` all give 0.125; a list
    or array of such values gives an array.  Bare numbers are fractions already.

    >>> to_fraction("12.5 mol%")
    0.125
    >>> to_fraction(["50 %", "25 %"]).tolist()
    [0.5, 0.25]
    """
    if isinstance(value, str):
        text = value.strip()
        for suffix in ("mol%", "mol %", "mole%", "mole %"):
            if text.endswith(suffix):
                text = text[: -len(suffix)].strip() + " %"
                break
        return to_si(text, "dimensionless")
    if isinstance(value, (list, tuple)) or (isinstance(value, np.ndarray) and value.dtype == object):
        return np.array([to_fraction(v) for v in value], dtype=float)
    return to_si(value, "dimensionless")


def concentration_power_value(value: Any, power: float) -> float:
    """A number in (mol/L)^power from a number (taken in those units already), a string such
    as ``"0.25 L/mol"`` or a pint quantity; used for concentration-basis equilibrium constants.

    >>> concentration_power_value("0.25 L/mol", -1)
    0.25
    >>> round(concentration_power_value("250 mol/m**3", 1), 12)
    0.25
    """
    if isinstance(value, str):
        try:
            value = UREG.Quantity(value)
        except Exception as exc:
            raise UnitError(f"cannot read {value!r} as a concentration-basis constant: {exc}") from None
    if isinstance(value, pint.Quantity):
        target = "dimensionless" if power == 0 else f"(mol/L)**{power:g}"
        try:
            return float(value.to(target).magnitude)
        except pint.DimensionalityError:
            raise UnitError(f"{value:~} is not in (mol/L)^{power:g}, the unit of this reaction's "
                            "concentration-basis K (it follows from the change in moles)") from None
    return float(value)
