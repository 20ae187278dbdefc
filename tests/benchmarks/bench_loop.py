"""Benchmark: one ammonia synthesis loop solved with the real-gas (Peng-Robinson) converter,
flash and compressors, against cantera solving one converter equilibrium.

Run:  python tests/benchmarks/bench_loop.py

An invented make-up gas (74.2 % H2, 24.7 % N2, 0.8 % CH4, 0.3 % Ar, 1000 mol/s at 30 bar,
40 degC), 450 degC converter outlet, -5 degC separator, inerts held at 10 % of the
converter feed, at 200 bar; then three pressure options (150 / 200 / 250 bar) in one call.

Prints the wall time of one loop solve (target below 0.5 s), the time of one cantera
Peng-Robinson equilibrate("TP") of the same converter feed (same NASA data and critical
constants, classical H2 constants), and their ratio: how many single cantera equilibria one
loop costs.  A script, not a test: timings are printed, never asserted.
"""
from __future__ import annotations

import pathlib
import sys

import yaml

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))
from timing import best_of  # noqa: E402

from eqdesign.solve.studies.loop import synthesis_loop  # noqa: E402
from eqdesign.thermo import bundled_database  # noqa: E402

SPECIES = ["N2", "H2", "NH3", "CH4", "Ar"]
MAKEUP = {"H2": 742.0, "N2": 247.0, "CH4": 8.0, "Ar": 3.0}
OPTIONS = dict(makeup_pressure="30 bar", makeup_temperature="40 degC", inert_limit=0.10)


def cantera_pr(db, names):
    import cantera as ct
    species = []
    for n in names:
        sp, c = db[n], db[n].critical
        species.append({"name": n, "composition": {k: float(v) for k, v in sp.elements.items()},
                        "thermo": {"model": "NASA7", "temperature-ranges": list(sp.model.T_bounds),
                                   "data": sp.model.coefficients.tolist(), "reference-pressure": 1e5},
                        "critical-parameters": {"critical-temperature": c.Tc, "critical-pressure": c.Pc,
                                                "acentric-factor": c.omega}})
    doc = {"phases": [{"name": "gas", "thermo": "Peng-Robinson", "species": list(names),
                       "state": {"T": 700.0, "P": 1e7}}], "species": species}
    return ct.Solution(yaml=yaml.safe_dump(doc))


def main():
    db = bundled_database()
    synthesis_loop(SPECIES, MAKEUP, "200 bar", "450 degC", "-5 degC", **OPTIONS)       # warm-up
    t_loop, r = best_of(lambda: synthesis_loop(SPECIES, MAKEUP, "200 bar", "450 degC", "-5 degC",
                                               **OPTIONS), 3)
    t_three, study = best_of(lambda: synthesis_loop(SPECIES, MAKEUP, ["150 bar", "200 bar", "250 bar"],
                                                    "450 degC", "-5 degC", **OPTIONS), 2)
    gas = cantera_pr(db, SPECIES)
    feed = r.streams["converter_in"]

    def one_equilibrium():
        gas.TPX = 723.15, 200e5, feed
        gas.equilibrate("TP")
    t_ct, _ = best_of(one_equilibrium, 5)
    print(f"one loop at 200 bar (real gas): {t_loop:.3f} s   (target < 0.5 s; {r.iterations} Newton "
          f"iterations; converged {r.converged})")
    print(f"three pressure options in one call: {t_three:.3f} s")
    print(f"cantera, one Peng-Robinson converter equilibrium: {t_ct * 1e3:.2f} ms")
    print(f"ratio loop / one cantera equilibrium: {t_loop / t_ct:.0f}")
    print()
    print("P [bar]  recycle ratio  make-up [MW]  recycle [MW]  (ideal gas: make-up, recycle)  kWh/t")
    for o in study.results:
        print(f"{o.pressure / 1e5:7.0f}  {o.recycle_ratio:13.3f}  {o.power['makeup'] / 1e6:12.3f}  "
              f"{o.power['recycle'] / 1e6:12.3f}  ({o.power_ideal['makeup'] / 1e6:.3f}, "
              f"{o.power_ideal['recycle'] / 1e6:.3f})  {o.specific_energy_kwh:9.1f}")


if __name__ == "__main__":
    main()
