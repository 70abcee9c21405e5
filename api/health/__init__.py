"""Liveness and readiness (public)."""
