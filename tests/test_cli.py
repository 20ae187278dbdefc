"""The `eqdesign run` / `check` command line: demo cases end to end, malformed cases,
output-folder protection and all-or-nothing writing."""
from __future__ import annotations

import csv
import json
import os
import pathlib
import subprocess
import sys

import numpy as np
import pytest

from eqdesign.solve import cli
from eqdesign.solve.report import output as runner
from eqdesign.solve.casefile.reader import load_case
from eqdesign.solve.studies.adiabatic import adiabatic_equilibrium
from eqdesign.solve.core.equilibrium import equilibrium

ROOT = pathlib.Path(__file__).resolve().parents[1]
CASES = ROOT / "cases"
DEMOS = {
    "ammonia_loop_pressure_options": ["pressure_options.csv", "targets.csv", "temperature_intervals.csv",
                                      "conversion_band.csv", "uncertainty_ranking_temperature.csv"],
    "sulfuric_acid_converter": ["staged_beds.csv", "conversion_temperature_diagram.png"],
    "steam_reformer_carbon": ["carbon_limit.csv", "carbon_limit.png", "conversion_by_feed_ratio.csv"],
    "methanol_restricted_reactions": ["pressure_options.csv", "targets.csv"],
    "shift_converters": ["staged_beds.csv", "targets.csv"],
}


def read_csv(path) -> list[dict]:
    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


def direct_conversion(case, T_op: float, P: float) -> float:
    """Conversion from one direct solver call, the approach margin taken on the side that
    lowers conversion (as the case layout defines it)."""
    T = np.array([T_op - case.approach, T_op + case.approach])
    res = equilibrium(list(case.species), case.feed, T, P, reactions=case.solver_reactions,
                      gas_model=case.gas_model, key=case.key, database=case.database)
    return float(np.min(res.conversion()))


# ============================================================================ demo cases
@pytest.fixture(scope="module")
def demo_runs(tmp_path_factory):
    """Every demo case run once through the command line at reduced resolution."""
    base = tmp_path_factory.mktemp("demos")
    out = {}
    for name in DEMOS:
        folder = base / name
        code = cli.main(["run", str(CASES / f"{name}.yaml"), "-o", str(folder), "--coarse", "--quiet"])
        out[name] = (code, folder)
    return out


