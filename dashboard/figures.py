"""Pure functions from data to plotly figures: no Dash, no HTTP, no unit conversion.

Values arrive already in display units (see :mod:`dashboard.formatting`) with the unit
label to print; every axis title states its unit, time axes state their clock.
"""

from __future__ import annotations

from collections.abc import Sequence
from enum import IntFlag

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from api.pipeline.quality import DataFlag
from dashboard.formatting import format_number
from dashboard.palette import CARD, COPPER, INK, MUTED, PLUM, RULE, SAND, SIGNAL, SLATE, TIDE
from dashboard.palette import with_alpha as _alpha
from engine.checks import Flag

FONT = "system-ui, -apple-system, 'Segoe UI', Roboto, 'Noto Sans', 'Liberation Sans', sans-serif"

CATEGORY_COLOURS = {
    "input": INK,
    "product": TIDE,
    "destroyed": COPPER,
    "lost": SAND,
    "mismatch": MUTED,
}
"""Colours of the exergy account's categories, the same on every second-law chart."""

NOT_STEADY = "Not steady"
"""Reason text of spans where the unit was not in steady state."""
SPAN_COLUMNS = ["start", "end", "reason", "kind"]
SPAN_COLOURS = {"flag": SIGNAL, "state": MUTED, "baseline": PLUM}
"""Shading colour per kind of span: flag bits in the alert colour, operating states
(not steady) in grey, the baseline's own (outside its range) in its colour."""


def axis_title(name: str, unit: str) -> str:
    """``"Second-law efficiency [%]"``; a dimensionless quantity says ``[-]``."""
    return f"{name} [{unit if unit and unit != '–' else '-'}]"


def _style(fig: go.Figure, *, x_title: str, y_title: str, height: int = 320) -> go.Figure:
    fig.update_layout(
        template="none",
        height=height,
        paper_bgcolor=CARD,
        plot_bgcolor=CARD,
        font={"family": FONT, "color": INK, "size": 13},
        margin={"l": 72, "r": 20, "t": 40, "b": 56},
        hovermode="x unified",
        legend={"orientation": "h", "x": 0, "y": 1.02, "xanchor": "left", "yanchor": "bottom"},
        hoverlabel={"bgcolor": CARD, "bordercolor": RULE, "font": {"family": FONT, "color": INK}},
    )
    fig.update_xaxes(title_text=x_title, gridcolor=RULE, linecolor=MUTED, zeroline=False)
    fig.update_yaxes(title_text=y_title, gridcolor=RULE, linecolor=MUTED, zerolinecolor=MUTED)
    return fig


def _x(index) -> np.ndarray:
    """Times for plotly as a datetime64 array of wall-clock times.

    plotly.js shows any time as the wall-clock time it is written in, so a zone-aware
    index (already converted to the viewer's clock) loses nothing by dropping its
    offset -- and a datetime64 array is copied and serialised as numbers, where an
    array of Timestamp objects is deep-copied object by object (most of the cost of a
    year-long chart).
    """
    if isinstance(index, pd.DatetimeIndex):
        if index.tz is not None:
            index = index.tz_localize(None)
        return index.to_numpy()
    return np.asarray(index)


def _hover(unit: str) -> str:
    suffix = "" if unit in ("", "–") else f" {unit}"
    return "%{y:,.4~g}" + suffix


def _band(fig: go.Figure, low: pd.Series, high: pd.Series, colour: str, name: str) -> None:
    """A filled band between two series (two traces, the second filled to the first)."""
    fig.add_trace(
        go.Scatter(
            x=_x(low.index),
            y=low.to_numpy(),
            mode="lines",
            line={"width": 0},
            hoverinfo="skip",
            showlegend=False,
            legendgroup=name,
        )
    )
    fig.add_trace(
        go.Scatter(
            x=_x(high.index),
            y=high.to_numpy(),
            mode="lines",
            line={"width": 0},
            fill="tonexty",
            fillcolor=_alpha(colour, 0.18),
            name=name,
            hoverinfo="skip",
            legendgroup=name,
        )
    )


def trend_figure(series: pd.DataFrame, *, name: str, unit: str, x_title: str) -> go.Figure:
    """Bucket means as a line inside the bucket min-max band.

    Parameters
    ----------
    series : DataFrame
        Columns ``mean``, ``min``, ``max`` on a time index, in display units.
    name, unit : str
        Quantity name and unit label for the axis and the hover.
    x_title : str
        Time axis title naming the clock.
    """
    fig = go.Figure()
    _band(fig, series["min"], series["max"], TIDE, "min–max per point")
    fig.add_trace(
        go.Scatter(
            x=_x(series.index),
            y=series["mean"].to_numpy(),
            mode="lines",
            line={"color": TIDE, "width": 2},
            name=name,
            hovertemplate=_hover(unit),
        )
    )
    return _style(fig, x_title=x_title, y_title=axis_title(name, unit))


