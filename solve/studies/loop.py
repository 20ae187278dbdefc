"""Synthesis loop at steady state: make-up, recycle, converter at equilibrium, separator,
purge and compressors, for one or several loop pressures.

What it computes. A make-up gas is compressed in intercooled stages to the loop pressure
and mixed with the recycle gas. The converter outlet is the chemical equilibrium of that
feed at the outlet temperature plus an approach margin (an approach of dT K evaluates the
equilibrium at T + dT: for an exothermic synthesis that is the side of lower conversion).
The outlet is cooled to the separator temperature and flashed at the separator pressure
(loop pressure less the loop pressure drop); the liquid is the product. A purge is taken
from the separator vapour so that the inerts (species whose amount no allowed reaction can
change, found from the conservation matrix: CH4 and Ar in ammonia synthesis, N2 in methanol
synthesis) stay at the stated mole fraction in the converter feed, or at a stated purge
fraction. The rest is recompressed to the loop pressure and recycled.

Method. The unknowns are the recycle stream (mol/s of each species) and the purge fraction.
The equations: recycle = (1 - purge fraction) x separator vapour, and either the inert
fraction of the converter feed at its ceiling (written as a Fischer-Burmeister
complementarity, so that the purge falls to zero where the inerts dissolved in the product
already keep them below it; A. Fischer, Optimization 24 (1992) 269-284) or the purge
fraction at its stated value. They are solved by Newton's method with a forward-difference
Jacobian, damped to keep flows positive. Each Newton step sends the base state and one
perturbed copy per unknown, for every pressure option, round the loop together: one
vectorised equilibrium call (:func:`eqdesign.solve.equilibrium.equilibrium`, Gibbs
minimisation; real gas by Peng-Robinson) and one vectorised flash
(:func:`eqdesign.thermo.flash.flash`, Michelsen 1982). Converged when the relative tear
residual is below the tolerance and the element balance make-up = purge + product closes
to 1e-10 relative; otherwise the option is flagged, its numbers NaN, and the message says
what failed. (Successive substitution accelerated by Wegstein's method, J. H. Wegstein,
Commun. ACM 1(6) (1958) 9, was tried first and stalled on the purge rule.)

These are model results for comparing options. Synthesis loops run at 100-300 bar with
flammable hydrogen and toxic ammonia or methanol: design, relief, and operation follow local
codes and licensed engineering practice.
"""
from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numpy as np

from ...thermo.compression import GasProperties, compress
from ...thermo.database import SpeciesDatabase
from ...thermo.flash import flash
from ...thermo.peng_robinson import CubicParameters, binary_interaction_matrix, gas_state
from ...thermo.reactions import Reaction, bundled_database
from ...thermo.units import to_kelvin, to_pascal, to_si
from ..core import equilibrium
from ..core.problem import element_matrix, invariant_basis, stoichiometric_matrix

__all__ = ["LoopInputError", "LoopResult", "LoopStudy", "synthesis_loop", "LOOP_CAUTION"]

#: Cautions carried in every result's notes.
LOOP_CAUTION = (
    "Model results for comparing loop options, not a design. Synthesis loops operate at high "
    "pressure (stored energy; pressure-equipment codes apply); hydrogen is flammable over a "
    "wide range and leaks readily; ammonia is toxic (and methanol toxic and flammable). "
    "Design, relief, and operation follow local codes and licensed engineering practice.")



class LoopInputError(ValueError):
    """The loop's species, make-up, conditions or options are inconsistent."""


