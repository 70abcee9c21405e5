"""Computed results per unit, metric and interval."""
