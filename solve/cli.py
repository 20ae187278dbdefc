"""The ``eqdesign`` command line.

Subcommands (each has ``--help``):

* ``eqdesign ktable REACTION``  K(T), ΔrH°, ΔrS°, ΔrG° over a temperature range
* ``eqdesign species NAME``     data, valid range and source of a species (``--list`` for all,
                                 ``--element Fe --phase solid`` to filter)
* ``eqdesign point ...``        one equilibrium state, as a table or ``--json``
* ``eqdesign check CASE``       check a case file completely, run nothing
* ``eqdesign run CASE``         run a case file's studies into an output folder (report, CSV, figures)

Bad input gives one message per problem naming what is wrong and how to fix it, exit status 2,
and nothing is written.  Temperatures and pressures always carry a unit.  Ctrl-C exits with
status 130 and SIGTERM with 143, each with a message and nothing half-written; output piped
into a program that stops reading (``| head``) ends quietly.
"""
from __future__ import annotations

import argparse
import json
import math
import os
import signal
import sys
import threading
import time
import warnings
from pathlib import Path

import numpy as np

from ..thermo import (
    DatabaseError, Reaction, ReactionError, UnitError, UnknownSpeciesError, bundled_database,
    to_kelvin, to_pascal,
)
from .casefile.reader import load_case
from .casefile.yaml_lines import CaseError
from .core.equilibrium import equilibrium
from .core.result import EquilibriumInputError
from .report.numbers import exponential_text, json_number
from .report.output import OutputExistsError, OutputFolder, OutputPathError, check_output_folder, output_files
from .report.run import run_case

EXIT_INPUT = 2
#: Exit status after Ctrl-C (128 + SIGINT, as a shell reports it).
EXIT_INTERRUPTED = 130
#: Exit status after SIGTERM (128 + SIGTERM).
EXIT_TERMINATED = 143
#: Exit status when the reader of the output went away (128 + SIGPIPE).
EXIT_BROKEN_PIPE = 141
#: Most rows ``ktable`` prints.
KTABLE_MAX_ROWS = 10_000


class InputProblem(Exception):
    """A user-facing input problem: printed as one line, exit status 2."""


class Terminated(BaseException):
    """SIGTERM arrived: unwinds like Ctrl-C, so every ``finally`` and cleanup runs."""


#: The short form of an option, used in the examples of messages.
_SHORT_FLAGS = {"--temperature": "-T", "--pressure": "-P"}


def _is_bare_number(text: str) -> bool:
    """True for a number without a unit (``"700"``, ``"3e6"``, ``"nan"``)."""
    try:
        float(text)
    except ValueError:
        return False
    return True


def _temperature(text: str, what: str) -> float:
    """A temperature option in kelvin; the text must carry its unit."""
    flag = _SHORT_FLAGS.get(what, what)
    example = f'{flag} "450 degC"'
    if _is_bare_number(text):
        raise InputProblem(f"{what}: {text!r} has no unit; give the unit, e.g. {example} or {flag} \"723.15 K\"")
    try:
        value = float(to_kelvin(text))
    except (UnitError, ValueError) as exc:
        raise InputProblem(f"{what}: {exc}; give e.g. {example}") from None
    if not math.isfinite(value):
        raise InputProblem(f"{what}: {text!r} is not a finite temperature; give e.g. {example}")
    if value <= 0:
        raise InputProblem(f"{what}: {text!r} is at or below absolute zero")
    return value


def _pressure(text: str, what: str) -> float:
    """A pressure option in pascal; the text must carry its unit."""
    flag = _SHORT_FLAGS.get(what, what)
    example = f'{flag} "30 bar"'
    if _is_bare_number(text):
        raise InputProblem(f"{what}: {text!r} has no unit; give the unit, e.g. {example} or {flag} \"3 MPa\"")
    try:
        value = float(to_pascal(text))
    except (UnitError, ValueError) as exc:
        raise InputProblem(f"{what}: {exc}; give e.g. {example}") from None
    if not math.isfinite(value):
        raise InputProblem(f"{what}: {text!r} is not a finite pressure; give e.g. {example}")
    if value <= 0:
        raise InputProblem(f"{what}: pressure must be positive")
    return value


