"""Case files: the YAML layout of an eqdesign design study, read and checked in full.

A case file describes one design question for one reacting system: the species, the
feed, optional named reactions, the gas model and approach margin, the temperature and
pressure window, the studies to run and the outputs wanted.  :func:`load_case` reads the
file, checks *everything* before any work starts, and returns a frozen :class:`Case` with
SI floats inside (K, Pa, mol, mol/s, J/mol).  Every problem found becomes one
:class:`CaseProblem` naming the file, the key path, the line and the fix; they are raised
together as :class:`CaseError`.

Layout (``layout: eqdesign-case/1``; the demo cases in ``cases/`` show every block)::

    layout: eqdesign-case/1
    job:          {title, scenario, prepared_by, notes}
    chemistry:    {species, key, product, reactions, only_named_reactions, gas_model, approach}
    user_species: {NAME: {formula, phase, source, critical, formation_data | reaction_data}}
    feed:         {composition: {SPECIES: amount}, flow}
    conditions:   {temperature: {low, high, points}, pressure: [options] | {low, high, points}}
    studies:      {conversion_map, targets, pressure_options, staged_beds, carbon_limit, uncertainty}
    output:       {plots: [png, svg], tables: true, report: true}

Numbers carry units as text read by :mod:`eqdesign.thermo.units` (``"450 degC"``, ``"30 bar"``,
``"kmol/h"``, ``"-92.2 kJ/mol"``; never evaluated as expressions); ``mol%`` in a feed is read
there too (pint would read it as mol × percent).  Temperatures and pressures must carry a unit; gauge pressures
(``barg``, ``psig``) are refused because equilibrium needs absolute pressure.
"""
from __future__ import annotations

import difflib
import math
import re
from pathlib import Path
from typing import Mapping


import yaml

from ...thermo.database import SpeciesDatabase
from ...thermo.reactions import Reaction, ReactionError, bundled_database
from ...thermo.species import Species
from ...thermo.units import UnitError, dimension_name, excerpt, is_quantity, parse_quantity, percent_value, scalar_to_si
from .checker import (
    REQUIRED_HINTS, Checker, check_critical, check_data_range, join_path, report_non_finite, resolve_species,
)
from .schema import (
    CHEMISTRY_KEYS, CONDITIONS_KEYS, FEED_KEYS, GAS_MODELS, JOB_KEYS, LAYOUT_ID, TOP_KEYS, TOP_REQUIRED, Case,
    OutputChoices, UserSpeciesRecord,
)
from .studies import StudyContext, read_output, read_studies
from .user_species import read_user_species
from .workload import estimate_work
from .yaml_lines import MAX_FILE_BYTES, CaseError, CaseProblem, YamlLimitError, read_yaml
# ====================================================================== loading


def load_case(path: str | Path, *, database: SpeciesDatabase | None = None) -> Case:
    """Read and check a case file completely.

    Parameters
    ----------
    path : str | Path
        The case file (YAML, layout ``eqdesign-case/1``).
    database : SpeciesDatabase, optional
        Base species database (the bundled one by default); user species are added to it.

    Returns
    -------
    Case

    Raises
    ------
    CaseError
        With one :class:`CaseProblem` per problem found; nothing has been computed.
    """
    file = str(path)
    try:
        with open(path, "rb") as handle:      # at most one byte past the limit is read
            data = handle.read(MAX_FILE_BYTES + 1)
        text = data.decode("utf-8")
    except FileNotFoundError:
        raise CaseError([CaseProblem(file, "", "no such file; check the path (the demo cases are in "
                                     "cases/)")]) from None
    except IsADirectoryError:
        raise CaseError([CaseProblem(file, "", "is a folder, not a case file; name a .yaml file")]) from None
    except UnicodeDecodeError:
        if len(data) > MAX_FILE_BYTES:
            text = ""
        else:
            raise CaseError([CaseProblem(file, "", "is not UTF-8 text; save the case file as UTF-8")]) from None
    except OSError as exc:
        raise CaseError([CaseProblem(file, "", f"cannot read the file ({exc.strerror})")]) from None
    if len(data) > MAX_FILE_BYTES:
        raise CaseError([CaseProblem(file, "", f"is larger than {MAX_FILE_BYTES:,} bytes (1 MB), the most a case "
                                     "file may be; check that this is the right file")])
    return parse_case(text, file, database=database)


