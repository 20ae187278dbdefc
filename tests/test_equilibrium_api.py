"""The public `equilibrium` entry point: conventions, result object, failure handling."""
from __future__ import annotations

import math

import numpy as np
import pytest

from eqdesign.solve import EquilibriumInputError, NotConvergedWarning, equilibrium
from eqdesign.thermo import R, Reaction

NH3 = (["N2", "H2", "NH3"], {"N2": 1.0, "H2": 3.0})


def test_scalar_input_gives_floats_and_array_input_gives_arrays():
    r = equilibrium(*NH3, "450 degC", "200 bar")
    assert isinstance(r.mole_fractions["NH3"], float) and isinstance(r.amounts["N2"], float)
    a = equilibrium(*NH3, np.array([700.0, 750.0]), 200e5)
    assert a.mole_fractions["NH3"].shape == (2,)
    assert a.mole_fractions["NH3"][0] == pytest.approx(
        equilibrium(*NH3, 700.0, 200e5).mole_fractions["NH3"], abs=1e-12)


def test_broadcasting_of_T_P_and_feed():
    T = np.array([650.0, 700.0, 750.0])[:, None]
    P = np.array([50e5, 150e5])[None, :]
    r = equilibrium(["N2", "H2", "NH3"], {"N2": 1.0, "H2": np.array([2.0, 3.0])}, T, P)
    assert r.shape == (3, 2) and r.all_converged
    single = equilibrium(["N2", "H2", "NH3"], {"N2": 1.0, "H2": 3.0}, 700.0, 150e5)
    assert r.mole_fractions["NH3"][1, 1] == pytest.approx(single.mole_fractions["NH3"], abs=1e-12)


def test_mass_action_holds_at_solution():
    """Q = K for N2 + 3 H2 = 2 NH3 at the answer (ideal gas; definition of K)."""
    r = equilibrium(*NH3, 700.0, 100e5)
    y = r.mole_fractions
    Q = y["NH3"] ** 2 / (y["N2"] * y["H2"] ** 3) / (100.0 ** 2)
    assert Q == pytest.approx(Reaction.parse("N2 + 3 H2 = 2 NH3").equilibrium_constant(700.0), rel=1e-9)
    assert r.quotient_over_K("N2 + 3 H2 = 2 NH3")["N2 + 3 H2 = 2 NH3"] == pytest.approx(1.0, abs=1e-9)


def test_g0_shift_moves_K_by_the_expected_factor():
    """Shifting g°(NH3) by δ multiplies K by exp(-2δ/RT) (ΔrG° = Σ ν g°)."""
    T = 700.0
    base = equilibrium(*NH3, T, 100e5)
    shifted = equilibrium(*NH3, T, 100e5, g0_shift={"NH3": -1500.0})
    rxn = "N2 + 3 H2 = 2 NH3"
    y = shifted.mole_fractions
    Q = y["NH3"] ** 2 / (y["N2"] * y["H2"] ** 3) / 100.0 ** 2
    K = Reaction.parse(rxn).equilibrium_constant(T)
    assert Q / K == pytest.approx(math.exp(2 * 1500.0 / (R * T)), rel=1e-8)
    assert shifted.quotient_over_K(rxn)[rxn] == pytest.approx(1.0, abs=1e-9)   # shifted data
    assert shifted.mole_fractions["NH3"] > base.mole_fractions["NH3"]


def test_conversion_and_extents():
    r = equilibrium(["CO", "H2O", "CO2", "H2"], {"CO": 1.0, "H2O": 2.0}, 600.0, 20e5,
                    reactions=["CO + H2O = CO2 + H2"], key="CO")
    xi = r.extents["CO + H2O = CO2 + H2"]
    assert r.conversion() == pytest.approx(xi / 1.0, rel=1e-12)
    assert r.amounts["H2"] == pytest.approx(xi, rel=1e-12)


def test_non_converged_points_are_nan_and_flagged():
    with pytest.warns(NotConvergedWarning):
        r = equilibrium(*NH3, np.array([700.0, 800.0]), 100e5, max_iterations=1)
    assert not r.converged.any()
    assert np.all(np.isnan(r.mole_fractions["NH3"]))
    assert "did not converge" in r.message


def test_warm_start_from_previous_result_gives_same_answer():
    T = np.linspace(650.0, 800.0, 16)
    a = equilibrium(*NH3, T, 150e5)
    b = equilibrium(*NH3, T + 1.0, 150e5, initial=a)
    c = equilibrium(*NH3, T + 1.0, 150e5)
    assert np.allclose(b.mole_fractions["NH3"], c.mole_fractions["NH3"], atol=1e-12)


@pytest.mark.parametrize("kwargs,message", [
    (dict(feed={"N2": -1.0, "H2": 3.0}), "feed of N2 must be finite and non-negative"),
    (dict(feed={"N2": 0.0, "H2": 0.0}), "the feed is empty"),
    (dict(T=-5.0), "temperatures must be finite and above 0 K"),
    (dict(P=0.0), "pressures must be finite and above 0 Pa"),
    (dict(gas_model="van-der-waals"), "gas_model 'van-der-waals': use one of ideal, peng-robinson"),
])
def test_bad_input_is_refused_with_a_clear_message(kwargs, message):
    args = dict(species=["N2", "H2", "NH3"], feed={"N2": 1.0, "H2": 3.0}, T=700.0, P=100e5)
    args.update(kwargs)
    with pytest.raises(EquilibriumInputError, match=message):
        equilibrium(args.pop("species"), args.pop("feed"), args.pop("T"), args.pop("P"), **args)


def test_unknown_species_suggests_names():
    with pytest.raises(KeyError, match="did you mean"):
        equilibrium(["N2", "H2", "NH4"], {"N2": 1.0, "H2": 3.0}, 700.0, 1e5)
