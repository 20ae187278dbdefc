"""Isothermal two-phase (vapour-liquid) flash with the Peng-Robinson equation, vectorised.

What it computes, for arrays of states (T, P, feed composition z): whether the feed splits
into two phases, and if so the vapour fraction beta, the liquid x and vapour y
compositions and the K-values K_i = y_i / x_i.

Method
------
1. Stability of the feed (M. L. Michelsen, "The isothermal flash problem. Part I.
   Stability", Fluid Phase Equilibria 9 (1982) 1-19): tangent-plane distance of a
   vapour-like and a liquid-like trial phase, started from Wilson's K-values and iterated
   by successive substitution, ln W_i = ln z_i + ln phi_i(z) - ln phi_i(w). The feed is
   unstable when a trial converges to sum W_i > 1.
2. Phase split for unstable feeds (M. L. Michelsen, "The isothermal flash problem.
   Part II. Phase-split calculation", Fluid Phase Equilibria 9 (1982) 21-40): successive
   substitution on ln K_i = ln phi_i^L(x) - ln phi_i^V(y), each step solving the
   Rachford-Rice equation sum z_i (K_i - 1)/(1 + beta (K_i - 1)) = 0 (H. H. Rachford,
   J. D. Rice, J. Petrol. Technol. 4(10) (1952) 19) by safeguarded Newton steps, then a
   Newton finish on ln K with a finite-difference Jacobian.
3. Ideal solution (``model="raoult"``): K_i = P_sat,i(T)/P, with P_sat from the species'
   own condensed-phase standard data where the database has the liquid ("H2O(l)"), else
   from the Peng-Robinson pure-component saturation pressure (:func:`saturation_pressure`);
   above a species' critical temperature Wilson's correlation extrapolates P_sat and the
   state says so.

These are model results. Condensing ammonia, methanol and hydrogen-rich gases at high
pressure are toxic, flammable and stored energy: separator and pressure-equipment design
follow local codes and licensed engineering practice.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .models import P_STANDARD
from .peng_robinson import CubicParameters, gas_state

__all__ = ["FlashResult", "flash", "rachford_rice", "saturation_pressure", "wilson_k_values",
           "raoult_k_values", "condensed_vapour_pressure", "liquid_data_vapour_pressures",
           "FLASH_MODELS"]

FLASH_MODELS = ("peng-robinson", "raoult")


@dataclass(frozen=True, eq=False)
class FlashResult:
    """Isothermal flash results for n states.

    Attributes
    ----------
    names : tuple[str, ...]
        Species, in column order.
    T, P : ndarray (n,)
        Temperature [K] and pressure [Pa].
    feed : ndarray (n, ns)
        Feed mole fractions z [-].
    vapour_fraction : ndarray (n,)
        beta = moles of vapour per mole of feed [-]; 1 for a stable vapour-like single
        phase, 0 for a stable liquid-like one; NaN where not converged.
    liquid, vapour : ndarray (n, ns)
        Mole fractions x and y [-] (for a single phase both equal z).
    K_values : ndarray (n, ns)
        y_i / x_i [-] (1 for a single phase).
    two_phase : ndarray (n,) of bool
    converged : ndarray (n,) of bool
    iterations : ndarray (n,) of int
    messages : tuple[str, ...]
        One message per state ("two phases", "single vapour phase (stable)", ...).
    model : str
    """

    names: tuple
    T: np.ndarray
    P: np.ndarray
    feed: np.ndarray
    vapour_fraction: np.ndarray
    liquid: np.ndarray
    vapour: np.ndarray
    K_values: np.ndarray
    two_phase: np.ndarray
    converged: np.ndarray
    iterations: np.ndarray
    messages: tuple
    model: str = "peng-robinson"

    @property
    def all_converged(self) -> bool:
        return bool(np.all(self.converged))

    @property
    def message(self) -> str:
        bad = int((~self.converged).sum())
        return "all states converged" if bad == 0 else f"{bad} of {self.converged.size} state(s) did not converge (NaN)"


# --------------------------------------------------------------------------- helpers
def wilson_k_values(params: CubicParameters, T, P) -> np.ndarray:
    """Wilson's K-value estimate ln K_i = ln(Pc_i/P) + 5.373 (1 + w_i)(1 - Tc_i/T), (n, ns).

    Source: G. M. Wilson, "A modified Redlich-Kwong equation of state applicable to
    general physical data calculations", AIChE 65th National Meeting (1968), as given by
    Michelsen, Fluid Phase Equilibria 9 (1982) 1-19.
    """
    T = np.atleast_1d(np.asarray(T, dtype=float))[:, None]
    P = np.atleast_1d(np.asarray(P, dtype=float))[:, None]
    return (params.critical_pressure / P) * np.exp(
        5.373 * (1.0 + params.acentric_factor) * (1.0 - params.critical_temperature / T))


def _stable_root_ln_phi(params, T, P, x):
    """ln phi (n, ns) from the cubic root of lower Gibbs energy, and whether it is the vapour root."""
    vap = gas_state(params, T, P, x, root="largest")
    liq = gas_state(params, T, P, x, root="smallest")
    use_liquid = liq.residual_gibbs_energy < vap.residual_gibbs_energy
    ln_phi = np.where(use_liquid[:, None], liq.log_fugacity_coefficients, vap.log_fugacity_coefficients)
    return ln_phi, ~use_liquid, vap


def rachford_rice(z, K, tolerance: float = 1e-14, max_iterations: int = 100):
    """Vapour fraction beta solving sum z_i (K_i - 1) / (1 + beta (K_i - 1)) = 0, per row.

    Parameters
    ----------
    z : ndarray (n, ns)
        Feed mole fractions [-].
    K : ndarray (n, ns)
        K-values [-].

    Returns
    -------
    beta : ndarray (n,)
        Vapour fraction, clipped to [0, 1] where the feed is all liquid (sum z K <= 1)
        or all vapour (sum z / K <= 1).

    Source: H. H. Rachford, J. D. Rice, J. Petrol. Technol. 4(10) (1952) 19; Newton steps
    kept inside the bracket of the asymptotes 1/(1 - K_max) < beta < 1/(1 - K_min).

    >>> print(f"{float(rachford_rice([[0.5, 0.5]], [[2.0, 0.5]])[0]):.6f}")
    0.500000
    """
    z = np.atleast_2d(np.asarray(z, dtype=float))
    K = np.atleast_2d(np.asarray(K, dtype=float))
    km1 = K - 1.0
    present = z > 0
    k_max = np.where(present, K, -np.inf).max(axis=1)
    k_min = np.where(present, K, np.inf).min(axis=1)
    lo = np.where(k_max > 1.0, 1.0 / (1.0 - k_max), -np.inf)
    hi = np.where(k_min < 1.0, 1.0 / (1.0 - k_min), np.inf)
    lo = np.maximum(lo, 0.0)
    hi = np.minimum(hi, 1.0)
    f0 = (z * km1).sum(axis=1)                     # value at beta = 0
    f1 = (z * km1 / K).sum(axis=1)                 # value at beta = 1
    beta = 0.5 * (lo + hi)
    for _ in range(max_iterations):
        denom = 1.0 + beta[:, None] * km1
        f = (z * km1 / denom).sum(axis=1)
        df = -(z * km1 * km1 / denom**2).sum(axis=1)
        lo = np.where(f > 0, beta, lo)
        hi = np.where(f < 0, beta, hi)
        step = beta - f / df
        inside = (step > lo) & (step < hi)
        new = np.where(inside, step, 0.5 * (lo + hi))
        if np.all(np.abs(new - beta) <= tolerance):
            beta = new
            break
        beta = new
    beta = np.where(f0 <= 0.0, 0.0, np.where(f1 >= 0.0, 1.0, beta))
    return beta


def _split(z, lnK):
    K = np.exp(lnK)
    beta = rachford_rice(z, K)
    x = z / (1.0 + beta[:, None] * (K - 1.0))
    x = x / x.sum(axis=1, keepdims=True)
    y = K * x
    y = y / y.sum(axis=1, keepdims=True)
    return beta, x, y


# --------------------------------------------------------------------------- saturation
def saturation_pressure(params: CubicParameters, T, tolerance: float = 1e-10,
                        max_iterations: int = 300):
    """Peng-Robinson pure-component vapour pressure of every species, (n, ns) [Pa].

    Solves phi^L(T, P) = phi^V(T, P) for each pure species by the update
    P <- P phi^L / phi^V from Wilson's estimate. NaN at or above the species' critical
    temperature (no saturation there) or where the iteration fails.

    Parameters
    ----------
    params : CubicParameters
    T : float | ndarray (n,)
        Temperature [K].

    Source: equal fugacity of the two roots of the cubic (Peng and Robinson, Ind. Eng.
    Chem. Fundam. 15 (1976) 59-64, where the vapour pressures of pure species fixed the
    alpha function).

    Example: ammonia at 25 degC (constants from the bundled database; the CRC Handbook
    gives about 10.0 bar, from memory).

    >>> nh3 = CubicParameters(["NH3"], [405.4], [11.353e6], [0.257])
    >>> print(f"{float(saturation_pressure(nh3, 298.15)[0, 0]) / 1e5:.2f} bar")
    10.01 bar
    """
    T = np.atleast_1d(np.asarray(T, dtype=float))
    n, ns = T.size, params.species_count
    Tr = np.repeat(T, ns)
    eye = np.tile(np.eye(ns), (n, 1))
    Tc = np.tile(params.critical_temperature, n)
    sub = Tr < Tc
    P = wilson_k_values(params, T, 1.0).reshape(-1)        # Wilson P_sat [Pa]
    out = np.full(n * ns, np.nan)
    active = sub.copy()
    for _ in range(max_iterations):
        rows = np.flatnonzero(active)
        if rows.size == 0:
            break
        vap = gas_state(params, Tr[rows], P[rows], eye[rows], root="largest")
        liq = gas_state(params, Tr[rows], P[rows], eye[rows], root="smallest")
        k = (eye[rows] > 0).argmax(axis=1)
        lpv = vap.log_fugacity_coefficients[np.arange(rows.size), k]
        lpl = liq.log_fugacity_coefficients[np.arange(rows.size), k]
        two = ~vap.single_root
        # one root only: a liquid-like root means P is too high, a vapour-like one too low
        Z = vap.compressibility
        step = np.where(two, lpl - lpv, np.where(Z < 0.3, -0.5, 0.5))
        P[rows] = P[rows] * np.exp(step)
        done = two & (np.abs(lpl - lpv) < tolerance)
        out[rows[done]] = P[rows[done]]
        active[rows[done]] = False
    return out.reshape(n, ns)


def raoult_k_values(params: CubicParameters, T, P, liquid_vapour_pressure=None):
    """Ideal-solution K_i = P_sat,i(T) / P, (n, ns), and a mask of extrapolated entries.

    ``liquid_vapour_pressure`` maps species -> callable T [K] -> P_sat [Pa] from the
    species' own condensed-phase data; others take :func:`saturation_pressure`, and
    above Tc Wilson's correlation (extrapolation, flagged).
    """
    T = np.atleast_1d(np.asarray(T, dtype=float))
    P = np.broadcast_to(np.asarray(P, dtype=float), T.shape)
    p_sat = saturation_pressure(params, T)
    for k, name in enumerate(params.names):
        if liquid_vapour_pressure and name in liquid_vapour_pressure:
            p_sat[:, k] = liquid_vapour_pressure[name](T)
    extrapolated = ~np.isfinite(p_sat)
    p_sat = np.where(extrapolated, wilson_k_values(params, T, 1.0), p_sat)
    return p_sat / P[:, None], extrapolated


def condensed_vapour_pressure(gas_record, liquid_record):
    """P_sat(T) [Pa] from standard Gibbs energies of a species' gas and liquid:
    P_sat = P° exp(-(g°_gas - g°_liquid)/RT) (ideal vapour, incompressible liquid at 1 bar
    standard state; NASA TM-4513 polynomials)."""
    def p_sat(T):
        T = np.asarray(T, dtype=float)
        return P_STANDARD * np.exp(liquid_record.model.gibbs_RT(T) - gas_record.model.gibbs_RT(T))
    return p_sat


def liquid_data_vapour_pressures(database, names):
    """Vapour-pressure functions from the database's own liquid records.

    For each name with a liquid record called ``"<name>(l)"`` (e.g. ``"H2O(l)"``), maps
    the name to :func:`condensed_vapour_pressure` of the pair; names without one are left
    out (the Raoult model then uses the Peng-Robinson saturation pressure).

    >>> from eqdesign.thermo import bundled_database
    >>> sorted(liquid_data_vapour_pressures(bundled_database(), ["NH3", "H2O"]))
    ['H2O']
    """
    out = {}
    for name in names:
        liquid = f"{name}(l)"
        if liquid in database.species and not database.species[liquid].is_gas:
            out[name] = condensed_vapour_pressure(database[name], database.species[liquid])
    return out


# --------------------------------------------------------------------------- flash
def _stability(params, T, P, z, ln_phi_z, max_iterations=100):
    """Michelsen (1982) Part I stability test; returns (unstable (n,), ln K start (n, ns))."""
    n = T.size
    present = z > 0
    zsafe = np.where(present, z, 1.0)
    d = np.log(zsafe) + ln_phi_z
    lnKw = np.log(wilson_k_values(params, T, P))
    best_tm = np.zeros(n)
    best_lnK = lnKw.copy()
    for sign in (-1.0, 1.0):                                   # liquid-like, vapour-like trial
        ln_W = np.log(zsafe) + sign * lnKw
        active = best_tm >= -1e-10            # one negative distance already proves instability
        tm = np.zeros(n)
        for _ in range(max_iterations):
            rows = np.flatnonzero(active)
            if rows.size == 0:
                break
            W = np.where(present[rows], np.exp(ln_W[rows]), 0.0)
            w = W / W.sum(axis=1, keepdims=True)
            lp, _, _ = _stable_root_ln_phi(params, T[rows], P[rows], np.maximum(w, 1e-300))
            new = np.where(present[rows], d[rows] - lp, -np.inf)
            change = np.max(np.where(present[rows], np.abs(new - ln_W[rows]), 0.0), axis=1)
            ln_W[rows] = new
            trivial = np.max(np.where(present[rows], np.abs(w - z[rows]), 0.0), axis=1) < 1e-5
            tm[rows] = 1.0 - np.where(present[rows], np.exp(new), 0.0).sum(axis=1)
            # a clearly negative tangent-plane distance already proves instability
            active[rows[(change < 1e-8) | trivial | (tm[rows] < -1e-3)]] = False
            tm[rows[trivial]] = 0.0
        better = tm < best_tm - 1e-10
        lnK_trial = sign * (ln_W - np.log(zsafe))
        best_lnK[better] = lnK_trial[better]
        best_tm = np.minimum(best_tm, tm)
    return best_tm < -1e-10, best_lnK


def _lnK_update(params, T, P, z, lnK):
    beta, x, y = _split(z, lnK)
    lpl = gas_state(params, T, P, x, root="smallest").log_fugacity_coefficients
    lpv = gas_state(params, T, P, y, root="largest").log_fugacity_coefficients
    return lpl - lpv, beta, x, y


def _phase_split(params, Tr, Pr, zr, lnK, tolerance, max_iterations):
    """Successive substitution then Newton on ln K (Michelsen 1982, Part II), rows of states.
    Returns beta, x, y, K (NaN where not converged), converged, iterations."""
    lk = lnK.copy()
    ns = zr.shape[1]
    its = np.zeros(zr.shape[0], dtype=int)
    # successive substitution
    active = np.ones(zr.shape[0], dtype=bool)
    for it in range(max_iterations):
        a = np.flatnonzero(active)
        if a.size == 0:
            break
        new, _, _, _ = _lnK_update(params, Tr[a], Pr[a], zr[a], lk[a])
        change = np.abs(new - lk[a]).max(axis=1)
        lk[a] = new
        its[a] += 1
        # converged, or slow (near a critical point): the Newton finish takes over
        done = (change < tolerance) | ((it >= 8) & (change < 1e-4)) | (it >= 60)
        active[a[done]] = False
    # Newton finish on r(lnK) = lnK - update(lnK), finite-difference Jacobian
    h = 1e-7
    for it in range(30):
        upd, bt, xr, yr = _lnK_update(params, Tr, Pr, zr, lk)
        r = lk - upd
        err = np.abs(r).max(axis=1)
        ok = err < tolerance
        if ok.all():
            break
        todo = np.flatnonzero(~ok)
        m = todo.size
        Tp = np.repeat(Tr[todo], ns)
        Pp = np.repeat(Pr[todo], ns)
        zp = np.repeat(zr[todo], ns, axis=0)
        lkp = np.repeat(lk[todo], ns, axis=0) + h * np.tile(np.eye(ns), (m, 1))
        up_p, _, _, _ = _lnK_update(params, Tp, Pp, zp, lkp)
        rp = (lkp - up_p).reshape(m, ns, ns)                 # [state, perturbed j, i]
        J = (rp - r[todo][:, None, :]) / h                   # J[s, j, i] = d r_i / d lnK_j
        J = np.transpose(J, (0, 2, 1))
        try:
            step = np.linalg.solve(J, -r[todo][:, :, None])[:, :, 0]
        except np.linalg.LinAlgError:
            break
        step = np.clip(step, -1.0, 1.0)
        lk[todo] += step
        its[todo] += 1
    upd, bt, xr, yr = _lnK_update(params, Tr, Pr, zr, lk)
    err = np.abs(lk - upd).max(axis=1)
    trivial = np.abs(lk).max(axis=1) < 1e-4
    ok = (err < 1e-8) & ~trivial & (bt > 0) & (bt < 1)
    return (np.where(ok, bt, np.nan), np.where(ok[:, None], xr, np.nan),
            np.where(ok[:, None], yr, np.nan), np.where(ok[:, None], np.exp(lk), np.nan), ok, its)


def flash(params: CubicParameters, T, P, z, *, model: str = "peng-robinson",
          liquid_vapour_pressure=None, initial_K=None, tolerance: float = 1e-10,
          max_iterations: int = 200) -> FlashResult:
    """Isothermal flash of feeds z at T and P: vapour fraction, x, y, K-values per state.

    Parameters
    ----------
    params : CubicParameters
        Species constants and k_ij (also used by the Raoult model for P_sat).
    T : float | ndarray (n,)
        Temperature [K].
    P : float | ndarray (n,)
        Pressure [Pa].
    z : ndarray (ns,) | (n, ns)
        Feed mole fractions [-] (rows normalised).
    model : {"peng-robinson", "raoult"}
        Both phases from the equation of state, or an ideal solution with ideal vapour.
    liquid_vapour_pressure : mapping, optional
        Raoult model: species -> callable P_sat(T [K]) [Pa] from condensed-phase data.
    initial_K : ndarray (n, ns), optional
        K-values of a nearby two-phase answer (warm start, e.g. the previous iteration
        of a recycle loop): the phase split starts from them and the stability test is
        run only for states where that start does not give two phases.

    Returns
    -------
    FlashResult

    Sources: Michelsen, Fluid Phase Equilib. 9 (1982) 1-19 and 21-40; Rachford and Rice,
    J. Petrol. Technol. 4(10) (1952) 19.

    Example: an invented ammonia-loop gas (65 % H2, 22 % N2, 13 % NH3) cooled to -5 degC
    at 200 bar condenses part of its ammonia.

    >>> mix = CubicParameters(["H2", "N2", "NH3"], [33.19, 126.2, 405.4],
    ...                       [1.313e6, 3.398e6, 11.353e6], [-0.216, 0.037, 0.257],
    ...                       quantum_gases=True)
    >>> r = flash(mix, 268.15, 200e5, [0.65, 0.22, 0.13])
    >>> bool(r.two_phase[0]), round(float(r.vapour[0, 2]), 3)
    (True, 0.035)
    """
    if model not in FLASH_MODELS:
        raise ValueError(f"flash model {model!r}: use one of {', '.join(FLASH_MODELS)}")
    z = np.atleast_2d(np.asarray(z, dtype=float))
    T = np.asarray(T, dtype=float)
    P = np.asarray(P, dtype=float)
    n = np.broadcast_shapes(T.shape, P.shape, z.shape[:-1])
    n = int(np.prod(n)) if n else 1
    T = np.broadcast_to(T, (n,)).astype(float).copy() if T.ndim <= 1 else T.reshape(-1)
    P = np.broadcast_to(P, (n,)).astype(float).copy() if P.ndim <= 1 else P.reshape(-1)
    z = np.broadcast_to(z, (n, params.species_count)).astype(float)
    if np.any(z < 0) or np.any(~np.isfinite(z)) or np.any(z.sum(axis=1) <= 0):
        raise ValueError("feed mole fractions must be finite, non-negative and not all zero")
    z = z / z.sum(axis=1, keepdims=True)
    ns = params.species_count
    messages = [""] * n
    iterations = np.zeros(n, dtype=int)

    if model == "raoult":
        K, extrapolated = raoult_k_values(params, T, P, liquid_vapour_pressure)
        beta, x, y = _split(z, np.log(K))
        two = (beta > 0) & (beta < 1)
        for i in range(n):
            label = "two phases" if two[i] else ("single vapour phase" if beta[i] >= 1 else "single liquid phase")
            extra = [params.names[k] for k in np.flatnonzero(extrapolated[i] & (z[i] > 0))]
            if extra:
                label += ("; vapour pressure extrapolated above the critical temperature "
                          f"(Wilson's correlation) for {', '.join(extra)}")
            messages[i] = label
        single = ~two
        x = np.where(single[:, None], z, x)
        y = np.where(single[:, None], z, y)
        return FlashResult(tuple(params.names), T, P, z, beta, x, y, np.where(single[:, None], 1.0, K),
                           two, np.ones(n, dtype=bool), iterations, tuple(messages), model)

    if initial_K is not None:
        K0 = np.broadcast_to(np.asarray(initial_K, dtype=float), (n, ns))
        warm = np.all(np.isfinite(K0) & (K0 > 0), axis=1)
        if warm.any():
            first = _phase_split(params, T[warm], P[warm], z[warm], np.log(K0[warm]), tolerance,
                                 max_iterations)
            good = first[4]
            if good.all() and warm.all():
                bt, xr, yr, Kr, ok, its = first
                return FlashResult(tuple(params.names), T, P, z, bt, xr, yr, Kr, ok.copy(), ok.copy(), its,
                                   tuple("two phases" for _ in range(n)), model)
            cold = flash(params, T, P, z, model=model, tolerance=tolerance, max_iterations=max_iterations)
            rows = np.flatnonzero(warm)[good]
            bt, xr, yr, Kr, ok, its = (a[good] for a in first)
            vf, lq, vp, kv = (np.array(a) for a in (cold.vapour_fraction, cold.liquid, cold.vapour, cold.K_values))
            vf[rows], lq[rows], vp[rows], kv[rows] = bt, xr, yr, Kr
            tp, cv, it = np.array(cold.two_phase), np.array(cold.converged), np.array(cold.iterations)
            tp[rows] = True
            cv[rows] = True
            it[rows] = its
            msgs = list(cold.messages)
            for r in rows:
                msgs[r] = "two phases"
            return FlashResult(tuple(params.names), T, P, z, vf, lq, vp, kv, tp, cv, it, tuple(msgs), model)
    ln_phi_z, vapour_root, vap_state = _stable_root_ln_phi(params, T, P, z)
    unstable, lnK = _stability(params, T, P, z, ln_phi_z)
    beta = np.where(vapour_root, 1.0, 0.0)
    # single-root feeds: liquid-like below the pseudo-critical temperature (Kay's rule) with
    # v < 3.95 b (the Peng-Robinson critical volume); common practice, no source
    T_pc = z @ params.critical_temperature
    single_dense = vap_state.single_root & (T < T_pc) & (vap_state.compressibility < 0.3)
    beta = np.where(single_dense, 0.0, beta)
    x = z.copy()
    y = z.copy()
    K = np.ones((n, ns))
    converged = np.ones(n, dtype=bool)
    rows = np.flatnonzero(unstable)
    if rows.size:
        bt, xr, yr, Kr, ok, its = _phase_split(params, T[rows], P[rows], z[rows], lnK[rows],
                                               tolerance, max_iterations)
        beta[rows], x[rows], y[rows], K[rows] = bt, xr, yr, Kr
        converged[rows] = ok
        iterations[rows] = its
    two = unstable & converged
    for i in range(n):
        if unstable[i]:
            messages[i] = "two phases" if converged[i] else "unstable feed; the phase split did not converge"
        else:
            messages[i] = "single vapour phase (stable)" if beta[i] >= 1 else "single liquid phase (stable)"
    return FlashResult(tuple(params.names), T, P, z, beta, x, y, K, two, converged, iterations,
                       tuple(messages), model)