def add_measurement_band(fig: go.Figure, mean: pd.Series, u95: pd.Series) -> go.Figure:
    """Dotted edges of the 95 % measurement band, ``mean -/+ u95``, around the actual line.

    Parameters
    ----------
    fig : Figure
        A trend (:func:`trend_figure`, :func:`actual_expected_figure`); changed in place.
    mean : Series
        The actual's bucket means on a time index. [unit]
    u95 : Series
        Expanded (95 %) measurement uncertainty of the same metric (bucket means of the
        API's ``u95_<metric>``); aligned on ``mean``'s index. [unit]
    """
    u = u95.reindex(mean.index)
    name = "95 % measurement band"
    for i, edge in enumerate((mean - u, mean + u)):
        fig.add_trace(
            go.Scatter(
                x=_x(edge.index),
                y=edge.to_numpy(),
                mode="lines",
                line={"color": TIDE, "width": 1, "dash": "dot"},
                name=name,
                legendgroup=name,
                showlegend=i == 0,
                hoverinfo="skip",
            )
        )
    return fig


def actual_expected_figure(
    actual: pd.DataFrame,
    *,
    name: str,
    unit: str,
    x_title: str,
    expected: pd.Series | None = None,
    expected_low: pd.Series | None = None,
    expected_high: pd.Series | None = None,
    spans: pd.DataFrame | None = None,
) -> go.Figure:
    """Actual (mean in its min-max band) against the baseline's expected value and band.

    Parameters
    ----------
    actual : DataFrame
        Columns ``mean``, ``min``, ``max`` on a time index. [unit]
    expected : Series, optional
        Expected value from the active baseline. [unit]
    expected_low, expected_high : Series, optional
        The baseline's band around the expected value. [unit]
    spans : DataFrame, optional
        ``start``, ``end``, ``reason`` of spans to shade (see :func:`flag_spans`).
    """
    fig = trend_figure(actual, name=f"{name}, actual", unit=unit, x_title=x_title)
    if expected_low is not None and expected_high is not None:
        _band(fig, expected_low, expected_high, PLUM, "baseline band")
    if expected is not None:
        fig.add_trace(
            go.Scatter(
                x=_x(expected.index),
                y=expected.to_numpy(),
                mode="lines",
                line={"color": PLUM, "width": 2, "dash": "dash"},
                name=f"{name}, expected",
                hovertemplate=_hover(unit),
            )
        )
    fig.update_yaxes(title_text=axis_title(name, unit))
    if spans is not None:
        add_spans(fig, spans)
    return fig


def drift_figure(
    drift: pd.Series, *, name: str, unit: str, x_title: str, spans: pd.DataFrame | None = None
) -> go.Figure:
    """Actual minus expected, coloured by sign, around a zero line."""
    values = drift.to_numpy(dtype=float)
    colours = np.where(values < 0, COPPER, TIDE)
    fig = go.Figure(
        go.Bar(
            x=_x(drift.index),
            y=values,
            marker={"color": colours, "line": {"width": 0}},
            name=name,
            hovertemplate=_hover(unit),
        )
    )
    fig.update_layout(bargap=0)
    _style(fig, x_title=x_title, y_title=axis_title(name, unit), height=240)
    fig.update_yaxes(zeroline=True, zerolinewidth=1)
    if spans is not None:
        add_spans(fig, spans)
    return fig


def cusum_figure(
    upper: pd.Series | None,
    lower: pd.Series | None,
    *,
    unit: str,
    x_title: str,
    decision_interval: float | None = None,
) -> go.Figure:
    """Tabular CUSUM statistics with the decision interval h drawn as a limit line."""
    fig = go.Figure()
    for series, label, colour in ((upper, "CUSUM, upper", TIDE), (lower, "CUSUM, lower", SLATE)):
        if series is not None:
            fig.add_trace(
                go.Scatter(
                    x=_x(series.index),
                    y=series.to_numpy(),
                    mode="lines",
                    line={"color": colour, "width": 2},
                    name=label,
                    hovertemplate=_hover(unit),
                )
            )
    if decision_interval is not None and np.isfinite(decision_interval):
        fig.add_hline(
            y=decision_interval,
            line={"color": SIGNAL, "width": 1, "dash": "dot"},
            annotation_text=f"h = {format_number(decision_interval, 3)}",
            annotation_position="top left",
        )
    return _style(fig, x_title=x_title, y_title=axis_title("CUSUM", unit), height=240)


