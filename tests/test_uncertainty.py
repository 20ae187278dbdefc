"""Propagation of data uncertainty (eqdesign.solve.uncertainty).

Outside references used here:
* the GUM law of propagation of uncertainty (JCGM 100:2008, section 5.1.2) for the
  analytic spread of ln K, ``u²(ln K) = Σ ν_i² (u²(ΔfH°_i)/(RT)² + u²(S°_i)/R²)`` for
  independent species data, and for the sensitivity shares;
* JCGM 101:2008 (Monte Carlo propagation) for the statistical tolerances: the relative
  standard error of a sample standard deviation from N normal draws is 1/sqrt(2(N − 1))
  (a textbook result, from memory);
* CODATA key values (Cox, Wagman, Medvedev 1989) for the bundled default uncertainties
  (values from memory, as marked in data/uncertainty_defaults.yaml).
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from eqdesign.solve.studies.uncertainty import ASSUMPTIONS, ln_K_uncertainty, parameter_map, propagate_equilibrium, ranking_rows, reaction_level_ln_K_uncertainty
from eqdesign.solve.studies.uncertainty import CAUTION
from eqdesign.thermo.data_uncertainty import UncertaintyDefaults, UncertaintyInputError, species_uncertainty
from eqdesign.solve.report.uncertainty_html import html_section
from eqdesign.solve.casefile.uncertainty_settings import settings_from_mapping
from eqdesign.solve.studies.intervals import temperature_interval
from eqdesign.thermo import R, ReactionLevelData, SpeciesDatabase, bundled_database

AMMONIA = ["N2", "H2", "NH3"]
FEED = {"N2": 1.0, "H2": 3.0}
NU = {"N2": -1.0, "H2": -3.0, "NH3": 2.0}      # N2 + 3 H2 = 2 NH3
ZERO = {n: {"formation_enthalpy": 0.0, "entropy": 0.0} for n in AMMONIA}


def scaled(factor: float) -> dict:
    """Explicit uncertainties (invented, of realistic size) times ``factor``."""
    base = {"N2": (0.0, 0.2), "H2": (0.0, 0.1), "NH3": (400.0, 0.5)}
    return {n: {"formation_enthalpy": factor * h, "entropy": factor * s} for n, (h, s) in base.items()}


def ln_K_sigma(T: float, u: dict) -> float:
    """GUM, independent species data: u²(ln K) = Σ ν² (u_H²/(RT)² + u_S²/R²)."""
    return math.sqrt(sum(NU[n] ** 2 * ((v["formation_enthalpy"] / (R * T)) ** 2 + (v["entropy"] / R) ** 2)
                         for n, v in u.items()))


# ------------------------------------------------------------------ uncertainty data
def test_defaults_file_reads_and_documents_every_class():
    """Every class of the bundled defaults states its basis (a source or 'common practice, no source')."""
    d = UncertaintyDefaults.bundled()
    assert d.classes and all(c["basis"] for c in d.classes)
    assert "CODATA1989" in d.references


def test_defaults_by_class_and_key_value(db):
    """Key values (CODATA 1989, from memory) for bundled records; class defaults otherwise;
    ΔfH° of an element in its reference state is zero by definition."""
    d = UncertaintyDefaults.bundled()
    assert d.lookup(db["NH3"])["formation_enthalpy"] == (350.0, "key value CODATA1989")
    assert d.lookup(db["H2O"])["formation_enthalpy"][0] == 40.0
    assert d.lookup(db["He"])["formation_enthalpy"][0] == 0.0             # reference state, not a key value
    assert d.lookup(db["C(gr)"])["formation_enthalpy"][0] == 0.0
    assert "radical" in d.lookup(db["OH"])["formation_enthalpy"][1]          # 9 electrons
    assert "small" in d.lookup(db["C3H8"])["formation_enthalpy"][1]
    assert "large" in d.lookup(db["n-C8H18"])["formation_enthalpy"][1]
    assert "condensed compound" in d.lookup(db["CaCO3(s)"])["formation_enthalpy"][1]
    # every bundled species gets both uncertainties from the defaults
    for sp in db:
        assert set(species_uncertainty(sp)) == {"formation_enthalpy", "entropy"}


def test_species_file_block_and_user_values_take_precedence():
    """Order: user > species file's `uncertainty:` block > defaults (invented species data)."""
    text = """
schema: eqdesign.species/1
references:
  OWN: {cite: "invented demo data", standard_pressure_Pa: 100000.0}
species:
  NH3:
    formula: NH3
    phase: gas
    thermo: {model: formation-data, formation_enthalpy: -45940.0, entropy: 192.77, cp: [35.0],
             T_bounds: [298.15, 1500.0], reference: OWN}
    uncertainty: {formation_enthalpy: "0.2 kJ/mol", entropy: 0.3, reference: OWN}
"""
    sp = SpeciesDatabase.from_text(text)["NH3"]
    u = species_uncertainty(sp)
    assert (u["formation_enthalpy"].u, u["entropy"].u) == (200.0, 0.3)
    assert u["entropy"].origin == "species file (OWN)"
    u = species_uncertainty(sp, overrides={"entropy": "1 J/(mol K)"})
    assert (u["formation_enthalpy"].u, u["entropy"].u, u["entropy"].origin) == (200.0, 1.0, "user")
    # not the bundled record: the CODATA key value does not apply, the class does
    bare = SpeciesDatabase.from_text(text.replace('    uncertainty: {formation_enthalpy: "0.2 kJ/mol", '
                                                  'entropy: 0.3, reference: OWN}\n', ""))["NH3"]
    assert species_uncertainty(bare)["formation_enthalpy"].origin.startswith("class: small gas")


