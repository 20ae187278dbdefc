"""Benchmark: equilibrium temperatures of many plant samples in one call, against cantera.

Run:  python tests/benchmarks/bench_plant_approach.py

2000 invented reformer-outlet analyses (steam reforming, Δn = +2): one
`approach_to_equilibrium` call, and a loop that finds each sample's T_eq with scipy's brentq
on cantera's K(T) from a phase holding the same NASA data.  Prints time per sample, the
speed ratio (cantera loop / eqdesign) and the largest T_eq difference.  A script, not a
test: timings are printed, never asserted.
"""
from __future__ import annotations

import pathlib
import sys

import numpy as np
from scipy.optimize import brentq

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))
from cantera_reference import cantera_phase  # noqa: E402
from timing import best_of  # noqa: E402

from eqdesign.solve.studies.plant_approach import approach_to_equilibrium  # noqa: E402
from eqdesign.thermo import bundled_database  # noqa: E402

SMR = "CH4 + H2O = CO + 3 H2"


def main(n: int = 2000) -> None:
    import cantera as ct
    db = bundled_database()
    rng = np.random.default_rng(3)
    comp = {"CH4": rng.uniform(0.02, 0.06, n), "H2O": rng.uniform(0.28, 0.34, n),
            "CO": rng.uniform(0.07, 0.11, n), "CO2": rng.uniform(0.04, 0.06, n), "H2": rng.uniform(0.45, 0.52, n)}
    T = rng.uniform(1100.0, 1170.0, n)
    P = rng.uniform(25e5, 32e5, n)
    approach_to_equilibrium(SMR, {k: v[:5] for k, v in comp.items()}, T[:5], P[:5])
    t_ours, res = best_of(lambda: approach_to_equilibrium(SMR, comp, T, P), 3)
    gas, _ = cantera_phase(list(comp), db, reactions=[SMR.replace("=", "<=>")])
    total = sum(comp.values())
    ln_q = (np.log(comp["CO"] / total) + 3 * np.log(comp["H2"] / total) - np.log(comp["CH4"] / total)
            - np.log(comp["H2O"] / total) + 2 * np.log(P / 1e5))

    def ln_k(t):
        gas.TP = t, 1e5
        return np.log(gas.equilibrium_constants[0]) + 2 * np.log(ct.gas_constant * t / 1e5)

    def loop():
        return np.array([brentq(lambda t: ln_k(t) - q, 700.0, 1500.0, xtol=1e-9) for q in ln_q])

    t_ct, T_ct = best_of(loop, 1)
    diff = np.max(np.abs(res[SMR].equilibrium_temperature - T_ct))
    print(f"{n} samples: eqdesign {1e6 * t_ours / n:.1f} us/sample, cantera + brentq loop "
          f"{1e6 * t_ct / n:.1f} us/sample, ratio {t_ct / t_ours:.1f}, largest T_eq difference {diff:.2e} K")


if __name__ == "__main__":
    main()
