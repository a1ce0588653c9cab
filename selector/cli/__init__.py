"""The ``railwright`` command line: a thin click layer over the library API.

Each command family lives in its own module and exposes ``COMMANDS``, a list of click
commands or groups; :data:`COMMAND_MODULES` names the module of each top-level command,
imported only when that command runs (numpy, pandas, SQLAlchemy and SciPy cost seconds
to import, and ``railwright parts list`` needs only some of them); ``railwright --help``
lists them from :data:`COMMAND_SUMMARIES` without importing any. Domain errors
(:class:`selector.errors.RailwrightError`) become one-line ``click.ClickException``\\ s
with the error's exit code.
"""

from __future__ import annotations

import atexit
import difflib
import gc
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

#: Top-level command name → its help's first sentence, for the command list of
#: ``railwright --help`` without importing every command module (a test keeps them equal).
#: A command missing here is imported to ask.
COMMAND_SUMMARIES: dict[str, str] = {
    "init": "Create the parts library (at --db, or the per-user default) if it is missing.",
    "parts": "The shop's parts library: forward diodes, LEDs and zeners.",
    "check": "Solve one stack and series resistor at all 32 worst-case corners and report.",
    "seek": "Search every stack of up to max_parts library parts for the rail; list the best.",
    "report": "Write a design review as one HTML file: spec, shortlist, corners, margins, plots, each "
    "used part's approval and data, provenance and sign-off lines.",
    "approved": "The shop's approved-parts lists: which parts may be designed in, and why.",
    "designs": "Saved designs: a checked stack and resistor kept with its evidence, re-verified later.",
    "history": "Show who changed what, when (UTC), old → new, and why: imports, edits, status "
    "changes and removals of parts and list entries, and saves of designs, oldest first.",
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

    def format_commands(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        names = self.list_commands(ctx)
        if not names:
            return
        # As click's own (3 × the default spacing), but from the summaries where known.
        limit = formatter.width - 6 - max(len(name) for name in names)
        rows = []
        for name in names:
            if name in COMMAND_SUMMARIES and name not in self.commands:
                rows.append((name, click.utils.make_default_short_help(COMMAND_SUMMARIES[name], limit)))
                continue
            command = self.get_command(ctx, name)
            if command is not None and not command.hidden:
                rows.append((name, command.get_short_help_str(limit)))
        with formatter.section("Commands"):
            formatter.write_dl(rows)

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
        for position, argument in enumerate(args, start=1):
            # Bytes that are not UTF-8 reach Python as lone surrogates, which no file,
            # database or terminal write can encode: refuse them here, once for every command.
            if any("\udc80" <= character <= "\udcff" for character in argument):
                shown = argument.encode("utf-8", "surrogateescape").decode("utf-8", "backslashreplace")
                raise click.UsageError(f"argument {position} ('{shown[:60]}') is not valid UTF-8 text")
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
    ctx.call_on_close(ctx.obj.close)
    _skip_collections_at_exit()


def _skip_collections_at_exit() -> None:
    """Freeze the garbage collector when the process exits, once however many commands run.

    The interpreter's shutdown collections walk every object SQLAlchemy, numpy and SciPy
    made (measured: about 80 ms of a 450 ms ``parts list``); frozen objects are skipped.
    Nothing is lost: the library is closed when the command ends, and objects are still
    freed by reference counting.
    """
    atexit.unregister(gc.freeze)
    atexit.register(gc.freeze)

