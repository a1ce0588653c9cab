"""``railwright report``: a self-contained HTML design review of a search, of one design, or
of a saved design re-verified against today's library."""

from __future__ import annotations

import click

from selector.cli.spec_options import SPEC_OPTIONS_EPILOG, spec_source_options
from selector.errors import OptionError

MAX_MONTE_CARLO_SAMPLES = 1_000_000


@click.command(
    "report",
    epilog="\b\nExamples:\n"
    "  railwright report --spec rail.toml --top 10 --out review.html\n"
    "  railwright report --spec rail.toml --list bench-2024 --out review.html --png plots\n"
    '  railwright report --spec rail.toml --stack "Z4V7-A + D-SIG1" --resistor 390 --out design.html\n'
    '  railwright report --design bias-5v --by "A. Tester" --out bias-5v.html\n\n'
    + SPEC_OPTIONS_EPILOG
    + "\n\nThe HTML file needs nothing else to open: CSS and plots (SVG) are inline, there is no "
    "script and no link to anywhere.",
)
@spec_source_options
@click.option("--out", "out_path", required=True, metavar="FILE.html", help="Where to write the report, e.g. review.html.")
@click.option("--top", type=click.IntRange(1, 100), default=10, show_default=True,
              help="Shortlist length of a search; each listed design gets its own section.")
@click.option("--stack", "stack_text", default=None, metavar="TEXT",
              help="Report one design instead of a search, e.g. '2*D-SIG1 + Z4V7-A' (with --resistor to fix R).")
@click.option("--design", "design_name", default=None, metavar="NAME",
              help="Report a saved design (its latest revision), checked again against today's library; "
              "it brings its own spec and stack.")
@click.option("--by", "prepared_by", default=None, help="Who prepares the report, for the sign-off (default: your login name).")
@click.option("--png", "png_dir", default=None, metavar="DIR", help="Also write every plot as a PNG file into DIR.")
@click.option("--scatter", "scatter_designs", type=click.IntRange(1, 100_000), default=100, show_default=True,
              help="Feasible designs the search returns for the error-against-margin plot (more is slower).")
@click.option("--sweeps", "sweep_designs", type=click.IntRange(0, 100), default=3, show_default=True,
              help="Designs, best first, that also get their error budget, what-if list and rail-against-supply and "
                   "rail-against-ambient plots.")
@click.option("--monte-carlo", "samples", type=click.IntRange(1, MAX_MONTE_CARLO_SAMPLES), default=10_000,
              show_default=True, metavar="N", help="Monte Carlo samples per design.")
@click.option("--seed", type=click.IntRange(min=0), default=0, show_default=True, help="Monte Carlo seed (0 or more).")
@click.pass_obj
def report(state, spec_path, spec_overrides, out_path, top, stack_text, design_name, prepared_by, png_dir,
           scatter_designs, sweep_designs, samples, seed):
    """Write a design review as one HTML file: spec, shortlist, corners, margins, plots,
    each used part's approval and data, provenance and sign-off lines.

    Without --stack it searches the library as 'seek' does and reports the shortlist;
    with --stack it reports that one design; with --design a saved design, showing what
    differs from its saved snapshot.
    """
    from selector.catalog.audit import person
    from selector.views.report_html import design_review, search_review, write_report

    person(prepared_by)
    if design_name is not None:
        if stack_text is not None or spec_path is not None or spec_overrides:
            raise OptionError("--design: a saved design brings its own spec and stack; "
                              "leave out --stack, --spec and the spec options")
        from selector.views.saved_design_report import saved_design_review

        review = saved_design_review(state.library(), design_name, samples=samples, seed=seed, prepared_by=prepared_by)
    else:
        from selector.spec.spec_source import read_spec_source

        spec, source = read_spec_source(spec_path, spec_overrides)
        evidence = {"spec_source": source, "prepared_by": prepared_by}
        if stack_text is not None:
            review = design_review(spec, state.library(), stack_text, samples=samples, seed=seed, **evidence)
        else:
            review = search_review(spec, state.library(), top=top, scatter_designs=scatter_designs, samples=samples,
                                   seed=seed, **evidence)
    written = write_report(review, out_path, png_dir, sweep_designs=sweep_designs)
    for warning in (warning for candidate in review.candidates for warning in candidate.list_warnings):
        click.echo(f"Warning: {warning}", err=True)
    click.echo(f"Report written to {out_path} ({len(review.candidates)} design(s)"
               + (f"; {len(written)} PNG file(s) in {png_dir}" if png_dir is not None else "") + ").")


COMMANDS = [report]
