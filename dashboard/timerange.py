"""Time windows for charts: presets from hours to years, zoom, and chart resolution."""

from __future__ import annotations

import math
from typing import Any

import pandas as pd

PRESETS: dict[str, tuple[str, pd.Timedelta]] = {
    "6h": ("6 h", pd.Timedelta(hours=6)),
    "24h": ("24 h", pd.Timedelta(hours=24)),
    "7d": ("7 days", pd.Timedelta(days=7)),
    "30d": ("30 days", pd.Timedelta(days=30)),
    "90d": ("90 days", pd.Timedelta(days=90)),
    "1y": ("1 year", pd.Timedelta(days=365)),
    "5y": ("5 years", pd.Timedelta(days=5 * 365)),
}
"""Range choices: key -> (label, length)."""
DEFAULT_PRESET = "7d"

MIN_POINTS = 120
MAX_POINTS = 5000


def preset_options() -> list[dict[str, str]]:
    return [{"label": label, "value": key} for key, (label, _) in PRESETS.items()]


def window(preset: str | None, end: pd.Timestamp) -> tuple[pd.Timestamp, pd.Timestamp]:
    """``(start, end)`` of a preset range ending at ``end`` (an unknown key: the default)."""
    _, length = PRESETS.get(preset or "", PRESETS[DEFAULT_PRESET])
    return end - length, end


def max_points(width_px: Any) -> int:
    """Points to ask the server for: two per horizontal pixel of the chart, bounded.

    Two per pixel keeps a min-max band honest at the screen's resolution; the bounds
    keep a tiny window useful and a huge one cheap.
    """
    try:
        width = float(width_px)
    except (TypeError, ValueError):
        width = 1000.0
    if not math.isfinite(width) or width <= 0:
        width = 1000.0
    return int(min(max(2 * width, MIN_POINTS), MAX_POINTS))


def zoom_window(relayout: Any) -> tuple[pd.Timestamp, pd.Timestamp] | None | bool:
    """The x range a plotly relayout event asks for.

    Returns ``(start, end)`` for a zoom or pan, ``False`` for an autorange reset (back
    to the preset), and None when the event is not about the x range at all. Times in
    the event are wall-clock times of the axis's zone; callers localise them.
    """
    if not isinstance(relayout, dict):
        return None
    if relayout.get("xaxis.autorange"):
        return False
    start = relayout.get("xaxis.range[0]")
    end = relayout.get("xaxis.range[1]")
    if start is None and isinstance(relayout.get("xaxis.range"), list):
        start, end = relayout["xaxis.range"][:2]
    if start is None or end is None:
        return None
    return pd.Timestamp(start), pd.Timestamp(end)


def localise(stamp: pd.Timestamp, zone: str) -> pd.Timestamp:
    """A wall-clock time of ``zone`` from a chart (naive) as an aware UTC instant."""
    if stamp.tzinfo is None:
        stamp = stamp.tz_localize(zone, ambiguous="NaT", nonexistent="shift_forward")
    return stamp.tz_convert("UTC")


def describe_resolution(bucket_seconds: float | None, points: int) -> str:
    """``"1 point = 5 min · 2,016 points"`` for the caption under a chart."""
    if not bucket_seconds:
        return f"every interval · {points:,} points"
    seconds = float(bucket_seconds)
    for size, unit in ((86_400, "d"), (3_600, "h"), (60, "min")):
        if seconds >= size:
            amount = seconds / size
            text = f"{amount:.0f} {unit}" if amount >= 10 else f"{amount:.3g} {unit}"
            return f"1 point = {text} · {points:,} points"
    return f"1 point = {seconds:.0f} s · {points:,} points"
