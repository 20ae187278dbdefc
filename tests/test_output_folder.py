"""The output folder of `eqdesign run`: the path checked before any computation, a lock
for the whole run, `--force` only on eqdesign's own folders, leftovers of dead runs
removed, SIGTERM handled like Ctrl-C.  (Behaviour of our own design; no outside source.)"""
from __future__ import annotations

import os
import signal
import subprocess
import sys
import time

import pytest

from eqdesign.solve import cli
from eqdesign.solve.report import output
from eqdesign.solve.report.output import OutputFolder, OutputPathError, validate_output_path

from test_cli import BASE

#: The command line with a computation that takes a minute (a run in progress to interrupt).
SLOW_RUN = ("import sys, time\n"
            "from eqdesign.solve import cli\n"
            "real = cli.run_case\n"
            "cli.run_case = lambda *a, **k: (time.sleep(60), real(*a, **k))[1]\n"
            "sys.exit(cli.main(sys.argv[1:]))\n")


@pytest.fixture
def small_case(tmp_path):
    path = tmp_path / "small.yaml"
    path.write_text(BASE, encoding="utf-8")
    return path


def _dead_pid() -> int:
    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()
    return proc.pid


def _no_computation(monkeypatch):
    def fail(*a, **k):
        raise AssertionError("the run computed before the output path was checked")
    monkeypatch.setattr(cli, "run_case", fail)


# ------------------------------------------------------------------ the path, before any computation
@pytest.mark.parametrize("target, fragment", [
    (".", "name a new folder for the results"),
    ("..", "name a new folder for the results"),
    ("/proc/results", "is under /proc"),
    ("/sys/results", "is under /sys"),
])
def test_unusable_output_names_are_refused_before_computing(target, fragment, small_case, capsys, monkeypatch):
    _no_computation(monkeypatch)
    assert cli.main(["run", str(small_case), "-o", target, "-q"]) == 2
    err = capsys.readouterr().err
    assert fragment in err and "Traceback" not in err and len(err.strip().splitlines()) == 1


def test_parent_that_is_a_file_is_refused(small_case, tmp_path, capsys, monkeypatch):
    _no_computation(monkeypatch)
    (tmp_path / "afile").write_text("x")
    assert cli.main(["run", str(small_case), "-o", str(tmp_path / "afile" / "out"), "-q"]) == 2
    assert f"{tmp_path / 'afile'} is a file, not a folder" in capsys.readouterr().err


def test_dangling_symlink_is_refused(small_case, tmp_path, capsys, monkeypatch):
    _no_computation(monkeypatch)
    (tmp_path / "link").symlink_to(tmp_path / "nowhere")
    assert cli.main(["run", str(small_case), "-o", str(tmp_path / "link"), "-q"]) == 2
    assert "is a symbolic link to" in capsys.readouterr().err


def test_overlong_name_is_refused(small_case, tmp_path, capsys, monkeypatch):
    _no_computation(monkeypatch)
    assert cli.main(["run", str(small_case), "-o", str(tmp_path / ("r" * 250)), "-q"]) == 2
    assert "choose a shorter name" in capsys.readouterr().err


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes anywhere")
def test_unwritable_parent_is_refused(small_case, tmp_path, capsys, monkeypatch):
    _no_computation(monkeypatch)
    ro = tmp_path / "ro"
    ro.mkdir(mode=0o555)
    assert cli.main(["run", str(small_case), "-o", str(ro / "out"), "-q"]) == 2
    assert "permission denied" in capsys.readouterr().err


def test_unwritable_parent_is_refused_by_the_check(tmp_path, monkeypatch):
    real_access = os.access
    monkeypatch.setattr(output.os, "access", lambda p, mode: False if str(p) == str(tmp_path) else
                        real_access(p, mode))
    with pytest.raises(OutputPathError, match="permission denied"):
        validate_output_path(tmp_path / "out")


# ------------------------------------------------------------------ --force
def test_force_refuses_a_folder_eqdesign_did_not_write(small_case, tmp_path, capsys, monkeypatch):
    _no_computation(monkeypatch)
    out = tmp_path / "mine"
    out.mkdir()
    (out / "thesis.tex").write_text("not an eqdesign output")
    assert cli.main(["run", str(small_case), "-o", str(out), "-q", "--force"]) == 2
    assert "was not written by eqdesign (no .eqdesign-output marker)" in capsys.readouterr().err
    assert [p.name for p in out.iterdir()] == ["thesis.tex"]


