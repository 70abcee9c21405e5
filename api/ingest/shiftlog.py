"""Shift-log CSV files -> SI readings, every problem located by row and column.

A shift log is what operators export from a spreadsheet or a panel. Two forms are read,
told apart by the header:

- **wide**: a time column, then one column per tag. A header may carry the unit of
  its column in square brackets, ``FW flow [t/h]``; the tag is the header text without
  the bracket, stripped. Without a bracket the tag's configured unit applies.
- **long**: columns ``time``, ``tag``, ``value`` and optionally ``unit`` (any order,
  any letter case). A file is long when its header names both ``tag`` and ``value``.

The time column is the one named ``time``, ``timestamp``, ``datetime``, ``date_time``,
``date time`` or ``date/time`` (any case); a ``date`` column and a ``time`` column
together are joined (``date`` alone gives midnight); in the wide form with no such name,
the first column. A time column header may name the zone of its naive times in
brackets: ``time [UTC]``, ``time [Europe/Berlin]``; otherwise the plant's zone applies.

Times: see :mod:`api.ingest.localtime` for the formats accepted and for the rules on
the hour skipped and the hour repeated at daylight-saving changes (the skipped hour is
a row error, never shifted; the repeated hour is resolved by row order and reported as a
notice, or is a row error when the order does not decide). Output times are UTC epoch
milliseconds.

Separators ``,``, ``;`` and tab, detected from the header and the first lines: the one
that splits the header into at least two fields and the most lines into as many fields
as the header. With ``;`` or tab, decimal commas are detected (any value cell holding a
comma); a value cell with a point in such a file is a row error, because thousands
separators are never guessed (``1.234`` could be either). With ``,`` the decimal is a point.

Values: empty cells are gaps, not errors. Text, ``nan``/``inf`` and values outside the
tag's plausible bounds are row errors; bounds are checked in the tag's configured unit
(a cell in another header unit is converted to it first), then the value is converted to
SI. Errors in a row's time reject the whole row (its value cells are not checked
further); other errors reject one cell. An unknown column, or a unit that cannot feed
its tag, is one error for the whole column (long form: one error per unknown tag or
per tag and unit, at the first row).

Row numbers are the record numbers a spreadsheet shows: the first record is 1 (the
header, normally), blank lines count.

Encoding: UTF-8 with or without BOM, UTF-16 with BOM; anything else is read as
Windows-1252 (cp1252), with a notice.

Rows with a wrong number of fields (more than the header) make the whole file go through
Python's csv module instead of pandas' C reader; such rows are errors. That slower path is
taken for malformed files only.
"""

from __future__ import annotations

import csv
import difflib
import io
import re
import zoneinfo
from collections.abc import Mapping
from dataclasses import asdict, dataclass
from typing import Any, Literal

import numpy as np
import pandas as pd

from api import measure
from api.ingest import localtime
from api.ingest.localtime import rows_text

Field = Literal["time", "value", "tag", "unit", "header"]
Form = Literal["wide", "long"]

SEPARATORS = ("\t", ";", ",")
"""Separators tried, in order of preference on a tie."""
TIME_NAMES = ("time", "timestamp", "datetime", "date_time", "date time", "date/time")
DATE_NAME = "date"
MAX_NOTICE_ROWS = 1000
"""Rows listed in one notice at most (a file sent twice would list every row)."""


@dataclass(frozen=True)
class TagInfo:
    """What the parser needs to know about one tag of the plant.

    Attributes
    ----------
    unit : str
        The tag's configured unit of measure (pint text, ``"barg"``, ``"t/h"``).
    si_unit : str or None
        The SI unit readings are stored in (the unit of the role the tag feeds); None
        takes :func:`api.measure.si_unit_for` of ``unit``.
    low, high : float or None
        Plausible bounds, inclusive, in ``unit``. [unit]
    atmosphere_pa : float or None
        Atmosphere for gauge pressures of this tag; None takes the plant's. [Pa]
    """

    unit: str
    si_unit: str | None = None
    low: float | None = None
    high: float | None = None
    atmosphere_pa: float | None = None


