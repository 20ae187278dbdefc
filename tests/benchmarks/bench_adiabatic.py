"""Benchmark: batched adiabatic equilibrium against cantera point by point.

Run:  python tests/benchmarks/bench_adiabatic.py

Two 1000-state sweeps of adiabatic outlet temperatures, each solved by one
`eqdesign.solve.energy.adiabatic_equilibrium` call and by a loop of cantera
`equilibrate("HP")` on a phase built from the same NASA data and standard state:

* an SO2 converter first bed (invented): inlet 650-750 K x 6-12 % SO2 in air-like gas
  with 11 % O2, 1.2 bar;
* methane-air flames with radicals and NO: inlet 300-700 K x equivalence ratio 0.5-1.2,
  1 atm.

Prints time per point, the speed ratio (cantera / eqdesign), the largest outlet-temperature
difference and the iterations used.  A script, not a test: timings are printed, never
asserted.
"""
from __future__ import annotations

import pathlib
import sys

import numpy as np

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))
from cantera_reference import cantera_phase  # noqa: E402
from timing import best_of  # noqa: E402

from eqdesign.solve import adiabatic_equilibrium  # noqa: E402
from eqdesign.thermo import bundled_database  # noqa: E402


def so2_sweep(n_T, n_x):
    T, x = np.meshgrid(np.linspace(650.0, 750.0, n_T), np.linspace(0.06, 0.12, n_x), indexing="ij")
    T, x = T.ravel(), x.ravel()
    return ["SO2", "O2", "SO3", "N2"], {"SO2": x, "O2": np.full_like(x, 0.11), "N2": 0.89 - x}, T, 1.2e5


def flame_sweep(n_T, n_x):
    T, phi = np.meshgrid(np.linspace(300.0, 700.0, n_T), np.linspace(0.5, 1.2, n_x), indexing="ij")
    T, phi = T.ravel(), phi.ravel()
    names = ["CH4", "O2", "N2", "CO2", "H2O", "CO", "H2", "O", "H", "OH", "NO"]
    return names, {"CH4": phi, "O2": np.full_like(phi, 2.0), "N2": np.full_like(phi, 7.52)}, T, 101325.0


SWEEPS = {
    "SO2 converter first bed, 650-750 K x 6-12 % SO2, 1.2 bar (4 species)": so2_sweep,
    "methane-air with radicals and NO, 300-700 K x phi 0.5-1.2, 1 atm (11 species)": flame_sweep,
}


def main(n_T: int = 40, n_x: int = 25) -> None:
    db = bundled_database()
    for label, make in SWEEPS.items():
        names, feed, T, P = make(n_T, n_x)
        n = T.size
        small = {k: v[:8] for k, v in feed.items()}
        adiabatic_equilibrium(names, small, T[:8], P)          # warm imports and caches
        t_ours, res = best_of(lambda: adiabatic_equilibrium(names, feed, T, P), 5)
        gas, _ = cantera_phase(names, db)

        def cantera_loop():
            out = np.empty(n)
            for i in range(n):
                gas.TPX = T[i], P, {k: float(v[i]) for k, v in feed.items()}
                gas.equilibrate("HP")
                out[i] = gas.T
            return out

        t_ref, ref = best_of(cantera_loop, 2)
        diff = np.nanmax(np.abs(res.T - ref))
        print(f"{label}\n  points {n}, all converged: {res.all_converged}, equilibrium evaluations "
              f"per state: mean {res.iterations.mean():.2f}, max {res.iterations.max()}\n"
              f"  eqdesign {t_ours / n * 1e6:8.2f} us/point   cantera {t_ref / n * 1e6:8.2f} us/point   "
              f"speed ratio {t_ref / t_ours:6.1f}x   largest |dT_out| {diff:.1e} K")


if __name__ == "__main__":
    main()
