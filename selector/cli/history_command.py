"""``railwright history``: the audit trail of parts and approved-list entries."""

from __future__ import annotations

import click

from selector.catalog.approved_lists import check_history_subject
from selector.catalog.audit import HISTORY_COLUMNS, history, parse_since
from selector.catalog.saved_designs import ACTION_DESIGN_SAVED
from selector.files.csv_writer import write_rows

#: Longest old or new value shown on the terminal; ``--csv`` keeps every character.
SHOWN_VALUE_LIMIT = 100


def _shortened(text: str) -> str:
    if not text:
        return "(none)"
    return text if len(text) <= SHOWN_VALUE_LIMIT else text[: SHOWN_VALUE_LIMIT - 1] + "…"


def _event_line(row: dict) -> str:
    if row["action"] == ACTION_DESIGN_SAVED:
        on = f" (list '{row['list']}')" if row["list"] else ""
        return f"{row['when_utc']}  {row['who']}  {row['action']}{on}: {_shortened(row['new'])}; why: {row['why']}"
    if row["part"]:
        subject = row["part"] + (f" on '{row['list']}'" if row["list"] else "")
    else:
        subject = f"list '{row['list']}'"
    change = f"{_shortened(row['old'])} \u2192 {_shortened(row['new'])}"
    return f"{row['when_utc']}  {row['who']}  {row['action']}  {subject}: {change}; why: {row['why']}"


@click.command(
    "history",
    epilog="\b\nExamples:\n"
    "  railwright history Z5V1-A\n"
    "  railwright history --list line-a --since 2026-11-01\n"
    "  railwright history --since 2026-12-01T08:00 --csv changes.csv",
)
@click.argument("part", required=False)
@click.option("--list", "list_name", metavar="LIST", default=None, help="Only events of this approved-parts list.")
@click.option("--since", metavar="DATE", default=None,
              help="Only events at or after DATE (ISO, UTC unless an offset is given), e.g. 2026-12-01.")
@click.option("--csv", "csv_path", metavar="FILE", default=None, help="Also write the events as CSV ('-': stdout only).")
@click.pass_obj
def history_command(state, part: str | None, list_name: str | None, since: str | None, csv_path: str | None) -> None:
    """Show who changed what, when (UTC), old → new, and why: imports, edits, status
    changes and removals of parts and list entries, and saves of designs, oldest first.

    The trail is append-only: the library refuses to change or delete an event.
    """
    part = part.strip() if part else None
    list_name = list_name.strip() if list_name else None
    rows = history(state.library(), part=part, list_name=list_name,
                   since=parse_since(since) if since is not None else None)  # fmt: skip
    if not rows:
        check_history_subject(state.library(), part, list_name)
    if csv_path == "-":
        write_rows("-", HISTORY_COLUMNS, rows)
        return
    if rows:
        for row in rows:
            click.echo(_event_line(row))
    else:
        click.echo("no events")
    if csv_path is not None:
        count = write_rows(csv_path, HISTORY_COLUMNS, rows)
        click.echo(f"wrote {count} events to {csv_path}", err=True)


COMMANDS = [history_command]