# -- flags on the time axis ---------------------------------------------------------------


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """Index ranges [i, j) where ``mask`` is True."""
    padded = np.concatenate(([False], mask, [False])).astype(np.int8)
    edges = np.flatnonzero(np.diff(padded))
    return list(zip(edges[::2], edges[1::2], strict=True))


def _spans(mask: np.ndarray, index: pd.DatetimeIndex, step: pd.Timedelta, reason: str, kind: str):
    rows = []
    for i, j in _runs(mask):
        end = index[j] if j < len(index) else index[j - 1] + step
        rows.append({"start": index[i], "end": end, "reason": reason, "kind": kind})
    return rows


def _step(index: pd.DatetimeIndex, bucket_seconds: float | None) -> pd.Timedelta:
    if bucket_seconds:
        return pd.Timedelta(seconds=float(bucket_seconds))
    if len(index) > 1:
        return pd.Timedelta(pd.Series(index).diff().median())
    return pd.Timedelta(0)


def flag_label(flag: Flag) -> str:
    """``Flag.NEGATIVE_ENTROPY_GENERATION`` -> ``"Negative entropy generation"``."""
    return (flag.name or str(int(flag))).replace("_", " ").capitalize()


FLAG_TYPES: tuple[type[IntFlag], ...] = (Flag, DataFlag)
"""Bits of the stored ``flags`` metric: the engine's consistency bits and the pipeline's
data-quality bits (THIN_DATA, AMBIENT_DEFAULT)."""


def _named_bits(flag_types: Sequence[type[IntFlag]]) -> list[tuple[int, str]]:
    found = {}
    for flag_type in flag_types:
        for flag in flag_type:
            value = int(flag.value)
            if value and value & (value - 1) == 0:  # single bits only
                found.setdefault(value, flag_label(flag))
    return sorted(found.items())


def flag_spans(
    flags: pd.Series,
    bucket_seconds: float | None = None,
    flag_types: Sequence[type[IntFlag]] = FLAG_TYPES,
) -> pd.DataFrame:
    """Time spans during which each flag bit is set.

    Parameters
    ----------
    flags : Series
        The integer ``flags`` result column (bits of :class:`engine.checks.Flag` and of
        the pipeline's data flags; a downsampled bucket holds the OR of its intervals) on
        a time index; NaN means no result and sets no flag.
    bucket_seconds : float, optional
        Length of one point; the last span of a run ends one point after its last
        start. Inferred from the index spacing when not given. [s]
    flag_types : sequence of IntFlag classes
        Where bit names come from; a set bit that none of them names is reported as
        ``"Flag bit N"``.

    Returns
    -------
    DataFrame
        ``start``, ``end`` (exclusive), ``reason`` (the flag's label) and ``kind``
        (``"flag"``), one row per run of consecutive flagged points per bit, ordered by
        bit then time.
    """
    index = pd.DatetimeIndex(flags.index)
    values = flags.to_numpy(dtype=float)
    known = np.isfinite(values)
    bits = np.where(known, values, 0).astype(np.int64)
    step = _step(index, bucket_seconds)
    named = _named_bits(flag_types)
    seen = np.bitwise_or.reduce(bits) if len(bits) else 0
    unnamed = int(seen) & ~sum(value for value, _ in named)
    extra = [(1 << n, f"Flag bit {n}") for n in range(63) if unnamed & (1 << n)]
    rows = []
    for value, label in sorted(named + extra):
        rows += _spans((bits & value) != 0, index, step, label, "flag")
    return pd.DataFrame(rows, columns=SPAN_COLUMNS)


def state_spans(
    state: pd.Series,
    bucket_seconds: float | None = None,
    *,
    reason: str = NOT_STEADY,
    kind: str = "state",
    when: float = 0.0,
) -> pd.DataFrame:
    """Spans where a 0/1 state mostly held the value ``when`` (the bucket mean within 0.5
    of it): not steady (``steady`` = 0), outside the baseline's range
    (``extrapolated_M`` = 1), ...

    Returns
    -------
    DataFrame
        ``start``, ``end``, ``reason``, ``kind``, as :func:`flag_spans`.
    """
    index = pd.DatetimeIndex(state.index)
    values = state.to_numpy(dtype=float)
    mask = np.isfinite(values) & (np.abs(values - when) < 0.5)
    rows = _spans(mask, index, _step(index, bucket_seconds), reason, kind)
    return pd.DataFrame(rows, columns=SPAN_COLUMNS)


