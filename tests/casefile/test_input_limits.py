"""Case files that once ended in a traceback, a hang or a run-time failure: each is now one
CaseProblem naming the file, the key path, the line and the fix (exit status 2 via the CLI).

The work budget is the project's own (solve/casefile/workload.py, cases/README.md):
common practice, no source.
"""
from __future__ import annotations

import pathlib
import time

import pytest

from eqdesign.solve import cli
from eqdesign.solve.casefile.reader import load_case, parse_case
from eqdesign.solve.casefile.workload import MAX_SPECIES_STATES, MAX_TABLE_CELLS, estimate_work
from eqdesign.solve.casefile.yaml_lines import MAX_DEPTH, MAX_FILE_BYTES, MAX_NODES, CaseError

ROOT = pathlib.Path(__file__).resolve().parents[2]
CASES = ROOT / "cases"

BASE = """\
layout: eqdesign-case/1
job:
  title: "Test loop"
chemistry:
  species: [N2, H2, NH3]
  key: N2
  reactions:
    synthesis: "N2 + 3 H2 = 2 NH3"
feed:
  composition:
    N2: "25 mol%"
    H2: "75 mol%"
conditions:
  temperature: {low: "400 degC", high: "500 degC", points: 5}
  pressure: ["100 bar", "200 bar"]
studies:
  conversion_map: {}
"""


def problems_of(text: str) -> list[str]:
    with pytest.raises(CaseError) as info:
        parse_case(text, "x.yaml")
    return [str(p) for p in info.value.problems]


def _replace(text: str, old: str, new: str) -> str:
    assert old in text, old
    return text.replace(old, new, 1)


def test_the_base_is_valid():
    assert parse_case(BASE, "x.yaml").pressures == (1e7, 2e7)


@pytest.mark.parametrize("points, shown", [(".inf", "inf"), (".nan", "nan"), ("1.0e+999", "inf")])
def test_non_finite_points(points, shown):
    text = _replace(BASE, "points: 5", f"points: {points}")
    assert problems_of(text) == [f"x.yaml: conditions.temperature.points (line 14): {shown} is not a finite "
                                 "number; give a finite value"]


def test_any_non_finite_number_anywhere_is_named():
    text = _replace(BASE, 'N2: "25 mol%"\n    H2: "75 mol%"', "N2: .nan\n    H2: -.inf")
    got = problems_of(text)
    assert sorted(got) == ["x.yaml: feed.composition.H2 (line 12): -inf is not a finite number; give a finite value",
                           "x.yaml: feed.composition.N2 (line 11): nan is not a finite number; give a finite value"]


def test_nan_text_in_a_feed_flow():
    text = _replace(BASE, "  composition:", '  flow: "nan kmol/h"\n  composition:')
    got = problems_of(text)
    assert len(got) == 1 and got[0].startswith("x.yaml: feed.flow (line 10): cannot read 'nan kmol/h'")


def test_nan_in_a_user_species_cp_list():
    text = BASE.replace("  conversion_map: {}", "  conversion_map: {}\nuser_species:\n  XQ:\n    formula: N2H2\n"
                        "    source: invented for a test\n    standard_pressure: 1 bar\n    formation_data:\n      enthalpy: '200 kJ/mol'\n"
                        "      entropy: '220 J/(mol K)'\n      cp: [29.0, .nan]\n")
    got = problems_of(text)
    assert got == ["x.yaml: user_species.XQ.formation_data.cp[1] (line 26): nan is not a finite number; give a "
                   "finite value"]
    text = text.replace("[29.0, .nan]", "[29.0, 'nan']")
    assert any("user_species.XQ.formation_data.cp" in p for p in problems_of(text))


def test_a_third_inlet_temperature_for_two_beds_is_refused():
    text = _replace(BASE, "  conversion_map: {}", "  conversion_map: {}\n  staged_beds:\n    inlet_temperature: "
                    "['400 degC', '410 degC', '420 degC']\n    beds: 2\n")
    assert problems_of(text) == ["x.yaml: studies.staged_beds.beds (line 20): 2 beds but 3 inlet temperatures; give "
                                 "one inlet temperature per bed, or a single one for every bed"]


def test_empty_pressure_option_lists_are_refused():
    text = _replace(BASE, "  conversion_map: {}", "  conversion_map: {}\n  pressure_options:\n    temperatures: []\n")
    assert problems_of(text) == ["x.yaml: studies.pressure_options.temperatures (line 19): is empty; give at least "
                                 "one temperature, e.g. ['450 degC'], or remove the key for the middle of the window"]
    text = _replace(BASE, "  conversion_map: {}", "  conversion_map: {}\n  pressure_options:\n    gas_models: []\n")
    assert problems_of(text) == ["x.yaml: studies.pressure_options.gas_models (line 19): is empty; give ideal and/or "
                                 "peng-robinson, or remove the key for ideal"]


@pytest.mark.parametrize("arrow", ["=", "<=>", "⇌"])
def test_reactions_in_case_files_take_every_arrow_reaction_parse_takes(arrow):
    case = parse_case(BASE.replace("N2 + 3 H2 = 2 NH3", f"N2 + 3 H2 {arrow} 2 NH3"), "x.yaml")
    assert case.solver_reactions == [f"N2 + 3 H2 {arrow} 2 NH3"]
    text = BASE.replace("  conversion_map: {}", "  conversion_map: {}\nuser_species:\n  XQ:\n    source: invented\n    standard_pressure: 1 bar\n"
                        "    reaction_data:\n      reaction: 'N2 + H2 " + arrow + " XQ'\n"
                        "      enthalpy: '200 kJ/mol'\n      entropy: '-100 J/(mol K)'\n")
    case = parse_case(text, "x.yaml")
    assert case.database["XQ"].elements == {"N": 2.0, "H": 2.0}


