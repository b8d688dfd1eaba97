"""JSON routes about the caller's own team: who am I, members, API keys."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter

from server.deps import CallerDep, IdPath, SessionDep, WriterDep
from server.models import ApiKey
from server.schemas.teams import ApiKeyCreate, ApiKeyCreated, ApiKeyRead, Me, MemberRead
from server.services import teams

router = APIRouter(tags=["team"])


@router.get("/me", response_model=Me)
def me(caller: CallerDep) -> dict[str, Any]:
    """Who the caller is and what they may do."""
    return {
        "team_id": caller.team_id,
        "team_name": caller.team_name,
        "role": caller.role,
        "via": caller.via,
        "can_write": caller.can_write,
    }


@router.get("/team/members", response_model=list[MemberRead])
def members(caller: CallerDep, session: SessionDep) -> list[dict[str, Any]]:
    """List the team's members and their roles."""
    return [
        {"user_id": m.user_id, "email": m.user.email, "display_name": m.user.display_name, "role": m.role}
        for m in teams.list_members(session, team_id=caller.team_id)
    ]


@router.get("/team/api-keys", response_model=list[ApiKeyRead])
def list_keys(caller: CallerDep, session: SessionDep) -> list[ApiKey]:
    """List the team's API keys (never the keys themselves)."""
    return teams.list_api_keys(session, team_id=caller.team_id)


@router.post("/team/api-keys", status_code=201, response_model=ApiKeyCreated)
def create_key(caller: WriterDep, session: SessionDep, data: ApiKeyCreate) -> dict[str, Any]:
    """Create an API key; the response is the only time the key is shown."""
    teams.check_may_create_key(role=caller.role, via=caller.via, scope=data.scope)
    row, key = teams.create_api_key(
        session, team_id=caller.team_id, scope=data.scope, name=data.name, created_by_id=caller.user_id
    )
    session.commit()
    return {**ApiKeyRead.model_validate(row).model_dump(), "key": key}


@router.post("/team/api-keys/{key_id}/revoke", response_model=ApiKeyRead)
def revoke_key(caller: WriterDep, session: SessionDep, key_id: IdPath) -> ApiKey:
    """Revoke an API key at once."""
    row = teams.revoke_api_key(session, team_id=caller.team_id, key_id=key_id, role=caller.role, via=caller.via,
                               user_id=caller.user_id, api_key_id=caller.api_key_id)
    session.commit()
    return row
