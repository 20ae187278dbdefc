"""Case-file checks that refuse inputs which would otherwise give a wrong answer quietly."""
from __future__ import annotations

import pathlib

import pytest

from eqdesign.solve.casefile.reader import parse_case
from eqdesign.solve.casefile.yaml_lines import CaseError

ROOT = pathlib.Path(__file__).resolve().parents[2]
ACID = (ROOT / "cases" / "sulfuric_acid_converter.yaml").read_text()
SHIFT = (ROOT / "cases" / "shift_converters.yaml").read_text()


def problems_of(text: str) -> list[str]:
    with pytest.raises(CaseError) as info:
        parse_case(text, "x.yaml")
    return [str(p) for p in info.value.problems]


def test_removing_the_key_reactant_between_beds_is_refused():
    """Taking SO2 out after bed 1 counted the removed SO2 as converted (99.38 % reported when
    69 % had reacted, negative conversions in later beds)."""
    text = ACID.replace("interstage_removal: {3: SO3}", "interstage_removal: {1: SO2}")
    assert text != ACID
    msgs = problems_of(text)
    assert any("studies.staged_beds.interstage_removal.1" in m and "SO2 is the key reactant: removing it "
               "between beds would count the removed amount as converted; remove a product (or an inert) "
               "instead" in m for m in msgs), msgs


def test_empty_reactions_with_only_named_reactions_is_refused():
    """`reactions: {}` switched quietly to the all-species mode."""
    head, rest = SHIFT.split("  reactions:", 1)
    # drop the named reactions block (indented lines under it) and put an empty one
    lines = rest.splitlines(keepends=True)
    i = 1
    while i < len(lines) and lines[i].startswith("    "):
        i += 1
    text = head + "  reactions: {}\n" + "".join(lines[i:])
    assert "only_named_reactions: true" in text
    msgs = problems_of(text)
    assert any("chemistry.reactions" in m and "is empty, which would let every species form" in m
               for m in msgs), msgs


def test_the_staged_converter_refuses_removing_the_key_reactant():
    from eqdesign.solve.core.result import EquilibriumInputError
    from eqdesign.solve.studies.beds import staged_converter
    with pytest.raises(EquilibriumInputError, match="SO2 is the key reactant, and removing it would count"):
        staged_converter(["SO2", "O2", "SO3", "N2"], {"SO2": 10, "O2": 11, "N2": 79}, 1.2e5, "SO2", 693.15,
                         reactions=["SO2 + 1/2 O2 = SO3"], n_beds=3, interstage_removal={1: "SO2"})
