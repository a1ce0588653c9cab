"""``railwright init``: create the parts library, optionally with the demo sets."""

from __future__ import annotations

import click


@click.command("init")
@click.option("--demo", is_flag=True, help="Also add the bundled invented demo sets.")
@click.pass_obj
def init_command(state, demo: bool) -> None:
    """Create the parts library (at --db, or the per-user default) if it is missing.

    As with every command, a new default library gets the demo sets and a new library
    at --db starts empty unless --demo is given.

    An existing library is kept as it is; with --demo the demo parts it lacks are added,
    and a demo part already there is never changed (the count kept is shown). The demo
    sets are invented, not any maker's data.

    \b
    Examples:
      railwright init --demo
      railwright --db shop.sqlite init
    """
    library = state.library(create_with_demo=True if demo else None)
    revision = library.schema_revision()
    if demo and not library.created:
        plan = library.import_demo_sets()
        click.echo(f"demo sets: {len(plan.added)} added, {len(plan.unchanged)} already in the library kept as they are")
    click.echo(f"library {library.location_text()} ready (schema revision {revision})")


COMMANDS = [init_command]
