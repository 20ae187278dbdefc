"""Benchmark: a 10 000-point conversion map against cantera point by point.

Ammonia synthesis (N2, H2, NH3, ideal gas) over 20 temperatures x 25 pressures x 20 H2/N2
feed ratios (``--system reforming``: CH4, H2O, CO, CO2, H2 over T x P x H2O/CH4), solved
by :func:`eqdesign.solve.sweep.conversion_map` (batched, in chunks).
The reference is cantera's ``equilibrate("TP")`` on a phase built from *our* NASA
coefficients (``tests/cantera_reference.py``), called once per point.  To keep the run
short cantera is timed on a random subset of the points (1000 by default) and its time per
point is extrapolated to the whole map; the largest mole-fraction difference is taken on
the same subset.

    python tests/benchmarks/bench_map.py [--subset 1000] [--repeat 3]

Prints the time per point of both, the speed ratio (target: 30x), and the largest
difference.  A script, not a test: timings depend on the machine.
"""
from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))   # tests/ for cantera_reference

from cantera_reference import cantera_phase                      # noqa: E402
from eqdesign.solve import conversion_map                 # noqa: E402
from eqdesign.thermo import bundled_database                    # noqa: E402

#: name -> (species, base feed, T axis [K], P axis [Pa], (numerator, denominator, ratio axis))
SYSTEMS = {
    "ammonia": (["N2", "H2", "NH3"], {"N2": 1.0, "H2": 3.0}, np.linspace(600.0, 900.0, 20),
                np.geomspace(10e5, 400e5, 25), ("H2", "N2", np.linspace(1.0, 5.0, 20))),
    "reforming": (["CH4", "H2O", "CO", "CO2", "H2"], {"CH4": 1.0, "H2O": 3.0}, np.linspace(800.0, 1200.0, 20),
                  np.geomspace(1e5, 40e5, 25), ("H2O", "CH4", np.linspace(1.5, 5.0, 20))),
}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--subset", type=int, default=1000, help="points solved by cantera (default 1000)")
    ap.add_argument("--repeat", type=int, default=3, help="timed repetitions of the map (best is kept)")
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--system", choices=sorted(SYSTEMS), default="ammonia",
                    help="ammonia synthesis (default, 3 species) or steam reforming (5 species)")
    args = ap.parse_args(argv)

    db = bundled_database()
    names, feed, T_axis, P_axis, (num, den, ratio_axis) = SYSTEMS[args.system]
    key = den
    kw = dict(T=T_axis, P=P_axis, key=key, feed_ratio=(num, den, ratio_axis))
    conversion_map(names, feed, **{**kw, "T": T_axis[:2], "P": P_axis[:2]})        # warm-up (imports, data)
    best = np.inf
    for _ in range(args.repeat):
        t0 = time.perf_counter()
        m = conversion_map(names, feed, **kw)
        best = min(best, time.perf_counter() - t0)
    n_points = m.conversion.size
    ours_per_point = best / n_points

    rng = np.random.default_rng(args.seed)
    pick = rng.choice(n_points, size=min(args.subset, n_points), replace=False)
    T = m.T.reshape(-1)[pick]
    P = m.P.reshape(-1)[pick]
    numerator = np.broadcast_to(m.feed[num], m.shape).reshape(-1)[pick]
    gas, _ = cantera_phase(names, db)
    ref = np.empty((pick.size, len(names)))
    t0 = time.perf_counter()
    for i in range(pick.size):                 # the reference, point by point, as cantera is used
        gas.TPX = T[i], P[i], {**feed, num: numerator[i]}
        gas.equilibrate("TP")
        ref[i] = gas.X
    cantera_per_point = (time.perf_counter() - t0) / pick.size
    order = [gas.species_index(n) for n in names]
    ours = np.stack([m.mole_fractions[n].reshape(-1)[pick] for n in names], axis=1)
    diff = np.abs(ours - ref[:, order]).max()

    print(f"{args.system} map: {len(T_axis)} T x {len(P_axis)} P x {len(ratio_axis)} {num}/{den} "
          f"= {n_points} points, all converged: {m.all_converged}")
    print(f"eqdesign conversion_map : {ours_per_point * 1e6:9.1f} us/point  "
          f"({best:.3f} s for the map, best of {args.repeat})")
    print(f"cantera equilibrate('TP'): {cantera_per_point * 1e6:9.1f} us/point  "
          f"(timed on {pick.size} random points; extrapolated {cantera_per_point * n_points:.2f} s for the map)")
    print(f"speed ratio             : {cantera_per_point / ours_per_point:9.1f} x  (target 30 x)")
    print(f"largest mole-fraction difference on the subset: {diff:.2e}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
