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

from pathlib import Path
from typing import Mapping

import yaml

from ...thermo.database import SpeciesDatabase
from ...thermo.reactions import bundled_database
from ...thermo.units import excerpt
from .checker import REQUIRED_HINTS, Checker, check_critical, check_data_range, report_non_finite
from .chemistry import key_and_product, read_chemistry
from .feed import read_feed
from .schema import CONDITIONS_KEYS, JOB_KEYS, LAYOUT_ID, TOP_KEYS, TOP_REQUIRED, Case, OutputChoices, UserSpeciesRecord
from .studies import read_output, read_studies
from .study_inputs import StudyContext
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
    """Check every block in dependency order and assemble the :class:`Case` (None on a problem).

    Kept as one sequential routine: each block needs the checked results of those before it.
    """
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
    chem = read_chemistry(doc, ck, db)
    species = list(chem.species)

    # ------------------------------------------------------------------ feed
    feed, feed_flow, feed_as_given = read_feed(doc, ck, db) if "feed" in doc else (None, None, ())
    if feed:
        for name in feed:
            if name not in species:
                species.append(name)
    key, product = key_and_product(ck, chem, db, feed, species)
    solver_reactions = bool(chem.reactions) and chem.only_named
    if chem.gas_model == "peng-robinson" and chem.ok:     # the gas model needs critical constants
        check_critical(ck, db, species, "chemistry.gas_model", ck.line_of(chem.block, "gas_model"))

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
    if chem.ok and feed is not None:
        records = [db[n] for n in species]
    if temperature is not None and records:
        check_data_range(ck, records, temperature.low, temperature.high, "conditions.temperature",
                          ck.line_of(doc.get("conditions"), "temperature"))

    # ------------------------------------------------------------------ studies
    ctx = StudyContext(db=db, feed=feed, species=species, key=key, temperature=temperature,
                        pressures=pressures, records=records, reactions=list(chem.parsed),
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
        feed_as_given=tuple(feed_as_given), key=key, product=product, reactions=chem.reactions,
        only_named_reactions=bool(chem.only_named and chem.reactions), gas_model=chem.gas_model,
        approach=chem.approach,
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
