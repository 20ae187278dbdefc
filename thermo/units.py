"""Unit handling at the edges: strings and pint quantities in, SI floats out.

Inside eqdesign every number is SI (K, Pa, mol, J, J/mol).  Values that arrive from
a user (API strings such as ``"450 degC"`` or ``"30 bar"``, pint quantities, case
files, the command line) are converted once, here: this module is the one unit reader
of the package.

Text is never evaluated as an expression.  A quantity text follows this grammar (spaces
around the unit are free)::

    quantity := number [unit]
    number   := [+-] digits [. digits] [(e|E) [+-] d[d[d]]]      e.g. 450, -92.2, 1.5e5, .5
    unit     := factor { ("*" | "/" | " ") factor }              left to right: J/mol/K
    factor   := name [power] | "(" unit ")" [power]              parentheses nest 2 deep
    power    := ("^" | "**") [+-] d  |  "²"  |  "³"              a single-digit integer
    name     := a unit name pint knows (K, degC, bar, kmol, h, t, ...), at most 40 letters

``bara``, ``psia``, ``kPaa`` and ``MPaa`` read as absolute pressures; ``barg``, ``psig``,
``kPag`` and ``MPag`` are refused (equilibrium needs absolute pressure).  A text longer
than :data:`MAX_TEXT` characters is refused.  pint is used only to look up and convert
the unit names; it is imported on first use (:func:`unit_registry`), so importing
eqdesign loads neither pint nor what pint imports.

Mole percent (``"25 mol%"``) and percent (``"25 %"``) are read by :func:`percent_value`
and :func:`fraction`, not by the grammar (pint would read ``mol%`` as mol × percent).
"""
from __future__ import annotations

import functools
import math
import re
from typing import Any

import numpy as np

#: Longest quantity text read [characters].
MAX_TEXT = 200
#: Longest unit name read [characters].
MAX_NAME = 40
#: Deepest nesting of parentheses in a unit.
MAX_PARENTHESES = 2

#: kind: (SI unit, noun, example) of every kind of quantity read here.
KINDS = {
    "temperature": ("K", "a temperature", "'450 degC' or '723.15 K'"),
    "temperature_difference": ("K", "a temperature difference", "'10 K'"),
    "pressure": ("Pa", "a pressure", "'30 bar' or '3 MPa' (absolute)"),
    "amount": ("mol", "an amount of substance", "'1 kmol'"),
    "energy": ("J", "an energy", "'5 MJ'"),
    "molar_energy": ("J/mol", "an energy per mole", "'-92.2 kJ/mol'"),
    "molar_entropy": ("J/mol/K", "an entropy per mole", "'-198.1 J/(mol K)'"),
    "molar_heat_capacity": ("J/mol/K", "a heat capacity per mole", "'29.1 J/(mol K)'"),
    "molar_flow": ("mol/s", "a molar flow", "'1200 kmol/h'"),
    "dimensionless": ("", "a pure number", "'0.25'"),
    "volume": ("m**3", "a volume", "'2.5 m**3' or '2500 L'"),
    "density": ("kg/m**3", "a density", "'880 kg/m**3'"),
}

_DIMENSION_NAMES = (
    ("K", "a temperature"), ("Pa", "a pressure"), ("mol", "an amount of substance"),
    ("mol/s", "a molar flow"), ("kg", "a mass"), ("kg/s", "a mass flow"),
    ("J/mol", "an energy per mole"), ("J/mol/K", "an entropy or heat capacity per mole"),
    ("J", "an energy"), ("m", "a length"), ("s", "a time"), ("m**3", "a volume"),
)

_NUMBER_TEXT = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d{1,3})?"
_NUMBER = re.compile(_NUMBER_TEXT)
_LEADING_NUMBER = re.compile(r"\s*(" + _NUMBER_TEXT + r")")
_PERCENT = re.compile(r"\s*(" + _NUMBER_TEXT + r")\s*(?:(?:mol|mole|vol)\s*-?\s*)?(?:%|percent)\s*")
_UNIT_TOKEN = re.compile(r"\s*(?:(?P<power>(?:\^|\*\*)[-+]?\d(?!\d)|[²³])|(?P<op>[*/()])"
                         r"|(?P<name>(?:[^\W\d²³]|°)(?:[^\W²³]|°)*))")
_SUPERSCRIPT = {"²": 2, "³": 3}
_GAUGE = ("barg", "psig", "kPag", "MPag")
_ABSOLUTE = {"bara": "bar", "psia": "psi", "kPaa": "kPa", "MPaa": "MPa"}


class UnitError(ValueError):
    """A value could not be read as a quantity of the expected dimension."""