def parse_case(text: str, file: str = "<case>", *, database: SpeciesDatabase | None = None) -> Case:
    r"""Check a case given as text (see :func:`load_case`).

    Examples
    --------
    >>> case = parse_case('''
    ... layout: eqdesign-case/1
    ... job: {title: "Example"}
    ... chemistry: {species: [N2, H2, NH3], key: N2}
    ... feed: {composition: {N2: "25 mol%", H2: "75 mol%"}}
    ... conditions:
    ...   temperature: {low: "400 degC", high: "500 degC", points: 3}
    ...   pressure: ["200 bar"]
    ... studies: {conversion_map: {}}
    ... ''', "example.yaml")
    >>> case.temperature.low, case.pressures, case.feed["H2"]
    (673.15, (20000000.0,), 0.75)
    >>> parse_case("layout: eqdesign-case/1\njob: {title: x}\n", "bad.yaml")
    Traceback (most recent call last):
    ...
    eqdesign.solve.casefile.yaml_lines.CaseError: bad.yaml: chemistry: missing block; add it (with species and key)
    bad.yaml: feed: missing block; add it (with a composition)
    bad.yaml: conditions: missing block; add it (with temperature and pressure)
    bad.yaml: studies: missing block; add it (at least conversion_map: {})
    """
    try:
        doc, duplicates = read_yaml(text)
    except YamlLimitError as exc:
        raise CaseError([CaseProblem(file, "", str(exc), exc.line)]) from None
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark
        line = mark.line + 1 if mark else None
        raise CaseError([CaseProblem(file, "", f"not valid YAML: {exc.problem}; check the indentation and "
                                     "quoting near that line", line)]) from None
    except yaml.YAMLError as exc:
        raise CaseError([CaseProblem(file, "", f"not valid YAML ({exc})")]) from None
    ck = Checker(file)
    if not isinstance(doc, Mapping):
        ck.add("", "a case file is a YAML mapping of blocks (layout, job, chemistry, feed, conditions, "
               "studies, output); see the files in cases/ for the layout")
        raise CaseError(ck.problems)
    if report_non_finite(ck, doc):
        raise CaseError(ck.problems)
    try:
        case = _build(doc, text, ck, database or bundled_database())
    except Exception as exc:    # a gap in the checks must still end in a message, never a traceback
        ck.add("", f"could not be checked ({type(exc).__name__}: {excerpt(str(exc), 120)}); this is a gap in "
               "eqdesign's checks: simplify the entry named above or report the case file")
        raise CaseError(ck.problems) from exc
    for mapping, key, line in duplicates:        # duplicates in blocks the checks did not visit
        if id(mapping) not in ck.reported:
            ck.add(str(key), f"key '{key}' appears twice in the same block; keep one", line)
    if ck.problems:
        raise CaseError(ck.problems)
    work = estimate_work(case).problems(file)
    if work:
        raise CaseError(work)
    return case