def test_override_errors_name_the_key():
    """Messages a user reads are checked word for word (project style)."""
    with pytest.raises(UncertaintyInputError) as err:
        parameter_map(AMMONIA, overrides={"NH3": {"formation_enthalpy": "-1 kJ/mol"}})
    assert str(err.value) == ("overrides.NH3.formation_enthalpy: a standard uncertainty must be finite and "
                              "non-negative, got '-1 kJ/mol'")
    with pytest.raises(UncertaintyInputError) as err:
        parameter_map(AMMONIA, overrides={"NH3": {"reaction_enthalpy": 1000.0}})
    assert str(err.value) == "overrides.NH3.reaction_enthalpy: NH3 takes formation_enthalpy and entropy"
    with pytest.raises(UncertaintyInputError, match="unknown species 'NH4'"):
        parameter_map(AMMONIA, overrides={"NH4": {"entropy": 1.0}})


# ------------------------------------------------------------------ K(T)
def test_ln_K_spread_equals_analytic_gum_formula():
    """GUM (JCGM 100:2008, 5.1.2): u²(ln K) = Σ ν² (u_H²/(RT)² + u_S²/R²); ln K is linear in
    the data, so the propagation is exact."""
    u = scaled(1.0)
    T = np.array([500.0, 700.0, 900.0])
    r = ln_K_uncertainty("N2 + 3 H2 = 2 NH3", T, overrides=u)
    expected = [ln_K_sigma(t, u) for t in T]
    np.testing.assert_allclose(r.standard_uncertainty, expected, rtol=1e-12)
    np.testing.assert_allclose(np.log(r.K_upper) - r.ln_K, 1.959963984540054 * np.asarray(expected), rtol=1e-9)


def test_monte_carlo_through_the_solver_reproduces_ln_K_spread():
    """The equilibrium compositions of the Monte Carlo draws satisfy ln Q = ln K of the drawn
    data, so the sample spread of ln Q = Σ ν ln(y P/P°) must match the GUM value of u(ln K)
    within the sampling error of a standard deviation, 1/sqrt(2(N−1)) (from memory): 4 %
    allows about 3.6 standard errors at N = 4000."""
    u = scaled(3.0)
    T, P = 700.0, 50e5
    r = propagate_equilibrium(AMMONIA, FEED, T, P, key="N2", samples=4000, seed=7, overrides=u)
    y = {n: r.sample_values[f"y {n}"] for n in AMMONIA}
    ln_Q = sum(NU[n] * np.log(y[n] * P / 1e5) for n in AMMONIA)
    assert np.std(ln_Q, ddof=1) == pytest.approx(ln_K_sigma(T, u), rel=0.04)


