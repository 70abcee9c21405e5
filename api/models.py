"""Every table, imported in one place so that ``Base.metadata`` is complete (Alembic)."""

from api.alerts.models import Alert, AlertRule, AlertRuleState
from api.auth.models import ApiKey
from api.baselines.models import Baseline, ChartCheckpoint, DriftEvent
from api.core.db import Base
from api.pipeline.models import SpanState, WorkSpan
from api.plants.models import Fuel, Plant, Tag, Unit, UnitBinding
from api.readings.models import Reading
from api.results.models import ResultMeta, ResultValue
from api.results.rollups import ResultRollup
from api.uploads.models import Upload
from api.webhooks.models import (
    WebhookAttempt,
    WebhookDelivery,
    WebhookEvent,
    WebhookSubscription,
)

__all__ = [
    "Alert",
    "AlertRule",
    "AlertRuleState",
    "ApiKey",
    "Base",
    "Baseline",
    "ChartCheckpoint",
    "DriftEvent",
    "Fuel",
    "Plant",
    "Reading",
    "ResultMeta",
    "ResultRollup",
    "ResultValue",
    "SpanState",
    "Tag",
    "Unit",
    "UnitBinding",
    "Upload",
    "WebhookAttempt",
    "WebhookDelivery",
    "WebhookEvent",
    "WebhookSubscription",
    "WorkSpan",
]
