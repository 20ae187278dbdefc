"""Wüstite (FeO(s)) and the Fe-FeO-Fe3O4 invariant.

Published check: wüstite is unstable below the Fe-FeO-Fe3O4 eutectoid, about 570 °C
(843 K); any Fe-O phase diagram, e.g. L. S. Darken, R. W. Gurry, J. Am. Chem. Soc. 67, 1398
(1945) (from memory). NIST-JANAF (M. W. Chase Jr., J. Phys. Chem. Ref. Data Monograph 9,
1998) tabulates wüstite as Fe0.947O(s); the NASA TM-4513 FeO(s) record is stoichiometric
FeO, and with it alone wüstite would be stable down to about 450 K. No Fe0.947O record is
bundled with cantera, so the database keeps FeO(s) but starts its range at 843 K.
"""
from __future__ import annotations

import os

import numpy as np
import pytest

from eqdesign.solve.core.equilibrium import equilibrium
from eqdesign.thermo import equilibrium_constant

EUTECTOID_K = 570.0 + 273.15          # from memory (see the module docstring)
DISPROPORTIONATION = "4 FeO(s) = Fe(s) + Fe3O4(s)"


def _wustite_stable(db, T):
    """True where FeO(s) is inside its data range and more stable than Fe + Fe3O4."""
    with np.errstate(over="ignore"):
        k = np.array([equilibrium_constant(DISPROPORTIONATION, t, database=db) if db["FeO(s)"].valid_at(t)
                      else np.inf for t in T])
    return k < 1.0


def test_the_invariant_temperature_is_the_published_eutectoid(db):
    """The lowest temperature at which the data allow wüstite: 843 K ± 25 K."""
    T = np.arange(300.0, 1180.0, 1.0)            # alpha iron (Fe(s)) is valid to 1184 K
    stable = _wustite_stable(db, T)
    T_invariant = T[np.argmax(stable)]
    assert stable.any() and np.all(stable[T >= T_invariant])
    assert abs(T_invariant - EUTECTOID_K) <= 25.0, T_invariant
    # Above it the sequence in H2/H2O is Fe | FeO | Fe3O4: the Fe/FeO ratio lies below the
    # FeO/Fe3O4 one. (With the stoichiometric record the two ratios do not meet at 843 K:
    # the invariant here is set by the range bound, not by a crossing of the two equilibria.)
    for t in (T_invariant + 5.0, 1000.0, 1150.0):
        r_iron = equilibrium_constant("FeO(s) + H2 = Fe(s) + H2O", t, database=db)
        r_magnetite = equilibrium_constant("Fe3O4(s) + H2 = 3 FeO(s) + H2O", t, database=db)
        assert r_iron < r_magnetite, t


def test_the_stoichiometric_record_alone_would_put_the_invariant_far_too_low(db):
    """Why the range is cut: without it, 4 FeO = Fe + Fe3O4 has K < 1 (wüstite stable)
    already at 500 K, about 340 K below the published eutectoid."""
    with pytest.warns(UserWarning):
        k = equilibrium_constant(DISPROPORTIONATION, 500.0, database=db)
    assert k < 1.0
    assert db["FeO(s)"].valid_at(500.0) is False
    assert db["FeO(s)"].T_min == 843.0
    assert "843 K" in db["FeO(s)"].data_note


def test_magnetite_iron_boundary_in_hydrogen_at_700_K(db):
    """Below the eutectoid magnetite is reduced straight to iron: Fe3O4 + 4 H2 = 3 Fe + 4 H2O.
    The H2O/H2 ratio at 700 K from our solver equals the one computed independently by
    cantera (reference library, PyPI `cantera`) from the same NASA records (Fe(a) as the
    9-coefficient record), 0.12646."""
    import cantera as ct
    folder = os.path.join(os.path.dirname(ct.__file__), "data")
    records = {s.name: s for s in ct.Species.list_from_file(os.path.join(folder, "nasa_condensed.yaml"))
               + ct.Species.list_from_file(os.path.join(folder, "nasa_gas.yaml"))}
    T = 700.0

    def g(name):                                    # J/kmol
        return records[name].thermo.h(T) - T * records[name].thermo.s(T)

    dG = 3 * g("Fe(a)") + 4 * g("H2O") - g("Fe3O4(s)") - 4 * g("H2")
    ratio_cantera = float(np.exp(-dG / (ct.gas_constant * T) / 4))
    r = equilibrium(["Fe3O4(s)", "Fe(s)", "H2", "H2O"], {"Fe3O4(s)": 1.0, "H2": 10.0}, T, 1e5)
    assert r.converged.all()
    amounts = r.amounts
    assert amounts["Fe3O4(s)"] > 0 and amounts["Fe(s)"] > 0
    ratio = amounts["H2O"] / amounts["H2"]
    assert ratio == pytest.approx(ratio_cantera, rel=1e-8)
    assert ratio == pytest.approx(0.12646, rel=1e-4)