def test_reaction_level_data_ln_K_uncertainty():
    """ln K = −ΔrH°/RT + ΔrS°/R: u² = u_H²/(RT)² + u_S²/R² − 2 r u_H u_S/(R² T) (GUM 5.2.2)."""
    d = ReactionLevelData.from_K(K_ref=2.0, T_ref=500.0, delta_h=-50e3, text="A = B")
    T = 650.0
    r0 = reaction_level_ln_K_uncertainty(d, T, u_delta_h="3 kJ/mol", u_delta_s=2.0)
    assert r0.standard_uncertainty == pytest.approx(math.hypot(3000 / (R * T), 2.0 / R), rel=1e-12)
    r1 = reaction_level_ln_K_uncertainty(d, T, u_delta_h=3000.0, u_delta_s=2.0, correlation=1.0)
    assert r1.standard_uncertainty == pytest.approx(abs(3000 / (R * T) - 2.0 / R), rel=1e-12)
    assert r0.ln_K == pytest.approx(float(d.ln_K(T)))


def test_reaction_derived_species_carries_only_its_reaction_uncertainty():
    """A species defined by reaction data (Hess's law over its partners) gives that reaction a
    K(T) independent of the partners' data: u(ln K) is u(ΔrH°), u(ΔrS°) alone (GUM)."""
    cases = pytest.importorskip("eqdesign.thermo.reactions")
    db = bundled_database()
    level = ReactionLevelData.from_K(K_ref=1e-3, T_ref=700.0, delta_h=-92e3, text="N2 + 3 H2 = 2 AMX")
    model = cases.ReactionDerivedModel(level, ((db["N2"], -1.0), (db["H2"], -3.0)), 2.0)
    from eqdesign.thermo import Species
    amx = Species(name="AMX", formula="NH3", elements={"N": 1.0, "H": 3.0}, phase="gas", molar_mass=17.031,
                  model=model, reference="invented demo data")
    db2 = db.extended([amx])
    over = {"AMX": {"reaction_enthalpy": 2000.0, "reaction_entropy": 1.5}, "N2": {"entropy": 5.0}}
    r = ln_K_uncertainty("N2 + 3 H2 = 2 AMX", 800.0, database=db2, overrides=over)
    assert r.standard_uncertainty == pytest.approx(math.hypot(2000 / (R * 800), 1.5 / R), rel=1e-10)
    labels = [d.label for d in parameter_map(["N2", "H2", "AMX"], database=db2, overrides=over).data]
    assert labels[-2:] == ["ΔrH°(AMX)", "ΔrS°(AMX)"]


# ------------------------------------------------------------------ forward propagation
def test_zero_uncertainty_gives_zero_band():
    """With u = 0 every draw is the nominal state: the band has zero width (definition), to
    within the solver's convergence tolerance (1e-11 in ln n; results of the batched solver
    differ at the 1e-12 level with the batch they are solved in)."""
    T = np.array([650.0, 750.0, 850.0])
    for method in ("monte-carlo", "linear"):
        r = propagate_equilibrium(AMMONIA, FEED, T, "200 bar", key="N2", method=method, samples=50, overrides=ZERO)
        for q in r.quantities:
            np.testing.assert_allclose(r.lower[q], r.nominal[q], rtol=0, atol=1e-10)
            np.testing.assert_allclose(r.upper[q], r.nominal[q], rtol=0, atol=1e-10)
            np.testing.assert_allclose(r.standard_uncertainty[q], 0.0, atol=1e-10)


