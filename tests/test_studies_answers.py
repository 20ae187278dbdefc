"""The answers of the inverse questions share one shape: value, unit, status, message."""
from __future__ import annotations

import numpy as np
import pytest

from eqdesign.solve.studies.answers import NOT_REACHABLE, RANGE_END, REACHED, STATUSES, InverseAnswer
from eqdesign.solve.studies.intervals import pressure_interval, temperature_interval
from eqdesign.solve.studies.inverse import (FeedRatioAnswer, PressureAnswer, TemperatureAnswer,
                                            feed_ratio_for_conversion, pressure_for_conversion,
                                            temperature_for_conversion)

AMMONIA = (["N2", "H2", "NH3"], {"N2": 1, "H2": 3})


def test_every_answer_record_has_the_shared_shape():
    """All six answer records carry value, unit, status and message."""
    from eqdesign.solve.studies.intervals import FeedRatioUncertainty, PressureUncertainty, TemperatureUncertainty
    for cls, unit in ((TemperatureAnswer, "K"), (PressureAnswer, "Pa"), (FeedRatioAnswer, "mol/mol"),
                      (TemperatureUncertainty, "K"), (PressureUncertainty, "Pa"), (FeedRatioUncertainty, "mol/mol")):
        assert issubclass(cls, InverseAnswer)
        assert cls.unit == unit
        assert "message" in cls.__dataclass_fields__ and "reached" in cls.__dataclass_fields__


def test_temperature_answer_statuses_per_question():
    """Ammonia, 1:3 N2:H2 at 200 bar: 20 % is reached near 833 K (the value the
    temperature_for_conversion docstring quotes, checked there against the JANAF-based data);
    5 % is met over all of 500-600 K (range end); 95 % is not reachable in 500-1000 K
    (the statuses are the check here, not a published number)."""
    ans = temperature_for_conversion(*AMMONIA, "200 bar", "N2", [0.20, 0.95], T_range=(500, 1000))
    assert list(ans.status) == [REACHED, NOT_REACHABLE]
    assert ans.value[0] == ans.T[0] == pytest.approx(833.2, abs=0.1)
    assert np.isnan(ans.value[1]) and ans.best_conversion[1] < 0.95
    end = temperature_for_conversion(*AMMONIA, "200 bar", "N2", 0.05, T_range=(500, 600))
    assert end.status == RANGE_END and end.value == end.T
    assert set(np.atleast_1d(ans.status)) <= set(STATUSES)


def test_pressure_and_ratio_answers_value_is_their_field():
    """The value property is the record's own named field (unchanged attribute names)."""
    p = pressure_for_conversion(*AMMONIA, 700, "N2", 0.40, P_range=("10 bar", "1000 bar"))
    assert p.value == p.P and p.unit == "Pa" and p.status == REACHED
    assert p.P / 1e5 == pytest.approx(146.1, abs=0.1)      # pressure_interval docstring value
    r = feed_ratio_for_conversion(["CO", "H2O", "CO2", "H2"], {"CO": 1}, 500, "20 bar", "CO", 0.99,
                                  ratio=("H2O", "CO"), ratio_range=(0.5, 10))
    assert r.value == r.ratio and r.unit == "mol/mol" and r.status == REACHED
    assert r.ratio == pytest.approx(1.705, abs=1e-3)       # feed_ratio_interval docstring value


def test_uncertainty_answers_share_the_shape():
    """Interval records: value is the nominal answer, status as the nominal question's."""
    t = temperature_interval(*AMMONIA, "200 bar", "N2", 0.20, T_range=(500, 1000), method="linear")
    assert t.value == t.T and t.unit == "K" and t.status == REACHED and t.shape == ()
    p = pressure_interval(*AMMONIA, 700, "N2", [0.40, 0.999], P_range=("10 bar", "1000 bar"), method="linear")
    assert list(p.status) == [REACHED, NOT_REACHABLE] and p.shape == (2,)
