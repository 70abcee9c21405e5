"""Plant overview: every unit's efficiencies, drift, headroom, cost and freshness."""

from __future__ import annotations

import asyncio
import math
from dataclasses import dataclass, field
from typing import Any

import pandas as pd
from dash import Input, Output, dcc, html
from dash.dash_table.Format import Format, Scheme

from dashboard import formatting as fmt
from dashboard.client import (
    DRIFT_COST_METRIC,
    HEADROOM_COST_METRIC,
    HEADROOM_METRIC,
    ApiError,
    LostworkClient,
    NotAvailable,
)
from dashboard.components import cards, prefs
from dashboard.components.table import data_table
from dashboard.registry import page_callback

PAGE = {"path": "/", "name": "Overview", "order": 0, "title": "lostwork · overview"}
NAV_HREF = "/"
OWNS = ("/units/",)

TILES = "overview-tiles"
TABLE = "overview-table"
NOTE = "overview-note"
TICK = "overview-tick"

REFRESH_MS = 60_000
OPEN_STATUS = "firing"
"""Alert status counted as open (lifecycle firing -> resolved, DESIGN section 7)."""
DRIFT_METRIC = "drift_eta_1"
NUMERIC = (
    "eta_1",
    "eta_2",
    DRIFT_METRIC,
    HEADROOM_METRIC,
    DRIFT_COST_METRIC,
    HEADROOM_COST_METRIC,
)
RECENT = pd.Timedelta(hours=1)
"""The overview shows each unit's means over its last hour of results."""


def layout(**_kwargs: Any) -> html.Div:
    return html.Div(
        [
            html.Header(
                [
                    html.H1("Plant overview"),
                    html.P(
                        "Each unit over its last hour of results. Sort by any column; open a "
                        "unit for its trends, baseline and drift.",
                        className="lw-lede",
                    ),
                ]
            ),
            dcc.Interval(id=TICK, interval=REFRESH_MS),
            dcc.Loading(html.Div(id=TILES), type="dot", color="var(--lw-tide)"),
            cards.card(
                None,
                data_table(
                    TABLE,
                    markdown_options={"link_target": "_self"},
                    style_cell_conditional=[
                        {"if": {"column_type": "text"}, "textAlign": "left"},
                        {"if": {"column_id": "unit"}, "minWidth": "150px"},
                        {"if": {"column_id": "last"}, "minWidth": "150px"},
                    ],
                ),
            ),
            html.Div(id=NOTE, className="lw-note"),
        ]
    )


@dataclass
class Snapshot:
    """Everything the overview shows, fetched in one go."""

    units: pd.DataFrame
    plants: dict[str, dict[str, Any]] = field(default_factory=dict)
    latest: dict[str, dict[str, Any]] = field(default_factory=dict)
    open_alerts: dict[str, int] | None = None
    """Open alerts per unit slug; None when the server has no alerts yet."""


async def fetch(client: LostworkClient) -> Snapshot:
    units = await client.units()
    slugs = list(units["slug"])
    plant_slugs = sorted(set(units["plant"].dropna()))
    plants, latest = await asyncio.gather(
        asyncio.gather(*(client.plant(p) for p in plant_slugs)),
        asyncio.gather(*(_recent(client, s) for s in slugs)),
    )
    try:
        alerts = await client.alerts(status=OPEN_STATUS)
        counts = alerts["unit"].value_counts().to_dict() if "unit" in alerts else {}
        open_alerts: dict[str, int] | None = {s: int(counts.get(s, 0)) for s in slugs}
    except NotAvailable:
        open_alerts = None
    return Snapshot(
        units=units,
        plants=dict(zip(plant_slugs, plants, strict=True)),
        latest={s: v for s, v in zip(slugs, latest, strict=True) if v is not None},
        open_alerts=open_alerts,
    )


