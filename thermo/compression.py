"""Compression work of gas mixtures: isentropic and polytropic, staged with intercooling,
ideal gas or Peng-Robinson real gas, vectorised over states.

What it computes, per mole of gas and for arrays of states: the shaft work [J/mol] to
compress a mixture from (T_in, P_in) to P_out with a stated efficiency, the outlet
temperature of each stage, and the heat removed in the intercoolers.

Thermodynamics (any textbook of chemical-engineering thermodynamics, e.g. J. M. Smith,
H. C. Van Ness, M. M. Abbott, Introduction to Chemical Engineering Thermodynamics, 7th ed.
(2005), ch. 7, from memory):

* molar enthalpy h(T, P, y) = sum_i y_i h°_i(T) + H_res(T, P, y) and entropy
  s(T, P, y) = sum_i y_i s°_i(T) - R ln(P/P°) - R sum_i y_i ln y_i + S_res(T, P, y),
  with h°, s° from the species' NASA 7-coefficient polynomials and the residual
  (departure) functions from Peng-Robinson (zero for the ideal gas);
* isentropic stage: T_2s from s(T_2s, P_2) = s(T_1, P_1); work w = (h(T_2s, P_2) - h_1)/eta;
  the actual outlet temperature from h(T_2, P_2) = h_1 + w;
* polytropic stage with polytropic efficiency eta_p: the limit of many small isentropic
  steps each of efficiency eta_p (here 40 equal pressure-ratio steps per stage);
* intercooling: between stages the gas is cooled at constant pressure to the stated
  temperature (condensation in the coolers is not modelled: the gas is assumed to stay
  one phase; check with :func:`eqdesign.thermo.flash.flash` where it matters).

Compressors at synthesis-loop pressures handle flammable hydrogen and toxic ammonia at
high pressure; machine selection and pressure-equipment design follow local codes and
licensed engineering practice, not these numbers.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from .models import P_STANDARD, R, Nasa7Polynomial
from .peng_robinson import CubicParameters, gas_state
from .species import Species

__all__ = ["CompressionResult", "GasProperties", "compress", "COMPRESSION_MODES"]

COMPRESSION_MODES = ("isentropic", "polytropic")
_POLYTROPIC_STEPS = 40


class GasProperties:
    """Molar enthalpy and entropy of a gas mixture, ideal or Peng-Robinson.

    Parameters
    ----------
    species : sequence of Species
        Gas species with NASA-polynomial (or formation-data) models.
    eos : CubicParameters or None
        Peng-Robinson constants in the same species order; None for the ideal gas.
    """

    def __init__(self, species: Sequence[Species], eos: CubicParameters | None = None):
        self.species = list(species)
        self.eos = eos
        self._nasa = None
        models = [sp.model for sp in self.species]
        if all(isinstance(m, Nasa7Polynomial) and len(m.T_bounds) in (2, 3) for m in models):
            # one- or two-range polynomials (a single range is its own upper range)
            self._nasa = (np.array([m.coefficients[0] for m in models]),
                          np.array([m.coefficients[-1] for m in models]),
                          np.array([m.T_bounds[1] if len(m.T_bounds) == 3 else np.inf for m in models]))
        if eos is not None and tuple(eos.names) != tuple(sp.name for sp in self.species):
            raise ValueError("the equation-of-state species must match the species list, in order")

    def _ideal(self, T):
        """h° [J/mol], s° [J/(mol K)], cp° [J/(mol K)] of every species, (n, ns): the NASA
        7-coefficient polynomials evaluated together (McBride, Gordon, Reno, NASA TM-4513)."""
        T = np.asarray(T, dtype=float)
        if self._nasa is None:
            parts = [sp.model.dimensionless(T) for sp in self.species]        # (cp/R, h/RT, s/R)
            cp, h, s = (np.stack([np.asarray(p[k], dtype=float) for p in parts], axis=-1) for k in range(3))
            return R * T[..., None] * h, R * s, R * cp
        low, high, mid = self._nasa
        Tc = T[..., None]
        a = np.where((Tc <= mid)[..., None], low, high)                 # (..., ns, 7)
        a0, a1, a2, a3, a4, a5, a6 = (a[..., k] for k in range(7))
        cp_R = a0 + Tc * (a1 + Tc * (a2 + Tc * (a3 + Tc * a4)))
        h_RT = a0 + Tc * (a1 / 2 + Tc * (a2 / 3 + Tc * (a3 / 4 + Tc * a4 / 5))) + a5 / Tc
        s_R = a0 * np.log(Tc) + Tc * (a1 + Tc * (a2 / 2 + Tc * (a3 / 3 + Tc * a4 / 4))) + a6
        return R * Tc * h_RT, R * s_R, R * cp_R

    def enthalpy_entropy(self, T, P, y):
        """h [J/mol], s [J/(mol K)] and cp_ideal [J/(mol K)] of the mixture, each (n,).

        The mixing term -R sum y ln y is included (it cancels in compression)."""
        T = np.asarray(T, dtype=float)
        h_i, s_i, cp_i = self._ideal(T)
        with np.errstate(divide="ignore", invalid="ignore"):
            mixing = -R * np.where(y > 0, y * np.log(np.where(y > 0, y, 1.0)), 0.0).sum(axis=-1)
        h = (y * h_i).sum(axis=-1)
        s = (y * s_i).sum(axis=-1) - R * np.log(P / P_STANDARD) + mixing
        if self.eos is not None:
            state = gas_state(self.eos, T, P, y, root="largest")
            h = h + state.residual_enthalpy
            s = s + state.residual_entropy
        return h, s, (y * cp_i).sum(axis=-1)

    def temperature_at_entropy(self, s_target, T_guess, P, y, tolerance=1e-10):
        """T [K] with s(T, P, y) = s_target; Newton steps with ds/dT = cp_ideal/T."""
        T = np.array(T_guess, dtype=float)
        for _ in range(100):
            _, s, cp = self.enthalpy_entropy(T, P, y)
            # slope cp_ideal/T: exact for the ideal gas, a close quasi-Newton slope otherwise
            step = (s_target - s) / (cp / T)
            T = T + np.clip(step, -0.3 * T, 0.5 * T)
            if np.all(np.abs(step) < tolerance * T):
                return T, True
        return T, bool(np.all(np.abs(step) < 1e-7 * T))

    def temperature_at_enthalpy(self, h_target, T_guess, P, y, tolerance=1e-10):
        """T [K] with h(T, P, y) = h_target; Newton steps with dh/dT = cp_ideal."""
        T = np.array(T_guess, dtype=float)
        for _ in range(100):
            h, _, cp = self.enthalpy_entropy(T, P, y)
            step = (h_target - h) / cp
            T = T + np.clip(step, -0.3 * T, 0.5 * T)
            if np.all(np.abs(step) < tolerance * T):
                return T, True
        return T, bool(np.all(np.abs(step) < 1e-7 * T))


@dataclass(frozen=True, eq=False)
class CompressionResult:
    """Compression of n states through one or more stages.

    Attributes
    ----------
    work : ndarray (n,)
        Shaft work per mole of gas [J/mol] (all stages).
    outlet_temperature : ndarray (n,)
        Gas temperature leaving the last stage [K].
    stage_outlet_temperature : ndarray (n, stages)
        Temperature leaving each stage [K] (before its intercooler).
    intercooler_duty : ndarray (n,)
        Heat removed between stages per mole [J/mol] (positive = removed); the cooling
        after the last stage is not included.
    isothermal_work : ndarray (n,)
        Reference minimum for an ideal gas at the inlet temperature, R T_in ln(P_out/P_in) [J/mol].
    stages : int
    mode : str
    model : str
        "ideal" or "peng-robinson".
    converged : ndarray (n,) of bool
    message : str
    """

    work: np.ndarray
    outlet_temperature: np.ndarray
    stage_outlet_temperature: np.ndarray
    intercooler_duty: np.ndarray
    isothermal_work: np.ndarray
    stages: int
    mode: str
    model: str
    converged: np.ndarray
    message: str


def _stage(props, T1, P1, P2, y, efficiency, mode):
    ok = np.ones(T1.shape, dtype=bool)
    if mode == "isentropic":
        ratios = [(P1, P2)]
    else:
        grid = P1[:, None] * (P2 / P1)[:, None] ** (np.arange(_POLYTROPIC_STEPS + 1) / _POLYTROPIC_STEPS)
        ratios = [(grid[:, k], grid[:, k + 1]) for k in range(_POLYTROPIC_STEPS)]
    T = T1
    work = np.zeros(T1.shape)
    for pa, pb in ratios:
        h1, s1, cp = props.enthalpy_entropy(T, pa, y)
        guess = T * (pb / pa) ** (R / cp)
        T2s, c1 = props.temperature_at_entropy(s1, guess, pb, y)
        h2s, _, _ = props.enthalpy_entropy(T2s, pb, y)
        w = (h2s - h1) / efficiency
        T, c2 = props.temperature_at_enthalpy(h1 + w, T2s + (1.0 / efficiency - 1.0) * (T2s - T), pb, y)
        work = work + w
        ok &= c1 & c2
    return work, T, ok


def compress(props: GasProperties, y, T_in, P_in, P_out, *, efficiency: float = 0.8,
             mode: str = "isentropic", stages: int = 1, intercooler_temperature=None) -> CompressionResult:
    """Work to compress a gas mixture in equal-pressure-ratio stages with intercooling.

    Parameters
    ----------
    props : GasProperties
        Species data and the gas model (ideal or Peng-Robinson).
    y : ndarray (ns,) | (n, ns)
        Mole fractions [-].
    T_in : float | ndarray (n,)
        Inlet temperature [K].
    P_in, P_out : float | ndarray (n,)
        Inlet and outlet pressure [Pa], P_out >= P_in.
    efficiency : float
        Isentropic (``mode="isentropic"``) or polytropic (``mode="polytropic"``)
        efficiency of each stage [-], 0 < efficiency <= 1.
    stages : int
        Number of stages with equal pressure ratio (P_out/P_in)^(1/stages).
    intercooler_temperature : float | ndarray (n,), optional
        Gas temperature after each intercooler [K]; default T_in.

    Returns
    -------
    CompressionResult

    Example: argon (cp = 5/2 R exactly in its NASA polynomial) from 300 K, 1 bar to
    10 bar, ideal gas, isentropic efficiency 1: w = cp T1 [(P2/P1)^(R/cp) - 1].

    >>> from eqdesign.thermo import bundled_database
    >>> props = GasProperties([bundled_database()["Ar"]])
    >>> r = compress(props, [1.0], 300.0, 1e5, 10e5, efficiency=1.0)
    >>> print(f"{float(r.work[0]):.1f} J/mol, {float(r.outlet_temperature[0]):.1f} K")
    9427.9 J/mol, 753.6 K
    """
    if mode not in COMPRESSION_MODES:
        raise ValueError(f"compression mode {mode!r}: use one of {', '.join(COMPRESSION_MODES)}")
    if not (0.0 < efficiency <= 1.0):
        raise ValueError(f"efficiency {efficiency!r}: give a fraction between 0 (excluded) and 1")
    if int(stages) != stages or stages < 1:
        raise ValueError(f"stages {stages!r}: give a whole number of stages, 1 or more")
    stages = int(stages)
    ns = len(props.species)
    y = np.atleast_2d(np.asarray(y, dtype=float))
    n = int(np.prod(np.broadcast_shapes(np.shape(T_in), np.shape(P_in), np.shape(P_out), y.shape[:-1]))) or 1
    T1 = np.broadcast_to(np.asarray(T_in, dtype=float), (n,)).copy()
    P1 = np.broadcast_to(np.asarray(P_in, dtype=float), (n,)).copy()
    P2 = np.broadcast_to(np.asarray(P_out, dtype=float), (n,)).copy()
    y = np.broadcast_to(y, (n, ns))
    y = y / y.sum(axis=1, keepdims=True)
    if np.any(P2 < P1):
        raise ValueError("the outlet pressure must not be below the inlet pressure")
    T_cool = T1 if intercooler_temperature is None else np.broadcast_to(
        np.asarray(intercooler_temperature, dtype=float), (n,))
    ratio = (P2 / P1) ** (1.0 / stages)
    T, P = T1, P1
    work = np.zeros(n)
    duty = np.zeros(n)
    stage_T = np.zeros((n, stages))
    ok = np.ones(n, dtype=bool)
    for k in range(stages):
        Pn = P * ratio
        w, T_out, c = _stage(props, T, P, Pn, y, efficiency, mode)
        work += w
        ok &= c
        stage_T[:, k] = T_out
        if k < stages - 1:
            h_hot, _, _ = props.enthalpy_entropy(T_out, Pn, y)
            h_cold, _, _ = props.enthalpy_entropy(T_cool, Pn, y)
            duty += h_hot - h_cold
            T = T_cool
        else:
            T = T_out
        P = Pn
    bad = int((~ok).sum())
    message = "all states converged" if bad == 0 else f"{bad} state(s) did not converge (NaN)"
    work = np.where(ok, work, np.nan)
    return CompressionResult(work=work, outlet_temperature=np.where(ok, T, np.nan),
                             stage_outlet_temperature=stage_T, intercooler_duty=duty,
                             isothermal_work=R * T1 * np.log(P2 / P1), stages=stages, mode=mode,
                             model="ideal" if props.eos is None else "peng-robinson",
                             converged=ok, message=message)
