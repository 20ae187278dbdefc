"""Peng-Robinson equation of state for gas mixtures, vectorised over many states.

What it computes, for arrays of states (temperature, pressure, composition):
compressibility factor Z, the log fugacity coefficient ln(phi_i) of every species,
residual (departure) molar enthalpy, Gibbs energy and entropy. These are the real-gas
corrections an equilibrium solver needs: K = prod (y_i phi_i P / P_standard)^nu_i, and
H = H_ideal + H_res for energy balances.

Equation of state (Peng and Robinson 1976)::

    P = R T / (v - b) - a(T) / (v (v + b) + b (v - b))

    a_i(T) = Omega_a (R Tc_i)^2 / Pc_i * [1 + kappa_i (1 - sqrt(T / Tc_i))]^2
    b_i    = Omega_b R Tc_i / Pc_i
    kappa_i = 0.37464 + 1.54226 w_i - 0.26992 w_i^2                  (w_i <= 0.491)
    kappa_i = 0.379642 + 1.48503 w_i - 0.164423 w_i^2 + 0.016666 w_i^3 (w_i > 0.491)

The second kappa line is the 1978 extension for heavy or polar species (Robinson and
Peng 1978, coefficients as commonly quoted); it is used only above w = 0.491 (e.g.
methanol, w = 0.565). cantera 3.2 switches at the same point but its second polynomial
reads 0.374642 + 1.487503 w - ..., about 0.3 % lower in kappa for methanol; the tests
document the difference. For w <= 0.491 the two agree exactly. Omega_a and
Omega_b are the exact critical-point values (computed below from the critical
conditions, not typed in). Mixtures use the van der Waals one-fluid rules::

    a = sum_i sum_j y_i y_j (1 - k_ij) sqrt(a_i a_j),    b = sum_i y_i b_i

The cubic in Z is solved in closed form (Cardano, or the trigonometric form when there
are three real roots), with a guarded Newton polish, for all states at once.

Range of use. The equation is a two-constant model: for light supercritical gases at
up to a few hundred bar it reproduces compressibility factors to within a few percent
(less well near a critical point and for strongly polar or quantum gases such as NH3,
H2O and H2). Far above Tc the alpha function of a species reaches zero at
sqrt(T/Tc) = 1 + 1/kappa (about 2400 K for CH4, 3000 K for H2O); this module keeps
sqrt(a_i) = sqrt(a_ci) (1 + kappa_i (1 - sqrt(T/Tc_i))) as a smooth signed function there,
but results at such temperatures carry no physical weight. These are model results:
pressure-equipment design and the handling of toxic or flammable gases follow local
codes and licensed engineering practice.

References
----------
D.-Y. Peng, D. B. Robinson, "A New Two-Constant Equation of State",
Ind. Eng. Chem. Fundam. 15 (1976) 59-64, doi:10.1021/i160057a011.

D. B. Robinson, D.-Y. Peng, "The Characterization of the Heptanes and Heavier Fractions
for the GPA Peng-Robinson Programs", Gas Processors Association, Research Report RR-28
(1978) (kappa for w > 0.491; coefficients as commonly quoted, from memory).

B. E. Poling, J. M. Prausnitz, J. P. O'Connell, The Properties of Gases and Liquids,
5th ed., McGraw-Hill (2001), ch. 4-6 (cubic equations of state, mixing rules, departure
functions).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources
from types import MappingProxyType
from typing import Any, Iterable, Mapping, Sequence

import numpy as np

from .models import R

__all__ = [
    "CubicParameters",
    "GasState",
    "BinaryInteractionTable",
    "compressibility",
    "log_fugacity_coefficients",
    "residual_enthalpy",
    "residual_gibbs_energy",
    "gas_state",
    "binary_interaction_matrix",
    "OMEGA_A",
    "OMEGA_B",
    "QUANTUM_GASES",
    "quantum_critical_constants",
]

_SQRT2 = np.sqrt(2.0)


def _critical_point_constants() -> tuple[float, float]:
    """Omega_a and Omega_b of the Peng-Robinson equation, from its critical conditions.

    At the critical point the cubic in Z has a triple root Zc. Matching coefficients of
    Z^3 - (1 - B) Z^2 + (A - 3B^2 - 2B) Z - (AB - B^2 - B^3) = (Z - Zc)^3 gives
    Zc = (1 - B)/3, A = 3 Zc^2 + 3 B^2 + 2 B and 64 B^3 + 6 B^2 + 12 B - 1 = 0 for B.
    The cubic for B has one real root (solved here by Cardano's formula).
    """
    # depressed form of B^3 + (6/64) B^2 + (12/64) B - 1/64 = 0
    c2, c1, c0 = 6.0 / 64.0, 12.0 / 64.0, -1.0 / 64.0
    p = c1 - c2 * c2 / 3.0
    q = 2.0 * c2**3 / 27.0 - c2 * c1 / 3.0 + c0
    root_disc = np.sqrt(q * q / 4.0 + p**3 / 27.0)
    omega_b = float(np.cbrt(-q / 2.0 + root_disc) + np.cbrt(-q / 2.0 - root_disc) - c2 / 3.0)
    z_crit = (1.0 - omega_b) / 3.0
    omega_a = 3.0 * z_crit**2 + 3.0 * omega_b**2 + 2.0 * omega_b
    return omega_a, omega_b


#: Omega_a = 0.45723552892... [-], exact Peng-Robinson critical-point constant (Peng and Robinson 1976).
#: Omega_b = 0.07779607390... [-], idem.
OMEGA_A, OMEGA_B = _critical_point_constants()

#: Acentric factor above which the 1978 kappa polynomial is used (Robinson and Peng 1978).
_KAPPA_SWITCH = 0.491


def _kappa(omega: np.ndarray) -> np.ndarray:
    """Slope kappa of the Peng-Robinson alpha function [-] (1976 form; 1978 form for w > 0.491)."""
    w = np.asarray(omega, dtype=float)
    form_1976 = 0.37464 + 1.54226 * w - 0.26992 * w**2
    form_1978 = 0.379642 + 1.48503 * w - 0.164423 * w**2 + 0.016666 * w**3
    return np.where(w > _KAPPA_SWITCH, form_1978, form_1976)


# --------------------------------------------------------------------------- quantum gases
#: Classical critical constants of the quantum gases for the effective-constant rule of
#: R. D. Gunn, P. L. Chueh, J. M. Prausnitz, "Prediction of thermodynamic properties of
#: dense gas mixtures containing one or more of the quantum gases", AIChE J. 12 (1966)
#: 937-941: name -> (Tc0 [K], Pc0 [Pa], molar mass [g/mol]). Values (from memory) as
#: commonly quoted: H2 43.6 K, 20.5 atm; He 10.47 K, 6.67 atm; Ne 45.5 K, 26.9 atm.
QUANTUM_GASES = {
    "H2": (43.6, 20.5 * 101325.0, 2.016),
    "He": (10.47, 6.67 * 101325.0, 4.0026),
    "Ne": (45.5, 26.9 * 101325.0, 20.180),
}
#: Constants of the rule [K] (Gunn, Chueh, Prausnitz 1966; from memory).
_QUANTUM_TC_SCALE = 21.8
_QUANTUM_PC_SCALE = 44.2


def quantum_critical_constants(name: str, T):
    """Effective (temperature-dependent) critical constants of a quantum gas.

    Tc(T) = Tc0 / (1 + 21.8 K / (M T)),  Pc(T) = Pc0 / (1 + 44.2 K / (M T)),
    with M the molar mass [g/mol] and the acentric factor taken as 0.

    Parameters
    ----------
    name : {"H2", "He", "Ne"}
        Species name (a key of :data:`QUANTUM_GASES`).
    T : float | ndarray
        Temperature [K].

    Returns
    -------
    (Tc, Pc) : tuple of float | ndarray
        Effective critical temperature [K] and pressure [Pa] at T.

    Source: R. D. Gunn, P. L. Chueh, J. M. Prausnitz, AIChE J. 12 (1966) 937-941
    (constants from memory). Quantum effects shrink the effective molecular size of the
    light gases at low temperature; the rule restores corresponding-states behaviour
    for cubic equations of state in dense mixtures (ammonia synthesis at 300-1000 atm).

    Example: hydrogen at 450 degC.

    >>> Tc, Pc = quantum_critical_constants("H2", 723.15)
    >>> print(f"{Tc:.2f} K, {Pc / 1e5:.2f} bar")
    42.96 K, 20.16 bar
    """
    if name not in QUANTUM_GASES:
        raise ValueError(f"{name!r} is not a quantum gas; known: {', '.join(QUANTUM_GASES)}")
    Tc0, Pc0, M = QUANTUM_GASES[name]
    T = np.asarray(T, dtype=float)
    Tc = Tc0 / (1.0 + _QUANTUM_TC_SCALE / (M * T))
    Pc = Pc0 / (1.0 + _QUANTUM_PC_SCALE / (M * T))
    return (float(Tc), float(Pc)) if T.ndim == 0 else (Tc, Pc)


# --------------------------------------------------------------------------- parameters
_MISSING_MESSAGE = (
    "Peng-Robinson needs the critical temperature, critical pressure and acentric factor "
    "of every species; missing for: {names}"
)


def _read_only(values: np.ndarray) -> np.ndarray:
    values = np.array(values, dtype=float)
    values.setflags(write=False)
    return values


@dataclass(frozen=True, eq=False)
class CubicParameters:
    """Pure-species constants and binary interaction parameters for the Peng-Robinson EOS.

    Parameters
    ----------
    names : sequence of str, length ns
        Species names, in the column order of every composition array.
    critical_temperature : array_like (ns,)
        Tc [K]. ``None`` or NaN marks a missing value.
    critical_pressure : array_like (ns,)
        Pc [Pa]. ``None`` or NaN marks a missing value.
    acentric_factor : array_like (ns,)
        Pitzer acentric factor w [-]. ``None`` or NaN marks a missing value.
    interaction : array_like (ns, ns), optional
        Binary interaction parameters k_ij [-]; symmetric, zero diagonal. Default zeros.
        See :func:`binary_interaction_matrix` for published values.
    quantum_gases : bool
        True: species named in :data:`QUANTUM_GASES` (H2, He, Ne) use the temperature-
        dependent effective critical constants of Gunn, Chueh and Prausnitz (1966) with
        acentric factor 0 (see :func:`quantum_critical_constants`) instead of the given
        ones. Default False: plain Peng-Robinson with the given constants.

    Raises
    ------
    ValueError
        If any species lacks a critical constant (the message names them), a constant is
        not positive, names repeat, or ``interaction`` is not a symmetric (ns, ns) matrix
        with zero diagonal.

    Derived attributes (read-only arrays): ``covolume`` b_i [m^3/mol],
    ``critical_attraction`` a_ci = Omega_a (R Tc)^2/Pc [Pa m^6/mol^2], ``alpha_slope``
    kappa_i [-].

    Examples
    --------
    Nitrogen (constants from Poling et al. 2001, appendix A, from memory):

    >>> n2 = CubicParameters(["N2"], [126.2], [3.398e6], [0.037])
    >>> print(f"{n2.covolume[0] * 1e6:.2f} cm3/mol")
    24.02 cm3/mol
    """

    names: tuple[str, ...]
    critical_temperature: np.ndarray
    critical_pressure: np.ndarray
    acentric_factor: np.ndarray
    interaction: np.ndarray | None = None
    quantum_gases: bool = False
    covolume: np.ndarray = field(init=False, repr=False)
    critical_attraction: np.ndarray = field(init=False, repr=False)
    alpha_slope: np.ndarray = field(init=False, repr=False)

    def __post_init__(self):
        if isinstance(self.names, str):
            raise ValueError("names must be a sequence of species names, not one string")
        names = tuple(str(name) for name in self.names)
        ns = len(names)
        if ns == 0:
            raise ValueError("CubicParameters needs at least one species")
        repeated = sorted({name for name in names if names.count(name) > 1})
        if repeated:
            raise ValueError(f"species listed more than once: {', '.join(repeated)}")

        columns = {}
        for label, raw in (("critical_temperature", self.critical_temperature),
                           ("critical_pressure", self.critical_pressure),
                           ("acentric_factor", self.acentric_factor)):
            values = np.array([np.nan if v is None else v for v in np.ravel(np.asarray(raw, dtype=object))],
                              dtype=float)
            if values.shape != (ns,):
                raise ValueError(f"{label} has {values.size} values for {ns} species")
            columns[label] = values
        missing = [name for k, name in enumerate(names)
                   if not all(np.isfinite(columns[label][k]) for label in columns)]
        if missing:
            raise ValueError(_MISSING_MESSAGE.format(names=", ".join(missing)))
        for label in ("critical_temperature", "critical_pressure"):
            bad = [name for k, name in enumerate(names) if columns[label][k] <= 0.0]
            if bad:
                raise ValueError(f"{label} must be positive; not so for: {', '.join(bad)}")

        if self.interaction is None:
            kij = np.zeros((ns, ns))
        else:
            kij = np.array(self.interaction, dtype=float)
            if kij.shape != (ns, ns):
                raise ValueError(f"interaction matrix has shape {kij.shape}; expected ({ns}, {ns})")
            if not np.all(np.isfinite(kij)):
                raise ValueError("interaction matrix has non-finite entries")
            if np.any(np.abs(kij - kij.T) > 1e-12):
                raise ValueError("interaction matrix must be symmetric (k_ij = k_ji)")
            if np.any(np.diag(kij) != 0.0):
                raise ValueError("interaction matrix must have a zero diagonal (k_ii = 0)")
            kij = 0.5 * (kij + kij.T)

        Tc = columns["critical_temperature"]
        Pc = columns["critical_pressure"]
        setattr_ = object.__setattr__
        setattr_(self, "names", names)
        setattr_(self, "critical_temperature", _read_only(Tc))
        setattr_(self, "critical_pressure", _read_only(Pc))
        setattr_(self, "acentric_factor", _read_only(columns["acentric_factor"]))
        setattr_(self, "interaction", _read_only(kij))
        setattr_(self, "covolume", _read_only(OMEGA_B * R * Tc / Pc))
        setattr_(self, "critical_attraction", _read_only(OMEGA_A * (R * Tc) ** 2 / Pc))
        setattr_(self, "alpha_slope", _read_only(_kappa(columns["acentric_factor"])))
        setattr_(self, "quantum_gases", bool(self.quantum_gases))
        mask = np.array([self.quantum_gases and name in QUANTUM_GASES for name in names])
        setattr_(self, "_quantum_mask", mask)
        if mask.any():
            kappa = np.array(self.alpha_slope)
            kappa[mask] = _kappa(0.0)
            setattr_(self, "_quantum_kappa", _read_only(kappa))

    @property
    def species_count(self) -> int:
        """Number of species ns."""
        return len(self.names)

    @classmethod
    def from_species(cls, records: Iterable[Any], interaction=None,
                     quantum_gases: bool = False) -> "CubicParameters":
        """Build from species records that carry ``name`` and ``critical`` (Tc [K], Pc [Pa], omega [-]).

        ``critical`` is an object with attributes ``Tc``, ``Pc``, ``omega`` (as
        :class:`eqdesign.thermo.species.CriticalConstants`) or ``None``; species with
        ``None`` raise the ValueError that names them.

        >>> from eqdesign.thermo import bundled_database
        >>> database = bundled_database()
        >>> params = CubicParameters.from_species([database["N2"], database["H2"]])
        >>> params.names
        ('N2', 'H2')
        >>> CubicParameters.from_species([database["N2"], database["OH"]])
        Traceback (most recent call last):
        ...
        ValueError: Peng-Robinson needs the critical temperature, critical pressure and acentric factor of every species; missing for: OH
        """
        records = list(records)
        names, Tc, Pc, omega = [], [], [], []
        for record in records:
            names.append(record.name)
            crit = getattr(record, "critical", None)
            Tc.append(None if crit is None else crit.Tc)
            Pc.append(None if crit is None else crit.Pc)
            omega.append(None if crit is None else crit.omega)
        return cls(names, Tc, Pc, omega, interaction, quantum_gases)

    @classmethod
    def from_table(cls, names: Sequence[str], table: Mapping[str, Sequence[float]],
                   interaction=None, quantum_gases: bool = False) -> "CubicParameters":
        """Build from a mapping ``name -> (Tc [K], Pc [Pa], omega [-])``.

        Names absent from ``table`` (or mapped to ``None``) raise the ValueError that names them.

        Constants from Poling et al. (2001), appendix A (from memory):

        >>> params = CubicParameters.from_table(["CH4", "CO2"],
        ...     {"CH4": (190.56, 45.99e5, 0.011), "CO2": (304.12, 73.74e5, 0.225)})
        >>> print(f"{params.alpha_slope[1]:.4f}")
        0.7080
        """
        rows = [table.get(name) for name in names]
        Tc = [None if row is None else row[0] for row in rows]
        Pc = [None if row is None else row[1] for row in rows]
        omega = [None if row is None else row[2] for row in rows]
        return cls(list(names), Tc, Pc, omega, interaction, quantum_gases)


# --------------------------------------------------------------------------- cubic solver
def _cubic_value_and_slope(Z, c2, c1, c0):
    value = ((Z + c2) * Z + c1) * Z + c0
    slope = (3.0 * Z + 2.0 * c2) * Z + c1
    return value, slope


def _polish(Z, c2, c1, c0, steps=3):
    """Guarded Newton steps on Z^3 + c2 Z^2 + c1 Z + c0: a step is kept only if it lowers |f|."""
    for _ in range(steps):
        value, slope = _cubic_value_and_slope(Z, c2, c1, c0)
        with np.errstate(divide="ignore", invalid="ignore"):
            trial = Z - value / slope
        trial_value, _ = _cubic_value_and_slope(trial, c2, c1, c0)
        better = np.isfinite(trial) & (np.abs(trial_value) < np.abs(value))
        Z = np.where(better, trial, Z)
    return Z


def _compressibility_roots(A, B):
    """Largest root, smallest root above B, and whether only one root exceeds B.

    Solves Z^3 - (1 - B) Z^2 + (A - 3B^2 - 2B) Z - (AB - B^2 - B^3) = 0 for every state.
    The cubic is negative at Z = B (value -2B^2), so one or three roots exceed B; the
    largest always does.

    Method: one root in closed form (Cardano, or the largest trigonometric root when the
    discriminant says three real roots), polished by Newton steps; the remaining pair from
    the deflated quadratic (sum and product of the pair, the smaller one as product/larger
    to avoid cancellation), polished likewise. This keeps small liquid-like roots accurate
    at low pressure, where the closed forms lose relative precision.
    """
    c2 = B - 1.0
    c1 = A - 3.0 * B**2 - 2.0 * B
    c0 = -(A * B - B**2 - B**3)
    shift = -c2 / 3.0
    p = c1 - c2**2 / 3.0
    q = 2.0 * c2**3 / 27.0 - c2 * c1 / 3.0 + c0
    disc = (q / 2.0) ** 2 + (p / 3.0) ** 3
    three = disc < 0.0

    # one real root: numerically stable Cardano form t = u - p/(3u)
    half = -q / 2.0
    u = np.cbrt(half + np.where(half >= 0.0, 1.0, -1.0) * np.sqrt(np.where(three, 0.0, disc)))
    with np.errstate(divide="ignore", invalid="ignore"):
        t_one = np.where(u != 0.0, u - p / (3.0 * u), 0.0)

    # three real roots: largest one from the trigonometric form
    p_neg = np.where(three, p, -1.0)
    radius = 2.0 * np.sqrt(-p_neg / 3.0)
    cos_arg = np.clip(np.where(three, 3.0 * q / (p_neg * radius), 0.0), -1.0, 1.0)
    t_large = radius * np.cos(np.arccos(cos_arg) / 3.0)

    first = _polish(np.where(three, t_large, t_one) + shift, c2, c1, c0, steps=4)

    # deflate: the other two roots have sum s and product r (first > B > 0, so no 0 division)
    pair_sum = -(c2 + first)
    pair_product = -c0 / first
    pair_disc = pair_sum**2 - 4.0 * pair_product
    pair_real = pair_disc >= 0.0
    sign = np.where(pair_sum >= 0.0, 1.0, -1.0)
    big = 0.5 * (pair_sum + sign * np.sqrt(np.where(pair_real, pair_disc, 0.0)))
    with np.errstate(divide="ignore", invalid="ignore"):
        small = np.where(big != 0.0, pair_product / big, 0.0)
    big = _polish(np.where(pair_real, big, first), c2, c1, c0, steps=4)
    small = _polish(np.where(pair_real, small, first), c2, c1, c0, steps=4)

    largest = np.maximum(first, np.where(pair_real, np.maximum(big, small), first))
    candidates = np.stack([first, np.where(pair_real, big, np.inf), np.where(pair_real, small, np.inf)])
    candidates = np.where(candidates > B, candidates, np.inf)
    smallest = candidates.min(axis=0)
    single = ~(pair_real & (np.minimum(big, small) > B) & (smallest < largest))
    smallest = np.where(single, largest, smallest)
    return largest, smallest, single


# --------------------------------------------------------------------------- states
def _prepare_states(params: CubicParameters, T, P, y):
    T = np.asarray(T, dtype=float)
    P = np.asarray(P, dtype=float)
    y = np.asarray(y, dtype=float)
    ns = params.species_count
    if y.ndim == 0 or y.shape[-1] != ns:
        raise ValueError(f"composition must end in an axis of length {ns} "
                         f"(species {', '.join(params.names)}); got shape {y.shape}")
    shape = np.broadcast_shapes(T.shape, P.shape, y.shape[:-1])
    T = np.broadcast_to(T, shape).reshape(-1)
    P = np.broadcast_to(P, shape).reshape(-1)
    y = np.broadcast_to(y, shape + (ns,)).reshape(-1, ns)
    if not np.all(np.isfinite(T) & (T > 0.0)):
        raise ValueError("temperature must be finite and positive [K]")
    if not np.all(np.isfinite(P) & (P > 0.0)):
        raise ValueError("pressure must be finite and positive [Pa]")
    if not np.all(np.isfinite(y) & (y >= 0.0)):
        raise ValueError("mole fractions must be finite and non-negative")
    total = y.sum(axis=1)
    if not np.all(total > 0.0):
        raise ValueError("each composition row needs a positive sum")
    return T, P, y / total[:, None], shape


@dataclass(frozen=True, eq=False)
class GasState:
    """Peng-Robinson results for an array of states (one phase, the chosen cubic root).

    Attributes
    ----------
    compressibility : ndarray (n,)
        Z = P v / (R T) [-].
    log_fugacity_coefficients : ndarray (n, ns)
        ln(phi_i) [-], phi_i = f_i / (y_i P).
    residual_enthalpy : ndarray (n,)
        H - H_ideal gas at the same T and P [J/mol].
    residual_gibbs_energy : ndarray (n,)
        G - G_ideal gas at the same T, P and composition [J/mol]; equals R T sum_i y_i ln(phi_i).
    residual_entropy : ndarray (n,)
        S - S_ideal gas at the same T, P and composition [J/(mol K)].
    single_root : ndarray (n,) of bool
        True where the cubic has one root above the covolume (no liquid-like root);
        False where a second, liquid-like root exists and the chosen root may be metastable.

    ``n`` stands for the broadcast shape of the inputs (possibly ``()`` for one state).
    """

    compressibility: np.ndarray
    log_fugacity_coefficients: np.ndarray
    residual_enthalpy: np.ndarray
    residual_gibbs_energy: np.ndarray
    residual_entropy: np.ndarray
    single_root: np.ndarray


_ROOTS = ("largest", "smallest")


def _critical_constants_at(params: CubicParameters, T: np.ndarray):
    """Tc, Pc [K, Pa] (n, ns) at temperatures T (n,), with d ln Tc/dT and d ln Pc/dT [1/K]:
    the given constants, or the Gunn-Chueh-Prausnitz effective ones for quantum gases."""
    n, ns = T.size, params.species_count
    Tc = np.broadcast_to(params.critical_temperature, (n, ns)).copy()
    Pc = np.broadcast_to(params.critical_pressure, (n, ns)).copy()
    dlnTc = np.zeros((n, ns))
    dlnPc = np.zeros((n, ns))
    for k in np.flatnonzero(params._quantum_mask):
        Tc0, Pc0, M = QUANTUM_GASES[params.names[k]]
        u = _QUANTUM_TC_SCALE / (M * T)
        w = _QUANTUM_PC_SCALE / (M * T)
        Tc[:, k] = Tc0 / (1.0 + u)
        Pc[:, k] = Pc0 / (1.0 + w)
        dlnTc[:, k] = u / (T * (1.0 + u))
        dlnPc[:, k] = w / (T * (1.0 + w))
    return Tc, Pc, dlnTc, dlnPc


def _evaluate(params: CubicParameters, T, P, y, root: str) -> GasState:
    if root not in _ROOTS:
        raise ValueError(f"root must be one of {_ROOTS}; got {root!r}")
    T, P, y, shape = _prepare_states(params, T, P, y)
    RT = R * T
    quantum = params._quantum_mask.any()
    if quantum:
        Tc_i, Pc_i, dlnTc, dlnPc = _critical_constants_at(params, T)        # (n, ns) each
        sqrt_Tr = np.sqrt(T[:, None] / Tc_i)
        sqrt_ac = np.sqrt(OMEGA_A) * R * Tc_i / np.sqrt(Pc_i)
        kappa = params._quantum_kappa
        sqrt_a = sqrt_ac * (1.0 + kappa * (1.0 - sqrt_Tr))
        dsqrt_a_dT = (sqrt_ac * (dlnTc - 0.5 * dlnPc) * (1.0 + kappa * (1.0 - sqrt_Tr))
                      - sqrt_ac * kappa * sqrt_Tr * (1.0 / T[:, None] - dlnTc) / 2.0)
    else:
        sqrt_Tr = np.sqrt(T[:, None] / params.critical_temperature)               # (n, ns)
        sqrt_ac = np.sqrt(params.critical_attraction)                             # (ns,)
        kappa = params.alpha_slope
        sqrt_a = sqrt_ac * (1.0 + kappa * (1.0 - sqrt_Tr))                        # sqrt(a_i) (n, ns)
        dsqrt_a_dT = -sqrt_ac * kappa * sqrt_Tr / (2.0 * T[:, None])              # d sqrt(a_i)/dT
    weighted = y * sqrt_a                                                     # y_i sqrt(a_i)
    # cross sums: cross_i = sum_j (1 - k_ij) y_j sqrt(a_j); sum_j y_j a_ij = sqrt(a_i) cross_i
    cross = weighted @ (1.0 - params.interaction)
    a_mix = np.einsum("ij,ij->i", weighted, cross)
    da_mix_dT = 2.0 * np.einsum("ij,ij->i", y * dsqrt_a_dT, cross)
    if quantum:
        b = OMEGA_B * R * Tc_i / Pc_i                                           # (n, ns)
        b_mix = np.einsum("ij,ij->i", y, b)
        db_mix_dT = np.einsum("ij,ij->i", y, b * (dlnTc - dlnPc))
    else:
        b = params.covolume
        b_mix = y @ b
    A = a_mix * P / RT**2
    B = b_mix * P / RT

    largest, smallest, single = _compressibility_roots(A, B)
    Z = largest if root == "largest" else smallest

    # ln[(Z + (1 + sqrt2) B) / (Z + (1 - sqrt2) B)], written to stay accurate as B -> 0
    log_ratio = np.log1p(2.0 * _SQRT2 * B / (Z + (1.0 - _SQRT2) * B))
    log_free = np.log(Z - B)
    attraction_scale = log_ratio / (2.0 * _SQRT2 * b_mix * RT)                # [mol/J]
    g_res_RT = Z - 1.0 - log_free - a_mix * attraction_scale
    b_ratio = b / b_mix[:, None]
    ln_phi = (b_ratio * (Z - 1.0)[:, None] - log_free[:, None]
              - attraction_scale[:, None] * (2.0 * sqrt_a * cross - a_mix[:, None] * b_ratio))
    h_res = RT * (Z - 1.0) + (T * da_mix_dT - a_mix) * log_ratio / (2.0 * _SQRT2 * b_mix)
    if quantum:
        # covolume varying with T: U_res = -T^2 d(A_res/T)/dT at fixed v gains
        # (T b'/b) [-R T B/(Z - B) - a L/(2 sqrt2 b) + R T A Z/(Z^2 + 2 B Z - B^2)]
        h_res = h_res + (T * db_mix_dT / b_mix) * (
            -RT * B / (Z - B) - a_mix * log_ratio / (2.0 * _SQRT2 * b_mix)
            + RT * A * Z / (Z * Z + 2.0 * B * Z - B * B))
    g_res = RT * g_res_RT
    s_res = (h_res - g_res) / T

    ns = params.species_count
    return GasState(
        compressibility=Z.reshape(shape),
        log_fugacity_coefficients=ln_phi.reshape(shape + (ns,)),
        residual_enthalpy=h_res.reshape(shape),
        residual_gibbs_energy=g_res.reshape(shape),
        residual_entropy=s_res.reshape(shape),
        single_root=single.reshape(shape),
    )


_STATE_PARAMETERS_DOC = """
    Parameters
    ----------
    params : CubicParameters
        Species constants and k_ij.
    T : float | ndarray (n,)
        Temperature [K].
    P : float | ndarray (n,)
        Pressure [Pa].
    y : ndarray (ns,) | (n, ns)
        Mole fractions [-] in the species order of ``params.names``; each row is
        normalised to sum 1. T, P and the leading axes of y broadcast together.
    root : {"largest", "smallest"}
        Cubic root to use: "largest" is the vapour (gas) root; "smallest" is the smallest
        root above the covolume (the liquid-like root where three exist, else the only one).
"""


def gas_state(params: CubicParameters, T, P, y, root: str = "largest") -> GasState:
    """Z, ln(phi_i), residual enthalpy, Gibbs energy and entropy in one call.

    Use this in iterative solvers: one cubic solution serves every property.

    {params}
    Returns
    -------
    GasState
        Arrays shaped like the broadcast states (see :class:`GasState`).

    Formulas: Peng and Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59-64, eqs for Z and
    ln(phi_i); residual enthalpy H_res = R T (Z - 1) + (T da/dT - a)/(2 sqrt2 b)
    ln[(Z + (1+sqrt2) B)/(Z + (1-sqrt2) B)] (Poling, Prausnitz, O'Connell, The Properties
    of Gases and Liquids, 5th ed., 2001, ch. 6).

    Example: an invented ammonia-loop gas, 3:1 H2/N2 with 10 % NH3, at 700 K and 300 bar
    (constants from Poling et al. 2001, from memory). The same numbers come out of
    cantera's Peng-Robinson phase (checked in the tests).

    >>> mix = CubicParameters(["H2", "N2", "NH3"], [33.19, 126.2, 405.4],
    ...                       [1.313e6, 3.398e6, 11.353e6], [-0.216, 0.037, 0.257])
    >>> state = gas_state(mix, 700.0, 300e5, [0.675, 0.225, 0.10])
    >>> print(f"Z = {{float(state.compressibility):.4f}}, "
    ...       f"H_res = {{float(state.residual_enthalpy):.1f}} J/mol")
    Z = 1.0745, H_res = 140.8 J/mol
    """
    return _evaluate(params, T, P, y, root)


def compressibility(params: CubicParameters, T, P, y, root: str = "largest") -> np.ndarray:
    """Compressibility factor Z = P v / (R T) [-] of a Peng-Robinson gas mixture.

    {params}
    Returns
    -------
    ndarray (n,)
        Z [-].

    Source: D.-Y. Peng, D. B. Robinson, "A New Two-Constant Equation of State",
    Ind. Eng. Chem. Fundam. 15 (1976) 59-64.

    Example: methane at 300 K and 100 bar. The NIST Chemistry WebBook gives Z = 0.85
    (from memory); Peng-Robinson falls about 2 % below it. Constants from Poling et al.
    (2001), from memory.

    >>> ch4 = CubicParameters(["CH4"], [190.56], [4.599e6], [0.011])
    >>> print(f"{{float(compressibility(ch4, 300.0, 100e5, [1.0])):.4f}}")
    0.8338
    """
    return _evaluate(params, T, P, y, root).compressibility


def log_fugacity_coefficients(params: CubicParameters, T, P, y, root: str = "largest") -> np.ndarray:
    """Natural log of the fugacity coefficient ln(phi_i) [-] of each species in the mixture.

    ln(phi_i) = b_i/b (Z - 1) - ln(Z - B)
                - A/(2 sqrt2 B) [2 sum_j y_j a_ij / a - b_i/b] ln[(Z + (1+sqrt2) B)/(Z + (1-sqrt2) B)]

    {params}
    Returns
    -------
    ndarray (n, ns)
        ln(phi_i) [-].

    Source: D.-Y. Peng, D. B. Robinson, "A New Two-Constant Equation of State",
    Ind. Eng. Chem. Fundam. 15 (1976) 59-64, fugacity-coefficient equation.

    Example: an invented 3:1 H2/N2 feed with 10 % NH3 at 700 K and 300 bar
    (constants from Poling et al. 2001, from memory); the values are checked against
    cantera's Peng-Robinson phase in the tests.

    >>> mix = CubicParameters(["H2", "N2", "NH3"], [33.19, 126.2, 405.4],
    ...                       [1.313e6, 3.398e6, 11.353e6], [-0.216, 0.037, 0.257])
    >>> ln_phi = log_fugacity_coefficients(mix, 700.0, 300e5, [0.675, 0.225, 0.10])
    >>> print(" ".join(f"{{v:+.5f}}" for v in ln_phi))
    +0.06905 +0.10634 +0.00053
    """
    return _evaluate(params, T, P, y, root).log_fugacity_coefficients


def residual_enthalpy(params: CubicParameters, T, P, y, root: str = "largest") -> np.ndarray:
    """Residual (departure) molar enthalpy H - H_ideal gas at the same T, P [J/mol].

    H_res = R T (Z - 1) + (T da/dT - a) / (2 sqrt2 b) ln[(Z + (1+sqrt2) B)/(Z + (1-sqrt2) B)]

    {params}
    Returns
    -------
    ndarray (n,)
        H_res [J/mol].

    Sources: Peng and Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59-64; departure
    functions as in B. E. Poling, J. M. Prausnitz, J. P. O'Connell, The Properties of
    Gases and Liquids, 5th ed., McGraw-Hill (2001), ch. 6.

    Example: nitrogen at 300 K and 100 bar (constants from Poling et al. 2001, from
    memory); checked against cantera's Peng-Robinson phase in the tests.

    >>> n2 = CubicParameters(["N2"], [126.2], [3.398e6], [0.037])
    >>> print(f"{{float(residual_enthalpy(n2, 300.0, 100e5, [1.0])):.0f}} J/mol")
    -632 J/mol
    """
    return _evaluate(params, T, P, y, root).residual_enthalpy


def residual_gibbs_energy(params: CubicParameters, T, P, y, root: str = "largest") -> np.ndarray:
    """Residual molar Gibbs energy G - G_ideal gas at the same T, P, y [J/mol].

    G_res / (R T) = Z - 1 - ln(Z - B) - A/(2 sqrt2 B) ln[(Z + (1+sqrt2) B)/(Z + (1-sqrt2) B)]
                  = sum_i y_i ln(phi_i)

    {params}
    Returns
    -------
    ndarray (n,)
        G_res [J/mol].

    Source: Peng and Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59-64.

    Example: methane at 300 K and 100 bar (constants from Poling et al. 2001, from
    memory); G_res/(R T) is ln(phi) of the pure gas.

    >>> ch4 = CubicParameters(["CH4"], [190.56], [4.599e6], [0.011])
    >>> print(f"{{float(residual_gibbs_energy(ch4, 300.0, 100e5, [1.0])):.0f}} J/mol")
    -486 J/mol
    """
    return _evaluate(params, T, P, y, root).residual_gibbs_energy


for _function in (gas_state, compressibility, log_fugacity_coefficients, residual_enthalpy,
                  residual_gibbs_energy):
    if _function.__doc__:  # docstrings are absent under python -OO
        _function.__doc__ = _function.__doc__.format(params=_STATE_PARAMETERS_DOC.strip())
del _function


# --------------------------------------------------------------------------- k_ij data
_INTERACTION_FILE = "binary_interaction.yaml"


@dataclass(frozen=True)
class BinaryInteractionTable:
    """Published Peng-Robinson binary interaction parameters k_ij with their sources.

    Attributes
    ----------
    values : Mapping[frozenset[str], float]
        k_ij [-] for each unordered species pair.
    sources : Mapping[frozenset[str], str]
        Full citation of each value.
    origin : str
        Where the table was read from.

    Example (Knapp et al. 1982, DECHEMA Chemistry Data Series VI, from memory)

    >>> table = BinaryInteractionTable.bundled()
    >>> table.value("CO2", "N2"), table.value("N2", "CO2"), table.value("H2", "N2")
    (-0.017, -0.017, 0.0)
    """

    values: Mapping[frozenset, float]
    sources: Mapping[frozenset, str]
    origin: str = ""

    @classmethod
    def bundled(cls) -> "BinaryInteractionTable":
        """``binary_interaction.yaml`` shipped in :mod:`eqdesign.data` (parsed once: the
        table is read-only, and solvers that build a gas model per call reuse it)."""
        return _bundled_interaction_table()

    @classmethod
    def from_text(cls, text: str, origin: str = "<text>") -> "BinaryInteractionTable":
        """Parse our YAML layout: ``pairs`` (list of {pair, kij, reference}) and ``references``."""
        import yaml      # on first use: importing eqdesign never loads the YAML reader
        document = yaml.safe_load(text) or {}
        references = document.get("references") or {}
        values, sources = {}, {}
        for position, entry in enumerate(document.get("pairs") or []):
            where = f"{origin}: pairs[{position}]"
            try:
                first, second = (str(name) for name in entry["pair"])
                kij = float(entry["kij"])
                key = entry["reference"]
            except (KeyError, TypeError, ValueError):
                raise ValueError(f"{where}: needs pair: [A, B], a numeric kij and a reference key") from None
            if first == second:
                raise ValueError(f"{where}: a species cannot pair with itself ({first})")
            if key not in references:
                raise ValueError(f"{where}: reference {key!r} is not in the references map")
            pair = frozenset((first, second))
            if pair in values:
                raise ValueError(f"{where}: pair {first}-{second} is listed twice")
            values[pair] = kij
            sources[pair] = str(references[key])
        return cls(MappingProxyType(values), MappingProxyType(sources), origin)

    def value(self, first: str, second: str) -> float:
        """k_ij [-] of one pair (0 when the table has no entry)."""
        return self.values.get(frozenset((first, second)), 0.0)

    def matrix(self, names: Sequence[str], overrides: Mapping[tuple[str, str], float] | None = None) -> np.ndarray:
        """Symmetric k_ij matrix (ns, ns) for ``names``; zero where no value is known.

        ``overrides`` maps pairs ``(A, B)`` to k_ij values that replace the table's; every
        name in an override must be in ``names``.
        """
        names = list(names)
        index = {name: k for k, name in enumerate(names)}
        kij = np.zeros((len(names), len(names)))
        for pair, value in self.values.items():
            if pair <= index.keys():
                i, j = (index[name] for name in pair)
                kij[i, j] = kij[j, i] = value
        for (first, second), value in (overrides or {}).items():
            unknown = [name for name in (first, second) if name not in index]
            if unknown:
                raise ValueError(f"k_ij override names species not in the list: {', '.join(unknown)}")
            if first == second:
                raise ValueError(f"k_ij override pairs {first} with itself; k_ii is always 0")
            i, j = index[first], index[second]
            kij[i, j] = kij[j, i] = float(value)
        return kij


@lru_cache(maxsize=1)
def _bundled_interaction_table() -> BinaryInteractionTable:
    text = resources.files("eqdesign.data").joinpath(_INTERACTION_FILE).read_text(encoding="utf-8")
    return BinaryInteractionTable.from_text(text, origin=f"eqdesign.data/{_INTERACTION_FILE}")


def binary_interaction_matrix(names: Sequence[str],
                              overrides: Mapping[tuple[str, str], float] | None = None,
                              table: BinaryInteractionTable | None = None) -> np.ndarray:
    """Symmetric Peng-Robinson k_ij matrix (ns, ns) [-] for the species ``names``.

    Parameters
    ----------
    names : sequence of str, length ns
        Species names, as in :class:`CubicParameters`.
    overrides : mapping (A, B) -> k_ij, optional
        Values that replace the table's (order of A and B does not matter).
    table : BinaryInteractionTable, optional
        Source of values; default :meth:`BinaryInteractionTable.bundled` (parsed once).

    Returns
    -------
    ndarray (ns, ns)
        k_ij, zero on the diagonal and for pairs without a published value.

    The bundled values come from H. Knapp, R. Doring, L. Oellrich, U. Plocker,
    J. M. Prausnitz, Vapor-Liquid Equilibria for Mixtures of Low Boiling Substances,
    DECHEMA Chemistry Data Series Vol. VI (1982) (from memory); each entry in
    ``binary_interaction.yaml`` names its source.

    Example
    -------
    >>> kij = binary_interaction_matrix(["CH4", "CO2", "NH3"])
    >>> print(kij[0, 1], kij[1, 0], kij[0, 2])
    0.0919 0.0919 0.0
    """
    if table is None:
        table = BinaryInteractionTable.bundled()
    return table.matrix(names, overrides)
