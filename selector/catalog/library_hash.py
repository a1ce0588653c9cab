"""The library's content hash: SHA-256 of a canonical export of its parts and approved lists.

A report and a saved design cite this hash, so a reviewer can tell whether two results
rest on the same library content. It changes exactly when a part's data, a list or a
list entry changes, and on no other write (imports that change nothing, saved designs,
the audit trail, the import log); the same content gives the same hash on every
database backend.

Canonical form (version 1), UTF-8, every line ended by ``\\n``:

1. the line ``railwright library content 1``;
2. ``parts``, the JSON array of :data:`PART_FIELDS`, then one line per part, sorted by
   part id (Unicode code points);
3. ``lists``, the JSON array of :data:`LIST_FIELDS`, then one line per list, sorted by name;
4. ``entries``, the JSON array of :data:`ENTRY_FIELDS`, then one line per list entry,
   sorted by list name, then part id.

A row line is a JSON array (RFC 8259) of its cells in the header's order, separated by
``,`` without spaces: a missing value is ``null``; a number is written exactly as
:func:`selector.files.csv_cells.format_number` writes it (Python's shortest repr that
reads back to the same float, e.g. ``2.19e-09``); text is a JSON string with every
non-ASCII character as a ``\\uXXXX`` escape (Python's ``json.dumps``). Who made a list or
an entry, and when, are not content and are left out: a library rebuilt from the same
exports has the same hash.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Iterator, Sequence

from sqlalchemy import select
from sqlalchemy.orm import Session

from selector.catalog.models import RECORD_COLUMNS, ApprovedList, ListEntry, Part
from selector.files.csv_cells import format_number
from selector.spec.part_fields import NUMERIC_COLUMNS

#: First line of the canonical form; a new version changes it.
CANONICAL_HEADER = "railwright library content 1"
#: Part columns, in the order written.
PART_FIELDS: tuple[str, ...] = RECORD_COLUMNS
LIST_FIELDS: tuple[str, ...] = ("name", "description")
ENTRY_FIELDS: tuple[str, ...] = ("list", "part", "status", "reason", "condition")


def _cell(value: object, numeric: bool) -> str:
    if value is None:
        return "null"
    if numeric:
        return format_number(float(value))
    return json.dumps(str(value), ensure_ascii=True)


def _row(values: Sequence[object], numeric: Sequence[bool]) -> str:
    return "[" + ",".join(_cell(value, is_number) for value, is_number in zip(values, numeric, strict=True)) + "]"


def _header(name: str, fields: Sequence[str]) -> list[str]:
    return [name, json.dumps(list(fields), ensure_ascii=True, separators=(",", ":"))]


def canonical_lines(session: Session) -> Iterator[str]:
    """The canonical form of the library's parts and lists, line by line (no line ends)."""
    yield CANONICAL_HEADER
    yield from _header("parts", PART_FIELDS)
    numeric = [field in NUMERIC_COLUMNS for field in PART_FIELDS]
    records = sorted((part.record() for part in session.scalars(select(Part))), key=lambda record: record["part"])
    for record in records:
        yield _row([record[field] for field in PART_FIELDS], numeric)
    yield from _header("lists", LIST_FIELDS)
    lists = sorted(session.execute(select(ApprovedList.name, ApprovedList.description)).all())
    for row in lists:
        yield _row(list(row), [False] * len(LIST_FIELDS))
    yield from _header("entries", ENTRY_FIELDS)
    entries = sorted(
        session.execute(
            select(ApprovedList.name, Part.part, ListEntry.status, ListEntry.reason, ListEntry.condition)
            .join(ApprovedList, ApprovedList.id == ListEntry.list_id)
            .join(Part, Part.id == ListEntry.part_id)
        ).all()
    )
    for row in entries:
        yield _row(list(row), [False] * len(ENTRY_FIELDS))


def content_hash(session: Session) -> str:
    """SHA-256 (hexadecimal) of :func:`canonical_lines`, each ended by ``\\n``, as UTF-8."""
    digest = hashlib.sha256()
    for line in canonical_lines(session):
        digest.update(line.encode("utf-8") + b"\n")
    return digest.hexdigest()


def library_content_hash(library) -> str:
    """The content hash of an open library (one reading transaction)."""
    with library.session() as session:
        return content_hash(session)
