"""Thermodynamic data and models of eqdesign: species, K(T), equations of state.

Pure physics: nothing here writes files or draws plots.

Public entry point used by outside checks::

    from eqdesign.thermo import equilibrium_constant
    equilibrium_constant("N2 + 3 H2 = 2 NH3", 700)      # dimensionless, 1 bar standard state
"""
from .database import AmbiguousSpeciesError, DatabaseError, SpeciesDatabase, UnknownSpeciesError
from .models import P_STANDARD, R, T_REF, FormationDataModel, Nasa7Polynomial
from .reactions import (
    K_to_Kp, K_to_Kx, Kc_to_Kp, Kc_unit, Kp_to_K, Kp_to_Kc, Kp_unit, Kx_to_K, Reaction,
    ReactionDerivedModel, ReactionError,
    ReactionLevelData,
    bundled_database, equilibrium_constant, reaction_quotient, shift_direction,
)
from .species import CriticalConstants, ExtrapolationWarning, Species
from .units import UnitError, to_kelvin, to_pascal, to_si

__all__ = [
    "AmbiguousSpeciesError", "DatabaseError", "SpeciesDatabase", "UnknownSpeciesError", "P_STANDARD",
    "R", "T_REF", "FormationDataModel", "Nasa7Polynomial", "K_to_Kp", "K_to_Kx", "Kc_to_Kp",
    "Kp_to_Kc", "Kc_unit", "Kp_unit", "Kp_to_K", "Kx_to_K",
    "Reaction", "ReactionDerivedModel", "ReactionError", "ReactionLevelData", "bundled_database", "equilibrium_constant",
    "reaction_quotient", "shift_direction", "CriticalConstants", "ExtrapolationWarning", "Species",
    "UnitError", "to_kelvin", "to_pascal", "to_si",
]
