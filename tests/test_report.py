"""The design-review report: self-contained HTML, the sections a review needs, CSV units."""
from __future__ import annotations

import csv
import math
import pathlib
from html.parser import HTMLParser

import numpy as np
import pytest

from eqdesign.solve.report import figures as plots
from eqdesign.solve.casefile.reader import load_case, parse_case
from eqdesign.solve.report.html import build_report, format_cell
from eqdesign.solve.report.output import csv_text, output_files
from eqdesign.solve.report.run import run_case

ROOT = pathlib.Path(__file__).resolve().parents[1]

K_CASE = """\
layout: eqdesign-case/1
job:
  title: "K check"
  scenario: "Invented: a K table through the case file."
chemistry:
  species: [N2, H2, NH3]
  key: N2
  reactions: {synthesis: "N2 + 3 H2 = 2 NH3"}
feed:
  composition: {N2: 1, H2: 3}
conditions:
  temperature: {low: "700 K", high: "800 K", points: 3}
  pressure: ["100 bar"]
studies:
  conversion_map: {composition_at: "150 bar"}
  carbon_limit: false
"""


class _Collector(HTMLParser):
    def __init__(self):
        super().__init__()
        self.refs: list[tuple[str, str, str]] = []
        self.tags: list[str] = []
        self.headings: list[str] = []
        self._in_h2 = False
        self.style_text = ""
        self._in_style = False

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        for name, value in attrs:
            if name in ("src", "href", "srcset", "data", "action", "background", "poster"):
                self.refs.append((tag, name, value or ""))
        self._in_h2 = tag == "h2"
        self._in_style = tag == "style"

    def handle_endtag(self, tag):
        if tag == "h2":
            self._in_h2 = False
        if tag == "style":
            self._in_style = False

    def handle_data(self, data):
        if self._in_h2:
            self.headings.append(data.strip())
        if self._in_style:
            self.style_text += data


@pytest.fixture(scope="module")
def reformer():
    """The steam-reformer demo (carbon limit, feed ratios, targets) at reduced resolution."""
    case = load_case(ROOT / "cases" / "steam_reformer_carbon.yaml")
    result = run_case(case, coarse=True)
    return result, build_report(result)


def test_report_parses_and_is_self_contained(reformer):
    _, text = reformer
    p = _Collector()
    p.feed(text)
    p.close()
    assert p.tags[0] == "html"
    assert "script" not in p.tags and "link" not in p.tags and "iframe" not in p.tags
    imgs = [v for tag, name, v in p.refs if tag == "img"]
    assert len(imgs) >= 4
    for tag, name, value in p.refs:
        assert value.startswith("data:image/png;base64,"), (tag, name, value[:60])
    for bad in ("url(", "@import", "http://", "https://", "file:"):
        assert bad not in p.style_text
    assert 'src="http' not in text and 'href="' not in text


def test_report_has_the_sections_of_a_design_review(reformer):
    _, text = reformer
    p = _Collector()
    p.feed(text)
    for heading in ("Findings", "Inputs", "Assumptions", "Results", "Figures", "Data provenance",
                    "Solver diagnostics", "Cautions"):
        assert heading in p.headings, heading
    assert "1 bar" in text and "approach" in text
    assert "licensed engineers" in text and "process-safety" in text and "run away" in text
    assert "flammable" in text and "Toxic gases" in text
    assert "REDUCED (quick look)" in text                           # the reduced resolution is declared
    assert "NASA TM-4513" in text                                    # provenance of the species data
    assert "C(gr)" in text                                           # graphite data used by the carbon limit


def test_every_csv_column_states_its_unit(reformer):
    result, _ = reformer
    files = output_files(result)
    csvs = [name for name in files if name.endswith(".csv")]
    assert {"carbon_limit.csv", "targets.csv", "data_provenance.csv", "solver_diagnostics.csv"} <= set(csvs)
    text_columns = {"question", "solve for", "fixed condition", "answer unit", "message", "species", "name", "phase",
                    "data source", "note", "extrapolated", "study", "status", "gas model", "bed"}
    for name in csvs:
        header = next(csv.reader(files[name].decode("utf-8").splitlines()))
        for col in header:
            assert "[" in col or col in text_columns, (name, col)


def test_figures_are_slide_sized_png_and_svg(reformer):
    result, _ = reformer
    fig = result.figures[0].figure
    assert tuple(fig.get_size_inches()) == pytest.approx((10.0, 5.6))
    png = plots.render(fig, "png")
    svg = plots.render(fig, "svg")
    assert png[:8] == b"\x89PNG\r\n\x1a\n" and b"<svg" in svg[:400]
    for f in result.figures:                                       # every axis states a unit
        for ax in f.figure.axes:
            if ax.get_xlabel():
                assert "[" in ax.get_xlabel() and "[" in ax.get_ylabel(), f.name


def test_series_differ_by_line_style_and_marker_not_only_colour():
    styles = [plots.series_style(i) for i in range(8)]
    assert len({str(s["linestyle"]) for s in styles}) == 8
    assert len({s["marker"] for s in styles}) == 8


def test_k_table_against_nist_janaf(tmp_path):
    """NIST-JANAF (Chase 1998): ΔfG°(NH3, 700 K) = 27.190 kJ/mol (from memory), so
    K(700 K) = exp(-2 × 27190 / (R × 700)) = 8.74e-5 for N2 + 3 H2 = 2 NH3; the report's
    K table (NASA TM-4513 data) must agree within 1 %."""
    case = parse_case(K_CASE, "k.yaml")
    result = run_case(case)
    rows = list(csv.DictReader(csv_text(result.table("equilibrium_constants")).splitlines()))
    row = next(r for r in rows if float(r["T [K]"]) == pytest.approx(700.0))
    K_janaf = math.exp(-2 * 27190.0 / (8.314462618 * 700.0))
    assert float(row["K synthesis [-]"]) == pytest.approx(K_janaf, rel=0.01)
    assert float(row["ln K synthesis [-]"]) == pytest.approx(np.log(float(row["K synthesis [-]"])), rel=1e-9)
    # a study switched off with 'false'; the composition plot at a pressure that is not an option
    assert case.studies.carbon_limit is None
    assert "Outlet composition at 150 bar" in [f.title for f in result.figures]


def test_format_cell():
    assert format_cell(float("nan")) == "–"
    assert format_cell(True) == "yes"
    assert format_cell(0.123456) == "0.12346"
    assert format_cell(1.5e-6) == "1.5000e-06"
    assert format_cell(723.15) == "723.15"


def test_supplied_species_appear_with_their_source():
    text = K_CASE.replace("NH3", "NH3k").replace("N2 + 3 H2 = 2 NH3k", "N2 + 3 H2 = 2 NH3k") + """\
user_species:
  NH3k:
    source: "invented reaction data for the report test"
    standard_pressure: 1 bar
    reaction_data: {reaction: "N2 + 3 H2 = 2 NH3k", enthalpy: "-105 kJ/mol", K: 1.0e-4, at: "700 K"}
"""
    result = run_case(parse_case(text, "k.yaml"), coarse=True)
    html_text = build_report(result)
    assert "Species data supplied in the case file" in html_text
    assert "invented reaction data for the report test (supplied in the case file)" in html_text
    prov = {r[0]: r for r in result.table("data_provenance").rows}
    assert prov["NH3k"][3].endswith("(supplied in the case file)")