@pytest.mark.parametrize("name", sorted(DEMOS))
def test_demo_case_runs_end_to_end(name, demo_runs):
    code, folder = demo_runs[name]
    assert code == 0
    names = {p.name for p in folder.iterdir()}
    for expected in ["report.html", "case.yaml", "run_summary.json", "data_provenance.csv",
                     "solver_diagnostics.csv", "conversion_by_temperature.csv", "conversion_vs_temperature.png",
                     "conversion_vs_temperature.svg", "outlet_composition.png"] + DEMOS[name]:
        assert expected in names, (name, expected)
    assert [n for n in names if n.startswith(".")] == [".eqdesign-output"]     # the marker, no temporaries
    summary = json.loads((folder / "run_summary.json").read_text())
    assert summary["reduced_resolution"] is True and summary["points_flagged"] == 0
    # a value of the conversion table agrees with a direct call of the solver
    case = load_case(CASES / f"{name}.yaml")
    rows = read_csv(folder / "conversion_by_temperature.csv")
    row = rows[len(rows) // 2]
    T_op = float(row["T [degC]"]) + 273.15
    for j, P in enumerate(case.pressures):
        col = f"conversion {case.key} at {P / 1e5:g} bar [%]"
        assert float(row[col]) == pytest.approx(100 * direct_conversion(case, T_op, P), rel=1e-7, abs=1e-9)


@pytest.mark.parametrize("name", ["methanol_restricted_reactions", "shift_converters"])
def test_restricted_cases_state_the_graphite_activity(name, demo_runs):
    """Named-reaction cases with carbon-bearing gases: the conversion map's graphite activity
    (above 1 in both: methanol and shift gases at low temperature lie inside the graphite
    region, a known property of CO-rich gas below about 600 degC, common practice, no source)
    is stated in a "carbon" caution with its largest value, which equals the CSV's maximum."""
    _, folder = demo_runs[name]
    summary = json.loads((folder / "run_summary.json").read_text())
    carbon = [c for c in summary["cautions"] if c["kind"] == "carbon" and c["where"] == "conversion map"]
    assert len(carbon) == 1
    rows = read_csv(folder / "conversion_map.csv")
    largest = max(float(r["graphite activity [-]"]) for r in rows)
    assert largest > 1 and f"Graphite activity up to {largest:.3g}" in carbon[0]["text"]
    assert {r["trustworthy [-]"] for r in rows} == {"1"} and {r["flags [text]"] for r in rows} == {""}
    targets = read_csv(folder / "targets.csv")
    assert {r["status"] for r in targets} <= {"reached", "search-range end", "not reachable"}


@pytest.mark.parametrize("name", ["sulfuric_acid_converter", "shift_converters"])
def test_first_bed_agrees_with_adiabatic_equilibrium(name, demo_runs):
    _, folder = demo_runs[name]
    case = load_case(CASES / f"{name}.yaml")
    st = case.studies.staged_beds
    bed1 = read_csv(folder / "staged_beds.csv")[0]
    ad = adiabatic_equilibrium(list(case.species), case.feed, st.inlet_temperature, st.pressure,
                               reactions=case.solver_reactions, gas_model=case.gas_model,
                               database=case.database, key=case.key, approach=case.approach)
    assert float(bed1["outlet T [K]"]) == pytest.approx(float(ad.T), rel=1e-9)
    assert float(bed1[f"overall conversion of {case.key} [-]"]) == pytest.approx(ad.conversion(), rel=1e-9)


def test_one_case_at_full_resolution_through_the_console(tmp_path):
    """The ammonia case at full resolution, as a user runs it (a separate process)."""
    out = tmp_path / "ammonia"
    proc = subprocess.run([sys.executable, "-m", "eqdesign.solve.cli", "run",
                           str(CASES / "ammonia_loop_pressure_options.yaml"), "-o", str(out)],
                          capture_output=True, text=True, cwd=tmp_path)
    assert proc.returncode == 0, proc.stderr
    assert "Traceback" not in proc.stderr
    assert "[##############################] 324/324 points" in proc.stderr      # the progress bar
    assert f"Results of {CASES / 'ammonia_loop_pressure_options.yaml'} in {out}/" in proc.stdout
    rows = read_csv(out / "conversion_by_temperature.csv")
    assert len(rows) == 81
    case = load_case(CASES / "ammonia_loop_pressure_options.yaml")
    row = rows[40]
    assert float(row["conversion N2 at 150 bar [%]"]) == pytest.approx(
        100 * direct_conversion(case, float(row["T [degC]"]) + 273.15, 150e5), rel=1e-7)
    # the target answer is the highest outlet temperature with 25 % conversion at 150 bar
    t = [r for r in read_csv(out / "targets.csv") if r["fixed condition"] == "150 bar"][0]
    T_ans = float(t["answer [value]"]) + 273.15
    assert direct_conversion(case, T_ans, 150e5) == pytest.approx(0.25, abs=1e-5)


def test_check_prints_a_summary_and_writes_nothing(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code = cli.main(["check", str(CASES / "steam_reformer_carbon.yaml")])
    out = capsys.readouterr().out
    assert code == 0
    assert "valid (eqdesign-case/1)" in out and "carbon limit" in out
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize("command", ["run", "check", "ktable", "species", "point"])
def test_every_subcommand_has_help(command, capsys):
    with pytest.raises(SystemExit) as info:
        cli.main([command, "--help"])
    assert info.value.code == 0
    assert "usage: eqdesign " + command in capsys.readouterr().out


def test_default_output_folder_is_named_after_the_case(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert cli.main(["run", str(CASES / "shift_converters.yaml"), "--coarse", "-q"]) == 0
    assert (tmp_path / "shift_converters_results" / "report.html").is_file()


# ============================================================================ output folder
@pytest.fixture
def small_case(tmp_path):
    path = tmp_path / "small.yaml"
    path.write_text(BASE, encoding="utf-8")
    return path


def test_existing_folder_is_never_overwritten_without_force(small_case, tmp_path, capsys):
    out = tmp_path / "out"
    out.mkdir()
    (out / "keep.txt").write_text("earlier results")
    code = cli.main(["run", str(small_case), "-o", str(out), "-q"])
    err = capsys.readouterr().err
    assert code == 2
    assert f"eqdesign run: {out}: exists; eqdesign never overwrites results" in err and "--force" in err
    assert [p.name for p in out.iterdir()] == ["keep.txt"]


def test_force_replaces_the_folder(small_case, tmp_path, capsys):
    out = tmp_path / "out"
    out.mkdir()
    (out / "keep.txt").write_text("earlier results")
    (out / ".eqdesign-output").write_text("an earlier eqdesign output folder")
    assert cli.main(["run", str(small_case), "-o", str(out), "-q", "--force"]) == 0
    names = {p.name for p in out.iterdir()}
    assert "keep.txt" not in names and "report.html" in names
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out", "small.yaml"]


def test_an_empty_existing_folder_is_used(small_case, tmp_path, capsys):
    out = tmp_path / "out"
    out.mkdir()
    assert cli.main(["run", str(small_case), "-o", str(out), "-q"]) == 0
    assert (out / "report.html").is_file()


def _fail_after(n, real):
    calls = {"n": 0}

    def write(path, data):
        calls["n"] += 1
        if calls["n"] > n:
            raise OSError(28, "No space left on device (simulated)")
        real(path, data)
    return write


def test_failure_mid_write_leaves_nothing(small_case, tmp_path, monkeypatch):
    out = tmp_path / "out"
    monkeypatch.setattr(runner, "write_atomic", _fail_after(3, runner.write_atomic))
    with pytest.raises(OSError, match="simulated"):
        cli.main(["run", str(small_case), "-o", str(out), "-q"])
    assert sorted(p.name for p in tmp_path.iterdir()) == ["small.yaml"]     # no folder, no temporary


def test_failure_mid_write_removes_the_folders_it_made(small_case, tmp_path, monkeypatch):
    out = tmp_path / "new" / "deeper" / "out"
    monkeypatch.setattr(runner, "write_atomic", _fail_after(1, runner.write_atomic))
    with pytest.raises(OSError, match="simulated"):
        cli.main(["run", str(small_case), "-o", str(out), "-q"])
    assert sorted(p.name for p in tmp_path.iterdir()) == ["small.yaml"]


def test_output_files_are_readable_like_any_new_file(small_case, tmp_path):
    out = tmp_path / "out"
    assert cli.main(["run", str(small_case), "-o", str(out), "-q"]) == 0
    mask = os.umask(0o022)
    os.umask(mask)
    assert (out / "report.html").stat().st_mode & 0o777 == 0o666 & ~mask
    assert out.stat().st_mode & 0o777 == 0o777 & ~mask


def test_failure_mid_write_with_force_keeps_the_old_folder(small_case, tmp_path, monkeypatch):
    out = tmp_path / "out"
    out.mkdir()
    (out / "keep.txt").write_text("earlier results")
    (out / ".eqdesign-output").write_text("an earlier eqdesign output folder")
    monkeypatch.setattr(runner, "write_atomic", _fail_after(2, runner.write_atomic))
    with pytest.raises(OSError, match="simulated"):
        cli.main(["run", str(small_case), "-o", str(out), "-q", "--force"])
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out", "small.yaml"]
    assert sorted(p.name for p in out.iterdir()) == [".eqdesign-output", "keep.txt"]


def test_interrupted_run_writes_nothing(small_case, tmp_path, monkeypatch, capsys):
    out = tmp_path / "out"

    def interrupted(*a, **k):
        raise KeyboardInterrupt
    monkeypatch.setattr(runner.plots, "render", interrupted)
    assert cli.main(["run", str(small_case), "-o", str(out), "-q"]) == 130
    assert "interrupted; no output folder was written" in capsys.readouterr().err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["small.yaml"]


def test_write_atomic_never_leaves_a_partial_file(tmp_path, monkeypatch):
    target = tmp_path / "table.csv"
    runner.write_atomic(target, b"old complete content\n")

    def broken_replace(src, dst):
        raise OSError("simulated failure at the rename")
    monkeypatch.setattr(runner.os, "replace", broken_replace)
    with pytest.raises(OSError, match="simulated"):
        runner.write_atomic(target, b"new content that must not appear half-written\n")
    assert target.read_bytes() == b"old complete content\n"
    assert [p.name for p in tmp_path.iterdir()] == ["table.csv"]


# ============================================================================ malformed cases
BASE = """\
layout: eqdesign-case/1
job:
  title: "Test loop"
chemistry:
  species: [N2, H2, NH3]
  key: N2
  reactions:
    synthesis: "N2 + 3 H2 = 2 NH3"
  only_named_reactions: true
  gas_model: ideal
  approach: "5 K"
feed:
  composition:
    N2: "25 mol%"
    H2: "75 mol%"
conditions:
  temperature: {low: "400 degC", high: "500 degC", points: 5}
  pressure: ["100 bar", "200 bar"]
studies:
  conversion_map: {}
  targets:
    - conversion: "20 %"
      solve_for: temperature
  staged_beds:
    inlet_temperature: "380 degC"
    beds: 2
output:
  plots: [png]
"""

FEED_BLOCK = 'feed:\n  composition:\n    N2: "25 mol%"\n    H2: "75 mol%"\n'
STUDIES_BLOCK = BASE[BASE.index("studies:"):BASE.index("output:")]
CARBON_STUDY = "  carbon_limit:\n    feed_ratio: {vary: H2O, per: carbon, low: 1, high: 3, points: 3}\n"
USER_SPECIES = """\
user_species:
  XQ:
    formula: NH3
    phase: gas
    standard_pressure: 1 bar
    formation_data: {enthalpy: "-45.9 kJ/mol", entropy: "192.8 J/(mol K)", cp: "35 J/(mol K)"}
"""

# (id, [(old, new), ...] or a callable, [expected fragments of the message])
MALFORMED = [
    ("unknown-top-key", [("output:", "outputz:")], ["outputz", "unknown key 'outputz'; did you mean 'output'?"]),
    ("unknown-nested-key", [("gas_model: ideal", "gas_modle: ideal")],
     ["chemistry.gas_modle", "did you mean 'gas_model'?"]),
    ("missing-feed-block", [(FEED_BLOCK, "")], ["x.yaml: feed: missing block; add it"]),
    ("missing-key-reactant", [("  key: N2\n", "")], ["chemistry", "missing key 'key'", "key reactant"]),
    ("temperature-as-pressure", [('low: "400 degC"', 'low: "450 bar"')],
     ["conditions.temperature.low (line 17)", "'450 bar' is a pressure, not a temperature",
      "'450 degC' or '723.15 K'"]),
    ("temperature-without-unit", [('low: "400 degC"', "low: 673")],
     ["conditions.temperature.low", "673 has no unit", "write a temperature with its unit"]),
    ("pressure-as-temperature", [('"100 bar"', '"100 degC"')],
     ["conditions.pressure[0]", "is a temperature, not a pressure"]),
    ("gauge-pressure", [('"100 bar"', '"100 barg"')], ["conditions.pressure[0]", "gauge pressure", "absolute"]),
    ("negative-pressure", [('"100 bar"', '"-5 bar"')], ["conditions.pressure[0]", "must be greater than zero"]),
    ("unknown-species", [("[N2, H2, NH3]", "[N2, H2, NH4]")],
     ["chemistry.species[2]", "unknown species 'NH4'", "did you mean", "user_species"]),
    ("unknown-feed-species", [('H2: "75 mol%"', 'H3: "75 mol%"')],
     ["feed.composition.H3", "unknown species 'H3'"]),
    ("unbalanced-reaction", [("N2 + 3 H2 = 2 NH3", "N2 + 2 H2 = 2 NH3")],
     ["chemistry.reactions.synthesis", "does not balance", "H +2", "correct the coefficients"]),
    ("reaction-without-equals", [("N2 + 3 H2 = 2 NH3", "N2 + 3 H2 -> 2 NH3")],
     ["chemistry.reactions.synthesis", "write it as 'reactants = products'"]),
    ("reaction-unknown-species", [("N2 + 3 H2 = 2 NH3", "N2 + 3 H2 = 2 NH3x")],
     ["chemistry.reactions.synthesis", "unknown species 'NH3x'"]),
    ("negative-feed", [('N2: "25 mol%"', 'N2: "-25 mol%"')],
     ["feed.composition.N2", "is negative", "zero or positive"]),
    ("all-zero-feed", [('N2: "25 mol%"', "N2: 0"), ('H2: "75 mol%"', "H2: 0")],
     ["feed.composition", "every feed amount is zero"]),
    ("percent-not-100", [('"75 mol%"', '"70 mol%"')], ["feed.composition", "add up to 95, not 100"]),
    ("mixed-feed-kinds", [('"75 mol%"', '"300 kmol/h"')],
     ["feed.composition", "mixes", "mol%", "flows", "same kind"]),
    ("feed-wrong-dimension", [('"75 mol%"', '"75 bar"')],
     ["feed.composition.H2", "'75 bar' is a pressure, not a feed amount"]),
    ("feed-not-a-number", [('"75 mol%"', '"lots"')], ["feed.composition.H2", "cannot read 'lots'"]),
    ("key-not-fed", [("  key: N2\n", "  key: NH3\n")],
     ["chemistry.key", "key reactant NH3 is not in the feed"]),
    ("bad-gas-model", [("gas_model: ideal", "gas_model: idael")],
     ["chemistry.gas_model", "'idael' is not a gas model; use 'ideal'"]),
    ("approach-wrong-dimension", [('approach: "5 K"', 'approach: "5 bar"')],
     ["chemistry.approach", "is a pressure, not a temperature difference"]),
    ("approach-too-large", [('approach: "5 K"', 'approach: "500 K"')],
     ["chemistry.approach", "between 0 and 200 K"]),
    ("temperatures-swapped", [('low: "400 degC", high: "500 degC"', 'low: "500 degC", high: "400 degC"')],
     ["conditions.temperature", "is above high", "swap them"]),
    ("temperature-outside-data", [('high: "500 degC"', 'high: "5900 degC"')],
     ["conditions.temperature", "above the data range of", "6000 K", "lower it"]),
    ("points-not-whole", [("points: 5", "points: 5.5")],
     ["conditions.temperature.points", "5.5 is not a whole number"]),
    ("points-too-few", [("points: 5", "points: 1")], ["conditions.temperature.points", "outside 2-2001"]),
    ("target-above-one", [('conversion: "20 %"', "conversion: 1.2")],
     ["studies.targets[0].conversion", "1.2 is impossible", "between 0 and 1"]),
    ("target-zero", [('conversion: "20 %"', "conversion: 0")],
     ["studies.targets[0].conversion", "is impossible"]),
    ("target-beyond-stoichiometry", [('"25 mol%"', '"50 mol%"'), ('"75 mol%"', '"50 mol%"'),
                                     ('conversion: "20 %"', 'conversion: "50 %"')],
     ["studies.targets[0].conversion", "cannot be reached", "at most 0.3333 of N2", "H2 runs out"]),
    ("target-solve-for-typo", [("solve_for: temperature", "solve_for: temprature")],
     ["studies.targets[0].solve_for", "use 'temperature'"]),
    ("beds-inlet-wrong-dimension", [('inlet_temperature: "380 degC"', 'inlet_temperature: "380 bar"')],
     ["studies.staged_beds.inlet_temperature", "is a pressure, not a temperature"]),
    ("beds-zero", [("beds: 2", "beds: 0")], ["studies.staged_beds.beds", "outside 1-8"]),
    ("beds-nothing-asked", [("    beds: 2\n", "")], ["studies.staged_beds", "give beds", "or target"]),
    ("wrong-layout", [("eqdesign-case/1", "eqdesign-case/9")],
     ["layout", "is not a layout this version reads", "layout: eqdesign-case/1"]),
    ("not-yaml", [("  title: \"Test loop\"\n", "  title: \"Test loop\"\n  bad: [unclosed\n")],
     ["not valid YAML", "indentation"]),
    ("duplicate-key", [("  key: N2\n", "  key: N2\n  key: H2\n")],
     ["chemistry.key (line 7): key 'key' appears twice in the same block; keep one"]),
    ("bad-plot-format", [("plots: [png]", "plots: [pdf]")], ["output.plots", "'pdf' is not a plot format"]),
    ("no-study", [(STUDIES_BLOCK, "studies: {}\n")], ["studies", "no study is selected"]),
    ("real-gas-without-critical-data", [("[N2, H2, NH3]", "[N2, H2, NH3, OH]"),
                                        ("gas_model: ideal", "gas_model: peng-robinson")],
     ["chemistry.gas_model", "peng-robinson needs critical constants", "OH", "gas_model: ideal"]),
    ("user-species-without-source", [("output:", USER_SPECIES + "output:")],
     ["user_species.XQ", "missing key 'source'"]),
    ("user-species-clashes", [("output:", USER_SPECIES.replace("XQ", "NH3") + "output:")],
     ["user_species.NH3", "already in the database"]),
    ("user-species-entropy-unit", [("output:", USER_SPECIES.replace('"192.8 J/(mol K)"', '"192.8 kJ/mol"')
                                    .replace("    phase: gas\n", '    phase: gas\n    source: "test"\n') + "output:")],
     ["user_species.XQ.formation_data.entropy", "is an energy per mole, not an entropy per mole"]),
    ("carbon-limit-without-carbon", [(STUDIES_BLOCK, STUDIES_BLOCK + CARBON_STUDY)],
     ["studies.carbon_limit", "no carbon in the feed"]),
    ("top-level-not-a-mapping", lambda text: "- just\n- a list\n", ["a case file is a YAML mapping"]),
    ("boolean-spelled-yes", [("only_named_reactions: true", "only_named_reactions: yes")],
     ["chemistry.only_named_reactions", "'yes' is not true or false"]),
    ("pressure-target-without-temperature",
     [('    - conversion: "20 %"\n      solve_for: temperature\n',
       '    - conversion: "20 %"\n      solve_for: pressure\n')],
     ["studies.targets[0]", "missing key 'temperature'", "pressure search needs a fixed temperature"]),
    ("feed-ratio-basis-not-fed",
     [('    - conversion: "20 %"\n      solve_for: temperature\n',
       '    - conversion: "20 %"\n      solve_for: feed_ratio\n      temperature: "450 degC"\n'
       '      feed_ratio: {vary: H2, per: Ar, low: 1, high: 5}\n'), ("[N2, H2, NH3]", "[N2, H2, NH3, Ar]")],
     ["studies.targets[0].feed_ratio.per", "there is no Ar in the feed"]),
    ("duplicate-feed-species", [('H2: "75 mol%"', 'H2: "75 mol%"\n    H2: "75 mol%"')],
     ["feed.composition.H2 (line 16): key 'H2' appears twice"]),
    ("carbon-basis-for-another-species",
     [('    - conversion: "20 %"\n      solve_for: temperature\n',
       '    - conversion: "20 %"\n      solve_for: feed_ratio\n      temperature: "450 degC"\n'
       '      feed_ratio: {vary: H2, per: carbon, low: 1, high: 5}\n')],
     ["studies.targets[0].feed_ratio.per", "'carbon' is the basis of the steam-to-carbon ratio"]),
    ("job-without-title", [('  title: "Test loop"\n', '  scenario: "no title"\n')],
     ["job", "missing key 'title'"]),
    ("uncertainty-too-few-samples", [("output:", "  uncertainty: {samples: 5}\noutput:")],
     ["x.yaml: studies.uncertainty.samples (line 27): give a whole number from 20 to 100000, got 5"]),
    ("uncertainty-unknown-method", [("output:", "  uncertainty:\n    method: bootstrap\noutput:")],
     ["studies.uncertainty.method (line 28): 'bootstrap' is not one of monte-carlo, linear; write method: "
      "monte-carlo or method: linear"]),
    ("uncertainty-level-out-of-range", [("output:", "  uncertainty: {level: '120 %'}\noutput:")],
     ["studies.uncertainty.level", "give a coverage probability from 0.5 to below 1"]),
    ("uncertainty-not-a-mapping", [("output:", "  uncertainty: [400, 1]\noutput:")],
     ["studies.uncertainty (line 27): give a mapping with keys method, samples, seed, level, overrides, defaults"]),
    ("uncertainty-override-wrong-unit",
     [("output:", "  uncertainty:\n    overrides:\n      NH3: {formation_enthalpy: '0.35 J/(mol K)'}\noutput:")],
     ["studies.uncertainty.overrides.NH3.formation_enthalpy (line 29)", "is not a molar energy",
      "give a standard uncertainty such as '0.4 kJ/mol'"]),
    ("uncertainty-override-unknown-species",
     [("output:", "  uncertainty:\n    overrides:\n      NH4: {entropy: '0.1 J/(mol K)'}\noutput:")],
     ["studies.uncertainty.overrides.NH4 (line 29)", "unknown species 'NH4'"]),
    ("uncertainty-override-wrong-datum",
     [("output:", "  uncertainty:\n    overrides:\n      NH3: {reaction_enthalpy: '2 kJ/mol'}\noutput:")],
     ["studies.uncertainty.overrides.NH3.reaction_enthalpy (line 29): NH3 takes formation_enthalpy and entropy; "
      "use those keys"]),
    ("uncertainty-override-species-not-in-case",
     [("output:", "  uncertainty:\n    overrides:\n      CO: {entropy: '0.1 J/(mol K)'}\noutput:")],
     ["studies.uncertainty.overrides.CO (line 29): CO is not a species of this case"]),
    ("uncertainty-without-anything-to-act-on",
     [(STUDIES_BLOCK, "studies:\n  staged_beds: {inlet_temperature: '380 degC', beds: 2}\n  uncertainty: {}\n")],
     ["studies.uncertainty (line 21): acts on the conversion map", "and the case has neither"]),
    ("user-species-uncertainty-negative",
     [("output:", USER_SPECIES.replace("    phase: gas\n", '    phase: gas\n    source: "test"\n')
       .replace('cp: "35 J/(mol K)"}', 'cp: "35 J/(mol K)",\n      uncertainty: {enthalpy: "-1 kJ/mol"}}')
       + "output:")],
     ["user_species.XQ.formation_data.uncertainty.enthalpy", "a standard uncertainty is zero or positive"]),
]


def _mutate(spec) -> str:
    if callable(spec):
        return spec(BASE)
    text = BASE
    for old, new in spec:
        assert old in text, old
        text = text.replace(old, new, 1)
    return text


def test_the_base_of_the_malformed_suite_is_valid(tmp_path, capsys):
    path = tmp_path / "x.yaml"
    path.write_text(BASE, encoding="utf-8")
    assert cli.main(["check", str(path)]) == 0


def test_there_are_at_least_30_malformed_cases():
    assert len(MALFORMED) >= 30
    assert len({m[0] for m in MALFORMED}) == len(MALFORMED)


@pytest.mark.parametrize("ident, spec, fragments", MALFORMED, ids=[m[0] for m in MALFORMED])
def test_malformed_case(ident, spec, fragments, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    path = tmp_path / "x.yaml"
    path.write_text(_mutate(spec), encoding="utf-8")
    code = cli.main(["run", "x.yaml", "-o", "out"])
    err = capsys.readouterr().err
    assert code == 2, err
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert lines and all(ln.startswith("eqdesign run: ") for ln in lines), err
    assert any(ln.startswith("eqdesign run: x.yaml") for ln in lines), err
    for fragment in fragments:
        assert fragment in err, (fragment, err)
    assert "Traceback" not in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["x.yaml"]       # nothing written


def test_missing_case_file(tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(tmp_path)
    assert cli.main(["check", "nowhere.yaml"]) == 2
    assert capsys.readouterr().err.strip() == ("eqdesign check: nowhere.yaml: no such file; check the path "
                                               "(the demo cases are in cases/)")


def test_malformed_case_through_the_console_exits_2_without_traceback(tmp_path):
    path = tmp_path / "x.yaml"
    path.write_text(_mutate([('conversion: "20 %"', "conversion: 1.2")]), encoding="utf-8")
    proc = subprocess.run([sys.executable, "-m", "eqdesign.solve.cli", "run", str(path), "-o", str(tmp_path / "o")],
                          capture_output=True, text=True)
    assert proc.returncode == 2
    assert proc.stderr.strip() == (f"eqdesign run: {path}: studies.targets[0].conversion (line 22): 1.2 is "
                                   "impossible: a conversion lies strictly between 0 and 1 (0-100 %); give e.g. "
                                   "0.25 or '25 %'")
    assert not (tmp_path / "o").exists()
    assert os.listdir(tmp_path) == ["x.yaml"]
