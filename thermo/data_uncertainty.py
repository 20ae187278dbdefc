"""Standard uncertainties of the thermodynamic data: records, class defaults and lookup.

Where the uncertainties come from (first that applies, per datum): the user's overrides;
the species file's ``uncertainty:`` block; the key values and class defaults of
``eqdesign/data/uncertainty_defaults.yaml`` (uncertainties in the GUM sense: JCGM 100:2008).
"""
from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Mapping

import numpy as np

from .database import SpeciesDatabase, UnknownSpeciesError
from .reactions import bundled_database
from .species import Species
from .units import UnitError, to_si


SCHEMA = "eqdesign.uncertainty-defaults/1"
METHODS = ("monte-carlo", "linear")

#: The data kinds that carry an uncertainty, their symbols and SI units.
FORMATION_ENTHALPY = "formation_enthalpy"
ENTROPY = "entropy"
REACTION_ENTHALPY = "reaction_enthalpy"
REACTION_ENTROPY = "reaction_entropy"
DATUM_KINDS = (FORMATION_ENTHALPY, ENTROPY, REACTION_ENTHALPY, REACTION_ENTROPY)
SYMBOLS = {FORMATION_ENTHALPY: "ΔfH°", ENTROPY: "S°", REACTION_ENTHALPY: "ΔrH°", REACTION_ENTROPY: "ΔrS°"}
UNITS = {FORMATION_ENTHALPY: "J/mol", ENTROPY: "J/(mol K)", REACTION_ENTHALPY: "J/mol",
         REACTION_ENTROPY: "J/(mol K)"}
_UNIT_KIND = {FORMATION_ENTHALPY: "molar_energy", ENTROPY: "molar_entropy",
              REACTION_ENTHALPY: "molar_energy", REACTION_ENTROPY: "molar_entropy"}
_ENTROPY_KINDS = (ENTROPY, REACTION_ENTROPY)

NUMBER_TYPES = (int, float, np.integer, np.floating)


class UncertaintyInputError(ValueError):
    """Uncertainty data, overrides or settings cannot be used; the message says which and how to fix it."""


# =========================================================================== data records
@dataclass(frozen=True)
class UncertainDatum:
    """One uncertain thermodynamic datum of one species.

    Attributes
    ----------
    species : str
        Species whose record carries the datum.
    kind : str
        ``"formation_enthalpy"`` (ΔfH° at 298.15 K), ``"entropy"`` (S° at 298.15 K), or, for a
        species defined by reaction-level data, ``"reaction_enthalpy"`` (ΔrH°) and
        ``"reaction_entropy"`` (ΔrS°).
    u : float
        Standard uncertainty [J/mol] (enthalpies) or [J/(mol K)] (entropies).
    origin : str
        Where the value came from (``"user"``, ``"species file"``, ``"key value CODATA1989"``,
        ``"class: ..."``).
    """

    species: str
    kind: str
    u: float
    origin: str

    @property
    def is_entropy(self) -> bool:
        return self.kind in _ENTROPY_KINDS

    @property
    def unit(self) -> str:
        """SI unit of ``u``."""
        return UNITS[self.kind]

    @property
    def label(self) -> str:
        """``"ΔfH°(NH3)"``, ``"S°(NH3)"``, ``"ΔrH°(X)"``."""
        return f"{SYMBOLS[self.kind]}({self.species})"


def _is_reaction_derived(sp: Species) -> bool:
    m = sp.model
    return hasattr(m, "level_data") and hasattr(m, "partners") and hasattr(m, "nu")


def kinds_of(sp: Species) -> tuple[str, str]:
    return (REACTION_ENTHALPY, REACTION_ENTROPY) if _is_reaction_derived(sp) else (FORMATION_ENTHALPY, ENTROPY)


def _heavy_atoms(sp: Species) -> float:
    return float(sum(n for el, n in sp.elements.items() if el != "H"))


