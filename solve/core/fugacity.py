"""Real-gas correction for the equilibrium solver: Peng-Robinson fugacity coefficients.

The gas chemical potential becomes ``μ_i/RT = g°_i/RT + ln(y_i P/P°) + ln φ_i(T, P, y)``
with ln φ_i from :mod:`eqdesign.thermo.peng_robinson` (Peng and Robinson, Ind. Eng.
Chem. Fundam. 15 (1976) 59).  The solver holds ln φ fixed within each Newton step and
updates it from the new composition (successive substitution), so convergence is
checked on the full real-gas conditions.
"""
from __future__ import annotations

from typing import Mapping, Sequence

import numpy as np

from ...thermo.models import R
from ...thermo.peng_robinson import CubicParameters, binary_interaction_matrix, gas_state


class FugacityModel:
    """Peng-Robinson ln φ for a fixed list of gas species.

    Parameters
    ----------
    gas_species : sequence of Species
        Gas species records; each needs critical constants (a clear error names those
        that lack them).
    binary_interaction : mapping, optional
        ``{("CO2", "H2"): kij}`` overrides of the bundled kij table.
    """

    def __init__(self, gas_species: Sequence, binary_interaction: Mapping | None = None):
        names = [sp.name for sp in gas_species]
        kij = binary_interaction_matrix(names, overrides=dict(binary_interaction or {}))
        self.names = names
        # quantum gases (H2, He, Ne) with the effective critical constants of Gunn, Chueh
        # and Prausnitz, AIChE J. 12 (1966) 937
        self.params = CubicParameters.from_species(gas_species, interaction=kij, quantum_gases=True)

    def state(self, T, P, y_sub, columns):
        """GasState for compositions ``y_sub`` (k, len(columns)) over species ``columns``."""
        y = np.zeros((np.shape(y_sub)[0], len(self.names)))
        y[:, columns] = y_sub
        return gas_state(self.params, np.asarray(T, dtype=float), np.asarray(P, dtype=float), y)

    def ln_phi(self, T, P, y_sub, columns):
        """ln φ (k, len(columns)) of the species ``columns`` at compositions ``y_sub``."""
        return self.state(T, P, y_sub, columns).log_fugacity_coefficients[:, columns]

    def residual_enthalpy(self, T, P, y_sub, columns):
        """Residual molar enthalpy of the gas [J/mol], shape (k,)."""
        return self.state(T, P, y_sub, columns).residual_enthalpy

    def condensation_possible(self, T, P, y_sub, columns):
        """True where the gas at composition ``y_sub`` is not a stable single gas phase:
        a liquid-like root of the cubic is more stable at that composition, or a
        liquid-like trial phase lowers the Gibbs energy (tangent-plane test), so part of
        the gas would condense and a gas-only equilibrium does not apply.  Shape (k,)."""
        y = np.zeros((np.shape(y_sub)[0], len(self.names)))
        y[:, columns] = y_sub
        T = np.asarray(T, dtype=float)
        P = np.asarray(P, dtype=float)
        vapour = gas_state(self.params, T, P, y, root="largest")
        dense = gas_state(self.params, T, P, y, root="smallest")
        two_roots = (~vapour.single_root) & (dense.residual_gibbs_energy < vapour.residual_gibbs_energy)
        # one root only: liquid-like when below the mixture's pseudo-critical temperature
        # (Kay's rule, T_pc = Σ y_i Tc_i) with a molar volume below the critical volume
        # of a Peng-Robinson fluid, v_c = 3.95 b (Z_c = 0.307); common practice, no source
        T_pc = y @ self.params.critical_temperature
        v_over_b = vapour.compressibility * R * T / (P * (y @ self.params.covolume))
        one_dense = vapour.single_root & (T < T_pc) & (v_over_b < 3.95)
        dense = two_roots | one_dense
        rest = ~dense
        if rest.any():
            dense[rest] = self._liquid_trial_unstable(
                T[rest] if T.ndim else np.full(int(rest.sum()), float(T)),
                P[rest] if P.ndim else np.full(int(rest.sum()), float(P)),
                y[rest], vapour.log_fugacity_coefficients[rest])
        return dense

    def _liquid_trial_unstable(self, T, P, z, ln_phi_z, max_iterations: int = 60):
        """Tangent-plane stability test of the gas ``z`` against a liquid-like trial phase
        (M. L. Michelsen, "The isothermal flash problem. Part I. Stability", Fluid Phase
        Equilibria 9 (1982) 1-19): successive substitution on ln W_i = d_i - ln φ_i(w),
        d_i = ln z_i + ln φ_i(z), from Wilson's K-values (G. M. Wilson, 1968; as given in
        Michelsen's paper).  The gas is unstable (would condense in part) when the trial
        converges to Σ W_i > 1.  Vectorised over states; shape (k,)."""
        prm = self.params
        present = z > 0
        with np.errstate(divide="ignore"):
            d = np.where(present, np.log(np.where(present, z, 1.0)) + ln_phi_z, -np.inf)
        ln_K = (np.log(prm.critical_pressure / P[:, None])
                + 5.373 * (1.0 + prm.acentric_factor) * (1.0 - prm.critical_temperature / T[:, None]))
        ln_W = np.where(present, d - ln_phi_z - ln_K, -np.inf)       # liquid-like: W = z / K
        unstable = np.zeros(T.size, dtype=bool)
        active = np.ones(T.size, dtype=bool)
        for _ in range(max_iterations):
            if not active.any():
                break
            rows = np.flatnonzero(active)
            W = np.exp(ln_W[rows])
            w = W / W.sum(axis=1, keepdims=True)
            lp = gas_state(prm, T[rows], P[rows], w, root="smallest").log_fugacity_coefficients
            new = np.where(present[rows], d[rows] - lp, -np.inf)
            change = np.nanmax(np.where(present[rows], np.abs(new - ln_W[rows]), 0.0), axis=1)
            ln_W[rows] = new
            trivial = np.nanmax(np.where(present[rows], np.abs(w - z[rows]), 0.0), axis=1) < 1e-6
            done = (change < 1e-10) | trivial
            unstable[rows] = np.exp(new).sum(axis=1) > 1.0 + 1e-8
            unstable[rows[trivial]] = False
            active[rows[done]] = False
        return unstable

