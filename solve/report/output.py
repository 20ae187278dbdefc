"""Writing a run's outputs: the files, written atomically, and the output folder.

An output folder is made in four steps, all or nothing:

1. :func:`check_output_folder` validates the path before anything is computed (the parent
   is a writable folder, the name is usable, nothing under /proc or /sys, no dangling
   symbolic link) and refuses an existing folder unless ``force`` is given and the folder
   is empty or carries the marker file :data:`MARKER` that every output folder holds.
2. :class:`OutputFolder` takes a lock beside the target (``.<name>.eqdesign-lock``, an
   ``fcntl`` lock held for the whole run) so a second run into the same folder is refused
   at once; it removes partial folders left by runs that died.
3. The files are written into a private temporary folder beside the target
   (``.<name>.partial-*``, marked with the writer's process id).
4. The temporary folder is renamed to the target in one step (a replaced folder is moved
   aside first and deleted after).

An interruption (Ctrl-C, SIGTERM, a full disk) leaves the earlier folder as it was and
no partial folder behind.
"""
from __future__ import annotations

import errno
import fcntl
import hashlib
import json
import os
import shutil
import tempfile
from pathlib import Path

import numpy as np

from . import figures as plots
from .html import build_report
from .numbers import json_number
from .records import RunResult, UncertaintyRecord
from .tables import csv_text


#: Marker file in every output folder: ``--force`` replaces only folders that carry it.
MARKER = ".eqdesign-output"
#: Marker file in a temporary folder while a run writes it: the writer's process id.
PARTIAL_MARKER = ".eqdesign-partial"
#: Lock file beside the target: ``.<name>.eqdesign-lock``, holding the process id of the run.
LOCK_SUFFIX = ".eqdesign-lock"
#: Characters the temporary and lock names add to the folder name.
NAME_ROOM = 24
#: Folders that never hold an output (kernel interfaces).
SYSTEM_FOLDERS = ("/proc", "/sys", "/dev")


class OutputExistsError(FileExistsError):
    """The output folder exists (not empty, or not replaceable), or is in use by another run."""


class OutputBusyError(OutputExistsError):
    """Another run is writing into the same output folder (it holds the lock)."""


class OutputPathError(ValueError):
    """The output path cannot hold an output folder (its parent, name or kind)."""


