"""Install layout and the README / CI contract."""
from __future__ import annotations

import importlib.util
import pathlib
import re
import subprocess
import sys

ROOT = pathlib.Path(__file__).resolve().parents[1]


def test_no_generic_top_level_import_names(tmp_path):
    """eqdesign installs under `eqdesign.*` only: outside the source tree, `thermo` and
    `solve` must not resolve to this project (a PyPI distribution owns the name `thermo`)."""
    code = ("import importlib.util as u\n"
            "for n in ('thermo', 'solve'):\n"
            "    s = u.find_spec(n)\n"
            "    print(n, s.origin if s else None)\n")
    out = subprocess.run([sys.executable, "-c", code], cwd=tmp_path, capture_output=True,
                         text=True, check=True).stdout
    for line in out.splitlines():
        name, origin = line.split(" ", 1)
        assert origin == "None" or not pathlib.Path(origin).resolve().is_relative_to(ROOT), line
    ok = subprocess.run([sys.executable, "-c", "import eqdesign.thermo, eqdesign.solve"],
                        cwd=tmp_path, capture_output=True, text=True)
    assert ok.returncode == 0, ok.stderr


def test_data_is_package_data():
    from importlib import resources
    text = resources.files("eqdesign.data").joinpath("species.yaml").read_text(encoding="utf-8")
    assert "species:" in text


def test_ci_runs_exactly_the_readme_test_command():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    block = re.search(r"<!-- test-command -->\s*```bash\n(.*?)\n```\s*<!-- /test-command -->",
                      readme, re.S)
    command = block.group(1).strip() if block else ""
    # works in a new shell on its own: it makes its environment and runs through it
    assert command.startswith("python3 -m venv .venv && ") and ".venv/bin/python -m pytest -q" in command
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert "test-command" in ci and 'bash -c "$cmd"' in ci
    # the CI script names no test file that does not exist
    for name in re.findall(r"tests/[\w/]+\.py", ci):
        assert (ROOT / name).exists(), name


def test_console_script_prints_a_k_table():
    out = subprocess.run([sys.executable, "-m", "eqdesign.solve.cli", "ktable", "N2 + 3 H2 = 2 NH3",
                          "--from", "700 K", "--to", "700 K", "--points", "2"],
                         capture_output=True, text=True, check=True).stdout
    assert "8.7776e-05" in out and "NASA TM-4513" in out


def test_bad_input_exits_2_with_one_line():
    proc = subprocess.run([sys.executable, "-m", "eqdesign.solve.cli", "ktable", "N2 + H2 = NH3"],
                          capture_output=True, text=True)
    assert proc.returncode == 2
    assert proc.stderr.strip() == ("eqdesign ktable: reaction 'N2 + H2 = NH3' does not balance: "
                                   "products minus reactants = H +1, N -1")
    assert "Traceback" not in proc.stderr
