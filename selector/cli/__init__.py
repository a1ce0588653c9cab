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


_HELP_ON_NO_ARGS = getattr(click.exceptions, "NoArgsIsHelpError", ())


def _one_line_usage_error(error: click.UsageError) -> DomainError:
    """Click's usage error as one ``Error: …`` line (exit 2) instead of three lines."""
    # The root's name depends on how the group was invoked (a test runner calls it "main").
    subcommands = error.ctx.command_path.split()[1:] if error.ctx is not None else []
    command_path = " ".join(["railwright", *subcommands])
    return DomainError(f"{error.format_message()} (see '{command_path} --help')", error.exit_code)


class RailwrightGroup(click.Group):
    """A group whose user errors, from any subcommand, are one ``Error: …`` line.

    Domain exceptions become :class:`DomainError` with their exit code; click's own usage
    errors (unknown command or option, missing or bad option value) keep exit 2 but lose
    the usage banner, so every user error reads the same way.
    """

    def parse_args(self, ctx: click.Context, args: list[str]) -> list[str]:
        try:
            return super().parse_args(ctx, args)
        except _HELP_ON_NO_ARGS:
            raise
        except click.UsageError as error:
            raise _one_line_usage_error(error) from None

    def invoke(self, ctx: click.Context):
        try:
            return super().invoke(ctx)
        except RailwrightError as error:
            raise DomainError(str(error), error.exit_code) from None
        except _HELP_ON_NO_ARGS:
            raise
        except click.UsageError as error:
            raise _one_line_usage_error(error) from None


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
