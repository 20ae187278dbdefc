"""The species database: an explicit object loaded from YAML files of our own layout.

The bundled file ``eqdesign/data/species.yaml`` (see ``data/README.md`` for its layout) is
read with :mod:`importlib.resources`.  Every set of numbers points at a reference with a
full citation and, for thermodynamic data, the standard-state pressure of its source; data
on a 1 atm standard state are converted to the 1 bar standard state used throughout
eqdesign (for an ideal gas ``s°(1 bar) = s°(1 atm) + R ln(1.01325)``, which shifts K by
``1.01325^Δn``).
"""
from __future__ import annotations

import difflib
import json
import math
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Iterable, Mapping


from .elements import molar_mass as molar_mass_of, parse_formula
from .models import P_STANDARD, FormationDataModel, Nasa7Polynomial
from .species import GAS, CONDENSED_PHASES, CriticalConstants, Species
from .units import UnitError, to_pascal


class DatabaseError(ValueError):
    """A species file is malformed; the message names the file, the key and the fix."""


class UnknownSpeciesError(KeyError):
    """A species name is not in the database; the message suggests close names."""

    def __str__(self):  # KeyError quotes its argument; we want plain text
        return str(self.args[0])


class AmbiguousSpeciesError(UnknownSpeciesError):
    """A name fits more than one species (``C``: graphite or carbon gas); the message lists
    the unambiguous names to write instead."""


