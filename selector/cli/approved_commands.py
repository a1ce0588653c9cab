"""``railwright approved …``: the shop's approved-parts lists and their statuses."""

from __future__ import annotations

import click

from selector.catalog import approved_lists, list_changes
from selector.catalog.approved_list_csv import import_list_file, load_list_csv, write_list_csv
from selector.spec.list_statuses import LIST_STATUSES, UNUSABLE_STATUSES
from selector.views.part_sheet import format_table

_BY_HELP = "Who makes the change (default: your login name)."
_REASON_HELP = "Why (required), e.g. 'qualified on line A, report 17'."
_STATUS_LIST = ", ".join(LIST_STATUSES)


@click.group("approved")
def approved_group() -> None:
    """The shop's approved-parts lists: which parts may be designed in, and why.

    Each list gives a part one status: approved, conditional (its condition is shown
    beside every result using it), evaluating (usable only when a search asks with
    --statuses), no-new-design or banned (never usable). A search or check respects a
    list given with --list or [search] list in the spec. Every change needs a reason,
    is signed (--by, default your login name) and is kept in 'railwright history'.

    \b
    Examples:
      railwright approved create line-a --description "12 V controller boards"
      railwright approved set line-a Z5V1-A approved --reason "qualified, report 17"
      railwright approved show line-a
    """


@approved_group.command("lists")
@click.pass_obj
def lists_command(state) -> None:
    """Show every list with its count of parts per status.

    \b
    Example:
      railwright approved lists
    """
    rows = approved_lists.lists_summary(state.library())
    if not rows:
        click.echo("no lists; create one with 'railwright approved create NAME'")
        return
    columns = ("list", *LIST_STATUSES, "description")
    click.echo(format_table([{column: str(row[column]) for column in columns} for row in rows], columns))


@approved_group.command("create")
@click.argument("list_name", metavar="LIST")
@click.option("--description", default="", help="What the list is for, e.g. 'battery chargers'.")
@click.option("--by", default=None, help=_BY_HELP)
@click.pass_obj
def create_command(state, list_name: str, description: str, by: str | None) -> None:
    """Create an empty approved-parts list named LIST.

    \b
    Example:
      railwright approved create line-a --description "12 V controller boards"
    """
    list_changes.create_list(state.library(), list_name, description=description, by=by)
    click.echo(f"created the list '{list_name.strip()}'")


@approved_group.command("rename")
@click.argument("old", metavar="LIST")
@click.argument("new", metavar="NEW")
@click.option("--reason", default=None, help=_REASON_HELP)
@click.option("--by", default=None, help=_BY_HELP)
@click.pass_obj
def rename_command(state, old: str, new: str, reason: str | None, by: str | None) -> None:
    """Rename LIST to NEW; its entries stay, and the history keeps the old name.

    \b
    Example:
      railwright approved rename line-a chargers --reason "product line renamed"
    """
    list_changes.rename_list(state.library(), old, new, reason=reason, by=by)
    click.echo(f"renamed the list '{old}' to '{new.strip()}'")


@approved_group.command("set")
@click.argument("list_name", metavar="LIST")
@click.argument("part")
@click.argument("status", metavar="STATUS")
@click.option("--reason", default=None, help=_REASON_HELP)
@click.option("--by", default=None, help=_BY_HELP)
@click.option("--condition", default=None, help="Condition of use of a conditional part, e.g. 'only below 40 °C ambient'.")
@click.pass_obj
def set_command(state, list_name, part, status, reason, by, condition) -> None:
    """Give PART the STATUS on LIST (approved, conditional, evaluating, no-new-design, banned).

    \b
    Examples:
      railwright approved set line-a Z5V1-A approved --reason "qualified, report 17"
      railwright approved set line-a D-SCH1 conditional --reason "leaky when hot" \\
          --condition "only below 40 °C ambient"
      railwright approved set line-a D-REC1 banned --reason "supplier discontinued" --by "J. Roe"
    """
    library = state.library()
    plan = list_changes.set_status(library, list_name, part, status, reason=reason, by=by, condition=condition)
    for line in plan.lines():
        click.echo(f"{list_name}: {line}")
    if not plan.unchanged:
        _echo_designs_affected(library, list_name.strip(), part.strip(), status.strip().lower())


def _echo_designs_affected(library, list_name: str, part: str, status: str) -> None:
    """Name the saved designs on this list whose latest revision uses the part."""
    from selector.catalog.saved_designs import used_by_text, where_used

    users = where_used(library, part, list_name)
    if not users:
        return
    names = " ".join(f"'{name}'" if " " in name else name for name, _ in users)
    if status in UNUSABLE_STATUSES:
        click.echo(f"{list_name}: {part} is now {status} in the saved design(s) {used_by_text(users)}; "
                   f"'railwright designs verify {names}' fails them until they are saved without it")
    else:
        click.echo(f"{list_name}: {part} is used by the saved design(s) {used_by_text(users)}; "
                   f"check them again with 'railwright designs verify {names}'")