@dataclass(frozen=True)
class RowError:
    """One problem, located as a spreadsheet user finds it.

    Attributes
    ----------
    row : int
        Record number in the file, 1-based; the header is row 1.
    column : str
        Header text of the column (for a joined date and time, ``"date + time"``;
        for a whole row, ``""``).
    field : {"time", "value", "tag", "unit", "header"}
        What is wrong: the time of the row, a value cell, a tag name, a unit, or the
        header / the file as a whole.
    value : str
        The offending text as written.
    message : str
        What is wrong and what was done about it.
    """

    row: int
    column: str
    field: Field
    value: str
    message: str

    def as_dict(self) -> dict[str, Any]:
        return asdict(self)


@dataclass(frozen=True)
class Notice:
    """Something the parser decided that the uploader should know.

    Attributes
    ----------
    kind : str
        ``"dst_repeated_hour"``, ``"duplicate"``, ``"encoding"``.
    message : str
        What was decided.
    rows : tuple of int
        The rows concerned (1-based record numbers), if any; at most the first
        :data:`MAX_NOTICE_ROWS`.
    """

    kind: str
    message: str
    rows: tuple[int, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "rows", tuple(self.rows[:MAX_NOTICE_ROWS]))

    def as_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "message": self.message, "rows": list(self.rows)}


@dataclass
class ParsedShiftLog:
    """The outcome of :func:`parse_shiftlog`.

    Attributes
    ----------
    readings : pandas.DataFrame
        Columns ``tag`` (str), ``t_ms`` (int64, UTC epoch milliseconds) and ``value``
        (float64, in the tag's SI unit), sorted by tag and time, one row per
        (tag, t_ms).
    errors : list of RowError
        Sorted by row, then by column position.
    notices : list of Notice
    rows_total : int
        Data records in the file (header and blank lines not counted).
    form : {"wide", "long"}
        ``"wide"`` unless the header names ``tag`` and ``value``.
    separator : str
        ``","``, ``";"`` or ``"\\t"`` (``""`` when the file is empty).
    decimal : str
        ``"."`` or ``","``.
    """

    readings: pd.DataFrame
    errors: list[RowError]
    notices: list[Notice]
    rows_total: int
    form: Form
    separator: str
    decimal: str


def parse_shiftlog(
    data: bytes,
    *,
    tags: Mapping[str, TagInfo],
    time_zone: str,
    atmosphere_pa: float = measure.STANDARD_ATMOSPHERE_PA,
) -> ParsedShiftLog:
    """Parse a shift-log CSV file into SI readings, locating every problem.

    Parameters
    ----------
    data : bytes
        The file as uploaded.
    tags : Mapping[str, TagInfo]
        The plant's tags by name (exact, case-sensitive match with the file).
    time_zone : str
        The plant's IANA time zone, for naive local times (``"Europe/Berlin"``).
    atmosphere_pa : float, default 101325
        The plant's atmosphere, for gauge pressures of tags that state none. [Pa]

    Returns
    -------
    ParsedShiftLog
        Good cells are kept whatever is wrong elsewhere; see the module docstring for
        the rules.

    Raises
    ------
    ValueError
        When ``time_zone`` is not an IANA zone name (a configuration error, not a
        problem of the file).
    """
    zone = _zone(time_zone)
    if zone is None:
        raise ValueError(
            f"unknown time zone {time_zone!r}; give an IANA name such as Europe/Berlin"
        )
    log = _Log()
    text = _decode(data, log)
    separator = _detect_separator(text)
    if separator is None:
        stripped = text.strip()
        if not stripped:
            log.error(1, -1, "", "header", "", "the file is empty")
        else:
            log.error(
                1,
                -1,
                "",
                "header",
                stripped.splitlines()[0][:200],
                "the header has a single column; a shift log needs a time column and at "
                "least one more, separated by ',', ';' or tab",
            )
        return log.result(_empty_readings(), 0, "wide", "", ".")
    table = _read_table(text, separator, log)
    return _Parser(table, separator, "," in text, tags, time_zone, atmosphere_pa, log).run()


