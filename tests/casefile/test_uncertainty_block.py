"""The data-uncertainty switch of a case file (``studies.uncertainty``) end to end: the
ammonia demo's report, tables and figure, and a zero-uncertainty case.

Outside references used here:
* the GUM law of propagation of uncertainty for independent species data (JCGM 100:2008,
  5.1.2): u²(ln K) = Σ ν² (u²(ΔfH°)/(RT)² + u²(S°)/R²), each datum's share of the variance
  being its term over the sum;
* van 't Hoff, d ln K/dT = ΔrH°/(RT²): with one reaction, a fixed pressure and feed, the
  conversion depends on the data only through ln K, so the temperature for a target
  conversion moves by u(T) = u(ln K)/|d ln K/dT| (implicit-function rule);
* JCGM 101:2008 (Monte Carlo): the relative standard error of a sample standard deviation
  of N normal draws is 1/sqrt(2(N − 1)), 3.5 % at N = 400 (a textbook result, from memory);
* CODATA key values (J. D. Cox, D. D. Wagman, V. A. Medvedev, 1989; from memory):
  u(ΔfH°(NH3)) = 0.35 kJ/mol, u(S°(NH3)) = 0.05, u(S°(H2)) = 0.003, u(S°(N2)) = 0.004 J/(mol K).
"""
from __future__ import annotations

import csv
import math
import pathlib
import re
from html.parser import HTMLParser

import pytest

from eqdesign.solve.casefile.reader import load_case, parse_case
from eqdesign.solve.report.html import build_report
from eqdesign.solve.report.output import csv_text, output_files
from eqdesign.solve.report.run import run_case
from eqdesign.thermo import R, Reaction

ROOT = pathlib.Path(__file__).resolve().parents[2]
AMMONIA = ROOT / "cases" / "ammonia_loop_pressure_options.yaml"
NU = {"N2": -1.0, "H2": -3.0, "NH3": 2.0}                   # N2 + 3 H2 = 2 NH3
CODATA_U = {"ΔfH°(NH3)": 350.0, "S°(NH3)": 0.05, "S°(H2)": 0.003, "S°(N2)": 0.004}   # (from memory)


def rows_of(table) -> list[dict]:
    return list(csv.DictReader(csv_text(table).splitlines()))


def gum_terms(T: float) -> dict:
    """Variance terms of ln K [-] for ammonia synthesis at T [K] (GUM, independent data)."""
    return {"ΔfH°(NH3)": (NU["NH3"] * CODATA_U["ΔfH°(NH3)"] / (R * T)) ** 2,
            "S°(NH3)": (NU["NH3"] * CODATA_U["S°(NH3)"] / R) ** 2,
            "S°(H2)": (NU["H2"] * CODATA_U["S°(H2)"] / R) ** 2,
            "S°(N2)": (NU["N2"] * CODATA_U["S°(N2)"] / R) ** 2}


