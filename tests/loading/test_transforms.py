"""Transforms: each step's arithmetic and lineage (common practice definitions)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from reportgen.errors import Location, TransformError
from reportgen.transforms import Step, apply_transforms, lineage_of

WHERE = Location("m.yaml", 3, 5, "series.x.transform")


def _series(values: list[float], freq: str = "M") -> pd.Series:
    return pd.Series(values, index=pd.period_range("2010-01", periods=len(values), freq=freq), name="x")


def test_log_diff_equals_difference_of_logs() -> None:
    values = _series([100.0, 110.0, 121.0, 133.1])
    result = apply_transforms(values, [Step("log-diff")], "monthly", WHERE)
    np.testing.assert_allclose(result.to_numpy(), np.diff(np.log(values.to_numpy())))
    assert str(result.index[0]) == "2010-02"


def test_growth_is_percent_change() -> None:
    result = apply_transforms(_series([100.0, 110.0, 99.0]), [Step("growth")], "monthly", WHERE)
    np.testing.assert_allclose(result.to_numpy(), [10.0, -10.0])


def test_second_difference_and_lag() -> None:
    values = _series([1.0, 4.0, 9.0, 16.0, 25.0])
    np.testing.assert_allclose(apply_transforms(values, [Step("diff", 2)], "monthly", WHERE).to_numpy(),
                               [2.0, 2.0, 2.0])
    lagged = apply_transforms(values, [Step("lag", 2)], "monthly", WHERE)
    assert str(lagged.index[0]) == "2010-03"
    np.testing.assert_allclose(lagged.to_numpy(), [1.0, 4.0, 9.0])


def test_seasonal_difference_uses_the_calendar() -> None:
    quarterly = _series([float(i) for i in range(10)], "Q")
    result = apply_transforms(quarterly, [Step("seasonal-diff")], "quarterly", WHERE)
    np.testing.assert_allclose(result.to_numpy(), [4.0] * 6)
    with pytest.raises(TransformError, match="an annual series has none"):
        apply_transforms(_series([1.0, 2.0, 3.0], "Y"), [Step("seasonal-diff")], "annual", WHERE)


def test_lineage_reads_as_a_composition() -> None:
    steps = [Step("log"), Step("diff"), Step("lag", 2), Step("seasonal-diff")]
    assert lineage_of("containers", steps, "monthly") == "seasonal-diff(lag(diff(log(containers)), 2), 12)"


def test_growth_of_non_positive_is_refused() -> None:
    with pytest.raises(TransformError) as caught:
        apply_transforms(_series([1.0, -2.0, 3.0]), [Step("growth")], "monthly", WHERE)
    assert caught.value.render() == ("m.yaml:3:5: error[non-positive]: series.x.transform: 'growth' needs positive "
                                     "values; the "
                                     "series is -2 at 2010-02\n  hint: drop the log/growth step, or use a series "
                                     "that stays above zero")


def test_a_chain_that_leaves_nothing_is_refused() -> None:
    with pytest.raises(TransformError, match="after 'diff' no observations are left"):
        apply_transforms(_series([1.0]), [Step("diff")], "monthly", WHERE)
