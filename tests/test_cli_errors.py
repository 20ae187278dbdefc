"""Clean refusals of the command line: every input problem exits 2 with one line naming
the option and the fix, never a traceback; strict JSON; quiet exit on a closed pipe.
(Behaviour of our own design; the K value below is checked against NIST-JANAF.)"""
from __future__ import annotations

import json
import math
import subprocess
import sys

import pytest

from eqdesign.solve import cli


def run(capsys, *argv):
    code = cli.main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def one_line_problem(code, err, *fragments):
    assert code == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err, err
    for f in fragments:
        assert f in lines[0], (f, lines[0])


def test_ktable_of_a_huge_equilibrium_constant_prints_it(capsys):
    """Acetylene combustion near room temperature: K is far beyond the float range, so it
    is printed from log10 K.  Check: ΔrG°(298.15 K) = 4 ΔfG°(CO2) + 2 ΔfG°(H2O, g)
    - 2 ΔfG°(C2H2) = 4(-394.389) + 2(-228.582) - 2(209.970) = -2454.7 kJ/mol (NIST-JANAF,
    Chase 1998; values from memory), so log10 K(298.15 K) = 2454.7e3 / (ln 10 R 298.15) = 430.0."""
    code, out, err = run(capsys, "ktable", "2 C2H2 + 5 O2 = 4 CO2 + 2 H2O", "--from", "298.15 K", "--to", "300 K",
                         "--points", "2")
    assert code == 0 and err == ""
    row = out.splitlines()[4].split()
    assert row[0] == "298.15" and row[2].endswith("e+430")
    assert float(row[3]) == pytest.approx(430.0, abs=0.5)        # 0.5 in log10 K: 2.9 kJ/mol in ΔrG°
    mantissa = float(row[2].split("e")[0])
    assert mantissa == pytest.approx(10 ** (float(row[3]) - 430), rel=1e-3)


def test_ktable_of_a_reaction_where_everything_cancels_is_refused(capsys):
    one_line_problem(*run(capsys, "ktable", "N2 = N2")[::2], "every species cancels")


@pytest.mark.parametrize("points, fragment", [
    ("1e8", "100000000 is outside 2 to 10000 rows"),
    ("0", "0 is outside 2 to 10000 rows"),
    ("1", "1 is outside 2 to 10000 rows"),
    ("-3", "-3 is outside 2 to 10000 rows"),
    ("2.5", "'2.5' is not a whole number"),
])
def test_ktable_row_count_is_limited(points, fragment, capsys):
    code, _, err = run(capsys, "ktable", "N2 + 3 H2 = 2 NH3", "--points", points)
    one_line_problem(code, err, "eqdesign ktable: --points:", fragment)


@pytest.mark.parametrize("text", ["nan K", "inf K"])
def test_ktable_non_finite_temperature_is_refused(text, capsys):
    code, _, err = run(capsys, "ktable", "N2 + 3 H2 = 2 NH3", "--from", text)
    # the unit reader's grammar takes numbers as digits only, so NaN and infinity never get in
    one_line_problem(code, err, f"--from: cannot read {text!r} as a number with a unit")


@pytest.mark.parametrize("argv, fragment", [
    (["ktable", "N2 + 3 H2 = 2 NH3", "--from", "300"], '--from: \'300\' has no unit; give the unit, e.g. --from "450 degC"'),
    (["point", "--feed", "N2=1", "-T", "700", "-P", "1 bar"],
     '--temperature: \'700\' has no unit; give the unit, e.g. -T "450 degC"'),
    (["point", "--feed", "N2=1", "-T", "700 K", "-P", "3e6"], '--pressure: \'3e6\' has no unit; give the unit, e.g. -P "30 bar"'),
])
def test_bare_numbers_need_a_unit(argv, fragment, capsys):
    code, _, err = run(capsys, *argv)
    one_line_problem(code, err, fragment)


@pytest.mark.parametrize("feed", [["N2=1", "N2=2"], ["N2=1", "nitrogen=2"]])
def test_a_species_named_twice_in_the_feed_is_refused(feed, capsys):
    code, _, err = run(capsys, "point", "--feed", *feed, "-T", "700 K", "-P", "1 bar")
    one_line_problem(code, err, "N2 is already in the feed as 'N2=1'; give each species once")


def test_peng_robinson_without_critical_constants_is_a_message(capsys):
    code, _, err = run(capsys, "point", "--feed", "H2=1", "O2=1", "--species", "H2O", "OH", "H", "-T", "2500 K",
                       "-P", "10 bar", "--gas-model", "peng-robinson")
    one_line_problem(code, err, "eqdesign point: Peng-Robinson needs the critical temperature", "OH, H")


def test_json_is_strict_for_an_inert_feed_with_a_reaction(capsys):
    """Only argon fed, ammonia synthesis named: Q/K is undefined, written as null."""
    code, out, err = run(capsys, "point", "--feed", "Ar=1", "--reaction", "N2 + 3 H2 = 2 NH3", "-T", "700 K",
                         "-P", "1 bar", "--json")
    assert code == 0 and err == ""
    data = json.loads(out, parse_constant=lambda c: pytest.fail(f"non-standard JSON constant {c}"))
    assert data["Q_over_K"] == {"N2 + 3 H2 = 2 NH3": None} and data["status"] == "converged"


def test_json_is_strict_for_absurd_amounts(capsys):
    code, out, _ = run(capsys, "point", "--feed", "N2=1e300", "H2=3e300", "-T", "700 K", "-P", "10 bar", "--json")
    data = json.loads(out, parse_constant=lambda c: pytest.fail(f"non-standard JSON constant {c}"))
    assert data["status"] in ("converged", "not converged") and code in (0, 1)
    assert all(v is None or math.isfinite(v) for v in data["amounts_mol"].values())


def test_infinite_feed_amount_is_refused(capsys):
    code, _, err = run(capsys, "point", "--feed", "N2=1e999", "-T", "700 K", "-P", "10 bar")
    one_line_problem(code, err, "is not a finite number (mol)")


def test_output_piped_into_head_exits_quietly():
    proc = subprocess.run(f'"{sys.executable}" -m eqdesign.solve.cli ktable "N2 + 3 H2 = 2 NH3" --points 10000 '
                          '| head -n 2', shell=True, capture_output=True, text=True, timeout=300)
    assert proc.stdout.startswith("Reaction: N2 + 3 H2 = 2 NH3")
    assert proc.stderr == ""


@pytest.mark.parametrize("argv, fragment", [
    (["point", "--feed", "N2=1"], "eqdesign point: the following arguments are required: --temperature/-T"),
    (["point", "--feed", "N2=1", "-T", "700 K", "-P", "1 bar", "--gas-model", "vdw"],
     "eqdesign point: argument --gas-model: invalid choice: 'vdw'"),
])
def test_usage_errors_are_one_line(argv, fragment, capsys):
    with pytest.raises(SystemExit) as stop:
        cli.main(argv)
    err = capsys.readouterr().err
    one_line_problem(stop.value.code, err, fragment, "see 'eqdesign point --help'")