@dataclass(frozen=True, eq=False)
class LoopResult:
    """Steady state of one synthesis loop.

    Attributes (flows in mol/s, powers and duties in W)
    ----------
    pressure : float
        Loop (converter) pressure [Pa].
    separator_pressure : float
        Separator pressure = loop pressure less the loop pressure drop [Pa].
    converged : bool
    iterations : int
    message : str
    streams : dict
        Stream name -> {species: mol/s}: "makeup", "converter_in", "converter_out",
        "separator_vapour", "product" (separator liquid), "purge", "recycle".
    per_pass_conversion : float
        Fraction of the key reactant in the converter feed converted per pass [-].
    recycle_ratio : float
        Recycle molar flow over make-up molar flow [-].
    product_rate : float
        Product species in the separator liquid [mol/s].
    product_mass_rate : float
        Separator liquid [kg/s].
    product_purity : float
        Mole fraction of the product species in the separator liquid [-].
    purge_rate : float
        [mol/s]
    purge_fraction : float
        Purge over separator vapour [-].
    hydrogen_lost : float
        H2 leaving in the purge [mol/s] (``hydrogen_dissolved`` in the product).
    separator_vapour : dict
        Mole fractions of the separator vapour.
    power : dict
        {"makeup": W, "recycle": W} with the chosen gas model.
    power_ideal : dict
        The same with the ideal gas.
    cooling_duty : float
        Heat removed cooling the converter outlet to the separator (Peng-Robinson
        enthalpies, liquid included) [W].
    chilling_duty : float
        The part of it below the cooling-water temperature (refrigeration) [W].
    converter_heat : float
        Heat of reaction released in the converter at the outlet temperature [W].
    specific_energy : float
        (make-up + recycle power) per tonne of separator liquid [J/t]; ``specific_energy_kwh``
        in kWh/t.
    element_balance_residual : float
        max |make-up - purge - product| over the elements, relative to the atoms fed [-].
    notes : str
        Cautions and model notes.
    """

    pressure: float
    separator_pressure: float
    converged: bool
    iterations: int
    message: str
    species: tuple
    product_species: str
    key_reactant: str
    inerts: tuple
    streams: dict = field(repr=False)
    per_pass_conversion: float = np.nan
    recycle_ratio: float = np.nan
    product_rate: float = np.nan
    product_mass_rate: float = np.nan
    product_purity: float = np.nan
    purge_rate: float = np.nan
    purge_fraction: float = np.nan
    hydrogen_lost: float = np.nan
    hydrogen_dissolved: float = np.nan
    separator_vapour: dict = field(default_factory=dict, repr=False)
    power: dict = field(default_factory=dict)
    power_ideal: dict = field(default_factory=dict)
    cooling_duty: float = np.nan
    chilling_duty: float = np.nan
    converter_heat: float = np.nan
    specific_energy: float = np.nan
    element_balance_residual: float = np.nan
    inert_fraction_in_feed: float = np.nan
    notes: str = LOOP_CAUTION

    @property
    def specific_energy_kwh(self) -> float:
        """Compression energy per tonne of separator liquid [kWh/t]."""
        return self.specific_energy / 3.6e6


@dataclass(frozen=True, eq=False)
class LoopStudy:
    """Loops at several pressures (one :class:`LoopResult` per option, in input order)."""

    results: tuple

    @property
    def pressures(self) -> np.ndarray:
        return np.array([r.pressure for r in self.results])

    @property
    def converged(self) -> np.ndarray:
        return np.array([r.converged for r in self.results])

    def values(self, attribute: str) -> np.ndarray:
        """One attribute of every option as an array (e.g. ``"recycle_ratio"``)."""
        return np.array([getattr(r, attribute) for r in self.results])


def _vector(mapping, names, what):
    out = np.zeros(len(names))
    for key, value in mapping.items():
        if key not in names:
            raise LoopInputError(f"{what} names {key!r}, which is not among the loop species "
                                 f"({', '.join(names)}); add it to species")
        v = float(to_si(value, "molar_flow"))
        if not np.isfinite(v) or v < 0:
            raise LoopInputError(f"{what}[{key!r}] must be a finite, non-negative molar flow")
        out[names.index(key)] = v
    return out


def _inert_species(C: np.ndarray, tol: float = 1e-9) -> np.ndarray:
    """Species whose amount is conserved by the conservation matrix C (rows): e_i in row space."""
    ns = C.shape[1]
    inert = np.zeros(ns, dtype=bool)
    for i in range(ns):
        e = np.zeros(ns)
        e[i] = 1.0
        coef, *_ = np.linalg.lstsq(C.T, e, rcond=None)
        inert[i] = np.abs(C.T @ coef - e).max() < tol
    return inert


def _enthalpy(records, eos, T, P, flows, root="largest"):
    """Total enthalpy [W] of phase flows (n, ns) at T, P: ideal gas + PR residual (or none)."""
    h0 = GasProperties(records)._ideal(np.broadcast_to(np.asarray(T, dtype=float), flows.shape[:-1]))[0]
    total = flows.sum(axis=-1)
    H = (flows * h0).sum(axis=-1)
    if eos is not None:
        ok = total > 0
        if ok.any():
            y = flows[ok] / total[ok, None]
            Tb = np.broadcast_to(T, total.shape)[ok]
            Pb = np.broadcast_to(P, total.shape)[ok]
            H[ok] += total[ok] * gas_state(eos, Tb, Pb, y, root=root).residual_enthalpy
    return H


