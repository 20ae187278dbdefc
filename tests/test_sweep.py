"""Conversion maps (eqdesign.solve.sweep) checked point by point and against outside references.

Outside references:

* cantera (PyPI ``cantera``) ``equilibrate("TP")`` on a phase built from our own NASA
  coefficients (``cantera_reference.cantera_phase``), at map points;
* NIST-JANAF (M. W. Chase Jr., *NIST-JANAF Thermochemical Tables*, 4th ed., J. Phys.
  Chem. Ref. Data Monograph 9, 1998): ΔfH°(NH3, g, 298.15 K) = −45.898 kJ/mol, for the
  heat of reaction per mole of N2 converted;
* the steam-to-carbon ratio as reformer practice defines it, moles of steam per mole of
  hydrocarbon carbon (M. V. Twigg (ed.), *Catalyst Handbook*, 2nd ed., Wolfe, 1989,
  ch. 5 (from memory)).
"""
from __future__ import annotations

import csv
import io

import numpy as np
import pytest

from cantera_reference import cantera_phase
from eqdesign.solve import equilibrium
from eqdesign.solve.studies.carbon import carbon_activity, graphite_stable
from eqdesign.solve.studies.feeds import approach_kelvin
from eqdesign.solve.studies.maps import conversion_map
from eqdesign.thermo import UnitError

NH3 = ["N2", "H2", "NH3"]
REFORMING = ["CH4", "H2O", "CO", "CO2", "H2"]


def test_map_agrees_point_by_point_with_direct_solves():
    """Every point of a T x P x H2/N2 map equals a direct equilibrium() call at that point
    (the solver itself is checked against cantera in test_equilibrium_reference.py)."""
    T = np.array([650.0, 725.0, 800.0])
    P = np.array([50e5, 150e5, 300e5])
    r = np.array([2.0, 3.0, 4.5])
    m = conversion_map(NH3 + ["Ar"], {"N2": 1.0, "H2": 3.0, "Ar": 0.1}, T=T, P=P, key="N2",
                       product="NH3", feed_ratio=("H2", "N2", r))
    assert m.shape == (3, 3, 3) and m.all_converged
    TT, PP, RR = np.meshgrid(T, P, r, indexing="ij")
    for i in np.ndindex(m.shape):       # the reference: one direct call per point
        d = equilibrium(NH3 + ["Ar"], {"N2": 1.0, "H2": RR[i] * 1.0, "Ar": 0.1}, TT[i], PP[i])
        assert m.conversion[i] == pytest.approx(d.conversion("N2"), abs=1e-9)
        for n in NH3 + ["Ar"]:
            assert m.mole_fractions[n][i] == pytest.approx(d.mole_fractions[n], abs=1e-9)
        assert m.product_yield[i] == pytest.approx(d.amounts["NH3"] / 1.0, abs=1e-9)


def test_map_points_against_cantera(db):
    """Mole fractions at map points equal cantera's equilibrate('TP') on our data to 1e-8."""
    T = np.array([900.0, 1000.0, 1100.0])
    P = np.array([1e5, 20e5])
    m = conversion_map(REFORMING, {"CH4": 1.0}, T=T, P=P, key="CH4", steam_to_carbon=[2.0, 3.5])
    gas, _ = cantera_phase(REFORMING, db)
    for i in np.ndindex(m.shape):
        gas.TPX = m.T[i], m.P[i], {"CH4": 1.0, "H2O": float(m.feed["H2O"][i])}
        gas.equilibrate("TP")
        for n in REFORMING:
            assert m.mole_fractions[n][i] == pytest.approx(gas[n].X[0], abs=1e-8)


