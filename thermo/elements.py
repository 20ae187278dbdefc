"""Elements: standard atomic weights and chemical-formula parsing.

Atomic weights [g/mol] are the IUPAC conventional / abridged standard atomic weights
(Prohaska et al., "Standard atomic weights of the elements 2021 (IUPAC Technical
Report)", Pure Appl. Chem. 94 (2022) 573-600) (from memory).
"""
from __future__ import annotations

import re

ATOMIC_WEIGHTS = {
    "H": 1.008, "He": 4.002602, "Li": 6.94, "Be": 9.0121831, "B": 10.81, "C": 12.011,
    "N": 14.007, "O": 15.999, "F": 18.998403162, "Ne": 20.1797, "Na": 22.98976928,
    "Mg": 24.305, "Al": 26.9815384, "Si": 28.085, "P": 30.973761998, "S": 32.06,
    "Cl": 35.45, "Ar": 39.95, "K": 39.0983, "Ca": 40.078, "Ti": 47.867, "V": 50.9415,
    "Cr": 51.9961, "Mn": 54.938043, "Fe": 55.845, "Co": 58.933194, "Ni": 58.6934,
    "Cu": 63.546, "Zn": 65.38, "Br": 79.904, "Kr": 83.798, "Mo": 95.95, "I": 126.90447,
    "Xe": 131.293, "Pt": 195.084, "Pb": 207.2,
    "Sr": 87.62, "Zr": 91.224, "Nb": 92.90637, "Cs": 132.90545196, "Ba": 137.327,
    "Ta": 180.94788, "Hg": 200.592,
    # deuterium, which the NASA files carry as an element: the atomic mass of 2H
    # (CODATA 2018 recommended values, from memory)
    "D": 2.01410177812,
}

_TOKEN = re.compile(r"([A-Z][a-z]?)(\d*)|(\()|(\))(\d*)")


def parse_formula(formula: str) -> dict[str, int]:
    """Element counts of a chemical formula such as ``"Ca(OH)2"`` or ``"CH3OCH3"``.

    A phase tag in parentheses at the end (``"C(gr)"``, ``"H2O(l)"``) and isomer
    prefixes (``"n-"``, ``"i-"``, ``"c-"``, ``"1-"``, ``"cis-2-"``) are ignored.

    >>> parse_formula("Ca(OH)2")
    {'Ca': 1, 'O': 2, 'H': 2}
    """
    body = re.sub(r"\((?:s|l|g|gr|cr\d?|liq|sol)\)$", "", formula.strip())
    body = re.sub(r"^(?:[a-z]+-)?(?:\d+-)?", "", body)
    stack: list[dict[str, int]] = [{}]
    pos = 0
    while pos < len(body):
        m = _TOKEN.match(body, pos)
        if not m:
            raise ValueError(f"cannot read chemical formula {formula!r} at {body[pos:]!r}")
        element, count, opening, closing, group_count = m.groups()
        if element:
            if element not in ATOMIC_WEIGHTS:
                raise ValueError(f"unknown element {element!r} in formula {formula!r}")
            stack[-1][element] = stack[-1].get(element, 0) + int(count or 1)
        elif opening:
            stack.append({})
        else:
            if len(stack) == 1:
                raise ValueError(f"unbalanced ')' in formula {formula!r}")
            group = stack.pop()
            for el, n in group.items():
                stack[-1][el] = stack[-1].get(el, 0) + n * int(group_count or 1)
        pos = m.end()
    if len(stack) != 1 or not stack[0]:
        raise ValueError(f"cannot read chemical formula {formula!r}")
    return stack[0]


def molar_mass(elements: dict[str, float]) -> float:
    """Molar mass [g/mol] from element counts.

    >>> round(molar_mass({"N": 1, "H": 3}), 3)
    17.031
    """
    try:
        return sum(ATOMIC_WEIGHTS[el] * n for el, n in elements.items())
    except KeyError as exc:
        raise ValueError(f"no atomic weight for element {exc.args[0]!r}") from None