#: Atomic numbers of the elements eqdesign knows (for the odd-electron test).
_ATOMIC_NUMBER = {
    "H": 1, "He": 2, "Li": 3, "Be": 4, "B": 5, "C": 6, "N": 7, "O": 8, "F": 9, "Ne": 10, "Na": 11,
    "Mg": 12, "Al": 13, "Si": 14, "P": 15, "S": 16, "Cl": 17, "Ar": 18, "K": 19, "Ca": 20, "Ti": 22,
    "V": 23, "Cr": 24, "Mn": 25, "Fe": 26, "Co": 27, "Ni": 28, "Cu": 29, "Zn": 30, "Br": 35, "Kr": 36,
    "Mo": 42, "I": 53, "Xe": 54, "Pt": 78, "Pb": 82,
    "D": 1, "Sr": 38, "Zr": 40, "Nb": 41, "Cs": 55, "Ba": 56, "Ta": 73, "Hg": 80,
}


def _odd_electrons(sp: Species) -> bool:
    try:
        total = sum(_ATOMIC_NUMBER[el] * n for el, n in sp.elements.items())
    except KeyError:
        return False
    return float(total) % 2 == 1


def _element_reference_state(sp: Species) -> bool:
    if len(sp.elements) != 1 or _is_reaction_derived(sp):
        return False
    try:
        h = float(sp.model.enthalpy(298.15))
    except Exception:   # a model that cannot be evaluated at 298.15 K
        return False
    return abs(h) < 1.0


_WHEN_KEYS = ("phase", "element_reference_state", "odd_electrons", "heavy_atoms_max", "heavy_atoms_min", "model")


def _class_matches(when: Mapping, sp: Species) -> bool:
    for k, v in when.items():
        if k == "phase":
            ok = sp.phase == v or (v == "condensed" and not sp.is_gas)
        elif k == "element_reference_state":
            ok = _element_reference_state(sp) == bool(v)
        elif k == "odd_electrons":
            ok = sp.is_gas and _odd_electrons(sp) == bool(v)
        elif k == "heavy_atoms_max":
            ok = _heavy_atoms(sp) <= float(v)
        elif k == "heavy_atoms_min":
            ok = _heavy_atoms(sp) >= float(v)
        elif k == "model":
            ok = (v == "reaction-derived") == _is_reaction_derived(sp)
        else:
            ok = False
        if not ok:
            return False
    return True


def read_u(value, kind: str, where: str) -> float:
    """A standard uncertainty in SI from a number (SI) or a string with units."""
    if isinstance(value, bool) or not isinstance(value, (*NUMBER_TYPES, str)):
        raise UncertaintyInputError(f"{where}: expected a number [{UNITS[kind]}] or a quantity such as "
                                    f"{'0.4 kJ/mol' if kind not in _ENTROPY_KINDS else '0.1 J/(mol K)'}, "
                                    f"got {value!r}")
    try:
        u = float(to_si(value, _UNIT_KIND[kind]))
    except UnitError as exc:
        raise UncertaintyInputError(f"{where}: {exc}") from None
    if not math.isfinite(u) or u < 0:
        raise UncertaintyInputError(f"{where}: a standard uncertainty must be finite and non-negative, got {value!r}")
    return u


