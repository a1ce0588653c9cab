"""``railwright designs …``: saved designs, their revisions, and re-verification."""

from __future__ import annotations

import click

from selector.cli.spec_options import SPEC_OPTIONS_EPILOG, spec_source_options
from selector.errors import NEGATIVE_VERDICT_EXIT

_BY_HELP = "Who saves it (default: your login name)."


@click.group("designs")
def designs_group() -> None:
    """Saved designs: a checked stack and resistor kept with its evidence, re-verified later.

    A save runs the check and keeps the spec (text and SHA-256), the stack, the
    resistor, the verdict and figures, a snapshot of every used part's data and list
    statuses, the library's content hash, who and when. Saving a name again adds a
    revision; old revisions are kept and cannot be changed. 'designs verify' checks
    the latest revisions against today's library and lists, and exits 3 when one no
    longer meets its spec or uses a part its list no longer allows.

    \b
    Examples:
      railwright designs save bias-5v --spec rail.toml --stack "Z5V1-B" --reason "first build"
      railwright designs list
      railwright designs verify
    """


@designs_group.command(
    "save",
    epilog="\b\nExamples:\n"
    '  railwright designs save bias-5v --spec rail.toml --stack "Z5V1-B" --reason "first build"\n'
    '  railwright designs save bias-5v --spec rail.toml --stack "D-SCH3 + Z4V7-A" --resistor 390 \\\n'
    '      --list line-a --reason "second source" --by "J. Roe"\n\n' + SPEC_OPTIONS_EPILOG,
)
@click.argument("name")
@click.option("--stack", "stack_text", required=True, metavar="TEXT",
              help="The stack, elements joined by '+', each [COUNT*]PART, e.g. '2*D-SIG1 + Z4V7-A'.")
@click.option("--reason", default=None, help="Why it is saved (required), e.g. 'released for build 12'.")
@click.option("--by", default=None, help=_BY_HELP)
@spec_source_options
@click.pass_obj
def save_command(state, name, stack_text, reason, by, spec_path, spec_overrides) -> None:
    """Check a design and save it as NAME (a new revision when NAME exists).

    The resistor is --resistor (or the spec's fixed one), else chosen from the series as
    'check' chooses it. A design that does not meet its spec, or uses a part its list does
    not allow, is saved with that verdict and a warning.
    """
    from selector.api import save_design
    from selector.catalog.saved_designs import check_design_name, check_reason
    from selector.spec.spec_source import read_spec_source

    check_design_name(name)
    check_reason(reason)
    _, source = read_spec_source(spec_path, spec_overrides)
    saved, result = save_design(source, state.library(), name, stack_text, reason=reason, by=by)
    for warning in result.list_warnings:
        click.echo(f"Warning: {warning}", err=True)
    content = saved.content
    click.echo(f"saved '{saved.name}' revision {saved.revision}: {content.summary()}; {content.verdict}")
    click.echo(f"library content sha256 {saved.library_sha256}")
    if not content.positive:
        click.echo(f"Warning: '{saved.name}' is saved with a negative verdict; 'designs verify' will fail it", err=True)


@designs_group.command("list")
@click.pass_obj
def list_command(state) -> None:
    """List the saved designs with their latest revision and its verdict at the save.

    \b
    Example:
      railwright designs list
    """
    from selector.catalog.saved_designs import latest_revisions
    from selector.views.design_lines import summary_rows
    from selector.views.part_sheet import format_table

    rows = summary_rows(latest_revisions(state.library()))
    if not rows:
        click.echo("no saved designs; save one with 'railwright designs save NAME --spec FILE --stack TEXT --reason TEXT'")
        return
    click.echo(format_table(rows, list(rows[0])))


@designs_group.command("show")
@click.argument("name")
@click.option("--revision", type=click.IntRange(1), default=None, metavar="N", help="This revision (default: the latest).")
@click.pass_obj
def show_command(state, name: str, revision: int | None) -> None:
    """Show a saved design as it was saved: spec, stack, verdict, figures, parts' snapshot.

    \b
    Examples:
      railwright designs show bias-5v
      railwright designs show bias-5v --revision 1
    """
    from selector.catalog.saved_designs import saved_revision
    from selector.views.design_lines import revision_lines

    lines = revision_lines(saved_revision(state.library(), name, revision))
    width = max(len(label) for label, _ in lines)
    for label, text in lines:
        click.echo(f"{label.ljust(width)}  {text}".rstrip())


@designs_group.command("export")
@click.argument("csv_file", metavar="FILE.csv")
@click.option("--all-revisions", is_flag=True, help="Every revision, not only each design's latest.")
@click.pass_obj
def export_command(state, csv_file: str, all_revisions: bool) -> None:
    """Write the saved designs as CSV: name, revision, who, when, stack, R, verdict, figures, hashes.

    \b
    Examples:
      railwright designs export designs.csv
      railwright designs export all-revisions.csv --all-revisions
    """
    from selector.catalog.saved_designs import (
        EXPORT_COLUMNS,
        export_row,
        latest_revisions,
        revision_history,
    )
    from selector.files.csv_writer import write_rows

    library = state.library()
    revisions = latest_revisions(library)
    if all_revisions:
        revisions = [old for latest in revisions for old in revision_history(library, latest.name)]
    count = write_rows(csv_file, EXPORT_COLUMNS, [export_row(saved) for saved in revisions], "FILE.csv")
    if csv_file != "-":
        click.echo(f"wrote {count} revision(s) to {csv_file}")


@designs_group.command("verify")
@click.argument("names", nargs=-1, metavar="[NAME ...]")
@click.pass_obj
def verify_command(state, names: tuple[str, ...]) -> None:
    """Check the latest revision of each named design (default: all) against today's library.

    Per design: whether it still holds, each part's data that changed (field by field),
    each list status that changed, the figures and verdict then and now. Exits 3 when
    any design no longer meets its spec, uses a part its list no longer allows, or
    cannot be checked again.

    \b
    Examples:
      railwright designs verify
      railwright designs verify bias-5v clamp-3v3
    """
    from selector.api import verify_designs
    from selector.catalog.saved_designs import audit_chain_status
    from selector.views.design_lines import verification_lines, verification_summary

    library = state.library()
    verifications = verify_designs(library, [name.strip() for name in names] or None)
    if not verifications:
        click.echo("no saved designs to verify")
        return
    for verification in verifications:
        click.echo("\n".join(verification_lines(verification)))
    click.echo("\n".join(verification_summary(verifications, audit_chain_status(library))))
    if not all(verification.positive for verification in verifications):
        raise click.exceptions.Exit(NEGATIVE_VERDICT_EXIT)


COMMANDS = [designs_group]