async def _recent(client: LostworkClient, slug: str) -> dict[str, Any] | None:
    """The unit's latest interval, its values replaced by means over the last
    :data:`RECENT` where there are some (one interval may be unsteady or outside the
    baseline's range, and so have no drift of its own)."""
    try:
        latest = await client.latest(slug)
    except ApiError as exc:
        if exc.status == 404:  # a unit with no result yet
            return None
        raise
    if latest["t"] is None:
        return latest
    names = {m.get("metric") for m in await client.metrics(slug)}
    wanted = [m for m in NUMERIC if m in names]
    if not wanted:
        return latest
    end = latest["t"] + pd.Timedelta(minutes=1)
    found = await client.results(slug, end - RECENT, end, wanted, max_points=2)
    means = found.period_means()
    units = {**latest["units"], **found.units}
    return {**latest, "values": {**latest["values"], **means}, "units": units}


def _unit_of(latest: dict[str, Any], metric: str, default: str) -> str:
    return (latest.get("units") or {}).get(metric) or default


_DEFAULT_UNITS = {"eta_1": "1", "eta_2": "1", DRIFT_METRIC: "1", HEADROOM_METRIC: "W"}


def rows(snapshot: Snapshot, choice: prefs.Prefs, now=None) -> tuple[list[dict], list[dict]]:
    """Table rows (display units, sortable numbers) and column specs for the overview.

    Rows are ordered by cost of drift (highest first), then by name, so the unit that
    costs most is on top before anyone sorts.
    """
    labels: dict[str, str] = {}
    out = []
    for unit in snapshot.units.to_dict("records"):
        slug = unit["slug"]
        latest = snapshot.latest.get(slug) or {}
        values = latest.get("values") or {}
        plant = snapshot.plants.get(unit.get("plant"), {})
        zone = fmt.zone_name(choice.clock, plant.get("time_zone"))
        row: dict[str, Any] = {
            "unit": f"[{unit.get('name') or slug}](/units/{slug})",
            "plant": plant.get("name") or unit.get("plant") or "",
            "kind": str(unit.get("kind") or "").replace("_", " "),
            "last": fmt.format_timestamp(latest.get("t"), zone) if latest else "no results yet",
            "age_min": _minutes(fmt.age_seconds(latest.get("t"), now)) if latest else None,
            "alerts": None if snapshot.open_alerts is None else snapshot.open_alerts.get(slug, 0),
            "cost": _number(values.get(DRIFT_COST_METRIC)),
            "headroom_cost": _number(values.get(HEADROOM_COST_METRIC)),
        }
        for metric in ("eta_1", "eta_2", DRIFT_METRIC, HEADROOM_METRIC):
            si_unit = _unit_of(latest, metric, _DEFAULT_UNITS[metric])
            shown, label = fmt.to_display(
                _number(values.get(metric), nan=True), metric, si_unit, choice.system
            )
            labels[metric] = label
            row[metric] = _number(shown)
        out.append(row)
    out.sort(key=lambda r: (-(r["cost"] if r["cost"] is not None else -math.inf), r["unit"]))
    currencies = {p.get("currency") for p in snapshot.plants.values() if p.get("currency")}
    currency = currencies.pop() if len(currencies) == 1 else "plant currency"
    several_plants = len({r["plant"] for r in out}) > 1
    return out, _columns(labels, currency, snapshot.open_alerts is not None, several_plants)


def _columns(
    labels: dict[str, str], currency: str, with_alerts: bool, with_plant: bool
) -> list[dict]:
    def numeric(col_id: str, name: str, decimals: int) -> dict:
        return {
            "id": col_id,
            "name": name,
            "type": "numeric",
            "format": Format(precision=decimals, scheme=Scheme.fixed, group=True),
        }

    pct = labels.get("eta_1", "%")
    columns = [
        {"id": "unit", "name": "Unit", "presentation": "markdown", "type": "text"},
        {"id": "plant", "name": "Plant", "type": "text"},
        {"id": "kind", "name": "Kind", "type": "text"},
        numeric("eta_1", f"η₁ [{pct}]", 1),
        numeric("eta_2", f"η₂ [{labels.get('eta_2', '%')}]", 1),
        numeric(DRIFT_METRIC, f"η₁ drift [{labels.get(DRIFT_METRIC, '% points')}]", 2),
        numeric(HEADROOM_METRIC, f"Headroom [{labels.get(HEADROOM_METRIC, 'MW')}]", 2),
        numeric("cost", f"Cost of drift [{currency}/h]", 1),
        numeric("headroom_cost", f"Headroom value [{currency}/h]", 1),
        {"id": "last", "name": "Latest result", "type": "text"},
        numeric("age_min", "Age [min]", 0),
    ]
    if with_alerts:
        columns.append(numeric("alerts", "Open alerts", 0))
    if not with_plant:  # one plant: the page header names it
        columns = [c for c in columns if c["id"] != "plant"]
    return columns


