"""The one batched NASA-7 evaluator (thermo.models.Nasa7Table) agrees with the per-species
polynomials and with published data."""
from __future__ import annotations

import numpy as np
import pytest

from eqdesign.thermo.models import R, Nasa7Polynomial, Nasa7Table
from eqdesign.thermo.reactions import bundled_database
from eqdesign.thermo.species import standard_gibbs_RT


def _nasa_species(names):
    db = bundled_database()
    return [db[n] for n in names if isinstance(db[n].model, Nasa7Polynomial)]


def test_table_matches_each_polynomial_across_ranges_and_outside():
    """Species × states in one call equal the species one at a time (range boundaries
    included, end ranges extended outwards)."""
    records = _nasa_species(["N2", "H2", "NH3", "CH4", "H2O", "CO", "CO2", "C(gr)"])
    assert len(records) >= 6
    T = np.array([150.0, 200.0, 298.15, 999.999, 1000.0, 1000.001, 2500.0, 6000.0, 7000.0])
    table = Nasa7Table.from_polynomials([sp.model for sp in records])
    cp, h, s = table.dimensionless(T)
    g = table.gibbs_RT(T)
    for j, sp in enumerate(records):
        cp_j, h_j, s_j = sp.model.dimensionless(T)
        np.testing.assert_allclose(cp[:, j], cp_j, rtol=1e-13)
        np.testing.assert_allclose(h[:, j], h_j, rtol=1e-13, atol=1e-12)
        np.testing.assert_allclose(s[:, j], s_j, rtol=1e-13)
        np.testing.assert_allclose(g[:, j], sp.model.gibbs_RT(T), rtol=1e-13, atol=1e-12)
        np.testing.assert_allclose(g[:, j], h_j - s_j, rtol=1e-12, atol=1e-10)
    np.testing.assert_allclose(standard_gibbs_RT(records, T[1:7]), g[1:7], rtol=1e-15)


def test_table_heat_capacity_of_nitrogen_against_janaf():
    """N2: cp°(1000 K) = 32.698 J/(mol K) in NIST-JANAF (Chase 1998, from memory)."""
    n2 = _nasa_species(["N2"])[0]
    cp, _ = Nasa7Table.from_polynomials([n2.model]).heat_capacity_enthalpy(np.array([1000.0]))
    assert R * cp[0, 0] == pytest.approx(32.698, abs=0.02)


def test_packed_arrays_pad_short_species():
    one = Nasa7Polynomial((300.0, 1000.0), [[3.5, 0, 0, 0, 0, -1000.0, 3.0]])
    two = _nasa_species(["N2"])[0].model
    table = Nasa7Table.from_polynomials([one, two])
    assert table.n_ranges.tolist() == [1, 2]
    assert table.coefficients.shape == (2, 2, 7) and not table.coefficients[0, 1].any()
    assert table.bounds[0].tolist() == [300.0, 1000.0, np.inf]
    cp, _, _ = table.dimensionless(np.array([2000.0]))
    assert cp[0, 0] == 3.5                         # single range extended outwards