@dataclass(frozen=True)
class UncertaintyDefaults:
    """Default standard uncertainties: key values for named bundled species and class rules.

    Read from a file of the layout of ``eqdesign/data/uncertainty_defaults.yaml`` (which
    documents every number and its source).

    Examples
    --------
    >>> d = UncertaintyDefaults.bundled()
    >>> db = bundled_database()
    >>> d.lookup(db["NH3"])[FORMATION_ENTHALPY]          # CODATA key value (from memory)
    (350.0, 'key value CODATA1989')
    >>> d.lookup(db["C3H8"])[FORMATION_ENTHALPY][1]
    'class: small gas molecule (1-3 non-hydrogen atoms)'
    """

    key_values: Mapping[str, Mapping]
    classes: tuple
    references: Mapping[str, Mapping] = field(default_factory=dict)
    origin: str = ""

    @classmethod
    def bundled(cls) -> "UncertaintyDefaults":
        """The defaults shipped with eqdesign (``eqdesign/data/uncertainty_defaults.yaml``)."""
        text = resources.files("eqdesign.data").joinpath("uncertainty_defaults.yaml").read_text(encoding="utf-8")
        return cls.from_text(text, origin="eqdesign/data/uncertainty_defaults.yaml")

    @classmethod
    def from_file(cls, path: str | Path) -> "UncertaintyDefaults":
        """Read a defaults file of the bundled layout."""
        path = Path(path)
        try:
            text = path.read_text(encoding="utf-8")
        except OSError as exc:
            raise UncertaintyInputError(f"{path}: cannot read uncertainty defaults ({exc.strerror})") from None
        return cls.from_text(text, origin=str(path))

    @classmethod
    def from_text(cls, text: str, origin: str = "<text>") -> "UncertaintyDefaults":
        import yaml      # on first use: importing eqdesign never loads the YAML reader
        try:
            doc = yaml.safe_load(text)
        except yaml.YAMLError as exc:
            raise UncertaintyInputError(f"{origin}: not valid YAML ({exc})") from None
        if not isinstance(doc, Mapping) or doc.get("schema") != SCHEMA:
            raise UncertaintyInputError(f"{origin}: expected a mapping with 'schema: {SCHEMA}'")
        keys = {}
        for name, entry in (doc.get("key_values") or {}).items():
            where = f"{origin}: key_values.{name}"
            if not isinstance(entry, Mapping):
                raise UncertaintyInputError(f"{where}: expected a mapping of uncertainties")
            keys[str(name)] = {k: read_u(entry[k], k, f"{where}.{k}") for k in DATUM_KINDS if k in entry}
            keys[str(name)]["reference"] = str(entry.get("reference", ""))
        classes = []
        for i, entry in enumerate(doc.get("classes") or []):
            where = f"{origin}: classes[{i}]"
            if not isinstance(entry, Mapping) or not isinstance(entry.get("when"), Mapping):
                raise UncertaintyInputError(f"{where}: give 'class', 'when' (a mapping) and the uncertainties")
            unknown = [k for k in entry["when"] if k not in _WHEN_KEYS]
            if unknown:
                raise UncertaintyInputError(f"{where}.when: unknown key(s) {unknown}; use {', '.join(_WHEN_KEYS)}")
            values = {k: read_u(entry[k], k, f"{where}.{k}") for k in DATUM_KINDS if k in entry}
            classes.append({"class": str(entry.get("class", f"class {i}")), "when": dict(entry["when"]),
                            "values": values, "basis": str(entry.get("basis", "")).strip()})
        return cls(key_values=keys, classes=tuple(classes), references=dict(doc.get("references") or {}),
                   origin=origin)

    def classify(self, sp: Species) -> dict | None:
        """The first class whose ``when`` matches the species (None if none does)."""
        for c in self.classes:
            if _class_matches(c["when"], sp):
                return c
        return None

    def lookup(self, sp: Species) -> dict:
        """Datum kind -> (standard uncertainty [SI], origin) from the key values (bundled
        records only) and the classes; kinds not covered are absent."""
        out = {}
        kinds = kinds_of(sp)
        key = self.key_values.get(sp.name)
        if key is not None and _is_bundled_record(sp):
            for k in kinds:
                if k in key:
                    out[k] = (key[k], f"key value {key['reference']}".strip())
        c = self.classify(sp)
        if c is not None:
            for k in kinds:
                if k not in out and k in c["values"]:
                    out[k] = (c["values"][k], f"class: {c['class']}")
        return out


def _is_bundled_record(sp: Species) -> bool:
    ref = bundled_database().species.get(sp.name)
    if ref is None:
        return False
    return ref is sp or (ref.reference == sp.reference and ref.data_note == sp.data_note and ref.phase == sp.phase
                         and type(ref.model) is type(sp.model))


