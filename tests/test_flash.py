"""Isothermal vapour-liquid flash (eqdesign.thermo.flash).

Outside references named beside each check: CRC Handbook of Chemistry and Physics
(W. M. Haynes, ed.) ammonia vapour pressures (from memory); methanol-water bubble points at
1 atm as tabulated in standard handbooks (Perry's Chemical Engineers' Handbook VLE tables,
from memory); IAPWS steam-table vapour pressure of water at 40 degC, 7.38 kPa (from memory).
Methods: Michelsen, Fluid Phase Equilib. 9 (1982) 1-19, 21-40; Rachford and Rice (1952).
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq

from eqdesign.thermo import bundled_database
from eqdesign.thermo.flash import (
    condensed_vapour_pressure, flash, liquid_data_vapour_pressures, rachford_rice,
    saturation_pressure,
)
from eqdesign.thermo.peng_robinson import CubicParameters, binary_interaction_matrix, gas_state


@pytest.fixture(scope="module")
def database():
    return bundled_database()


def _params(database, names, quantum=True):
    return CubicParameters.from_species([database[n] for n in names],
                                        interaction=binary_interaction_matrix(names),
                                        quantum_gases=quantum)


@pytest.mark.parametrize("T_celsius, p_bar", [(-5.0, 3.55), (25.0, 10.03)])
def test_ammonia_vapour_pressure_against_crc(database, T_celsius, p_bar):
    """Pure NH3: the pressure where a pure-ammonia flash switches between vapour and
    liquid, against the CRC Handbook (from memory: 3.55 bar at -5 degC, 10.03 bar at
    25 degC), within 3 %.  Measured: 3.52 and 10.01 bar."""
    nh3 = _params(database, ["NH3"])
    T = T_celsius + 273.15
    p_sat = float(saturation_pressure(nh3, T)[0, 0])
    assert p_sat == pytest.approx(p_bar * 1e5, rel=0.03)
    below = flash(nh3, T, 0.98 * p_sat, [1.0])
    above = flash(nh3, T, 1.02 * p_sat, [1.0])
    assert below.vapour_fraction[0] == 1.0 and above.vapour_fraction[0] == 0.0
    assert saturation_pressure(nh3, 420.0)[0, 0] != saturation_pressure(nh3, 420.0)[0, 0]  # NaN above Tc


#: Bubble temperature [degC] of methanol-water at 1 atm vs liquid methanol mole fraction,
#: as tabulated in standard handbooks (Perry's VLE tables; from memory).
METHANOL_WATER_BUBBLE = {0.10: 87.7, 0.30: 78.0, 0.50: 73.1, 0.80: 67.6}


@pytest.mark.parametrize("x_methanol", sorted(METHANOL_WATER_BUBBLE))
def test_methanol_water_bubble_point_at_one_atmosphere(database, x_methanol):
    """Bubble point of methanol-water at 1 atm, Peng-Robinson with the bundled
    k_ij = -0.078 (from memory), within 2 K of the handbook table (from memory).
    Measured: 87.4, 78.7, 74.0, 68.3 degC."""
    params = _params(database, ["CH3OH", "H2O"])
    z = [x_methanol, 1.0 - x_methanol]

    def vapour(T):
        return float(flash(params, T, 101325.0, z).vapour_fraction[0]) - 1e-7

    T_bubble = brentq(vapour, 320.0, 380.0, xtol=1e-4) - 273.15
    assert T_bubble == pytest.approx(METHANOL_WATER_BUBBLE[x_methanol], abs=2.0)


def test_two_phase_answers_balance_and_have_equal_fugacities(database):
    """Ammonia-loop gases cooled to -15...+15 degC at 100-250 bar (invented states):
    z = beta y + (1 - beta) x to 1e-12 and f_i^V = f_i^L to 1e-8 (the flash's definition);
    one vectorised call equals single calls."""
    names = ["H2", "N2", "CH4", "Ar", "NH3"]
    params = _params(database, names)
    T = np.repeat([258.15, 273.15, 288.15], 3)
    P = np.tile([100e5, 175e5, 250e5], 3)
    z = np.array([0.58, 0.19, 0.05, 0.02, 0.16])
    r = flash(params, T, P, z)
    assert r.all_converged and r.two_phase.all()
    beta = r.vapour_fraction[:, None]
    assert np.abs(beta * r.vapour + (1 - beta) * r.liquid - z).max() < 1e-12
    lv = gas_state(params, T, P, r.vapour, root="largest").log_fugacity_coefficients
    ll = gas_state(params, T, P, r.liquid, root="smallest").log_fugacity_coefficients
    assert np.abs(np.log(r.vapour) + lv - np.log(r.liquid) - ll).max() < 1e-8
    single = flash(params, T[4], P[4], z)
    assert single.vapour_fraction[0] == pytest.approx(r.vapour_fraction[4], rel=1e-9)
    # colder or higher pressure: less NH3 left in the vapour (state 2: 258 K, 250 bar;
    # 6: 288 K, 100 bar; 8: 288 K, 250 bar)
    assert r.vapour[2, 4] < r.vapour[8, 4] < r.vapour[6, 4]


def test_hot_gas_is_a_stable_single_phase(database):
    """Converter gas at 450 degC and 200 bar: the stability test finds no second phase."""
    params = _params(database, ["H2", "N2", "NH3"])
    r = flash(params, 723.15, 200e5, [0.6, 0.2, 0.2])
    assert not r.two_phase[0] and r.vapour_fraction[0] == 1.0
    assert r.messages[0] == "single vapour phase (stable)"


def test_raoult_limit_when_the_equation_of_state_is_off(database):
    """``model="raoult"``: K_i = P_sat,i/P exactly and y_i P = x_i P_sat,i (Raoult's law);
    water's P_sat comes from its own liquid data (NASA TM-4513 H2O(l) and H2O) and is
    7.38 kPa at 40 degC (IAPWS steam tables, from memory) within 2 %.  With the equation
    of state on, the water content of nitrogen over water at 40 degC and 1 bar agrees
    within 3 % with the Raoult answer built on Peng-Robinson's own pure-water vapour
    pressure (the vapour is nearly ideal and the liquid nearly pure at 1 bar).  That
    pressure, 6.5 kPa, is 12 % below the steam tables: Peng-Robinson with the acentric
    factor alone is known to be weak for water's vapour pressure at low temperature."""
    names = ["N2", "H2O"]
    params = _params(database, names)
    p_sat_water = condensed_vapour_pressure(database["H2O"], database["H2O(l)"])
    found = liquid_data_vapour_pressures(database, names)
    assert list(found) == ["H2O"] and float(found["H2O"](313.15)) == float(p_sat_water(313.15))
    assert float(p_sat_water(313.15)) == pytest.approx(7.38e3, rel=0.02)
    z = [0.8, 0.2]
    ideal = flash(params, 313.15, 1e5, z, model="raoult", liquid_vapour_pressure={"H2O": p_sat_water})
    assert ideal.two_phase[0]
    K = ideal.K_values[0]
    assert K[1] == pytest.approx(float(p_sat_water(313.15)) / 1e5, rel=1e-12)
    assert ideal.vapour[0, 1] * 1e5 == pytest.approx(ideal.liquid[0, 1] * float(p_sat_water(313.15)), rel=1e-10)
    assert "extrapolated" in ideal.messages[0] and "N2" in ideal.messages[0]
    real = flash(params, 313.15, 1e5, z)
    assert real.two_phase[0]
    raoult_pr = flash(params, 313.15, 1e5, z, model="raoult")
    assert real.vapour[0, 1] == pytest.approx(raoult_pr.vapour[0, 1], rel=0.03)
    assert float(saturation_pressure(params, 313.15)[0, 1]) == pytest.approx(7.38e3, rel=0.15)


def test_rachford_rice_against_hand_solution():
    """Two components, K = (2, 0.5), z = (0.5, 0.5): beta = 1/2 by hand; all-liquid and
    all-vapour feeds clip to 0 and 1."""
    beta = rachford_rice([[0.5, 0.5], [0.1, 0.9], [0.9, 0.1]], [[2.0, 0.5], [1.5, 0.2], [5.0, 0.9]])
    assert beta[0] == pytest.approx(0.5, abs=1e-14)
    assert beta[1] == 0.0 and beta[2] == 1.0


def test_bad_model_is_named(database):
    with pytest.raises(ValueError, match="flash model 'vdw': use one of peng-robinson, raoult"):
        flash(_params(database, ["NH3"]), 300.0, 1e5, [1.0], model="vdw")
