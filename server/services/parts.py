"""The parts library: list, create, update (optimistic version), archive, delete, CSV import/export."""

from __future__ import annotations

import csv
import io
import json
import math
import operator
from collections import Counter
from collections.abc import Iterable, Mapping, Sequence
from datetime import datetime
from typing import Any, Literal, overload

from pydantic import BaseModel, ValidationError
from sqlalchemy import Column, func, literal, or_, select, union_all
from sqlalchemy.orm import Session

from server.csv_cells import csv_writer, unescape_cell
from server.errors import Conflict, FieldError, InvalidInput, NotFound, check_version
from server.models import PART_MODELS, Battery, Esc, Motor, PartColumns, Propeller
from server.schemas.parts import CREATE_SCHEMAS, KIND_WORDS, READ_SCHEMAS
from server.services._sorting import naturally
from server.services._validation import field_errors, parse_json, validate

MAX_PAGE_SIZE = 500
MAX_IMPORT_ROWS = 5000
MAX_IMPORT_BYTES = 2 * 1024 * 1024
MAX_REPORTED_ERRORS = 200
JSON_COLUMNS = ("static_table", "forward_table")
WHERE_OPERATORS = (">=", "<=", "!=", "=", ">", "<")
COMPARE = {">=": operator.ge, "<=": operator.le, "!=": operator.ne, "=": operator.eq, ">": operator.gt,
           "<": operator.lt}
NATURAL_SORT = ("name", "part_number", "maker")


def model_for(kind: str) -> type[PartColumns]:
    try:
        return PART_MODELS[kind]
    except KeyError:
        raise NotFound(f"Unknown part kind {kind!r}; use one of {', '.join(PART_MODELS)}") from None


def singular(kind: str) -> str:
    """The kind's name inside a sentence ("ESC", "battery pack")."""
    return KIND_WORDS[kind][0]


def to_read(kind: str, part: PartColumns) -> dict[str, Any]:
    """The JSON form of a stored part."""
    data: dict[str, Any] = READ_SCHEMAS[kind].model_validate(part).model_dump(mode="json")
    data["kind"] = kind
    return data


def _column(model: type[PartColumns], name: str, field: str) -> Column[Any]:
    table = model.__table__  # type: ignore[attr-defined]
    if name not in table.c or name in JSON_COLUMNS or name == "team_id":
        raise InvalidInput("Unknown column", [FieldError(field, f"{name!r} is not a column of this part kind")])
    column: Column[Any] = table.c[name]
    return column


def _filter_value(column: Column[Any], raw: str) -> Any:
    """The text of a ``where=`` clause as a value of the column's type (422 when it is not one)."""
    raw = raw.strip()
    kind = column.type.python_type
    if kind is bool:
        if raw.lower() in ("true", "1", "yes"):
            return True
        if raw.lower() in ("false", "0", "no"):
            return False
        raise InvalidInput("Bad filter", [FieldError("where", f"{raw[:40]!r} is not true or false")])
    if kind in (int, float):
        try:
            value = float(raw)
        except ValueError:
            value = math.nan
        if not math.isfinite(value):
            raise InvalidInput("Bad filter", [FieldError("where", f"{raw[:40]!r} is not a finite number")])
        return value
    if kind is datetime:
        try:
            return datetime.fromisoformat(raw)
        except ValueError:
            raise InvalidInput("Bad filter", [FieldError("where", f"{raw[:40]!r} is not an ISO date-time")]) from None
    return raw


def _where(model: type[PartColumns], clause: str) -> Any:
    for op in WHERE_OPERATORS:
        name, sep, raw = clause.partition(op)
        if sep:
            column = _column(model, name.strip(), "where")
            value = _filter_value(column, raw)
            if isinstance(value, bool) and op not in ("=", "!="):
                raise InvalidInput("Bad filter", [FieldError("where", f"{name.strip()} takes = or != only")])
            return COMPARE[op](column, value)
    raise InvalidInput(
        "Bad filter", [FieldError("where", f"{clause!r}: use field>=value, field<=value or field=value")]
    )


