"""What an import would change: each incoming record against the library's, part by part
(added, changed column by column, unchanged)."""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field

from selector.catalog.models import RECORD_COLUMNS
from selector.files.csv_cells import format_number


@dataclass(frozen=True)
class FieldChange:
    """One column of a part that an import changes."""

    column: str
    old: object
    new: object

    def describe(self) -> str:
        """``column: old → new`` with exact numbers, ``(empty)`` for not given."""
        clears = " (clears)" if self.new in (None, "") and self.old not in (None, "") else ""
        return f"{self.column}: {_plain(self.old)} \u2192 {_plain(self.new)}{clears}"


def _plain(value: object) -> str:
    if value is None or value == "":
        return "(empty)"
    if isinstance(value, float):
        return format_number(value)
    return repr(value) if isinstance(value, str) and value.strip() != value else str(value)


@dataclass
class ImportPlan:
    """What an import does: parts added, parts changed (with their changes), unchanged."""

    added: list[dict[str, object]] = field(default_factory=list)
    changed: list[tuple[dict[str, object], list[FieldChange]]] = field(default_factory=list)
    unchanged: list[str] = field(default_factory=list)

    def summary(self) -> str:
        """One line: how many parts are added, changed and unchanged."""
        return f"{len(self.added)} added, {len(self.changed)} changed, {len(self.unchanged)} unchanged"

    def lines(self) -> list[str]:
        """Every part's fate, one line each; unchanged parts on one line."""
        out = [f"add {record['part']} ({record['family']})" for record in self.added]
        for record, changes in self.changed:
            out.append(f"change {record['part']}: " + "; ".join(change.describe() for change in changes))
        if self.unchanged:
            out.append("unchanged: " + ", ".join(self.unchanged))
        return out


def _same(old: object, new: object) -> bool:
    if old is None or new is None:
        return old is None and new is None
    if isinstance(old, float) or isinstance(new, float):
        return float(old) == float(new)
    return old == new


def plan_changes(
    existing: Mapping[str, Mapping[str, object]], incoming: Iterable[Mapping[str, object]]
) -> ImportPlan:
    """Compare incoming records with the library's, part by part.

    Parameters
    ----------
    existing : mapping of part id → record
        The library's current records.
    incoming : iterable of records
        Validated records (see :func:`selector.catalog.part_validation.validate_rows`).
    """
    plan = ImportPlan()
    for record in incoming:
        current = existing.get(record["part"])
        if current is None:
            plan.added.append(dict(record))
            continue
        changes = [
            FieldChange(column, current.get(column), record.get(column))
            for column in RECORD_COLUMNS
            if not _same(current.get(column), record.get(column))
        ]
        if changes:
            plan.changed.append((dict(record), changes))
        else:
            plan.unchanged.append(str(record["part"]))
    return plan
