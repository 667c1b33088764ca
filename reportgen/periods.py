"""Period labels: one readable, sortable text per period of each supported frequency."""

from __future__ import annotations

import pandas as pd


def period_label(period: pd.Period) -> str:
    """``2011``, ``2011Q1``, ``2011-03``, or the ISO date for weekly and daily periods.

    Weekly periods are labelled by the date of their last day, which is the date the data file
    carries for them.
    """
    freqstr = period.freqstr.upper()
    if freqstr.startswith("W"):
        return str(period.asfreq("D", how="end"))  # zero-padded, and valid beyond the year 9999
    return str(period)


def index_labels(index: pd.PeriodIndex) -> tuple[str, ...]:
    """Labels of every period of an index, in order."""
    return tuple(period_label(period) for period in index)
