"""thermo/units.py, the one unit reader: the grammar, lazy pint, the case-file readings.

Conversion factors are exact by definition (1 bar = 1e5 Pa, 0 degC = 273.15 K, 1 atm =
101325 Pa: SI Brochure, 9th ed., BIPM 2019 (from memory)).
"""
from __future__ import annotations

import subprocess
import sys
import time

import pytest

from eqdesign.thermo.units import (
    MAX_TEXT, UnitError, excerpt, fraction, parse_quantity, percent_value, pure_number, scalar_to_si,
    temperature_difference, to_kelvin, to_pascal, to_si, unit_registry,
)


def test_importing_eqdesign_loads_neither_pint_nor_yaml_through_units():
    code = ("import sys, eqdesign.thermo; import eqdesign.thermo.units as u; "
            "print('pint' in sys.modules, 'yaml' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.split() == ["False", "False"]


@pytest.mark.parametrize("text, kind, si", [
    ("450 degC", "temperature", 723.15),
    ("30 bar", "pressure", 3e6),
    ("30 bara", "pressure", 3e6),
    ("1 atm", "pressure", 101325.0),
    ("-92.2 kJ/mol", "molar_energy", -92200.0),
    ("-198.1 J/(mol K)", "molar_entropy", -198.1),
    ("-198.1 J/mol/K", "molar_entropy", -198.1),
    ("-198.1 J*mol^-1*K**-1", "molar_entropy", -198.1),
    ("3.6 kmol/h", "molar_flow", 1.0),
    ("1.5e5 Pa", "pressure", 1.5e5),
    (".5 MPa", "pressure", 5e5),
    ("300", "temperature", 300.0),
])
def test_grammar_reads_what_engineers_write(text, kind, si):
    """Exact SI definitions (SI Brochure, 9th ed., BIPM 2019; from memory)."""
    assert to_si(text, kind) == pytest.approx(si, rel=1e-12)


def test_powers_and_superscripts():
    registry = unit_registry()
    assert parse_quantity("10 m²") == registry.Quantity(10.0, "m**2")
    assert parse_quantity("10 m^3/h") == registry.Quantity(10.0, "m**3/h")


@pytest.mark.parametrize("text, fragment", [
    ("9**9**9 K", "cannot read '9**9**9 K' as a number with a unit"),
    ("2**1000 K", "cannot read '2**1000 K'"),
    ("__import__('os') K", "it must start with a number"),
    ("nan K", "it must start with a number"),
    ("inf bar", "it must start with a number"),
    ("1e999 K", "'1e999 K' is not a finite number"),
    ("1 K**99", "cannot read '1 K**99'"),
    ("1 J/(((mol)))", "parentheses nest more than 2 deep"),
    ("1 (K", "a '(' is not closed"),
    ("2 K*", "a unit is missing"),
    ("3 furlongs_per_fortnight", "is not a unit name eqdesign knows"),
    ("3 barg", "is a gauge pressure; equilibrium needs absolute pressure"),
    ("1 " + "K*" * 200 + "K", f"at most {MAX_TEXT} characters"),
])
def test_anything_outside_the_grammar_is_refused_at_once(text, fragment):
    t0 = time.perf_counter()
    with pytest.raises(UnitError) as info:
        parse_quantity(text)
    assert fragment in str(info.value)
    assert len(str(info.value)) < 300                  # a message quotes a short excerpt only
    assert time.perf_counter() - t0 < 5.0              # generous: refusing never evaluates anything


def test_cli_temperature_expression_returns_at_once_with_a_message():
    code = "from eqdesign.solve.cli import main; raise SystemExit(main(['point', '--feed', 'N2=1', 'H2=3', '-T', '9**9**9 K', '-P', '200 bar']))"
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert done.returncode == 2, done.stderr
    assert "cannot read '9**9**9 K'" in done.stderr and "Traceback" not in done.stderr


def test_case_file_readings():
    assert percent_value("22.0 mol%") == 22.0 and percent_value("3 %") == 3.0 and percent_value("3 bar") is None
    assert fraction("25 %") == 0.25 and fraction(0.25) == 0.25 and fraction("0.25") == 0.25
    assert pure_number("3.5") == 3.5
    for bad in ("nan", "inf", "1e999", "NaN %"):
        with pytest.raises(UnitError):
            fraction(bad)
        with pytest.raises(UnitError):
            pure_number(bad)
    with pytest.raises(UnitError, match="has no unit; write a temperature with its unit"):
        scalar_to_si(673, "temperature")
    with pytest.raises(UnitError, match="is a pressure, not a temperature"):
        scalar_to_si("3 bar", "temperature")
    assert scalar_to_si("10 degC", "temperature_difference") == 10.0


def test_temperature_difference():
    assert temperature_difference("10 delta_degC") == 10.0
    assert temperature_difference(15) == 15.0
    with pytest.raises(UnitError, match="is a temperature, not a difference"):
        temperature_difference("10 degC")


def test_to_kelvin_and_to_pascal_keep_their_meaning():
    assert to_kelvin("25 degC") == pytest.approx(298.15)
    assert to_pascal("1 atm") == 101325.0
    assert to_pascal(unit_registry().Quantity(2.0, "bar")) == 2e5
    with pytest.raises(UnitError, match="is not a molar energy"):
        to_si("0.35 J/(mol K)", "molar_energy")


def test_excerpt_is_short():
    assert len(excerpt("x" * 10_000)) < 80
