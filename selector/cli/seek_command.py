"""``railwright seek``: search the library for stacks that hold a rail, print the shortlist."""

from __future__ import annotations

import sys
import time
from pathlib import Path

import click

from selector.api import seek as seek_library
from selector.cli.spec_options import SPEC_OPTIONS_EPILOG, spec_options
from selector.files.output_files import write_atomically
from selector.physics.design_cautions import NEAR_LIMIT_MARGIN
from selector.spec.spec_summary import describe_spec, spec_toml
from selector.spec.units import VOLTAGE, format_quantity, parse_quantity
from selector.views.shortlist_view import (
    nothing_meets_lines,
    rejection_line,
    shortlist_json,
    summary_lines,
    terminal_table,
    write_shortlist_csv,
)


class DelayedProgress:
    """A progress line on stderr, shown only on a terminal and only after ~1 s."""

    def __init__(self, delay_s: float = 1.0) -> None:
        self.started = time.perf_counter()
        self.delay_s = delay_s
        self.shown = False
        self.enabled = sys.stderr.isatty()

    def __call__(self, done: int, total: int) -> None:
        if not self.enabled or time.perf_counter() - self.started < self.delay_s:
            return
        self.shown = True
        click.echo(f"\rsolving candidate stacks: {done}/{total} ({100 * done / max(total, 1):.0f} %)", err=True, nl=False)

    def close(self) -> None:
        if self.shown:
            click.echo("", err=True)


#: What the table's R means with a --pick other than the contract's.
PICK_NOTES = {
    "margin": "R: each stack's meeting series value with the most dissipation margin (--pick margin); the stacks "
              "listed are those the contract's least-error choice ranks best.",
    "centre": "R: each stack's meeting series value whose worst-case rail is nearest the window's centre (--pick "
              "centre); the stacks listed are those the contract's least-error choice ranks best.",
}


@click.command(
    "seek",
    epilog="\b\nExamples:\n  railwright seek --spec rail.toml --top 5 --csv shortlist.csv\n"
    "  railwright seek --spec rail.toml --require-meeting   (exit 3 when nothing meets, for scripts)\n"
    "  railwright seek --spec rail.toml --pick margin   (each stack's meeting R with the most margin)\n\n"
    + SPEC_OPTIONS_EPILOG,
)
@spec_options
@click.option("--top", type=click.IntRange(1, 10000), default=10, show_default=True, help="Shortlist length.")
@click.option("--csv", "csv_path", metavar="FILE", default=None, help="Also write the shortlist as CSV to FILE.")
@click.option("--json", "as_json", is_flag=True, help="Print the shortlist and summary as JSON instead of a table.")
@click.option("--rank-by", metavar="KEYS", default=None, help="Key order of the rows that meet, e.g. 'margin,error' (keys: error, margin, parts); "
              "rows that do not meet are always ordered by error.")
@click.option("--resolution", metavar="VOLTS", default="1 mV", show_default=True, help="Error step the ranking treats as equal, e.g. '5 mV'.")
@click.option("--force", is_flag=True, help="Search even when the candidate count is above the sane limit.")
@click.option("--pick", type=click.Choice(["error", "margin", "centre"]), default="error", show_default=True,
              help="Resistor of each listed stack among its meeting series values: least error (the contract's "
                   "choice, by which the search ranks), most dissipation margin, or the rail centred in the window.")
@click.option("--require-meeting", is_flag=True,
              help="Exit 3 when no design meets the spec (by default seek exits 0 and lists the closest).")
