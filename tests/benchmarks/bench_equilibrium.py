"""Benchmark: batched equilibrium sweeps against cantera point by point.

Run:  python tests/benchmarks/bench_equilibrium.py

Two 1000-point T x P sweeps (ammonia synthesis with Ar and CH4 inerts; steam reforming
with shift) solved by one `eqdesign.solve.equilibrium` call each, and by a loop of
cantera `equilibrate("TP")` on a phase built from the same NASA data and standard state.
Prints time per point, the speed ratio (cantera / eqdesign), and the largest mole-fraction
difference.  A script, not a test: timings are printed, never asserted.
"""
from __future__ import annotations

import pathlib
import sys

import numpy as np

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))
from cantera_reference import cantera_phase  # noqa: E402
from timing import best_of  # noqa: E402

from eqdesign.solve import equilibrium  # noqa: E402
from eqdesign.thermo import bundled_database  # noqa: E402

SWEEPS = {
    "ammonia synthesis (N2, H2, NH3, Ar, CH4), 600-900 K x 10-300 bar": (
        ["N2", "H2", "NH3", "Ar", "CH4"], {"N2": 1.0, "H2": 3.0, "Ar": 0.08, "CH4": 0.05},
        (600.0, 900.0), (10e5, 300e5)),
    "steam reforming with shift (CH4, H2O, CO, CO2, H2), 700-1200 K x 1-40 bar": (
        ["CH4", "H2O", "CO", "CO2", "H2"], {"CH4": 1.0, "H2O": 3.0},
        (700.0, 1200.0), (1e5, 40e5)),
}


def main(n_T: int = 40, n_P: int = 25) -> None:
    db = bundled_database()
    for label, (names, feed, (t_lo, t_hi), (p_lo, p_hi)) in SWEEPS.items():
        T, P = np.meshgrid(np.linspace(t_lo, t_hi, n_T), np.geomspace(p_lo, p_hi, n_P), indexing="ij")
        T, P = T.ravel(), P.ravel()
        equilibrium(names, feed, T[:5], P[:5])          # warm imports and caches
        t_ours, res = best_of(lambda: equilibrium(names, feed, T, P), 5)
        gas, _ = cantera_phase(names, db)

        def cantera_loop():
            out = np.empty((T.size, len(names)))
            for i in range(T.size):
                gas.TPX = T[i], P[i], feed
                gas.equilibrate("TP")
                out[i] = gas.X
            return out

        t_ref, ref = best_of(cantera_loop, 2)
        order = [gas.species_index(n) for n in names]
        ours = np.stack([res.mole_fractions[n] for n in names], axis=1)
        diff = np.abs(ours - ref[:, order]).max()
        n = T.size
        print(f"{label}\n  points {n}, all converged: {res.all_converged}, "
              f"mean iterations {res.iterations.mean():.1f}\n"
              f"  eqdesign {t_ours / n * 1e6:8.2f} us/point   cantera {t_ref / n * 1e6:8.2f} us/point   "
              f"speed ratio {t_ref / t_ours:6.1f}x   largest |dy| {diff:.1e}")


if __name__ == "__main__":
    main()