@dataclass(frozen=True)
class SpeciesDatabase:
    """A read-only collection of :class:`Species`, looked up by name or alias.

    Examples
    --------
    >>> db = SpeciesDatabase.bundled()
    >>> db["ammonia"].name
    'NH3'
    >>> round(float(db["NH3"].enthalpy(298.15)) / 1000, 2)   # CODATA key value: -45.94 kJ/mol
    -45.94
    """

    species: Mapping[str, Species]
    references: Mapping[str, dict] = field(default_factory=dict)
    aliases: Mapping[str, str] = field(default_factory=dict)
    origin: str = ""
    ambiguous: Mapping[str, tuple] = field(default_factory=dict)
    folded: Mapping[str, tuple] = field(default_factory=dict)

    # ----------------------------------------------------------------- loading
    @classmethod
    def bundled(cls) -> "SpeciesDatabase":
        """The database shipped with eqdesign (``eqdesign/data/species.yaml``).

        Read from ``species.json``, the compact form that ``data/build_species.py`` writes
        beside the YAML with the same content (the YAML takes about 1 s to parse).
        """
        text = resources.files("eqdesign.data").joinpath("species.json").read_text(encoding="utf-8")
        return cls.from_document(json.loads(text), origin="eqdesign/data/species.yaml")

    @classmethod
    def from_file(cls, path: str | Path) -> "SpeciesDatabase":
        """Load a species file of the eqdesign layout."""
        path = Path(path)
        try:
            text = path.read_text(encoding="utf-8")
        except OSError as exc:
            raise DatabaseError(f"{path}: cannot read species file ({exc.strerror})") from None
        return cls.from_text(text, origin=str(path))

    @classmethod
    def from_text(cls, text: str, origin: str = "<text>") -> "SpeciesDatabase":
        import yaml      # on first use: importing eqdesign never loads the YAML reader
        try:
            doc = yaml.load(text, Loader=getattr(yaml, "CSafeLoader", yaml.SafeLoader))
        except yaml.YAMLError as exc:
            raise DatabaseError(f"{origin}: not valid YAML ({exc})") from None
        return cls.from_document(doc, origin)

    @classmethod
    def from_document(cls, doc, origin: str = "<document>") -> "SpeciesDatabase":
        """Build from a parsed species file (a mapping with ``references`` and ``species``)."""
        if not isinstance(doc, dict) or "species" not in doc:
            raise DatabaseError(f"{origin}: expected a mapping with a 'species' key")
        references = doc.get("references") or {}
        species = {}
        for name, entry in (doc["species"] or {}).items():
            species[str(name)] = species_from_mapping(str(name), entry, references, origin)
        return cls._assemble(species, references, origin)

    @classmethod
    def _assemble(cls, species: dict, references: Mapping, origin: str) -> "SpeciesDatabase":
        aliases: dict[str, str] = {}
        for sp in species.values():
            for alias in sp.aliases:
                aliases.setdefault(alias.lower(), sp.name)
            if sp.common_name:
                aliases.setdefault(sp.common_name.lower(), sp.name)
        folded: dict[str, tuple] = {}
        by_formula: dict[str, list] = {}
        for sp in species.values():
            folded[sp.name.lower()] = folded.get(sp.name.lower(), ()) + (sp.name,)
            by_formula.setdefault(sp.formula, []).append(sp.name)
        return cls(species=dict(species), references=dict(references), aliases=aliases, origin=origin,
                   ambiguous=ambiguous_names(species, by_formula), folded=folded)

    def extended(self, extra: Iterable[Species]) -> "SpeciesDatabase":
        """A new database with ``extra`` species added (they replace same-named entries)."""
        species = dict(self.species)
        for sp in extra:
            species[sp.name] = sp
        return self._assemble(species, self.references, self.origin)

    # ----------------------------------------------------------------- lookup
    def resolve(self, name: str) -> str:
        """The database name for ``name`` (a name or an alias, case-insensitive for aliases).

        A bare element symbol that is both a gas atom and a condensed phase (``C``, ``S``,
        ``Fe``) is refused with :class:`AmbiguousSpeciesError` listing the names to write;
        so is a case-insensitive match that fits two names (``cs2``: CS2 or Cs2).
        """
        if name in self.species:
            return name
        key = name.strip().lower()
        if key in self.aliases:
            return self.aliases[key]
        if name.strip() in self.ambiguous:
            choices = [self.species[n] for n in self.ambiguous[name.strip()]]
            raise AmbiguousSpeciesError(f"{name.strip()!r} is ambiguous: write "
                                        + " or ".join(_choice(sp) for sp in choices))
        candidates = self.folded.get(key, ())
        if len(candidates) == 1:
            return candidates[0]
        if candidates:
            labels = [f"{n} ({self.species[n].common_name or self.species[n].phase})" for n in candidates]
            raise AmbiguousSpeciesError(f"{name!r} fits " + " and ".join(labels) + "; write the name with its "
                                        "capitals")
        raise UnknownSpeciesError(f"unknown species {name!r}{self._suggest(name)}")

    def names_matching(self, element=None, phase: str | None = None) -> list[str]:
        """Names of the species that contain every element in ``element`` (a symbol or a list
        of symbols) and are in ``phase`` (``"gas"``, ``"solid"``, ``"liquid"`` or
        ``"condensed"``), in file order.

        >>> SpeciesDatabase.bundled().names_matching(element=["Fe", "O"], phase="solid")[:3]
        ['FeO(s)', 'Fe2O3(s)', 'Fe3O4(s)']
        """
        elements = [element] if isinstance(element, str) else list(element or [])
        phases = {"condensed": CONDENSED_PHASES, None: (GAS,) + CONDENSED_PHASES}.get(phase, (phase,))
        if not set(phases) <= set((GAS,) + CONDENSED_PHASES):
            raise ValueError(f"phase {phase!r}: use gas, solid, liquid or condensed")
        return [sp.name for sp in self.species.values()
                if sp.phase in phases and all(el in sp.elements for el in elements)]

    def _suggest(self, name: str) -> str:
        pool = list(self.species) + list(self.aliases)
        close = difflib.get_close_matches(name, pool, n=3, cutoff=0.6)
        if not close:
            close = difflib.get_close_matches(name.lower(), [p.lower() for p in pool], n=3, cutoff=0.6)
        try:      # names made of the same elements first (NH4 -> NH3 before N2H4)
            wanted = set(parse_formula(name))
        except ValueError:
            wanted = set()
        same = difflib.get_close_matches(name, [n for n, sp in self.species.items()
                                                if wanted and set(sp.elements) == wanted], n=3, cutoff=0.5)
        close = (same + [c for c in close if c not in same])[:3]
        if not close:
            return " (see `eqdesign species --list` for the names available)"
        resolved = []
        for c in close:
            target = self.aliases.get(c.lower(), c)
            label = c if target == c else f"{c} ({target})"
            if label not in resolved:
                resolved.append(label)
        return "; did you mean " + " or ".join(repr(r) for r in resolved) + "?"

    def __getitem__(self, name: str) -> Species:
        return self.species[self.resolve(name)]

    def __contains__(self, name: str) -> bool:
        try:
            self.resolve(name)
        except UnknownSpeciesError:
            return False
        return True

    def __iter__(self):
        return iter(self.species.values())

    def __len__(self):
        return len(self.species)

    @property
    def names(self) -> list[str]:
        return list(self.species)

    def citation(self, key: str) -> str:
        ref = self.references.get(key, {})
        return ref.get("cite", key) if isinstance(ref, dict) else str(ref)


