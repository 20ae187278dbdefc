"""Equilibrium solver, sweeps and design studies of eqdesign.

Public entry points used by outside checks::

    from eqdesign.solve import equilibrium, temperature_for_conversion, adiabatic_equilibrium
"""
from .cases import Case, CaseError, CaseProblem, load_case, parse_case
from .design import (
    CarbonLimit, Crossing, FeedRatioAnswer, PressureAnswer, TemperatureAnswer, carbon_activity,
    carbon_activity_by_route, carbon_limit, feed_ratio_for_conversion, graphite_stable,
    pressure_for_conversion, temperature_for_conversion,
)
from .energy import (
    AdiabaticResult, BedRecord, StagedConverterResult, adiabatic_equilibrium, feed_enthalpy,
    isothermal_duty, mixture_enthalpy, staged_converter,
)
from .equilibrium import (
    CondensationWarning, EquilibriumInputError, EquilibriumResult, NotConvergedWarning, equilibrium,
)
from .runner import OutputExistsError, RunResult, run_case, write_outputs
from .sweep import ConversionMap, SweepAxis, conversion_map
from .uncertainty import (
    Band, EquilibriumUncertainty, FeedRatioUncertainty, PressureUncertainty, TemperatureUncertainty,
    UncertaintyDefaults, UncertaintyInputError, UncertaintySettings, feed_ratio_interval, html_section,
    ln_K_uncertainty, parameter_map, pressure_interval, propagate_equilibrium, ranking_rows,
    reaction_level_ln_K_uncertainty, settings_from_mapping, species_uncertainty, temperature_interval,
)

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