def test_monte_carlo_agrees_with_linearised_for_small_uncertainty():
    """For small u the response is linear over the spread, so the Monte Carlo standard
    deviation equals the GUM linearised value up to sampling error, 1/sqrt(2(N−1)) = 1.6 %
    at N = 2000 (from memory); 6 % allows 3.8 standard errors plus finite-difference error.
    The MC median sits on the nominal value within 3 standard errors of a median
    (1.25 σ/sqrt(N), from memory)."""
    u = scaled(0.1)
    T = np.array([650.0, 750.0, 850.0])
    mc = propagate_equilibrium(AMMONIA, FEED, T, "200 bar", key="N2", samples=2000, seed=3, overrides=u)
    lin = propagate_equilibrium(AMMONIA, FEED, T, "200 bar", key="N2", method="linear", overrides=u)
    for q in ("conversion N2", "y NH3"):
        np.testing.assert_allclose(mc.standard_uncertainty[q], lin.standard_uncertainty[q], rtol=0.06)
        np.testing.assert_allclose(mc.median[q], lin.nominal[q], atol=3 * 1.25 * lin.standard_uncertainty[q].max()
                                   / math.sqrt(2000))
        np.testing.assert_allclose(mc.upper[q] - mc.lower[q], lin.upper[q] - lin.lower[q], rtol=0.12)


def test_fixed_seed_reproduces_exactly():
    """numpy.random.default_rng(seed): the same seed gives bit-identical results."""
    kw = dict(key="N2", samples=60, overrides=scaled(1.0))
    a = propagate_equilibrium(AMMONIA, FEED, [700.0, 800.0], "150 bar", seed=11, **kw)
    b = propagate_equilibrium(AMMONIA, FEED, [700.0, 800.0], "150 bar", seed=11, **kw)
    c = propagate_equilibrium(AMMONIA, FEED, [700.0, 800.0], "150 bar", seed=12, **kw)
    for q in a.quantities:
        assert np.array_equal(a.sample_values[q], b.sample_values[q])
        assert np.array_equal(a.lower[q], b.lower[q]) and np.array_equal(a.upper[q], b.upper[q])
    assert not np.array_equal(a.sample_values["conversion N2"], c.sample_values["conversion N2"])
    ta = temperature_interval(AMMONIA, FEED, "200 bar", "N2", 0.2, T_range=(500, 1000), samples=40, seed=5)
    tb = temperature_interval(AMMONIA, FEED, "200 bar", "N2", 0.2, T_range=(500, 1000), samples=40, seed=5)
    assert np.array_equal(ta.sample_T, tb.sample_T)


def test_linear_shares_equal_ln_K_shares_for_a_single_reaction():
    """With one reaction the conversion depends on the data only through ln K, so each datum's
    share of Var X equals its share of Var ln K: ν² u²/(RT)² for ΔfH°, ν² u²/R² for S° (GUM)."""
    u = scaled(1.0)
    T = 760.0
    r = propagate_equilibrium(AMMONIA, FEED, T, "200 bar", key="N2", method="linear", overrides=u)
    terms = {}
    for n, v in u.items():
        terms[f"ΔfH°({n})"] = (NU[n] * v["formation_enthalpy"] / (R * T)) ** 2
        terms[f"S°({n})"] = (NU[n] * v["entropy"] / R) ** 2
    total = sum(terms.values())
    for e in r.ranking():
        assert e.share == pytest.approx(terms[e.datum.label] / total, abs=1e-6)


def test_ranking_puts_the_dominant_species_first():
    """Constructed case: S°(H2) given u = 3 J/(mol K) (×3 in the reaction) against 50 J/mol on
    ΔfH°(NH3): by the GUM shares S°(H2) must rank first and carry > 95 % of the variance."""
    over = {"N2": {"entropy": 0.01}, "H2": {"entropy": 3.0}, "NH3": {"formation_enthalpy": 50.0, "entropy": 0.01}}
    r = propagate_equilibrium(AMMONIA, FEED, 720.0, "100 bar", key="N2", method="linear", overrides=over)
    top = r.ranking()
    assert top[0].datum.label == "S°(H2)" and top[0].share > 0.95
    assert r.ranking(by="species")[0][1] == "H2"
    t = temperature_interval(AMMONIA, FEED, "100 bar", "N2", 0.2, T_range=(500, 1000), method="linear",
                             overrides=over)
    assert t.ranking()[0].datum.label == "S°(H2)"
    rows = ranking_rows(t.ranking(), top=2)
    assert list(rows[0])[:4] == ["rank", "datum", "u", "unit of u"] and "contribution [K]" in rows[0]


