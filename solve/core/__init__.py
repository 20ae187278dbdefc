"""The equilibrium problem and its solution: matrices, Newton kernels, result objects.

Imports :mod:`eqdesign.thermo` only; knows nothing of studies, files, plots or the command line.
"""
from .equilibrium import equilibrium
from .result import (
    GAS_MODELS, CondensationWarning, EquilibriumInputError, EquilibriumResult, NotConvergedWarning,
)

__all__ = ["GAS_MODELS", "CondensationWarning", "EquilibriumInputError", "EquilibriumResult",
           "NotConvergedWarning", "equilibrium"]