def test_feed_ratio_and_inert_axes_build_the_intended_feeds():
    """feed_ratio sets numerator = r x denominator; the inert axis sets the inert mole
    fraction and keeps the other species' ratios (definitions, common practice, no source)."""
    r = np.array([2.0, 3.0, 4.0])
    x = np.array([0.0, 0.05, 0.2])
    m = conversion_map(NH3 + ["Ar"], {"N2": 1.0, "H2": 3.0}, T=700.0, P=200e5, key="N2",
                       feed_ratio=("H2", "N2", r), inert=("Ar", x))
    assert m.shape == (3, 3)
    assert [a.name for a in m.axes] == ["H2/N2", "Ar fraction"]
    total = sum(m.feed[n] for n in m.feed)
    assert np.allclose(m.feed["Ar"] / total, x[None, :])
    assert np.allclose(m.feed["H2"] / m.feed["N2"], r[:, None])
    # others scaled by (1 - x): the total feed stays that of N2 + H2 at each ratio
    assert np.allclose(total, (1.0 + r)[:, None])


def test_steam_to_carbon_counts_hydrocarbon_carbon():
    """Steam-to-carbon counts carbon atoms of the hydrocarbons, not of CO2: a natural-gas-like
    feed of 0.9 CH4 + 0.05 C2H6 + 0.02 CO2 holds 1.0 mol hydrocarbon carbon (steam per mole
    of hydrocarbon carbon: Twigg, Catalyst Handbook, 2nd ed., 1989 (from memory))."""
    m = conversion_map(REFORMING + ["C2H6"], {"CH4": 0.9, "C2H6": 0.05, "CO2": 0.02}, T=1000.0, P=20e5,
                       key="CH4", steam_to_carbon=[2.5, 3.0])
    assert np.allclose(m.feed["H2O"], [2.5, 3.0])
    assert m.axes[0].name == "steam-to-carbon" and m.axes[0].unit == "mol/mol"


def test_progress_callback_and_chunks():
    """progress(done, total) is called once per chunk with increasing counts ending at the
    total; chunking does not change the answers."""
    calls = []
    T = np.linspace(600.0, 900.0, 7)
    P = np.geomspace(10e5, 300e5, 5)
    m = conversion_map(NH3, {"N2": 1, "H2": 3}, T=T, P=P, key="N2", chunk=4,
                       progress=lambda done, total: calls.append((done, total)))
    one = conversion_map(NH3, {"N2": 1, "H2": 3}, T=T, P=P, key="N2")
    assert len(calls) == int(np.ceil(35 / 4))
    done = [c[0] for c in calls]
    assert done == sorted(done) and done[-1] == 35 and all(c[1] == 35 for c in calls)
    assert np.allclose(m.conversion, one.conversion, rtol=0, atol=1e-9)


def test_shapes_scalars_and_units():
    """Scalar conditions add no axis; strings and lists of strings are read with units."""
    m = conversion_map(NH3, {"N2": 1, "H2": 3}, T=["400 degC", "450 degC"], P="200 bar", key="N2")
    assert m.shape == (2,) and m.axes[0].name == "T"
    assert np.allclose(m.axes[0].values, [673.15, 723.15])
    assert m.conditions == {"P [Pa]": 2e7}
    s = conversion_map(NH3, {"N2": 1, "H2": 3}, T=700.0, P=2e7, key="N2")
    assert s.shape == () and np.ndim(s.conversion) == 0
    assert s.table()[0]["T [K]"] == 700.0


def test_reaction_enthalpy_against_janaf():
    """Heat of reaction per mole of N2 converted at 298.15 K is 2 ΔfH°(NH3) =
    2 x (−45.898) kJ/mol (NIST-JANAF, 1998); within 0.2 kJ/mol (our NH3 data are the
    CODATA key value −45.94 kJ/mol)."""
    m = conversion_map(NH3, {"N2": 1, "H2": 3}, T=298.15, P=1e5, key="N2")
    assert float(m.reaction_enthalpy) == pytest.approx(2 * -45.898e3, abs=200.0)


def test_reaction_enthalpy_equals_reaction_delta_h_for_a_single_reaction(db):
    """For one reaction the enthalpy per mole of key converted equals ΔrH°(T)/|ν_key|
    (definition of the reaction enthalpy; data from our database)."""
    from eqdesign.thermo import Reaction
    T = np.array([500.0, 650.0, 800.0])
    m = conversion_map(["CO", "H2O", "CO2", "H2"], {"CO": 1, "H2O": 2}, T=T, P=10e5, key="CO",
                       reactions=["CO + H2O = CO2 + H2"])
    assert np.allclose(m.reaction_enthalpy, Reaction.parse("CO + H2O = CO2 + H2").delta_h(T), rtol=1e-9)


