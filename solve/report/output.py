"""Writing a run's outputs: CSV text, atomic files and the output folder.
"""
from __future__ import annotations

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


class OutputExistsError(FileExistsError):
    """The output folder exists and is not empty, and ``force`` was not given."""


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


def check_output_folder(outdir: str | Path, force: bool) -> None:
    """Raise :class:`OutputExistsError` when ``outdir`` exists (and is not an empty
    folder) and ``force`` is false."""
    p = Path(outdir)
    if p.exists() and not force:
        if p.is_dir() and not any(p.iterdir()):
            return
        raise OutputExistsError(f"{p}: exists; eqdesign never overwrites results: choose another folder with -o, "
                                "or add --force to replace it")
    if p.exists() and not p.is_dir():
        raise OutputExistsError(f"{p}: is a file, not a folder; choose another name with -o")


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


def write_outputs(result: RunResult, outdir: str | Path, *, force: bool = False) -> list[Path]:
    """Write every output of a run into the folder ``outdir``, all or nothing.

    The files are written (each atomically) into a temporary folder beside ``outdir``,
    which is then renamed to ``outdir``; with ``force`` an existing ``outdir`` is moved
    aside first and deleted after the rename.  On any failure the temporary folder is
    removed and an existing ``outdir`` is left as it was.

    Returns
    -------
    list[Path]
        The files written.
    """
    outdir = Path(outdir)
    check_output_folder(outdir, force)
    files = output_files(result)
    parent = outdir.parent if str(outdir.parent) else Path(".")
    created = []                                  # folders made for the output, innermost last
    p = parent.absolute()
    while not p.exists():
        created.insert(0, p)
        p = p.parent
    parent.mkdir(parents=True, exist_ok=True)
    old = None
    try:
        tmp = Path(tempfile.mkdtemp(prefix=f".{outdir.name}.partial-", dir=parent))
    except BaseException:
        _remove_empty(created)
        raise
    try:
        for name, data in files.items():
            write_atomic(tmp / name, data)
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
        _remove_empty(created)
        raise
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)
    return [outdir / name for name in files]


def _remove_empty(folders: list) -> None:
    """Remove folders made for an output that failed, innermost first, if still empty."""
    for folder in reversed(folders):
        try:
            folder.rmdir()
        except OSError:
            break