def list_parts(
    session: Session,
    *,
    team_id: int,
    kind: str,
    q: str | None = None,
    archived: str = "false",
    where: Sequence[str] = (),
    sort: str = "name",
    page: int = 1,
    page_size: int = 50,
) -> tuple[list[PartColumns], int]:
    """One page of the team's parts of ``kind`` and the total count after filtering."""
    model = model_for(kind)
    stmt = select(model).where(model.team_id == team_id)
    if archived == "false":
        stmt = stmt.where(model.archived.is_(False))
    elif archived == "true":
        stmt = stmt.where(model.archived.is_(True))
    if q:
        like = f"%{q.strip()}%"
        stmt = stmt.where(or_(model.name.ilike(like), model.maker.ilike(like), model.part_number.ilike(like)))
    for clause in where:
        stmt = stmt.where(_where(model, clause))
    descending = sort.startswith("-")
    column = _column(model, sort.lstrip("-"), "sort")
    page_size = max(1, min(page_size, MAX_PAGE_SIZE))
    offset = (max(page, 1) - 1) * page_size
    if sort.lstrip("-") in NATURAL_SORT:  # names and part numbers in natural order ("5x2.5" before "30x10")
        everything = naturally(session.scalars(stmt.order_by(model.id)), lambda p: getattr(p, sort.lstrip("-")),
                               reverse=descending)
        return everything[offset: offset + page_size], len(everything)
    order = column.desc() if descending else column.asc()
    rows = list(session.scalars(stmt.order_by(order, model.id).offset(offset).limit(page_size)))
    if max(page, 1) == 1 and len(rows) < page_size:  # the whole result fits on the first page: no count query
        return rows, len(rows)
    total = session.scalar(select(func.count()).select_from(stmt.subquery())) or 0
    return rows, int(total)


def choices(session: Session, *, team_id: int, kinds: Sequence[str],
            limit: int = MAX_PAGE_SIZE) -> dict[str, list[Any]]:
    """The team's parts of each of ``kinds`` a form offers (not archived; the first ``limit`` in natural name order, as
    :func:`list_parts` orders them), in one query: rows of ``id``, ``name`` and ``part_number`` only, no ORM objects."""
    picks = [select(literal(kind).label("kind"), model.id, model.name, model.part_number)
             .where(model.team_id == team_id, model.archived.is_(False))
             for kind, model in ((kind, model_for(kind)) for kind in kinds)]
    by_kind: dict[str, list[Any]] = {kind: [] for kind in kinds}
    for row in session.execute(union_all(*picks).order_by("kind", "id")):
        by_kind[row.kind].append(row)
    return {kind: naturally(rows, lambda p: p.name)[:limit] for kind, rows in by_kind.items()}


def by_ids(session: Session, *, team_id: int, ids: Mapping[str, Iterable[int]]) -> dict[str, dict[int, PartColumns]]:
    """The team's parts of each kind with the given ids (archived ones too), by id; unknown ids are left out."""
    out: dict[str, dict[int, PartColumns]] = {}
    for kind, wanted in ids.items():
        model = model_for(kind)
        id_list = sorted({int(i) for i in wanted})
        rows = session.scalars(select(model).where(model.team_id == team_id, model.id.in_(id_list))) if id_list else ()
        out[kind] = {p.id: p for p in rows}
    return out