def synthesis_loop(species: Sequence[str], makeup: Mapping[str, object], pressure, outlet_temperature,
                   separator_temperature, *, makeup_pressure, makeup_temperature,
                   inert_limit: float | None = None, purge_fraction: float | None = None,
                   approach=0.0, loop_pressure_drop="5 bar", compressor_efficiency: float = 0.78,
                   makeup_stages: int = 3, intercooler_temperature="40 degC",
                   recycle_suction_temperature=None, gas_model: str = "peng-robinson",
                   reactions: Sequence[str] | None = None, database: SpeciesDatabase | None = None,
                   key: str | None = None, product: str | None = None,
                   binary_interaction: Mapping | None = None, tolerance: float = 1e-11,
                   max_iterations: int = 150):
    """Steady state of a synthesis loop at one or several loop pressures.

    Parameters
    ----------
    species : sequence of str
        Species that may be present (make-up species are added).
    makeup : mapping species -> molar flow
        Make-up gas [mol/s] (numbers) or strings with units ("1000 kmol/h").
    pressure : float | str | sequence
        Loop (converter) pressure [Pa] or quantity ("200 bar"); a sequence gives one loop
        per pressure option and returns a :class:`LoopStudy`.
    outlet_temperature : float | str
        Converter outlet temperature [K] or quantity.
    separator_temperature : float | str
        Separator (product condensation) temperature [K] or quantity.
    makeup_pressure, makeup_temperature : float | str
        Make-up gas at the battery limit [Pa], [K].
    inert_limit : float, optional
        Mole fraction of all inerts together in the converter feed [-]; the purge is
        chosen to hold it. Give this or ``purge_fraction``.
    purge_fraction : float, optional
        Fixed fraction of the separator vapour purged [-].
    approach : float | str
        Approach to equilibrium [K]: equilibrium evaluated at outlet temperature + approach.
    loop_pressure_drop : float | str
        Pressure lost around the loop [Pa]; the separator sits at pressure - drop and the
        recycle compressor restores it.
    compressor_efficiency : float
        Isentropic efficiency of every compressor stage [-].
    makeup_stages : int
        Intercooled stages of the make-up compressor.
    intercooler_temperature : float | str
        Gas temperature after each intercooler [K] (also the cooling-water end of the
        separator cooling train).
    recycle_suction_temperature : float | str, optional
        Recycle compressor suction temperature [K]; default the intercooler temperature
        (recycle gas reheated against the converter effluent).
    gas_model : {"peng-robinson", "ideal"}
        Gas model of the converter equilibrium and of the compressors. The separator flash
        and the cooling duties always use Peng-Robinson (a liquid needs an equation of state).
    reactions : sequence of str, optional
        Allowed reactions (default: every species may form, element balances only).
    key : str, optional
        Key reactant for per-pass conversion (default H2 if present).
    product : str, optional
        Product species (default: the species with the largest flow in the separator liquid).

    Returns
    -------
    LoopResult, or LoopStudy for several pressures.

    Example: an invented ammonia make-up at 200 bar, 450 degC outlet, -5 degC separator,
    inerts held at 10 % (numbers checked in the tests).

    >>> r = synthesis_loop(["N2", "H2", "NH3", "CH4", "Ar"],
    ...     {"H2": 742.0, "N2": 247.0, "CH4": 8.0, "Ar": 3.0}, "200 bar", "450 degC", "-5 degC",
    ...     makeup_pressure="30 bar", makeup_temperature="40 degC", inert_limit=0.10)
    >>> r.converged, r.product_species, r.inerts
    (True, 'NH3', ('CH4', 'Ar'))
    """
    db = database or bundled_database()
    several = isinstance(pressure, (list, tuple, np.ndarray))
    pressures = np.array([float(to_pascal(p)) for p in pressure] if several else [float(to_pascal(pressure))])
    T_out = float(to_kelvin(outlet_temperature))
    T_sep = float(to_kelvin(separator_temperature))
    T_ic = float(to_kelvin(intercooler_temperature))
    T_rs = T_ic if recycle_suction_temperature is None else float(to_kelvin(recycle_suction_temperature))
    P_mu = float(to_pascal(makeup_pressure))
    T_mu = float(to_kelvin(makeup_temperature))
    dT = _temperature_difference(approach)
    dP = float(to_pascal(loop_pressure_drop))
    if (inert_limit is None) == (purge_fraction is None):
        raise LoopInputError("give exactly one of inert_limit (mole fraction of inerts in the converter "
                             "feed) or purge_fraction (fraction of the separator vapour purged)")
    if inert_limit is not None and not (0.0 < inert_limit < 1.0):
        raise LoopInputError(f"inert_limit {inert_limit!r}: give a mole fraction between 0 and 1")
    if purge_fraction is not None and not (0.0 < purge_fraction <= 1.0):
        raise LoopInputError(f"purge_fraction {purge_fraction!r}: give a fraction between 0 (excluded) and 1")
    if not (0.0 < compressor_efficiency <= 1.0):
        raise LoopInputError(f"compressor_efficiency {compressor_efficiency!r}: give a fraction between 0 and 1")
    if gas_model not in ("peng-robinson", "ideal"):
        raise LoopInputError(f"gas_model {gas_model!r}: use one of peng-robinson, ideal")
    if np.any(pressures - dP <= 0) or dP < 0:
        raise LoopInputError("loop_pressure_drop must be non-negative and below the loop pressure")
    if np.any(pressures < P_mu):
        raise LoopInputError("the loop pressure must not be below makeup_pressure")

    names: list[str] = []
    for n in list(species) + list(makeup):
        resolved = db.resolve(n)
        if resolved not in names:
            names.append(resolved)
    rxns = tuple(Reaction.parse(r, db) if isinstance(r, str) else r for r in (reactions or ()))
    for r in rxns:
        for n in r.names:
            if n not in names:
                names.append(n)
    records = [db.species[n] for n in names]
    not_gas = [sp.name for sp in records if not sp.is_gas]
    if not_gas:
        raise LoopInputError(f"loop species must be gases (the separator liquid is found by the flash); "
                             f"remove {', '.join(not_gas)}")
    ns = len(names)
    M = _vector({db.resolve(k): v for k, v in makeup.items()}, names, "makeup")
    if M.sum() <= 0:
        raise LoopInputError("the make-up gas is empty")
    if rxns:
        C = invariant_basis(stoichiometric_matrix(rxns, names))
    else:
        _, C = element_matrix(records)
    inert = _inert_species(C)
    _, A = element_matrix(records)
    key = db.resolve(key) if key else ("H2" if "H2" in names else names[int(np.argmax(M))])
    k_key = names.index(key)
    if inert_limit is not None and not inert.any():
        raise LoopInputError("inert_limit given but no species is inert here; give purge_fraction instead")
    if inert_limit is not None and M[inert].sum() / M.sum() > inert_limit:
        raise LoopInputError(f"inert_limit {inert_limit:g} is below the inert fraction of the make-up "
                             f"({M[inert].sum() / M.sum():.4g}); no purge can reach it")

    eos = CubicParameters.from_species(
        records, interaction=binary_interaction_matrix(names, overrides=dict(binary_interaction or {})),
        quantum_gases=True)
    n_opt = pressures.size
    P_sep = pressures - dP
    T_eq = T_out + dT

    # ---------------------------------------------------------------- tear-stream iteration
    warm: dict = {}
    def evaluate(recycle, P_rows, K_start=None):
        """One pass round the loop for rows of recycle guesses (m, ns) at pressures P_rows."""
        m = recycle.shape[0]
        feed = M[None, :] + recycle                                        # (m, ns)
        start = warm.get(m)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            eq = equilibrium(names, {n: feed[:, j] for j, n in enumerate(names)}, np.full(m, T_eq),
                             P_rows, reactions=list(rxns) or None, gas_model=gas_model, database=db,
                             binary_interaction=binary_interaction, warn=False, initial=start)
        if eq.all_converged:
            warm[m] = eq                       # warm start for the next pass of the same size
        out = eq.amount_array.reshape(m, ns)
        total = out.sum(axis=1)
        fl = flash(eos, np.full(m, T_sep), P_rows - dP, out / total[:, None], initial_K=K_start)
        vapour = fl.vapour_fraction[:, None] * total[:, None] * fl.vapour
        liquid = out - vapour
        ok = eq.converged.reshape(m) & fl.converged
        return vapour, dict(feed=feed, out=out, vapour=vapour, liquid=liquid, ok=ok, K=fl.K_values)

    def residuals(u, P_rows, K_start=None):
        """Tear equations for unknowns u = (recycle (ns), purge fraction): recycle =
        (1 - purge fraction) vapour, and the inert fraction of the converter feed at its
        limit (or the purge fraction at its stated value)."""
        rec, phi = u[:, :ns], u[:, ns]
        vapour, data = evaluate(rec, P_rows, K_start)
        r = np.empty_like(u)
        r[:, :ns] = (1.0 - phi)[:, None] * vapour - rec
        if inert_limit is not None:
            # the limit is a ceiling: either the purge holds the inerts at it, or no purge is
            # needed (inerts leave dissolved in the product below it). Complementarity
            # phi >= 0, slack >= 0, phi slack = 0 as the Fischer-Burmeister equation
            # phi + slack - sqrt(phi^2 + slack^2) = 0 (A. Fischer, Optimization 24 (1992) 269)
            feed = data["feed"]
            slack = inert_limit - feed[:, inert].sum(axis=1) / feed.sum(axis=1)
            r[:, ns] = phi + slack - np.sqrt(phi * phi + slack * slack)
        else:
            r[:, ns] = phi - purge_fraction
        data["keep"] = 1.0 - phi
        return r, data

    # start: recycle three times the make-up of reactants, with inerts at the limit
    x0 = np.where(inert, 0.0, 3.0 * M)
    if inert_limit is not None:
        reactive = M[~inert].sum() + x0.sum()
        inert_total = max((inert_limit * (reactive + M[inert].sum()) - M[inert].sum()) / (1.0 - inert_limit), 0.0)
        share = M[inert] / M[inert].sum() if M[inert].sum() > 0 else np.full(int(inert.sum()), 1.0 / inert.sum())
        x0[inert] = inert_total * share
    u = np.zeros((n_opt, ns + 1))
    u[:, :ns] = x0
    u[:, ns] = 0.05 if purge_fraction is None else purge_fraction
    nu = ns + 1
    # Newton on the tear equations with a forward-difference Jacobian: the base rows and one
    # perturbed copy per unknown go round the loop together in one vectorised pass
    active = np.ones(n_opt, dtype=bool)
    change = np.full(n_opt, np.inf)
    K_prev = None
    scale_flow = M.sum()
    used = np.zeros(n_opt, dtype=int)
    for _ in range(max_iterations):
        rows = np.flatnonzero(active)
        m = rows.size
        us = u[rows]
        h = np.empty((m, nu))
        h[:, :ns] = 1e-6 * np.maximum(us[:, :ns], 1e-4 * scale_flow)
        h[:, ns] = 1e-7
        batch = np.concatenate([us, np.repeat(us, nu, axis=0) + (np.eye(nu)[None] * h[:, None, :]).reshape(m * nu, nu)])
        P_batch = np.concatenate([pressures[rows], np.repeat(pressures[rows], nu)])
        K_batch = None
        if K_prev is not None:
            K_batch = np.concatenate([K_prev[rows], np.repeat(K_prev[rows], nu, axis=0)])
        r_all, data_all = residuals(batch, P_batch, K_batch)
        used[rows] += 1
        if K_prev is None:
            K_prev = np.full((n_opt, ns), np.nan)
        K_prev[rows] = data_all["K"][:m]
        r0 = r_all[:m]
        err = np.abs(r0[:, :ns]).sum(axis=1) / scale_flow + np.abs(r0[:, ns])
        change[rows] = err
        fine = err < tolerance
        J = np.transpose((r_all[m:].reshape(m, nu, nu) - r0[:, None, :]) / h[:, :, None], (0, 2, 1))
        bad = ~(np.all(np.isfinite(J), axis=(1, 2)) & np.all(np.isfinite(r0), axis=1))
        J = np.where(bad[:, None, None], -np.eye(nu)[None], J)
        try:
            delta = np.linalg.solve(J, -np.where(np.isfinite(r0), r0, 0.0)[:, :, None])[:, :, 0]
        except np.linalg.LinAlgError:
            delta = np.where(np.isfinite(r0), r0, 0.0)
        # damping: flows stay positive and the purge fraction inside (0, 1)
        with np.errstate(divide="ignore", invalid="ignore"):
            lim_flow = np.where(delta[:, :ns] < 0, -0.8 * us[:, :ns] / delta[:, :ns], np.inf).min(axis=1)
            phi_new = us[:, ns] + delta[:, ns]
            lim_phi = np.where(phi_new < 0, -0.8 * us[:, ns] / delta[:, ns],
                               np.where(phi_new > 1, 0.8 * (1 - us[:, ns]) / delta[:, ns], np.inf))
        lam = np.minimum(1.0, np.minimum(lim_flow, lim_phi))
        lam = np.where(np.isfinite(lam), lam, 1.0)[:, None]
        u[rows] = np.where(fine[:, None], us, us + lam * delta)
        active[rows[fine | bad]] = False
        if not active.any():
            break
    x = u[:, :ns]
    # final consistent evaluation at the converged tear
    r_final, info = residuals(u, pressures, K_prev)
    change = np.abs(r_final[:, :ns]).sum(axis=1) / scale_flow + np.abs(r_final[:, ns])
    feed, out, vapour, liquid, keep = info["feed"], info["out"], info["vapour"], info["liquid"], info["keep"]
    recycle = keep[:, None] * vapour
    purge = vapour - recycle
    atoms_in = M @ A.T
    residual = np.abs((M[None, :] - purge - liquid) @ A.T).max(axis=1) / atoms_in.sum()
    inert_feed = feed[:, inert].sum(axis=1) / feed.sum(axis=1)
    phi_final = u[:, ns]
    on_limit = np.ones(n_opt, dtype=bool) if inert_limit is None else (
        (np.abs(inert_feed - inert_limit) < 1e-8) | ((phi_final < 1e-9) & (inert_feed <= inert_limit + 1e-10)))
    ok = info["ok"] & on_limit & (change < max(tolerance * 100, 1e-9)) & (residual < 1e-10) & np.all(liquid > -1e-9 * out.sum(axis=1, keepdims=True), axis=1)

    # ---------------------------------------------------------------- energy
    props_real = GasProperties(records, eos if gas_model == "peng-robinson" else None)
    props_ideal = GasProperties(records, None)
    y_M = M / M.sum()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        w_mu = {m: compress(p, y_M, T_mu, P_mu, pressures, efficiency=compressor_efficiency,
                            stages=makeup_stages, intercooler_temperature=T_ic)
                for m, p in (("real", props_real), ("ideal", props_ideal))}
        rec_total = recycle.sum(axis=1)
        y_R = recycle / np.where(rec_total > 0, rec_total, 1.0)[:, None]
        y_R = np.where(rec_total[:, None] > 0, y_R, y_M)
        w_rc = {m: compress(p, y_R, T_rs, P_sep, pressures, efficiency=compressor_efficiency, stages=1)
                for m, p in (("real", props_real), ("ideal", props_ideal))}
    H_out = _enthalpy(records, eos, T_out, pressures, out)
    H_sep = (_enthalpy(records, eos, T_sep, P_sep, vapour, "largest")
             + _enthalpy(records, eos, T_sep, P_sep, liquid, "smallest"))
    cooling = H_out - H_sep
    if T_sep < T_ic:
        # the gas at the cooling-water temperature: still one phase or partly condensed; the
        # chiller duty is taken from the flash at T_ic to the separator state
        fl_cw = flash(eos, np.full(n_opt, T_ic), P_sep, out / out.sum(axis=1, keepdims=True))
        v_cw = fl_cw.vapour_fraction[:, None] * out.sum(axis=1, keepdims=True) * fl_cw.vapour
        H_cw = (_enthalpy(records, eos, T_ic, P_sep, v_cw, "largest")
                + _enthalpy(records, eos, T_ic, P_sep, out - v_cw, "smallest"))
        chilling = H_cw - H_sep
        ok &= fl_cw.converged
    else:
        chilling = np.zeros(n_opt)
    conv_eos = eos if gas_model == "peng-robinson" else None
    converter_heat = (_enthalpy(records, conv_eos, T_out, pressures, feed)
                      - _enthalpy(records, conv_eos, T_out, pressures, out))

    molar_mass = np.array([sp.molar_mass for sp in records]) * 1e-3           # kg/mol
    results = []
    for i in range(n_opt):
        prod_name = product and db.resolve(product) or names[int(np.argmax(liquid[i]))]
        kp = names.index(prod_name)
        liquid_total = liquid[i].sum()
        mass = float(liquid[i] @ molar_mass)
        power = {"makeup": float(w_mu["real"].work[i] * M.sum()),
                 "recycle": float(w_rc["real"].work[i] * recycle[i].sum())}
        power_ideal = {"makeup": float(w_mu["ideal"].work[i] * M.sum()),
                       "recycle": float(w_rc["ideal"].work[i] * recycle[i].sum())}
        conv_ok = bool(ok[i] and w_mu["real"].converged[i] and w_rc["real"].converged[i])
        if conv_ok:
            message = f"converged in {used[i]} iterations; element balance closes to {residual[i]:.1e}"
            if inert_limit is not None and phi_final[i] < 1e-9:
                message += ("; no purge needed: the inerts leave dissolved in the product and stay "
                            f"at {inert_feed[i]:.4f} of the converter feed, below the limit")
        elif not info["ok"][i]:
            message = "the converter equilibrium or the separator flash did not converge"
        elif residual[i] >= 1e-10 or change[i] >= 1e-10:
            message = (f"the recycle did not converge in {max_iterations} iterations (relative change "
                       f"{change[i]:.1e}, element balance {residual[i]:.1e})")
            if inert_limit is not None and not on_limit[i]:
                message += f"; inerts at {inert_feed[i]:.4f} of the converter feed against the limit {inert_limit:g}"
        else:
            message = "a compressor calculation did not converge"
        dissolved_note = ""
        if prod_name not in names or liquid_total <= 0:
            dissolved_note = " No liquid forms at the separator: no product."
        h2 = names.index("H2") if "H2" in names else None
        streams = {label: {n: float(v) for n, v in zip(names, arr)} for label, arr in (
            ("makeup", M), ("converter_in", feed[i]), ("converter_out", out[i]),
            ("separator_vapour", vapour[i]), ("product", liquid[i]), ("purge", purge[i]),
            ("recycle", recycle[i]))}
        nan = float("nan")
        value = (lambda v: float(v)) if conv_ok else (lambda v: nan)
        results.append(LoopResult(
            pressure=float(pressures[i]), separator_pressure=float(P_sep[i]), converged=conv_ok,
            iterations=int(used[i]), message=message, species=tuple(names), product_species=prod_name,
            key_reactant=key, inerts=tuple(n for n, f in zip(names, inert) if f),
            streams=streams if conv_ok else {k: {n: nan for n in names} for k in streams},
            per_pass_conversion=value((feed[i, k_key] - out[i, k_key]) / feed[i, k_key]),
            recycle_ratio=value(recycle[i].sum() / M.sum()),
            product_rate=value(liquid[i, kp]), product_mass_rate=value(mass),
            product_purity=value(liquid[i, kp] / liquid_total if liquid_total > 0 else nan),
            purge_rate=value(purge[i].sum()), purge_fraction=value(1.0 - keep[i]),
            hydrogen_lost=value(purge[i, h2] if h2 is not None else 0.0),
            hydrogen_dissolved=value(liquid[i, h2] if h2 is not None else 0.0),
            separator_vapour={n: value(v) for n, v in zip(names, vapour[i] / vapour[i].sum())},
            power={k: value(v) for k, v in power.items()},
            power_ideal={k: value(v) for k, v in power_ideal.items()},
            cooling_duty=value(cooling[i]), chilling_duty=value(chilling[i]),
            converter_heat=value(converter_heat[i]),
            specific_energy=value((power["makeup"] + power["recycle"]) / (mass / 1000.0) if mass > 0 else nan),
            element_balance_residual=float(residual[i]),
            inert_fraction_in_feed=value(feed[i, inert].sum() / feed[i].sum()),
            notes=LOOP_CAUTION + dissolved_note + (
                " Converter equilibrium and compressors with the "
                f"{'Peng-Robinson' if gas_model == 'peng-robinson' else 'ideal'} gas"
                f"{' (H2 with the Gunn-Chueh-Prausnitz effective constants)' if gas_model == 'peng-robinson' else ''}; "
                "separator flash and cooling duties with Peng-Robinson. Compression powers are "
                "shaft powers at the stated isentropic efficiency, without drive losses.")))
    return LoopStudy(tuple(results)) if several else results[0]


def _temperature_difference(value) -> float:
    """A temperature difference [K] from a number (K) or a string such as "10 K" / "10 delta_degC"."""
    if isinstance(value, (int, float, np.floating, np.integer)):
        return float(value)
    text = str(value).strip()
    for unit in ("delta_degC", "K", "kelvin"):
        if text.endswith(unit):
            return float(text[: -len(unit)])
    raise LoopInputError(f"approach {value!r}: give a temperature difference in K (a number or '10 K')")
