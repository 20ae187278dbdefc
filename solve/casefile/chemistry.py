"""The ``chemistry`` block of a case file: species, named reactions, key and product, gas
model and approach margin.  Reactions are read by :meth:`eqdesign.thermo.Reaction.parse`.
"""
from __future__ import annotations

import difflib
import re
from dataclasses import dataclass
from typing import Mapping

from ...thermo.database import SpeciesDatabase
from ...thermo.reactions import Reaction, ReactionError
from ...thermo.units import excerpt
from .checker import Checker, join_path, resolve_species
from .schema import CHEMISTRY_KEYS, GAS_MODELS


@dataclass(frozen=True)
class Chemistry:
    """The checked ``chemistry`` block (``ok`` False when its species or reactions had problems).

    ``reactions``: (name, text) of each named reaction; ``parsed``: the same as
    :class:`Reaction`; ``approach``: the margin [K]; ``block``: the YAML mapping (None when
    missing or malformed), for line numbers.
    """

    species: tuple
    reactions: tuple
    parsed: tuple
    only_named: bool
    gas_model: str
    approach: float
    ok: bool
    block: object


def read_chemistry(doc, ck: Checker, db: SpeciesDatabase) -> Chemistry:
    """Check the ``chemistry`` block against ``db`` (the database with the user species).

    Long because the block's keys are read in order, each with its own message; split
    further it would only pass the same six locals around.
    """
    species: list[str] = []
    reactions: list[tuple[str, str]] = []
    parsed_reactions: list[Reaction] = []
    only_named = True
    gas_model = "ideal"
    approach = 0.0
    chem = ck.section(doc, "chemistry", "chemistry", CHEMISTRY_KEYS, ("species", "key")) if "chemistry" in doc else None
    chem_ok = chem is not None
    if chem is not None:
        raw = chem.get("species")
        if "species" in chem:
            if isinstance(raw, str):
                raw = [s for s in re.split(r"[,\s]+", raw) if s]
            if not isinstance(raw, list) or not raw:
                ck.add("chemistry.species", "give a list of species names, e.g. [N2, H2, NH3]",
                       ck.line_of(chem, "species"))
                chem_ok = False
            else:
                for i, name in enumerate(raw):
                    resolved = resolve_species(ck, db, name, f"chemistry.species[{i}]", ck.line_of(chem, "species"))
                    if resolved is None:
                        chem_ok = False
                    elif resolved not in species:
                        species.append(resolved)
        if "reactions" in chem:
            rx = chem["reactions"]
            items: list = []
            if isinstance(rx, Mapping):
                ck.duplicates(rx, "chemistry.reactions")
                items = [(str(k), v, join_path("chemistry.reactions", str(k)), ck.line_of(rx, k)) for k, v in rx.items()]
            elif isinstance(rx, list):
                items = [(f"R{i + 1}", v, f"chemistry.reactions[{i}]", ck.line_of(rx, i)) for i, v in enumerate(rx)]
            else:
                ck.add("chemistry.reactions", "give named reactions as 'name: \"A + B = C\"' lines or a list "
                       "of reaction texts", ck.line_of(chem, "reactions"))
                chem_ok = False
            if isinstance(rx, (Mapping, list)) and not items:
                ck.add("chemistry.reactions", "is empty, which would let every species form; name at least one "
                       "reaction, or remove the key (and only_named_reactions) for the all-species mode",
                       ck.line_of(chem, "reactions"))
                chem_ok = False
            for name, value, path, line in items:
                if not isinstance(value, str):
                    ck.add(path, "a reaction is text such as 'N2 + 3 H2 = 2 NH3'", line)
                    chem_ok = False
                    continue
                try:
                    r = Reaction.parse(value, db)
                except ReactionError as exc:
                    msg = str(exc)
                    if "does not balance" in msg:
                        msg += "; correct the coefficients"
                    elif "unknown species" in msg:
                        msg += " (a species missing from the database can be added under user_species)"
                    ck.add(path, msg, line)
                    chem_ok = False
                    continue
                reactions.append((name, r.text))
                parsed_reactions.append(r)
                for n in r.names:
                    if n not in species:
                        species.append(n)
        only_named = ck.boolean(chem, "only_named_reactions", "chemistry.only_named_reactions", True)
        if only_named and "only_named_reactions" in chem and chem["only_named_reactions"] is True and not reactions \
                and "reactions" not in chem:
            ck.add("chemistry.only_named_reactions", "is true but no reactions are named; add "
                   "chemistry.reactions or remove only_named_reactions", ck.line_of(chem, "only_named_reactions"))
        if "gas_model" in chem:
            gm = chem["gas_model"]
            if gm not in GAS_MODELS:
                close = difflib.get_close_matches(str(gm), GAS_MODELS, n=1, cutoff=0.4)
                ck.add("chemistry.gas_model", f"{excerpt(gm)} is not a gas model; use "
                       + (f"'{close[0]}'" if close else " or ".join(GAS_MODELS)), ck.line_of(chem, "gas_model"))
            else:
                gas_model = gm
        if "approach" in chem:
            a = ck.quantity(chem, "approach", "chemistry.approach", "temperature_difference")
            if a is not None:
                if a < 0 or a > 200:
                    ck.add("chemistry.approach", f"{excerpt(chem['approach'])}: an approach margin lies between 0 and "
                           "200 K; a typical value is 0-30 K", ck.line_of(chem, "approach"))
                else:
                    approach = a

    return Chemistry(tuple(species), tuple(reactions), tuple(parsed_reactions), only_named, gas_model, approach,
                     chem_ok, chem)


def key_and_product(ck: Checker, chem: Chemistry, db: SpeciesDatabase, feed, species) -> tuple:
    """(key, product) resolved and checked against the feed, the species and the named reactions."""
    block = chem.block
    key = product = None
    if block is not None and "key" in block:
        key = resolve_species(ck, db, block["key"], "chemistry.key", ck.line_of(block, "key"))
        if key is not None and feed is not None and feed.get(key, 0.0) <= 0:
            ck.add("chemistry.key", f"the key reactant {key} is not in the feed, so its conversion is "
                   "undefined; feed it or choose a fed reactant as key", ck.line_of(block, "key"))
            key = None
    if block is not None and "product" in block:
        product = resolve_species(ck, db, block["product"], "chemistry.product", ck.line_of(block, "product"))
        if product is not None and product not in species:
            ck.add("chemistry.product", f"{product} is not among the species of the system; add it to "
                   "chemistry.species", ck.line_of(block, "product"))
            product = None
    if chem.reactions and chem.only_named and key is not None and chem.parsed:
        if not any(key in r.names for r in chem.parsed):
            ck.add("chemistry.key", f"{key} takes part in none of the named reactions, so it cannot convert; "
                   "choose a reactant of the named reactions", ck.line_of(block, "key"))
            key = None
    return key, product