@overload
def get_part(session: Session, *, team_id: int, kind: Literal["batteries"], part_id: int) -> Battery: ...
@overload
def get_part(session: Session, *, team_id: int, kind: Literal["escs"], part_id: int) -> Esc: ...
@overload
def get_part(session: Session, *, team_id: int, kind: Literal["motors"], part_id: int) -> Motor: ...
@overload
def get_part(session: Session, *, team_id: int, kind: Literal["propellers"], part_id: int) -> Propeller: ...
@overload
def get_part(session: Session, *, team_id: int, kind: str, part_id: int) -> PartColumns: ...
def get_part(session: Session, *, team_id: int, kind: str, part_id: int) -> PartColumns:
    """A part of the team, or NotFound (another team's part is indistinguishable from a missing one)."""
    model = model_for(kind)
    part = session.scalar(select(model).where(model.id == part_id, model.team_id == team_id))
    if part is None:
        raise NotFound(f"No {singular(kind)} with id {part_id}")
    return part


def _stored_fields(kind: str, part: PartColumns) -> dict[str, Any]:
    schema = CREATE_SCHEMAS[kind]
    return {name: getattr(part, name) for name in schema.model_fields}


def _apply(part: PartColumns, data: BaseModel) -> None:
    for name, value in data.model_dump(mode="json").items():
        setattr(part, name, value)


def create_part(session: Session, *, team_id: int, user_id: int | None, kind: str, data: BaseModel) -> PartColumns:
    model = model_for(kind)
    # The same assignments SQLAlchemy's keyword constructor makes (``PartColumns`` is the unmapped mixin, so its
    # type has no keyword constructor).
    part = model()
    part.team_id, part.created_by_id, part.updated_by_id = team_id, user_id, user_id
    _apply(part, data)
    session.add(part)
    session.flush()
    return part


def update_part(
    session: Session,
    *,
    team_id: int,
    user_id: int | None,
    kind: str,
    part_id: int,
    changes: dict[str, Any],
    expected_version: int | None,
) -> PartColumns:
    """Apply ``changes`` (fields to set) if ``expected_version`` is still the stored version."""
    part = get_part(session, team_id=team_id, kind=kind, part_id=part_id)
    check_version(part.version, expected_version, singular(kind))
    merged = {**_stored_fields(kind, part), **changes}
    data = validate(CREATE_SCHEMAS[kind], merged, what=singular(kind))
    _apply(part, data)
    part.updated_by_id = user_id  # the version counter advances in the (conditional) UPDATE itself
    session.flush()
    return part


def set_archived(
    session: Session, *, team_id: int, user_id: int | None, kind: str, part_id: int, archived: bool
) -> PartColumns:
    part = get_part(session, team_id=team_id, kind=kind, part_id=part_id)
    if part.archived != archived:
        part.archived = archived
        part.updated_by_id = user_id
    session.flush()
    return part


def references(session: Session, part: PartColumns) -> int:
    """How many stored rows (bench runs, results, shortlist entries...) point at this part."""
    table = type(part).__table__  # type: ignore[attr-defined]
    count = 0
    for other in table.metadata.sorted_tables:
        for fk in other.foreign_keys:
            if fk.column.table is table:
                count += session.scalar(select(func.count()).select_from(other).where(fk.parent == part.id)) or 0
    return count


def delete_part(session: Session, *, team_id: int, kind: str, part_id: int) -> None:
    """Delete an unused part; a part used by saved data can only be archived."""
    part = get_part(session, team_id=team_id, kind=kind, part_id=part_id)
    used = references(session, part)
    if used:
        raise Conflict(f"This {singular(kind)} is used by {used} saved record(s); archive it instead of deleting it")
    session.delete(part)
    session.flush()


# --- CSV --------------------------------------------------------------------------------------------


def csv_columns(kind: str) -> list[str]:
    return list(CREATE_SCHEMAS[kind].model_fields)


def export_csv(session: Session, *, team_id: int, kind: str, include_archived: bool = False) -> str:
    """All the team's parts of ``kind`` as CSV (tables as JSON text), readable by :func:`import_csv`."""
    model = model_for(kind)
    stmt = select(model).where(model.team_id == team_id).order_by(model.id)
    if not include_archived:
        stmt = stmt.where(model.archived.is_(False))
    columns = csv_columns(kind)
    out = io.StringIO()
    writer = csv_writer(out)
    writer.writerow(columns)
    for part in session.scalars(stmt):
        row = []
        for name in columns:
            value = getattr(part, name)
            if name in JSON_COLUMNS:
                row.append("" if value is None else json.dumps(value, separators=(",", ":")))
            else:
                row.append("" if value is None else value)
        writer.writerow(row)
    return out.getvalue()


