"""The ``railwright`` command line: a thin click layer over the library API.

Each command family lives in its own module and exposes ``COMMANDS``, a list of click
commands or groups; :data:`COMMAND_MODULES` names the module of each top-level command,
imported only when that command runs (numpy, pandas, SQLAlchemy and SciPy cost seconds
to import, and ``railwright parts list`` needs only some of them). Domain errors
(:class:`selector.errors.RailwrightError`) become one-line ``click.ClickException``\\ s
with the error's exit code.
"""

from __future__ import annotations

import difflib
import importlib

import click

from selector import __version__
from selector.errors import RailwrightError

#: Top-level command name → the module under ``selector.cli`` whose ``COMMANDS`` holds it.
COMMAND_MODULES: dict[str, str] = {
    "init": "init_command",
    "parts": "parts_commands",
    "check": "check_command",
    "seek": "seek_command",
    "report": "report_command",
    "approved": "approved_commands",
    "history": "history_command",
    "designs": "designs_command",
}


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

    def list_commands(self, ctx: click.Context) -> list[str]:
        return sorted(set(super().list_commands(ctx)) | set(COMMAND_MODULES))

    def get_command(self, ctx: click.Context, name: str) -> click.Command | None:
        command = super().get_command(ctx, name)
        if command is None and name in COMMAND_MODULES:
            module = importlib.import_module(f"selector.cli.{COMMAND_MODULES[name]}")
            for loaded in module.COMMANDS:
                self.add_command(loaded)
            command = super().get_command(ctx, name)
        return command

    def resolve_command(self, ctx: click.Context, args: list[str]):
        try:
            return super().resolve_command(ctx, args)
        except click.UsageError as error:
            # Click suggests only among commands already loaded; offer the lazy ones too.
            close = difflib.get_close_matches(args[0], self.list_commands(ctx), n=1) if args else []
            if close and "Did you mean" not in error.message:
                error.message += f" Did you mean '{close[0]}'?"
            raise

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

