"""From the uncertainty of thermodynamic data to a design margin.

The standard enthalpy of formation ΔfH° and the standard entropy S° of every species are
known only to within a standard uncertainty u (one standard deviation, as in the GUM:
JCGM 100:2008, *Evaluation of measurement data - Guide to the expression of uncertainty
in measurement*, BIPM, 2008).  An error δΔfH°, δS° moves the species' standard Gibbs
energy at every temperature by ``δg°(T) = δΔfH° − T δS°`` (cp taken as exact), hence
K(T), the equilibrium composition, the conversion and the answers of the inverse
questions ("the temperature for 20 % conversion").  This module carries the data
uncertainty through to those answers in two ways:

* **Monte Carlo** (JCGM 101:2008, *Propagation of distributions using a Monte Carlo
  method*, BIPM, 2008): the data are drawn ``samples`` times from independent normal
  distributions (``numpy.random.default_rng(seed)``, reproducible) and every draw at
  every state is solved in one batched call of :func:`eqdesign.solve.equilibrium` with
  ``g0_shift``; intervals are percentiles of the results.  Inverse questions are solved
  for every draw together by a bracketed, vectorised Illinois regula falsi
  (M. Dowell, P. Jarratt, BIT 11 (1971) 168-174).
* **Linearised** (the GUM law of propagation of uncertainty): sensitivity coefficients
  from central finite differences in each species' g° (one batched call), with
  ``∂Y/∂ΔfH°_i = ∂Y/∂g°_i`` and ``∂Y/∂S°_i = −T ∂Y/∂g°_i``; for an inverse question the
  implicit-function rule ``dT/dθ = −(∂X/∂θ)/(∂X/∂T)``.  ``u(Y)² = Σ_k (c_k u_k)²``.

The variance shares ``(c_k u_k)² / u(Y)²`` rank the data by how much they move the
answer: check the top entries before committing a design.

Where the uncertainties come from (first that applies, per datum): the user's
``overrides``; the species file's ``uncertainty:`` block; the key values and class
defaults of ``eqdesign/data/uncertainty_defaults.yaml``.  Species defined by
reaction-level data (ΔrH°, ΔrS°) carry u(ΔrH°), u(ΔrS°), and the data of their partner
species enter through Hess's law.

Assumptions, stated with every result: the data of different species are independent;
ΔfH° and S° of a species are independent; errors are normal; cp data are exact.  Only the
thermodynamic data are uncertain here: the answers remain equilibrium limits, and a real
reactor reaches less.  Equipment that runs near these answers handles flammable and toxic
gases at high pressure: its design must follow the applicable local codes and licensed
engineering practice.
"""
from __future__ import annotations

import functools
import html
import math
import statistics
import warnings
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import Mapping, Sequence

import numpy as np
import yaml

from ..thermo.database import SpeciesDatabase, UnknownSpeciesError
from ..thermo.models import R
from ..thermo.reactions import Reaction, ReactionLevelData, bundled_database
from ..thermo.species import Species
from ..thermo.units import UnitError, to_kelvin, to_pascal, to_si
from .equilibrium import EquilibriumInputError, equilibrium

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

#: Largest number of states handed to one call of :func:`equilibrium` (memory bound);
#: below it, every propagation is a single batched call.
MAX_STATES_PER_CALL = 200_000

#: Finite-difference step in g°/RT for the sensitivity coefficients [-].
G_STEP = 1e-3
#: Finite-difference step in temperature for ∂X/∂T [K].
T_STEP = 0.02
#: Root tolerances of the inverse questions: bracket width [K] and |X − target| [-].
ROOT_XTOL = 1e-7
ROOT_FTOL = 1e-11

#: Statement of the assumptions, shown wherever results are.
ASSUMPTIONS = ("data of different species treated as independent (no correlation); ΔfH° and S° of a "
               "species independent of each other; normal distributions; heat-capacity data taken as "
               "exact, so δg°(T) = δΔfH° − T δS°")

CAUTION = ("These intervals cover the uncertainty of the thermodynamic data only. They do not cover "
           "kinetics, catalyst activity, heat-transfer limits, measurement and control error, or the "
           "choice of the equilibrium model, and a real reactor stops short of equilibrium. The "
           "reactors in question often handle flammable or toxic gases at high pressure and "
           "temperature: the design must follow the applicable local codes and licensed engineering "
           "practice.")

_NUMBER = (int, float, np.integer, np.floating)


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


def _kinds_of(sp: Species) -> tuple[str, str]:
    return (REACTION_ENTHALPY, REACTION_ENTROPY) if _is_reaction_derived(sp) else (FORMATION_ENTHALPY, ENTROPY)


def _heavy_atoms(sp: Species) -> float:
    return float(sum(n for el, n in sp.elements.items() if el != "H"))