def test_stoichiometric_yield():
    """Yield per mole of N2 fed is 2 x conversion for N2 + 3 H2 = 2 NH3 (stoichiometry);
    stoichiometric yield (fraction of the 2 NH3 per N2 possible) equals the conversion."""
    m = conversion_map(NH3, {"N2": 1, "H2": 3}, T=[650.0, 750.0], P=150e5, key="N2",
                       product="NH3", reactions=["N2 + 3 H2 = 2 NH3"])
    assert np.allclose(m.product_yield, 2 * m.conversion, rtol=1e-10)
    assert np.allclose(m.stoichiometric_yield, m.conversion, rtol=1e-10)


def test_approach_is_applied_on_the_side_that_lowers_conversion():
    """Approach ΔT: exothermic ammonia synthesis is evaluated at T + ΔT, endothermic steam
    reforming at T − ΔT (van 't Hoff: d ln K/dT = ΔrH°/RT²)."""
    T = np.array([650.0, 700.0, 750.0])
    a = conversion_map(NH3, {"N2": 1, "H2": 3}, T=T, P=150e5, key="N2", approach="10 delta_degC")
    direct = equilibrium(NH3, {"N2": 1, "H2": 3}, T + 10.0, 150e5)
    assert np.allclose(a.T_equilibrium, T + 10.0)
    assert np.allclose(a.conversion, direct.conversion("N2"), atol=1e-12)
    b = conversion_map(REFORMING, {"CH4": 1, "H2O": 3}, T=T + 300, P=20e5, key="CH4", approach=15)
    direct = equilibrium(REFORMING, {"CH4": 1, "H2O": 3}, T + 300 - 15.0, 20e5)
    assert np.allclose(b.T_equilibrium, T + 300 - 15.0)
    assert np.allclose(b.conversion, direct.conversion("CH4"), atol=1e-12)
    assert "T equilibrium [K]" in a.table()[0]


def test_approach_input_checks():
    """A temperature (offset unit) is not a temperature difference."""
    assert approach_kelvin("18 delta_degF") == pytest.approx(10.0)
    with pytest.raises(UnitError, match="is a temperature, not a difference"):
        approach_kelvin("10 degC")


def test_table_headers_carry_units_and_write_as_csv():
    """Every column header states its unit (project style); rows write with csv.DictWriter."""
    m = conversion_map(REFORMING, {"CH4": 1.0}, T=[900.0, 1000.0], P=[1e5, 10e5], key="CH4",
                       product="H2", steam_to_carbon=[1.0, 3.0])
    rows = m.table()
    assert len(rows) == 8
    assert all(h.endswith("]") for h in rows[0])
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=list(rows[0]))
    w.writeheader()
    w.writerows(rows)
    back = list(csv.DictReader(io.StringIO(buf.getvalue())))
    assert float(back[5]["conversion CH4 [-]"]) == pytest.approx(m.conversion.reshape(-1)[5])
    assert float(back[5]["steam-to-carbon [mol/mol]"]) == m.feed["H2O"].reshape(-1)[5]


def test_carbon_activity_in_maps():
    """The map's graphite activity equals carbon_activity() of a direct solve; low
    steam-to-carbon at 1 bar and 900 K lies in the graphite region (a_C > 1), high does not
    (thermodynamic carbon limit of steam reforming near S/C 1-1.5 at 1 bar: J. R.
    Rostrup-Nielsen, Catalytic Steam Reforming, Springer, 1984 (from memory))."""
    m = conversion_map(REFORMING, {"CH4": 1.0}, T=900.0, P=1e5, key="CH4", steam_to_carbon=[0.8, 3.0])
    d = equilibrium(REFORMING, {"CH4": 1.0, "H2O": np.array([0.8, 3.0])}, 900.0, 1e5)
    assert np.allclose(m.carbon_activity, carbon_activity(d), rtol=1e-8)
    assert list(graphite_stable(m)) == [True, False]