def ambiguous_names(species: Mapping[str, Species], by_formula: Mapping[str, list]) -> dict[str, tuple]:
    """Bare names that must not be guessed: for a gas named ``X(g)`` whose formula ``X`` is
    not itself a species name (gas atoms of elements with a condensed form, such as
    ``C(g)`` beside ``C(gr)``), ``X`` -> every species of formula ``X``, condensed first."""
    out = {}
    for sp in species.values():
        if sp.is_gas and sp.name == f"{sp.formula}(g)" and sp.formula not in species:
            names = by_formula.get(sp.formula, [])
            out[sp.formula] = tuple(sorted(names, key=lambda n: species[n].is_gas))
    return out


def _choice(sp: Species) -> str:
    if sp.common_name:
        return f"{sp.name} for {sp.common_name}"
    return f"{sp.name} for the {sp.phase} ({sp.T_min:g}-{sp.T_max:g} K)"


def _need(entry: Mapping, key: str, where: str, fix: str):
    if key not in entry:
        raise DatabaseError(f"{where}: missing key '{key}'; {fix}")
    return entry[key]


def species_from_mapping(name: str, entry: Mapping, references: Mapping, origin: str) -> Species:
    """Build a :class:`Species` from one entry of a species file (see ``data/README.md``)."""
    where = f"{origin}: species.{name}"
    if not isinstance(entry, Mapping):
        raise DatabaseError(f"{where}: expected a mapping of species data")
    formula = str(entry.get("formula", name))
    phase = str(entry.get("phase", GAS))
    if phase not in (GAS,) + CONDENSED_PHASES:
        raise DatabaseError(f"{where}.phase: {phase!r} is not one of gas, solid, liquid")
    if "elements" in entry:
        elements = {str(k): float(v) for k, v in dict(entry["elements"]).items()}
    else:
        try:
            elements = {k: float(v) for k, v in parse_formula(formula).items()}
        except ValueError as exc:
            raise DatabaseError(f"{where}.formula: {exc}; give 'elements' explicitly") from None
    mass = entry.get("molar_mass")
    if mass is None:
        try:
            mass = molar_mass_of(elements)
        except ValueError as exc:
            raise DatabaseError(f"{where}.elements: {exc}") from None
    thermo = _need(entry, "thermo", where, "add a 'thermo' block (model nasa7 or formation-data)")
    model = _model_from_mapping(thermo, f"{where}.thermo")
    ref_key = str(thermo.get("reference", ""))
    ref = references.get(ref_key, {}) if ref_key else {}
    p_source = standard_pressure_of(thermo, ref if isinstance(ref, Mapping) else {}, where, ref_key)
    if phase == GAS and abs(p_source - P_STANDARD) > 1e-6:
        # ideal-gas entropy at the eqdesign standard pressure (1 bar)
        model = model.shifted_entropy(math.log(p_source / P_STANDARD))
    critical = None
    crit = entry.get("critical")
    if crit:
        try:
            critical = CriticalConstants(float(crit["Tc"]), float(crit["Pc"]), float(crit["omega"]),
                                         str(crit.get("reference", "")))
        except KeyError as exc:
            raise DatabaseError(f"{where}.critical: missing key {exc}; give Tc [K], Pc [Pa] and omega") from None
    cite = ref.get("cite", ref_key) if isinstance(ref, Mapping) else str(ref)
    return Species(
        name=name, formula=formula, elements=elements, phase=phase, molar_mass=float(mass),
        model=model, critical=critical, reference=cite,
        common_name=str(entry.get("common_name", "")),
        aliases=tuple(str(a) for a in entry.get("aliases", ()) or ()),
        data_note=str(thermo.get("data_note", "")),
        uncertainty=dict(entry["uncertainty"]) if entry.get("uncertainty") else None,
    )