def _row_count(text: str) -> int:
    """``--points``: a whole number from 2 to :data:`KTABLE_MAX_ROWS`."""
    try:
        value = float(text)
    except ValueError:
        value = float("nan")
    if not math.isfinite(value) or value != int(value):
        raise InputProblem(f"--points: {text!r} is not a whole number; give e.g. --points 8")
    n = int(value)
    if n < 2 or n > KTABLE_MAX_ROWS:
        raise InputProblem(f"--points: {n} is outside 2 to {KTABLE_MAX_ROWS} rows; give e.g. --points 8")
    return n


def cmd_ktable(args) -> int:
    db = bundled_database()
    try:
        rxn = Reaction.parse(args.reaction, db)
    except ReactionError as exc:
        raise InputProblem(str(exc)) from None
    if not rxn.species:
        raise InputProblem(f"{args.reaction!r}: every species cancels, so nothing reacts; write a reaction with "
                           "different species on each side, e.g. 'N2 + 3 H2 = 2 NH3'")
    t_lo = _temperature(args.t_low, "--from")
    t_hi = _temperature(args.t_high, "--to")
    if t_hi < t_lo:
        raise InputProblem("--to must not be below --from")
    n = _row_count(args.points)
    T = np.linspace(t_lo, t_hi, n)
    lo, hi = rxn.T_range
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        lnK = np.asarray(rxn.ln_K(T))
        dH = np.asarray(rxn.delta_h(T))
        dS = np.asarray(rxn.delta_s(T))
        dG = np.asarray(rxn.delta_g(T))
    print(f"Reaction: {rxn.text}   (Δn gas = {rxn.delta_n_gas:g}; standard state 1 bar)")
    print(f"Data range of all species: {lo:g}-{hi:g} K")
    header = f"{'T [K]':>9} {'T [degC]':>9} {'K [-]':>12} {'log10 K':>9} {'ΔrH° [kJ/mol]':>14} " \
             f"{'ΔrS° [J/(mol K)]':>17} {'ΔrG° [kJ/mol]':>14}"
    print(header)
    print("-" * len(header))
    for i in range(n):
        flag = " *" if (T[i] < lo - 2.0 or T[i] > hi) else ""
        print(f"{T[i]:9.2f} {T[i] - 273.15:9.2f} {exponential_text(lnK[i]):>12} "
              f"{lnK[i] / math.log(10):9.4f} "
              f"{dH[i] / 1000:14.3f} {dS[i]:17.3f} {dG[i] / 1000:14.3f}{flag}")
    if np.any((T < lo - 2.0) | (T > hi)):
        print("* outside the data range of at least one species: extrapolated")
    print("Sources: " + "; ".join(sorted({sp.reference for sp in rxn.species})))
    return 0


def cmd_species(args) -> int:
    db = bundled_database()
    if args.list or args.element or args.phase:
        try:
            names = db.names_matching(element=args.element, phase=args.phase)
        except ValueError as exc:
            raise InputProblem(f"species: {exc}") from None
        for name in names:
            sp = db.species[name]
            print(f"{sp.name:18} {sp.phase:7} {sp.T_min:7g}-{sp.T_max:<6g} K  {sp.common_name}")
        return 0
    if not args.name:
        raise InputProblem("species: give a species name, or --list")
    try:
        sp = db[args.name]
    except UnknownSpeciesError as exc:
        raise InputProblem(str(exc)) from None
    print(f"{sp.name}  ({sp.common_name or sp.formula})")
    print(f"  formula        {sp.formula}")
    print("  elements       " + ", ".join(f"{k} {v:g}" for k, v in sp.elements.items()))
    print(f"  phase          {sp.phase}")
    print(f"  molar mass     {sp.molar_mass:.4f} g/mol")
    print(f"  valid range    {sp.T_min:g}-{sp.T_max:g} K")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        print(f"  ΔfH°(298.15 K) {float(sp.model.enthalpy(298.15)) / 1000:.3f} kJ/mol")
        print(f"  S°(298.15 K)   {float(sp.model.entropy(298.15)):.3f} J/(mol K)  (1 bar)")
    if sp.critical:
        c = sp.critical
        print(f"  critical       Tc {c.Tc:g} K, Pc {c.Pc / 1e5:g} bar, omega {c.omega:g}")
    print(f"  data source    {sp.reference}" + (f" [{sp.data_note}]" if sp.data_note else ""))
    return 0