class _Page(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags: list[str] = []
        self.refs: list[tuple] = []
        self.h2: list[str] = []
        self._h2 = False

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self._h2 = tag == "h2"
        for name, value in attrs:
            if name in ("src", "href", "srcset", "data", "action", "background", "poster"):
                self.refs.append((tag, name, value or ""))

    def handle_endtag(self, tag):
        self._h2 = False if tag == "h2" else self._h2

    def handle_data(self, data):
        if self._h2:
            self.h2.append(data.strip())


@pytest.fixture(scope="module")
def ammonia():
    """The ammonia demo (uncertainty switched on) at reduced resolution: the band and the
    intervals do not depend on the thinning of the map."""
    case = load_case(AMMONIA)
    result = run_case(case, coarse=True)
    files = output_files(result)
    return case, result, files["report.html"].decode("utf-8"), files


def test_the_demo_case_switches_the_uncertainty_on(ammonia):
    case, result, _, _ = ammonia
    u = case.studies.uncertainty
    assert (u.method, u.samples, u.seed, u.level) == ("monte-carlo", 400, 1, 0.95)
    assert result.uncertainty is not None and len(result.uncertainty.intervals) == len(case.pressures)
    assert result.flagged == 0                                  # every draw converged


def test_report_states_method_draws_seed_level_assumption_and_ranking(ammonia):
    _, result, text, _ = ammonia
    page = _Page()
    page.feed(text)
    page.close()
    assert "Uncertainty from the species data" in page.h2
    a, b = text.index("<h2>Uncertainty from the species data</h2>"), text.index("<h2>Data provenance</h2>")
    section = text[a:b]
    for fragment in ("Monte Carlo propagation of distributions (JCGM 101:2008", "400 draws of every uncertain datum",
                     "random seed</td><td class=\"text long\">1 (numpy default_rng",
                     "from the 2.5th to the 97.5th percentile",
                     "data of different species treated as independent",
                     "Sensitivity ranking: which species' data move the answers most",
                     "CODATA Key Values for Thermodynamics", "Caution."):
        assert fragment in section, fragment
    # the design temperature at 150 bar with its interval, as the report words it
    e = next(x for x in result.uncertainty.intervals if x["P"] == 150e5)
    quoted = (f"<b>{e['T'] - 273.15:.1f} degC</b> ({e['T']:.1f} K); 95 % interval "
              f"<b>{e['lower'] - 273.15:.1f} degC to {e['upper'] - 273.15:.1f} degC</b>")
    assert quoted in section
    assert e["lower"] < e["T"] < e["upper"] and e["falls"] is True
    assert f"at or below {e['lower'] - 273.15:.1f} degC the target is reached in at least 97.5 % of the data draws" in section
    # the ranking puts ΔfH°(NH3) first
    top = rows_of(result.table("uncertainty_ranking_temperature"))[0]
    assert top["datum"] == "ΔfH°(NH3)" and top["species"] == "NH3" and top["source of u"] == "key value CODATA1989"


def test_report_still_parses_and_refers_to_no_external_file(ammonia):
    _, _, text, _ = ammonia
    page = _Page()
    page.feed(text)
    page.close()
    assert page.tags[0] == "html"
    assert not {"script", "link", "iframe", "object", "embed"} & set(page.tags)
    for tag, name, value in page.refs:                       # only embedded images, no link of any kind
        assert value.startswith("data:image/png;base64,"), (tag, name, value[:60])
    assert "href=" not in text and "url(" not in text and "@import" not in text
    a, b = text.index("<h2>Uncertainty from the species data</h2>"), text.index("<h2>Data provenance</h2>")
    for bad in ("http:", "https:", "file://", "<svg", ".csv\""):     # the section cites in words only
        assert bad not in text[a:b], bad


def test_target_answers_carry_interval_columns(ammonia):
    _, _, _, files = ammonia
    rows = list(csv.DictReader(files["targets.csv"].decode("utf-8").splitlines()))
    interval_cols = ["T lower 95 % [degC]", "T upper 95 % [degC]", "u(T) [K]", "draws beyond search range [%]"]
    assert set(interval_cols) <= set(rows[0])
    temperature_rows = [r for r in rows if r["solve for"] == "temperature"]
    assert len(temperature_rows) == 4
    for r in temperature_rows:
        lo, T, hi = float(r["T lower 95 % [degC]"]), float(r["answer [value]"]), float(r["T upper 95 % [degC]"])
        assert lo < T < hi and 5.0 < hi - lo < 40.0 and float(r["u(T) [K]"]) > 0
        assert float(r["draws beyond search range [%]"]) == 0.0
    pressure_row = next(r for r in rows if r["solve for"] == "pressure")
    assert all(pressure_row[c] == "" for c in interval_cols[:3])         # no temperature interval there...
    lo, P, hi = (float(pressure_row[k]) for k in ("P lower 95 % [bar]", "answer [value]", "P upper 95 % [bar]"))
    assert lo < P < hi and 0.0 < float(pressure_row["u(ln P) [-]"]) < 0.2   # ...but a pressure interval
    assert all(r["P lower 95 % [bar]"] == "" for r in temperature_rows)


def test_interval_width_agrees_with_gum_and_van_t_hoff(ammonia):
    """Monte Carlo u(T) against u(ln K)/|d ln K/dT| at the equilibrium temperature (answer +
    10 K approach): within 15 % (about four standard errors at 400 draws, plus curvature)."""
    case, result, _, _ = ammonia
    data = {r["datum"]: float(r["u [unit of u]"]) for r in rows_of(result.table("uncertainty_data"))}
    for label, u in CODATA_U.items():
        assert data[label] == pytest.approx(u), label            # the defaults are the CODATA values
    rxn = Reaction.parse("N2 + 3 H2 = 2 NH3", case.database)
    for e in result.uncertainty.intervals:
        T_eq = e["T"] + case.approach                          # exothermic: equilibrium taken hotter
        u_lnK = math.sqrt(sum(gum_terms(T_eq).values()))
        slope = abs(float(rxn.delta_h(T_eq)) / (R * T_eq ** 2))
        assert e["u"] == pytest.approx(u_lnK / slope, rel=0.15), e["P"]


def test_ranking_shares_agree_with_gum(ammonia):
    """Shares of the variance of the design temperature: the GUM terms of ln K, averaged over
    the four pressure options (a single reaction: the conversion sees the data through ln K)."""
    case, result, _, _ = ammonia
    expected: dict = {}
    for e in result.uncertainty.intervals:
        terms = gum_terms(e["T"] + case.approach)
        total = sum(terms.values())
        for k, v in terms.items():
            expected[k] = expected.get(k, 0.0) + 100.0 * v / total / len(result.uncertainty.intervals)
    rows = rows_of(result.table("uncertainty_ranking_temperature"))
    got = {r["datum"]: float(r["share of variance [%]"]) for r in rows}
    assert [r["datum"] for r in rows] == ["ΔfH°(NH3)", "S°(NH3)", "S°(H2)", "S°(N2)"]   # inert CH4, Ar left out
    for k, v in expected.items():
        assert got[k] == pytest.approx(v, rel=1e-3, abs=1e-4), k


def test_band_brackets_the_map_and_is_drawn_in_greyscale(ammonia):
    case, result, _, _ = ammonia
    band = rows_of(result.table("conversion_band"))
    conv = {round(float(r["T [degC]"]), 6): r for r in rows_of(result.table("conversion_by_temperature"))}
    assert len(band) == len(conv) * len(case.pressures)
    for r in band:
        x, lo, hi = (float(r[f"conversion N2{s} [%]"]) for s in ("", " lower 95 %", " upper 95 %"))
        assert lo < x < hi
        m = conv[round(float(r["T [degC]"]), 6)]                 # the band's nominal is the map's value
        assert x == pytest.approx(float(m[f"conversion N2 at {float(r['P [bar]']):g} bar [%]"]), rel=1e-9)
    fig = next(f for f in result.figures if f.name == "conversion_vs_temperature")
    ax = fig.figure.axes[0]
    hatched = [c for c in ax.collections if c.get_hatch() == "////"]
    assert len(hatched) == len(case.pressures)                  # one hatched band per pressure option
    assert len(ax.containers) == len(case.pressures)            # an error bar on every design temperature
    labels = ax.get_legend().get_texts()
    assert sum("data uncertainty: 95 % interval" in t.get_text() for t in labels) == 1
    assert "Hatched grey bands" in fig.caption and "Diamonds with whiskers" in fig.caption


def test_new_csv_columns_state_their_units(ammonia):
    _, _, _, files = ammonia
    text_columns = {"question", "solve for", "fixed condition", "answer unit", "status", "message", "datum", "species",
                    "unit of u", "source of u"}
    for name in ("targets.csv", "temperature_intervals.csv", "conversion_band.csv",
                 "conversion_band_by_temperature.csv", "uncertainty_ranking_temperature.csv",
                 "uncertainty_ranking_conversion.csv", "uncertainty_data.csv"):
        header = next(csv.reader(files[name].decode("utf-8").splitlines()))
        for col in header:
            assert "[" in col or col in text_columns, (name, col)


ZERO_CASE = """\
layout: eqdesign-case/1
job:
  title: "Zero data uncertainty"
chemistry:
  species: [N2, H2, NH3]
  key: N2
  reactions: {synthesis: "N2 + 3 H2 = 2 NH3"}
  approach: "5 K"
feed:
  composition: {N2: 1, H2: 3}
conditions:
  temperature: {low: "400 degC", high: "560 degC", points: 5}
  pressure: ["150 bar", "200 bar"]
studies:
  conversion_map: {}
  targets:
    - {conversion: "20 %", solve_for: temperature}
  uncertainty:
    method: METHOD
    samples: 20
    overrides:
      N2: {formation_enthalpy: "0 kJ/mol", entropy: "0 J/(mol K)"}
      H2: {formation_enthalpy: "0 kJ/mol", entropy: "0 J/(mol K)"}
      ammonia: {formation_enthalpy: "0 kJ/mol", entropy: "0 J/(mol K)"}
output: {plots: false}
"""


@pytest.mark.parametrize("method", ["monte-carlo", "linear"])
def test_zero_uncertainty_gives_a_zero_width_interval_through_the_case(method):
    """With every standard uncertainty zero each draw is the nominal state: a zero-width
    interval and band (by definition), to the root tolerance (1e-7 K) and the solver's."""
    result = run_case(parse_case(ZERO_CASE.replace("METHOD", method), "zero.yaml"))
    rows = [r for r in rows_of(result.table("targets")) if r["solve for"] == "temperature"]
    assert len(rows) == 2
    for r in rows:
        lo, hi, T = float(r["T lower 95 % [degC]"]), float(r["T upper 95 % [degC]"]), float(r["answer [value]"])
        assert hi - lo < 1e-6 and abs(0.5 * (lo + hi) - T) < 1e-2 and float(r["u(T) [K]"]) < 1e-6
    for r in rows_of(result.table("conversion_band")):
        assert float(r["conversion N2 upper 95 % [%]"]) - float(r["conversion N2 lower 95 % [%]"]) < 1e-8
    assert {d.origin for d in result.uncertainty.data} == {"user"}
    assert result.table("uncertainty_ranking_temperature").rows == []     # nothing moves the answer
    text = build_report(result)
    assert "Uncertainty from the species data" in text and ("draws" in text)
    assert re.search(r"95 % interval <b>[\d.]+ degC to [\d.]+ degC</b>", text)


def test_feed_ratio_and_pressure_answers_get_intervals_through_the_case():
    """The shift demo case with the uncertainty switched on (linearised): its steam-to-CO
    answer carries an interval that brackets it (definition of the interval)."""
    text = pathlib.Path("cases/shift_converters.yaml").read_text(encoding="utf-8")
    text = text.replace("  staged_beds:", "  uncertainty: {method: linear}\n  staged_beds:", 1)
    result = run_case(parse_case(text, "shift_with_uncertainty.yaml"), coarse=True)
    row = next(r for r in rows_of(result.table("targets")) if r["solve for"] != "temperature")
    lo, value, hi = (float(row[k]) for k in ("ratio lower 95 % [mol/mol]", "answer [value]",
                                              "ratio upper 95 % [mol/mol]"))
    assert lo < value < hi and 0.0 < float(row["u(ln ratio) [-]"]) < 0.5
    assert any("u(ln ratio)" in f for f in result.findings)