def _number(value: Any, nan: bool = False) -> float | None:
    try:
        x = float(value)
    except (TypeError, ValueError):
        return math.nan if nan else None
    if math.isfinite(x):
        return x
    return math.nan if nan else None


def _minutes(seconds: float) -> float | None:
    return None if not math.isfinite(seconds) else round(seconds / 60.0)


def summary(snapshot: Snapshot, table: list[dict]) -> html.Div:
    """The key figures above the table."""
    reporting = sum(1 for r in table if r["age_min"] is not None)
    costs = [r["cost"] for r in table if r["cost"] is not None]
    headroom = [r["headroom_cost"] for r in table if r["headroom_cost"] is not None]
    currencies = {p.get("currency") for p in snapshot.plants.values() if p.get("currency")}
    currency = currencies.pop() if len(currencies) == 1 else None
    ages = [r["age_min"] for r in table if r["age_min"] is not None]
    worst = max(
        table, key=lambda r: r["cost"] if r["cost"] is not None else -math.inf, default=None
    )
    alerts = None if snapshot.open_alerts is None else sum(snapshot.open_alerts.values())
    return cards.tiles(
        cards.tile("Units", f"{len(table)}", sub=_units_line(snapshot, reporting)),
        cards.tile(
            "Cost of drift, last hour",
            fmt.format_money_per_hour(sum(costs), currency) if costs else "—",
            sub=(f"most: {_plain(worst['unit'])}" if costs and worst else "none in the last hour"),
            tone="warn" if costs and sum(costs) > 0 else "plain",
        ),
        cards.tile(
            "Headroom value",
            fmt.format_money_per_hour(sum(headroom), currency) if headroom else "—",
            sub="to the best demonstrated" if headroom else "none in the last hour",
        ),
        cards.tile(
            "Open alerts",
            "—" if alerts is None else f"{alerts}",
            sub="alerts not set up on this server yet" if alerts is None else None,
            tone="alert" if alerts else "plain",
        ),
        cards.tile(
            "Oldest latest result",
            fmt.format_age(pd.Timestamp.now(tz="UTC") - pd.Timedelta(minutes=max(ages)))
            if ages
            else "—",
            sub="how stale the slowest unit is",
        ),
    )


def _units_line(snapshot: Snapshot, reporting: int) -> str:
    names = sorted({p.get("name") or slug for slug, p in snapshot.plants.items()})
    where = f" · {names[0]}" if len(names) == 1 else f" · {len(names)} plants"
    return f"{reporting} with results{where}"


def _plain(markdown_link: str) -> str:
    return markdown_link.split("](")[0].lstrip("[")


@page_callback(
    Output(TILES, "children"),
    Output(TABLE, "data"),
    Output(TABLE, "columns"),
    Output(NOTE, "children"),
    Input(prefs.STORE, "data"),
    Input(TICK, "n_intervals"),
)
async def refresh(choice_data, _tick, *, client: LostworkClient):
    """Fetch every unit's latest values and lay them out."""
    choice = prefs.read(choice_data)
    try:
        snapshot = await fetch(client)
    except ApiError as exc:
        return cards.problem(exc, doing="load the units"), [], [], None
    if snapshot.units.empty:
        empty = cards.empty_state(
            "No units yet",
            "Apply a plant file (lostwork plant apply FILE) and push readings; units appear here.",
        )
        return empty, [], [], None
    table, columns = rows(snapshot, choice)
    note = None if snapshot.open_alerts is not None else "Alerts are not set up on this server yet."
    return summary(snapshot, table), table, columns, note
