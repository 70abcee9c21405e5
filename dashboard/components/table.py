"""The dashboard's data table, styled once."""

from __future__ import annotations

from typing import Any

from dash import dash_table

from dashboard.figures import FONT
from dashboard.palette import BONE, CARD, INK, MUTED, RULE, with_alpha


def data_table(id: str, **kwargs: Any) -> dash_table.DataTable:
    """A DataTable in the house style: hairline rows, tabular figures, wrapping text."""
    options: dict[str, Any] = {
        "data": [],
        "columns": [],
        "sort_action": "native",
        "style_as_list_view": True,
        "page_action": "none",
        "style_table": {"overflowX": "auto"},
        "style_cell": {
            "fontFamily": FONT,
            "fontSize": "14px",
            "color": INK,
            "backgroundColor": CARD,
            "border": "none",
            "borderBottom": f"1px solid {RULE}",
            "padding": "8px 12px",
            "textAlign": "right",
            "fontVariantNumeric": "tabular-nums",
            "minWidth": "70px",
            "whiteSpace": "normal",
            "height": "auto",
        },
        "style_cell_conditional": [
            {"if": {"column_type": "text"}, "textAlign": "left"},
        ],
        "style_header": {
            "backgroundColor": BONE,
            "color": MUTED,
            "fontWeight": "600",
            "borderBottom": f"2px solid {INK}",
            "whiteSpace": "normal",
        },
        "style_data_conditional": [
            {"if": {"state": "active"}, "backgroundColor": with_alpha(INK, 0.06), "border": "none"},
        ],
        "markdown_options": {"link_target": "_self"},
    }
    options.update(kwargs)
    return dash_table.DataTable(id=id, **options)
