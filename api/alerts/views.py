"""Alert and rule routes.

Scopes: ``read`` lists and reads alerts and rules, and acknowledges alerts (an
acknowledgement annotates an alert — who saw it and what they did — and changes no
rule, data or delivery; the people who must acknowledge are the ones watching, whose
keys are read keys; the key's name is recorded). ``admin`` creates, changes and
deletes rules.
"""

from __future__ import annotations

import datetime as dt
from typing import Annotated, Literal

from fastapi import APIRouter, Query, Response

from api.alerts import service
from api.alerts.schemas import (
    Acknowledge,
    AlertDetail,
    AlertList,
    AlertRead,
    RuleCreate,
    RuleList,
    RulePatch,
    RuleRead,
)
from api.deps import AdminKey, ReadKey, SessionDep, SettingsDep

alerts_router = APIRouter(prefix="/alerts", tags=["alerts"])
rules_router = APIRouter(prefix="/rules", tags=["rules"])


@alerts_router.get("", response_model=AlertList, operation_id="list_alerts")
def list_alerts(
    session: SessionDep,
    settings: SettingsDep,
    _key: ReadKey,
    plant: str | None = None,
    unit: str | None = None,
    status: Literal["firing", "resolved"] | None = None,
    severity: Literal["info", "warning", "critical"] | None = None,
    rule: Annotated[str | None, Query(description="Rule name")] = None,
    acknowledged: bool | None = None,
    start: Annotated[
        dt.datetime | None, Query(description="Alerts still active at or after this time")
    ] = None,
    end: Annotated[dt.datetime | None, Query(description="Alerts begun before this time")] = None,
    limit: Annotated[int, Query(ge=1, le=service.MAX_LIMIT)] = 100,
    offset: Annotated[int, Query(ge=0)] = 0,
) -> AlertList:
    """Alerts, newest first, filtered by plant, unit, status, severity, rule,
    acknowledgement and time (RFC 3339; alerts active at some moment of [start, end))."""
    alerts, total = service.list_alerts(
        session=session,
        plant=plant,
        unit=unit,
        status=status,
        severity=severity,
        rule=rule,
        acknowledged=acknowledged,
        start=start,
        end=end,
        limit=limit,
        offset=offset,
    )
    base = settings.public_base_url
    return AlertList(alerts=[service.alert_read(session, a, base) for a in alerts], total=total)


@alerts_router.get("/{alert_id}", response_model=AlertDetail, operation_id="get_alert")
def get_alert(
    alert_id: int, session: SessionDep, settings: SettingsDep, _key: ReadKey
) -> AlertDetail:
    """One alert with its history (the events sent about it)."""
    alert = service.get_alert(session, alert_id)
    return service.alert_detail(session, alert, settings.public_base_url)


@alerts_router.post(
    "/{alert_id}/acknowledge", response_model=AlertRead, operation_id="acknowledge_alert"
)
def acknowledge_alert(
    alert_id: int, body: Acknowledge, session: SessionDep, settings: SettingsDep, key: ReadKey
) -> AlertRead:
    """Acknowledge with a note; the key's name is recorded as who acknowledged. Once per
    alert (409 afterwards). Sends ``alert.acknowledged`` to matching webhooks."""
    alert = service.acknowledge(
        session=session,
        alert_id=alert_id,
        by=key.name,
        note=body.note,
        base_url=settings.public_base_url,
    )
    return service.alert_read(session, alert, settings.public_base_url)


@rules_router.get("", response_model=RuleList, operation_id="list_rules")
def list_rules(
    session: SessionDep, _key: ReadKey, plant: str | None = None, unit: str | None = None
) -> RuleList:
    rules = service.list_rules(session=session, plant=plant, unit=unit)
    return RuleList(rules=[service.rule_read(session, r) for r in rules])


@rules_router.get("/{rule_id}", response_model=RuleRead, operation_id="get_rule")
def get_rule(rule_id: int, session: SessionDep, _key: ReadKey) -> RuleRead:
    return service.rule_read(session, service.get_rule(session, rule_id))


@rules_router.post("", status_code=201, response_model=RuleRead, operation_id="create_rule")
def create_rule(
    body: RuleCreate, session: SessionDep, settings: SettingsDep, _key: AdminKey
) -> RuleRead:
    """Create a rule (the plant-file form plus ``name``); 422 locates every problem."""
    rule = service.create_rule(
        session=session,
        name=body.name,
        spec=body,
        base_url=settings.public_base_url,
    )
    return service.rule_read(session, rule)


@rules_router.put("/{rule_id}", response_model=RuleRead, operation_id="replace_rule")
def replace_rule(
    rule_id: int, body: RuleCreate, session: SessionDep, settings: SettingsDep, _key: AdminKey
) -> RuleRead:
    """Replace a rule made through the API (a plant-file rule: 409, change the file).
    Changing what it watches resolves its open alert; changing limits keeps it."""
    rule = service.replace_rule(
        session=session,
        rule_id=rule_id,
        name=body.name,
        spec=body,
        base_url=settings.public_base_url,
    )
    return service.rule_read(session, rule)


@rules_router.patch("/{rule_id}", response_model=RuleRead, operation_id="enable_rule")
def patch_rule(
    rule_id: int, body: RulePatch, session: SessionDep, settings: SettingsDep, _key: AdminKey
) -> RuleRead:
    """Enable or disable any rule (disabling resolves its open alert). A plant-file rule
    gets the file's ``enabled`` back the next time the file is applied."""
    rule = service.set_enabled(
        session=session, rule_id=rule_id, enabled=body.enabled, base_url=settings.public_base_url
    )
    return service.rule_read(session, rule)


@rules_router.delete("/{rule_id}", status_code=204, operation_id="delete_rule")
def delete_rule(
    rule_id: int, session: SessionDep, settings: SettingsDep, _key: AdminKey
) -> Response:
    """Delete a rule made through the API; its open alert is resolved, its history kept."""
    service.delete_rule(session=session, rule_id=rule_id, base_url=settings.public_base_url)
    return Response(status_code=204)


router = APIRouter()
router.include_router(alerts_router)
router.include_router(rules_router)
