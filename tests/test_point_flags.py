"""`eqdesign point` shows whether its one state is trustworthy, in text and in --json."""
from __future__ import annotations

import json

from eqdesign.solve import cli


def _json(capsys, argv):
    rc = cli.main(argv + ["--json"])
    return rc, json.loads(capsys.readouterr().out)


def test_point_beyond_the_data_is_flagged(capsys):
    """9000 K is beyond the 200-6000 K range of the NASA polynomials of N2, H2 and NH3
    (McBride, Zehe, Gordon, NASA/TP-2002-211556): converged, but not trustworthy."""
    argv = ["point", "--feed", "N2=1", "H2=3", "--species", "NH3", "-T", "9000 K", "-P", "1 bar"]
    rc, out = _json(capsys, argv)
    assert out["status"] == "converged, not trustworthy"
    assert out["trustworthy"] is False
    assert out["flags"]["outside_data_range"] == ["H2", "N2", "NH3"]
    cli.main(argv)
    text = capsys.readouterr().out
    assert "converged but NOT TRUSTWORTHY" in text
    assert "outside data range: NH3, N2, H2" in text


def test_point_condensing_peng_robinson_state_is_flagged(capsys):
    """CO2 at 250 K and 100 bar is a liquid (its vapour pressure at 250 K is about 18 bar,
    CRC Handbook, from memory): the Peng-Robinson gas answer is flagged."""
    rc, out = _json(capsys, ["point", "--feed", "CO2=1", "--species", "CH4", "-T", "250 K", "-P", "100 bar",
                             "--gas-model", "peng-robinson"])
    assert out["trustworthy"] is False
    assert out["flags"]["condensation_possible"] is True
    assert out["flags"]["text"] == "condensation possible"


def test_point_inside_the_data_is_trustworthy(capsys):
    rc, out = _json(capsys, ["point", "--feed", "N2=1", "H2=3", "--species", "NH3", "-T", "450 degC",
                             "-P", "200 bar"])
    assert rc == 0 and out["status"] == "converged" and out["trustworthy"] is True
    assert out["flags"]["text"] == ""