def test_yaml_alias_bomb_is_refused_at_once():
    lines = ["a0: &a0 [" + ", ".join(["xxxxxxxxxxxxxxxx"] * 9) + "]"]
    for i in range(1, 10):
        lines.append(f"a{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 9) + "]")
    text = "\n".join(lines) + "\n" + "# padding\n" * 120
    assert 1500 < len(text) < 2500
    t0 = time.perf_counter()
    got = problems_of(text)
    assert time.perf_counter() - t0 < 1.0
    sizes = [10]                                   # a0: the list and its 9 items
    for _ in range(9):
        sizes.append(1 + 9 * sizes[-1])            # a list of 9 copies of the previous one
    total = 1 + sum(1 + size for size in sizes)    # the top mapping, each key and its value
    assert got == [f"x.yaml: expands to {total:,} YAML nodes through its "
                   f"anchors and aliases (&name, *name); a case file may hold at most {MAX_NODES:,}: write the values "
                   "out or use fewer aliases"]


def test_recursive_alias_and_deep_nesting_are_refused():
    assert "inside its own anchor" in problems_of("x: &a [1, *a]\n")[0]
    got = problems_of("x: " + "[" * 100_000 + "]" * 100_000 + "\n")
    assert got == [f"x.yaml (line 1): mappings and lists nest more than {MAX_DEPTH} levels deep; a case file needs a "
                   "few levels, flatten the structure"]


def test_huge_files_are_refused_by_size(tmp_path):
    big = tmp_path / "big.yaml"
    big.write_text("# x\n" * (MAX_FILE_BYTES // 4 + 10), encoding="utf-8")
    for path in (big, pathlib.Path("/dev/zero")):
        with pytest.raises(CaseError, match=r"is larger than 1,000,000 bytes \(1 MB\)"):
            load_case(path)


def test_messages_quote_only_an_excerpt():
    got = problems_of(_replace(BASE, '"400 degC"', '"' + "4" * 5000 + ' degC"'))
    assert len(got) == 1 and len(got[0]) < 300


def test_demo_cases_fit_the_budget_with_a_margin():
    for path in sorted(CASES.glob("*.yaml")):
        work = estimate_work(load_case(path))
        assert work.within_budget
        assert work.species_states * 10 < MAX_SPECIES_STATES and work.table_cells * 100 < MAX_TABLE_CELLS, path


def _demo(name: str, *edits) -> str:
    text = (CASES / name).read_text(encoding="utf-8")
    for old, new in edits:
        text = _replace(text, old, new)
    return text


@pytest.mark.parametrize("name, edits, key, fragment", [
    ("ammonia_loop_pressure_options.yaml",
     [("points: 81", "points: 2001"), ('pressure: ["120 bar", "150 bar", "200 bar", "250 bar"]',
                                       'pressure: {low: "100 bar", high: "300 bar", points: 2001}'),
      ("samples: 400", "samples: 20")],
     "conditions", "species × equilibrium states × draws, more than the budget of 10,000,000"),
    ("ammonia_loop_pressure_options.yaml", [("samples: 400", "samples: 100000")],
     "studies.targets[0]", "fewer samples"),
    ("carbon", None, "studies.carbon_limit", "fewer carbon_limit temperature points or feed-ratio values"),
    ("ratio", None, "studies.conversion_map.feed_ratio", "table cells, more than the budget of 1,000,000"),
])
def test_work_beyond_the_budget_is_refused_by_check(name, edits, key, fragment, tmp_path, capsys):
    if name == "carbon":
        text = _demo("steam_reformer_carbon.yaml")
        head, _, tail = text.partition("  carbon_limit:")
        text = head + "  carbon_limit:\n    feed_ratio: {vary: H2O, per: carbon, low: 1.0, high: 5.0, points: 2001}\n" \
            "    temperature: {low: '500 degC', high: '900 degC', points: 2001}\n" + _after_block(tail)
    elif name == "ratio":
        text = _demo("steam_reformer_carbon.yaml")
        head, _, tail = text.partition("  conversion_map:")
        values = ", ".join(f"{1 + k * 1e-4:.4f}" for k in range(20_000))
        text = head + f"  conversion_map:\n    feed_ratio: {{vary: H2O, per: carbon, values: [{values}]}}\n" \
            + _after_block(tail)
    else:
        text = _demo(name, *edits)
    path = tmp_path / "big.yaml"
    path.write_text(text, encoding="utf-8")
    t0 = time.perf_counter()
    assert cli.main(["check", str(path)]) == 2
    assert time.perf_counter() - t0 < 30.0
    err = capsys.readouterr().err
    assert f"big.yaml: {key}" in err and fragment in err, err
    assert "distributed scheduler" in err and "--coarse" in err


def _after_block(tail: str) -> str:
    """The rest of a case file after a study block (its lines indented deeper than 2)."""
    lines = tail.splitlines(keepends=True)
    k = 1
    while k < len(lines) and (lines[k].startswith("    ") or not lines[k].strip()):
        k += 1
    return "".join(lines[k:])