SHADE_AXIS = "y9"
"""A hidden y axis spanning the plot height (0 to 1), overlaid on the chart's own: span
shading is drawn as bars on it."""


def add_spans(fig: go.Figure, spans: pd.DataFrame) -> go.Figure:
    """Shade spans on the time axis, one legend entry per reason with its count.

    Each reason is one bar trace on a hidden full-height axis, a bar per span (centred
    on it, as wide as it): hundreds of spans cost one trace. Layout shapes
    (``add_vrect``) would be validated one by one and take seconds for a year of
    flagged buckets.
    """
    for _reason, group in spans.groupby("reason", sort=False):
        reason = str(_reason)
        colour = SPAN_COLOURS.get(group["kind"].iloc[0], MUTED)
        start = pd.DatetimeIndex(group["start"])
        end = pd.DatetimeIndex(group["end"])
        fig.add_trace(
            go.Bar(
                x=_x(start + (end - start) / 2),
                y=np.ones(len(group)),
                width=(end - start).total_seconds().to_numpy() * 1000.0,  # ms on a date axis
                base=0,
                yaxis=SHADE_AXIS,
                marker={
                    "color": _alpha(colour, 0.14 if reason == NOT_STEADY else 0.18),
                    "line": {"width": 0},
                },
                name=f"{reason} ({len(group)})",
                hoverinfo="skip",
            )
        )
    if len(spans):
        fig.update_layout(
            {
                f"yaxis{SHADE_AXIS[1:]}": {
                    "overlaying": "y",
                    "range": [0, 1],
                    "visible": False,
                    "fixedrange": True,
                }
            }
        )
    return fig


# -- second law ---------------------------------------------------------------------------


def waterfall_steps(
    input_label: str, input_value: float, terms: Sequence[tuple[str, str, float]]
) -> pd.DataFrame:
    """The floating bars of an exergy waterfall.

    Returns
    -------
    DataFrame
        ``category``, ``label``, ``base`` and ``value`` (bar from ``base`` to
        ``base + value``), in order: the input from zero, each outflow stepping down
        from what is left, and the product from zero. [unit of the inputs]
    """
    product = [t for t in terms if t[0] == "product"]
    if len(product) != 1:
        raise ValueError(f"exactly one product term expected, got {len(product)}")
    rows = [{"category": "input", "label": input_label, "base": 0.0, "value": input_value}]
    left = float(input_value)
    for category, label, value in terms:
        if category == "product":
            continue
        left -= float(value)
        rows.append({"category": category, "label": label, "base": left, "value": float(value)})
    rows.append(
        {"category": "product", "label": product[0][1], "base": 0.0, "value": product[0][2]}
    )
    return pd.DataFrame(rows, columns=["category", "label", "base", "value"])


def wrap(label: str, width: int = 16) -> str:
    """Break a category label into lines of about ``width`` characters (``<br>``)."""
    lines: list[str] = []
    for word in label.split():
        if lines and len(lines[-1]) + 1 + len(word) <= width:
            lines[-1] += " " + word
        else:
            lines.append(word)
    return "<br>".join(lines)


_CATEGORY_NAMES = {
    "input": "exergy input",
    "destroyed": "destroyed inside the unit",
    "lost": "lost to the surroundings",
    "mismatch": "balance mismatch",
    "product": "product",
}