def _build(doc: Mapping, text: str, ck: Checker, base_db: SpeciesDatabase) -> Case | None:
    ck.unknown_keys(doc, "", TOP_KEYS)
    for req in TOP_REQUIRED:
        if req not in doc:
            ck.add(req, "missing block; add it" + REQUIRED_HINTS.get(req, ""), None)
    if "layout" in doc and doc["layout"] != LAYOUT_ID:
        ck.add("layout", f"{excerpt(doc['layout'])} is not a layout this version reads; write 'layout: {LAYOUT_ID}'",
               ck.line_of(doc, "layout"))

    # ------------------------------------------------------------------ job
    title = scenario = prepared_by = notes = ""
    if "job" in doc:
        job = ck.section(doc, "job", "job", JOB_KEYS, ("title",))
        if job is not None:
            title = ck.text(job, "title", "job.title")
            scenario = ck.text(job, "scenario", "job.scenario")
            prepared_by = ck.text(job, "prepared_by", "job.prepared_by")
            notes = ck.text(job, "notes", "job.notes")

    # ------------------------------------------------------------------ user species
    db = base_db
    user_records: list[UserSpeciesRecord] = []
    if "user_species" in doc:
        user_records = read_user_species(doc, ck, base_db)
        if user_records:
            db = base_db.extended([u.species for u in user_records])

    # ------------------------------------------------------------------ chemistry
    species: list[str] = []
    key = product = None
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

    # ------------------------------------------------------------------ feed
    feed, feed_flow, feed_as_given = _feed(doc, ck, db) if "feed" in doc else (None, None, ())
    if feed:
        for name in feed:
            if name not in species:
                species.append(name)

    if chem is not None and "key" in chem:
        key = resolve_species(ck, db, chem["key"], "chemistry.key", ck.line_of(chem, "key"))
        if key is not None and feed is not None and feed.get(key, 0.0) <= 0:
            ck.add("chemistry.key", f"the key reactant {key} is not in the feed, so its conversion is "
                   "undefined; feed it or choose a fed reactant as key", ck.line_of(chem, "key"))
            key = None
    if chem is not None and "product" in chem:
        product = resolve_species(ck, db, chem["product"], "chemistry.product", ck.line_of(chem, "product"))
        if product is not None and product not in species:
            ck.add("chemistry.product", f"{product} is not among the species of the system; add it to "
                   "chemistry.species", ck.line_of(chem, "product"))
            product = None
    solver_reactions = bool(reactions) and only_named
    if solver_reactions and key is not None and parsed_reactions:
        if not any(key in r.names for r in parsed_reactions):
            ck.add("chemistry.key", f"{key} takes part in none of the named reactions, so it cannot convert; "
                   "choose a reactant of the named reactions", ck.line_of(chem, "key"))
            key = None

    # gas model needs critical constants
    if gas_model == "peng-robinson" and chem_ok:
        check_critical(ck, db, species, "chemistry.gas_model", ck.line_of(chem, "gas_model"))

    # ------------------------------------------------------------------ conditions
    temperature = None
    pressures: tuple = ()
    if "conditions" in doc:
        cond = ck.section(doc, "conditions", "conditions", CONDITIONS_KEYS, CONDITIONS_KEYS)
        if cond is not None:
            if "temperature" in cond:
                temperature = ck.grid(cond, "temperature", "conditions.temperature", "temperature")
            if "pressure" in cond:
                pressures = _pressures(ck, cond, "pressure", "conditions.pressure")
    records = []
    if chem_ok and feed is not None:
        records = [db[n] for n in species]
    if temperature is not None and records:
        check_data_range(ck, records, temperature.low, temperature.high, "conditions.temperature",
                          ck.line_of(doc.get("conditions"), "temperature"))

    # ------------------------------------------------------------------ studies
    ctx = StudyContext(db=db, feed=feed, species=species, key=key, temperature=temperature,
                        pressures=pressures, records=records, reactions=parsed_reactions,
                        solver_reactions=solver_reactions,
                        user_uncertainty={u.name: dict(u.uncertainty) for u in user_records if u.uncertainty},
                        folder=Path(ck.file).parent)
    studies = read_studies(doc, ck, ctx) if "studies" in doc else None

    # ------------------------------------------------------------------ output
    output = OutputChoices()
    if "output" in doc:
        output = read_output(doc, ck)

    if ck.problems or temperature is None or studies is None or feed is None or key is None:
        if not ck.problems:   # defensive: never return a half-built case silently
            ck.add("", "the case is incomplete; check the blocks named above")
        return None
    return Case(
        file=ck.file, text=text, title=title, scenario=scenario, prepared_by=prepared_by, notes=notes,
        species=tuple(species), feed_items=tuple(feed.items()), feed_flow=feed_flow,
        feed_as_given=tuple(feed_as_given), key=key, product=product, reactions=tuple(reactions),
        only_named_reactions=bool(only_named and reactions), gas_model=gas_model, approach=approach,
        temperature=temperature, pressures=pressures, studies=studies, output=output,
        user_species=tuple(user_records), database=db)








def _pressures(ck: Checker, parent, key, path) -> tuple:
    value = parent[key]
    line = ck.line_of(parent, key)
    if isinstance(value, Mapping):
        g = ck.grid(parent, key, path, "pressure")
        if g is None:
            return ()
        if g.low <= 0:
            ck.add(path + ".low", "pressures must be above zero", line)
            return ()
        return tuple(float(p) for p in g.values())
    items = value if isinstance(value, list) else [value]
    out = []
    for i, item in enumerate(items):
        sub = f"{path}[{i}]" if isinstance(value, list) else path
        holder = {0: item}
        p = ck.quantity(holder, 0, sub, "pressure", positive=True)
        if p is None:
            if ck.problems and ck.problems[-1].line is None:
                ck.problems[-1] = CaseProblem(ck.file, sub, ck.problems[-1].message,
                                              ck.line_of(value, i) if isinstance(value, list) else line)
            continue
        if p in out:
            ck.add(sub, f"{excerpt(item)} is listed twice; list each pressure option once",
                   ck.line_of(value, i) if isinstance(value, list) else line)
            continue
        out.append(p)
    if not items:
        ck.add(path, "give at least one pressure, e.g. ['150 bar']", line)
    return tuple(out) if len(out) == len(items) else ()


