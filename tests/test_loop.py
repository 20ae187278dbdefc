"""Synthesis loop (eqdesign.solve.studies.loop).

Checks against outside references:
* conservation: atoms in the make-up leave in the purge and the product (element balances,
  exact for any steady state) to 1e-10 relative;
* the trend every ammonia-loop designer knows: at a fixed converter outlet temperature, a
  higher loop pressure raises the equilibrium NH3 content per pass (Le Chatelier; Larson and
  Dodge, J. Am. Chem. Soc. 45 (1923) 2918, from memory) so less gas must be recycled per
  unit make-up (common practice, no source);
* energy bookkeeping: the converter heat equals the heat of reaction of the NH3 formed
  (about -53 to -55 kJ/mol NH3 at 450 degC from NASA TM-4513 data; NIST-JANAF gives
  Delta_f H(NH3, 700 K) = -52.7 kJ/mol, from memory), and ideal-gas compressor powers
  equal the compression module's independent values.
The make-up gases are invented.
"""
from __future__ import annotations

import numpy as np
import pytest

from eqdesign.solve.core.problem import element_matrix
from eqdesign.solve.studies.loop import LOOP_CAUTION, LoopInputError, synthesis_loop
from eqdesign.thermo import UnknownSpeciesError, bundled_database

SPECIES = ["N2", "H2", "NH3", "CH4", "Ar"]
MAKEUP = {"H2": 742.0, "N2": 247.0, "CH4": 8.0, "Ar": 3.0}          # mol/s, invented
COMMON = dict(makeup_pressure="30 bar", makeup_temperature="40 degC")


@pytest.fixture(scope="module")
def study():
    return synthesis_loop(SPECIES, MAKEUP, ["150 bar", "200 bar", "250 bar"], "450 degC", "-5 degC",
                          inert_limit=0.10, **COMMON)


def test_every_option_converges_and_balances_elements(study):
    """Element balances make-up = purge + product close to 1e-10 (relative to atoms fed),
    recomputed here from the reported streams."""
    db = bundled_database()
    for r in study.results:
        assert r.converged, r.message
        names = list(r.species)
        _, A = element_matrix([db[n] for n in names])
        vec = {k: np.array([r.streams[k][n] for n in names]) for k in r.streams}
        atoms_in = A @ vec["makeup"]
        out = A @ (vec["purge"] + vec["product"])
        assert np.abs(atoms_in - out).max() <= 1e-10 * atoms_in.sum()
        # the mixing point and the purge split close exactly
        assert np.allclose(vec["converter_in"], vec["makeup"] + vec["recycle"], rtol=1e-12, atol=1e-9)
        assert np.allclose(vec["separator_vapour"], vec["purge"] + vec["recycle"], rtol=1e-12, atol=1e-9)
        assert np.allclose(vec["converter_out"], vec["separator_vapour"] + vec["product"], rtol=1e-12, atol=1e-9)
        assert r.element_balance_residual < 1e-10


def test_recycle_ratio_falls_as_loop_pressure_rises(study):
    """150 / 200 / 250 bar at a 450 degC outlet: recycle ratio falls (measured 2.84, 2.19,
    2.14) and the NH3 content of the converter outlet rises."""
    ratio = study.values("recycle_ratio")
    assert np.all(np.diff(ratio) < 0)
    nh3_out = [r.streams["converter_out"]["NH3"] / sum(r.streams["converter_out"].values())
               for r in study.results]
    assert np.all(np.diff(nh3_out) > 0)


def test_inerts_held_at_the_limit_or_below_without_purge(study):
    """The purge holds CH4 + Ar at 10 % of the converter feed; where the inerts dissolved
    in the product already keep them below it, the purge is zero and the message says so."""
    for r in study.results:
        assert r.inerts == ("CH4", "Ar")
        if r.purge_fraction > 1e-9:
            assert r.inert_fraction_in_feed == pytest.approx(0.10, abs=1e-8)
        else:
            assert r.inert_fraction_in_feed <= 0.10 + 1e-10
            assert "no purge needed" in r.message


def test_converter_heat_is_the_heat_of_reaction(study):
    """Converter heat per mole of NH3 formed lies between 50 and 56 kJ/mol (heat of
    reaction at 450 degC; NIST-JANAF Delta_f H(NH3) -52.7 kJ/mol at 700 K, from memory,
    plus the real-gas enthalpy change)."""
    for r in study.results:
        formed = r.streams["converter_out"]["NH3"] - r.streams["converter_in"]["NH3"]
        assert 50e3 < r.converter_heat / formed < 56e3


