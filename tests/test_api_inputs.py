"""Input problems at the Python API boundary are refused with the project's own errors.

Every case below used to end in a raw TypeError / AttributeError / IndexError, a
numpy broadcasting error, or (worse) a quiet wrong answer: a target of 0 conversion
answered with a range end, n_scan=1 answering 500 K where the answer is 833 K, K(0 K)
returning NaN, an unfed key giving a conversion of -inf.  The check is the error class
(a ValueError subclass of the project) and the message naming the argument.
"""
from __future__ import annotations

import numpy as np
import pytest

from eqdesign.solve.core.equilibrium import equilibrium
from eqdesign.solve.core.result import EquilibriumInputError
from eqdesign.solve.studies.adiabatic import adiabatic_equilibrium
from eqdesign.solve.studies.beds import staged_converter
from eqdesign.solve.studies.carbon import carbon_activity
from eqdesign.solve.studies.carbon_limit import carbon_limit
from eqdesign.solve.studies.enthalpy import feed_enthalpy
from eqdesign.solve.studies.feeds import FeedRatio
from eqdesign.solve.studies.inverse import (feed_ratio_for_conversion, pressure_for_conversion,
                                            temperature_for_conversion)
from eqdesign.solve.studies.maps import conversion_map
from eqdesign.solve.studies.uncertainty import propagate_equilibrium
from eqdesign.thermo.data_uncertainty import UncertaintyInputError
from eqdesign.thermo.reactions import ReactionError, equilibrium_constant

NH3 = ["N2", "H2", "NH3"]
FEED = {"N2": 1.0, "H2": 3.0}


@pytest.mark.parametrize("args,kwargs,message", [
    ((NH3, [("N2", 1)], 700, 1e7), {}, "feed must be a mapping of species name to amount"),
    ((NH3, None, 700, 1e7), {}, "feed must be a mapping"),
    ((None, FEED, 700, 1e7), {}, "species must be a list of species names"),
    (("N2", FEED, 700, 1e7), {}, "species must be a list of species names"),
    ((NH3, FEED, [700, 800], [1e7, 2e7, 3e7]), {}, r"the shapes of T \(2,\), P \(3,\)"),
    ((NH3, FEED, None, 1e7), {}, "T must be a temperature"),
    ((NH3, FEED, 700 + 1j, 1e7), {}, "T must be a temperature"),
    ((NH3, FEED, np.nan, 1e7), {}, "temperatures must be finite and above 0 K"),
    ((NH3, FEED, 700, -1.0), {}, "pressures must be finite and above 0 Pa"),
    ((NH3, {"N2": 1e-320}, 700, 1e7), {}, "the feed total is below"),
    ((NH3, {"N2": 1e-310, "H2": 3e-310}, 700, 1e7), {}, "the feed total is below"),
    ((NH3, FEED, 700, 1e7), dict(tolerance=-1.0), "tolerance must be a finite number above 0"),
    ((NH3, FEED, 700, 1e7), dict(max_iterations=0), "max_iterations must be a whole number of at least 1"),
    ((NH3, FEED, 700, 1e7), dict(max_iterations=2.5), "max_iterations must be a whole number"),
    ((NH3, FEED, 700, 1e7), dict(g0_shift=[1.0, 2.0]), "g0_shift must be a mapping"),
    ((NH3, FEED, 700, 1e7), dict(g0_shift={"NH3": np.nan}), "g0_shift of NH3 must be finite"),
    ((NH3, FEED, 700, 1e7), dict(enthalpy=np.nan), "enthalpy must be finite"),
    ((NH3, FEED, 700, 1e7), dict(reactions="N2 + 3 H2 = 2 NH3"), "reactions must be a list of reaction texts"),
    ((NH3, FEED, 700, 1e7), dict(initial=5), "initial must be an EquilibriumResult"),
    ((NH3, FEED, 700, 1e7), dict(key=3), "key must be a species name"),
])
def test_equilibrium_refuses_bad_input(args, kwargs, message):
    with pytest.raises(EquilibriumInputError, match=message):
        equilibrium(*args, **kwargs)


def test_conversion_of_an_unfed_key_is_refused_not_minus_infinity():
    """(n_in − n_out)/n_in has no meaning for n_in = 0: it used to return -inf."""
    res = equilibrium(NH3, {"H2": 3.0, "NH3": 1.0}, 700.0, 1e7, warn=False)
    with pytest.raises(EquilibriumInputError, match="key reactant 'N2' is not in the feed"):
        res.conversion("N2")


@pytest.mark.parametrize("T", [0.0, -5.0, np.nan, [300.0, 0.0]])
def test_equilibrium_constant_refuses_non_physical_temperatures(T):
    """K(T) = exp(-ΔrG°/RT) is undefined at and below 0 K; it used to return NaN."""
    with pytest.raises(ReactionError, match="T must be finite and above 0 K"):
        equilibrium_constant("N2 + 3 H2 = 2 NH3", T)


@pytest.mark.parametrize("target", [0.0, -0.1, 1.0, 1.2, np.nan, [0.2, 0.0]])
def test_inverse_questions_refuse_targets_outside_zero_one(target):
    """A conversion of 0 is the feed itself and 1 is never an equilibrium (K finite)."""
    with pytest.raises(EquilibriumInputError, match="target"):
        temperature_for_conversion(NH3, FEED, "200 bar", "N2", target, T_range=(500, 1000))
    with pytest.raises(EquilibriumInputError, match="target"):
        pressure_for_conversion(NH3, FEED, 700, "N2", target)


