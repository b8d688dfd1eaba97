"""JSON routes for the parts library: /api/v1/parts/{batteries|escs|motors|propellers}."""

# No "from __future__ import annotations" here: the per-kind routes are built in a closure, and FastAPI
# must see the real schema classes (not strings) in their signatures.

from typing import Annotated, Any, cast

from fastapi import APIRouter, Body, File, Header, Query, Request, Response, UploadFile
from pydantic import BaseModel

from server.api._http import parse_if_match, set_etag
from server.deps import CallerDep, IdPath, SessionDep, WriterDep
from server.limits import UPLOAD_BODY_BYTES
from server.schemas.parts import CREATE_SCHEMAS, KIND_LABELS, READ_SCHEMAS, UPDATE_SCHEMAS, PartsImported
from server.services import page_cache
from server.services import parts as parts_service
from server.uploads import read_upload

router = APIRouter(prefix="/parts", tags=["parts"])

ArchivedFilter = Annotated[str, Query(pattern="^(false|true|all)$", description="false, true or all")]


def _add_kind_routes(kind: str) -> None:
    create_schema = CREATE_SCHEMAS[kind]
    update_schema = UPDATE_SCHEMAS[kind]
    read_schema = READ_SCHEMAS[kind]
    one, many = KIND_LABELS[kind]

    class Page(BaseModel):
        items: list[read_schema]  # type: ignore[valid-type]
        total: int
        page: int
        page_size: int

    Page.__name__ = Page.__qualname__ = f"{read_schema.__name__.removesuffix('Read')}Page"

    @router.get(f"/{kind}", response_model=Page, summary=f"List {many.lower()}")
    def list_kind(
        request: Request,
        caller: CallerDep,
        q: Annotated[str | None, Query(max_length=120, description="Text in name, maker or part number")] = None,
        archived: ArchivedFilter = "false",
        where: Annotated[list[str], Query(description="Filters like kv_rpm_per_v>=700")] = [],  # noqa: B006
        sort: Annotated[str, Query(max_length=64, description="Column, '-' prefix for descending")] = "name",
        page: Annotated[int, Query(ge=1, le=1_000_000)] = 1,
        page_size: Annotated[int, Query(ge=1, le=parts_service.MAX_PAGE_SIZE)] = 50,
    ) -> Response:
        def build() -> bytes:
            with request.app.state.sessionmaker() as session:
                items, total = parts_service.list_parts(
                    session,
                    team_id=caller.team_id,
                    kind=kind,
                    q=q,
                    archived=archived,
                    where=where,
                    sort=sort,
                    page=page,
                    page_size=page_size,
                )
            # Stored rows were validated when written, so they are not validated again; the page is serialised
            # once, in pydantic's core (the schema still documents it).
            fields = [f for f in read_schema.model_fields if f != "kind"]
            rows = [read_schema.model_construct(kind=kind, **{f: getattr(p, f) for f in fields}) for p in items]
            body = Page.model_construct(items=rows, total=total, page=page, page_size=page_size)
            return body.model_dump_json(warnings=False).encode()  # tables stay dicts

        # The hottest read of the API: the same query on unchanged rows gives the same bytes (page_cache). A hit
        # costs one primary-key lookup on a pooled connection, no ORM session.
        engine = request.app.state.engine
        key = (caller.team_id, kind, q, archived, tuple(where), sort, page, page_size)
        body = request.app.state.parts_pages.get_or_build(
            key, page_cache.stamp(engine, kind, caller.team_id), build,
            after=lambda: page_cache.stamp(engine, kind, caller.team_id))
        return Response(body, media_type="application/json")

    @router.post(f"/{kind}", status_code=201, response_model=read_schema, summary=f"Create a {one.lower()}")
    def create_kind(
        caller: WriterDep,
        session: SessionDep,
        response: Response,
        data: Annotated[create_schema, Body()],  # type: ignore[valid-type]
    ) -> dict[str, Any]:
        part = parts_service.create_part(session, team_id=caller.team_id, user_id=caller.user_id, kind=kind, data=data)
        session.commit()
        set_etag(response, part.version)
        response.headers["Location"] = f"/api/v1/parts/{kind}/{part.id}"
        return parts_service.to_read(kind, part)

    @router.get(
        f"/{kind}/export.csv",
        summary=f"Export {many.lower()} as CSV",
        response_class=Response,
        responses={200: {"content": {"text/csv": {}}}},
    )
    def export_kind(caller: CallerDep, session: SessionDep, archived: ArchivedFilter = "false") -> Response:
        text = parts_service.export_csv(
            session, team_id=caller.team_id, kind=kind, include_archived=archived != "false"
        )
        return Response(
            text,
            media_type="text/csv; charset=utf-8",
            headers={"Content-Disposition": f'attachment; filename="{kind}.csv"'},
        )

    @router.post(f"/{kind}/import", status_code=201, response_model=PartsImported,
                 summary=f"Import {many.lower()} from CSV (all rows or none)", max_body_size=UPLOAD_BODY_BYTES)
    def import_kind(
        caller: WriterDep, session: SessionDep, file: Annotated[UploadFile, File(description="CSV file")]
    ) -> dict[str, Any]:
        raw = read_upload(file, parts_service.MAX_IMPORT_BYTES)
        created = parts_service.import_csv(session, team_id=caller.team_id, user_id=caller.user_id, kind=kind, raw=raw)
        session.commit()
        return {"created": len(created), "ids": [p.id for p in created]}

    @router.get(f"/{kind}/{{part_id}}", response_model=read_schema, summary=f"Read a {one.lower()}")
    def read_kind(caller: CallerDep, session: SessionDep, part_id: IdPath, response: Response) -> dict[str, Any]:
        part = parts_service.get_part(session, team_id=caller.team_id, kind=kind, part_id=part_id)
        set_etag(response, part.version)
        return parts_service.to_read(kind, part)

    @router.patch(
        f"/{kind}/{{part_id}}", response_model=read_schema, summary=f"Update a {one.lower()} (If-Match: its version)"
    )
    def update_kind(
        caller: WriterDep,
        session: SessionDep,
        part_id: IdPath,
        response: Response,
        changes: Annotated[update_schema, Body()],  # type: ignore[valid-type]
        if_match: Annotated[str | None, Header(max_length=40)] = None,
        version: Annotated[int | None, Query(ge=1, le=2**31, description="Alternative to If-Match")] = None,
    ) -> dict[str, Any]:
        part = parts_service.update_part(
            session,
            team_id=caller.team_id,
            user_id=caller.user_id,
            kind=kind,
            part_id=part_id,
            # ``update_schema`` is only known at run time (a model per kind), so mypy cannot type ``changes``.
            changes=cast(BaseModel, changes).model_dump(exclude_unset=True, mode="json"),
            expected_version=parse_if_match(if_match, version),
        )
        session.commit()
        set_etag(response, part.version)
        return parts_service.to_read(kind, part)

    @router.post(f"/{kind}/{{part_id}}/archive", response_model=read_schema, summary=f"Archive a {one.lower()}")
    def archive_kind(caller: WriterDep, session: SessionDep, part_id: IdPath) -> dict[str, Any]:
        part = parts_service.set_archived(
            session, team_id=caller.team_id, user_id=caller.user_id, kind=kind, part_id=part_id, archived=True
        )
        session.commit()
        return parts_service.to_read(kind, part)

    @router.post(
        f"/{kind}/{{part_id}}/unarchive", response_model=read_schema, summary=f"Bring an archived {one.lower()} back"
    )
    def unarchive_kind(caller: WriterDep, session: SessionDep, part_id: IdPath) -> dict[str, Any]:
        part = parts_service.set_archived(
            session, team_id=caller.team_id, user_id=caller.user_id, kind=kind, part_id=part_id, archived=False
        )
        session.commit()
        return parts_service.to_read(kind, part)

    @router.delete(f"/{kind}/{{part_id}}", status_code=204, summary=f"Delete an unused {one.lower()}")
    def delete_kind(caller: WriterDep, session: SessionDep, part_id: IdPath) -> Response:
        parts_service.delete_part(session, team_id=caller.team_id, kind=kind, part_id=part_id)
        session.commit()
        return Response(status_code=204)


for _kind in CREATE_SCHEMAS:
    _add_kind_routes(_kind)
