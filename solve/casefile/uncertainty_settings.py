"""Reading the ``uncertainty`` block of a case file into :class:`UncertaintySettings`.
"""
from __future__ import annotations

from typing import Mapping

import numpy as np

from ...thermo.data_uncertainty import DATUM_KINDS, METHODS, NUMBER_TYPES, UncertaintyInputError, read_u
from ...thermo.units import excerpt
from ..studies.uncertainty import SETTINGS_KEYS, UncertaintySettings


def settings_from_mapping(mapping: Mapping | None, *, where: str = "uncertainty") -> UncertaintySettings:
    """Check a case file's uncertainty block and return :class:`UncertaintySettings`.

    Every problem found is reported in one :class:`UncertaintyInputError`, one line each,
    naming the key path.

    Examples
    --------
    >>> settings_from_mapping({"method": "linear", "level": "90 %"}).level
    0.9
    >>> settings_from_mapping({"samples": 5})
    Traceback (most recent call last):
    ...
    eqdesign.thermo.data_uncertainty.UncertaintyInputError: uncertainty.samples: give a whole number from 20 to 100000, got 5
    """
    mapping = {} if mapping is None else mapping
    if not isinstance(mapping, Mapping):
        raise UncertaintyInputError(f"{where}: give a mapping with keys {', '.join(SETTINGS_KEYS)}")
    problems = []
    for k in mapping:
        if k not in SETTINGS_KEYS:
            problems.append(f"{where}.{k}: unknown key; use {', '.join(SETTINGS_KEYS)}")
    method = mapping.get("method", "monte-carlo")
    if method not in METHODS:
        problems.append(f"{where}.method: {excerpt(method)} is not one of {', '.join(METHODS)}")
    samples = mapping.get("samples", 400)
    if isinstance(samples, bool) or not isinstance(samples, (int, np.integer)) or not 20 <= samples <= 100_000:
        problems.append(f"{where}.samples: give a whole number from 20 to 100000, got {excerpt(samples)}")
    seed = mapping.get("seed", 1)
    if seed is not None and (isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0):
        problems.append(f"{where}.seed: give a non-negative whole number (or null), got {excerpt(seed)}")
    level = mapping.get("level", 0.95)
    lv = None
    if isinstance(level, str) and level.strip().endswith("%"):
        try:
            lv = float(level.strip().rstrip("%").strip()) / 100.0
        except ValueError:
            lv = None
    elif isinstance(level, NUMBER_TYPES) and not isinstance(level, bool):
        lv = float(level)
    if lv is None or not 0.5 <= lv < 1.0:
        problems.append(f"{where}.level: give a coverage probability from 0.5 to below 1 (e.g. 0.95 or '95 %'), "
                        f"got {excerpt(level)}")
    overrides = mapping.get("overrides") or {}
    if not isinstance(overrides, Mapping):
        problems.append(f"{where}.overrides: give a mapping {{species: {{formation_enthalpy: ..., entropy: ...}}}}")
        overrides = {}
    else:
        for name, entry in overrides.items():
            if not isinstance(entry, Mapping):
                problems.append(f"{where}.overrides.{name}: give a mapping such as "
                                "{formation_enthalpy: '0.4 kJ/mol', entropy: '0.1 J/(mol K)'}")
                continue
            for k, v in entry.items():
                if k not in DATUM_KINDS:
                    problems.append(f"{where}.overrides.{name}.{k}: unknown datum; use {', '.join(DATUM_KINDS)}")
                    continue
                try:
                    read_u(v, k, f"{where}.overrides.{name}.{k}")
                except UncertaintyInputError as exc:
                    problems.append(str(exc))
    defaults = mapping.get("defaults")
    if defaults is not None and not isinstance(defaults, str):
        problems.append(f"{where}.defaults: give the path of a defaults file as text")
    if problems:
        raise UncertaintyInputError("\n".join(problems))
    return UncertaintySettings(method=method, samples=int(samples), seed=None if seed is None else int(seed),
                               level=float(lv), overrides=dict(overrides), defaults_file=defaults)
