"""Timestamps of REST readings: RFC 3339 text with an offset, or UTC epoch milliseconds."""

from __future__ import annotations

import datetime as dt
import re
import time
from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd

MIN_MS = 0
"""1970-01-01T00:00:00Z."""
MAX_FUTURE_MS = 86_400_000
"""A reading may be stamped at most one day ahead of the server clock (clock skew)."""
_OFFSET = re.compile(r"(?:[zZ]|[+-]\d{2}:?\d{2})$")
_EPOCH = pd.Timestamp(0, tz="UTC")


def parse_times(raw: Sequence[Any]) -> tuple[np.ndarray, dict[int, str]]:
    """Epoch milliseconds for each entry, and the error message per bad index.

    Accepted: RFC 3339 text with ``Z`` or a numeric offset (fractions of a millisecond are
    truncated), or an integer of UTC epoch milliseconds. Local times without an offset are
    refused: a REST client knows its zone, and guessing it would shift data by hours.
    """
    n = len(raw)
    out = np.zeros(n, dtype=np.int64)
    errors: dict[int, str] = {}
    types = set(map(type, raw))
    if types <= {int}:
        out[:] = np.asarray(raw, dtype=np.int64) if n else out
    else:
        is_int = np.fromiter((type(v) is int for v in raw), dtype=bool, count=n)
        is_str = np.fromiter((type(v) is str for v in raw), dtype=bool, count=n)
        if is_int.any():
            out[is_int] = np.asarray(
                [raw[i] for i in np.flatnonzero(is_int).tolist()], dtype=np.int64
            )
        for i in np.flatnonzero(~(is_int | is_str)).tolist():
            value = raw[i]
            errors[int(i)] = (
                f"time {value!r} is not a whole number of epoch milliseconds"
                if isinstance(value, float)
                else f"time {value!r} is neither RFC 3339 text nor epoch milliseconds"
            )
        if is_str.any():
            idx = np.flatnonzero(is_str)
            # Historians stamp many tags with one instant: parse each distinct text once.
            codes, distinct = pd.factorize(pd.Series([raw[i] for i in idx.tolist()], dtype=object))
            unique_ms = _uniform_offset(list(distinct))
            if unique_ms is not None:
                out[idx] = unique_ms[codes]
            else:
                texts = [raw[i] for i in idx.tolist()]
                ms = _parse_rfc3339(list(distinct))[codes]
                offset = np.fromiter((bool(_OFFSET.search(t)) for t in texts), bool, len(texts))
                good = offset & ~np.isnan(ms)
                out[idx[good]] = ms[good].astype(np.int64)
                for j in np.flatnonzero(~good):
                    errors[int(idx[j])] = (
                        f"time {texts[j]!r} has no UTC offset; add 'Z' or '+hh:mm' (RFC 3339)"
                        if not offset[j]
                        else f"time {texts[j]!r} is not an RFC 3339 timestamp"
                    )
    limit = int(time.time() * 1000) + MAX_FUTURE_MS
    bad = (out < MIN_MS) | (out > limit)
    for i in np.flatnonzero(bad).tolist():
        if int(i) not in errors:
            errors[int(i)] = (
                f"time {raw[i]!r} is before 1970"
                if out[i] < MIN_MS
                else f"time {raw[i]!r} is more than a day ahead of the server clock"
            )
    return out, errors


def _uniform_offset(texts: list[str]) -> np.ndarray | None:
    """The fast path: every text readable and carrying the same offset (typically Z).

    Without ``utc=True`` pandas keeps naive texts naive, so an aware result proves that
    every text had an offset; anything else returns None for the careful path.
    """
    try:
        parsed = pd.to_datetime(pd.Series(texts), format="ISO8601")
    except (ValueError, TypeError, OverflowError):
        return None
    if not isinstance(parsed.dtype, pd.DatetimeTZDtype):
        return None
    ms = (parsed - _EPOCH) // pd.Timedelta(milliseconds=1)
    return ms.to_numpy(dtype=np.int64)


def _parse_rfc3339(texts: list[str]) -> np.ndarray:
    """Epoch ms per text as float (NaN where unreadable); vectorised when all are good."""
    try:
        parsed = pd.to_datetime(pd.Series(texts), format="ISO8601", utc=True)
        ms = (parsed - _EPOCH) // pd.Timedelta(milliseconds=1)
        return ms.to_numpy(dtype="float64")
    except (ValueError, TypeError, OverflowError):
        pass
    out = np.full(len(texts), np.nan)
    epoch = dt.datetime(1970, 1, 1, tzinfo=dt.UTC)
    for i, text in enumerate(texts):
        try:
            stamp = dt.datetime.fromisoformat(text)
        except ValueError:
            continue
        if stamp.tzinfo is not None:
            out[i] = (stamp - epoch) // dt.timedelta(milliseconds=1)
    return out
