"""The ``studies.uncertainty`` block of a case file: settings, overrides and defaults file.
"""
from __future__ import annotations

from dataclasses import replace
from pathlib import Path
from typing import Mapping

from ...thermo.data_uncertainty import DATUM_KINDS, UncertaintyDefaults, UncertaintyInputError
from ..studies.uncertainty import UncertaintySettings, parameter_map
from .checker import Checker, resolve_species
from .study_inputs import StudyContext
from .uncertainty_settings import settings_from_mapping
from .yaml_lines import LineMap


# ---------------------------------------------------------------------- data uncertainty
def read_uncertainty(sec, ck: Checker, ctx: StudyContext) -> UncertaintySettings | None:
    """The ``studies.uncertainty`` switch: settings checked by the uncertainty module
    (:func:`eqdesign.solve.casefile.uncertainty_settings.settings_from_mapping`), each of its problem lines
    turned into a case problem with the line of its key; then the overrides checked against
    the case's species (names, data kinds, a default for every datum) and merged with the
    uncertainties given with the case's own species."""
    path = "studies.uncertainty"
    line = ck.line_of(sec, "uncertainty")
    block = sec["uncertainty"]
    if block is True or block is None:                    # 'uncertainty: true' or '{}': the defaults
        block = LineMap(line=line)
    if isinstance(block, Mapping):
        ck.duplicates(block, path)
        ov = block.get("overrides")
        if isinstance(ov, Mapping):
            ck.duplicates(ov, f"{path}.overrides")
            for name, entry in ov.items():
                if isinstance(entry, Mapping):
                    ck.duplicates(entry, f"{path}.overrides.{name}")
    try:
        settings = settings_from_mapping(block, where=path)
    except UncertaintyInputError as exc:
        settings = None
        for text in str(exc).splitlines():
            key, _, message = text.partition(": ")
            if not key.startswith(path):
                key, message = path, text
            ck.add(key, _with_fix(key, message), _line_of_path(ck, block, key[len(path):], line))
    merged, ok = _merged_overrides(ck, block, path, ctx)       # checked even when a value has a problem
    ok = ok and settings is not None
    if not ok:
        return None
    defaults = None
    if settings.defaults_file:
        file = Path(settings.defaults_file)
        if not file.is_absolute():
            file = ctx.folder / file
        try:
            defaults = UncertaintyDefaults.from_file(file)
        except UncertaintyInputError as exc:
            ck.add(f"{path}.defaults", f"{exc}; give the path of a file of the layout of "
                   "eqdesign/data/uncertainty_defaults.yaml, relative to the case file", ck.line_of(block, "defaults"))
            return None
        settings = replace(settings, defaults_file=str(file))
    if not ctx.records:
        return settings                                   # the species have problems of their own
    try:                                                  # a standard uncertainty for every datum
        parameter_map(ctx.species, database=ctx.db, overrides=merged or None, defaults=defaults)
    except UncertaintyInputError as exc:
        ck.add(path, str(exc), line)
        return None
    return replace(settings, overrides=merged)


def _merged_overrides(ck: Checker, block, path: str, ctx: StudyContext) -> tuple:
    """(uncertainties by species and datum kind, ok): the overrides of the block checked
    against the case's species and merged with those given with the case's own species."""
    reported = {p.key for p in ck.problems}
    merged: dict[str, dict] = {n: dict(u) for n, u in ctx.user_uncertainty.items()}
    with_data = {(n, k) for n, u in ctx.user_uncertainty.items() for k in u}
    overrides = block.get("overrides") if isinstance(block, Mapping) else None
    ok = True
    try:                                                  # species whose data enter the case's results
        involved = {d.species for d in parameter_map(ctx.species, database=ctx.db).data} if ctx.records else set()
    except UncertaintyInputError:
        involved = None                                   # a missing default: reported below
    for raw, entry in (overrides.items() if isinstance(overrides, Mapping) and ctx.records else ()):
        opath, oline = f"{path}.overrides.{raw}", ck.line_of(overrides, raw)
        name = resolve_species(ck, ctx.db, raw, opath, oline)
        if name is None:
            ok = False
            continue
        if involved is not None and name not in involved:
            ck.add(opath, f"{name} is not a species of this case, so its uncertainty cannot matter; remove it or add "
                   f"{name} to chemistry.species", oline)
            ok = False
            continue
        for k, v in (entry.items() if isinstance(entry, Mapping) else ()):
            kpath, kline = f"{opath}.{k}", ck.line_of(entry, k)
            if k not in DATUM_KINDS:
                continue                                  # reported by the settings check
            if (name, k) in with_data:
                ck.add(kpath, f"the {k} uncertainty of {name} is also given with its data under user_species.{name}; "
                       "keep one", kline)
                ok = False
                continue
            if k in merged.get(name, {}):
                ck.add(kpath, f"names {name} again (as {raw}); give each species once", kline)
                ok = False
                continue
            try:                                          # does the species take this kind of datum?
                parameter_map([name], database=ctx.db, overrides={name: {k: 0.0}})
            except UncertaintyInputError as exc:
                text = str(exc)
                if text.startswith("overrides."):     # otherwise a missing default: checked below
                    text = text.partition(": ")[2]
                    ck.add(kpath, text + ("; use those keys" if " takes " in text else ""), kline)
                    ok = False
                    continue
            if kpath not in reported:
                merged.setdefault(name, {})[k] = v
    return merged, ok


def _with_fix(key: str, message: str) -> str:
    """A problem line of the uncertainty module with a fix added where it names none."""
    if any(word in message for word in ("give ", "use ", "write ", "remove ", "choose ")):
        return message
    last = key.rsplit(".", 1)[-1]
    if last == "method":
        return message + "; write method: monte-carlo or method: linear"
    if last in ("formation_enthalpy", "reaction_enthalpy"):
        return message + "; give a standard uncertainty such as '0.4 kJ/mol'"
    if last in ("entropy", "reaction_entropy"):
        return message + "; give a standard uncertainty such as '0.1 J/(mol K)'"
    return message


def _line_of_path(ck: Checker, block, rest: str, line) -> int | None:
    """Line of the key at ``rest`` (".overrides.NH3.entropy") inside ``block``."""
    node = block
    for part in [p for p in rest.split(".") if p]:
        if not isinstance(node, Mapping):
            break
        match = next((k for k in node if str(k) == part), None)
        if match is None:
            break
        line = ck.line_of(node, match) or line
        node = node[match]
    return line
