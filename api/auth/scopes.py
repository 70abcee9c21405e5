"""The three scopes an API key can hold."""

from __future__ import annotations

import enum


class Scope(enum.StrEnum):
    READ = "read"
    """Read plants, units, readings, results, uploads."""
    INGEST = "ingest"
    """Push readings and upload shift logs."""
    ADMIN = "admin"
    """Everything, including plant configuration and keys."""


def grants(held: list[str] | set[str], needed: Scope) -> bool:
    """Whether keys holding ``held`` may use a route needing ``needed`` (admin implies all)."""
    return Scope.ADMIN.value in held or needed.value in held
