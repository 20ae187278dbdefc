"""Quantities in case files: units, mol %, fractions and plain numbers.
"""
from __future__ import annotations

import re
from typing import Any

import numpy as np

from ...thermo.units import UREG
import pint


# ====================================================================== units
_DIMENSION_NAMES = [
    ("K", "a temperature"), ("Pa", "a pressure"), ("mol", "an amount of substance"),
    ("mol/s", "a molar flow"), ("kg", "a mass"), ("kg/s", "a mass flow"),
    ("J/mol", "an energy per mole"), ("J/mol/K", "an entropy or heat capacity per mole"),
    ("J", "an energy"), ("m", "a length"), ("s", "a time"), ("m**3", "a volume"),
]


_KINDS = {
    # kind: (SI unit, noun, example)
    "temperature": ("K", "a temperature", "'450 degC' or '723.15 K'"),
    "temperature_difference": ("K", "a temperature difference", "'10 K'"),
    "pressure": ("Pa", "a pressure", "'30 bar' or '3 MPa' (absolute)"),
    "molar_energy": ("J/mol", "an energy per mole", "'-92.2 kJ/mol'"),
    "molar_entropy": ("J/mol/K", "an entropy per mole", "'-198.1 J/(mol K)'"),
    "molar_heat_capacity": ("J/mol/K", "a heat capacity per mole", "'29.1 J/(mol K)'"),
    "molar_flow": ("mol/s", "a molar flow", "'1200 kmol/h'"),
}

_GAUGE = re.compile(r"\b(barg|psig|kPag|MPag)\b")
_ABSOLUTE = {"bara": "bar", "psia": "psi", "kPaa": "kPa", "MPaa": "MPa"}
_MOL_PERCENT = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(?:mol|mole|vol)\s*-?\s*%\s*$")
_PERCENT = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(?:%|percent)\s*$")


def _dimension_name(quantity) -> str:
    """'a pressure', 'a temperature', ... for an error message."""
    for unit, name in _DIMENSION_NAMES:
        if quantity.dimensionality == UREG.Quantity(1, unit).dimensionality:
            return name
    return f"a quantity of dimension {quantity.dimensionality}"


class _UnitProblem(ValueError):
    pass


def _parse_quantity(value: Any):
    """pint quantity (or float for a bare number) from a YAML value."""
    if isinstance(value, bool):
        raise _UnitProblem(f"{value!r} is a yes/no value, not a number")
    if isinstance(value, (int, float)):
        return float(value)
    if not isinstance(value, str):
        raise _UnitProblem(f"expected a number with a unit, got a {type(value).__name__}")
    text = value.strip()
    if _GAUGE.search(text):
        raise _UnitProblem(f"{value!r} is a gauge pressure; equilibrium needs absolute pressure: add "
                           "the atmospheric pressure and write e.g. '31 bar'")
    for old, new in _ABSOLUTE.items():
        text = re.sub(rf"\b{old}\b", new, text)
    try:
        q = UREG.Quantity(text)
    except Exception as exc:
        detail = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise _UnitProblem(f"cannot read {value!r} as a number with a unit ({detail})") from None
    if not isinstance(q, pint.Quantity):
        return float(q)
    if np.ndim(q.magnitude) != 0:
        raise _UnitProblem(f"{value!r} is not a single value")
    return q


def _to_si(value: Any, kind: str, *, require_unit: bool = True) -> float:
    """Convert a YAML value to SI (see _KINDS); raise _UnitProblem with a fix."""
    unit, noun, example = _KINDS[kind]
    q = _parse_quantity(value)
    if not isinstance(q, pint.Quantity) or q.dimensionless:
        if isinstance(q, pint.Quantity):
            q = float(q.to("dimensionless").magnitude)
        if require_unit:
            raise _UnitProblem(f"{value!r} has no unit; write {noun} with its unit, e.g. {example}")
        return float(q)
    if kind == "temperature_difference":
        units = str(q.units)
        if units in ("degree_Celsius", "delta_degree_Celsius"):
            return float(q.magnitude)
        if units in ("degree_Fahrenheit", "delta_degree_Fahrenheit"):
            return float(q.magnitude) * 5.0 / 9.0
    try:
        return float(q.to(unit).magnitude)
    except pint.DimensionalityError:
        raise _UnitProblem(f"{value!r} is {_dimension_name(q)}, not {noun}; write {noun} such as {example}") from None


def _fraction(value: Any) -> float:
    """A fraction from 0.25, '25 %' or '25 percent' (no range check here)."""
    if isinstance(value, bool):
        raise _UnitProblem(f"{value!r} is a yes/no value, not a fraction")
    if isinstance(value, (int, float)):
        return float(value)
    if isinstance(value, str):
        m = _PERCENT.match(value)
        if m:
            return float(m.group(1)) / 100.0
        try:
            return float(value)
        except ValueError:
            pass
    raise _UnitProblem(f"{value!r} is not a fraction; write e.g. 0.25 or '25 %'")


def _number(value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise _UnitProblem(f"{value!r} is not a number")
    try:
        return float(value)
    except ValueError:
        q = _parse_quantity(value)
        if isinstance(q, pint.Quantity):
            if not q.dimensionless:
                raise _UnitProblem(f"{value!r} is {_dimension_name(q)}; a pure number (mol/mol) belongs here") from None
            return float(q.to("dimensionless").magnitude)
        return float(q)