def test_approach_takes_the_side_with_lower_conversion():
    """Exothermic ammonia synthesis (van 't Hoff): the lower conversion is at T + ΔT."""
    r = propagate_equilibrium(AMMONIA, FEED, [700.0, 750.0], "200 bar", key="N2", approach="10 K",
                              method="linear")
    np.testing.assert_allclose(r.T_equilibrium, np.array([710.0, 760.0]))
    ref = propagate_equilibrium(AMMONIA, FEED, [710.0, 760.0], "200 bar", key="N2", method="linear")
    np.testing.assert_allclose(r.nominal["conversion N2"], ref.nominal["conversion N2"], rtol=1e-9)


# ------------------------------------------------------------------ inverse question
def test_temperature_interval_nominal_matches_design_question():
    """The nominal answer is the design module's answer (refined further)."""
    from eqdesign.solve.studies.inverse import temperature_for_conversion
    ans = temperature_for_conversion(AMMONIA, FEED, "200 bar", "N2", 0.2, T_range=(500, 1000))
    r = temperature_interval(AMMONIA, FEED, "200 bar", "N2", 0.2, T_range=(500, 1000), method="linear")
    assert r.T == pytest.approx(ans.T, abs=2e-3)


def test_temperature_interval_zero_and_linear_in_u():
    """Zero data uncertainty: zero interval (to the root tolerance, 1e-6 K).  Small u: the
    half-width scales linearly with u
    (implicit-function rule, first order); Monte Carlo with the same seed draws the same
    standard-normal numbers, so its interval scales too, within the curvature (3 %)."""
    kw = dict(T_range=(500, 1000))
    z = temperature_interval(AMMONIA, FEED, "200 bar", "N2", 0.2, samples=30, overrides=ZERO, **kw)
    assert z.upper - z.lower < 1e-6 and abs(z.median - z.T) < 1e-6 and z.standard_uncertainty < 1e-6
    zl = temperature_interval(AMMONIA, FEED, "200 bar", "N2", 0.2, method="linear", overrides=ZERO, **kw)
    assert zl.upper - zl.lower == 0.0 and zl.standard_uncertainty == 0.0
    l1 = temperature_interval(AMMONIA, FEED, "200 bar", "N2", 0.2, method="linear", overrides=scaled(1.0), **kw)
    l2 = temperature_interval(AMMONIA, FEED, "200 bar", "N2", 0.2, method="linear", overrides=scaled(2.0), **kw)
    assert l2.standard_uncertainty == pytest.approx(2 * l1.standard_uncertainty, rel=1e-9)
    m1 = temperature_interval(AMMONIA, FEED, "200 bar", "N2", 0.2, samples=300, seed=2, overrides=scaled(1.0), **kw)
    m2 = temperature_interval(AMMONIA, FEED, "200 bar", "N2", 0.2, samples=300, seed=2, overrides=scaled(2.0), **kw)
    assert (m2.upper - m2.lower) == pytest.approx(2 * (m1.upper - m1.lower), rel=0.03)
    # Monte Carlo and linearised agree (sampling error of a std at N = 300: 4 %; allow 15 %)
    assert m1.standard_uncertainty == pytest.approx(l1.standard_uncertainty, rel=0.15)


def test_temperature_interval_equals_ln_K_spread_over_slope():
    """Independent check of the implicit differentiation: at fixed P and feed the conversion
    depends on T and the data only through ln K(T), so u(T) = u(ln K)/|d ln K/dT| with
    d ln K/dT = ΔrH°/RT² (van 't Hoff)."""
    db = bundled_database()
    u = scaled(1.0)
    r = temperature_interval(AMMONIA, FEED, "200 bar", "N2", 0.2, T_range=(500, 1000), method="linear", overrides=u)
    from eqdesign.thermo import Reaction
    dH = float(Reaction.parse("N2 + 3 H2 = 2 NH3", db).delta_h(r.T))
    assert r.standard_uncertainty == pytest.approx(ln_K_sigma(r.T, u) / abs(dH / (R * r.T ** 2)), rel=1e-4)