def exergy_waterfall(
    input_label: str,
    input_value: float,
    terms: Sequence[tuple[str, str, float]],
    *,
    unit: str,
) -> go.Figure:
    """The exergy input stepping down through each destruction and loss to the product.

    Parameters
    ----------
    input_label : str
        Name of the exergy input (fuel exergy).
    input_value : float
        Exergy input. [unit]
    terms : sequence of (category, label, value)
        Outflows as from :meth:`dashboard.exergy_account.ExergyAccount.terms`; exactly
        one ``"product"``; other categories ``"destroyed"``, ``"lost"``, ``"mismatch"``.
        [unit]
    unit : str
        Display unit label.

    Notes
    -----
    Floating bars (see :func:`waterfall_steps`): what is left after the last outflow is
    the product when the account closes; a balance mismatch is its own bar rather than
    folded into another, so the chart never hides a disagreement.
    """
    steps = waterfall_steps(input_label, input_value, terms)
    fig = go.Figure()
    for category, group in steps.groupby("category", sort=False):
        fig.add_trace(
            go.Bar(
                x=[wrap(label) for label in group["label"]],
                y=group["value"],
                base=group["base"],
                marker={"color": CATEGORY_COLOURS[category], "line": {"width": 0}},
                name=_CATEGORY_NAMES[category],
                text=[format_number(v, 3) for v in group["value"]],
                textposition="outside",
                cliponaxis=False,
                hovertemplate="%{x}: %{y:,.4~g} " + unit + "<extra></extra>",
            )
        )
    _style(fig, x_title="", y_title=axis_title("Exergy flow", unit), height=380)
    top = float((steps["base"] + steps["value"]).max())
    fig.update_layout(
        barmode="overlay",
        hovermode="closest",
        bargap=0.35,
        margin={"b": 80, "t": 96},
        legend={"y": 1.14},
    )
    # room above the tallest bar for its value label
    fig.update_yaxes(range=[min(0.0, float(steps["base"].min())), 1.15 * top if top > 0 else 1])
    fig.update_xaxes(
        categoryorder="array",
        categoryarray=[wrap(label) for label in steps["label"]],
        gridcolor="rgba(0,0,0,0)",
        tickangle=0,
    )
    return fig


def exergy_sankey(
    input_label: str,
    input_value: float,
    terms: Sequence[tuple[str, str, float]],
    *,
    unit: str,
    min_share: float = 0.02,
) -> go.Figure:
    """An exergy-flow (Grassmann-style) diagram: one input splitting into every outflow.

    Link widths are proportional to the flows (a negative term is drawn at its
    magnitude); node labels carry value and unit. Destructions and losses each smaller
    than ``min_share`` of the input [-] are drawn together as one "smaller parts" flow,
    so the labels stay legible (the table beside the diagram lists each part).
    """
    flows = sankey_flows(input_value, terms, min_share)
    labels = [f"{input_label}<br>{format_number(input_value, 4)} {unit}"]
    labels += [f"{label}<br>{format_number(value, 4)} {unit}" for _, label, value in flows]
    colours = [CATEGORY_COLOURS["input"]] + [CATEGORY_COLOURS[c] for c, _, _ in flows]
    fig = go.Figure(
        go.Sankey(
            arrangement="snap",
            valueformat=",.4~g",
            valuesuffix=f" {unit}",
            node={
                "label": labels,
                "color": colours,
                "pad": 18,
                "thickness": 16,
                "line": {"color": CARD, "width": 1},
            },
            link={
                "source": [0] * len(flows),
                "target": list(range(1, len(flows) + 1)),
                "value": [abs(v) for _, _, v in flows],
                "color": [_alpha(CATEGORY_COLOURS[c], 0.35) for c, _, _ in flows],
            },
        )
    )
    fig.update_layout(
        template="none",
        height=380,
        paper_bgcolor=CARD,
        font={"family": FONT, "color": INK, "size": 12},
        margin={"l": 16, "r": 16, "t": 16, "b": 16},
    )
    return fig


def sankey_flows(
    input_value: float, terms: Sequence[tuple[str, str, float]], min_share: float
) -> list[tuple[str, str, float]]:
    """Terms with the small ones (|value| < ``min_share`` x input; never the product)
    merged into one ``"Smaller parts (n)"`` term when there are two or more: coloured as
    their category when they share one, grey otherwise."""
    finite = [t for t in terms if t[2] is not None and np.isfinite(t[2])]
    limit = abs(input_value) * min_share
    small = [t for t in finite if t[0] != "product" and abs(t[2]) < limit]
    if len(small) < 2:
        return finite
    kept = [t for t in finite if t not in small]
    categories = {t[0] for t in small}
    category = categories.pop() if len(categories) == 1 else "mismatch"
    return [*kept, (category, f"Smaller parts ({len(small)})", float(sum(t[2] for t in small)))]


def empty_figure(message: str, *, height: int = 240) -> go.Figure:
    """A blank chart that says why it is blank (no data, no baseline yet)."""
    fig = go.Figure()
    fig.add_annotation(
        text=message,
        showarrow=False,
        x=0.5,
        y=0.5,
        xref="paper",
        yref="paper",
        font={"family": FONT, "color": MUTED, "size": 14},
    )
    fig.update_layout(
        template="none",
        height=height,
        paper_bgcolor=CARD,
        plot_bgcolor=CARD,
        margin={"l": 16, "r": 16, "t": 16, "b": 16},
    )
    fig.update_xaxes(visible=False)
    fig.update_yaxes(visible=False)
    return fig
