"""Reusable pieces of the dashboard's pages: cards, tiles, empty states, controls."""
