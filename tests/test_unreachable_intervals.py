"""An unreachable pressure or feed-ratio target with the data uncertainty on reports
"not reachable", as it does without (before, the whole run stopped on a NaN temperature)."""
from __future__ import annotations

import pathlib

import numpy as np
import pytest

from eqdesign.solve.casefile.reader import parse_case
from eqdesign.solve.report.run import run_case
from eqdesign.solve.studies.intervals import feed_ratio_interval, pressure_interval

ROOT = pathlib.Path(__file__).resolve().parents[1]


@pytest.mark.parametrize("method", ["linear", "monte-carlo"])
def test_unreachable_pressure_and_ratio_targets_with_uncertainty(method):
    """90 % N2 conversion at 900 K below 300 bar is out of reach (about 5 % at 300 bar at that
    temperature; A. T. Larson, R. L. Dodge, J. Am. Chem. Soc. 45, 2918 (1923), trend from memory)."""
    p = pressure_interval(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, 900.0, "N2", 0.9,
                          P_range=("10 bar", "300 bar"), method=method, samples=20)
    assert p.status == "not reachable" and np.isnan(p.P) and np.isnan(p.lower)
    r = feed_ratio_interval(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, 900.0, 100e5, "N2", 0.95,
                            ratio=("H2", "N2"), ratio_range=(1, 5), method=method, samples=20)
    assert r.status == "not reachable" and np.isnan(r.ratio)


def test_case_with_an_unreachable_pressure_target_and_uncertainty_runs():
    text = (ROOT / "cases" / "ammonia_loop_pressure_options.yaml").read_text()
    text = text.replace('      search: {low: "80 bar", high: "400 bar"}', '      search: {low: "80 bar", high: "90 bar"}')
    text = text.replace("samples: 400", "samples: 20")
    case = parse_case(text, "x.yaml")
    result = run_case(case, coarse=True)
    targets = result.table("targets")
    row = next(r for r in targets.rows if r[1] == "pressure")
    assert row[targets.columns.index("status")] == "not reachable"
    assert any(c.kind == "not-reachable" for c in result.cautions)


def test_a_range_end_answer_is_marked_in_the_targets_table_and_cautions():
    """1 % N2 conversion at 100-200 bar is exceeded over the whole 400-500 degC window (ammonia
    equilibrium there is 10-30 % conversion; Larson and Dodge 1923, from memory): the answer is
    the end of the search range, and the report says so."""
    text = (ROOT / "cases" / "ammonia_loop_pressure_options.yaml").read_text()
    text = text.replace('      conversion: "25 %"\n      solve_for: temperature\n',
                        '      conversion: "1 %"\n      solve_for: temperature\n'
                        '      search: {low: "400 degC", high: "500 degC"}\n', 1)
    text = text.replace("samples: 400", "samples: 20")
    result = run_case(parse_case(text, "x.yaml"), coarse=True)
    targets = result.table("targets")
    statuses = [r[targets.columns.index("status")] for r in targets.rows if r[1] == "temperature"]
    assert statuses and set(statuses) == {"search-range end"}
    assert any(c.kind == "range-end" for c in result.cautions)
