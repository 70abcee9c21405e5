"""Results as CSV, safe to open in a spreadsheet.

Layout: a ``time`` column (RFC 3339 UTC: the interval or bucket start), then per metric
one column ``<metric> [<unit>]`` for raw intervals, or four columns ``<metric> mean
[<unit>]``, ``<metric> min [<unit>]``, ``<metric> max [<unit>]``, ``<metric> count`` for
buckets. Rows are the union of the series' times; an empty cell is no value.

Formula injection (OWASP, "CSV Injection"): a spreadsheet runs a cell starting with
``=``, ``+``, ``-``, ``@``, a tab or a carriage return as a formula. Every text cell
starting with one of those is prefixed with a single quote, which spreadsheets show as
text. Numbers are written by the CSV writer from floats, so they are numbers (a negative
number keeps its minus: a cell that parses wholly as a number cannot hold a formula).
"""

from __future__ import annotations

import csv
import io
import re

import numpy as np
import pandas as pd

from api.results.service import ResultSet, rfc3339_many

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
_NUMBER = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")


def escape_cell(value: str) -> str:
    """A text cell that a spreadsheet will not evaluate."""
    if value.startswith(FORMULA_STARTS) and not _NUMBER.match(value):
        return "'" + value
    return value


def _escape_column(values: pd.Series) -> pd.Series:
    text = values.astype(str)
    risky = text.str.startswith(FORMULA_STARTS) & ~text.str.fullmatch(_NUMBER.pattern)
    return text.where(~risky, "'" + text)


def to_csv(results: ResultSet) -> str:
    """The CSV text of a result set (header row naming the unit of every column)."""
    columns: dict[str, pd.Series] = {}
    for series in results.series:
        index = pd.Index(series.t_ms, name="t_ms")
        unit = f"[{series.unit}]"
        if results.bucket_ms is None:
            columns[f"{series.metric} {unit}"] = pd.Series(series.mean, index=index)
        else:
            columns[f"{series.metric} mean {unit}"] = pd.Series(series.mean, index=index)
            columns[f"{series.metric} min {unit}"] = pd.Series(series.min, index=index)
            columns[f"{series.metric} max {unit}"] = pd.Series(series.max, index=index)
            columns[f"{series.metric} count"] = pd.Series(series.count, index=index)
    frame = pd.DataFrame(columns) if columns else pd.DataFrame()
    frame = frame.sort_index()
    times = rfc3339_many(frame.index.to_numpy(dtype=np.int64))
    frame.insert(0, "time", times)
    for name in frame.columns:
        if frame[name].dtype == object:
            frame[name] = _escape_column(frame[name])
    frame.columns = [escape_cell(str(c)) for c in frame.columns]
    buffer = io.StringIO()
    # Counts are floats after the outer join (NaN where absent); print them as integers.
    for name in frame.columns:
        if name.endswith(" count"):
            frame[name] = frame[name].astype("Int64")
    frame.to_csv(buffer, index=False, lineterminator="\r\n", quoting=csv.QUOTE_MINIMAL)
    return buffer.getvalue()