@pytest.mark.parametrize("n_scan", [1, 0, 5.5, "41", True])
def test_inverse_questions_refuse_a_scan_of_fewer_than_two_points(n_scan):
    """n_scan=1 used to answer 500 K for the 20 % ammonia question whose answer is 833 K."""
    with pytest.raises(EquilibriumInputError, match="n_scan must be a whole number of at least 2"):
        temperature_for_conversion(NH3, FEED, "200 bar", "N2", 0.2, T_range=(500, 1000), n_scan=n_scan)
    with pytest.raises(EquilibriumInputError, match="n_scan"):
        feed_ratio_for_conversion(["CO", "H2O", "CO2", "H2"], {"CO": 1}, 500, 2e6, "CO", 0.9, n_scan=n_scan)


@pytest.mark.parametrize("kwargs,message", [
    (dict(feed={"H2": 3.0}), "the key reactant N2 must be in the feed"),
    (dict(P=[1e7, 2e7], target=[0.1, 0.2, 0.3]), r"the shapes of P \(2,\), target \(3,\)"),
    (dict(T_range=(500, 1000, 3)), "T_range: give \\(low, high\\)"),
    (dict(T_range=None), "T_range: give \\(low, high\\)"),
    (dict(T_range=(900, 500)), "T_range: need 0 < low < high"),
    (dict(feed=None), "feed must be a mapping"),
    (dict(key=None), "key must be the name of the key reactant"),
    (dict(species="N2"), "species must be a list"),
])
def test_temperature_for_conversion_refuses_bad_input(kwargs, message):
    args = dict(species=NH3, feed=FEED, P="200 bar", key="N2", target=0.2, T_range=(500, 1000))
    args.update(kwargs)
    with pytest.raises(EquilibriumInputError, match=message):
        temperature_for_conversion(args.pop("species"), args.pop("feed"), args.pop("P"), args.pop("key"),
                                   args.pop("target"), **args)


@pytest.mark.parametrize("kwargs,message", [
    (dict(feed=None), "feed must be a mapping"),
    (dict(chunk=2.5), "chunk must be a whole number of at least 1"),
    (dict(chunk=0), "chunk must be a whole number of at least 1"),
    (dict(key=None), "key must be the name of the key reactant"),
    (dict(feed={"H2": 3.0}), "the key reactant N2 must be in the feed"),
])
def test_conversion_map_refuses_bad_input(kwargs, message):
    args = dict(feed=FEED, T=[700.0], P=1e7, key="N2")
    args.update(kwargs)
    with pytest.raises(EquilibriumInputError, match=message):
        conversion_map(NH3, args.pop("feed"), **args)


@pytest.mark.parametrize("call,message", [
    (lambda: feed_enthalpy(NH3, None, 700.0, 1e5), "feed must be a mapping"),
    (lambda: feed_enthalpy(NH3, {"N2": -1.0}, 700.0, 1e5), "feed of N2 must be non-negative"),
    (lambda: feed_enthalpy(NH3, {"N2": 0.0}, 700.0, 1e5), "the feed is empty"),
    (lambda: feed_enthalpy(NH3, FEED, [700.0, 800.0], [1e5, 2e5, 3e5]), "do not broadcast"),
    (lambda: adiabatic_equilibrium(NH3, FEED, -700.0, 1e7, key="N2"), "temperatures must be finite"),
    (lambda: adiabatic_equilibrium(NH3, FEED, 700.0, np.nan, key="N2"), "pressures must be finite"),
    (lambda: staged_converter(NH3, FEED, [1e7, 2e7], "N2", 700.0, n_beds=2), "P must be a single pressure"),
    (lambda: staged_converter(NH3, FEED, 1e7, "N2", 700.0, n_beds=1.5), "n_beds must be a whole number"),
    (lambda: staged_converter(NH3, FEED, 1e7, "N2", 700.0, target=1.0), "strictly between 0 and 1"),
    (lambda: staged_converter(NH3, FEED, 1e7, "N2", 0.0, n_beds=1), "inlet_T: temperatures must be finite"),
    (lambda: carbon_activity({"CO": 1}), "give the EquilibriumResult"),
    (lambda: carbon_limit(["CH4", "H2O", "CO", "CO2", "H2"], {"CH4": 1}, T=[1000.0, 1100.0], P=[1e5, 2e5, 3e5]),
     "do not broadcast"),
    (lambda: carbon_limit(["CH4", "H2O", "CO", "CO2", "H2"], None, T=1000.0, P=1e5), "feed must be a mapping"),
    (lambda: FeedRatio("H2O", "H2O"), "numerator and denominator are the same species"),
    (lambda: FeedRatio(None, "CO"), "feed ratio numerator must be a species name"),
])
def test_studies_refuse_bad_input(call, message):
    with pytest.raises(EquilibriumInputError, match=message):
        call()


@pytest.mark.parametrize("kwargs,message", [
    (dict(samples=None), "samples None: give a whole number"),
    (dict(samples=20.5), "samples 20.5: give a whole number"),
    (dict(level="high"), "level 'high': give a coverage probability"),
    (dict(seed="one"), "seed 'one': give None or a whole number"),
])
def test_uncertainty_refuses_bad_settings(kwargs, message):
    with pytest.raises(UncertaintyInputError, match=message):
        propagate_equilibrium(NH3, FEED, 700.0, 1e7, key="N2", **kwargs)


def test_uncertainty_refuses_bad_conditions():
    with pytest.raises(EquilibriumInputError, match="T must be a temperature"):
        propagate_equilibrium(NH3, FEED, None, 1e7, key="N2", method="linear")
