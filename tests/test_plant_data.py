"""Plant-sample files: reading, checking and the approach trend (solve/casefile/plant_data.py)."""
from __future__ import annotations

import pathlib

import numpy as np
import pytest

from eqdesign.solve import equilibrium
from eqdesign.solve.casefile.plant_data import PlantDataError, plant_trend, read_plant_samples

CASES = pathlib.Path(__file__).resolve().parents[1] / "cases"
WGS = "CO + H2O = CO2 + H2"
SMR = "CH4 + H2O = CO + 3 H2"

GOOD = """# invented test file
time,temperature,pressure,H2,CO,CO2,CH4
ISO 8601,degC,bar,mol% dry,mol% dry,mol% dry,mol% dry
2026-01-05T08:00,218.0,27.5,75.70,0.26,18.66,5.38
2026-01-12T08:00,219.0,27.5,75.68,0.28,18.66,5.38
"""


def _file(tmp_path, text, name="samples.csv"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_reads_units_and_basis(tmp_path):
    s = read_plant_samples(_file(tmp_path, GOOD))
    assert len(s) == 2 and s.basis == "dry" and s.water is None
    assert s.T[0] == pytest.approx(491.15) and s.P[1] == pytest.approx(27.5e5)
    assert s.analysis["CO"][1] == pytest.approx(0.0028)
    assert str(s.times[1]) == "2026-01-12T08:00:00"


def test_every_problem_reported_at_once_word_for_word(tmp_path):
    """A missing column and a temperature without unit stop the reading at the header; bad
    readings are each reported with file, line, column and the fix."""
    path = _file(tmp_path, "time,temperature,H2,CO\nISO 8601,,mol% dry,mol% dry\n2026-01-05T08:00,218,90,10\n")
    with pytest.raises(PlantDataError) as err:
        read_plant_samples(path)
    assert [str(p) for p in err.value.problems] == [
        f"{path}, line 1, column pressure: missing column 'pressure'; add it to the header row"]
    path = _file(tmp_path, "time,temperature,pressure,H2,CO\nISO 8601,,bar,mol% dry,mol% dry\n"
                           "2026-01-05T08:00,218,27,90,10\n")
    with pytest.raises(PlantDataError) as err:
        read_plant_samples(path)
    assert [str(p) for p in err.value.problems] == [
        f"{path}, line 2, column temperature: temperature without unit; write e.g. degC or K"]
    path = _file(tmp_path, "time,temperature,pressure,H2,CO\nISO 8601,degC,bar,mol% dry,mol% dry\n"
                           "2026-01-05T08:00,218,27,90,-1\n"
                           "2026-01-12T08:00,218,27,90,7\n"
                           "2026-01-19T08:00,218,27,,10\n")
    with pytest.raises(PlantDataError) as err:
        read_plant_samples(path)
    assert [str(p) for p in err.value.problems] == [
        f"{path}, line 3, column CO: negative reading -1; correct it or delete the row",
        f"{path}, line 4: the analysis sums to 97.00 mol%, not 100 ± 1; check the readings or add the "
        "missing species",
        f"{path}, line 5, column H2: '' is not a number; fill in the reading or delete the row"]
    assert isinstance(err.value, ValueError)
    assert str(err.value).startswith("3 problem(s) in the sample file; nothing was computed")


@pytest.mark.parametrize("units, message", [
    ("ISO 8601,degC,barg,mol% dry,mol% dry", "line 2, column pressure: unit 'barg' is a gauge pressure; "
                                             "convert to absolute and write bar, kPa or psi"),
    ("ISO 8601,degC,bar,mol% dry,mol% wet", "line 2, column CO: basis 'wet' differs from the other analysis "
                                            "columns ('dry'); give the whole analysis on one basis"),
    ("ISO 8601,degC,bar,mol% dry,ppm", "line 2, column CO: unit 'ppm': write the analysis unit as one of "
                                       "'mol% wet', 'mol% dry', 'fraction wet', 'fraction dry'"),
    ("seconds,degC,bar,mol% dry,mol% dry", "line 2, column time: unit 'seconds': the time column's unit "
                                           "must be 'ISO 8601' (times such as 2026-01-05T08:00)"),
])
def test_unit_row_messages(tmp_path, units, message):
    path = _file(tmp_path, f"time,temperature,pressure,H2,CO\n{units}\n2026-01-05T08:00,218,27,90,10\n")
    with pytest.raises(PlantDataError) as err:
        read_plant_samples(path)
    assert [str(p) for p in err.value.problems] == [f"{path}, {message}"]


def test_unknown_species_column_names_the_fix(tmp_path):
    path = _file(tmp_path, "time,temperature,pressure,H2,CO,carbon dioxid\n"
                           "ISO 8601,degC,bar,mol% dry,mol% dry,mol% dry\n2026-01-05T08:00,218,27,80,10,10\n")
    with pytest.raises(PlantDataError) as err:
        read_plant_samples(path)
    assert str(err.value.problems[0]).startswith(f"{path}, line 1, column carbon dioxid: unknown species "
                                                 "'carbon dioxid'; did you mean")


def test_recovers_a_known_approach_from_a_written_file(tmp_path):
    """A dry analysis written from our own shift equilibrium at T + 5 K (exothermic: short of
    equilibrium) gives back an approach of 5 K at every sample (to the file's 6 decimals);
    water from the steam-to-carbon ratio by the oxygen balance."""
    T = 273.15 + np.array([210.0, 220.0, 230.0])
    # an invented converter inlet whose O/C is 3 (C = 0.15, so H2O = 3 × 0.15 - 0.03 - 2 × 0.07)
    feed = {"CH4": 0.05, "CO": 0.03, "CO2": 0.07, "H2": 0.40, "H2O": 3.0 * 0.15 - 0.03 - 0.14}
    eq = equilibrium(list(feed), {k: np.full(3, v) for k, v in feed.items()}, T + 5.0, "30 bar", reactions=[WGS])
    order = ["H2", "CO", "CO2", "CH4"]
    y = np.column_stack([eq.mole_fractions[k] for k in order])
    y = 100 * y / y.sum(axis=1, keepdims=True)
    lines = ["time,temperature,pressure," + ",".join(order), "ISO 8601,K,bar," + ",".join(["mol% dry"] * 4)]
    for q in range(3):
        lines.append(f"2026-02-0{q + 1}T06:00,{T[q]:.6f},30," + ",".join(f"{v:.6f}" for v in y[q]))
    trend = plant_trend(_file(tmp_path, "\n".join(lines) + "\n"), WGS, steam_ratio=3.0)
    np.testing.assert_allclose(trend.result[WGS].approach, 5.0, atol=0.02)
    header, rows = trend.table()
    assert header == ["time", "T [degC]", "T_eq CO + H2O = CO2 + H2 [degC]", "approach CO + H2O = CO2 + H2 [K]",
                      "flags"]
    assert rows[0][3] == pytest.approx(5.0, abs=0.02)


def test_dry_file_needs_water_or_steam_ratio(tmp_path):
    with pytest.raises(PlantDataError) as err:
        plant_trend(_file(tmp_path, GOOD), WGS)
    assert str(err.value.problems[0]).endswith("a dry analysis without an H2O column needs the feed "
                                               "steam-to-carbon ratio (steam_ratio=...) to restore the water")


def test_demo_files_show_the_built_in_decline():
    """The invented demo data (cases/make_plant_demo.py builds a shift approach growing from
    4 K to 16 K and a reforming approach from 6 K to 20 K over the half-year): the fitted
    trend recovers start and growth within the added noise, and the faulty sample is flagged."""
    shift = plant_trend(CASES / "plant_shift_samples.csv", WGS, steam_ratio=3.0, feed={"CH4": 1, "H2O": 3})
    start, per_month = shift.drift(WGS)
    assert 2.0 < start < 6.0 and 1.6 < per_month < 2.6
    assert shift.result.usable.sum() == len(shift.samples) - 1
    assert shift.result.sample_flags[15].startswith("element balance: H/C")
    header, rows = shift.table()
    assert rows[15][2] == "" and rows[15][3] == ""
    reformer = plant_trend(CASES / "plant_reformer_samples.csv", [SMR, WGS], steam_ratio=3.0,
                           feed={"CH4": 1, "H2O": 3})
    start, per_month = reformer.drift(SMR)
    assert 4.0 < start < 8.0 and 1.8 < per_month < 2.9
    assert abs(reformer.drift(WGS)[1]) < 1.0           # the shift stays at equilibrium


def test_demo_files_are_reproducible(tmp_path):
    """The generator is seeded: running it again writes the same files."""
    import runpy
    import shutil
    script = tmp_path / "make_plant_demo.py"
    shutil.copy(CASES / "make_plant_demo.py", script)
    runpy.run_path(str(script), run_name="__main__")
    for name in ("plant_shift_samples.csv", "plant_reformer_samples.csv"):
        assert (tmp_path / name).read_text() == (CASES / name).read_text()


def test_wet_file_and_dry_file_with_measured_water_agree(tmp_path):
    """The same gas written as a wet analysis and as a dry analysis with a separately measured
    water column (mol% wet) gives the same approach."""
    wet = {"H2": 56.0, "CO": 0.21, "CO2": 15.0, "CH4": 4.0, "H2O": 24.79}
    dry_total = 100.0 - wet["H2O"]
    names = ["H2", "CO", "CO2", "CH4"]
    wet_text = ("time,temperature,pressure,H2,CO,CO2,CH4,H2O\nISO 8601,degC,bar" + ",mol% wet" * 5 + "\n"
                "2026-03-01T10:00,218,27.5," + ",".join(str(wet[k]) for k in names + ["H2O"]) + "\n")
    dry_text = ("time,temperature,pressure,H2,CO,CO2,CH4,steam\nISO 8601,degC,bar" + ",mol% dry" * 4
                + ",mol% wet\n2026-03-01T10:00,218,27.5,"
                + ",".join(f"{100 * wet[k] / dry_total:.10f}" for k in names) + f",{wet['H2O']}\n")
    a = plant_trend(_file(tmp_path, wet_text, "wet.csv"), WGS)
    b = plant_trend(_file(tmp_path, dry_text, "dry.csv"), WGS)
    assert a.samples.basis == "wet" and b.samples.basis == "dry" and b.samples.water is not None
    assert b.result[WGS].approach[0] == pytest.approx(a.result[WGS].approach[0], abs=1e-8)
