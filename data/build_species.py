#!/usr/bin/env python3
"""Regenerate ``data/species.yaml``, the eqdesign species database.

Run from anywhere::

    python data/build_species.py            # writes data/species.yaml and species.json beside it
    python data/build_species.py --check    # exit 1 if a file on disk differs

Inputs (read locally, no network):

* the NASA 7-coefficient polynomials of B. J. McBride, S. Gordon, M. A. Reno,
  *Coefficients for Calculating Thermodynamic and Transport Properties of Individual
  Species*, NASA TM-4513 (1993), as shipped in the data folder of the ``cantera``
  package (``nasa_gas.yaml``, ``nasa_condensed.yaml``);
* critical constants from the ``critical-properties.yaml`` file in the same folder,
  and, for species that file lacks, values recalled from B. E. Poling,
  J. M. Prausnitz, J. P. O'Connell, *The Properties of Gases and Liquids*, 5th ed.
  (2001), Appendix A (from memory, marked as such in the output);
* molar masses from the IUPAC 2021 standard atomic weights (table in ``species_table.py``).

The species we carry, their names, phases and the NASA record each one comes from
are listed explicitly in ``GAS_SPECIES`` and ``CONDENSED_SPECIES`` (``species_table.py``);
every other uncharged NASA record is taken over with a derived name. The script checks
every record it writes (composition against its formula, 7 coefficients per range,
increasing temperature bounds, unique names and aliases) and fails loudly otherwise.
Output is deterministic: running it twice gives byte-identical files.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import re
import sys
from decimal import Decimal

import yaml

SCHEMA = "eqdesign.species/1"

# The tables (references, atomic weights, curated rows) live beside this script.
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from species_table import (  # noqa: E402
    ATOMIC_WEIGHTS, CONDENSED_SPECIES, GAS_SPECIES, LEFT_OUT, RANGE_LIMITS, REF_ATOMIC_WEIGHTS,
    REF_CRIT_FILE, REF_NASA, REF_POLING, REFERENCES,
)

MAX_JUMP_RT = 1e-3          # largest h step allowed at an internal range bound: 1e-3 RT + 5 J/mol
MAX_JUMP_J = 5.0

PERMANENT_GASES = {"H2", "N2", "O2", "Ar", "He", "Ne", "Kr", "Xe"}
GROUPS = ["permanent", "C-H-O", "N", "S", "Cl", "other elements", "condensed"]
CURATED_ELEMENTS = {"C", "H", "O", "N", "S", "Cl"}

CONVERTED_NOTE = "converted exactly from 9-coefficient form"


# ---------------------------------------------------------------------------------
# Reading cantera's bundled files.
# ---------------------------------------------------------------------------------
class _PlainLoader(yaml.SafeLoader):
    """SafeLoader without YAML 1.1 booleans, so that a species named NO stays 'NO'."""


_PlainLoader.yaml_implicit_resolvers = {
    first: [(tag, rx) for tag, rx in resolvers if tag != "tag:yaml.org,2002:bool"]
    for first, resolvers in yaml.SafeLoader.yaml_implicit_resolvers.items()
}


def cantera_data_dir():
    """Folder of data files bundled with the installed cantera package [path]."""
    import cantera

    return os.path.join(os.path.dirname(cantera.__file__), "data")


def load_yaml(path):
    """Parse a YAML file with ``_PlainLoader`` and return (document, sha256 hex)."""
    with open(path, "rb") as handle:
        raw = handle.read()
    return yaml.load(raw.decode("utf-8"), Loader=_PlainLoader), hashlib.sha256(raw).hexdigest()


def index_by_name(document, path):
    """Map species name -> record; fail on duplicate names."""
    out = {}
    for record in document["species"]:
        name = str(record["name"])
        if name in out:
            raise ValueError(f"{path}: duplicate species name {name!r}")
        out[name] = record
    return out


# ---------------------------------------------------------------------------------
# Conversions and checks.
# ---------------------------------------------------------------------------------
_TOKEN = re.compile(r"([A-Z][a-z]?)(\d*)|(\()|(\))(\d*)")


def parse_formula(formula):
    """Element counts of a formula such as ``Ca(OH)2`` -> {'Ca': 1, 'O': 2, 'H': 2}.

    Elements are listed in order of first appearance.
    """
    stack = [{}]
    pos = 0
    while pos < len(formula):
        match = _TOKEN.match(formula, pos)
        if not match:
            raise ValueError(f"cannot parse formula {formula!r} at {formula[pos:]!r}")
        element, count, opening, closing, group_count = match.groups()
        if element:
            counts = stack[-1]
            counts[element] = counts.get(element, 0) + int(count or 1)
        elif opening:
            stack.append({})
        else:
            inner = stack.pop()
            multiplier = int(group_count or 1)
            for el, n in inner.items():
                stack[-1][el] = stack[-1].get(el, 0) + n * multiplier
        pos = match.end()
    if len(stack) != 1:
        raise ValueError(f"unbalanced parentheses in {formula!r}")
    return stack[0]


def molar_mass(elements):
    """Molar mass [g/mol] from element counts, summed exactly in decimal."""
    total = sum(Decimal(ATOMIC_WEIGHTS[el]) * n for el, n in elements.items())
    return float(total)


def nasa7_rows(thermo, name):
    """Return (T_bounds, rows of 7 floats, converted?) from a cantera thermo block.

    NASA7 blocks are taken as they stand. NASA9 blocks whose first two coefficients
    are zero in every range are NASA7 exactly: (a3..a7, b1, b2) -> (a1..a5, a6, a7).
    Anything else raises ValueError.
    """
    model = thermo["model"]
    bounds = [float(t) for t in thermo["temperature-ranges"]]
    data = [[float(x) for x in row] for row in thermo["data"]]
    if model == "NASA7":
        rows, converted = data, False
    elif model == "NASA9":
        if any(row[0] != 0.0 or row[1] != 0.0 for row in data):
            raise ValueError(f"{name}: NASA9 record with T^-2 or T^-1 terms; not convertible")
        rows, converted = [row[2:9] for row in data], True
    else:
        raise ValueError(f"{name}: unknown thermo model {model!r}")
    if len(bounds) != len(rows) + 1:
        raise ValueError(f"{name}: {len(bounds)} bounds for {len(rows)} ranges")
    if any(b >= c for b, c in zip(bounds, bounds[1:])):
        raise ValueError(f"{name}: temperature bounds not increasing: {bounds}")
    if any(len(row) != 7 for row in rows):
        raise ValueError(f"{name}: expected 7 coefficients per range")
    return bounds, rows, converted


def check_continuity(name, bounds, rows):
    """Fail unless h steps by less than MAX_JUMP_RT * RT + MAX_JUMP_J at every internal bound."""
    for T, lower, upper in zip(bounds[1:-1], rows, rows[1:]):
        h_RT = [a[0] + a[1] * T / 2 + a[2] * T**2 / 3 + a[3] * T**3 / 4 + a[4] * T**4 / 5 + a[5] / T
                for a in (lower, upper)]
        if abs(h_RT[1] - h_RT[0]) > MAX_JUMP_RT + MAX_JUMP_J / (8.314462618 * T):
            raise ValueError(f"{name}: h/RT jumps by {h_RT[1] - h_RT[0]:.4g} at {T} K; add it to LEFT_OUT")


def check_composition(our_name, formula, nasa_record):
    """Fail unless the formula's elements equal the NASA record's composition."""
    from_formula = parse_formula(formula)
    nasa = {str(k): int(v) for k, v in nasa_record["composition"].items()}
    if from_formula != nasa:
        raise ValueError(
            f"{our_name}: formula {formula} gives {from_formula}, NASA record "
            f"{nasa_record['name']} has {nasa}"
        )
    return from_formula


def group_of(name, elements, phase):
    """Output group used to order the file (see GROUPS)."""
    if phase != "gas":
        return "condensed"
    if name in PERMANENT_GASES:
        return "permanent"
    if set(elements) - CURATED_ELEMENTS:
        return "other elements"
    for marker in ("Cl", "S", "N"):
        if marker in elements:
            return marker
    if set(elements) <= {"C", "H", "O"}:
        return "C-H-O"
    raise ValueError(f"{name}: no output group for elements {sorted(elements)}")


def critical_block(spec, crit_index):
    """Build the ``critical`` mapping from a from_file/poling spec (or None)."""
    if spec is None:
        return None
    if spec[0] == "file":
        _, key, descriptive = spec
        record = crit_index[key]
        if record.get("descriptive-name") != descriptive:
            raise ValueError(
                f"critical-properties entry {key}: expected {descriptive!r}, "
                f"found {record.get('descriptive-name')!r}"
            )
        params = record["critical-parameters"]
        return {
            "Tc": float(params["critical-temperature"]),
            "Pc": float(params["critical-pressure"]),
            "omega": float(params["acentric-factor"]),
            "reference": REF_CRIT_FILE,
        }
    _, Tc, Pc_bar, omega = spec
    return {
        "Tc": float(Decimal(Tc)),
        "Pc": float(Decimal(Pc_bar) * 100000),
        "omega": float(Decimal(omega)),
        "reference": REF_POLING,
    }


def fix_case(text, composition):
    """NASA writes some two-letter element symbols in capitals (``CL``, ``AL``): restore them."""
    for element in sorted(composition, key=len, reverse=True):
        if len(element) == 2:
            text = text.replace(element.upper(), element)
    return text


def formula_of(base, composition):
    """``base`` when it parses to ``composition``, else the composition written out."""
    try:
        if parse_formula(base) == composition:
            return base
    except ValueError:
        pass
    return "".join(f"{el}{n if n != 1 else ''}" for el, n in composition.items())


def auto_name(nasa_name, composition, phase, condensed_formulas):
    """Our name for a NASA record without a curated row, and its formula.

    Element symbols get their normal case; a liquid's ``(L)`` becomes ``(l)``; a gas atom of
    an element that also has a condensed form in the file gets ``(g)`` (``Fe(g)``), so that
    the bare symbol is never read as the gas by mistake.
    """
    fixed = fix_case(nasa_name, composition)
    if phase == "gas":
        base = fixed.split(",")[0]
        formula = formula_of(base, composition)
        if len(composition) == 1 and list(composition.values()) == [1] and fixed in condensed_formulas:
            return f"{fixed}(g)", formula
        return fixed, formula
    match = re.match(r"^(.*)\(([^()]*)\)$", fixed)
    base, tag = match.group(1), match.group(2)
    tag = "l" if tag == "L" else tag
    return f"{base}({tag})", formula_of(base, composition)


def is_charged(record):
    """An ion or the electron: an E in the composition, or a formula ending in + or - (the
    bundled Zn+ record lacks the E; "C3H4,cyclo-" is not an ion)."""
    name = str(record["name"])
    return "E" in {str(k) for k in record["composition"]} or ("," not in name and name.endswith(("+", "-")))


def auto_entries(gas_index, condensed_index):
    """Entries for every uncharged NASA record that no curated row takes."""
    used_gas = {row[1] for row in GAS_SPECIES}
    used_condensed = {row[1] for row in CONDENSED_SPECIES}
    condensed_formulas = set()
    for record in condensed_index.values():
        composition = {str(k): int(v) for k, v in record["composition"].items()}
        if len(composition) == 1 and list(composition.values()) == [1]:
            condensed_formulas.add(next(iter(composition)))
    entries = []
    for index, used, phase_of in ((gas_index, used_gas, lambda n: "gas"),
                                  (condensed_index, used_condensed,
                                   lambda n: "liquid" if n.endswith("(L)") else "solid")):
        for nasa_name, record in index.items():
            if nasa_name in used or is_charged(record):
                continue
            composition = {str(k): int(v) for k, v in record["composition"].items()}
            phase = phase_of(nasa_name)
            name, formula = auto_name(nasa_name, composition, phase, condensed_formulas)
            if name in LEFT_OUT:
                continue
            entries.append((name, record, formula, phase, "", [], None))
    return entries


def build_records(gas_index, condensed_index, crit_index):
    """Assemble species records in output order; returns a list of (name, record)."""
    entries = []
    for name, nasa_name, formula, common, aliases, crit in GAS_SPECIES:
        entries.append((name, gas_index[nasa_name], formula, "gas", common, aliases, crit))
    for name, nasa_name, formula, phase, common, aliases in CONDENSED_SPECIES:
        entries.append((name, condensed_index[nasa_name], formula, phase, common, aliases, None))
    entries.extend(auto_entries(gas_index, condensed_index))

    records = []
    for position, (name, nasa, formula, phase, common, aliases, crit) in enumerate(entries):
        elements = check_composition(name, formula, nasa)
        bounds, rows, converted = nasa7_rows(nasa["thermo"], nasa["name"])
        check_continuity(name, bounds, rows)
        note = str(nasa["thermo"].get("note", "")).strip()
        if converted:
            note = f"{note}; {CONVERTED_NOTE}" if note else CONVERTED_NOTE
        if name in RANGE_LIMITS:
            t_min, range_key = RANGE_LIMITS[name]
            if not bounds[0] < t_min < bounds[1]:
                raise ValueError(f"{name}: limit {t_min} K outside its first range {bounds[:2]}")
            note = (f"{note}; lower bound raised from {bounds[0]:g} K to {t_min:g} K, "
                    f"{REFERENCES[range_key]['reason']} (references.{range_key})")
            bounds = [t_min] + bounds[1:]
        record = {
            "formula": formula,
            "common_name": common,
        }
        if aliases:
            record["aliases"] = list(aliases)
        record.update(
            {
                "elements": elements,
                "phase": phase,
                "molar_mass": molar_mass(elements),
                "thermo": {
                    "model": "nasa7",
                    "T_bounds": bounds,
                    "coefficients": rows,
                    "reference": REF_NASA,
                    "data_note": note,
                },
            }
        )
        block = critical_block(crit, crit_index)
        if block is not None:
            record["critical"] = block
        group = GROUPS.index(group_of(name, elements, phase))
        records.append((group, position, name, record))
    records.sort(key=lambda item: (item[0], item[1]))
    check_names(records)
    return [(name, record) for _, _, name, record in records]


def check_names(records):
    """Fail on duplicate names or aliases, or an alias that is another species' name."""
    names = [name for _, _, name, _ in records]
    if len(set(names)) != len(names):
        raise ValueError("duplicate species names")
    # Names may differ only in case where the chemistry does (CS2 carbon disulfide, Cs2
    # dicesium); the database then refuses a case-insensitive lookup that fits both.
    folded = {}
    for name in names:
        folded.setdefault(name.lower(), name)
    seen = {}
    for _, _, name, record in records:
        for alias in record.get("aliases", []):
            if alias != alias.lower():
                raise ValueError(f"{name}: alias {alias!r} is not lower-case")
            if alias in seen:
                raise ValueError(f"alias {alias!r} used by {seen[alias]} and {name}")
            if alias in folded and folded[alias].lower() != name.lower():
                raise ValueError(f"alias {alias!r} of {name} is another species' name")
            seen[alias] = name