@functools.lru_cache(maxsize=1)
def unit_registry():
    """The one pint unit registry of the package, created on first use.

    Offset units (``degC``) are allowed as plain values, which is what an engineer
    writes (``"450 degC"``).
    """
    import pint   # lazy: pint imports dask and yaml, which eqdesign must not load at import

    return pint.UnitRegistry(autoconvert_offset_to_baseunit=True)


def excerpt(value: Any, limit: int = 40) -> str:
    """``repr(value)`` cut to about ``limit`` characters, for messages.

    >>> excerpt("x" * 100, 10)
    "'xxxxxxxxx…' (100 characters)"
    """
    if isinstance(value, str) and len(value) > limit:
        return f"{value[:limit - 1]!r}"[:-1] + f"…' ({len(value)} characters)"
    text = repr(value)
    return text if len(text) <= limit else text[:limit - 1] + "…"


def is_quantity(value: Any) -> bool:
    """True for a pint quantity (checked without importing pint)."""
    return hasattr(value, "magnitude") and hasattr(value, "units") and hasattr(value, "to")


def _unit_from_name(name: str, text: str):
    if len(name) > MAX_NAME:
        raise UnitError(f"cannot read {excerpt(text)}: the unit name {excerpt(name)} is too long")
    if name in _GAUGE:
        raise UnitError(f"{excerpt(text)} is a gauge pressure; equilibrium needs absolute pressure: add "
                        "the atmospheric pressure and write e.g. '31 bar'")
    name = _ABSOLUTE.get(name, name)
    registry = unit_registry()
    try:
        known = bool(registry.parse_unit_name(name))
    except Exception:  # pint raises several kinds of errors for odd names
        known = False
    if not known:
        raise UnitError(f"cannot read {excerpt(text)} as a number with a unit ('{name}' is not a unit "
                        "name eqdesign knows)")
    return registry.Unit(name)


def _parse_unit(tokens: list, position: int, depth: int, text: str):
    """Unit from ``tokens[position:]`` up to a closing parenthesis: (unit, next position)."""
    unit, operator, position = None, "*", position
    while position < len(tokens):
        kind, token = tokens[position]
        if kind == "op" and token == ")":
            break
        if kind == "op" and token in "*/":
            if unit is None or operator is not None:
                raise UnitError(f"cannot read {excerpt(text)}: '{token}' must stand between two units")
            operator, position = token, position + 1
            continue
        if kind == "name":
            factor, position = _unit_from_name(token, text), position + 1
        elif kind == "op" and token == "(":
            if depth >= MAX_PARENTHESES:
                raise UnitError(f"cannot read {excerpt(text)}: parentheses nest more than "
                                f"{MAX_PARENTHESES} deep")
            factor, position = _parse_unit(tokens, position + 1, depth + 1, text)
            if position >= len(tokens) or tokens[position] != ("op", ")"):
                raise UnitError(f"cannot read {excerpt(text)}: a '(' is not closed")
            position += 1
        else:
            raise UnitError(f"cannot read {excerpt(text)}: a power must follow a unit name")
        if position < len(tokens) and tokens[position][0] == "power":
            power = tokens[position][1]
            factor = factor ** (_SUPERSCRIPT[power] if power in _SUPERSCRIPT else int(power.lstrip("^*")))
            position += 1
        if unit is None:
            unit = factor
        else:
            unit = unit / factor if operator == "/" else unit * factor
        operator = None
    if unit is None or operator is not None:
        raise UnitError(f"cannot read {excerpt(text)}: a unit is missing")
    return unit, position


def _tokens(unit_text: str, text: str) -> list:
    tokens, position = [], 0
    while position < len(unit_text):
        if unit_text[position:].isspace():
            break
        m = _UNIT_TOKEN.match(unit_text, position)
        if not m:
            raise UnitError(f"cannot read {excerpt(text)} as a number with a unit (write a number and "
                            "unit names joined by '*', '/' or spaces, e.g. '450 degC' or '-92.2 kJ/mol')")
        kind = m.lastgroup
        tokens.append((kind, m.group(kind)))
        position = m.end()
    return tokens