@approved_group.command("drop")
@click.argument("list_name", metavar="LIST")
@click.argument("part")
@click.option("--reason", default=None, help=_REASON_HELP)
@click.option("--by", default=None, help=_BY_HELP)
@click.pass_obj
def drop_command(state, list_name, part, reason, by) -> None:
    """Take PART off LIST (it is then not usable from that list).

    \b
    Example:
      railwright approved drop line-a D-OLD1 --reason "entered by mistake"
    """
    list_changes.drop_entry(state.library(), list_name, part.strip(), reason=reason, by=by)
    click.echo(f"{list_name}: dropped {part.strip()}")


@approved_group.command("show")
@click.argument("list_name", metavar="LIST")
@click.option("--status", default=None, metavar="STATUS", help=f"Only parts of this status ({_STATUS_LIST}).")
@click.option("--csv", "csv_path", metavar="FILE", help="Also write the entries as a list CSV ('-': stdout only).")
@click.pass_obj
def show_command(state, list_name: str, status: str | None, csv_path: str | None) -> None:
    """Show the parts on LIST with their status, reason, condition, date and signer.

    \b
    Examples:
      railwright approved show line-a
      railwright approved show line-a --status conditional --csv conditional.csv
    """
    rows = approved_lists.list_entries(state.library(), list_name, status and status.strip().lower())
    if csv_path == "-":
        write_list_csv("-", rows)
        return
    if rows:
        columns = ("part", "status", "since", "by", "reason", "condition")
        shown = [{column: str(row[column]) for column in columns} for row in rows]
        for row in shown:
            row["since"] = row["since"][:10]
        click.echo(format_table(shown, columns))
    else:
        click.echo(f"no parts on the list '{list_name}'" + (f" with status {status}" if status else ""))
    if csv_path is not None:
        count = write_list_csv(csv_path, rows)
        click.echo(f"wrote {count} entries to {csv_path}", err=True)


@approved_group.command("import")
@click.argument("list_name", metavar="LIST")
@click.argument("csv_file", metavar="FILE.csv", type=click.Path(dir_okay=False))
@click.option("--dry-run", is_flag=True, help="Show what would be added and changed; write nothing.")
@click.option("--by", default=None, help=_BY_HELP)
@click.pass_obj
def import_command(state, list_name: str, csv_file: str, dry_run: bool, by: str | None) -> None:
    """Set statuses on LIST from a CSV with columns part, status, reason, condition.

    Every row is checked first (status known, reason given, condition with and only
    with a conditional status, part in the library); any problem is reported as
    FILE:LINE: column: message and nothing is written. Parts on the list but not in
    the file are left as they are. An exported list imports back unchanged.

    \b
    Examples:
      railwright approved import line-a line-a.csv --dry-run
      railwright approved import line-a line-a.csv --by "J. Roe"
    """
    list_file = load_list_csv(csv_file)
    for line in list_file.warnings:
        click.echo(f"Warning: {line}", err=True)
    plan = import_list_file(state.library(), list_name, list_file, by=by, dry_run=dry_run)
    if dry_run:
        for line in plan.lines():
            click.echo(line)
        click.echo(f"dry run, nothing written: {csv_file} into '{list_name}': {plan.summary()}")
    else:
        click.echo(f"imported {csv_file} into '{list_name}': {plan.summary()}")


@approved_group.command("export")
@click.argument("list_name", metavar="LIST")
@click.argument("csv_file", metavar="FILE.csv")
@click.pass_obj
def export_command(state, list_name: str, csv_file: str) -> None:
    """Write LIST as CSV: part, status, reason, condition, since, by and key parameters.

    \b
    Example:
      railwright approved export line-a line-a.csv
    """
    count = write_list_csv(csv_file, approved_lists.list_entries(state.library(), list_name), "FILE.csv")
    if csv_file != "-":
        click.echo(f"wrote {count} entries of '{list_name}' to {csv_file}")


@approved_group.command("compare")
@click.argument("first", metavar="LIST")
@click.argument("second", metavar="OTHER")
@click.pass_obj
def compare_command(state, first: str, second: str) -> None:
    """Show the parts whose status or condition differs between LIST and OTHER.

    \b
    Example:
      railwright approved compare line-a line-b
    """
    rows = approved_lists.compare_lists(state.library(), first, second)
    if not rows:
        click.echo(f"the lists '{first}' and '{second}' give every part the same status")
        return
    columns = ("part", first, second)
    click.echo(format_table([{column: row[column] or "(not on it)" for column in columns} for row in rows], columns))


COMMANDS = [approved_group]