def write_atomic(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file in the same folder and
    :func:`os.replace`: readers see the old file or the complete new one, never a part."""
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as f:
            f.write(data)
            f.flush()
            os.fsync(f.fileno())
        os.chmod(tmp, 0o666 & ~_umask())          # mkstemp makes owner-only files
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise


def _umask() -> int:
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def _pid_alive(pid: int) -> bool:
    """Whether a process with this id exists (signal 0 probes without sending)."""
    if pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:          # exists, owned by someone else
        return True
    return True


def _nearest_existing(path: Path) -> Path:
    """``path`` or its nearest ancestor that exists (a dangling link counts as existing)."""
    while not os.path.lexists(path) and path != path.parent:
        path = path.parent
    return path


def validate_output_path(outdir: str | Path) -> Path:
    """Check that ``outdir`` can become an output folder; return it as an absolute path.

    Refused with :class:`OutputPathError`: an empty name, ``.`` or ``..``; a path under
    /proc, /sys or /dev; a name too long for the file system (with room for the temporary
    and lock names); a dangling symbolic link; an existing file; a parent that is a file or
    not writable.  Missing parent folders are allowed (the run makes them).

    >>> validate_output_path("/proc/results")
    Traceback (most recent call last):
    ...
    eqdesign.solve.report.output.OutputPathError: /proc/results: is under /proc, which holds no files of yours; choose a folder such as ./results
    """
    text = str(outdir)
    p = Path(os.path.abspath(text))
    if not text.strip() or Path(text).name in ("", ".", "..") or text.rstrip("/").endswith(("/.", "/..")):
        raise OutputPathError(f"{text!r}: name a new folder for the results, e.g. -o results "
                              "(not '.', '..' or an empty name)")
    real = Path(os.path.realpath(p))
    for system in SYSTEM_FOLDERS:
        if real == Path(system) or Path(system) in real.parents:
            raise OutputPathError(f"{text}: is under {system}, which holds no files of yours; choose a folder "
                                  "such as ./results")
    if os.path.islink(p) and not p.exists():
        raise OutputPathError(f"{text}: is a symbolic link to {os.readlink(p)!r}, which does not exist; remove the "
                              "link or choose another folder")
    existing = _nearest_existing(p.parent)
    try:
        name_max = os.pathconf(existing if existing.is_dir() else existing.parent, "PC_NAME_MAX")
    except (OSError, ValueError):
        name_max = 255
    if len(p.name.encode("utf-8")) > name_max - NAME_ROOM:
        raise OutputPathError(f"{text}: the folder name has {len(p.name.encode('utf-8'))} bytes; at most "
                              f"{name_max - NAME_ROOM} are possible here; choose a shorter name")
    if not existing.is_dir():
        raise OutputPathError(f"{text}: {existing} is a file, not a folder; choose an output folder in an "
                              "existing folder")
    if not os.access(existing, os.W_OK | os.X_OK):
        raise OutputPathError(f"{text}: cannot write in {existing} (permission denied); choose a folder you "
                              "can write in")
    return p


def check_output_folder(outdir: str | Path, force: bool, *, protected=()) -> None:
    """Check ``outdir`` before a run computes anything.

    Raises :class:`OutputPathError` (see :func:`validate_output_path`), or
    :class:`OutputExistsError` when ``outdir`` is a file, or a folder that is not empty
    and ``force`` is false.  With ``force``, only an empty folder or one that carries the
    marker :data:`MARKER` (written by eqdesign) is replaced; the current folder, the home
    folder, a folder that contains the current folder and the ``protected`` folders (the
    case file's own folder) are refused.
    """
    p = validate_output_path(outdir)
    if not p.exists():
        return
    if not p.is_dir():
        raise OutputExistsError(f"{outdir}: is a file, not a folder; choose another name with -o")
    if not any(p.iterdir()):
        return
    if not force:
        raise OutputExistsError(f"{outdir}: exists; eqdesign never overwrites results: choose another folder with -o, "
                                "or add --force to replace it")
    real = Path(os.path.realpath(p))
    cwd = Path(os.path.realpath(os.getcwd()))
    if real == cwd or real in cwd.parents:
        raise OutputExistsError(f"{outdir}: is or contains the current folder; --force never replaces it; choose "
                                "a new folder with -o")
    if real == Path(os.path.realpath(Path.home())):
        raise OutputExistsError(f"{outdir}: is the home folder; --force never replaces it; choose a new folder "
                                "with -o")
    for folder in protected:
        if real == Path(os.path.realpath(folder)):
            raise OutputExistsError(f"{outdir}: is the folder of the case file; --force never replaces it; "
                                    "choose a new folder with -o")
    if not (p / MARKER).is_file():
        raise OutputExistsError(f"{outdir}: exists and was not written by eqdesign (no {MARKER} marker); "
                                "--force replaces only eqdesign output folders: choose another folder with -o")


def output_files(result: RunResult) -> dict:
    """File name -> bytes of every output of a run (report, tables, figures, case copy)."""
    case = result.case
    files: dict[str, bytes] = {}
    if case.output.tables:
        for t in result.tables:
            files[f"{t.name}.csv"] = csv_text(t).encode("utf-8")
    pngs = {}
    for f in result.figures:
        if case.output.report or "png" in case.output.plot_formats:
            pngs[f.name] = plots.render(f.figure, "png")
        for fmt in case.output.plot_formats:
            files[f"{f.name}.{fmt}"] = pngs[f.name] if fmt == "png" else plots.render(f.figure, fmt)
    if case.output.report:
        files["report.html"] = build_report(result, images=pngs).encode("utf-8")
    files["case.yaml"] = case.text.encode("utf-8")
    files["run_summary.json"] = json.dumps(run_summary(result), indent=2).encode("utf-8")
    return files


def run_summary(result: RunResult) -> dict:
    """Machine-readable summary of a run."""
    case = result.case
    return {
        "case_file": case.file,
        "case_sha256": hashlib.sha256(case.text.encode("utf-8")).hexdigest(),
        "title": case.title,
        "started": result.started,
        "elapsed_s": round(result.elapsed, 3),
        "study_times_s": {k: round(v, 3) for k, v in result.study_times.items()},
        "reduced_resolution": result.coarse,
        "points_flagged": result.flagged,
        "largest_residual": None if not np.isfinite(result.largest_residual) else result.largest_residual,
        "extrapolations": result.extrapolations,
        "findings": result.findings,
        "cautions": [{"kind": c.kind, "where": c.where, "text": c.text} for c in result.cautions],
        "tables": [f"{t.name}.csv" for t in result.tables] if case.output.tables else [],
        "figures": [f"{f.name}.{fmt}" for f in result.figures for fmt in case.output.plot_formats],
        "uncertainty": _uncertainty_summary(result.uncertainty),
    }


def _uncertainty_summary(u: UncertaintyRecord | None) -> dict | None:
    if u is None:
        return None
    num = json_number
    return {"method": u.method, "samples": u.samples, "seed": u.seed, "level": u.level,
            "temperature_intervals_K": [{"question": e["label"], "P_bar": e["P"] / 1e5, "T": num(e["T"]),
                                         "lower": num(e["lower"]), "upper": num(e["upper"]), "u": num(e["u"])}
                                        for e in u.intervals]}


class OutputFolder:
    """The lock on an output folder for the whole of a run, and its atomic publication.

    ::

        with OutputFolder("results", force=False) as folder:   # refused at once if in use
            result = run_case(case)
            folder.publish(output_files(result))

    Entering makes missing parent folders and takes an ``fcntl`` lock on
    ``.<name>.eqdesign-lock`` beside the target (raising :class:`OutputBusyError` when
    another live run holds it), then removes partial folders of runs that died.  Leaving,
    by any route, releases the lock and removes the lock file, the temporary folder and
    parent folders it made that stayed empty.
    """

    def __init__(self, outdir: str | Path, *, force: bool = False, protected=()):
        self.outdir = Path(outdir)
        self.force = force
        self.protected = tuple(protected)
        self.parent = self.outdir.parent if str(self.outdir.parent) else Path(".")
        self.lock_path = self.parent / f".{self.outdir.name}{LOCK_SUFFIX}"
        self._fd = None
        self._created: list = []                   # folders made for the output, innermost last
        self.published = False

    # ------------------------------------------------------------------ lock
    def __enter__(self) -> "OutputFolder":
        check_output_folder(self.outdir, self.force, protected=self.protected)
        p = self.parent.absolute()
        while not p.exists():
            self._created.insert(0, p)
            p = p.parent
        try:
            self.parent.mkdir(parents=True, exist_ok=True)
            self._lock()
            self._remove_dead_partials()
        except BaseException:
            self._release()
            raise
        return self

    def __exit__(self, *exc) -> bool:
        self._release()
        return False

    def _lock(self) -> None:
        while True:
            fd = os.open(self.lock_path, os.O_RDWR | os.O_CREAT, 0o644)
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except OSError as exc:
                os.close(fd)
                if exc.errno not in (errno.EWOULDBLOCK, errno.EACCES):
                    raise
                raise OutputBusyError(f"{self.outdir}: another eqdesign run{self._holder()} is writing into this "
                                      "folder; wait for it to finish or choose another folder with -o") from None
            try:
                same = os.fstat(fd).st_ino == os.stat(self.lock_path).st_ino
            except FileNotFoundError:
                same = False
            if same:                               # not a lock file its owner just removed
                os.ftruncate(fd, 0)
                os.write(fd, f"{os.getpid()}\n".encode("ascii"))
                self._fd = fd
                return
            os.close(fd)

    def _holder(self) -> str:
        try:
            pid = int(self.lock_path.read_text(encoding="ascii").strip())
        except (OSError, ValueError):
            return ""
        return f" (process {pid})"

    def _remove_dead_partials(self) -> None:
        """Remove ``.<name>.partial-*`` folders whose writer (the pid in their marker) is dead."""
        for q in self.parent.glob(f".{self.outdir.name}.partial-*"):
            try:
                pid = int((q / PARTIAL_MARKER).read_text(encoding="ascii").strip())
            except (OSError, ValueError):
                continue                           # not ours, or not readable: leave it
            if not _pid_alive(pid) or pid == os.getpid():
                shutil.rmtree(q, ignore_errors=True)

    def _release(self) -> None:
        if self._fd is not None:
            try:
                os.unlink(self.lock_path)
            except FileNotFoundError:
                pass
            os.close(self._fd)                     # closing releases the fcntl lock
            self._fd = None
        if not self.published:
            _remove_empty(self._created)

    # ------------------------------------------------------------------ publish
    def publish(self, files: dict) -> list[Path]:
        """Write ``files`` (name -> bytes) and the marker into a temporary folder beside the
        target, then rename it to the target in one step; return the files written.

        A folder at the target (empty, or replaceable with ``force``; checked again now)
        is moved aside and deleted after the rename.  On any failure the temporary folder
        is removed and the earlier folder is left as it was.
        """
        if self._fd is None:
            raise RuntimeError("OutputFolder.publish: use it inside 'with OutputFolder(...)'")
        check_output_folder(self.outdir, self.force, protected=self.protected)
        outdir, parent = self.outdir, self.parent
        tmp = Path(tempfile.mkdtemp(prefix=f".{outdir.name}.partial-", dir=parent))
        old = None
        try:
            (tmp / PARTIAL_MARKER).write_text(f"{os.getpid()}\n", encoding="ascii")
            for name, data in files.items():
                write_atomic(tmp / name, data)
            write_atomic(tmp / MARKER, b"eqdesign output folder: written by 'eqdesign run'; --force may replace "
                                       b"it\n")
            os.unlink(tmp / PARTIAL_MARKER)
            os.chmod(tmp, 0o777 & ~_umask())
            if outdir.exists():
                if outdir.is_dir() and not any(outdir.iterdir()):
                    outdir.rmdir()
                else:
                    old = Path(tempfile.mkdtemp(prefix=f".{outdir.name}.old-", dir=parent))
                    os.rmdir(old)
                    os.replace(outdir, old)
            os.replace(tmp, outdir)
        except BaseException:
            shutil.rmtree(tmp, ignore_errors=True)
            if old is not None and old.exists() and not outdir.exists():
                os.replace(old, outdir)
            raise
        self.published = True
        if old is not None:
            shutil.rmtree(old, ignore_errors=True)
        return [outdir / name for name in files]


def write_outputs(result: RunResult, outdir: str | Path, *, force: bool = False, protected=()) -> list[Path]:
    """Write every output of a run into the folder ``outdir``, all or nothing.

    The folder is checked (:func:`check_output_folder`), locked, and filled through a
    temporary folder renamed into place (:class:`OutputFolder`).  A caller that runs the
    case itself should hold the :class:`OutputFolder` for the whole run instead, as the
    command line does.

    Returns
    -------
    list[Path]
        The files written.
    """
    with OutputFolder(outdir, force=force, protected=protected) as folder:
        return folder.publish(output_files(result))


def _remove_empty(folders: list) -> None:
    """Remove folders made for an output that failed, innermost first, if still empty."""
    for folder in reversed(folders):
        try:
            folder.rmdir()
        except OSError:
            break