def parse_quantity(value: Any):
    """A float (for a bare number) or a pint quantity from a number or a quantity text.

    The text follows the grammar in the module docstring; nothing is evaluated.

    Parameters
    ----------
    value : int | float | str
        A number, or a text such as ``"450 degC"`` or ``"1200 kmol/h"``.

    Returns
    -------
    float | pint.Quantity
        The number, or a quantity whose magnitude is a finite float.

    Raises
    ------
    UnitError
        With a message naming the problem and quoting at most a short excerpt.

    Examples
    --------
    >>> parse_quantity("30 bara")
    <Quantity(30.0, 'bar')>
    >>> parse_quantity("9**9**9 K")
    Traceback (most recent call last):
    ...
    eqdesign.thermo.units.UnitError: cannot read '9**9**9 K' as a number with a unit (write a number and \
unit names joined by '*', '/' or spaces, e.g. '450 degC' or '-92.2 kJ/mol')
    """
    if isinstance(value, (bool, np.bool_)):
        raise UnitError(f"{value!r} is a yes/no value, not a number")
    if isinstance(value, (int, float, np.integer, np.floating)):
        try:
            number = float(value)
        except OverflowError:
            raise UnitError(f"{excerpt(value)} is too large a number") from None
        if not math.isfinite(number):
            raise UnitError(f"{value!r} is not a finite number")
        return number
    if not isinstance(value, str):
        raise UnitError(f"expected a number with a unit, got a {type(value).__name__}")
    if len(value) > MAX_TEXT:
        raise UnitError(f"{excerpt(value)} is too long for a number with a unit (at most {MAX_TEXT} characters)")
    m = _LEADING_NUMBER.match(value)
    if not m:
        raise UnitError(f"cannot read {excerpt(value)} as a number with a unit (it must start with a number, "
                        "e.g. '450 degC')")
    number = float(m.group(1))
    if not math.isfinite(number):
        raise UnitError(f"{excerpt(value)} is not a finite number")
    tokens = _tokens(value[m.end():], value)
    if not tokens:
        return number
    if tokens[0][0] != "name" and tokens[0] != ("op", "("):
        raise UnitError(f"cannot read {excerpt(value)} as a number with a unit (write a number and "
                        "unit names joined by '*', '/' or spaces, e.g. '450 degC' or '-92.2 kJ/mol')")
    unit, position = _parse_unit(tokens, 0, 0, value)
    if position != len(tokens):
        raise UnitError(f"cannot read {excerpt(value)}: a ')' has no matching '('")
    return unit_registry().Quantity(number, unit)


def dimension_name(quantity) -> str:
    """'a pressure', 'a temperature', ... of a pint quantity, for an error message."""
    registry = unit_registry()
    for unit, name in _DIMENSION_NAMES:
        if quantity.dimensionality == registry.Quantity(1, unit).dimensionality:
            return name
    return f"a quantity of dimension {quantity.dimensionality}"


def scalar_to_si(value: Any, kind: str, *, require_unit: bool = True) -> float:
    """One value of a file (a number or a quantity text) in SI units [see :data:`KINDS`].

    Parameters
    ----------
    value : int | float | str
        A YAML value; anything else is refused with a message.
    kind : str
        A key of :data:`KINDS`.
    require_unit : bool
        Refuse a bare number (a temperature in a case file must say its unit).

    >>> scalar_to_si("36 kmol/h", "molar_flow")
    10.0
    """
    unit, noun, example = KINDS[kind]
    q = parse_quantity(value)
    if not is_quantity(q) or q.dimensionless:
        if require_unit and kind != "dimensionless":
            raise UnitError(f"{excerpt(value)} has no unit; write {noun} with its unit, e.g. {example}")
        return float(q.to("dimensionless").magnitude) if is_quantity(q) else float(q)
    if kind == "temperature_difference":    # a case file's '10 degC' margin is a difference
        units = str(q.units)
        if units in ("degree_Celsius", "delta_degree_Celsius"):
            return float(q.magnitude)
        if units in ("degree_Fahrenheit", "delta_degree_Fahrenheit"):
            return float(q.magnitude) * 5.0 / 9.0
    import pint
    try:
        return float(q.to(unit or "dimensionless").magnitude)
    except pint.DimensionalityError:
        raise UnitError(f"{excerpt(value)} is {dimension_name(q)}, not {noun}; write {noun} such as "
                        f"{example}") from None


