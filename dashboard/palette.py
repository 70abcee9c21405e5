"""The dashboard's colours, for figures; ``assets/theme.css`` declares the same values.

Chosen for this product: a warm bone paper with graphite ink, and one hue per meaning
so a colour reads the same on every page -- tide (blue-green) is what the unit delivers
or measures, plum is what it should do (baseline), copper is exergy destroyed, sand is
exergy lost, signal red is reserved for alerts and broken data. Hues differ in
lightness too, so the charts stay readable in grey print and for the common red-green
colour-vision deficiencies.
"""

from __future__ import annotations

INK = "#1d2733"
"""Text, axes and the navigation rail."""
BONE = "#f4f1ea"
"""Page background."""
CARD = "#fffdf8"
"""Card and plot background."""
RULE = "#d9d3c7"
"""Hairlines and grid."""
MUTED = "#6b6459"
"""Secondary text."""
TIDE = "#1f7a74"
"""Measured values and exergy products."""
PLUM = "#6d4a7e"
"""Expected values (baseline) and its band."""
COPPER = "#b5542d"
"""Exergy destroyed inside the unit."""
SAND = "#c89b3c"
"""Exergy lost to the surroundings; warnings."""
SIGNAL = "#b3261e"
"""Alerts and inconsistent data."""
SLATE = "#4f6d8a"
"""Secondary series (CUSUM lower side, second metric)."""

CSS_VARIABLES: dict[str, str] = {
    "--lw-ink": INK,
    "--lw-bone": BONE,
    "--lw-card": CARD,
    "--lw-rule": RULE,
    "--lw-muted": MUTED,
    "--lw-tide": TIDE,
    "--lw-plum": PLUM,
    "--lw-copper": COPPER,
    "--lw-sand": SAND,
    "--lw-signal": SIGNAL,
    "--lw-slate": SLATE,
}
"""The CSS custom properties of ``assets/theme.css`` that mirror these constants."""


def with_alpha(hex_colour: str, alpha: float) -> str:
    """``rgba(...)`` text of a ``#rrggbb`` colour at the given opacity [-]."""
    value = hex_colour.lstrip("#")
    r, g, b = (int(value[i : i + 2], 16) for i in (0, 2, 4))
    return f"rgba({r},{g},{b},{alpha:g})"