def _parse_feed(items, db) -> dict:
    """``NAME=AMOUNT`` items as {name: amount [mol]}; a species named twice (also under its
    common name) is refused."""
    feed = {}
    seen = {}                                    # database name -> the item that named it
    for item in items:
        if "=" not in item:
            raise InputProblem(f"--feed {item!r}: write NAME=AMOUNT, e.g. N2=1 H2=3")
        name, value = item.split("=", 1)
        name = name.strip()
        try:
            canonical = db[name].name
        except (UnknownSpeciesError, KeyError):
            canonical = name
        if canonical in seen:
            raise InputProblem(f"--feed {item!r}: {canonical} is already in the feed as {seen[canonical]!r}; "
                               "give each species once")
        seen[canonical] = item
        try:
            amount = float(value)
        except ValueError:
            raise InputProblem(f"--feed {item!r}: amount {value!r} is not a number (mol)") from None
        if not math.isfinite(amount):
            raise InputProblem(f"--feed {item!r}: amount {value!r} is not a finite number (mol)")
        if amount < 0:
            raise InputProblem(f"--feed {item!r}: amounts must not be negative")
        feed[name] = amount
    if not feed:
        raise InputProblem("--feed: give at least one NAME=AMOUNT")
    return feed


def cmd_point(args) -> int:
    db = bundled_database()
    feed = _parse_feed(args.feed, db)
    species = list(args.species or [])
    T = _temperature(args.temperature, "--temperature")
    P = _pressure(args.pressure, "--pressure")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            res = equilibrium(species, feed, T, P, reactions=args.reaction or None,
                              gas_model=args.gas_model, database=db, warn=False)
    except (EquilibriumInputError, ReactionError, UnknownSpeciesError, ValueError) as exc:
        raise InputProblem(str(exc)) from None      # input errors subclass ValueError (Peng-Robinson data too)
    payload = {
        "T_K": T, "P_Pa": P, "gas_model": args.gas_model, "converged": bool(res.converged),
        "iterations": int(res.iterations), "max_residual": float(res.max_residual),
        "amounts_mol": res.amounts, "gas_mole_fractions": res.mole_fractions,
        "condensed_present": [k for k, v in res.condensed.items() if v > 0],
        "trustworthy": bool(res.trustworthy),
        "flags": {
            "outside_data_range": sorted(res.out_of_range),
            "left_out_outside_data_range": [n for n, f in zip(res.species, res.excluded_array) if f],
            "condensation_possible": bool(res.condensation_possible) if res.condensation_possible is not None else False,
            "text": res.state_flags(),
        },
    }
    if res.reactions:
        payload["extents_mol"] = res.extents
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")              # Q/K undefined (NaN) when no reactant is present
            payload["Q_over_K"] = res.quotient_over_K()
    if args.json:
        payload["status"] = ("not converged" if not res.all_converged else
                             "converged" if res.trustworthy else "converged, not trustworthy")
        payload["missing_values"] = "null: not defined or not computed (for example Q/K with no reactant present)"
        json.dump(_strict_json(payload), sys.stdout, indent=2, allow_nan=False)
        print()
        return 0 if res.all_converged else 1
    status = ("NOT CONVERGED" if not res.all_converged else
              "converged" if res.trustworthy else "converged but NOT TRUSTWORTHY (see below)")
    print(f"Equilibrium at {T:.2f} K ({T - 273.15:.2f} degC), {P / 1e5:.4g} bar, "
          f"{args.gas_model} gas: {status} in {int(res.iterations)} iterations")
    print(f"{'species':16} {'amount [mol]':>14} {'gas mole fraction [-]':>22}")
    y = res.mole_fractions
    for name, n in res.amounts.items():
        print(f"{name:16} {n:14.6e} {y[name]:22.6e}" if name in y else f"{name:16} {n:14.6e} {'(condensed)':>22}")
    if res.all_converged and not res.trustworthy:
        print(f"NOT TRUSTWORTHY: {res.state_flags()}")
    left_out = [n for n, f in zip(res.species, res.excluded_array) if f]
    if left_out:
        print(f"left out (state outside their data range): {', '.join(left_out)}")
    return 0 if res.all_converged else 1