def to_si(value: Any, kind: str, *, require_unit: bool = False) -> float | np.ndarray:
    """Convert a number, array, string or pint quantity to an SI float or array.

    Parameters
    ----------
    value : float | array_like | str | pint.Quantity
        A bare number or array is taken to be in SI already.  A string such as
        ``"450 degC"`` (see the grammar in the module docstring) or a pint quantity is
        converted.
    kind : str
        One of :data:`KINDS`: ``"temperature"`` [K], ``"temperature_difference"`` [K],
        ``"pressure"`` [Pa], ``"amount"`` [mol], ``"energy"`` [J], ``"molar_energy"``
        [J/mol], ``"molar_entropy"`` and ``"molar_heat_capacity"`` [J/(mol K)],
        ``"molar_flow"`` [mol/s] or ``"dimensionless"``.
    require_unit : bool
        Refuse a string without a unit (case files: a temperature must say its unit).

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
    >>> to_si("-198.1 J/(mol K)", "molar_entropy")
    -198.1
    """
    si_unit, noun, _ = KINDS[kind]
    if isinstance(value, str):
        if require_unit:
            return scalar_to_si(value, kind, require_unit=True)
        value = parse_quantity(value)
        if not is_quantity(value):      # a plain number in a string: SI
            return value
    if is_quantity(value):
        import pint
        try:
            converted = value.to(si_unit) if si_unit else value.to("dimensionless")
        except pint.DimensionalityError:
            raise UnitError(f"{value:~} is not a {kind.replace('_', ' ')} (expected units convertible to "
                            f"{si_unit or 'a pure number'})") from None
        magnitude = converted.magnitude
        return float(magnitude) if np.ndim(magnitude) == 0 else np.asarray(magnitude, dtype=float)
    if isinstance(value, bool):
        raise UnitError(f"{value!r} is a yes/no value, not a number")
    if np.ndim(value) == 0:
        return float(value)
    if isinstance(value, (list, tuple)) and any(isinstance(v, str) or is_quantity(v) for v in value):
        return np.array([to_si(v, kind, require_unit=require_unit) for v in value], dtype=float)
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


def temperature_difference(value: Any, what: str = "approach") -> float:
    """A temperature *difference* [K] from a number [K], a text or a pint quantity.

    Offset units (``"10 degC"``) are refused because they denote a temperature, not a
    difference; write ``"10 K"`` or ``"10 delta_degC"``.

    Parameters
    ----------
    value : float | str | pint.Quantity
        The difference.
    what : str
        Name of the value in messages.

    >>> temperature_difference("10 delta_degC")
    10.0
    """
    if isinstance(value, str):
        try:
            q = parse_quantity(value)
        except UnitError as exc:
            raise UnitError(f"cannot read {what} {excerpt(value)} as a temperature difference: {exc}") from None
    elif is_quantity(value):
        q = value
    else:
        return float(value)
    if not is_quantity(q):
        return float(q)
    registry = unit_registry()
    try:
        zero = registry.Quantity(0.0, q.units).to("K").magnitude
    except Exception:   # pint.DimensionalityError, or units of another registry
        raise UnitError(f"{what} {excerpt(value)} is not a temperature difference; "
                        "give e.g. '10 K' or '10 delta_degC'") from None
    if abs(zero) > 0:
        raise UnitError(f"{what} {excerpt(value)} is a temperature, not a difference; "
                        "write '10 K' or '10 delta_degC'")
    return float(q.to("K").magnitude)


def percent_value(text: str) -> float | None:
    """The number of a ``"25 mol%"``, ``"25 %"`` or ``"25 percent"`` text [%], else None.

    >>> percent_value("22.0 mol%"), percent_value("3 bar")
    (22.0, None)
    """
    m = _PERCENT.fullmatch(text) if isinstance(text, str) and len(text) <= MAX_TEXT else None
    return float(m.group(1)) if m else None


def fraction(value: Any) -> float:
    """A fraction from 0.25, '0.25', '25 %' or '25 percent' (no range check here).

    >>> fraction("25 %")
    0.25
    """
    if isinstance(value, bool):
        raise UnitError(f"{value!r} is a yes/no value, not a fraction")
    if isinstance(value, (int, float)):
        return parse_quantity(value)
    if isinstance(value, str):
        percent = None if "mol" in value or "vol" in value else percent_value(value)
        if percent is not None and math.isfinite(percent):
            return percent / 100.0
        if _NUMBER.fullmatch(value.strip()) and math.isfinite(float(value)):
            return float(value)
    raise UnitError(f"{excerpt(value)} is not a fraction; write e.g. 0.25 or '25 %'")


def pure_number(value: Any) -> float:
    """A finite pure number [mol/mol] from a number or a text such as '3.0'.

    >>> pure_number("3.5")
    3.5
    """
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise UnitError(f"{excerpt(value)} is not a number")
    q = parse_quantity(value)
    if is_quantity(q):
        if not q.dimensionless:
            raise UnitError(f"{excerpt(value)} is {dimension_name(q)}; a pure number (mol/mol) belongs here")
        return float(q.to("dimensionless").magnitude)
    return float(q)


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
        p = percent_value(value)
        return p / 100.0 if p is not None else to_si(value, "dimensionless")
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
        value = parse_quantity(value)
    if is_quantity(value):
        import pint
        target = "dimensionless" if power == 0 else f"(mol/L)**{power:g}"
        try:
            return float(value.to(target).magnitude)
        except pint.DimensionalityError:
            raise UnitError(f"{value:~} is not in (mol/L)^{power:g}, the unit of this reaction's "
                            "concentration-basis K (it follows from the change in moles)") from None
    return float(value)