def test_draws_beyond_the_search_range_are_censored():
    """A search range ending just above the nominal answer: draws whose answer lies beyond
    it count as +inf, so the upper end is reported as beyond the range, not invented."""
    r = temperature_interval(AMMONIA, FEED, "200 bar", "N2", 0.2, T_range=(500, 836), samples=200, seed=4)
    assert math.isfinite(r.lower) and r.upper == math.inf
    assert 0.05 < r.beyond_range < 0.6 and math.isnan(r.standard_uncertainty)
    assert "beyond the search range" in r.summary()


# ------------------------------------------------------------------ outputs and settings
def test_band_rows_plot_and_html():
    """Outputs: band percentiles ordered, table headers carry units, the band drawn with a
    hatch (greyscale-readable), the HTML section self-contained (no external reference) and
    carrying the assumptions and the caution."""
    pytest.importorskip("matplotlib")
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from eqdesign.solve.report.uncertainty_figures import draw_band, draw_temperature_interval
    T = np.linspace(650.0, 900.0, 6)
    r = propagate_equilibrium(AMMONIA, FEED, T, "200 bar", key="N2", samples=100, seed=1)
    band = r.band()
    assert band.rows()[0].keys() == {"temperature [K]", "conversion N2 [-]", "conversion N2 2.5 % [-]",
                                     "conversion N2 median [-]", "conversion N2 97.5 % [-]"}
    assert np.all(band.lower <= band.median) and np.all(band.median <= band.upper)
    rows = r.rows(["conversion N2"])
    assert {"T [K]", "P [Pa]", "u(conversion N2) [-]"} <= set(rows[0])
    t = temperature_interval(AMMONIA, FEED, "200 bar", "N2", 0.2, T_range=(500, 1000), samples=100, seed=1)
    fig, ax = plt.subplots()
    art = draw_band(ax, band, percent=True)
    assert art["band"].get_hatch() == "////" and ax.get_ylabel() == "conversion N2 [%]"
    assert "interval" in draw_temperature_interval(ax, t, percent=True)
    plt.close(fig)
    fig, ax = plt.subplots()
    art = draw_band(ax, band, celsius=True)
    np.testing.assert_allclose(art["nominal"].get_xdata(), T - 273.15)
    assert ax.get_xlabel() == "temperature [°C]"
    plt.close(fig)
    page = html_section(temperatures=[t], equilibrium_result=r, figure_svg="<svg></svg>")
    assert page.startswith('<section class="eqd-uncertainty">') and page.endswith("</section>")
    for external in ("http:", "https:", "src=", "<link", "<script", "@import"):
        assert external not in page
    assert "ΔfH°(NH3)" in page and "Caution" in page
    assert ASSUMPTIONS.split(";")[0] in page and CAUTION.split(".")[0] in page


def test_settings_mapping_and_messages():
    """The case-file switch maps to keyword arguments; every problem is reported at once,
    word for word."""
    s = settings_from_mapping({"method": "linear", "samples": 500, "seed": 3, "level": "90 %",
                               "overrides": {"NH3": {"formation_enthalpy": "0.5 kJ/mol"}}})
    kw = s.as_kwargs()
    assert kw["method"] == "linear" and kw["level"] == 0.9 and kw["samples"] == 500 and kw["seed"] == 3
    assert settings_from_mapping(None).as_kwargs()["method"] == "monte-carlo"
    with pytest.raises(UncertaintyInputError) as err:
        settings_from_mapping({"method": "bootstrap", "samples": 5, "level": 1.2, "colour": "red",
                               "overrides": {"NH3": {"enthalpy": 1.0}}})
    assert str(err.value).splitlines() == [
        "uncertainty.colour: unknown key; use method, samples, seed, level, overrides, defaults",
        "uncertainty.method: 'bootstrap' is not one of monte-carlo, linear",
        "uncertainty.samples: give a whole number from 20 to 100000, got 5",
        "uncertainty.level: give a coverage probability from 0.5 to below 1 (e.g. 0.95 or '95 %'), got 1.2",
        "uncertainty.overrides.NH3.enthalpy: unknown datum; use formation_enthalpy, entropy, reaction_enthalpy, "
        "reaction_entropy",
    ]


