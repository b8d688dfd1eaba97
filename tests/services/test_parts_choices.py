"""The parts a form offers (parts.choices): the light rows the compare page's "add a candidate" selects list."""

from __future__ import annotations

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient
from sqlalchemy import select

from server.db import transaction
from server.models import PART_MODELS, Team
from server.services import parts as parts_service

pytestmark = pytest.mark.demo_data


def test_choices_are_the_first_page_of_the_parts_list_by_name(app: FastAPI, client: TestClient) -> None:
    """Same parts, same (natural name) order as list_parts' first page of 500 for every kind at once, archived parts
    left out, ``limit`` per kind."""
    with transaction(app.state.sessionmaker) as session:
        team_id = session.scalars(select(Team.id)).first()
        assert team_id is not None
        motor = session.scalars(select(PART_MODELS["motors"]).where(PART_MODELS["motors"].team_id == team_id)
                                .order_by(PART_MODELS["motors"].id)).first()
        assert motor is not None
        motor.archived = True
    with app.state.sessionmaker() as session:
        offered = parts_service.choices(session, team_id=team_id, kinds=list(PART_MODELS))
        first_two = parts_service.choices(session, team_id=team_id, kinds=["motors", "escs"], limit=2)
        assert list(first_two) == ["motors", "escs"]
        for kind in PART_MODELS:
            listed, _ = parts_service.list_parts(session, team_id=team_id, kind=kind, page_size=500)
            assert len(listed) > 3
            assert [(p.id, p.name, p.part_number) for p in offered[kind]] == \
                [(p.id, p.name, p.part_number) for p in listed]
            assert all(p.kind == kind for p in offered[kind])
            if kind in first_two:
                assert [p.id for p in first_two[kind]] == [p.id for p in listed[:2]]
        assert motor.id not in [p.id for p in offered["motors"]]