STANDARD_PRESSURES = {P_STANDARD: "1 bar", 101325.0: "1 atm"}
PRESSURE_KEYS = ("standard_pressure", "standard_pressure_Pa")


def standard_pressure_of(thermo: Mapping, reference: Mapping, where: str, ref_key: str) -> float:
    """The standard pressure [Pa] of a species' source data: 1e5 (1 bar) or 101325 (1 atm).

    Read from the thermo block, else from its reference (key ``standard_pressure``, a
    quantity such as ``"1 atm"`` or a number in Pa, or ``standard_pressure_Pa``).  It is
    required: data from a 1 atm table read as 1 bar would shift K by 1.01325^Δn (2.6 % for
    ammonia synthesis), so there is no default.
    """
    for block, label in ((thermo, f"{where}.thermo"), (reference, f"references.{ref_key}")):
        for key in PRESSURE_KEYS:
            if key not in block:
                continue
            value = block[key]
            try:
                pressure = float(to_pascal(value))
            except (UnitError, TypeError, ValueError) as exc:
                raise DatabaseError(f"{label}.{key}: {value!r} is not a pressure ({exc}); write "
                                    "standard_pressure: 1 bar or standard_pressure: 1 atm") from None
            for known in STANDARD_PRESSURES:
                if abs(pressure - known) <= 1e-6 * known:
                    return known
            raise DatabaseError(f"{label}.{key}: {value!r} is neither 1 bar nor 1 atm; give the standard "
                                "pressure of the source table, standard_pressure: 1 bar or 1 atm")
    place = f" or to references.{ref_key}" if ref_key else ""
    raise DatabaseError(f"{where}.thermo: missing key 'standard_pressure'; add standard_pressure: 1 bar "
                        f"(NIST-JANAF since 1982, NASA TM-4513) or standard_pressure: 1 atm (older tables) "
                        f"to the thermo block{place}")


def _model_from_mapping(thermo: Mapping, where: str):
    kind = str(_need(thermo, "model", where, "set model: nasa7 or model: formation-data"))
    try:
        if kind == "nasa7":
            return Nasa7Polynomial(tuple(_need(thermo, "T_bounds", where, "give the range bounds in K")),
                                   _need(thermo, "coefficients", where, "give 7 coefficients per range"))
        if kind == "formation-data":
            cp = thermo.get("cp", [0.0])
            cp = (cp,) if isinstance(cp, (int, float)) else tuple(cp)
            return FormationDataModel(
                float(_need(thermo, "formation_enthalpy", where, "give ΔfH°(298.15 K) in J/mol")),
                float(_need(thermo, "entropy", where, "give S°(298.15 K) in J/(mol K)")),
                cp, tuple(thermo.get("T_bounds", (298.15, 1500.0))))
    except (TypeError, ValueError) as exc:
        raise DatabaseError(f"{where}: {exc}") from None
    raise DatabaseError(f"{where}.model: unknown model {kind!r}; use nasa7 or formation-data")