def test_powers_and_energy_are_consistent(study):
    """Real-gas compression power exceeds the ideal-gas power (H2/N2 far above their Boyle
    temperatures, Z > 1); specific energy is (power) / (product mass); the product is
    mostly NH3; results carry the cautions."""
    for r in study.results:
        assert r.power["makeup"] > r.power_ideal["makeup"] > 0
        assert r.power["recycle"] > r.power_ideal["recycle"] > 0
        total = r.power["makeup"] + r.power["recycle"]
        assert r.specific_energy == pytest.approx(total / (r.product_mass_rate / 1000.0), rel=1e-12)
        assert r.product_species == "NH3" and r.product_purity > 0.95
        assert 0 < r.per_pass_conversion < 1
        assert r.chilling_duty > 0 and r.cooling_duty > r.chilling_duty
        assert r.notes.startswith(LOOP_CAUTION)
        assert "toxic" in r.notes and "flammable" in r.notes and "high pressure" in r.notes


def test_fixed_purge_fraction_and_single_pressure():
    """A fixed purge fraction gives that split exactly; one pressure gives one LoopResult."""
    r = synthesis_loop(SPECIES, MAKEUP, "200 bar", "450 degC", "-5 degC", purge_fraction=0.02,
                       approach="10 K", **COMMON)
    assert r.converged, r.message
    assert r.purge_rate == pytest.approx(0.02 * sum(r.streams["separator_vapour"].values()), rel=1e-12)
    assert r.element_balance_residual < 1e-10


def test_approach_lowers_conversion():
    """An approach of 20 K evaluates the equilibrium 20 K hotter: for the exothermic
    synthesis, less NH3 per pass and more recycle."""
    kw = dict(purge_fraction=0.02, **COMMON)
    near = synthesis_loop(SPECIES, MAKEUP, "200 bar", "450 degC", "-5 degC", approach=0.0, **kw)
    far = synthesis_loop(SPECIES, MAKEUP, "200 bar", "450 degC", "-5 degC", approach=20.0, **kw)
    assert far.per_pass_conversion < near.per_pass_conversion
    assert far.recycle_ratio > near.recycle_ratio


@pytest.mark.parametrize("kwargs, message", [
    (dict(), "give exactly one of inert_limit"),
    (dict(inert_limit=0.10, purge_fraction=0.1), "give exactly one of inert_limit"),
    (dict(inert_limit=0.005), "inert_limit 0.005 is below the inert fraction of the make-up (0.011)"),
    (dict(inert_limit=0.1, compressor_efficiency=1.5), "compressor_efficiency 1.5"),
    (dict(inert_limit=0.1, approach="10 bar"), "approach '10 bar': give a temperature difference"),
])
def test_bad_input_is_named(kwargs, message):
    with pytest.raises(LoopInputError, match=message.replace("(", r"\(").replace(")", r"\)")):
        synthesis_loop(SPECIES, MAKEUP, "200 bar", "450 degC", "-5 degC", **COMMON, **kwargs)


def test_unknown_makeup_species_is_named():
    with pytest.raises(UnknownSpeciesError, match="NOSUCHGAS"):
        synthesis_loop(["N2", "H2", "NH3"], {"H2": 3.0, "N2": 1.0, "NOSUCHGAS": 0.1}, "200 bar",
                       "450 degC", "-5 degC", purge_fraction=0.02, **COMMON)


def test_methanol_loop_finds_nitrogen_and_methane_inert():
    """Methanol loop with the two named reactions (CO + 2 H2 = CH3OH, CO2 + H2 = CO + H2O),
    invented make-up, 250 degC outlet, 40 degC separator, 60 / 100 bar: CH4 and N2 are
    found inert from the conservation matrix (no listed reaction touches them), the crude
    product is mostly methanol with the water formed, elements balance to 1e-10, and the
    recycle ratio falls with pressure (common practice, no source)."""
    species = ["CO", "CO2", "H2", "CH3OH", "H2O", "CH4", "N2"]
    makeup = {"H2": 700.0, "CO": 200.0, "CO2": 60.0, "CH4": 25.0, "N2": 15.0}
    study = synthesis_loop(species, makeup, ["60 bar", "100 bar"], "250 degC", "40 degC",
                           makeup_pressure="25 bar", makeup_temperature="40 degC", inert_limit=0.15,
                           reactions=["CO + 2 H2 = CH3OH", "CO2 + H2 = CO + H2O"])
    for r in study.results:
        assert r.converged, r.message
        assert r.inerts == ("CH4", "N2")
        assert r.product_species == "CH3OH" and 0.7 < r.product_purity < 0.95
        assert r.element_balance_residual < 1e-10
        assert r.inert_fraction_in_feed == pytest.approx(0.15, abs=1e-8)
    assert study.results[1].recycle_ratio < study.results[0].recycle_ratio
