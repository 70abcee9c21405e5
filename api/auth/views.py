"""API key routes (admin)."""

from __future__ import annotations

from fastapi import APIRouter

from api.auth import service
from api.auth.schemas import KeyCreate, KeyCreated, KeyList, KeyRead
from api.deps import AdminKey, SessionDep

router = APIRouter(prefix="/keys", tags=["keys"])


@router.post("", status_code=201, response_model=KeyCreated, operation_id="create_key")
def create_key(body: KeyCreate, session: SessionDep, _key: AdminKey) -> KeyCreated:
    """Create a key; the response carries the key once."""
    key, plaintext = service.create_key(
        session=session, name=body.name, scopes=[s.value for s in body.scopes]
    )
    return KeyCreated(**KeyRead.model_validate(key).model_dump(), key=plaintext)


@router.get("", response_model=KeyList, operation_id="list_keys")
def list_keys(session: SessionDep, _key: AdminKey) -> KeyList:
    return KeyList(keys=[KeyRead.model_validate(k) for k in service.list_keys(session=session)])


@router.delete("/{key_id}", response_model=KeyRead, operation_id="revoke_key")
def revoke_key(key_id: int, session: SessionDep, _key: AdminKey) -> KeyRead:
    """Revoke a key; it stops working at once and stays listed."""
    return KeyRead.model_validate(service.revoke_key(session=session, key_id=key_id))
