"""Design studies built on the equilibrium core: maps, inverse questions, energy balances,
staged beds, carbon, uncertainty propagation.

Imports :mod:`eqdesign.solve.core` and :mod:`eqdesign.thermo` only; no files, YAML, HTML or plots.
"""