# ---------------------------------------------------------------------------------
# Writing. A small emitter of our own keeps the layout fixed and the numbers exact.
# ---------------------------------------------------------------------------------
def fmt_float(x):
    """repr() of a float, with a '.0' added to bare exponents so YAML 1.1 reads a float."""
    text = repr(float(x))
    if "e" in text and "." not in text.split("e")[0]:
        mantissa, exponent = text.split("e")
        text = f"{mantissa}.0e{exponent}"
    return text


def fmt_scalar(value):
    if isinstance(value, bool):
        raise TypeError("booleans are not used in this file")
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return fmt_float(value)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)
    raise TypeError(f"cannot format {value!r}")


def fmt_flow(values):
    return "[" + ", ".join(fmt_scalar(v) for v in values) + "]"


def emit_species(name, record):
    lines = [f"  {json.dumps(name)}:"]
    pad = "    "
    lines.append(f"{pad}formula: {fmt_scalar(record['formula'])}")
    lines.append(f"{pad}common_name: {fmt_scalar(record['common_name'])}")
    if "aliases" in record:
        lines.append(f"{pad}aliases: {fmt_flow(record['aliases'])}")
    elements = ", ".join(f"{json.dumps(el)}: {n}" for el, n in record["elements"].items())
    lines.append(f"{pad}elements: {{{elements}}}")
    lines.append(f"{pad}phase: {record['phase']}")
    lines.append(f"{pad}molar_mass: {fmt_float(record['molar_mass'])}")
    thermo = record["thermo"]
    lines.append(f"{pad}thermo:")
    lines.append(f"{pad}  model: {thermo['model']}")
    lines.append(f"{pad}  T_bounds: {fmt_flow(thermo['T_bounds'])}")
    lines.append(f"{pad}  coefficients:")
    for row in thermo["coefficients"]:
        lines.append(f"{pad}    - {fmt_flow(row)}")
    lines.append(f"{pad}  reference: {thermo['reference']}")
    lines.append(f"{pad}  data_note: {fmt_scalar(thermo['data_note'])}")
    if "critical" in record:
        crit = record["critical"]
        lines.append(f"{pad}critical:")
        lines.append(f"{pad}  Tc: {fmt_float(crit['Tc'])}")
        lines.append(f"{pad}  Pc: {fmt_float(crit['Pc'])}")
        lines.append(f"{pad}  omega: {fmt_float(crit['omega'])}")
        lines.append(f"{pad}  reference: {crit['reference']}")
    return lines


