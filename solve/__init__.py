"""Equilibrium solver, sweeps and design studies of eqdesign.

Public entry point used by outside checks::

    from eqdesign.solve import equilibrium
"""
from .equilibrium import (
    EquilibriumInputError, EquilibriumResult, NotConvergedWarning, equilibrium,
)

__all__ = ["EquilibriumInputError", "EquilibriumResult", "NotConvergedWarning", "equilibrium"]