def normalise_overrides(overrides: Mapping | None, db: SpeciesDatabase) -> dict:
    """{species name: {kind: u [SI]}} from the user's mapping (strings with units allowed)."""
    out: dict[str, dict] = {}
    if not overrides:
        return out
    if not isinstance(overrides, Mapping):
        raise UncertaintyInputError("overrides: give a mapping {species: {formation_enthalpy: ..., entropy: ...}}")
    for name, entry in overrides.items():
        where = f"overrides.{name}"
        try:
            resolved = db.resolve(str(name))
        except UnknownSpeciesError as exc:
            raise UncertaintyInputError(f"{where}: {exc}") from None
        if not isinstance(entry, Mapping):
            raise UncertaintyInputError(f"{where}: give a mapping such as "
                                        "{formation_enthalpy: '0.4 kJ/mol', entropy: '0.1 J/(mol K)'}")
        kinds = kinds_of(db.species[resolved])
        vals = {}
        for k, v in entry.items():
            if k not in kinds:
                raise UncertaintyInputError(
                    f"{where}.{k}: {resolved} takes {' and '.join(kinds)}"
                    + (" (it is defined by reaction-level data)" if kinds[0] == REACTION_ENTHALPY else ""))
            vals[k] = read_u(v, k, f"{where}.{k}")
        out.setdefault(resolved, {}).update(vals)
    return out


def species_uncertainty(sp: Species, *, overrides: Mapping | None = None,
                        defaults: UncertaintyDefaults | None = None) -> dict:
    """Standard uncertainties of one species' data, and where each came from.

    Parameters
    ----------
    sp : Species
    overrides : mapping, optional
        ``{kind: u}`` for this species (numbers in SI, or strings with units).
    defaults : UncertaintyDefaults, optional
        Defaults to :meth:`UncertaintyDefaults.bundled`.

    Returns
    -------
    dict
        kind -> :class:`UncertainDatum`, for ``formation_enthalpy`` and ``entropy`` (or
        ``reaction_enthalpy`` and ``reaction_entropy`` for a reaction-derived species).

    Examples
    --------
    >>> db = bundled_database()
    >>> u = species_uncertainty(db["NH3"], overrides={"entropy": "0.2 J/(mol K)"})
    >>> u["formation_enthalpy"].u, u["entropy"].u, u["entropy"].origin
    (350.0, 0.2, 'user')
    """
    defaults = defaults or bundled_defaults()
    out = {}
    from_file = sp.uncertainty or {}
    unknown = [k for k in from_file if k not in DATUM_KINDS + ("reference", "note")]
    if unknown:
        raise UncertaintyInputError(f"species {sp.name}: unknown key(s) {unknown} in its 'uncertainty:' block; "
                                    f"use {', '.join(kinds_of(sp))} (and optionally reference, note)")
    found = defaults.lookup(sp)
    for k in kinds_of(sp):
        if overrides and k in overrides:
            out[k] = UncertainDatum(sp.name, k, read_u(overrides[k], k, f"overrides.{sp.name}.{k}"), "user")
        elif k in from_file:
            out[k] = UncertainDatum(sp.name, k, read_u(from_file[k], k, f"species {sp.name}: uncertainty.{k}"),
                                    "species file" + (f" ({from_file['reference']})" if from_file.get("reference")
                                                      else ""))
        elif k in found:
            out[k] = UncertainDatum(sp.name, k, float(found[k][0]), found[k][1])
        else:
            raise UncertaintyInputError(
                f"species {sp.name}: no standard uncertainty for {k} (no override, no 'uncertainty:' block in its "
                f"species file, and no class in the defaults file matches); give one in the overrides")
    return out


@functools.lru_cache(maxsize=1)
def bundled_defaults() -> UncertaintyDefaults:
    """The bundled defaults, read once per process (the object is immutable)."""
    return UncertaintyDefaults.bundled()