# --- collecting problems ---------------------------------------------------------------


class _Log:
    def __init__(self) -> None:
        self._errors: list[tuple[int, int, RowError]] = []
        self.notices: list[Notice] = []

    def error(self, row: int, col: int, column: str, field: Field, value: str, message: str):
        self._errors.append((row, col, RowError(row, column, field, value, message)))

    def result(self, readings, rows_total, form, separator, decimal) -> ParsedShiftLog:
        errors = [e for _, _, e in sorted(self._errors, key=lambda x: (x[0], x[1]))]
        return ParsedShiftLog(readings, errors, self.notices, rows_total, form, separator, decimal)


def _empty_readings() -> pd.DataFrame:
    return pd.DataFrame(
        {
            "tag": pd.Series([], dtype=str),
            "t_ms": np.array([], dtype=np.int64),
            "value": np.array([], dtype=float),
        }
    )


# --- bytes to a table of strings -------------------------------------------------------


def _decode(data: bytes, log: _Log) -> str:
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        return data.decode("utf-16")
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        log.notices.append(
            Notice(
                "encoding",
                f"the file is not valid UTF-8 (byte {exc.start + 1} is {data[exc.start]:#04x}); "
                "it was read as Windows-1252 (cp1252)",
            )
        )
        return data.decode("cp1252", errors="replace")


def _detect_separator(text: str) -> str | None:
    sample = [line for line in text.splitlines()[:100] if line.strip()][:50]
    if not sample:
        return None
    best, best_score = None, (0, 0)
    for sep in SEPARATORS:
        widths = [len(r) for r in csv.reader(sample, delimiter=sep)]
        if widths[0] < 2:
            continue
        score = (sum(w == widths[0] for w in widths), widths[0])
        if score > best_score:
            best, best_score = sep, score
    return best


def _read_table(text: str, sep: str, log: _Log) -> pd.DataFrame:
    """All records as strings, positional index = record number - 1."""
    try:
        table = pd.read_csv(
            io.StringIO(text),
            sep=sep,
            header=None,
            dtype=str,
            na_filter=False,
            skip_blank_lines=False,
            engine="c",
            skipinitialspace=True,
        )
        return table.fillna("")
    except pd.errors.ParserError:
        pass
    # A row wider than the first record: read with the csv module and reject such rows.
    records = list(csv.reader(io.StringIO(text, newline=""), delimiter=sep, skipinitialspace=True))
    header_at = next((i for i, r in enumerate(records) if any(c.strip() for c in r)), 0)
    width = len(records[header_at]) if records else 0
    rows, rejected = [], 0
    for i, rec in enumerate(records):
        if len(rec) > width and any(c.strip() for c in rec[width:]):
            log.error(
                i + 1,
                -1,
                "",
                "value",
                sep.join(rec)[:200],
                f"the row has {len(rec)} fields but the header has {width}; row skipped",
            )
            rec, rejected = [], rejected + 1
        rows.append((rec + [""] * width)[:width])
    table = pd.DataFrame(rows, dtype=str)
    table.attrs["rejected_rows"] = rejected
    return table


# --- headers ---------------------------------------------------------------------------

_HEADER_UNIT = re.compile(r"^(?P<name>.*?)\s*\[(?P<unit>[^\[\]]*)\]\s*$")


def _split_header(text: str) -> tuple[str, str | None]:
    """Name and bracketed unit of a header cell (unit None when absent or empty)."""
    match = _HEADER_UNIT.match(text)
    if not match:
        return text.strip(), None
    unit = match.group("unit").strip()
    return match.group("name").strip(), unit or None


def _zone(name: str) -> str | None:
    """The IANA name for ``name`` (``UTC`` for ``Z``/``GMT``), or None if unknown."""
    if name.strip().upper() in {"UTC", "Z", "GMT"}:
        return "UTC"
    try:
        zoneinfo.ZoneInfo(name.strip())
    except (zoneinfo.ZoneInfoNotFoundError, ValueError):
        return None
    return name.strip()