@pytest.mark.parametrize("which", ["cwd", "case folder", "home", "parent of cwd"])
def test_force_refuses_protected_folders(which, small_case, tmp_path, capsys, monkeypatch):
    _no_computation(monkeypatch)
    work = tmp_path / "work"
    work.mkdir()
    (work / ".eqdesign-output").write_text("even with a marker")
    monkeypatch.chdir(work)
    target = {"cwd": work, "case folder": tmp_path, "parent of cwd": tmp_path, "home": work}[which]
    if which == "home":
        monkeypatch.setenv("HOME", str(work))
        monkeypatch.chdir(tmp_path)
    if which == "case folder":
        (tmp_path / ".eqdesign-output").write_text("even with a marker")
        monkeypatch.chdir(work)
    assert cli.main(["run", str(small_case), "-o", str(target), "-q", "--force"]) == 2
    err = capsys.readouterr().err
    assert "--force never replaces it" in err
    assert (work / ".eqdesign-output").exists() and small_case.exists()


def test_every_output_folder_carries_the_marker_and_force_replaces_it(small_case, tmp_path, capsys):
    out = tmp_path / "out"
    assert cli.main(["run", str(small_case), "-o", str(out), "-q", "--coarse"]) == 0
    assert (out / ".eqdesign-output").is_file()
    assert cli.main(["run", str(small_case), "-o", str(out), "-q", "--coarse", "--force"]) == 0
    assert (out / "report.html").is_file()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out", "small.yaml"]   # no lock, no temporaries


# ------------------------------------------------------------------ the lock
def test_a_second_run_into_a_locked_folder_is_refused_at_once(small_case, tmp_path, capsys, monkeypatch):
    _no_computation(monkeypatch)
    out = tmp_path / "res"
    with OutputFolder(out):                      # a run in progress (this process holds the lock)
        assert cli.main(["run", str(small_case), "-o", str(out), "-q"]) == 2
        err = capsys.readouterr().err
        assert f"eqdesign run: {out}: another eqdesign run (process {os.getpid()}) is writing into this folder" in err
        assert (tmp_path / ".res.eqdesign-lock").exists()
    assert not (tmp_path / ".res.eqdesign-lock").exists()


def test_stale_lock_and_partial_folder_of_a_dead_run_are_removed(small_case, tmp_path):
    dead = _dead_pid()
    (tmp_path / ".out.eqdesign-lock").write_text(f"{dead}\n")
    partial = tmp_path / ".out.partial-abc123"
    partial.mkdir()
    (partial / ".eqdesign-partial").write_text(f"{dead}\n")
    (partial / "report.html").write_text("half")
    stranger = tmp_path / ".out.partial-xyz"          # no marker: not ours, left alone
    stranger.mkdir()
    assert cli.main(["run", str(small_case), "-o", str(tmp_path / "out"), "-q", "--coarse"]) == 0
    assert sorted(p.name for p in tmp_path.iterdir()) == [".out.partial-xyz", "out", "small.yaml"]


def test_second_process_is_refused_and_sigterm_is_handled_like_ctrl_c(tmp_path):
    """A run holds the lock while it computes: a second run into the same folder, started
    meanwhile, is refused at once with exit 2.  SIGTERM to the first run then gives exit
    143 with a message, and leaves no folder, no lock and no temporary behind."""
    case = tmp_path / "small.yaml"
    case.write_text(BASE, encoding="utf-8")
    out = tmp_path / "res"
    command = [sys.executable, "-m", "eqdesign.solve.cli", "run", str(case), "-o", str(out), "-q"]
    first = subprocess.Popen([sys.executable, "-c", SLOW_RUN, "run", str(case), "-o", str(out), "-q"],
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    lock = tmp_path / ".res.eqdesign-lock"
    deadline = time.monotonic() + 120
    while not lock.exists() and first.poll() is None and time.monotonic() < deadline:
        time.sleep(0.02)
    assert lock.exists() and first.poll() is None
    second = subprocess.run(command, capture_output=True, text=True, timeout=120)
    assert second.returncode == 2 and "Traceback" not in second.stderr
    assert f"{out}: another eqdesign run (process {first.pid}) is writing into this folder" in second.stderr
    assert first.poll() is None, "the demo finished before the test could interrupt it"
    first.send_signal(signal.SIGTERM)
    _, err = first.communicate(timeout=120)
    assert first.returncode == 143
    assert "terminated (SIGTERM); no output folder was written" in err and "Traceback" not in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["small.yaml"]