def _strict_json(value):
    """``value`` with every float made strict JSON (NaN as null, infinities as "+inf"/"-inf")."""
    if isinstance(value, dict):
        return {k: _strict_json(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_strict_json(v) for v in value]
    if isinstance(value, (float, np.floating)):
        return json_number(value)
    if isinstance(value, np.integer):
        return int(value)
    return value


class ProgressBar:
    """Text progress bars on a stream (stderr): one bar per sweep, redrawn in place on a
    terminal and printed once, complete, when the stream is a file or pipe."""

    WIDTH = 30

    def __init__(self, stream=None, enabled: bool = True):
        self.stream = stream or sys.stderr
        self.enabled = enabled
        self.tty = bool(getattr(self.stream, "isatty", lambda: False)())

    def __call__(self, label: str):
        t0 = time.perf_counter()

        def update(done: int, total: int) -> None:
            if not self.enabled or total <= 0:
                return
            if not self.tty and done < total:
                return
            filled = int(round(self.WIDTH * done / total))
            bar = "#" * filled + "." * (self.WIDTH - filled)
            text = f"  {label[:40]:<40} [{bar}] {done}/{total} points {time.perf_counter() - t0:5.1f} s"
            end = "\n" if done >= total else ""
            self.stream.write(("\r" if self.tty else "") + text + end)
            self.stream.flush()

        return update

    def status(self, text: str) -> None:
        if self.enabled:
            self.stream.write(f"  {text}\n")
            self.stream.flush()


def _load_case(path: str):
    try:
        return load_case(path)
    except CaseError as exc:
        raise CaseProblems(exc.problems) from None


class CaseProblems(Exception):
    """Problems in a case file: printed one per line, exit status 2."""

    def __init__(self, problems):
        self.problems = tuple(problems)
        super().__init__("\n".join(str(p) for p in self.problems))


def cmd_check(args) -> int:
    case = _load_case(args.case)
    print(case.summary())
    return 0


def default_output_folder(case_path: str) -> Path:
    """``<case file stem>_results`` in the current folder.

    >>> str(default_output_folder("cases/shift_converters.yaml"))
    'shift_converters_results'
    """
    return Path(f"{Path(case_path).stem}_results")


def cmd_run(args) -> int:
    outdir = Path(args.output) if args.output else default_output_folder(args.case)
    protected = (Path(args.case).absolute().parent,)
    try:
        check_output_folder(outdir, args.force, protected=protected)       # before anything is computed
    except (OutputExistsError, OutputPathError) as exc:
        raise InputProblem(str(exc)) from None
    case = _load_case(args.case)
    bar = ProgressBar(sys.stderr, enabled=not args.quiet)
    try:
        with OutputFolder(outdir, force=args.force, protected=protected) as folder:
            if not args.quiet:
                print(f"eqdesign run: {case.file}: {case.title}" + (" (reduced resolution)" if args.coarse else ""),
                      file=sys.stderr)
            try:
                result = run_case(case, coarse=args.coarse, progress=bar, status=bar.status)
            except (EquilibriumInputError, ReactionError, UnitError) as exc:
                raise InputProblem(f"{case.file}: {exc} (the case check did not catch this; please report "
                                   "it)") from None
            written = folder.publish(output_files(result))
    except (OutputExistsError, OutputPathError) as exc:
        raise InputProblem(str(exc)) from None
    print(f"Results of {case.file} in {outdir}/ ({len(written)} files, {result.elapsed:.1f} s)")
    if case.output.report:
        print(f"  report: {outdir / 'report.html'}")
    for line in result.findings:
        print(f"  - {line}")
    if result.flagged:
        print(f"  WARNING: {result.flagged} point(s) did not converge; they are blank in the tables "
              "(see the report's solver diagnostics)")
    if result.extrapolations:
        print(f"  WARNING: species data were extrapolated ({len(result.extrapolations)} warning(s); see the "
              "report's data provenance)")
    return 0


class _Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line (and exit status 2)."""

    def error(self, message: str):
        self.exit(EXIT_INPUT, f"{self.prog}: {message}; see '{self.prog} --help'\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="eqdesign",
        description="Chemical-equilibrium design from thermodynamic data: K(T), equilibrium "
                    "compositions, conversion maps. Results support, and do not replace, "
                    "licensed engineering judgement.")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    p = sub.add_parser("ktable", help="K(T), ΔrH°, ΔrS°, ΔrG° of a reaction over a temperature range")
    p.add_argument("reaction", help="e.g. 'N2 + 3 H2 = 2 NH3'")
    p.add_argument("--from", dest="t_low", default="300 K", help="lowest temperature (default 300 K)")
    p.add_argument("--to", dest="t_high", default="1000 K", help="highest temperature (default 1000 K)")
    p.add_argument("--points", default="8", help=f"number of rows, 2 to {KTABLE_MAX_ROWS} (default 8)")
    p.set_defaults(func=cmd_ktable)
    p = sub.add_parser("species", help="data, valid range and source of a species")
    p.add_argument("name", nargs="?", help="species name or common name, e.g. NH3 or ammonia")
    p.add_argument("--list", action="store_true", help="list every species in the database")
    p.add_argument("--element", action="append", metavar="SYMBOL",
                   help="list only species containing this element (repeatable: all of them)")
    p.add_argument("--phase", choices=("gas", "solid", "liquid", "condensed"),
                   help="list only species in this phase")
    p.set_defaults(func=cmd_species)
    p = sub.add_parser("point", help="solve one equilibrium state")
    p.add_argument("--feed", nargs="+", required=True, metavar="NAME=MOL", help="feed, e.g. N2=1 H2=3")
    p.add_argument("--species", nargs="*", help="further species that may form (all-species mode)")
    p.add_argument("--reaction", action="append", help="restrict to this reaction (repeatable)")
    p.add_argument("--temperature", "-T", required=True, help="with its unit, e.g. '450 degC'")
    p.add_argument("--pressure", "-P", required=True, help="with its unit, e.g. '200 bar'")
    p.add_argument("--gas-model", default="ideal", choices=["ideal", "peng-robinson"])
    p.add_argument("--json", action="store_true", help="machine-readable output")
    p.set_defaults(func=cmd_point)
    p = sub.add_parser("check", help="check a case file completely without running it",
                       description="Read and check a case file (layout eqdesign-case/1): every problem is "
                                   "reported with the file, the key path and the fix; exit status 2 if any.")
    p.add_argument("case", help="case file, e.g. cases/ammonia_loop_pressure_options.yaml")
    p.set_defaults(func=cmd_check)
    p = sub.add_parser("run", help="run a case file's studies into an output folder",
                       description="Check a case file, run its studies and write report.html, CSV tables, "
                                   "PNG/SVG figures and a copy of the case into a new folder. Nothing is "
                                   "written if the case has a problem or the run is interrupted.")
    p.add_argument("case", help="case file, e.g. cases/ammonia_loop_pressure_options.yaml")
    p.add_argument("-o", "--output", metavar="OUTDIR",
                   help="output folder (default: <case name>_results in the current folder)")
    p.add_argument("--force", action="store_true", help="replace the output folder if it exists")
    p.add_argument("--coarse", action="store_true",
                   help="reduced resolution for a quick look (thinner grids; the report says so)")
    p.add_argument("--quiet", "-q", action="store_true", help="no progress bars")
    p.set_defaults(func=cmd_run)
    return parser


def _raise_terminated(signum, frame):
    raise Terminated()


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return EXIT_INPUT
    in_main_thread = threading.current_thread() is threading.main_thread()
    previous = signal.signal(signal.SIGTERM, _raise_terminated) if in_main_thread else None
    try:
        return _dispatch(args)
    finally:
        if in_main_thread:
            signal.signal(signal.SIGTERM, previous)


def _dispatch(args) -> int:
    """Run the subcommand; turn input problems, interruptions and a closed pipe into an
    exit status and a message (no traceback)."""
    try:
        return args.func(args)
    except BrokenPipeError:
        _silence_stdout()
        return EXIT_BROKEN_PIPE
    except InputProblem as exc:
        print(f"eqdesign {args.command}: {exc}", file=sys.stderr)
        return EXIT_INPUT
    except DatabaseError as exc:
        print(f"eqdesign {args.command}: {exc}", file=sys.stderr)
        return EXIT_INPUT
    except CaseProblems as exc:
        if len(exc.problems) > 1:
            print(f"eqdesign {args.command}: {len(exc.problems)} problems; nothing was run or written",
                  file=sys.stderr)
        for problem in exc.problems:
            print(f"eqdesign {args.command}: {problem}", file=sys.stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        print(f"eqdesign {args.command}: interrupted; no output folder was written", file=sys.stderr)
        return EXIT_INTERRUPTED
    except Terminated:
        print(f"eqdesign {args.command}: terminated (SIGTERM); no output folder was written", file=sys.stderr)
        return EXIT_TERMINATED


def _silence_stdout() -> None:
    """After a broken pipe: point stdout at /dev/null so the interpreter's final flush is quiet."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):       # stdout without a file descriptor (captured)
        pass


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