# --- numbers ---------------------------------------------------------------------------

_OK, _EMPTY, _TEXT, _NONFINITE, _POINT = 0, 1, 2, 3, 4
_DECIMAL_COMMA = re.compile(r"^[+-]?\d+,\d+$")


def _parse_numbers(cells: pd.Series, decimal: str) -> tuple[np.ndarray, np.ndarray]:
    """Values and a status code per cell.

    Surrounding whitespace is ignored. Only the cells that do not convert are looked at
    again one by one, so a clean column costs one vectorised conversion.
    """
    text = cells
    if decimal == ",":
        point = cells.str.contains(".", regex=False).to_numpy()
        text = cells.str.replace(",", ".", regex=False)
    values = pd.to_numeric(text, errors="coerce").to_numpy(dtype=float)
    status = np.full(len(cells), _OK, dtype=np.int8)
    bad = np.flatnonzero(~np.isfinite(values))
    if bad.size:
        stripped = cells.iloc[bad].str.strip().str.lower()
        nan_text = stripped.str.lstrip("+-").isin(["nan", "inf", "infinity"]).to_numpy()
        status[bad] = np.where(np.isinf(values[bad]) | nan_text, _NONFINITE, _TEXT)
        status[bad[(stripped == "").to_numpy()]] = _EMPTY
    if decimal == ",":
        status[point] = _POINT
    return values, status


def _number_message(text: str, status: int | np.integer) -> str:
    if status == _NONFINITE:
        return f"{text!r} is not a finite number"
    if status == _POINT:
        return (
            f"{text!r} contains '.' but this file uses decimal commas; thousands "
            "separators are not accepted"
        )
    if _DECIMAL_COMMA.match(text):
        return (
            f"{text!r} is not a number (decimal commas are read only in files separated "
            "by ';' or tab)"
        )
    return f"{text!r} is not a number"


# --- the parse -------------------------------------------------------------------------