def render(records, provenance):
    lines = [
        "# eqdesign species database. Generated by data/build_species.py; do not edit by",
        "# hand: change the script and run it again. Units: K, Pa, g/mol; thermo",
        "# coefficients are dimensionless NASA 7-coefficient polynomials (cp/R, h/RT, s/R).",
        "# Inputs read:",
    ]
    for label, digest in provenance:
        lines.append(f"#   {label} sha256 {digest}")
    lines += [
        f"schema: {SCHEMA}",
        f"molar_mass_reference: {REF_ATOMIC_WEIGHTS}",
        "references:",
    ]
    for key, ref in REFERENCES.items():
        lines.append(f"  {key}:")
        for field, value in ref.items():
            lines.append(f"    {field}: {fmt_scalar(value)}")
    lines.append("species:")
    current = None
    for name, record in records:
        group = group_of(name, record["elements"], record["phase"])
        if group != current:
            lines.append(f"  # --- {group} ---")
            current = group
        lines.extend(emit_species(name, record))
    return "\n".join(lines) + "\n"


def compact_json(text):
    """The same document as one line of JSON (``species.json``), which loads about thirty
    times faster than the YAML; the database reads this form of the bundled file."""
    document = yaml.load(text, Loader=_PlainLoader)
    document["generated_from"] = "species.yaml (see data/README.md); do not edit by hand"
    return json.dumps(document, ensure_ascii=False, separators=(",", ":")) + "\n"