def test_pressure_interval_matches_the_analytic_spread_of_ln_K():
    """For N2 + 3 H2 = 2 NH3 in an ideal gas the conversion depends on K and P only through
    K (P/P°)² (Kx = K (P/P°)^-Δn, Δn = -2), so at a fixed conversion d ln P = -½ d ln K and
    u(ln P) = ½ u(ln K), with Var ln K = Σ ν_i² (u_H,i²/(RT)² + u_S,i²/R²) for independent
    species data (GUM, JCGM 100:2008, law of propagation of uncertainty)."""
    from eqdesign.solve.studies.uncertainty import ln_K_uncertainty
    from eqdesign.solve.studies.intervals import pressure_interval
    T = 700.0
    lin = pressure_interval(AMMONIA, FEED, T, "N2", 0.40, P_range=("10 bar", "1000 bar"), method="linear")
    uK = ln_K_uncertainty("N2 + 3 H2 = 2 NH3", T).standard_uncertainty
    assert lin.relative_uncertainty == pytest.approx(0.5 * uK, rel=1e-3)
    mc = pressure_interval(AMMONIA, FEED, T, "N2", 0.40, P_range=("10 bar", "1000 bar"), samples=400, seed=3)
    assert mc.P == pytest.approx(lin.P, rel=1e-9)
    assert mc.relative_uncertainty == pytest.approx(lin.relative_uncertainty, rel=0.1)
    assert mc.lower < mc.P < mc.upper
    zero = pressure_interval(AMMONIA, FEED, T, "N2", 0.40, P_range=("10 bar", "1000 bar"), samples=50,
                             overrides=ZERO)
    assert zero.upper / zero.lower - 1.0 < 1e-6
    top = zero.ranking() or lin.ranking()
    assert top[0].datum.species == "NH3"


def test_feed_ratio_interval_matches_the_analytic_spread_for_the_shift():
    """CO + H2O = CO2 + H2 from 1 mol CO and r mol H2O (Δn = 0): at conversion X,
    K = X² / ((1 - X)(r - X)), so r = X + X²/(K (1 - X)) and d ln r/d ln K = -(r - X)/r;
    hence u(ln r) = (r - X)/r · u(ln K) (GUM, JCGM 100:2008, first-order propagation)."""
    from eqdesign.solve.studies.intervals import feed_ratio_interval
    from eqdesign.solve.studies.uncertainty import ln_K_uncertainty
    species, X, T = ["CO", "H2O", "CO2", "H2"], 0.99, 500.0
    lin = feed_ratio_interval(species, {"CO": 1.0}, T, "20 bar", "CO", X, ratio=("H2O", "CO"),
                              ratio_range=(0.5, 10.0), method="linear")
    r = lin.ratio
    K = math.exp(Reaction_lnK("CO + H2O = CO2 + H2", T))
    # the nominal search stops at 1e-6 in conversion, ~1e-4 relative in r this close to X = 1
    assert r == pytest.approx(X + X ** 2 / (K * (1 - X)), rel=1e-4)
    uK = ln_K_uncertainty("CO + H2O = CO2 + H2", T).standard_uncertainty
    assert lin.relative_uncertainty == pytest.approx((r - X) / r * uK, rel=1e-3)
    mc = feed_ratio_interval(species, {"CO": 1.0}, T, "20 bar", "CO", X, ratio=("H2O", "CO"),
                             ratio_range=(0.5, 10.0), samples=300, seed=5)
    assert mc.lower < r < mc.upper
    assert mc.relative_uncertainty == pytest.approx(lin.relative_uncertainty, rel=0.15)


def Reaction_lnK(text, T):
    from eqdesign.thermo import Reaction
    return Reaction.parse(text).ln_K(T)