class _Parser:
    def __init__(self, table, separator, has_comma, tags, zone, atmosphere_pa, log: _Log):
        self.table = table
        self.separator = separator
        self.has_comma = has_comma
        self.tags = tags
        self.zone = zone
        self.atmosphere_pa = atmosphere_pa
        self.log = log
        self.decimal = "."
        self.parts: list[tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]] = []
        self.tag_codes: dict[str, int] = {}

    # entry ------------------------------------------------------------------------------
    def run(self) -> ParsedShiftLog:
        log, table = self.log, self.table
        filled = np.zeros(len(table), dtype=bool)
        self.cells: dict[int, pd.Series] = {}
        for j in range(table.shape[1]):
            col = table[j].astype(str)
            self.cells[j] = col
            # the reader already dropped leading spaces, so a blank cell is ""
            filled |= (col != "").to_numpy()
        if not filled.any():
            log.error(1, -1, "", "header", "", "the file is empty")
            return self._result(0, "wide")
        header_at = int(np.flatnonzero(filled)[0])
        self.header = [self.cells[j].iloc[header_at].strip() for j in range(table.shape[1])]
        body = np.flatnonzero(filled)
        body = body[body > header_at]
        self.body = body
        self.rows = body + 1
        self.header_row = header_at + 1
        rows_total = int(body.size) + int(table.attrs.get("rejected_rows", 0))
        names = [_split_header(h)[0].lower() for h in self.header]
        form: Form = "long" if {"tag", "value"} <= set(names) else "wide"
        if rows_total == 0:
            log.error(
                self.header_row, -1, "", "header", "", "the file has a header but no data rows"
            )
            return self._result(0, form)
        if form == "long":
            self._long(names)
        else:
            self._wide(names)
        return self._result(rows_total, form)

    def _err(self, row: int, j: int, field: Field, value: str, message: str, column=None):
        """Record an error at ``row`` in column position ``j`` (header text by default)."""
        if column is None:
            column = self.header[j] if j >= 0 else ""
        self.log.error(row, j, column, field, value, message)

    def _col(self, j: int, strip: bool = False) -> pd.Series:
        """Data cells of column ``j``, positional (stripped on request)."""
        col = self.cells[j].iloc[self.body].reset_index(drop=True)
        return col.str.strip() if strip else col

    # time column ------------------------------------------------------------------------
    def _time_columns(self, names: list[str]) -> tuple[list[int], str] | None:
        """Positions of the time column(s) and their label, or None."""
        named = [j for j, name in enumerate(names) if name in TIME_NAMES]
        dates = [j for j, name in enumerate(names) if name == DATE_NAME]
        if dates and named and names[named[0]] == "time":
            j_d, j_t = dates[0], named[0]
            return [j_d, j_t], f"{self.header[j_d]} + {self.header[j_t]}"
        if named:
            return [named[0]], self.header[named[0]]
        if dates:
            return [dates[0]], self.header[dates[0]]
        return None

    def _times(self, cols: list[int], label: str, keys: np.ndarray) -> localtime.ParsedTimes | None:
        zone = self.zone
        for j in cols:
            bracket = _split_header(self.header[j])[1]
            if bracket is not None and bracket.lower() != "local":
                zone = _zone(bracket) or ""
                if not zone:
                    self._err(
                        self.header_row,
                        j,
                        "header",
                        bracket,
                        f"unknown time zone {bracket!r} in the time column header; write an "
                        "IANA name such as Europe/Berlin, or UTC; no row read",
                    )
                    return None
        cells = self._col(cols[0], strip=True)
        if len(cols) == 2:
            date, clock = cells, self._col(cols[1], strip=True)
            cells = (date + " " + clock).str.strip()
            cells = cells.where((date != "") & (clock != ""), "")
        times = localtime.parse_times(cells, zone, keys, self.rows)
        for message, rows in times.repeated_hours:
            self.log.notices.append(Notice("dst_repeated_hour", message, rows))
        for i in np.flatnonzero(times.status != localtime.OK):
            text, status = cells.iloc[i], int(times.status[i])
            message = localtime.time_message(text, status, int(times.naive_ns[i]), zone)
            self._err(int(self.rows[i]), cols[0], "time", text, message, column=label)
        return times

    # wide -------------------------------------------------------------------------------
    def _wide(self, names: list[str]) -> None:
        found = self._time_columns(names)
        by_position = found is None
        if by_position:
            first = _split_header(self.header[0])[0]
            if first in self.tags:
                self._no_time_column()
                return
            found = ([0], self.header[0])
        assert found is not None
        cols, label = found
        if by_position:
            head = min(50, self.body.size)
            probe = localtime.parse_times(
                self._col(0, strip=True).head(head),
                self.zone,
                np.zeros(head, np.int64),
                self.rows[:head],
            )
            if np.all(probe.status == localtime.TEXT):
                self._no_time_column()
                return
        columns = self._wide_columns(skip=set(cols))
        self.decimal = self._detect_decimal([self._col(j) for j, *_ in columns])
        times = self._times(cols, label, np.zeros(self.body.size, dtype=np.int64))
        if times is None:
            return
        row_ok = times.status == localtime.OK
        t_ms = times.utc_ns // localtime.NS_PER_MS
        for j, tag, info, unit in columns:
            self._values(j, self._col(j), np.flatnonzero(row_ok), tag, info, unit, t_ms)

    def _no_time_column(self) -> None:
        self._err(
            self.header_row,
            0,
            "header",
            self.header[0],
            "no time column: name one 'time' (or 'timestamp', 'date') or put the times in "
            "the first column; no row read",
        )

    def _wide_columns(self, skip: set[int]) -> list[tuple[int, str, TagInfo, str]]:
        """Value columns whose tag is known and whose unit can feed it."""
        out = []
        for j, head in enumerate(self.header):
            if j in skip:
                continue
            name, unit = _split_header(head)
            if not head:
                if (self._col(j) != "").any():
                    self.log.error(
                        self.header_row,
                        j,
                        "",
                        "header",
                        "",
                        f"column {j + 1} has values but no header; column skipped",
                    )
                continue
            info = self.tags.get(name)
            if info is None:
                self._err(
                    self.header_row,
                    j,
                    "tag",
                    name,
                    f"unknown tag {name!r}{_did_you_mean(name, self.tags)}; column skipped",
                )
                continue
            unit = unit or info.unit
            problem = _unit_problem(unit, info)
            if problem:
                self._err(self.header_row, j, "unit", unit, f"{problem}; column skipped")
                continue
            out.append((j, name, info, unit))
        return out

    def _detect_decimal(self, columns: list[pd.Series]) -> str:
        if self.separator == "," or not self.has_comma:
            return "."
        for col in columns:
            if col.str.contains(",", regex=False).any():
                return ","
        return "."

    # long -------------------------------------------------------------------------------
    def _long(self, names: list[str]) -> None:
        found = self._time_columns(names)
        if found is None:
            self._no_time_column()
            return
        cols, label = found
        j_tag, j_value = names.index("tag"), names.index("value")
        j_unit = names.index("unit") if "unit" in names else None
        for j, head in enumerate(self.header):
            if j in {*cols, j_tag, j_value, j_unit} or (
                not head and not (self._col(j) != "").any()
            ):
                continue
            self._err(
                self.header_row,
                j,
                "header",
                head,
                f"column {head!r} is not part of the long form (time, tag, value, unit); "
                "column ignored",
            )
        tag = self._col(j_tag, strip=True)
        value = self._col(j_value)
        unit = self._col(j_unit, strip=True) if j_unit is not None else pd.Series([""] * len(tag))
        self.decimal = self._detect_decimal([value])
        codes, _ = pd.factorize(tag)
        times = self._times(cols, label, codes.astype(np.int64))
        if times is None:
            return
        t_ms = times.utc_ns // localtime.NS_PER_MS
        row_ok = times.status == localtime.OK
        known = tag.isin(list(self.tags)).to_numpy()
        empty_tag = (tag == "").to_numpy()
        for i in np.flatnonzero(empty_tag & row_ok):
            self._err(int(self.rows[i]), j_tag, "tag", "", "the tag is empty; row skipped")
        unknown = ~known & ~empty_tag
        for name, members in pd.Series(np.flatnonzero(unknown)).groupby(
            tag[unknown].to_numpy(), sort=False
        ):
            first = int(members.iloc[0])
            self._err(
                int(self.rows[first]),
                j_tag,
                "tag",
                name,
                f"unknown tag {name!r}{_did_you_mean(name, self.tags)}; "
                f"{_count(len(members), 'row')} skipped",
            )
        usable = np.flatnonzero(row_ok & known)
        frame = pd.DataFrame(
            {"tag": tag.iloc[usable].to_numpy(), "unit": unit.iloc[usable].to_numpy()}
        )
        for (name, written), members in frame.groupby(["tag", "unit"], sort=False).indices.items():
            info = self.tags[name]
            sel = usable[members]
            effective = written or info.unit
            problem = _unit_problem(effective, info)
            if problem:
                col = j_unit if written and j_unit is not None else j_tag
                self._err(
                    int(self.rows[sel[0]]),
                    col,
                    "unit",
                    effective,
                    f"{problem}; {_count(sel.size, 'row')} skipped",
                )
                continue
            self._values(j_value, value, sel, name, info, effective, t_ms)

    # values -----------------------------------------------------------------------------
    def _values(
        self, j, column: pd.Series, sel: np.ndarray, tag: str, info: TagInfo, unit: str, t_ms
    ):
        """Check and convert the cells ``sel`` of ``column`` for one tag and unit."""
        cells = column.iloc[sel]
        values, status = _parse_numbers(cells, self.decimal)
        for k in np.flatnonzero((status != _OK) & (status != _EMPTY)):
            text = cells.iloc[k].strip()
            self._err(int(self.rows[sel[k]]), j, "value", text, _number_message(text, status[k]))
        good = np.flatnonzero(status == _OK)
        sel, values = sel[good], values[good]
        atmosphere = info.atmosphere_pa if info.atmosphere_pa is not None else self.atmosphere_pa
        in_tag_unit = values
        if unit != info.unit:
            in_tag_unit = measure.convert(values, unit, info.unit, atmosphere)
        outside = np.zeros(values.size, dtype=bool)
        if info.low is not None:
            outside |= in_tag_unit < info.low
        if info.high is not None:
            outside |= in_tag_unit > info.high
        for k in np.flatnonzero(outside):
            text = cells.iloc[good[k]].strip()
            message = _bounds_message(values[k], unit, in_tag_unit[k], tag, info)
            self._err(int(self.rows[sel[k]]), j, "value", text, message)
        keep = ~outside
        si_unit = info.si_unit or measure.si_unit_for(info.unit)
        si = measure.to_si(in_tag_unit[keep], info.unit, si_unit, atmosphere)
        code = self.tag_codes.setdefault(tag, len(self.tag_codes))
        # reading order in the file (row, then column), for "the later one wins"
        order = sel[keep].astype(np.int64) * (len(self.header) + 1) + j
        self.parts.append((np.full(order.size, code, np.int32), t_ms[sel[keep]], si, order))

    # result -----------------------------------------------------------------------------
    def _result(self, rows_total: int, form: Form) -> ParsedShiftLog:
        if not self.parts:
            return self.log.result(
                _empty_readings(), rows_total, form, self.separator, self.decimal
            )
        code, t_ms, value, order = (np.concatenate([p[i] for p in self.parts]) for i in range(4))
        in_file_order = np.argsort(order, kind="stable")
        code, t_ms, value, order = (a[in_file_order] for a in (code, t_ms, value, order))
        keys = pd.DataFrame({"code": code, "t_ms": t_ms})
        repeated = keys.duplicated(keep=False).to_numpy()
        if repeated.any():
            rows = self.rows[order[repeated] // (len(self.header) + 1)].tolist()
            later = ~keys.duplicated(keep="last").to_numpy()
            self.log.notices.append(
                Notice(
                    "duplicate",
                    f"{_count(int((~later).sum()), 'reading')} replaced by a later row with "
                    f"the same tag and time; the later one wins ({rows_text(rows)})",
                    tuple(sorted(set(rows))),
                )
            )
            code, t_ms, value = code[later], t_ms[later], value[later]
        names = np.array(sorted(self.tag_codes, key=self.tag_codes.__getitem__), dtype=object)
        rank = np.argsort(np.argsort(names))  # code -> alphabetical position
        by_tag_time = np.lexsort((t_ms, rank[code]))
        readings = pd.DataFrame(
            {
                "tag": pd.array(names[code[by_tag_time]], dtype=str),
                "t_ms": t_ms[by_tag_time].astype(np.int64),
                "value": value[by_tag_time].astype(float),
            }
        )
        return self.log.result(readings, rows_total, form, self.separator, self.decimal)


def _unit_problem(unit: str, info: TagInfo) -> str | None:
    try:
        measure.check_compatible(unit, info.unit)
        measure.check_compatible(info.unit, info.si_unit or measure.si_unit_for(info.unit))
    except measure.UnitError as exc:
        return str(exc)
    return None


def _bounds_message(value: float, unit: str, in_tag_unit: float, tag: str, info: TagInfo) -> str:
    shown = f"{value:g} {unit}"
    if unit != info.unit:
        shown += f" (= {in_tag_unit:.6g} {info.unit})"
    if info.low is not None and in_tag_unit < info.low:
        return f"{shown} is below the plausible low bound {info.low:g} {info.unit} of tag {tag!r}"
    return f"{shown} is above the plausible high bound {info.high:g} {info.unit} of tag {tag!r}"


def _did_you_mean(name: str, tags: Mapping[str, TagInfo]) -> str:
    close = difflib.get_close_matches(name, list(tags), n=1, cutoff=0.75)
    return f" (did you mean {close[0]!r}?)" if close else ""


def _count(n: int, word: str) -> str:
    return f"{n} {word}" if n == 1 else f"{n} {word}s"