def build():
    """Read cantera's bundled files and return the text of species.yaml."""
    import cantera

    folder = cantera_data_dir()
    gas_doc, gas_sha = load_yaml(os.path.join(folder, "nasa_gas.yaml"))
    cond_doc, cond_sha = load_yaml(os.path.join(folder, "nasa_condensed.yaml"))
    crit_doc, crit_sha = load_yaml(os.path.join(folder, "critical-properties.yaml"))
    records = build_records(
        index_by_name(gas_doc, "nasa_gas.yaml"),
        index_by_name(cond_doc, "nasa_condensed.yaml"),
        index_by_name(crit_doc, "critical-properties.yaml"),
    )
    provenance = [
        (f"cantera {cantera.__version__} data/nasa_gas.yaml", gas_sha),
        (f"cantera {cantera.__version__} data/nasa_condensed.yaml", cond_sha),
        (f"cantera {cantera.__version__} data/critical-properties.yaml", crit_sha),
    ]
    text = render(records, provenance)
    # Round trip: the text must parse back to exactly the records we built.
    parsed = yaml.safe_load(text)
    if parsed["species"] != dict(records):
        raise AssertionError("species.yaml does not parse back to the records written")
    return text


def main(argv=None):
    parser = argparse.ArgumentParser(description="Regenerate data/species.yaml.")
    parser.add_argument(
        "--output",
        default=os.path.join(os.path.dirname(os.path.abspath(__file__)), "species.yaml"),
        help="file to write [path] (default: species.yaml beside this script)",
    )
    parser.add_argument(
        "--check", action="store_true", help="only compare with the file on disk"
    )
    args = parser.parse_args(argv)
    text = build()
    outputs = [(args.output, text),
               (os.path.splitext(args.output)[0] + ".json", compact_json(text))]
    if args.check:
        stale = 0
        for path, content in outputs:
            try:
                with open(path, encoding="utf-8") as handle:
                    same = handle.read() == content
            except FileNotFoundError:
                same = False
            stale += not same
            print(f"{path}: {'up to date' if same else 'differs from a fresh build'}")
        return 0 if stale == 0 else 1
    for path, content in outputs:
        with open(path, "w", encoding="utf-8", newline="\n") as handle:
            handle.write(content)
    n_gas = sum(1 for line in text.splitlines() if line.strip() == "phase: gas")
    n_all = sum(1 for line in text.splitlines() if line.strip().startswith("phase: "))
    print(f"wrote {args.output}: {n_gas} gases, {n_all - n_gas} condensed species")
    return 0


if __name__ == "__main__":
    sys.exit(main())
