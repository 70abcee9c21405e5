"""Every table, imported in one place so that ``Base.metadata`` is complete (Alembic)."""

from api.auth.models import ApiKey
from api.core.db import Base
from api.pipeline.models import SpanState, WorkSpan
from api.plants.models import Fuel, Plant, Tag, Unit, UnitBinding
from api.readings.models import Reading
from api.results.models import ResultMeta, ResultValue
from api.uploads.models import Upload

__all__ = [
    "ApiKey",
    "Base",
    "Fuel",
    "Plant",
    "Reading",
    "ResultMeta",
    "ResultValue",
    "SpanState",
    "Tag",
    "Unit",
    "UnitBinding",
    "Upload",
    "WorkSpan",
]
