"""``railwright check``: prove one stack and resistor at every worst-case corner."""

from __future__ import annotations

import json

import click

from selector.api import check as check_design
from selector.cli.spec_options import SPEC_OPTIONS_EPILOG, spec_options
from selector.errors import NEGATIVE_VERDICT_EXIT, OptionError
from selector.views.check_view import check_json, check_lines, fix_json, range_lines, what_if_lines

MAX_MONTE_CARLO_SAMPLES = 10_000_000


#: The search's spec keys mean something else in ``check``: the stack is given, so they
#: only bound the what-if variants.
_CHECK_HELP = {
    "search.max_parts": "Most elements a what-if variant may have (adding one forward element), 1 … 12 (default 3).",
    "search.families": "Families a what-if variant may swap in or add, comma-separated, e.g. 'zener,signal' "
                       "(default: all).",
    "search.list": "Approved-parts list to check the stack against: a part it does not allow is warned about, "
                   "conditions of use are shown, and what-if variants use only its usable parts.",
}


@click.command(
    "check",
    epilog="\b\nExamples:\n"
    '  railwright check --spec rail.toml --stack "Z4V7-A + 2*D-SIG1"\n'
    '  railwright check --spec rail.toml --stack "2*D-SIG1" --resistor 1k --json\n'
    '  railwright check --spec rail.toml --stack "Z4V7-A" --monte-carlo 10000\n'
    '  railwright check --spec rail.toml --stack "Z4V7-A + D-SCH3" --pick centre\n\n'
    + SPEC_OPTIONS_EPILOG
    + "\n\nMonte Carlo: each of N units draws its parts' tolerances and TC spreads and the "
    "resistor's tolerance and TCR once (normal, 3 sigma at the limit, truncated there; "
    "seeded with --seed) and is solved at the environment corners (supply × load × "
    "ambient extremes). Yield is the share of units inside the window and feasible at "
    "every one, with its 95 % Wilson interval.",
)
@click.option("--stack", "stack_text", required=True, metavar="TEXT",
              help="The stack, elements joined by '+', each [COUNT*]PART, e.g. '2*D-SIG1 + Z4V7-A'.")
@click.option("--json", "as_json", is_flag=True, help="Print the result as JSON instead of a report.")
@click.option("--monte-carlo", "samples", type=int, default=None, metavar="N",
              help="Also run a Monte Carlo of N units, e.g. 10000.")
@click.option("--seed", type=click.IntRange(min=0), default=0, show_default=True, help="Monte Carlo seed (0 or more).")
@click.option("--pick", type=click.Choice(["error", "margin", "centre"]), default="error", show_default=True,
              help="Which meeting series value to take when R is chosen: least worst-case error (the contract's "
              "choice), most dissipation margin, or the rail centred in the window.")
@click.option("--what-if", "what_if", is_flag=True,
              help="List the library's variants of the design (resistor values, part swaps, an added element), "
              "each solved at every corner; shown anyway when the design does not meet.")
@click.option("--derating", type=float, default=1.0, show_default=True, metavar="FRACTION",
              help="Shop derating for the resistor rating advice: fraction of a rating that may be used, e.g. 0.5.")
@spec_options(help_for=_CHECK_HELP)
@click.pass_obj
def check(state, stack_text, as_json, samples, seed, pick, what_if, derating, spec):
    """Solve one stack and series resistor at all 32 worst-case corners and report.

    Without --resistor the resistor is chosen from the spec's series by the least
    worst-case error among feasible values. With --list (or [search] list) a part the
    list does not allow is warned about, naming its status, and the condition of each
    conditional part is shown. Exits 3 when the design does not meet the spec (every
    limit it breaks is named, with its corners and values), so a script can gate on it.
    """
    if samples is not None and not (1 <= samples <= MAX_MONTE_CARLO_SAMPLES):
        raise OptionError(f"--monte-carlo: {samples} is not between 1 and {MAX_MONTE_CARLO_SAMPLES}")
    if not (0.0 < derating <= 1.0):
        raise OptionError(f"--derating: {derating:g} is not in (0, 1]")
    result = check_design(spec, state.library(), stack_text, derating=derating, samples=samples, seed=seed, pick=pick)
    for warning in result.list_warnings:
        click.echo(f"Warning: {warning}", err=True)
    design, warnings, conditions = result.design, result.list_warnings, result.list_conditions
    fixes = result.what_if() if (what_if or not design.meets) else None
    if as_json:
        document = check_json(design)
        if fixes is not None:
            document["what_if"] = [fix_json(fix) for fix in fixes]
        if spec.list_name is not None:
            document["approved_list"] = {"list": spec.list_name, "warnings": warnings, "conditions": conditions}
        click.echo(json.dumps(document, indent=2, ensure_ascii=False))
    else:
        click.echo("\n".join(check_lines(design)))
        for condition in conditions:
            click.echo(f"Condition of use (list '{spec.list_name}'): {condition}")
        if fixes is not None:
            click.echo("\n".join(what_if_lines(fixes)))
            for line in range_lines(design):
                click.echo(line)
    if not design.meets:
        raise click.exceptions.Exit(NEGATIVE_VERDICT_EXIT)


COMMANDS = [check]
