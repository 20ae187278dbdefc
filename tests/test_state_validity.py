"""Per-state validity of equilibrium results: exact grouping of feed patterns, and states
beyond the data range flagged on both the fixed-temperature and fixed-enthalpy paths."""
from __future__ import annotations

import warnings

import numpy as np

from eqdesign.solve.core.equilibrium import equilibrium
from eqdesign.thermo import ExtrapolationWarning


def test_feed_patterns_grouped_exactly_beyond_62_species(db):
    """Argon at column 0 and helium at column 62: two feed patterns that a 62-bit presence
    code confused (helium, fed at 1 mol, vanished).  Inert gases pass through unchanged
    (element balance, no source needed)."""
    fillers = [g.name for g in db if g.is_gas and set(g.elements) <= {"C", "H", "O", "N"}
               and g.name not in ("N2",)][:61]
    species = ["Ar"] + fillers + ["He", "N2"]
    assert species.index("He") == 62
    feed = {"Ar": np.array([1.0, 0.0]), "He": np.array([0.0, 1.0]), "N2": np.array([1.0, 1.0])}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtrapolationWarning)
        r = equilibrium(species, feed, 800.0, 1e5, warn=False)
    assert r.all_converged
    np.testing.assert_allclose(r.amounts["He"], [0.0, 1.0], atol=1e-12)
    np.testing.assert_allclose(r.amounts["Ar"], [1.0, 0.0], atol=1e-12)


def test_beyond_the_data_flagged_on_both_paths():
    """150 K and 10,000 K lie outside the 200-6000 K range of the NASA polynomials of N2, H2
    and NH3 (McBride, Zehe, Gordon, NASA/TP-2002-211556): at fixed T the states are solved
    but flagged not trustworthy; at fixed enthalpy they are not answers either."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtrapolationWarning)
        r = equilibrium(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, [150.0, 700.0, 10000.0], 1e5, warn=False)
    assert r.trustworthy.tolist() == [False, True, False]
    assert r.state_flags()[0] == "outside data range: N2, H2, NH3"
    assert "outside their data range" in r.message
    # fixed enthalpy: the enthalpy of the 10,000 K gas mixture is beyond the data
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtrapolationWarning)
        h = equilibrium(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, 1000.0, 1e5,
                        enthalpy=[0.0, 4.0e6, 1.0e6], warn=False)
    assert h.trustworthy.tolist() == [True, False, False]
    assert not h.converged[1:].any()   # 1 MJ: converges near 7000 K, beyond 6000 K: refused
    assert "outside the data range" in h.message


def test_map_points_beyond_the_data_are_flagged():
    """A conversion map reaching 7000 K (beyond the 6000 K end of the NASA data of N2, H2, NH3,
    NASA/TP-2002-211556) flags those points, in the record and in its table."""
    from eqdesign.solve.studies.maps import conversion_map
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtrapolationWarning)
        m = conversion_map(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, T=[700.0, 7000.0], P=1e5, key="N2",
                           approach=10.0)
    assert m.all_converged
    assert m.trustworthy.tolist() == [True, False]
    rows = m.table()
    assert [r["trustworthy [-]"] for r in rows] == [1, 0]
    assert rows[1]["flags [text]"] == "outside data range: N2, H2, NH3"
    assert "not trustworthy" in m.message


def test_inverse_answers_say_whether_the_state_at_the_answer_is_trustworthy():
    """Ammonia, 3:1 H2:N2: 20 % N2 conversion at 200 bar lies near 833 K, inside the data
    (trustworthy); a 1.62e-6 conversion at 1 bar is reached only near 6800 K, above 6000 K, the end of the
    NASA data (NASA/TP-2002-211556), so that answer is flagged."""
    from eqdesign.solve.studies.inverse import temperature_for_conversion
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtrapolationWarning)
        ans = temperature_for_conversion(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, [200e5, 1e5], "N2",
                                         [0.20, 1.62e-6], T_range=(500, 8000))
    assert ans.status.tolist() == ["reached", "reached"]
    assert ans.trustworthy.tolist() == [True, False]
    assert ans.flags[0] == "" and ans.flags[1] == "outside data range: N2, H2, NH3"
    assert ans.T[1] > 6000.0


def test_adiabatic_outlets_carry_the_flags():
    """An adiabatic hydrogen-oxygen flame (stoichiometric, 1 bar, from 300 K) ends near 3100 K
    (adiabatic flame temperature of H2/O2 about 3080 K at 1 atm with dissociation, Glassman,
    Combustion, from memory): inside the 200-6000 K data, trustworthy; with H2O(l) admitted
    its range ends at 600 K, so a liquid never shows at the outlet."""
    from eqdesign.solve.studies.adiabatic import adiabatic_equilibrium
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ExtrapolationWarning)
        out = adiabatic_equilibrium(["H2", "O2", "H2O", "OH", "H", "O", "H2O(l)"], {"H2": 2.0, "O2": 1.0},
                                    300.0, 1e5, warn=False)
    assert out.all_converged
    assert 2900.0 < out.T < 3300.0
    assert out.trustworthy is True and out.state_flags() == ""
    assert out.equilibrium.condensed["H2O(l)"] == 0.0


def test_a_trace_key_reactant_below_the_solver_resolution_is_not_an_answer():
    """N2 fed at 1e-310 mol beside 3 mol H2 came back 'converged' with a conversion of
    -5.7e287 (2.4e-11 mol NH3 made from 2e-310 mol N): element balance (no source needed)
    now refuses such states; a normal feed in the same call is unaffected."""
    r = equilibrium(["N2", "H2", "NH3"], {"N2": [1e-310, 1.0], "H2": 3.0}, 700.0, 200e5, key="N2", warn=False)
    assert r.converged.tolist() == [False, True]
    assert np.isnan(r.conversion()[0]) and 0.4 < r.conversion()[1] < 0.5
    assert "lose a conserved quantity" in r.message
    # whatever converges conserves every element to 0.1 %
    n_in = r.feed_array[1] @ np.array([[2, 0, 1], [0, 2, 3]]).T
    n_out = r.amount_array[1] @ np.array([[2, 0, 1], [0, 2, 3]]).T
    np.testing.assert_allclose(n_out, n_in, rtol=1e-9)