def parse_csv(kind: str, raw: bytes) -> list[BaseModel]:
    """Validate a CSV of parts; raises InvalidInput listing every bad row and column (nothing is saved)."""
    if len(raw) > MAX_IMPORT_BYTES:
        raise InvalidInput("File too large", [FieldError("file", f"must be at most {MAX_IMPORT_BYTES} bytes")])
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise InvalidInput("Not a text file", [FieldError("file", "must be UTF-8 text")]) from None
    reader = csv.reader(io.StringIO(text))
    try:
        header = next(reader, None)
    except csv.Error as exc:
        raise InvalidInput("Unreadable CSV", [FieldError("file", f"line 1: {exc}")]) from None
    if not header or not any(h.strip() for h in header):
        raise InvalidInput("Empty file", [FieldError("file", "needs a header row and at least one data row")])
    header = [h.strip() for h in header]
    schema = CREATE_SCHEMAS[kind]
    errors: list[FieldError] = []
    dupes = sorted(h for h, n in Counter(header).items() if n > 1)  # linear: a header may have 30 000 columns
    present = set(header)
    unknown = [h for h in dict.fromkeys(header) if h not in schema.model_fields]
    missing = [n for n, f in schema.model_fields.items() if f.is_required() and n not in present]
    errors += [FieldError(h, "column appears more than once", 1) for h in dupes]
    errors += [FieldError(h, "unknown column", 1) for h in unknown]
    errors += [FieldError(h, "required column is missing", 1) for h in missing]
    if errors:
        raise InvalidInput(f"Bad header in {kind} CSV", errors[:MAX_REPORTED_ERRORS])
    parsed: list[BaseModel] = []
    try:
        rows = list(reader)
    except csv.Error as exc:  # e.g. a field longer than the csv module allows, or a broken quote
        raise InvalidInput("Unreadable CSV", [FieldError("file", f"line {reader.line_num}: {exc}")]) from None
    for line, cells in enumerate(rows, start=2):
        if not any(c.strip() for c in cells):
            continue
        if len(cells) != len(header):
            errors.append(FieldError("row", f"has {len(cells)} cells, the header has {len(header)}", line))
            continue
        record: dict[str, Any] = {}
        for name, cell in zip(header, cells, strict=True):
            cell = cell.strip()
            if cell == "":
                continue
            if name in JSON_COLUMNS:
                try:
                    record[name] = parse_json(cell, field=name, row=line)
                except InvalidInput:
                    errors.append(FieldError(name, "must be a JSON list of rows", line))
                    continue
            else:
                record[name] = unescape_cell(cell)
        try:
            parsed.append(schema.model_validate(record))
        except ValidationError as exc:
            errors += field_errors(exc, row=line)
        if line - 1 > MAX_IMPORT_ROWS:
            raise InvalidInput("Too many rows", [FieldError("file", f"at most {MAX_IMPORT_ROWS} rows")])
    if errors:
        raise InvalidInput(f"{len(errors)} problem(s) in the {kind} CSV; nothing was imported",
                           errors[:MAX_REPORTED_ERRORS])
    if not parsed:
        raise InvalidInput("No data rows", [FieldError("file", "needs at least one data row")])
    return parsed


def import_csv(session: Session, *, team_id: int, user_id: int | None, kind: str, raw: bytes) -> list[PartColumns]:
    """Create every part in the CSV, or none of them."""
    rows = parse_csv(kind, raw)
    return [create_part(session, team_id=team_id, user_id=user_id, kind=kind, data=row) for row in rows]
