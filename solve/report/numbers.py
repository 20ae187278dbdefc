"""Number formatting for the whole report: one place for every number turned into text.

SI floats come in (K, Pa, fractions); the functions give the report's units (degC, bar, %)
and its text.  The CSV files use :func:`csv_cell` (10 significant figures, blanks for
missing values); the HTML tables use :func:`format_cell`; sentences use the rest.
"""
from __future__ import annotations

import math

import numpy as np

#: 0 degC in kelvin (ITS-90 definition of the Celsius scale).
ZERO_CELSIUS = 273.15
#: Pascal per bar.
PASCAL_PER_BAR = 1e5


def celsius(T):
    """Temperature in degC from kelvin.

    Parameters
    ----------
    T : float | ndarray  temperature [K]

    >>> float(celsius(723.15))
    450.0
    """
    return np.asarray(T, dtype=float) - ZERO_CELSIUS


def bar(P):
    """Pressure in bar from pascal.

    Parameters
    ----------
    P : float | ndarray  pressure [Pa]

    >>> float(bar(3e6))
    30.0
    """
    return np.asarray(P, dtype=float) / PASCAL_PER_BAR


def temperature_text(T: float) -> str:
    """``"450.0 degC (723.1 K)"``; ``"n/a"`` for a missing temperature [K].

    >>> temperature_text(723.15), temperature_text(float("nan"))
    ('450.0 degC (723.1 K)', 'n/a')
    """
    return "n/a" if not np.isfinite(T) else f"{T - ZERO_CELSIUS:.1f} degC ({T:.1f} K)"


def temperature_text_precise(T: float) -> str:
    """``"450 degC (723.15 K)"`` with six significant figures (case inputs) [K].

    >>> temperature_text_precise(723.15)
    '450 degC (723.15 K)'
    """
    return f"{T - ZERO_CELSIUS:.6g} degC ({T:.6g} K)"


def search_end_text(x: float) -> str:
    """One end of a temperature interval [K]: ``"445.7 degC"``, or where it lies when it is
    beyond the search range (infinite), or ``"–"`` when missing.

    >>> search_end_text(718.85), search_end_text(float("inf")), search_end_text(float("nan"))
    ('445.7 degC', 'beyond the search range', '–')
    """
    if math.isinf(x):
        return "beyond the search range" if x > 0 else "below the search range"
    return f"{x - ZERO_CELSIUS:.1f} degC" if math.isfinite(x) else "–"


def interval_text(entry: dict) -> str:
    """A design temperature with its interval, for a sentence: ``"454.8 degC (445.7 degC to
    464.2 degC, u(T) 5.1 K)"``.  ``entry`` holds ``T``, ``lower``, ``upper`` [K] and ``u`` [K];
    interval ends beyond the search range are said so, and an answer at the end of the
    range (both ends missing) has no interval.

    >>> interval_text(dict(T=728.0, lower=718.85, upper=737.35, u=5.1))
    '454.9 degC (445.7 degC to 464.2 degC, u(T) 5.1 K)'
    """
    if np.isnan(entry["lower"]) and np.isnan(entry["upper"]):
        return (f"{entry['T'] - ZERO_CELSIUS:.1f} degC (the end of the search range: the target is met over all "
                "of it, so the data fix no interval)")

    def end(x):
        return (f"{x - ZERO_CELSIUS:.1f} degC" if np.isfinite(x) else
                "beyond the search range" if x > 0 else "below the search range")
    u = f", u(T) {entry['u']:.1f} K" if np.isfinite(entry["u"]) else ""
    return f"{entry['T'] - ZERO_CELSIUS:.1f} degC ({end(entry['lower'])} to {end(entry['upper'])}{u})"


def csv_cell(v):
    """A table value as CSV text: booleans 1/0, floats to 10 significant figures, missing
    (NaN, infinite) values empty, anything else unchanged.

    >>> csv_cell(True), csv_cell(0.1 + 0.2), csv_cell(float("nan")), csv_cell("ok")
    ('1', '0.3', '', 'ok')
    """
    if isinstance(v, (bool, np.bool_)):
        return "1" if v else "0"
    if isinstance(v, (float, np.floating)):
        return "" if not np.isfinite(v) else f"{float(v):.10g}"
    return v


def format_cell(v) -> str:
    """A table value as report text: 4-6 significant figures, '–' for missing.

    >>> format_cell(0.2512345), format_cell(float("nan")), format_cell(2.5e-7)
    ('0.25123', '–', '2.5000e-07')
    """
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    if isinstance(v, (int, np.integer)):
        return str(int(v))
    if isinstance(v, (float, np.floating)):
        v = float(v)
        if not math.isfinite(v):
            return "–"
        if v == 0:
            return "0"
        a = abs(v)
        if a >= 1e5 or a < 1e-3:
            return f"{v:.4e}"
        if a >= 100:
            return f"{v:.2f}"
        return f"{v:.5g}"
    return str(v)


def html_number(x, fmt: str) -> str:
    """A number for an HTML cell in the given format; ``&ndash;`` when missing, the side of
    the range when infinite.

    >>> html_number(1.23456, ".3g"), html_number(float("nan"), ".3g"), html_number(float("-inf"), ".1f")
    ('1.23', '&ndash;', 'below range')
    """
    x = float(x)
    if math.isnan(x):
        return "&ndash;"
    if math.isinf(x):
        return "beyond range" if x > 0 else "below range"
    return format(x, fmt)


def json_number(x):
    """A float for strict JSON: finite values unchanged, NaN as None, infinities as
    ``"+inf"`` / ``"-inf"``.

    >>> json_number(1.5), json_number(float("nan")), json_number(float("inf"))
    (1.5, None, '+inf')
    """
    x = float(x)
    return x if math.isfinite(x) else ("+inf" if x > 0 else "-inf") if math.isinf(x) else None


def exponential_text(ln_value: float) -> str:
    """``exp(ln_value)`` in e-notation with 5 significant figures, also far beyond the float
    range (an equilibrium constant of a strongly exothermic reaction at room temperature).

    Parameters
    ----------
    ln_value : float  natural logarithm of the number [-]

    >>> exponential_text(math.log(2.5e-7)), exponential_text(1000.0), exponential_text(-1000.0)
    ('2.5000e-07', '1.9701e+434', '5.0760e-435')
    """
    if not math.isfinite(ln_value):
        return "nan" if math.isnan(ln_value) else ("inf" if ln_value > 0 else "0")
    if abs(ln_value) < 700.0:
        return f"{math.exp(ln_value):.4e}"
    log10 = ln_value / math.log(10.0)
    exponent = math.floor(log10)
    mantissa = 10.0 ** (log10 - exponent)
    if round(mantissa, 4) >= 10.0:
        mantissa, exponent = mantissa / 10.0, exponent + 1
    return f"{mantissa:.4f}e{exponent:+d}"
