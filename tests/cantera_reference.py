"""Reference-library models for the tests: cantera phases built from our own data."""
from __future__ import annotations

import yaml


def cantera_phase(names, database, reference_pressure=1e5, reactions=()):
    """A cantera ideal-gas (plus pure condensed phases) model holding exactly our
    NASA 7-coefficient data for ``names`` on the given standard-state pressure.

    Returns a cantera ``Solution`` for the gas species and a list of ``Solution``
    objects for the condensed ones.
    """
    import cantera as ct

    def entry(name):
        sp = database[name]
        m = sp.model
        return {"name": name, "composition": {k: float(v) for k, v in sp.elements.items()},
                "thermo": {"model": "NASA7", "temperature-ranges": list(m.T_bounds),
                           "data": m.coefficients.tolist(), "reference-pressure": reference_pressure}}

    gas_names = [n for n in names if database[n].is_gas]
    cond_names = [n for n in names if not database[n].is_gas]
    phases = [{"name": "gas", "thermo": "ideal-gas", "species": gas_names,
               "state": {"T": 300.0, "P": 1e5}}]
    if reactions:
        phases[0]["kinetics"] = "bulk"
        phases[0]["reactions"] = "all"
    for n in cond_names:
        phases.append({"name": n, "thermo": "fixed-stoichiometry", "species": [n]})
    species = [entry(n) for n in names]
    for n, s in zip(names, species):
        if not database[n].is_gas:
            s["equation-of-state"] = {"model": "constant-volume", "molar-volume": 1e-6}
    doc = {"phases": phases, "species": species}
    if reactions:
        doc["reactions"] = [{"equation": r, "rate-constant": {"A": 1.0, "b": 0.0, "Ea": 0.0}}
                            for r in reactions]
    text = yaml.safe_dump(doc, sort_keys=False)
    gas = ct.Solution(yaml=text, name="gas")
    condensed = [ct.Solution(yaml=text, name=n) for n in cond_names]
    return gas, condensed
