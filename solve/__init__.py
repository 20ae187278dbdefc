"""Equilibrium solver, design studies, case files and reports of eqdesign.

Layers, each importing only those before it::

    core/      the equilibrium problem, Newton kernels, result objects, equilibrium()
    studies/   maps, inverse questions, energy balances, staged beds, carbon, uncertainty
    casefile/  reading and checking case files               (loaded on first use)
    report/    running a case, figures, HTML, output folder   (loaded on first use)
    cli.py     the ``eqdesign`` command

Importing this package loads the core and the studies only: no YAML reader, no matplotlib,
and the user's matplotlib backend is never changed.

Public entry points used by outside checks::

    from eqdesign.solve import equilibrium, temperature_for_conversion, adiabatic_equilibrium
"""
from __future__ import annotations

import importlib

from ..thermo.data_uncertainty import UncertaintyDefaults, UncertaintyInputError, species_uncertainty
from .core import (
    CondensationWarning, EquilibriumInputError, EquilibriumResult, NotConvergedWarning, equilibrium,
)
from .studies.adiabatic import AdiabaticResult, adiabatic_equilibrium
from .studies.beds import BedRecord, StagedConverterResult, staged_converter
from .studies.carbon import carbon_activity, carbon_activity_by_route, graphite_stable
from .studies.carbon_limit import CarbonLimit, carbon_limit
from .studies.enthalpy import feed_enthalpy, isothermal_duty, mixture_enthalpy
from .studies.intervals import (
    FeedRatioUncertainty, PressureUncertainty, TemperatureUncertainty, feed_ratio_interval,
    pressure_interval, temperature_interval,
)
from .studies.inverse import (
    FeedRatioAnswer, PressureAnswer, TemperatureAnswer, feed_ratio_for_conversion,
    pressure_for_conversion, temperature_for_conversion,
)
from .studies.maps import ConversionMap, SweepAxis, conversion_map
from .studies.roots import Crossing
from .studies.uncertainty import (
    Band, EquilibriumUncertainty, UncertaintySettings, ln_K_uncertainty, parameter_map,
    propagate_equilibrium, ranking_rows, reaction_level_ln_K_uncertainty,
)

#: Names served lazily from the case-file and report layers (first use imports them).
_LAZY = {
    "Case": "casefile", "CaseError": "casefile", "CaseProblem": "casefile", "load_case": "casefile",
    "parse_case": "casefile", "settings_from_mapping": "casefile.uncertainty_settings",
    "OutputExistsError": "report", "RunResult": "report", "run_case": "report", "write_outputs": "report",
    "html_section": "report.uncertainty_html",
}


def __getattr__(name: str):
    """Load the case-file and report layers on first use (PEP 562)."""
    if name in _LAZY:
        value = getattr(importlib.import_module(f"{__name__}.{_LAZY[name]}"), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


__all__ = [
    "CondensationWarning", "EquilibriumInputError", "EquilibriumResult", "NotConvergedWarning",
    "equilibrium",
    "ConversionMap", "SweepAxis", "conversion_map",
    "AdiabaticResult", "BedRecord", "StagedConverterResult", "adiabatic_equilibrium",
    "feed_enthalpy", "isothermal_duty", "mixture_enthalpy", "staged_converter",
    "CarbonLimit", "Crossing", "FeedRatioAnswer", "PressureAnswer", "TemperatureAnswer",
    "carbon_activity", "carbon_activity_by_route", "carbon_limit", "feed_ratio_for_conversion",
    "graphite_stable", "pressure_for_conversion", "temperature_for_conversion",
    "Case", "CaseError", "CaseProblem", "load_case", "parse_case",
    "OutputExistsError", "RunResult", "run_case", "write_outputs",
    "Band", "EquilibriumUncertainty", "FeedRatioUncertainty", "PressureUncertainty", "TemperatureUncertainty", "UncertaintyDefaults",
    "UncertaintyInputError", "UncertaintySettings", "html_section", "ln_K_uncertainty",
    "feed_ratio_interval", "parameter_map", "pressure_interval", "propagate_equilibrium", "ranking_rows", "reaction_level_ln_K_uncertainty",
    "settings_from_mapping", "species_uncertainty", "temperature_interval",
]