@click.pass_context
def seek(ctx: click.Context, spec, top: int, csv_path: str | None, as_json: bool, rank_by: str | None, resolution: str,
         force: bool, pick: str, require_meeting: bool) -> None:  # fmt: skip
    """Search every stack of up to max_parts library parts for the rail; list the best.

    Every candidate is either solved at all 32 worst-case corners with its series
    resistor chosen from the spec's E-series, or dropped by a bound that proves it
    cannot be feasible or cannot enter the shortlist. With --list (or [search] list)
    only the list's usable parts are searched (approved and conditional, or
    --statuses), and each conditional part's condition is shown with its rows.
    """
    from selector.errors import OptionError, QuantityError

    try:
        resolution_v = parse_quantity(resolution, VOLTAGE)
    except QuantityError as error:
        raise OptionError(f"--resolution: {error}") from None
    if not resolution_v > 0:
        raise OptionError(f"--resolution: must be a positive voltage, not '{resolution}'")
    progress = DelayedProgress()
    try:
        result = seek_library(spec, ctx.obj.library(), top=top, rank_by=rank_by, resolution_v=resolution_v, force=force, progress=progress,
                              pick=pick)
    finally:
        progress.close()
    frame, summary = result
    spec_file = None
    if csv_path is not None:
        write_shortlist_csv(frame, csv_path)
        if csv_path != "-":
            spec_file = write_atomically(Path(csv_path).with_suffix(".spec.toml"), spec_toml(spec), "--csv")
    if as_json:
        click.echo(shortlist_json(frame, summary.as_dict(), _context(ctx.obj.library(), spec) | {"pick": pick}))
        _exit_if_nothing_meets(frame, require_meeting)
        return
    for line in describe_spec(spec):
        click.echo(line)
    click.echo("")
    if frame.empty:
        click.echo(rejection_line(summary))
    else:
        click.echo(terminal_table(frame, spec.tolerance_v))
        if pick != "error":
            click.echo(PICK_NOTES[pick])
        for rank, conditions in zip(frame["rank"], frame["conditions"], strict=True):
            if conditions:
                click.echo(f"  #{rank} conditions of use (list '{spec.list_name}'): {conditions}")
        for rank, statuses in zip(frame["rank"], frame["statuses"], strict=True):
            if statuses:
                click.echo(f"  #{rank} uses parts not approved on '{spec.list_name}': {statuses}")
        near = int(frame["near_limit"].sum())
        if near:
            click.echo(
                f"Caution: {near} listed design(s), marked !, run a part or the resistor within "
                f"{NEAR_LIMIT_MARGIN:.0%} of its allowed power; derate and check against local codes and licensed "
                "practice."
            )
        for rank, cautions in zip(frame["rank"], frame["cautions"], strict=True):
            if cautions:
                click.echo(f"  #{rank}: {cautions}")
    for line in nothing_meets_lines(frame, summary, spec.tolerance_v):
        click.echo(line)
    click.echo("")
    for line in summary_lines(summary):
        click.echo(line)
    if csv_path is not None:
        click.echo(f"Shortlist written to {csv_path} ({len(frame)} rows, best error {format_quantity(float(frame['error_v'].min()), 'V') if len(frame) else '—'}); "
                   + (f"the spec as run to {spec_file}." if spec_file else "the spec as run is in the summary above."))
    _exit_if_nothing_meets(frame, require_meeting)


def _context(library, spec) -> dict:
    """What a shortlist was computed from: the spec, the library's content hash, when, by
    which version (kept in the JSON so the result can be traced and repeated)."""
    import datetime

    from selector import __version__
    from selector.catalog.library_hash import library_content_hash
    from selector.spec.spec_summary import spec_to_dict

    return {"spec": spec_to_dict(spec), "library_sha256": library_content_hash(library),
            "computed_at": datetime.datetime.now(datetime.UTC).isoformat(timespec="seconds"),
            "railwright_version": __version__}  # fmt: skip


def _exit_if_nothing_meets(frame, require_meeting: bool) -> None:
    from selector.errors import NEGATIVE_VERDICT_EXIT

    if require_meeting and not bool(frame["meets"].any()):
        raise click.exceptions.Exit(NEGATIVE_VERDICT_EXIT)


COMMANDS = [seek]
