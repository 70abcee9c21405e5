"""Time cells of uploaded files -> UTC, with the daylight-saving gap and repeat made explicit.

Accepted, per cell: ``YYYY-MM-DD[ HH:MM[:SS[.fff]]]`` (``T`` or spaces between date and
time, ``/`` also accepted in the date) and ``DD.MM.YYYY[ HH:MM[:SS[.fff]]]``, each
optionally followed by ``Z``, ``UTC`` or a UTC offset (``+01:00``, ``+0100``, ``+01``).
A time with an offset is used as given. ``03/04/2026`` is refused: the order of day and
month cannot be known.

A naive time is a wall-clock time of the zone and is converted with the zone's rules
(IANA tz database through pandas / zoneinfo):

- a time inside the hour skipped when daylight saving time starts does not exist; it is
  reported (:data:`GAP`) and never shifted;
- a time inside the hour repeated when daylight saving time ends is ambiguous. It is
  resolved by the order of the rows, separately for each key (each tag; a wide file has a
  single key): the ambiguous times of one key and day are read as daylight time until the
  first one that goes backwards or repeats an earlier one, and as standard time from there
  on. The resolution is accepted only if a repeat was seen and the resolved times strictly
  increase; otherwise every ambiguous time of that key and day is reported
  (:data:`UNDECIDED`) — guessing would misplace the readings by an hour.

Everything is vectorised over the cells; a loop runs over the (day, key) groups of
ambiguous times only.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

NAT = np.iinfo(np.int64).min
"""Integer value of NaT in nanosecond arrays."""
NS_PER_MS = 1_000_000
_NS_PER_MIN = 60_000_000_000
_NS_PER_DAY = 86_400_000_000_000

OK, EMPTY, TEXT, INVALID, GAP, UNDECIDED = 0, 1, 2, 3, 4, 5
"""Status of one time cell: converted, empty, not a time, impossible date, inside the
daylight-saving gap, ambiguous and not decided by the row order."""

_TIME_RE = (
    r"^(?:(?P<y>\d{4})(?P<sep>[-/])(?P<mo>\d{1,2})(?P=sep)(?P<d>\d{1,2})"
    r"|(?P<d2>\d{1,2})\.(?P<mo2>\d{1,2})\.(?P<y2>\d{4}))"
    r"(?:(?:T|\s+)(?P<H>\d{1,2}):(?P<M>\d{2})(?::(?P<S>\d{2})(?:[.,](?P<F>\d{1,9}))?)?)?"
    r"\s*(?P<Z>[Zz]|UTC|[+-]\d{2}(?::?\d{2})?)?$"
)
_SLASH_DATE = re.compile(r"^\d{1,2}/\d{1,2}/\d{2,4}\b")
# Shape of the first cell -> strict format tried on the whole column first; the cells it
# does not fit go through the general pattern. Most files use one naive format throughout.
_FAST_FORMATS = {
    r"\d{4}-\d{2}-\d{2} \d{2}:\d{2}:\d{2}": "%Y-%m-%d %H:%M:%S",
    r"\d{4}-\d{2}-\d{2} \d{2}:\d{2}": "%Y-%m-%d %H:%M",
    r"\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}": "%Y-%m-%dT%H:%M:%S",
    r"\d{4}-\d{2}-\d{2}T\d{2}:\d{2}": "%Y-%m-%dT%H:%M",
    r"\d{2}\.\d{2}\.\d{4} \d{2}:\d{2}:\d{2}": "%d.%m.%Y %H:%M:%S",
    r"\d{2}\.\d{2}\.\d{4} \d{2}:\d{2}": "%d.%m.%Y %H:%M",
}
_MAX_SPANS_IN_MESSAGE = 20


@dataclass
class ParsedTimes:
    """Times of a column of cells.

    Attributes
    ----------
    utc_ns : ndarray of int64
        UTC epoch nanoseconds; :data:`NAT` where ``status`` is not :data:`OK`.
    status : ndarray of int8
        :data:`OK`, :data:`EMPTY`, :data:`TEXT`, :data:`INVALID`, :data:`GAP` or
        :data:`UNDECIDED` per cell.
    naive_ns : ndarray of int64
        The wall-clock time as written, as if it were UTC (for messages).
    repeated_hours : list of (str, tuple of int)
        One message per day whose repeated hour was resolved by row order, with the rows.
    """

    utc_ns: np.ndarray
    status: np.ndarray
    naive_ns: np.ndarray
    repeated_hours: list[tuple[str, tuple[int, ...]]] = field(default_factory=list)


def parse_times(cells: pd.Series, zone: str, keys: np.ndarray, rows: np.ndarray) -> ParsedTimes:
    """Convert time cells to UTC.

    Parameters
    ----------
    cells : pandas.Series of str
        Stripped cell texts, positional.
    zone : str
        IANA zone of naive times (``"UTC"`` for UTC).
    keys : ndarray of int64
        Per cell, the series it belongs to (tag code), for resolving the repeated hour.
    rows : ndarray of int
        Per cell, its row number in the file (for messages).

    Returns
    -------
    ParsedTimes
    """
    n = len(cells)
    naive = np.full(n, NAT, dtype=np.int64)
    offset_min = np.full(n, np.nan)
    status = np.full(n, OK, dtype=np.int8)
    empty = (cells == "").to_numpy()
    status[empty] = EMPTY
    done = empty.copy()

    first = cells[~empty].iloc[0] if (~empty).any() else ""
    fmt = next((f for shape, f in _FAST_FORMATS.items() if re.fullmatch(shape, first)), None)
    if fmt is not None:
        fast = pd.to_datetime(cells, format=fmt, errors="coerce")
        got = fast.notna().to_numpy()
        naive[got] = fast.to_numpy()[got].astype("datetime64[ns]").view(np.int64)
        done |= got

    rest = np.flatnonzero(~done)
    if rest.size:
        parts = cells.iloc[rest].str.extract(_TIME_RE)
        matched = (parts["y"].notna() | parts["y2"].notna()).to_numpy()
        components = pd.DataFrame(
            {
                "year": parts["y"].fillna(parts["y2"]),
                "month": parts["mo"].fillna(parts["mo2"]),
                "day": parts["d"].fillna(parts["d2"]),
                "hour": parts["H"].fillna("0"),
                "minute": parts["M"].fillna("0"),
                "second": parts["S"].fillna("0"),
            }
        ).apply(pd.to_numeric, errors="coerce")
        stamp = pd.to_datetime(components, errors="coerce")
        # pandas rolls 25:00 into the next day and 01:62 into 02:02; a clock never shows them.
        on_clock = (
            (components["hour"] <= 23) & (components["minute"] <= 59) & (components["second"] <= 59)
        ).to_numpy()
        valid = stamp.notna().to_numpy() & matched & on_clock
        whole = stamp.to_numpy().astype("datetime64[ns]").view(np.int64)
        fraction = pd.to_numeric(parts["F"].fillna("0").str.ljust(9, "0")).to_numpy(np.int64)
        naive[rest] = np.where(valid, whole + fraction, NAT)
        status[rest[~matched]] = TEXT
        status[rest[matched & ~valid]] = INVALID
        offset_min[rest] = _offset_minutes(parts["Z"])

    ok = status == OK
    utc = np.full(n, NAT, dtype=np.int64)
    explicit = ok & ~np.isnan(offset_min)
    utc[explicit] = naive[explicit] - (offset_min[explicit] * _NS_PER_MIN).astype(np.int64)
    local = np.flatnonzero(ok & np.isnan(offset_min))
    repeated: list[tuple[str, tuple[int, ...]]] = []
    if local.size:
        utc[local], status[local], repeated = _localize(
            naive[local], zone, keys[local], rows[local]
        )
    utc[status != OK] = NAT
    return ParsedTimes(utc, status, naive, repeated)


def _offset_minutes(z: pd.Series) -> np.ndarray:
    """Offset east of UTC in minutes per cell; NaN for a naive time."""
    z = z.fillna("")
    is_utc = z.str.upper().isin(["Z", "UTC"]).to_numpy()
    parts = z.str.extract(r"^(?P<s>[+-])(?P<h>\d{2}):?(?P<m>\d{2})?$")
    minutes = pd.to_numeric(parts["h"]).to_numpy(float) * 60 + pd.to_numeric(
        parts["m"].fillna("0")
    ).to_numpy(float)
    minutes = np.where((parts["s"] == "-").to_numpy(), -minutes, minutes)
    return np.where(is_utc, 0.0, minutes)


def _localize(naive: np.ndarray, zone: str, keys: np.ndarray, rows: np.ndarray):
    index = pd.DatetimeIndex(naive.view("datetime64[ns]"))
    n = len(naive)
    dst = index.tz_localize(zone, ambiguous=np.ones(n, bool), nonexistent="NaT")
    std = index.tz_localize(zone, ambiguous=np.zeros(n, bool), nonexistent="NaT")
    dst_ns, std_ns = dst.as_unit("ns").asi8.copy(), std.as_unit("ns").asi8.copy()
    status = np.full(n, OK, dtype=np.int8)
    status[dst_ns == NAT] = GAP
    ambiguous = (dst_ns != NAT) & (dst_ns != std_ns)
    utc = dst_ns.copy()
    if not ambiguous.any():
        return utc, status, []

    day = naive // _NS_PER_DAY
    positions = np.flatnonzero(ambiguous)
    groups = pd.DataFrame({"day": day[positions], "key": keys[positions]})
    by_day: dict[int, tuple[list[int], list[int], int, int]] = {}
    for (d, _), members in groups.groupby(["day", "key"], sort=False).indices.items():
        sel = positions[members]  # in file order
        x = naive[sel]
        back = np.r_[False, x[1:] < np.maximum.accumulate(x)[:-1]]
        second = np.logical_or.accumulate(back | pd.Series(x).duplicated().to_numpy())
        chosen = np.where(second, std_ns[sel], dst_ns[sel])
        if not (second.any() and np.all(np.diff(chosen) > 0)):
            status[sel] = UNDECIDED
            continue
        utc[sel] = chosen
        first_rows, second_rows, lo, hi = by_day.setdefault(int(d), ([], [], x.min(), x.max()))
        first_rows += rows[sel[~second]].tolist()
        second_rows += rows[sel[second]].tolist()
        by_day[int(d)] = (first_rows, second_rows, min(lo, x.min()), max(hi, x.max()))

    notices = []
    for d, (first_rows, second_rows, lo, hi) in by_day.items():
        at = positions[day[positions] == d][0]
        dst_off = (naive[at] - dst_ns[at]) // _NS_PER_MIN
        std_off = (naive[at] - std_ns[at]) // _NS_PER_MIN
        message = (
            f"local times {format_ns(lo)} to {format_ns(hi)[11:]} occur twice in {zone} "
            "(daylight saving time ends); by the order of the rows, "
            f"{rows_text(first_rows)} read as {_offset_text(dst_off)} and "
            f"{rows_text(second_rows)} as {_offset_text(std_off)}"
        )
        notices.append((message, tuple(sorted(set(first_rows + second_rows)))))
    return utc, status, notices


def format_ns(ns: int) -> str:
    """``YYYY-MM-DD HH:MM:SS`` of epoch nanoseconds."""
    return str(pd.Timestamp(int(ns)))[:19].replace("T", " ")


def _offset_text(minutes: int) -> str:
    sign = "+" if minutes >= 0 else "-"
    h, m = divmod(abs(int(minutes)), 60)
    return f"UTC{sign}{h:02d}:{m:02d}"


def rows_text(rows: list[int]) -> str:
    """``"rows 5-8, 12"``: consecutive rows joined, long lists cut after 20 spans."""
    ordered = sorted(set(rows))
    spans: list[str] = []
    start = prev = ordered[0]
    for r in [*ordered[1:], None]:
        if r is not None and r == prev + 1:
            prev = r
            continue
        spans.append(f"{start}" if start == prev else f"{start}-{prev}")
        if r is not None:
            start = prev = r
    word = "row" if len(ordered) == 1 else "rows"
    more = ", ..." if len(spans) > _MAX_SPANS_IN_MESSAGE else ""
    return f"{word} {', '.join(spans[:_MAX_SPANS_IN_MESSAGE])}{more}"


def time_message(text: str, status: int, naive_ns: int, zone: str) -> str:
    """What is wrong with one time cell of the given status, and what was done."""
    if status == EMPTY:
        return "the time is empty; row skipped"
    if status == TEXT:
        if _SLASH_DATE.match(text):
            return (
                f"{text!r}: the order of day and month cannot be known; write the date "
                "as YYYY-MM-DD; row skipped"
            )
        return (
            f"{text!r} is not a time; write e.g. 2026-03-29 14:30 (plant local time) or "
            "2026-03-29T14:30:00+01:00; row skipped"
        )
    if status == INVALID:
        return f"{text!r} is not a valid date and time of day; row skipped"
    local = format_ns(naive_ns)
    if status == GAP:
        return (
            f"local time {local} does not exist in {zone}: the clocks skip it when "
            "daylight saving time starts; row skipped, not shifted (give the time with "
            "its UTC offset)"
        )
    return (
        f"local time {local} occurs twice in {zone} (daylight saving time ends) and the "
        "order of the rows does not tell which is meant; row skipped (give the time with "
        "its UTC offset)"
    )
