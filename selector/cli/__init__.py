"""The ``railwright`` command line: a thin click layer over the library API.

Each command family lives in its own module and exposes ``COMMANDS``, a list of click
commands or groups that :data:`COMMAND_MODULES` registers here. Domain errors
(:class:`selector.errors.RailwrightError`) become one-line ``click.ClickException``\\ s
with the error's exit code.
"""

from __future__ import annotations

import importlib

import click

from selector import __version__
from selector.errors import RailwrightError

#: Modules under ``selector.cli`` whose ``COMMANDS`` join the top-level group.
COMMAND_MODULES: tuple[str, ...] = (
    "init_command",
    "parts_commands",
    "check_command",
    "seek_command",
    "approved_commands",
    "history_command",
    "report_command",
)


class DomainError(click.ClickException):
    """A domain error shown as one ``Error: …`` line, with the domain exit code."""

    def __init__(self, message: str, exit_code: int) -> None:
        super().__init__(message)
        self.exit_code = exit_code


class RailwrightGroup(click.Group):
    """A group that turns domain exceptions from any subcommand into DomainError."""

    def invoke(self, ctx: click.Context):
        try:
            return super().invoke(ctx)
        except RailwrightError as error:
            raise DomainError(str(error), error.exit_code) from None


@click.group(cls=RailwrightGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.option(
    "--db",
    "db",
    envvar="RAILWRIGHT_DB",
    metavar="PATH|URL",
    default=None,
    help="Parts library: a SQLite file path or a database URL "
    "(env RAILWRIGHT_DB; default: a per-user data directory).",
)
@click.version_option(__version__, prog_name="railwright")
@click.pass_context
def main(ctx: click.Context, db: str | None) -> None:
    """Find and prove diode/zener stack rails from your shop's parts library.

    \b
    Examples:
      railwright parts list
      railwright seek --spec rail.toml --top 10
      railwright check --spec rail.toml --stack "Z4V7-A + 2*D-SIG1"
    """
    from selector.cli.context import CliState

    ctx.obj = CliState(db_option=db)


for _module_name in COMMAND_MODULES:
    _module = importlib.import_module(f"selector.cli.{_module_name}")
    for _command in _module.COMMANDS:
        main.add_command(_command)