#: Atomic numbers of the elements eqdesign knows (for the odd-electron test).
_ATOMIC_NUMBER = {
    "H": 1, "He": 2, "Li": 3, "Be": 4, "B": 5, "C": 6, "N": 7, "O": 8, "F": 9, "Ne": 10, "Na": 11,
    "Mg": 12, "Al": 13, "Si": 14, "P": 15, "S": 16, "Cl": 17, "Ar": 18, "K": 19, "Ca": 20, "Ti": 22,
    "V": 23, "Cr": 24, "Mn": 25, "Fe": 26, "Co": 27, "Ni": 28, "Cu": 29, "Zn": 30, "Br": 35, "Kr": 36,
    "Mo": 42, "I": 53, "Xe": 54, "Pt": 78, "Pb": 82,
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


def _read_u(value, kind: str, where: str) -> float:
    """A standard uncertainty in SI from a number (SI) or a string with units."""
    if isinstance(value, bool) or not isinstance(value, (*_NUMBER, str)):
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
            keys[str(name)] = {k: _read_u(entry[k], k, f"{where}.{k}") for k in DATUM_KINDS if k in entry}
            keys[str(name)]["reference"] = str(entry.get("reference", ""))
        classes = []
        for i, entry in enumerate(doc.get("classes") or []):
            where = f"{origin}: classes[{i}]"
            if not isinstance(entry, Mapping) or not isinstance(entry.get("when"), Mapping):
                raise UncertaintyInputError(f"{where}: give 'class', 'when' (a mapping) and the uncertainties")
            unknown = [k for k in entry["when"] if k not in _WHEN_KEYS]
            if unknown:
                raise UncertaintyInputError(f"{where}.when: unknown key(s) {unknown}; use {', '.join(_WHEN_KEYS)}")
            values = {k: _read_u(entry[k], k, f"{where}.{k}") for k in DATUM_KINDS if k in entry}
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
        kinds = _kinds_of(sp)
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


def _normalise_overrides(overrides: Mapping | None, db: SpeciesDatabase) -> dict:
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
        kinds = _kinds_of(db.species[resolved])
        vals = {}
        for k, v in entry.items():
            if k not in kinds:
                raise UncertaintyInputError(
                    f"{where}.{k}: {resolved} takes {' and '.join(kinds)}"
                    + (" (it is defined by reaction-level data)" if kinds[0] == REACTION_ENTHALPY else ""))
            vals[k] = _read_u(v, k, f"{where}.{k}")
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
    defaults = defaults or _bundled_defaults()
    out = {}
    from_file = sp.uncertainty or {}
    unknown = [k for k in from_file if k not in DATUM_KINDS + ("reference", "note")]
    if unknown:
        raise UncertaintyInputError(f"species {sp.name}: unknown key(s) {unknown} in its 'uncertainty:' block; "
                                    f"use {', '.join(_kinds_of(sp))} (and optionally reference, note)")
    found = defaults.lookup(sp)
    for k in _kinds_of(sp):
        if overrides and k in overrides:
            out[k] = UncertainDatum(sp.name, k, _read_u(overrides[k], k, f"overrides.{sp.name}.{k}"), "user")
        elif k in from_file:
            out[k] = UncertainDatum(sp.name, k, _read_u(from_file[k], k, f"species {sp.name}: uncertainty.{k}"),
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
def _bundled_defaults() -> UncertaintyDefaults:
    """The bundled defaults, read once per process (the object is immutable)."""
    return UncertaintyDefaults.bundled()


# =========================================================================== parameter map
@dataclass(frozen=True)
class ParameterMap:
    """How the uncertain data move the standard Gibbs energies of a system's species.

    ``δg°_j(T) = Σ_k θ_k coefficients[k, j] × (1 for enthalpies, −T for entropies)``, where
    θ_k is the error of datum k.  A species defined by reaction-level data takes
    ``(δΔrH° − T δΔrS°)/ν_X − Σ_i (ν_i/ν_X) δg°_i`` (Hess's law over its partners).

    Attributes
    ----------
    species : tuple[str, ...]
        The system's species, in the column order of ``coefficients``.
    data : tuple[UncertainDatum, ...]
        The uncertain data, in the row order of ``coefficients``.
    coefficients : ndarray, shape (n_data, n_species)
    """

    species: tuple
    data: tuple
    coefficients: np.ndarray = field(repr=False)

    @property
    def u(self) -> np.ndarray:
        """Standard uncertainties, shape (n_data,) [J/mol or J/(mol K)]."""
        return np.array([d.u for d in self.data], dtype=float)

    @property
    def is_entropy(self) -> np.ndarray:
        return np.array([d.is_entropy for d in self.data], dtype=bool)

    def shift_parts(self, theta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(A, B) with ``δg° = A + T B`` [J/mol], both shape (..., n_species), for data errors
        ``theta`` of shape (..., n_data)."""
        theta = np.asarray(theta, dtype=float)
        e = self.is_entropy
        A = (theta * ~e) @ self.coefficients
        B = -(theta * e) @ self.coefficients
        return A, B

    def chain_factors(self, T) -> np.ndarray:
        """∂g°_j/∂θ_k at temperatures T [K]: shape (*shape(T), n_data, n_species)."""
        T = np.asarray(T, dtype=float)
        f = np.where(self.is_entropy, -T[..., None], 1.0)          # (..., n_data)
        return f[..., None] * self.coefficients


def parameter_map(species: Sequence[str], *, database: SpeciesDatabase | None = None,
                  overrides: Mapping | None = None, defaults: UncertaintyDefaults | None = None) -> ParameterMap:
    """The uncertain data of a system of species and how they shift each species' g°.

    Parameters
    ----------
    species : sequence of str
        The system's species (database names or aliases).
    database : SpeciesDatabase, optional
        Defaults to the bundled database.
    overrides : mapping, optional
        The user's own standard uncertainties, ``{species: {kind: u}}`` with ``kind`` one of
        ``formation_enthalpy`` [J/mol], ``entropy`` [J/(mol K)] (``reaction_enthalpy``,
        ``reaction_entropy`` for a species defined by reaction-level data); numbers in SI or
        strings with units (``"0.4 kJ/mol"``).
    defaults : UncertaintyDefaults, optional
        Defaults to :meth:`UncertaintyDefaults.bundled`.

    Returns
    -------
    ParameterMap

    Examples
    --------
    >>> pm = parameter_map(["N2", "H2", "NH3"])
    >>> [(d.label, d.u) for d in pm.data]
    [('ΔfH°(N2)', 0.0), ('S°(N2)', 0.004), ('ΔfH°(H2)', 0.0), ('S°(H2)', 0.003),
     ('ΔfH°(NH3)', 350.0), ('S°(NH3)', 0.05)]
    """
    db = database or bundled_database()
    names = []
    for n in species:
        r = db.resolve(n)
        if r not in names:
            names.append(r)
    user = _normalise_overrides(overrides, db)
    defaults = defaults or _bundled_defaults()
    order: list[tuple[str, str]] = []
    data: dict[tuple[str, str], UncertainDatum] = {}
    columns: list[dict] = []

    def expand(sp: Species, coef: float, acc: dict, depth: int = 0):
        if depth > 20:
            raise UncertaintyInputError(f"species {sp.name}: reaction-level definitions nest too deeply")
        kinds = _kinds_of(sp)
        if (sp.name, kinds[0]) not in data:
            for k, d in species_uncertainty(sp, overrides=user.get(sp.name), defaults=defaults).items():
                data[(sp.name, k)] = d
                order.append((sp.name, k))
        scale = float(sp.model.nu) if kinds[0] == REACTION_ENTHALPY else 1.0
        for k in kinds:
            acc[(sp.name, k)] = acc.get((sp.name, k), 0.0) + coef / scale
        if kinds[0] == REACTION_ENTHALPY:
            for partner, nu_i in sp.model.partners:
                expand(partner, -coef * float(nu_i) / float(sp.model.nu), acc, depth + 1)

    for n in names:
        acc: dict = {}
        expand(db.species[n], 1.0, acc)
        columns.append(acc)
    C = np.zeros((len(order), len(names)))
    for j, acc in enumerate(columns):
        for key, c in acc.items():
            C[order.index(key), j] += c
    C.setflags(write=False)
    return ParameterMap(species=tuple(names), data=tuple(data[k] for k in order), coefficients=C)


# =========================================================================== statistics helpers
def _z(level: float) -> float:
    return statistics.NormalDist().inv_cdf(0.5 + level / 2.0)


def _check_method(method: str, samples: int, level: float):
    if method not in METHODS:
        raise UncertaintyInputError(f"method {method!r}: use one of {', '.join(METHODS)}")
    if not (0.5 <= float(level) < 1.0):
        raise UncertaintyInputError(f"level {level!r}: give a coverage probability from 0.5 to below 1, e.g. 0.95")
    if method == "monte-carlo" and (int(samples) != samples or not 20 <= samples <= 100_000):
        raise UncertaintyInputError(f"samples {samples!r}: give a whole number from 20 to 100000")


_HUGE = 1e300


def _quantiles(values: np.ndarray, qs: Sequence[float]) -> np.ndarray:
    """Quantiles along axis 0 ignoring NaN (failed solves); ±inf (censored: beyond the search
    range) count as samples and give ±inf where a quantile falls among them."""
    v = np.where(np.isposinf(values), _HUGE, np.where(np.isneginf(values), -_HUGE, values))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        q = np.nanquantile(v, qs, axis=0)
    q = np.where(q > 1e290, np.inf, np.where(q < -1e290, -np.inf, q))
    return q


def _share_rows(c: np.ndarray, u: np.ndarray):
    contrib = (c * u) ** 2
    total = contrib.sum(axis=-1, keepdims=True)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = np.where(total > 0, contrib / total, 0.0)
    return contrib, share


@dataclass(frozen=True)
class RankedDatum:
    """One entry of a sensitivity ranking.

    Attributes
    ----------
    rank : int
        1 for the datum that moves the answer most.
    datum : UncertainDatum
    sensitivity : float
        Sensitivity coefficient ∂answer/∂datum [answer unit per datum unit].
    contribution : float
        |sensitivity| × u: the answer's standard uncertainty from this datum alone [answer unit].
    share : float
        Share of the answer's variance (c u)²/u(answer)² [-].
    """

    rank: int
    datum: UncertainDatum
    sensitivity: float
    contribution: float
    share: float


def _ranking(data, c: np.ndarray, u: np.ndarray, by: str) -> tuple:
    """Ranking from sensitivities c of shape (n_states, n_data) (shares averaged over states)."""
    c = np.atleast_2d(c)
    ok = np.all(np.isfinite(c), axis=1)
    if not ok.any():
        return ()
    c = c[ok]
    contrib, share = _share_rows(c, u)
    mean_share = share.mean(axis=0)
    mean_contrib = np.sqrt(contrib.mean(axis=0))
    mean_c = c.mean(axis=0)
    keep = [k for k in range(len(data)) if u[k] > 0]        # data known exactly cannot move the answer
    if by == "species":
        groups: dict[str, list[int]] = {}
        for k in keep:
            groups.setdefault(data[k].species, []).append(k)
        items = []
        for sp, ks in groups.items():
            items.append((float(mean_share[ks].sum()), sp, float(np.sqrt((contrib[:, ks].sum(axis=1)).mean()))))
        items.sort(key=lambda t: -t[0])
        return tuple((i + 1, sp, contr, sh) for i, (sh, sp, contr) in enumerate(items))
    if by != "datum":
        raise UncertaintyInputError(f"by={by!r}: use 'datum' or 'species'")
    order = sorted(keep, key=lambda k: (-mean_share[k], -abs(mean_c[k] * u[k]), k))
    return tuple(RankedDatum(i + 1, data[k], float(mean_c[k]), float(mean_contrib[k]), float(mean_share[k]))
                 for i, k in enumerate(order))


# =========================================================================== batched solving
@dataclass(frozen=True)
class _System:
    names: tuple
    feed: dict                 # name -> (p,) feed amounts per state
    gas_mask: np.ndarray
    key: str | None
    reactions: tuple
    gas_model: str
    database: SpeciesDatabase
    binary_interaction: Mapping | None

    def solve(self, T, P, state, shift=None):
        """Amounts (n, ns), converged (n,) at flat T, P (n,), feed row ``state`` (n,) and
        g° shifts ``shift`` (n, ns) [J/mol]; one equilibrium call per MAX_STATES_PER_CALL."""
        T = np.asarray(T, dtype=float).reshape(-1)
        P = np.broadcast_to(np.asarray(P, dtype=float).reshape(-1), T.shape)
        n, ns = T.size, len(self.names)
        amounts = np.full((n, ns), np.nan)
        feed_out = np.zeros((n, ns))
        conv = np.zeros(n, dtype=bool)
        for s in range(0, n, MAX_STATES_PER_CALL):
            sl = slice(s, min(n, s + MAX_STATES_PER_CALL))
            feed = {k: v[state[sl]] for k, v in self.feed.items()}
            g0_shift = None
            if shift is not None:
                g0_shift = {name: shift[sl, j] for j, name in enumerate(self.names) if np.any(shift[sl, j] != 0)}
            res = equilibrium(list(self.names), feed, T[sl], P[sl], reactions=self.reactions or None,
                              gas_model=self.gas_model, database=self.database,
                              binary_interaction=self.binary_interaction, g0_shift=g0_shift or None, warn=False)
            if tuple(res.species) != self.names:
                raise RuntimeError("species order changed between solver calls")   # pragma: no cover
            amounts[sl] = res.amount_array
            feed_out[sl] = res.feed_array
            conv[sl] = res.converged
        return amounts, feed_out, conv

    def conversion(self, amounts, feed):
        k = self.names.index(self.key)
        with np.errstate(invalid="ignore", divide="ignore"):
            return (feed[..., k] - amounts[..., k]) / feed[..., k]

    def quantities(self, amounts, feed) -> np.ndarray:
        """(..., n_quantities): conversion of the key (if any), then gas mole fractions."""
        gas = np.where(self.gas_mask, amounts, 0.0)
        with np.errstate(invalid="ignore", divide="ignore"):
            y = gas / gas.sum(axis=-1, keepdims=True)
        cols = [y[..., j] for j in np.flatnonzero(self.gas_mask)]
        if self.key is not None:
            cols.insert(0, self.conversion(amounts, feed))
        return np.stack(cols, axis=-1)

    def quantity_names(self) -> list[str]:
        names = [f"y {self.names[j]}" for j in np.flatnonzero(self.gas_mask)]
        if self.key is not None:
            names.insert(0, f"conversion {self.key}")
        return names


def _system(species, feed_by_state: np.ndarray, names, gas_mask, *, key, reactions, gas_model, database,
            binary_interaction) -> _System:
    fa = feed_by_state.reshape(-1, len(names))
    feed = {names[j]: fa[:, j].copy() for j in range(len(names)) if np.any(fa[:, j] > 0)}
    return _System(tuple(names), feed, gas_mask, key, tuple(reactions or ()), gas_model, database, binary_interaction)


def _g_steps(T: np.ndarray) -> np.ndarray:
    return G_STEP * R * np.asarray(T, dtype=float)


def _dY_dg(system: _System, T, P) -> np.ndarray:
    """Central differences ∂Y/∂g°_j at flat states T, P (p,): shape (p, n_q, ns) [per J/mol]."""
    T = np.asarray(T, dtype=float)
    p, ns = T.size, len(system.names)
    h = _g_steps(T)                                       # (p,)
    sign = np.array([1.0, -1.0])
    # rows: (species j, sign, state)
    shift = np.zeros((ns, 2, p, ns))
    for j in range(ns):
        shift[j, :, :, j] = sign[:, None] * h[None, :]
    state = np.broadcast_to(np.arange(p), (ns, 2, p)).reshape(-1)
    amounts, feed, _ = system.solve(np.broadcast_to(T, (ns, 2, p)).reshape(-1),
                                    np.broadcast_to(P, (ns, 2, p)).reshape(-1), state,
                                    shift.reshape(-1, ns))
    Y = system.quantities(amounts, feed).reshape(ns, 2, p, -1)
    d = (Y[:, 0] - Y[:, 1]) / (2.0 * h[None, :, None])    # (ns, p, nq)
    return np.moveaxis(d, 0, -1)                           # (p, nq, ns)


# =========================================================================== forward propagation
@dataclass(frozen=True)
class EquilibriumUncertainty:
    """Equilibrium conversion and outlet composition with intervals from data uncertainty.

    Quantities are named ``"conversion <key>"`` and ``"y <species>"`` (gas mole fractions),
    all dimensionless; each dict maps a quantity to an array of the state shape ``shape``
    (floats for a single state).

    Attributes
    ----------
    method : str
        ``"monte-carlo"`` or ``"linear"``.
    level : float
        Coverage probability of the intervals [-] (0.95: from the 2.5th to the 97.5th percentile).
    samples : int
        Monte Carlo draws (0 for the linearised method).
    seed : int | None
    T, T_equilibrium, P : ndarray
        Operating temperature [K], temperature at which equilibrium is evaluated (T ± the
        approach) [K] and pressure [Pa] of each state.
    quantities : tuple[str, ...]
    nominal, lower, median, upper, standard_uncertainty : dict
        Values with the nominal data; interval ends; median (the nominal for the linearised
        method); standard uncertainty (sample standard deviation for Monte Carlo).
    sensitivity : dict
        Quantity -> sensitivity coefficients, shape (*shape, n_data) [per J/mol or per J/(mol K)].
    data : tuple[UncertainDatum, ...]
    sample_values : dict | None
        Quantity -> Monte Carlo values, shape (samples, *shape).
    n_failed : ndarray
        Monte Carlo draws that did not converge, per state (excluded from the statistics).
    approach : float | None
        Temperature approach [K].
    """

    method: str
    level: float
    samples: int
    seed: int | None
    T: np.ndarray
    T_equilibrium: np.ndarray
    P: np.ndarray
    key: str | None
    quantities: tuple
    nominal: dict = field(repr=False)
    lower: dict = field(repr=False)
    median: dict = field(repr=False)
    upper: dict = field(repr=False)
    standard_uncertainty: dict = field(repr=False)
    sensitivity: dict = field(repr=False)
    data: tuple = field(repr=False)
    sample_values: dict | None = field(default=None, repr=False)
    n_failed: np.ndarray | None = field(default=None, repr=False)
    approach: float | None = None
    message: str = ""

    @property
    def shape(self) -> tuple:
        return np.shape(self.T)

    def _q(self, quantity: str | None) -> str:
        if quantity is None:
            quantity = self.quantities[0]
        if quantity not in self.quantities:
            raise UncertaintyInputError(f"quantity {quantity!r}: choose one of {', '.join(self.quantities)}")
        return quantity

    def contributions(self, quantity: str | None = None) -> np.ndarray:
        """Variance contribution (c_k u_k)² of each datum, shape (*shape, n_data) [quantity unit²]."""
        c = np.asarray(self.sensitivity[self._q(quantity)])
        return (c * np.array([d.u for d in self.data])) ** 2

    def ranking(self, quantity: str | None = None, *, at=None, by: str = "datum") -> tuple:
        """Data ranked by their share of the variance of ``quantity``.

        Parameters
        ----------
        quantity : str, optional
            Defaults to the first quantity (the conversion of the key when one was given).
        at : int | tuple, optional
            Index of one state; by default the shares are averaged over all states.
        by : {"datum", "species"}
            Rank single data (ΔfH°, S° separately; :class:`RankedDatum` entries) or species
            (both data together; ``(rank, species, contribution, share)`` tuples).  Data
            with zero uncertainty (ΔfH° of elements in their reference state) are left out.
        """
        c = np.asarray(self.sensitivity[self._q(quantity)])
        c = c[at] if at is not None else c
        return _ranking(self.data, c.reshape(-1, len(self.data)), np.array([d.u for d in self.data]), by)

    def band(self, quantity: str | None = None) -> "Band":
        """Band data for a plot of ``quantity`` against the operating temperature."""
        q = self._q(quantity)
        T = np.asarray(self.T, dtype=float)
        if T.ndim != 1:
            raise UncertaintyInputError("a band needs a 1-D temperature axis; propagate over T as a 1-D array")
        order = np.argsort(T)
        pick = lambda d: np.asarray(d[q], dtype=float)[order]   # noqa: E731
        return Band(x=T[order], nominal=pick(self.nominal), lower=pick(self.lower), median=pick(self.median),
                    upper=pick(self.upper), level=self.level, quantity=q, unit="-", x_label="temperature [K]",
                    method=self.method, samples=self.samples)

    def columns(self, quantity: str | None = None) -> dict:
        """Interval columns for a table, headers carrying units: ``"<q> [-]"`` (nominal),
        ``"<q> 2.5 % [-]"``, ``"<q> median [-]"``, ``"<q> 97.5 % [-]"``, ``"u(<q>) [-]"``."""
        q = self._q(quantity)
        lo, hi = _percent_labels(self.level)
        return {f"{q} [-]": self.nominal[q], f"{q} {lo} [-]": self.lower[q], f"{q} median [-]": self.median[q],
                f"{q} {hi} [-]": self.upper[q], f"u({q}) [-]": self.standard_uncertainty[q]}

    def rows(self, quantities: Sequence[str] | None = None) -> list[dict]:
        """One row per state: ``T [K]``, ``P [Pa]`` (and ``T equilibrium [K]`` with an approach),
        then the interval columns of each quantity (default: all)."""
        cols: dict = {"T [K]": self.T, "P [Pa]": self.P}
        if self.approach:
            cols["T equilibrium [K]"] = self.T_equilibrium
        for q in (quantities or self.quantities):
            cols.update(self.columns(q))
        flat = {k: np.broadcast_to(np.asarray(v, dtype=float), self.shape).reshape(-1) for k, v in cols.items()}
        n = int(np.prod(self.shape)) if self.shape else 1
        return [{k: float(v[i]) for k, v in flat.items()} for i in range(n)]


def _percent_labels(level: float) -> tuple[str, str]:
    lo = 50.0 * (1.0 - level)
    return f"{lo:.3g} %", f"{100.0 - lo:.3g} %"


def propagate_equilibrium(species: Sequence[str], feed: Mapping[str, object], T, P, *, key: str | None = None,
                          reactions: Sequence[str] | None = None, gas_model: str = "ideal", approach=None,
                          database: SpeciesDatabase | None = None, method: str = "monte-carlo",
                          samples: int = 400, seed: int | None = 1, level: float = 0.95,
                          overrides: Mapping | None = None, defaults: UncertaintyDefaults | None = None,
                          binary_interaction: Mapping | None = None) -> EquilibriumUncertainty:
    """Equilibrium conversion and outlet composition with intervals from the data uncertainty.

    Monte Carlo (JCGM 101:2008): ``samples`` draws of every uncertain datum (independent
    normal errors with the standard uncertainties of :func:`parameter_map`), all draws at
    all states solved in one batched :func:`eqdesign.solve.equilibrium` call (``g0_shift``
    ``= δΔfH° − T δS°``); percentiles give the interval.  Linearised (GUM): sensitivity
    coefficients by central differences in each g° (step 1e-3 RT), interval nominal ± z u.
    The sensitivities, and so :meth:`EquilibriumUncertainty.ranking`, are computed for both.

    Parameters
    ----------
    species, feed, T, P, reactions, gas_model, database, binary_interaction
        As for :func:`eqdesign.solve.equilibrium` (arrays broadcast; T [K], P [Pa], feed [mol]).
    key : str, optional
        Key reactant: adds ``"conversion <key>"`` as the first quantity.
    approach : float | str, optional
        Temperature approach ΔT [K]; equilibrium is evaluated at T + ΔT or T − ΔT, whichever
        gives the lower nominal conversion of ``key`` (needs ``key``).
    method : {"monte-carlo", "linear"}
    samples : int
        Monte Carlo draws (20 to 100000).
    seed : int | None
        Seed of ``numpy.random.default_rng``; the same seed gives the same result.
    level : float
        Coverage probability of the intervals [-].
    overrides : mapping, optional
        The user's standard uncertainties (see :func:`parameter_map`).
    defaults : UncertaintyDefaults, optional

    Returns
    -------
    EquilibriumUncertainty

    Examples
    --------
    Ammonia from 1:3 N2:H2 at 200 bar and 800 K, linearised (CODATA key-value uncertainty
    of ΔfH°(NH3), 0.35 kJ/mol, from memory, dominates):

    >>> r = propagate_equilibrium(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, 800.0, "200 bar",
    ...                           key="N2", method="linear")
    >>> round(r.nominal["conversion N2"], 3), round(r.standard_uncertainty["conversion N2"], 4)
    (0.25, 0.0087)
    >>> r.ranking()[0].datum.label
    'ΔfH°(NH3)'
    """
    _check_method(method, samples, level)
    db = database or bundled_database()
    dT = _approach(approach)
    if dT and key is None:
        raise UncertaintyInputError("an approach needs the key reactant (key=...) to choose its side")
    T_arr = np.asarray(to_kelvin(T), dtype=float)
    P_arr = np.asarray(to_pascal(P), dtype=float)
    res0 = equilibrium(species, feed, T_arr, P_arr, reactions=reactions, gas_model=gas_model, key=key,
                       database=db, binary_interaction=binary_interaction, warn=False)
    names = list(res0.species)
    shape = res0.shape
    p = int(np.prod(shape)) if shape else 1
    key_r = db.resolve(key) if key else None
    system = _system(species, res0.feed_array, names, res0.gas_mask, key=key_r, reactions=res0.reactions,
                     gas_model=gas_model, database=db, binary_interaction=binary_interaction)
    T_op = np.broadcast_to(T_arr, shape).reshape(-1)
    P_f = np.broadcast_to(P_arr, shape).reshape(-1)
    state = np.arange(p)
    if dT:
        both_T = np.concatenate([T_op - dT, T_op + dT])
        if np.any(both_T <= 0):
            raise EquilibriumInputError(f"approach {dT:g} K takes temperatures to or below 0 K")
        am, fe, _ = system.solve(both_T, np.concatenate([P_f, P_f]), np.concatenate([state, state]))
        x = system.conversion(am, fe)
        hot = x[p:] < x[:p]
        T_eq = np.where(hot, T_op + dT, T_op - dT)
        am0, fe0 = np.where(hot[:, None], am[p:], am[:p]), np.where(hot[:, None], fe[p:], fe[:p])
    else:
        T_eq = T_op
        am0, fe0 = res0.amount_array.reshape(p, -1), res0.feed_array.reshape(p, -1)
    Y0 = system.quantities(am0, fe0)                                    # (p, nq)
    qnames = system.quantity_names()
    pm = parameter_map(names, database=db, overrides=overrides, defaults=defaults)
    u = pm.u
    # sensitivities (both methods): ∂Y/∂θ_k = Σ_j ∂Y/∂g_j ∂g_j/∂θ_k
    dYdg = _dY_dg(system, T_eq, P_f)                        # (p, nq, ns)
    chain = pm.chain_factors(T_eq)                                       # (p, nd, ns)
    sens = np.einsum("pqj,pkj->pqk", dYdg, chain)                        # (p, nq, nd)
    sigma_lin = np.sqrt(((sens * u) ** 2).sum(axis=-1))                  # (p, nq)
    samples_out = None
    n_failed = np.zeros(p, dtype=int)
    if method == "linear":
        z = _z(level)
        lower, median, upper, std = Y0 - z * sigma_lin, Y0.copy(), Y0 + z * sigma_lin, sigma_lin
        n_samples = 0
        msg = "linearised propagation (GUM law of propagation of uncertainty)"
    else:
        rng = np.random.default_rng(seed)
        theta = rng.standard_normal((samples, len(u))) * u               # (S, nd)
        A, B = pm.shift_parts(theta)                                     # (S, ns)
        shift = A[:, None, :] + T_eq[None, :, None] * B[:, None, :]       # (S, p, ns)
        am, fe, conv = system.solve(np.broadcast_to(T_eq, (samples, p)).reshape(-1),
                                    np.broadcast_to(P_f, (samples, p)).reshape(-1),
                                    np.broadcast_to(state, (samples, p)).reshape(-1),
                                    shift.reshape(samples * p, -1))
        Ys = system.quantities(am, fe).reshape(samples, p, -1)            # (S, p, nq)
        n_failed = (~conv).reshape(samples, p).sum(axis=0)
        lo_q, hi_q = 0.5 - level / 2.0, 0.5 + level / 2.0
        lower, median, upper = _quantiles(Ys, [lo_q, 0.5, hi_q])
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            std = np.nanstd(Ys, axis=0, ddof=1)
        n_samples = samples
        samples_out = {q: Ys[..., i].reshape((samples,) + shape) for i, q in enumerate(qnames)}
        msg = f"Monte Carlo, {samples} draws, seed {seed}"
        if n_failed.any():
            msg += f"; {int(n_failed.sum())} draw-state(s) did not converge and are left out"

    def as_dict(a):
        return {q: _shape_out(a[:, i], shape) for i, q in enumerate(qnames)}

    return EquilibriumUncertainty(
        method=method, level=float(level), samples=n_samples, seed=seed if method == "monte-carlo" else None,
        T=_shape_out(T_op, shape), T_equilibrium=_shape_out(T_eq, shape), P=_shape_out(P_f, shape), key=key_r,
        quantities=tuple(qnames), nominal=as_dict(Y0), lower=as_dict(lower), median=as_dict(median),
        upper=as_dict(upper), standard_uncertainty=as_dict(std),
        sensitivity={q: sens[:, i, :].reshape(shape + (len(u),)) for i, q in enumerate(qnames)},
        data=pm.data, sample_values=samples_out, n_failed=_shape_out(n_failed, shape), approach=dT,
        message=msg + "; " + ASSUMPTIONS)


def _shape_out(x, shape):
    x = np.asarray(x)
    return x.reshape(shape) if shape else x.reshape(()).item()


def _approach(approach) -> float | None:
    if approach is None:
        return None
    from .sweep import approach_kelvin      # the one reader of approach values
    return approach_kelvin(approach)


# =========================================================================== K(T)
@dataclass(frozen=True)
class LnKUncertainty:
    """ln K(T) of a reaction with its standard uncertainty from the data.

    Attributes
    ----------
    T : float | ndarray
        Temperature [K].
    ln_K : float | ndarray
        ln K with the nominal data [-].
    standard_uncertainty : float | ndarray
        u(ln K) [-] (exact: ln K is linear in the data).
    K_lower, K_upper : float | ndarray
        exp(ln K ∓ z u) at coverage ``level`` [-].
    level : float
    sensitivity : ndarray, shape (*shape(T), n_data)
        ∂ ln K/∂datum [per J/mol or per J/(mol K)].
    data : tuple[UncertainDatum, ...]
    """

    T: object
    ln_K: object
    standard_uncertainty: object
    K_lower: object
    K_upper: object
    level: float
    sensitivity: np.ndarray = field(repr=False)
    data: tuple = field(repr=False)

    def ranking(self, *, at=None, by: str = "datum") -> tuple:
        """Data ranked by their share of Var ln K (averaged over T unless ``at`` is given)."""
        c = self.sensitivity if at is None else self.sensitivity[at]
        return _ranking(self.data, np.reshape(c, (-1, len(self.data))), np.array([d.u for d in self.data]), by)


def ln_K_uncertainty(reaction: str | Reaction, T, *, database: SpeciesDatabase | None = None,
                     overrides: Mapping | None = None, defaults: UncertaintyDefaults | None = None,
                     level: float = 0.95) -> LnKUncertainty:
    """Standard uncertainty of ln K(T) of a reaction from its species' data.

    ``δ ln K = −Σ_i ν_i δg°_i/(RT)`` with ``δg°_i = δΔfH°_i − T δS°_i``; for independent data
    ``u²(ln K) = Σ_i ν_i² (u²(ΔfH°_i)/(RT)² + u²(S°_i)/R²)`` (species defined by
    reaction-level data contribute through their ΔrH°, ΔrS° and partners).  Exact, since
    ln K is linear in the data.

    Parameters
    ----------
    reaction : str | Reaction
    T : float | array_like | str
        Temperature [K].
    database, overrides, defaults
        As for :func:`parameter_map`.
    level : float
        Coverage probability of the K interval [-].

    Returns
    -------
    LnKUncertainty

    Examples
    --------
    N2 + 3 H2 = 2 NH3 at 700 K: 2 × 350 J/mol (u(ΔfH°(NH3)), CODATA, from memory) over RT
    gives 0.1203; the entropies (2 × 0.05, 3 × 0.003, 0.004 J/(mol K)) over R add in quadrature:

    >>> r = ln_K_uncertainty("N2 + 3 H2 = 2 NH3", 700.0)
    >>> round(r.standard_uncertainty, 4)
    0.1209
    """
    db = database or bundled_database()
    rxn = reaction if isinstance(reaction, Reaction) else Reaction.parse(reaction, db)
    T = np.asarray(to_kelvin(T), dtype=float)
    pm = parameter_map(rxn.names, database=db, overrides=overrides, defaults=defaults)
    nu = np.array([rxn.stoichiometry[n] for n in pm.species])
    chain = pm.chain_factors(T)                                      # (..., nd, ns)
    sens = -(chain @ nu) / (R * T[..., None])                          # (..., nd)
    u = pm.u
    su = np.sqrt(((sens * u) ** 2).sum(axis=-1))
    lnK = np.asarray(rxn.ln_K(T), dtype=float)
    z = _z(level)
    f = (lambda a: float(a) if np.ndim(a) == 0 else a)   # noqa: E731
    return LnKUncertainty(T=f(T), ln_K=f(lnK), standard_uncertainty=f(su), K_lower=f(np.exp(lnK - z * su)),
                          K_upper=f(np.exp(lnK + z * su)), level=float(level), sensitivity=sens, data=pm.data)


def reaction_level_ln_K_uncertainty(data: ReactionLevelData, T, *, u_delta_h, u_delta_s, correlation: float = 0.0,
                                    level: float = 0.95) -> LnKUncertainty:
    """Standard uncertainty of ln K(T) from reaction-level data (van 't Hoff / Kirchhoff).

    ``ln K = −ΔrH°(T)/RT + ΔrS°(T)/R`` with ΔrCp taken as exact, so
    ``u²(ln K) = u²(ΔrH°)/(RT)² + u²(ΔrS°)/R² − 2 r u(ΔrH°) u(ΔrS°)/(R² T)`` (GUM, with
    correlation coefficient r between the two; fitted ΔrH° and ΔrS° are usually strongly
    positively correlated, r = 0 is then conservative).

    Parameters
    ----------
    data : ReactionLevelData
    T : float | array_like | str
        Temperature [K].
    u_delta_h : float | str
        u(ΔrH°) [J/mol] (or a quantity such as ``"2 kJ/mol"``).
    u_delta_s : float | str
        u(ΔrS°) [J/(mol K)].
    correlation : float
        Correlation coefficient of the ΔrH° and ΔrS° errors [-], from −1 to 1.
    level : float

    Returns
    -------
    LnKUncertainty
        ``data`` holds two :class:`UncertainDatum` entries (species ``data.text`` or
        ``"reaction"``); ``sensitivity`` their coefficients.

    Examples
    --------
    >>> d = ReactionLevelData.from_K(K_ref=2.0, T_ref=500.0, delta_h=-50e3)
    >>> r = reaction_level_ln_K_uncertainty(d, 500.0, u_delta_h=2000.0, u_delta_s=0.0)
    >>> round(r.standard_uncertainty, 4)                 # 2000 / (R × 500)
    0.4811
    """
    uh = _read_u(u_delta_h, REACTION_ENTHALPY, "u_delta_h")
    us = _read_u(u_delta_s, REACTION_ENTROPY, "u_delta_s")
    if not -1.0 <= correlation <= 1.0:
        raise UncertaintyInputError(f"correlation {correlation!r}: give a coefficient from -1 to 1")
    T = np.asarray(to_kelvin(T), dtype=float)
    cH = -1.0 / (R * T)
    cS = np.full_like(T, 1.0 / R)
    var = (cH * uh) ** 2 + (cS * us) ** 2 + 2.0 * correlation * cH * cS * uh * us
    su = np.sqrt(np.maximum(var, 0.0))
    lnK = np.asarray(data.ln_K(T), dtype=float)
    z = _z(level)
    label = data.text or "reaction"
    f = (lambda a: float(a) if np.ndim(a) == 0 else a)   # noqa: E731
    return LnKUncertainty(T=f(T), ln_K=f(lnK), standard_uncertainty=f(su), K_lower=f(np.exp(lnK - z * su)),
                          K_upper=f(np.exp(lnK + z * su)), level=float(level),
                          sensitivity=np.stack([cH, cS], axis=-1),
                          data=(UncertainDatum(label, REACTION_ENTHALPY, uh, "user"),
                                UncertainDatum(label, REACTION_ENTROPY, us, "user")))


# =========================================================================== inverse: temperature
def _bracketed_roots(f, a, b, fa, fb, *, xtol: float, ftol: float, max_iter: int = 80):
    """Roots of f(x, idx) = 0 in brackets [a, b] (fa, fb of opposite signs), all together.

    Illinois regula falsi (M. Dowell, P. Jarratt, BIT 11 (1971) 168-174) with a bisection
    step every fourth iteration and whenever the secant point is not strictly inside.
    ``f(x, idx)`` evaluates the functions ``idx`` at the points ``x`` in one batched call.

    Returns (x, ok): the point with the smallest |f| per bracket; ok False where an
    evaluation failed (NaN).
    """
    a, b, fa, fb = (np.array(v, dtype=float) for v in (a, b, fa, fb))
    n = a.size
    best = np.where(np.abs(fa) <= np.abs(fb), a, b)
    best_f = np.where(np.abs(fa) <= np.abs(fb), fa, fb)
    ok = np.ones(n, dtype=bool)
    active = (np.abs(best_f) > ftol) & (np.abs(b - a) > xtol)
    for it in range(max_iter):
        idx = np.flatnonzero(active)
        if idx.size == 0:
            break
        A, B, FA, FB = a[idx], b[idx], fa[idx], fb[idx]
        with np.errstate(invalid="ignore", divide="ignore"):
            x = B - FB * (B - A) / (FB - FA)
        lo, hi = np.minimum(A, B), np.maximum(A, B)
        bisect = ~np.isfinite(x) | (x <= lo) | (x >= hi) | (it % 4 == 3)
        x = np.where(bisect, 0.5 * (A + B), x)
        fx = f(x, idx)
        bad = ~np.isfinite(fx)
        better = np.abs(fx) < np.abs(best_f[idx])
        best[idx] = np.where(better, x, best[idx])
        best_f[idx] = np.where(better, fx, best_f[idx])
        flip = np.sign(fx) != np.sign(FB)           # root between b and x: old b becomes a
        a[idx] = np.where(flip, B, A)
        fa[idx] = np.where(flip, FB, 0.5 * FA)       # Illinois: halve the retained end
        b[idx], fb[idx] = x, fx
        ok[idx[bad]] = False
        done = bad | (np.abs(fx) <= ftol) | (np.abs(b[idx] - a[idx]) <= xtol)
        active[idx[done]] = False
    return best, ok


class _AnswerRanking:
    """Ranking shared by the interval results of the inverse questions."""

    def ranking(self, *, at=None, by: str = "datum") -> tuple:
        """Data ranked by their share of the answer's variance (averaged over the questions
        unless ``at`` picks one)."""
        c = self.sensitivity if at is None else self.sensitivity[at]
        return _ranking(self.data, np.reshape(c, (-1, len(self.data))), np.array([d.u for d in self.data]), by)


@dataclass(frozen=True)
class TemperatureUncertainty(_AnswerRanking):
    """The temperature for a target conversion, with its interval from data uncertainty.

    Scalars for one question; arrays of the broadcast shape of P and target otherwise.

    Attributes
    ----------
    T : float | ndarray
        Operating temperature with the nominal data [K] (NaN where the target is not reached).
    lower, median, upper : float | ndarray
        Interval ends at coverage ``level`` and the median [K]; ±inf where that share of the
        draws reaches the target only beyond ``T_range``.
    standard_uncertainty : float | ndarray
        u(T) [K]: sample standard deviation (Monte Carlo; NaN if any draw is beyond the range)
        or the linearised value.
    reached : bool | ndarray
        Whether the nominal answer exists in ``T_range``.
    beyond_range : float | ndarray
        Share of the draws whose answer lies outside ``T_range`` [-].
    sensitivity : ndarray, shape (*shape, n_data)
        dT/dθ_k by implicit differentiation, −(∂X/∂θ_k)/(∂X/∂T) [K per J/mol or K per J/(mol K)].
    data : tuple[UncertainDatum, ...]
    sample_T : ndarray | None
        Monte Carlo answers, shape (samples, *shape) [K].
    P, target, key, approach, method, level, samples, seed, message
    """

    T: object
    lower: object
    median: object
    upper: object
    standard_uncertainty: object
    reached: object
    beyond_range: object
    P: object
    target: object
    key: str
    method: str
    level: float
    samples: int
    seed: int | None
    sensitivity: np.ndarray = field(repr=False)
    data: tuple = field(repr=False)
    sample_T: np.ndarray | None = field(default=None, repr=False)
    n_failed: object = 0
    approach: float | None = None
    T_range: tuple = (np.nan, np.nan)
    message: object = ""

    @property
    def shape(self) -> tuple:
        return np.shape(self.T)


    def summary(self, at=None) -> str:
        """One sentence per question, e.g. ``"temperature for 20 % conversion of N2 at 200 bar:
        833.2 K, 95 % interval 822.0 K to 842.0 K (Monte Carlo, 400 draws)"``; ``at`` picks the
        question of an array answer."""
        sel = (lambda v: np.asarray(v)[at] if at is not None else np.asarray(v))   # noqa: E731
        T, lo, hi, P, tg = (float(sel(v)) for v in (self.T, self.lower, self.upper, self.P, self.target))
        head = f"temperature for {100 * tg:.4g} % conversion of {self.key} at {P / 1e5:.4g} bar"
        if not math.isfinite(T):
            return f"{head}: not reached in {self.T_range[0]:g}-{self.T_range[1]:g} K"
        how = f"Monte Carlo, {self.samples} draws" if self.method == "monte-carlo" else "linearised"
        return (f"{head}: {T:.1f} K, {100 * self.level:.3g} % interval {_fmt_T(lo)} to {_fmt_T(hi)} "
                f"({how})")

    def rows(self) -> list[dict]:
        """One row per question, headers carrying units."""
        lo, hi = _percent_labels(self.level)
        cols = {f"target conversion {self.key} [-]": self.target, "P [Pa]": self.P, "T [K]": self.T,
                f"T {lo} [K]": self.lower, "T median [K]": self.median, f"T {hi} [K]": self.upper,
                "u(T) [K]": self.standard_uncertainty, "draws beyond range [-]": self.beyond_range}
        flat = {k: np.asarray(v, dtype=float).reshape(-1) for k, v in cols.items()}
        n = flat["T [K]"].size
        return [{k: float(v[i]) for k, v in flat.items()} for i in range(n)]


def _fmt_T(x: float) -> str:
    if math.isinf(x):
        return "beyond the search range" if x > 0 else "below the search range"
    return f"{x:.1f} K"


def temperature_interval(species: Sequence[str], feed: Mapping[str, object], P, key: str, target, *,
                         T_range=(300.0, 1500.0), reactions: Sequence[str] | None = None,
                         gas_model: str = "ideal", approach=None, database: SpeciesDatabase | None = None,
                         method: str = "monte-carlo", samples: int = 400, seed: int | None = 1,
                         level: float = 0.95, overrides: Mapping | None = None,
                         defaults: UncertaintyDefaults | None = None) -> TemperatureUncertainty:
    """Temperature at which the conversion of ``key`` reaches ``target``, with its interval.

    The nominal answer is that of :func:`eqdesign.solve.design.temperature_for_conversion`
    (same rule for which crossing of the target counts), refined further.  Monte Carlo: for
    every draw of the data the crossing nearest the nominal one is bracketed and refined, all
    draws together (a vectorised Illinois regula falsi, one batched equilibrium call per
    iteration; no loop over draws).  Linearised: ``dT/dθ = −(∂X/∂θ)/(∂X/∂T)`` by central
    differences at the nominal answer (implicit-function rule).

    Parameters
    ----------
    species, feed, P, key, target, T_range, reactions, gas_model, approach, database
        As for :func:`eqdesign.solve.design.temperature_for_conversion` (P [Pa], target [-],
        T_range [K], approach ΔT [K]).
    method, samples, seed, level, overrides, defaults
        As for :func:`propagate_equilibrium`.

    Returns
    -------
    TemperatureUncertainty

    Examples
    --------
    Ammonia from 1:3 N2:H2 at 200 bar: highest temperature giving 20 % conversion of N2,
    linearised:

    >>> r = temperature_interval(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, "200 bar", "N2", 0.20,
    ...                          T_range=(500, 1000), method="linear")
    >>> round(r.T, 1), round(r.standard_uncertainty, 1)
    (833.2, 5.4)
    """
    _check_method(method, samples, level)
    from .design import temperature_for_conversion     # nominal answer, by the design module's rule
    db = database or bundled_database()
    nominal = temperature_for_conversion(species, feed, P, key, target, T_range=T_range, reactions=reactions,
                                         gas_model=gas_model, approach=approach, database=db)
    dT = nominal.approach or 0.0
    shape = np.shape(nominal.T)
    T_op0 = np.asarray(nominal.T, dtype=float).reshape(-1)
    T_eq0 = np.asarray(nominal.T_equilibrium, dtype=float).reshape(-1)
    P_c = np.broadcast_to(np.asarray(nominal.P, dtype=float), shape).reshape(-1)
    tg = np.broadcast_to(np.asarray(nominal.target, dtype=float), shape).reshape(-1)
    m = T_op0.size
    lo, hi = float(to_kelvin(T_range[0])), float(to_kelvin(T_range[1]))
    reached = np.isfinite(T_op0) & np.isfinite(T_eq0)
    side = np.where(reached, np.sign(np.nan_to_num(T_eq0 - T_op0)), 0.0)   # +1: equilibrium at T + ΔT
    key_r = db.resolve(key)

    res_probe = equilibrium(species, feed, 0.5 * (lo + hi), P_c[0], reactions=reactions, gas_model=gas_model,
                            key=key_r, database=db, warn=False)
    names = list(res_probe.species)
    feed_one = np.asarray(res_probe.feed_array, dtype=float)[None, :]
    system = _system(species, feed_one, names, res_probe.gas_mask, key=key_r, reactions=res_probe.reactions,
                     gas_model=gas_model, database=db, binary_interaction=None)
    pm = parameter_map(names, database=db, overrides=overrides, defaults=defaults)

    def conversion_at(T, cases, shift=None):
        am, fe, _ = system.solve(T, P_c[cases], np.zeros(np.size(T), dtype=int), shift)
        return system.conversion(am, fe)

    T_eq_ref = T_eq0.copy()
    # refine the nominal crossing further (design stops at 1e-6 in conversion or 1e-4 K); a
    # nominal answer with no crossing nearby (target met over the whole range: the answer is
    # the end of the range, not fixed by the data) gets no interval
    crossing = np.zeros(m, dtype=bool)
    rc = np.flatnonzero(reached)
    for half_width in (0.05, 2.0, 20.0):
        if rc.size == 0:
            break
        lo_eq_c, hi_eq_c = lo + side[rc] * dT, hi + side[rc] * dT
        xa = np.maximum(T_eq0[rc] - half_width, lo_eq_c)
        xb = np.minimum(T_eq0[rc] + half_width, hi_eq_c)
        fab = conversion_at(np.concatenate([xa, xb]), np.concatenate([rc, rc])) - np.concatenate([tg[rc], tg[rc]])
        fa, fb = fab[:rc.size], fab[rc.size:]
        good = np.isfinite(fa) & np.isfinite(fb) & (np.sign(fa) != np.sign(fb))
        if good.any():
            gi = rc[good]

            def f_nom(x, idx, _gi=gi):
                return conversion_at(x, _gi[idx]) - tg[_gi[idx]]
            roots, okr = _bracketed_roots(f_nom, xa[good], xb[good], fa[good], fb[good], xtol=ROOT_XTOL,
                                          ftol=ROOT_FTOL)
            T_eq_ref[gi] = np.where(okr, roots, T_eq0[gi])
            crossing[gi] = okr
        rc = rc[~good]
    T_nom = np.where(reached, T_eq_ref - side * dT, np.nan)
    found = _inverse_interval(
        conversion_at,
        lambda rows: _dY_dg(_system_for_cases(system, P_c[rows]), T_eq_ref[rows], P_c[rows])[:, 0, :],
        T_eq_ref, crossing, tg, T_eq_ref, lo + side * dT, hi + side * dT, pm, method=method,
        samples=samples, seed=seed, level=level, x_step=T_STEP, min_width=0.5,
        temperature_of=lambda x, cases: x)
    sens = found["sens"]
    lower, median, upper = (found[k] - side * dT for k in ("lower", "median", "upper"))
    std, beyond, n_failed = found["spread"], found["beyond"], found["n_failed"]
    if method == "linear":
        median = T_nom.copy()
        n_samples, sample_T = 0, None
        msg = "linearised (implicit differentiation)"
    else:
        n_samples = samples
        sample_T = (found["samples"] - side[None, :] * dT).reshape((samples,) + shape)
        msg = f"Monte Carlo, {samples} draws, seed {seed}"
        if np.any(beyond > 0):
            msg += "; some draws reach the target only beyond the search range (interval ends shown as ±inf)"
        if np.any(n_failed):
            msg += f"; {int(np.sum(n_failed))} draw(s) failed to solve and are left out"
    messages = [m_ for m_ in np.asarray(nominal.message, dtype=object).reshape(-1)]
    if np.any(reached & ~crossing):
        msg += "; no interval where the nominal answer is the end of the search range (no crossing of the target)"
    full = [f"{msg}; {ASSUMPTIONS}; nominal: {t}" for t in messages]
    return TemperatureUncertainty(
        T=_shape_out(T_nom, shape), lower=_shape_out(lower, shape), median=_shape_out(median, shape),
        upper=_shape_out(upper, shape), standard_uncertainty=_shape_out(std, shape),
        reached=_shape_out(reached, shape), beyond_range=_shape_out(beyond, shape), P=_shape_out(P_c, shape),
        target=_shape_out(tg, shape), key=key_r, method=method, level=float(level), samples=n_samples,
        seed=seed if method == "monte-carlo" else None, sensitivity=sens.reshape(shape + (len(pm.data),)),
        data=pm.data, sample_T=sample_T, n_failed=_shape_out(n_failed, shape), approach=dT or None, T_range=(lo, hi),
        message=full[0] if not shape else np.array(full, dtype=object).reshape(shape))


@dataclass(frozen=True)
class PressureUncertainty(_AnswerRanking):
    """The pressure for a target conversion, with its interval from data uncertainty.

    Scalars for one question; arrays of the broadcast shape of T and target otherwise.

    Attributes
    ----------
    P : float | ndarray
        Pressure with the nominal data [Pa] (NaN where the target is not reached).
    lower, median, upper : float | ndarray
        Interval ends at coverage ``level`` and the median [Pa]; ±inf where that share of
        the draws reaches the target only beyond ``P_range``.
    relative_uncertainty : float | ndarray
        u(ln P) [-], the relative standard uncertainty of the pressure.
    reached, beyond_range, T, target, key, method, level, samples, seed, message
        As for :class:`TemperatureUncertainty` (T [K] is the operating temperature).
    sensitivity : ndarray, shape (*shape, n_data)
        d ln P/dθ_k = −(∂X/∂θ_k)/(∂X/∂ln P) [per J/mol or per J/(mol K)].
    sample_P : ndarray | None
        Monte Carlo answers, shape (samples, *shape) [Pa].
    """

    P: object
    lower: object
    median: object
    upper: object
    relative_uncertainty: object
    reached: object
    beyond_range: object
    T: object
    target: object
    key: str
    method: str
    level: float
    samples: int
    seed: int | None
    sensitivity: np.ndarray = field(repr=False)
    data: tuple = field(repr=False)
    sample_P: np.ndarray | None = field(default=None, repr=False)
    n_failed: object = 0
    P_range: tuple = (np.nan, np.nan)
    message: object = ""

    @property
    def shape(self) -> tuple:
        return np.shape(self.P)



def _inverse_interval(conversion_at, dX_dg, x0, reached, tg, T_eq, lo, hi, pm, *, method, samples, seed,
                      level, x_step=1e-4, min_width=0.02, temperature_of=None) -> dict:
    """Interval of an inverse answer x (a search variable such as ln P or ln ratio) from the
    species-data uncertainty, for the questions ``reached``.

    ``conversion_at(x, cases, shift)`` gives the conversion at x for the questions
    ``cases`` with g° shifts ``shift`` (n, ns) [J/mol]; ``dX_dg(rows)`` gives ∂X/∂g°_j
    (r, ns) at the nominal answers of the questions ``rows``.  Linearised:
    dx/dθ = −(∂X/∂θ)/(∂X/∂x) (implicit-function rule).  Monte Carlo: every draw's
    crossing is bracketed about the nominal one (widened to the search range when it
    left) and refined by the vectorised Illinois regula falsi, all draws together.
    ``lo``, ``hi``: search range of x, scalars or one per question.  ``temperature_of(x,
    cases)``: the temperature [K] at which the data shifts apply (default: ``T_eq`` of the
    question; the search variable itself when it is the temperature).
    """
    m = x0.size
    lo = np.broadcast_to(np.asarray(lo, dtype=float), (m,))
    hi = np.broadcast_to(np.asarray(hi, dtype=float), (m,))
    if temperature_of is None:
        def temperature_of(x, cases):
            return T_eq[cases]
    u, nd = pm.u, len(pm.data)
    sens = np.full((m, nd), np.nan)
    sigma = np.full(m, np.nan)
    slope = np.full(m, np.nan)
    rc = np.flatnonzero(reached)
    if rc.size:
        xs = conversion_at(np.concatenate([x0[rc] + x_step, x0[rc] - x_step]), np.concatenate([rc, rc]), None)
        slope[rc] = (xs[:rc.size] - xs[rc.size:]) / (2 * x_step)
        dXdtheta = np.einsum("rj,rkj->rk", dX_dg(rc), pm.chain_factors(T_eq[rc]))
        sens[rc] = -dXdtheta / slope[rc][:, None]
        sigma[rc] = np.sqrt(((sens[rc] * u) ** 2).sum(axis=-1))
    out = dict(sens=sens, sigma=sigma, beyond=np.zeros(m), n_failed=np.zeros(m, dtype=int), samples=None)
    if method == "linear":
        z = _z(level)
        out.update(lower=x0 - z * sigma, median=x0.copy(), upper=x0 + z * sigma, spread=sigma)
        return out
    rng = np.random.default_rng(seed)
    theta = rng.standard_normal((samples, nd)) * u
    A, B = pm.shift_parts(theta)                                        # (S, ns)
    X = np.full((samples, m), np.nan)
    if rc.size:
        S, r = samples, rc.size
        s_idx = np.repeat(np.arange(S), r)
        c_idx = np.tile(rc, S)
        tgt = tg[c_idx]

        lo_c, hi_c = lo[c_idx], hi[c_idx]

        def f(x, idx):
            sh = A[s_idx[idx]] + temperature_of(x, c_idx[idx])[:, None] * B[s_idx[idx]]
            return conversion_at(x, c_idx[idx], sh) - tgt[idx]

        n_all = s_idx.size
        width = np.where(np.isfinite(sigma[c_idx]), 5.0 * sigma[c_idx] + min_width, hi_c - lo_c)
        a = np.maximum(x0[c_idx] - width, lo_c)
        b = np.minimum(x0[c_idx] + width, hi_c)
        fab = f(np.concatenate([a, b]), np.concatenate([np.arange(n_all), np.arange(n_all)]))
        fa, fb = fab[:n_all], fab[n_all:]
        same = np.isfinite(fa) & np.isfinite(fb) & (np.sign(fa) == np.sign(fb)) & (fa != 0)
        direction = -np.sign(slope[c_idx]) * np.sign(fa)                # +1: root above b
        censored = np.zeros(n_all)
        ext = np.flatnonzero(same & (direction != 0))
        if ext.size:
            up = direction[ext] > 0
            end = np.where(up, hi_c[ext], lo_c[ext])
            fe = f(end, ext)
            crosses = np.isfinite(fe) & (np.sign(fe) != np.sign(fa[ext]))
            na, nb = np.where(up, b[ext], end), np.where(up, end, a[ext])
            nfa, nfb = np.where(up, fb[ext], fe), np.where(up, fe, fa[ext])
            a[ext], b[ext], fa[ext], fb[ext] = na, nb, nfa, nfb
            stuck = ~crosses & np.isfinite(fe)
            censored[ext[stuck]] = direction[ext[stuck]]
        todo = np.flatnonzero((np.isfinite(fa) & np.isfinite(fb) & (np.sign(fa) != np.sign(fb)))
                              | (fa == 0) | (fb == 0))
        roots = np.full(n_all, np.nan)
        if todo.size:
            xr, okr = _bracketed_roots(lambda x, idx: f(x, todo[idx]), a[todo], b[todo], fa[todo], fb[todo],
                                       xtol=ROOT_XTOL, ftol=ROOT_FTOL)
            roots[todo] = np.where(okr, xr, np.nan)
        roots = np.where(censored > 0, np.inf, np.where(censored < 0, -np.inf, roots))
        X[:, rc] = roots.reshape(S, r)
    lower, median, upper = _quantiles(X, [0.5 - level / 2.0, 0.5, 0.5 + level / 2.0])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        spread = np.nanstd(np.where(np.isfinite(X), X, np.nan), axis=0, ddof=1)
    beyond = np.isinf(X).sum(axis=0) / samples
    out.update(lower=np.where(reached, lower, np.nan), median=np.where(reached, median, np.nan),
               upper=np.where(reached, upper, np.nan),
               spread=np.where(reached & (beyond == 0), spread, np.nan), beyond=beyond,
               n_failed=np.isnan(X).sum(axis=0) * reached, samples=X)
    return out


def _interval_message(method, samples, seed, found: dict, at_end_any: bool, messages) -> list:
    if method == "linear":
        msg = "linearised (implicit differentiation)"
    else:
        msg = f"Monte Carlo, {samples} draws, seed {seed}"
        if np.any(found["beyond"] > 0):
            msg += "; some draws reach the target only beyond the search range (interval ends shown as ±inf)"
        if np.any(found["n_failed"]):
            msg += f"; {int(np.sum(found['n_failed']))} draw(s) failed to solve and are left out"
    if at_end_any:
        msg += "; no interval where the nominal answer is the end of the search range"
    return [f"{msg}; {ASSUMPTIONS}; nominal: {t}" for t in np.asarray(messages, dtype=object).reshape(-1)]


def pressure_interval(species: Sequence[str], feed: Mapping[str, object], T, key: str, target, *,
                      P_range=(1e5, 300e5), reactions: Sequence[str] | None = None,
                      gas_model: str = "ideal", approach=None, database: SpeciesDatabase | None = None,
                      method: str = "monte-carlo", samples: int = 400, seed: int | None = 1,
                      level: float = 0.95, overrides: Mapping | None = None,
                      defaults: UncertaintyDefaults | None = None) -> PressureUncertainty:
    """Pressure at which the conversion of ``key`` reaches ``target``, with its interval.

    The nominal answer is that of :func:`eqdesign.solve.design.pressure_for_conversion`;
    the search variable is ln P.  Monte Carlo: every draw's crossing is refined, all draws
    together (one batched equilibrium call per iteration); linearised:
    d ln P/dθ = −(∂X/∂θ)/(∂X/∂ln P) at the nominal answer (implicit-function rule).

    Parameters
    ----------
    species, feed, T, key, target, P_range, reactions, gas_model, approach, database
        As for :func:`eqdesign.solve.design.pressure_for_conversion` (T [K], P_range [Pa]).
    method, samples, seed, level, overrides, defaults
        As for :func:`propagate_equilibrium`.

    Returns
    -------
    PressureUncertainty

    Examples
    --------
    Ammonia from 1:3 N2:H2 at 700 K: the lowest pressure giving 40 % conversion of N2,
    linearised (relative standard uncertainty of the pressure):

    >>> r = pressure_interval(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, 700, "N2", 0.40,
    ...                       P_range=("10 bar", "1000 bar"), method="linear")
    >>> round(r.P / 1e5, 1), round(r.relative_uncertainty, 2)
    (146.1, 0.06)
    """
    _check_method(method, samples, level)
    from .design import pressure_for_conversion
    db = database or bundled_database()
    nominal = pressure_for_conversion(species, feed, T, key, target, P_range=P_range, reactions=reactions,
                                      gas_model=gas_model, approach=approach, database=db)
    shape = np.shape(nominal.P)
    P0 = np.asarray(nominal.P, dtype=float).reshape(-1)
    T_op = np.broadcast_to(np.asarray(nominal.T, dtype=float), shape).reshape(-1)
    T_eq = np.broadcast_to(np.asarray(nominal.T_equilibrium, dtype=float), shape).reshape(-1)
    tg = np.broadcast_to(np.asarray(nominal.target, dtype=float), shape).reshape(-1)
    at_end = np.broadcast_to(np.asarray(nominal.at_range_end, dtype=bool), shape).reshape(-1)
    reached = np.isfinite(P0) & ~at_end
    lo, hi = (math.log(float(to_pascal(v))) for v in P_range)
    key_r = db.resolve(key)
    probe = equilibrium(species, feed, float(np.nanmean(T_eq)), math.exp(0.5 * (lo + hi)), reactions=reactions,
                        gas_model=gas_model, key=key_r, database=db, warn=False)
    system = _system(species, np.asarray(probe.feed_array, dtype=float)[None, :], list(probe.species),
                     probe.gas_mask, key=key_r, reactions=probe.reactions, gas_model=gas_model, database=db,
                     binary_interaction=None)
    pm = parameter_map(list(probe.species), database=db, overrides=overrides, defaults=defaults)

    def conversion_at(x, cases, shift):
        am, fe, _ = system.solve(T_eq[cases], np.exp(x), np.zeros(np.size(x), dtype=int), shift)
        return system.conversion(am, fe)

    x0 = np.log(np.where(reached, P0, 1.0))
    found = _inverse_interval(
        conversion_at, lambda rows: _dY_dg(_system_for_cases(system, P0[rows]), T_eq[rows], P0[rows])[:, 0, :],
        x0, reached, tg, T_eq, lo, hi, pm, method=method, samples=samples, seed=seed, level=level)
    with np.errstate(over="ignore"):
        lower, median, upper = (np.exp(found[k]) for k in ("lower", "median", "upper"))
        sample_P = None if found["samples"] is None else np.exp(found["samples"]).reshape((samples,) + shape)
    full = _interval_message(method, samples, seed, found, bool(np.any(np.isfinite(P0) & at_end)),
                             nominal.message)
    return PressureUncertainty(
        P=_shape_out(np.where(reached, P0, np.nan), shape), lower=_shape_out(lower, shape),
        median=_shape_out(median, shape), upper=_shape_out(upper, shape),
        relative_uncertainty=_shape_out(found["spread"], shape), reached=_shape_out(reached, shape),
        beyond_range=_shape_out(found["beyond"], shape), T=_shape_out(T_op, shape),
        target=_shape_out(tg, shape), key=key_r, method=method, level=float(level),
        samples=samples if method == "monte-carlo" else 0, seed=seed if method == "monte-carlo" else None,
        sensitivity=found["sens"].reshape(shape + (len(pm.data),)), data=pm.data, sample_P=sample_P,
        n_failed=_shape_out(found["n_failed"], shape), P_range=(math.exp(lo), math.exp(hi)),
        message=full[0] if not shape else np.array(full, dtype=object).reshape(shape))


@dataclass(frozen=True)
class FeedRatioUncertainty(_AnswerRanking):
    """The feed ratio for a target conversion, with its interval from data uncertainty.

    Attributes as :class:`PressureUncertainty`, with ``ratio``, ``lower``, ``median``,
    ``upper`` [mol/mol], ``relative_uncertainty`` = u(ln ratio) [-], ``ratio_name``,
    ``sample_ratio`` and the operating ``T`` [K] and ``P`` [Pa].
    """

    ratio: object
    lower: object
    median: object
    upper: object
    relative_uncertainty: object
    reached: object
    beyond_range: object
    T: object
    P: object
    target: object
    key: str
    ratio_name: str
    method: str
    level: float
    samples: int
    seed: int | None
    sensitivity: np.ndarray = field(repr=False)
    data: tuple = field(repr=False)
    sample_ratio: np.ndarray | None = field(default=None, repr=False)
    n_failed: object = 0
    message: object = ""

    @property
    def shape(self) -> tuple:
        return np.shape(self.ratio)



def feed_ratio_interval(species: Sequence[str], feed: Mapping[str, object], T, P, key: str, target, *,
                        ratio=("H2O", "CO"), ratio_range=(0.1, 10.0), reactions: Sequence[str] | None = None,
                        gas_model: str = "ideal", approach=None, database: SpeciesDatabase | None = None,
                        method: str = "monte-carlo", samples: int = 400, seed: int | None = 1,
                        level: float = 0.95, overrides: Mapping | None = None,
                        defaults: UncertaintyDefaults | None = None) -> FeedRatioUncertainty:
    """Feed ratio at which the conversion of ``key`` reaches ``target``, with its interval.

    The nominal answer is that of :func:`eqdesign.solve.design.feed_ratio_for_conversion`;
    the search variable is ln(ratio), otherwise as :func:`pressure_interval`.

    Examples
    --------
    Water-gas shift of CO at 500 K and 20 bar: steam-to-CO ratio for 99 % conversion,
    linearised:

    >>> r = feed_ratio_interval(["CO", "H2O", "CO2", "H2"], {"CO": 1}, 500, "20 bar", "CO", 0.99,
    ...                         ratio=("H2O", "CO"), ratio_range=(0.5, 10), method="linear")
    >>> round(r.ratio, 3), r.relative_uncertainty < 0.05
    (1.705, True)
    """
    _check_method(method, samples, level)
    from .design import feed_ratio_for_conversion
    from .sweep import feed_ratio_spec
    db = database or bundled_database()
    nominal = feed_ratio_for_conversion(species, feed, T, P, key, target, ratio=ratio, ratio_range=ratio_range,
                                        reactions=reactions, gas_model=gas_model, approach=approach, database=db)
    spec = feed_ratio_spec(ratio, db)
    shape = np.shape(nominal.ratio)
    r0 = np.asarray(nominal.ratio, dtype=float).reshape(-1)
    T_op = np.broadcast_to(np.asarray(nominal.T, dtype=float), shape).reshape(-1)
    P_c = np.broadcast_to(np.asarray(nominal.P, dtype=float), shape).reshape(-1)
    T_eq = np.broadcast_to(np.asarray(nominal.T_equilibrium, dtype=float), shape).reshape(-1)
    tg = np.broadcast_to(np.asarray(nominal.target, dtype=float), shape).reshape(-1)
    at_end = np.broadcast_to(np.asarray(nominal.at_range_end, dtype=bool), shape).reshape(-1)
    reached = np.isfinite(r0) & ~at_end
    lo, hi = (math.log(float(to_si(v, "dimensionless"))) for v in ratio_range)
    key_r = db.resolve(key)
    base = {db.resolve(k): float(to_si(v, "amount")) for k, v in feed.items()}
    species_all = list(species) + ([spec.numerator] if spec.numerator not in species else [])
    probe = equilibrium(species_all, spec.apply(base, np.exp(0.5 * (lo + hi)), db), float(np.nanmean(T_eq)),
                        float(np.nanmean(P_c)), reactions=reactions, gas_model=gas_model, key=key_r, database=db,
                        warn=False)
    names = list(probe.species)
    pm = parameter_map(names, database=db, overrides=overrides, defaults=defaults)

    def system_for(x):
        fed = spec.apply(base, np.exp(np.asarray(x, dtype=float)), db)
        rows = np.zeros((np.size(x), len(names)))
        for k, v in fed.items():
            rows[:, names.index(k)] = np.broadcast_to(v, np.shape(x))
        return _system(species_all, rows, names, probe.gas_mask, key=key_r, reactions=probe.reactions,
                       gas_model=gas_model, database=db, binary_interaction=None)

    def conversion_at(x, cases, shift):
        sysx = system_for(x)
        am, fe, _ = sysx.solve(T_eq[cases], P_c[cases], np.arange(np.size(x)), shift)
        return sysx.conversion(am, fe)

    x0 = np.log(np.where(reached, r0, 1.0))
    found = _inverse_interval(
        conversion_at, lambda rows: _dY_dg(system_for(x0[rows]), T_eq[rows], P_c[rows])[:, 0, :],
        x0, reached, tg, T_eq, lo, hi, pm, method=method, samples=samples, seed=seed, level=level)
    with np.errstate(over="ignore"):
        lower, median, upper = (np.exp(found[k]) for k in ("lower", "median", "upper"))
        sample_r = None if found["samples"] is None else np.exp(found["samples"]).reshape((samples,) + shape)
    full = _interval_message(method, samples, seed, found, bool(np.any(np.isfinite(r0) & at_end)),
                             nominal.message)
    return FeedRatioUncertainty(
        ratio=_shape_out(np.where(reached, r0, np.nan), shape), lower=_shape_out(lower, shape),
        median=_shape_out(median, shape), upper=_shape_out(upper, shape),
        relative_uncertainty=_shape_out(found["spread"], shape), reached=_shape_out(reached, shape),
        beyond_range=_shape_out(found["beyond"], shape), T=_shape_out(T_op, shape), P=_shape_out(P_c, shape),
        target=_shape_out(tg, shape), key=key_r, ratio_name=nominal.ratio_name, method=method,
        level=float(level), samples=samples if method == "monte-carlo" else 0,
        seed=seed if method == "monte-carlo" else None,
        sensitivity=found["sens"].reshape(shape + (len(pm.data),)), data=pm.data, sample_ratio=sample_r,
        n_failed=_shape_out(found["n_failed"], shape),
        message=full[0] if not shape else np.array(full, dtype=object).reshape(shape))


def _system_for_cases(system: _System, P_cases) -> _System:
    """The system with one feed row per case (the inverse questions share one feed)."""
    n = np.size(P_cases)
    return _System(system.names, {k: np.broadcast_to(v[:1], (n,)).copy() for k, v in system.feed.items()},
                   system.gas_mask, system.key, system.reactions, system.gas_model, system.database,
                   system.binary_interaction)


# =========================================================================== outputs
@dataclass(frozen=True)
class Band:
    """Band data for a plot: a quantity against an axis with its interval.

    Attributes
    ----------
    x : ndarray
        Axis values, increasing (temperature [K]).
    nominal, lower, median, upper : ndarray
        Quantity with the nominal data, interval ends and median [``unit``].
    level : float
    quantity, unit, x_label, method : str
    samples : int
    """

    x: np.ndarray
    nominal: np.ndarray
    lower: np.ndarray
    median: np.ndarray
    upper: np.ndarray
    level: float
    quantity: str
    unit: str
    x_label: str
    method: str
    samples: int = 0

    @property
    def label(self) -> str:
        """Legend text, e.g. ``"95 % interval (Monte Carlo, 400 draws)"``."""
        how = f"Monte Carlo, {self.samples} draws" if self.method == "monte-carlo" else "linearised"
        return f"{100 * self.level:.3g} % interval ({how})"

    def rows(self) -> list[dict]:
        """The band as table rows, headers carrying units."""
        lo, hi = _percent_labels(self.level)
        q, un = self.quantity, self.unit
        return [{self.x_label: float(x), f"{q} [{un}]": float(n), f"{q} {lo} [{un}]": float(a),
                 f"{q} median [{un}]": float(md), f"{q} {hi} [{un}]": float(b)}
                for x, n, a, md, b in zip(self.x, self.nominal, self.lower, self.median, self.upper)]


def ranking_rows(ranking: Sequence[RankedDatum], *, answer_unit: str = "K", top: int | None = None) -> list[dict]:
    """Table rows of a sensitivity ranking, headers carrying units.

    Columns: ``rank``, ``datum``, ``u`` and ``unit of u`` (J/mol or J/(mol K)), ``origin``,
    ``sensitivity [answer unit per datum unit]``, ``contribution [answer unit]``,
    ``share of variance [%]``.

    Examples
    --------
    >>> t = temperature_interval(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, "200 bar", "N2", 0.2,
    ...                          T_range=(500, 1000), method="linear")
    >>> row = ranking_rows(t.ranking(), top=1)[0]
    >>> row["datum"], round(row["contribution [K]"], 1), round(row["share of variance [%]"])
    ('ΔfH°(NH3)', 5.4, 99)
    """
    rows = []
    for e in list(ranking)[:top]:
        d = e.datum
        rows.append({"rank": e.rank, "datum": d.label, "u": d.u, "unit of u": d.unit, "origin": d.origin,
                     f"sensitivity [{answer_unit} per {d.unit}]": e.sensitivity,
                     f"contribution [{answer_unit}]": e.contribution, "share of variance [%]": 100.0 * e.share})
    return rows


def _h(x) -> str:
    return html.escape(str(x), quote=True)


def _num_cell(x, fmt: str) -> str:
    x = float(x)
    if math.isnan(x):
        return "&ndash;"
    if math.isinf(x):
        return "beyond range" if x > 0 else "below range"
    return format(x, fmt)


def _table(headers: Sequence[str], rows: Sequence[Sequence[str]], caption: str = "", text_cols=()) -> str:
    """An HTML table of pre-escaped cells; ``text_cols`` are left-aligned (class "text")."""
    def cls(j):
        return ' class="text"' if j in text_cols else ""
    out = ["<table>"]
    if caption:
        out.append(f"<caption>{_h(caption)}</caption>")
    out.append("<thead><tr>" + "".join(f"<th{cls(j)}>{_h(h)}</th>" for j, h in enumerate(headers))
               + "</tr></thead><tbody>")
    for r in rows:
        out.append("<tr>" + "".join(f"<td{cls(j)}>{c}</td>" for j, c in enumerate(r)) + "</tr>")
    out.append("</tbody></table>")
    return "\n".join(out)


def html_section(*, temperatures: Sequence[TemperatureUncertainty] = (),
                 equilibrium_result: EquilibriumUncertainty | None = None, figure_svg: str | None = None,
                 title: str = "Uncertainty from the thermodynamic data", top: int = 5,
                 band_points: int = 8, defaults: UncertaintyDefaults | None = None) -> str:
    """A self-contained HTML section (no external references) reporting the propagation.

    Parameters
    ----------
    temperatures : sequence of TemperatureUncertainty
        Inverse answers with intervals (one table row each; a ranking per answer).
    equilibrium_result : EquilibriumUncertainty, optional
        Conversion band over temperature (a table of ``band_points`` temperatures and the
        ranking averaged over the band).
    figure_svg : str, optional
        An SVG of the band plot (e.g. ``matplotlib`` ``savefig(format="svg")`` output);
        embedded inline without its XML declaration, DOCTYPE and metadata.
    title : str
    top : int
        Entries of each ranking shown.
    band_points : int
    defaults : UncertaintyDefaults, optional
        The defaults used (for the citations of key values); the bundled ones by default.

    Returns
    -------
    str
        ``<section class="eqd-uncertainty">...</section>``.

    Examples
    --------
    >>> t = temperature_interval(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, "200 bar", "N2", 0.2,
    ...                          T_range=(500, 1000), method="linear")
    >>> page = html_section(temperatures=[t])
    >>> page.startswith('<section class="eqd-uncertainty">'), "http" in page, "Caution" in page
    (True, False, True)
    """
    parts = [f'<section class="eqd-uncertainty">', f"<h2>{_h(title)}</h2>"]
    first = next(iter(temperatures), None) or equilibrium_result
    if first is None:
        raise UncertaintyInputError("html_section: give temperatures and/or equilibrium_result")
    method = ("Monte Carlo over the data (JCGM 101:2008), "
              f"{first.samples} draws, seed {first.seed}" if first.method == "monte-carlo"
              else "linearised propagation (GUM, JCGM 100:2008) with sensitivity coefficients by finite differences")
    parts.append(f"<p>Method: {_h(method)}; intervals cover {100 * first.level:.3g} % "
                 f"(from the {_percent_labels(first.level)[0]} to the {_percent_labels(first.level)[1]} "
                 f"point). Assumptions: {_h(ASSUMPTIONS)}.</p>")
    for t in temperatures:
        lo, hi = _percent_labels(t.level)
        rows = []
        for r in t.rows():
            rows.append([_num_cell(100 * r[f"target conversion {t.key} [-]"], ".4g"),
                         _num_cell(r["P [Pa]"] / 1e5, ".4g"), _num_cell(r["T [K]"], ".1f"),
                         _num_cell(r[f"T {lo} [K]"], ".1f"), _num_cell(r[f"T {hi} [K]"], ".1f"),
                         _num_cell(r["u(T) [K]"], ".2f")])
        parts.append(_table([f"target conversion {t.key} [%]", "P [bar]", "T [K]", f"T {lo} [K]",
                             f"T {hi} [K]", "u(T) [K]"], rows,
                            caption=f"Temperature for the target conversion of {t.key}"
                            + (f" (approach {t.approach:g} K)" if t.approach else "")))
        if np.any(np.asarray(t.beyond_range) > 0):
            parts.append("<p>Some draws reach the target only outside the search range; widen the range "
                         "to close the interval.</p>")
        parts.append(_ranking_html(t.ranking()[:top], "K", f"Data that move the temperature most ({t.key})"))
    if equilibrium_result is not None:
        e = equilibrium_result
        q = e.quantities[0]
        T = np.asarray(e.T, dtype=float).reshape(-1)
        pick = np.unique(np.linspace(0, T.size - 1, min(band_points, T.size)).round().astype(int))
        lo, hi = _percent_labels(e.level)
        rows = []
        flat = {k: np.asarray(v, dtype=float).reshape(-1) for k, v in e.columns(q).items()}
        Pf = np.broadcast_to(np.asarray(e.P, dtype=float), np.shape(e.T)).reshape(-1)
        for i in pick:
            rows.append([_num_cell(T[i], ".1f"), _num_cell(Pf[i] / 1e5, ".4g")]
                        + [_num_cell(v[i], ".4f") for v in flat.values()])
        parts.append(_table(["T [K]", "P [bar]"] + list(flat), rows, caption=f"{q} with its interval"))
        parts.append(_ranking_html(e.ranking(q)[:top], "-", f"Data that move {q} most (averaged over the band)"))
    if figure_svg:
        parts.append(f'<figure class="eqd-uncertainty-band">{_inline_svg(figure_svg)}</figure>')
    data = first.data
    rows = [[_h(d.label), _num_cell(d.u, ".4g"), _h(d.unit), _h(d.origin)] for d in data]
    parts.append(_table(["datum", "standard uncertainty u", "unit", "source of u"], rows,
                        caption="Standard uncertainties used", text_cols=(0, 2, 3)))
    defaults = defaults or _bundled_defaults()
    cited = []
    for d in data:
        for key, ref in defaults.references.items():
            if d.origin.endswith(f" {key}") and isinstance(ref, Mapping) and key not in [c[0] for c in cited]:
                cited.append((key, str(ref.get("cite", key))))
    notes = [f"{_h(k)}: {_h(c)}." for k, c in cited]
    notes.append(f"Class defaults: {_h(defaults.origin)}, where each class states its basis "
                 "(a source, or common practice without a source).")
    parts.append("<p>Sources of the uncertainties. " + " ".join(notes) + "</p>")
    parts.append(f'<p class="caution"><strong>Caution.</strong> {_h(CAUTION)}</p>')
    parts.append("</section>")
    return "\n".join(parts)


def _inline_svg(svg: str) -> str:
    """An SVG document made fit to sit inside HTML: the XML declaration and DOCTYPE (which
    names an external DTD) and the metadata block are dropped; xmlns namespace names stay
    (they are identifiers, never fetched)."""
    start = svg.find("<svg")
    if start < 0:
        raise UncertaintyInputError("figure_svg: no <svg> element found")
    svg = svg[start:]
    a, b = svg.find("<metadata"), svg.find("</metadata>")
    if a >= 0 and b > a:
        svg = svg[:a] + svg[b + len("</metadata>"):]
    return svg


def _ranking_html(ranking, unit: str, caption: str) -> str:
    rows = [[str(e.rank), _h(e.datum.label), _num_cell(e.datum.u, ".4g") + " " + _h(e.datum.unit),
             _num_cell(e.contribution, ".3g"), _num_cell(100 * e.share, ".1f")] for e in ranking]
    return _table(["rank", "datum", "u", f"contribution [{unit}]", "share of variance [%]"], rows, caption,
                  text_cols=(1,))


# =========================================================================== settings
@dataclass(frozen=True)
class UncertaintySettings:
    """What a case file's uncertainty switch maps to.

    Mapping layout (all keys optional)::

        {"method": "monte-carlo" | "linear",   # default "monte-carlo"
         "samples": 400,                        # Monte Carlo draws, 20 to 100000
         "seed": 1,                             # integer seed (reproducible); null for fresh entropy
         "level": 0.95,                         # coverage probability, or "95 %"
         "overrides": {"NH3": {"formation_enthalpy": "0.35 kJ/mol", "entropy": "0.05 J/(mol K)"}},
         "defaults": "path/to/uncertainty_defaults.yaml"}   # optional replacement defaults file

    :meth:`as_kwargs` gives the keyword arguments of :func:`propagate_equilibrium` and
    :func:`temperature_interval`.
    """

    method: str = "monte-carlo"
    samples: int = 400
    seed: int | None = 1
    level: float = 0.95
    overrides: Mapping = field(default_factory=dict)
    defaults_file: str | None = None

    def as_kwargs(self) -> dict:
        out = {"method": self.method, "samples": self.samples, "seed": self.seed, "level": self.level,
               "overrides": dict(self.overrides) or None}
        if self.defaults_file:
            out["defaults"] = UncertaintyDefaults.from_file(self.defaults_file)
        return out


SETTINGS_KEYS = ("method", "samples", "seed", "level", "overrides", "defaults")


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
    eqdesign.solve.uncertainty.UncertaintyInputError: uncertainty.samples: give a whole number from 20 to 100000, got 5
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
        problems.append(f"{where}.method: {method!r} is not one of {', '.join(METHODS)}")
    samples = mapping.get("samples", 400)
    if isinstance(samples, bool) or not isinstance(samples, (int, np.integer)) or not 20 <= samples <= 100_000:
        problems.append(f"{where}.samples: give a whole number from 20 to 100000, got {samples!r}")
    seed = mapping.get("seed", 1)
    if seed is not None and (isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0):
        problems.append(f"{where}.seed: give a non-negative whole number (or null), got {seed!r}")
    level = mapping.get("level", 0.95)
    lv = None
    if isinstance(level, str) and level.strip().endswith("%"):
        try:
            lv = float(level.strip().rstrip("%").strip()) / 100.0
        except ValueError:
            lv = None
    elif isinstance(level, _NUMBER) and not isinstance(level, bool):
        lv = float(level)
    if lv is None or not 0.5 <= lv < 1.0:
        problems.append(f"{where}.level: give a coverage probability from 0.5 to below 1 (e.g. 0.95 or '95 %'), "
                        f"got {level!r}")
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
                    _read_u(v, k, f"{where}.overrides.{name}.{k}")
                except UncertaintyInputError as exc:
                    problems.append(str(exc))
    defaults = mapping.get("defaults")
    if defaults is not None and not isinstance(defaults, str):
        problems.append(f"{where}.defaults: give the path of a defaults file as text")
    if problems:
        raise UncertaintyInputError("\n".join(problems))
    return UncertaintySettings(method=method, samples=int(samples), seed=None if seed is None else int(seed),
                               level=float(lv), overrides=dict(overrides), defaults_file=defaults)


__all__ = [
    "ASSUMPTIONS", "Band", "CAUTION", "DATUM_KINDS", "EquilibriumUncertainty", "LnKUncertainty", "METHODS",
    "ParameterMap", "RankedDatum", "TemperatureUncertainty", "UncertainDatum", "UncertaintyDefaults",
    "UncertaintyInputError", "UncertaintySettings", "html_section", "ln_K_uncertainty", "parameter_map",
    "propagate_equilibrium", "ranking_rows", "reaction_level_ln_K_uncertainty", "settings_from_mapping",
    "species_uncertainty", "temperature_interval",
]
