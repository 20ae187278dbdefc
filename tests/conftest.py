"""Shared fixtures: the bundled database, and every demo case run once per test session.

The test folders mirror the package's layers (tests/thermo, tests/core, tests/studies,
tests/casefile, tests/report, tests/cli); helper modules shared by several of them
(``cantera_reference``, ``browser``) live here in tests/ and are importable from every folder.
"""
from __future__ import annotations

import sys
from dataclasses import dataclass
from pathlib import Path

import pytest

from eqdesign.thermo import SpeciesDatabase, bundled_database

TESTS = Path(__file__).resolve().parent
ROOT = TESTS.parent
if str(TESTS) not in sys.path:            # `import cantera_reference` from any test folder
    sys.path.insert(0, str(TESTS))


def pytest_configure(config):
    config.addinivalue_line("markers", "slow: takes more than a few seconds; deselect with -m 'not slow'")


@pytest.fixture(scope="session")
def db() -> SpeciesDatabase:
    return bundled_database()


@dataclass(frozen=True)
class DemoRun:
    """One demo case run at reduced resolution (``eqdesign run CASE --coarse``)."""

    name: str
    case: object             # the checked Case
    result: object           # its RunResult
    files: dict              # file name -> bytes, as written
    folder: Path             # the output folder, written as the command line writes it


class _DemoRuns(dict):
    """name -> DemoRun, each demo computed on first use and kept for the session."""

    def __init__(self, base: Path):
        super().__init__()
        self.base = base
        self.names = sorted(p.stem for p in (ROOT / "cases").glob("*.yaml"))

    def __missing__(self, name: str) -> DemoRun:
        from eqdesign.solve.casefile import load_case
        from eqdesign.solve.report import run_case, write_outputs
        from eqdesign.solve.report.output import output_files
        case = load_case(ROOT / "cases" / f"{name}.yaml")
        result = run_case(case, coarse=True)
        folder = self.base / name
        write_outputs(result, folder)
        run = DemoRun(name, case, result, output_files(result), folder)
        self[name] = run
        return run


@pytest.fixture(scope="session")
def demo_runs(tmp_path_factory) -> _DemoRuns:
    """Every demo case in cases/, run once per session at reduced resolution and written
    to a scratch folder; shared by the report, case-file, browser and command-line tests."""
    return _DemoRuns(tmp_path_factory.mktemp("demo_runs"))