def _feed(doc, ck: Checker, db: SpeciesDatabase):
    feed_sec = ck.section(doc, "feed", "feed", FEED_KEYS, ("composition",))
    if feed_sec is None or "composition" not in feed_sec:
        return None, None, ()
    comp = feed_sec["composition"]
    if not isinstance(comp, Mapping) or not comp:
        ck.add("feed.composition", "give each feed species and its amount, e.g. {N2: 1, H2: 3} or "
               "{N2: '25 mol%', H2: '75 mol%'}", ck.line_of(feed_sec, "composition"))
        return None, None, ()
    ck.duplicates(comp, "feed.composition")
    kinds: dict[str, str] = {}
    amounts: dict[str, float] = {}
    as_given = []
    ok = True
    for raw_name, value in comp.items():
        path = join_path("feed.composition", str(raw_name))
        line = ck.line_of(comp, raw_name)
        name = resolve_species(ck, db, str(raw_name), path, line)
        if name is None:
            ok = False
            continue
        if name in amounts:
            ck.add(path, f"{raw_name} names {name} again; give each species once", line)
            ok = False
            continue
        try:
            kind, amount = _feed_amount(value, db[name])
        except UnitError as exc:
            ck.add(path, str(exc), line)
            ok = False
            continue
        if not math.isfinite(amount):
            ck.add(path, f"{excerpt(value)} is not a finite amount", line)
            ok = False
            continue
        if amount < 0:
            ck.add(path, f"{excerpt(value)} is negative; feed amounts must be zero or positive", line)
            ok = False
            continue
        kinds[name] = kind
        amounts[name] = amount
        as_given.append((name, str(value)))
    if not ok:
        return None, None, ()
    distinct = sorted(set(kinds.values()))
    if len(distinct) > 1:
        ck.add("feed.composition", "mixes " + " with ".join(_KIND_WORDS[k] for k in distinct)
               + "; give every entry in the same kind (all mol%, all flows, or all plain numbers)",
               ck.line_of(feed_sec, "composition"))
        return None, None, ()
    kind = distinct[0]
    total = sum(amounts.values())
    if total <= 0:
        ck.add("feed.composition", "every feed amount is zero; feed at least one species",
               ck.line_of(feed_sec, "composition"))
        return None, None, ()
    if kind == "percent" and abs(total - 100.0) > 0.1:
        ck.add("feed.composition", f"the mol% values add up to {total:.6g}, not 100; correct them, or give "
               "relative amounts as plain numbers", ck.line_of(feed_sec, "composition"))
        return None, None, ()
    flow = total if kind == "flow" else None
    if "flow" in feed_sec:
        if kind == "flow":
            ck.add("feed.flow", "the composition already gives flows; remove feed.flow or give the composition "
                   "in mol%", ck.line_of(feed_sec, "flow"))
            return None, None, ()
        mean_mass = sum(amounts[n] / total * db[n].molar_mass for n in amounts) / 1000.0   # kg/mol
        try:
            q = parse_quantity(feed_sec["flow"])
            if is_quantity(q) and q.check("[mass] / [time]"):
                flow = float(q.to("kg/s").magnitude) / mean_mass
            else:
                flow = scalar_to_si(feed_sec["flow"], "molar_flow")
        except UnitError as exc:
            ck.add("feed.flow", str(exc), ck.line_of(feed_sec, "flow"))
            return None, None, ()
        if flow <= 0:
            ck.add("feed.flow", f"{excerpt(feed_sec['flow'])} must be above zero", ck.line_of(feed_sec, "flow"))
            return None, None, ()
    feed = {n: a / total for n, a in amounts.items()}
    return feed, flow, as_given


_KIND_WORDS = {"percent": "mol%", "flow": "flows (e.g. kmol/h)", "amount": "amounts (e.g. kmol)",
               "relative": "plain numbers"}


def _feed_amount(value, sp: Species) -> tuple[str, float]:
    """(kind, value) of one feed entry: percent [mol%], flow [mol/s], amount [mol], relative."""
    if isinstance(value, str):
        percent = percent_value(value)
        if percent is not None:
            return "percent", percent
    q = parse_quantity(value)
    if not is_quantity(q):
        return "relative", float(q)
    if q.dimensionless:
        return "relative", float(q.to("dimensionless").magnitude)
    if q.check("[substance]"):
        return "amount", float(q.to("mol").magnitude)
    if q.check("[substance] / [time]"):
        return "flow", float(q.to("mol/s").magnitude)
    if q.check("[mass]"):
        return "amount", float(q.to("g").magnitude) / sp.molar_mass
    if q.check("[mass] / [time]"):
        return "flow", float(q.to("g/s").magnitude) / sp.molar_mass
    raise UnitError(f"{excerpt(value)} is {dimension_name(q)}, not a feed amount; write mol%, a molar flow "
                       "('300 kmol/h'), an amount ('1 kmol'), a mass flow ('600 t/d') or a plain number")
