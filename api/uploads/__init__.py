"""Shift-log CSV uploads and their reports."""
