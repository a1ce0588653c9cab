"""The design review report: one self-contained HTML file of a search or of one design.

:func:`search_review` and :func:`design_review` gather what the report shows by calling
the search (:func:`selector.search.engine.seek`), the corner proof
(:func:`selector.physics.design_metrics.design_metrics`, :func:`selector.views.check_view.check_json`) and the
Monte Carlo run (:func:`selector.physics.montecarlo.run_monte_carlo`); nothing here recomputes
what those compute. :func:`render_html` turns a :class:`ReviewReport` and its figures'
SVG into one HTML page: inline CSS, inline SVG, no script and no external reference, so
it opens offline. Every text that comes from the library, the spec or the user passes
through :func:`html.escape`.
"""

from __future__ import annotations

import datetime
import html
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from selector import __version__
from selector.errors import OptionError
from selector.files.output_files import checked_destination, write_atomically
from selector.physics.design_cautions import NEAR_LIMIT_MARGIN
from selector.physics.design_metrics import design_metrics
from selector.physics.montecarlo import DEFAULT_SAMPLES, PERCENTILE_NAMES, run_monte_carlo
from selector.physics.partset import PartSet
from selector.search.ranking import DEFAULT_RESOLUTION_V, pareto_front
from selector.spec.rail_spec import RailSpec, spec_cautions
from selector.spec.spec_summary import describe_spec
from selector.spec.stack_notation import expand_stack, parse_stack
from selector.spec.units import format_quantity
from selector.views.check_view import CheckedDesign, check_json, design_cautions
from selector.views.shortlist_view import frame_records, summary_lines

#: Feasible designs asked of the search for the error-against-margin figure by default.
DEFAULT_SCATTER_DESIGNS = 100
#: Designs, best first, whose supply and ambient sweeps are drawn by default.
DEFAULT_SWEEP_DESIGNS = 3
DEFER = "This report is not a safety assessment: follow local codes and licensed practice."


@dataclass(frozen=True)
class CandidateReview:
    """One design as the report shows it.

    Attributes
    ----------
    rank : int or None
        Its place on the shortlist; None for a report of one design.
    design : CheckedDesign
        Stack, resistor, corner metrics and Monte Carlo run.
    document : dict
        :func:`selector.views.check_view.check_json` of the design (corners, margins, cautions).
    conditions : str
        Conditions of use of its parts from the approved list (empty when none).
    list_warnings : tuple of str
        One line per part the spec's list does not allow (a verdict-level failure).
    """

    rank: int | None
    design: CheckedDesign
    document: dict
    conditions: str = ""
    list_warnings: tuple[str, ...] = ()

    @property
    def key(self) -> str:
        """Name of the design's figures and HTML anchors: ``rank-01`` or ``design``."""
        return f"rank-{self.rank:02d}" if self.rank is not None else "design"

    @property
    def title(self) -> str:
        name = f"{self.document['stack']} with {format_quantity(self.design.resistor_ohm, 'Ω')}"
        return f"#{self.rank} {name}" if self.rank is not None else name


@dataclass(frozen=True)
class ReviewReport:
    """Everything the report shows.

    Attributes
    ----------
    spec : RailSpec
    candidates : list of CandidateReview
        Best first.
    shortlist : DataFrame or None
        The ranked shortlist (the ``seek`` columns); None for a report of one design.
    summary : SearchSummary or None
    scatter : DataFrame or None
        The feasible designs the search returned (``error_v``, ``margin`` …), for the
        error-against-margin figure.
    library_location, schema_revision : str
    generated : datetime.datetime
        When the report was made (UTC).
    evidence : selector.views.report_evidence.ReportEvidence, optional
        Approvals, parts data, provenance and sign-off (see that module).
    usable_parts : array of bool, optional
        Per library part, whether the spec's approved list lets a what-if variant use it
        (None: no list).
    """

    spec: RailSpec
    candidates: list[CandidateReview]
    shortlist: pd.DataFrame | None
    summary: object | None
    scatter: pd.DataFrame | None
    library_location: str
    schema_revision: str
    generated: datetime.datetime
    evidence: object | None = None
    usable_parts: object = None


# Gathering -------------------------------------------------------------------------------


def review_design(
    spec: RailSpec,
    parts: PartSet,
    stack: np.ndarray,
    resistor_ohm: float,
    *,
    resistor_chosen: bool,
    samples: int = DEFAULT_SAMPLES,
    seed: int = 0,
    rank: int | None = None,
    conditions: str = "",
) -> CandidateReview:
    """Prove one design at every corner and run its Monte Carlo spread.

    Parameters
    ----------
    spec : RailSpec
    parts : PartSet
        The parts ``stack`` indexes.
    stack : int array (elements,)
    resistor_ohm : float [Ω]
    resistor_chosen : bool
        Whether the resistor was chosen from the series (else given by the user).
    samples, seed : int
        Monte Carlo samples and seed.
    rank : int, optional
    conditions : str
        Conditions of use of its parts.
    """
    design = CheckedDesign(
        spec=spec,
        parts=parts,
        stack=stack,
        resistor_ohm=float(resistor_ohm),
        resistor_chosen=resistor_chosen,
        metrics=design_metrics(parts, stack, float(resistor_ohm), spec),
        monte_carlo=run_monte_carlo(parts, stack, float(resistor_ohm), spec, samples=samples, seed=seed),
    )
    return CandidateReview(rank=rank, design=design, document=check_json(design), conditions=conditions)


def _stack_indices(parts: PartSet, stack_text: str) -> np.ndarray:
    return parts.index_of(expand_stack(parse_stack(stack_text)))


def _now() -> datetime.datetime:
    return datetime.datetime.now(datetime.UTC).replace(microsecond=0)


def search_review(
    spec: RailSpec,
    library,
    *,
    top: int = 10,
    scatter_designs: int = DEFAULT_SCATTER_DESIGNS,
    samples: int = DEFAULT_SAMPLES,
    seed: int = 0,
    rank_by=None,
    resolution_v: float = DEFAULT_RESOLUTION_V,
    force: bool = False,
    progress=None,
    spec_source=None,
    prepared_by: str | None = None,
) -> ReviewReport:
    """Search the library and gather the report of its shortlist.

    The search is asked for ``max(top, scatter_designs)`` designs. Its ranking is a total
    order and its pruning exact, so the first ``top`` rows are the shortlist a search for
    ``top`` returns; the Pareto flag is taken again over those rows, as that search does.
    The search keeps only its best designs, so the error-against-margin figure shows the
    feasible designs it returned, not every feasible stack it solved.

    Parameters
    ----------
    spec : RailSpec
    library : selector.catalog.store.Library
    top : int
        Shortlist length; every shortlisted design gets a detailed section.
    scatter_designs : int
        Feasible designs for the error-against-margin figure.
    samples, seed : int
        Monte Carlo samples and seed of each detailed design.
    rank_by, resolution_v, force, progress
        As for :func:`selector.search.engine.seek`.
    spec_source, prepared_by
        For the evidence sections (:func:`selector.views.report_evidence.gather_evidence`).
    """
    from selector.api import seek
    from selector.views.report_evidence import gather_evidence

    if scatter_designs < 1:
        raise OptionError(f"--scatter: must be at least 1, not {scatter_designs}")
    found, summary = seek(spec, library, top=max(top, scatter_designs), rank_by=rank_by,
                          resolution_v=resolution_v, force=force, progress=progress)
    shortlist = found.head(top).copy()
    if len(shortlist):
        shortlist["pareto"] = pareto_front(shortlist["error_v"].to_numpy(float), shortlist["margin"].to_numpy(float),
                                           shortlist["parts"].to_numpy(float))
    parts = library.load_partset()
    candidates = [
        review_design(spec, parts, _stack_indices(parts, row.stack), row.resistor_ohm,
                      resistor_chosen=spec.resistor_fixed_ohm is None, samples=samples, seed=seed,
                      rank=int(row.rank), conditions=str(row.conditions or ""))
        for row in shortlist.itertuples()
    ]
    evidence = gather_evidence(library, spec, candidates, spec_source=spec_source, prepared_by=prepared_by)
    return ReviewReport(spec, candidates, shortlist, summary, found, library.location_text(),
                        evidence.schema_revision, _now(), evidence=evidence,
                        usable_parts=_usable_parts(library, parts, spec))


def _usable_parts(library, parts: PartSet, spec: RailSpec):
    if spec.list_name is None:
        return None
    from selector.catalog.approved_lists import list_view

    return list_view(library, parts, spec.list_name, spec.statuses).usable


def design_review(spec: RailSpec, library, stack_text: str, *, samples: int = DEFAULT_SAMPLES, seed: int = 0,
                  spec_source=None, prepared_by: str | None = None) -> ReviewReport:
    """Gather the report of one design (``--stack``; resistor from the spec or chosen).

    Parameters
    ----------
    spec : RailSpec
        ``resistor_fixed_ohm`` fixes the resistor; otherwise it is chosen from the series.
    library : selector.catalog.store.Library
    stack_text : str
        Stack notation, e.g. ``"2*D-SIG1 + Z4V7-A"``.
    samples, seed : int
        Monte Carlo samples and seed.
    spec_source, prepared_by
        For the evidence sections (:func:`selector.views.report_evidence.gather_evidence`).
    """
    from selector.api import check
    from selector.views.report_evidence import gather_evidence

    result = check(spec, library, stack_text, samples=samples, seed=seed)
    design = result.design
    candidate = CandidateReview(rank=None, design=design, document=check_json(design),
                                conditions="; ".join(result.list_conditions), list_warnings=tuple(result.list_warnings))
    evidence = gather_evidence(library, spec, [candidate], spec_source=spec_source, prepared_by=prepared_by)
    return ReviewReport(spec, [candidate], None, None, None, library.location_text(), evidence.schema_revision, _now(),
                        evidence=evidence, usable_parts=result.usable_parts)


# Figures ---------------------------------------------------------------------------------


def report_figures(report: ReviewReport, sweep_designs: int = DEFAULT_SWEEP_DESIGNS) -> dict[str, object]:
    """Every figure of the report by name (the PNG file stem and the SVG id prefix).

    Every design gets its Monte Carlo histogram; the first ``sweep_designs`` designs
    also get their error budget and their supply and ambient sweeps (each figure costs
    about 0.1 s to draw).
    """
    from selector.physics import sweeps
    from selector.views import plots

    figures: dict[str, object] = {}
    spec = report.spec
    if report.scatter is not None and len(report.scatter):
        shortlist = report.shortlist
        figures["error-vs-margin"] = plots.error_margin_figure(
            report.scatter["error_v"].to_numpy(float), report.scatter["margin"].to_numpy(float),
            shortlist["error_v"].to_numpy(float), shortlist["margin"].to_numpy(float),
            shortlist["rank"].to_numpy(int), spec, "Worst-case error against dissipation margin",
        )
    for position, candidate in enumerate(report.candidates):
        design = candidate.design
        stack, resistor = design.stack, design.resistor_ohm
        figures[f"{candidate.key}-monte-carlo"] = plots.monte_carlo_figure(
            design.monte_carlo, spec, f"{candidate.title}: Monte Carlo spread")
        if position >= sweep_designs:
            continue
        if design.budget:
            from selector.views.budget_chart import budget_figure

            figures[f"{candidate.key}-budget"] = budget_figure(
                design.budget, float(design.metrics.evaluation.vout_nom_v[0]), f"{candidate.title}: error budget")
        figures[f"{candidate.key}-supply"] = plots.sweep_figure(
            sweeps.supply_sweep(design.parts, stack, resistor, spec), spec, f"{candidate.title}: rail against supply")
        figures[f"{candidate.key}-ambient"] = plots.sweep_figure(
            sweeps.ambient_sweep(design.parts, stack, resistor, spec), spec, f"{candidate.title}: rail against ambient")
    return figures


def write_report(
    report: ReviewReport,
    out_path: str | Path,
    png_dir: str | Path | None = None,
    *,
    sweep_designs: int = DEFAULT_SWEEP_DESIGNS,
) -> list[Path]:
    """Draw the figures, write the HTML file and, with ``png_dir``, one PNG per figure.

    ``sweep_designs`` is as for :func:`report_figures`; those designs also get their
    what-if list (:func:`selector.views.report_fixes.report_fixes`).

    Returns
    -------
    list of Path
        The PNG files written.

    Raises
    ------
    OptionError
        When ``--out`` or ``--png`` cannot be written, naming the option and the path.
    """
    from selector.views import plots
    from selector.views.report_fixes import report_fixes

    figures = report_figures(report, sweep_designs)
    fixes = report_fixes(report, sweep_designs)
    written = []
    checked_destination(out_path, "--out")
    if png_dir is not None:
        folder = Path(png_dir)
        if folder.is_symlink():
            raise OptionError(f"--png: '{folder}' is a symbolic link; give the folder itself")
        try:
            folder.mkdir(parents=True, exist_ok=True)
        except OSError as error:
            raise OptionError(f"--png: cannot write into '{folder}': {error.strerror or error}") from None
        written = [write_atomically(folder / f"{name}.png", plots.png_bytes(figure), "--png")
                   for name, figure in figures.items()]  # fmt: skip
    svg = {name: plots.svg_markup(figure, name) for name, figure in figures.items()}
    write_atomically(out_path, render_html(report, svg, fixes), "--out")
    return written


# HTML ------------------------------------------------------------------------------------

STYLE_SHEET = """
:root { color-scheme: light; }
body { font: 14px/1.45 "DejaVu Sans", "Segoe UI", Helvetica, Arial, sans-serif; color: #1d1d1d;
       background: #fbfaf7; margin: 0; }
main { max-width: 1120px; margin: 0 auto; padding: 24px 28px 40px; }
h1 { font-size: 24px; margin: 0 0 4px; letter-spacing: .01em; }
h2 { font-size: 18px; border-bottom: 2px solid #14323f; padding-bottom: 3px; margin-top: 34px; }
h3 { font-size: 15px; margin: 20px 0 6px; }
.lead { color: #4a4a4a; margin: 0 0 18px; }
table { border-collapse: collapse; margin: 6px 0 12px; font-size: 12.5px; }
th, td { border: 1px solid #c9c4b8; padding: 3px 7px; text-align: left; vertical-align: top; }
th { background: #ebe7dd; font-weight: 600; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.extreme td { font-weight: 700; }
table.what-if tr.meets-yes td { background: #e7f0e1; }
.verdict { font-weight: 700; }
.meets-no { text-decoration: underline dotted; }
ul.plain { padding-left: 18px; margin: 6px 0; }
figure { margin: 10px 0 16px; break-inside: avoid; }
figure svg { max-width: 100%; height: auto; background: #ffffff; border: 1px solid #dad5ca; }
figcaption { font-size: 12px; color: #4a4a4a; margin-top: 3px; }
.caution { border-left: 4px solid #8a4b08; padding: 4px 10px; margin: 6px 0; background: #f4eee3; }
.conditions { border-left: 4px double #14323f; padding: 4px 10px; background: #eef1f2; }
article.candidate { border-top: 1px dashed #a7a196; margin-top: 26px; }
footer { margin-top: 40px; font-size: 12px; color: #4a4a4a; border-top: 1px solid #c9c4b8; padding-top: 8px; }
@media print { body { background: #ffffff; } article.candidate { break-before: page; } }
"""


def _e(value) -> str:
    return html.escape(str(value), quote=True)


def _volts(value) -> str:
    return "—" if value is None else format_quantity(value, "V", 5)


def _table(headers: list[str], rows: list[str], css_class: str = "") -> str:
    head = "".join(f"<th>{_e(h)}</th>" for h in headers)
    klass = f' class="{css_class}"' if css_class else ""
    return f"<table{klass}><thead><tr>{head}</tr></thead><tbody>{''.join(rows)}</tbody></table>"


def _number_cell(value, shown: str) -> str:
    """A numeric cell: the shown text, and the exact value in ``data-value``."""
    exact = "" if value is None else repr(value)
    return f'<td class="num" data-value="{_e(exact)}">{_e(shown)}</td>'


#: Shortlist columns: (heading, column, how to show a value).
SHORTLIST_COLUMNS: tuple[tuple[str, str, object], ...] = (
    ("#", "rank", str),
    ("stack", "stack", str),
    ("elements", "parts", str),
    ("R", "resistor_ohm", lambda v: format_quantity(v, "Ω")),
    ("rail nominal", "vout_nom_v", _volts),
    ("rail lowest", "vout_low_v", _volts),
    ("rail highest", "vout_high_v", _volts),
    ("worst error", "error_v", lambda v: format_quantity(v, "V")),
    ("margin", "margin", lambda v: f"{100 * v:.1f} %"),
    ("meets", "meets", lambda v: "yes" if v else "no"),
    ("on front", "pareto", lambda v: "front" if v else ""),
    ("least stack current", "i_min_a", lambda v: format_quantity(v, "A", 3)),
    ("near limit", "near_limit", lambda v: "!" if v else ""),
    ("cautions", "cautions", str),
)
_TEXT_COLUMNS = {"stack", "meets", "pareto", "near_limit", "cautions"}


def _shortlist_section(report: ReviewReport) -> str:
    frame = report.shortlist
    if frame is None or frame.empty:
        reason = getattr(report.summary, "main_rejection", None) or "no candidate"
        return (f'<section id="shortlist"><h2>Shortlist</h2><p>No feasible design. Most candidates were '
                f"rejected because: {_e(reason)}.</p></section>")
    with_conditions = bool(frame["conditions"].astype(str).str.len().gt(0).any())
    rows = []
    for record in frame_records(frame):
        cells = []
        for _, column, show in SHORTLIST_COLUMNS:
            value = record[column]
            shown = "—" if value is None else show(value)
            if column in _TEXT_COLUMNS:
                cells.append(f'<td data-column="{column}" data-value="{_e(value)}">{_e(shown)}</td>')
            else:
                cells.append(_number_cell(value, shown).replace("<td ", f'<td data-column="{column}" ', 1))
        if with_conditions:
            cells.append(f'<td data-column="conditions">{_e(record["conditions"])}</td>')
        link = f'<a href="#rank-{record["rank"]:02d}">details</a>'
        rows.append(f'<tr data-rank="{record["rank"]}">{"".join(cells)}<td>{link}</td></tr>')
    headers = [h for h, _, _ in SHORTLIST_COLUMNS] + (["conditions of use"] if with_conditions else []) + [""]
    meeting = int(frame["meets"].sum())
    lead = (f"{len(frame)} designs, best first; {meeting} meet the tolerance at every corner."
            + (" Where fewer meet, the closest feasible designs fill the list." if meeting < len(frame) else "")
            + f" ! marks a design in which a part or the resistor comes within {NEAR_LIMIT_MARGIN:.0%} of its allowed"
            " power at some corner.")
    return (f'<section id="shortlist"><h2>Shortlist</h2><p>{_e(lead)}</p>'
            f"{_table(headers, rows, 'shortlist')}</section>")


def _figure(svg: dict[str, str], name: str, caption: str) -> str:
    if name not in svg:
        return ""
    return f'<figure id="figure-{name}" data-figure="{name}">{svg[name]}<figcaption>{_e(caption)}</figcaption></figure>'


def _spec_section(spec: RailSpec, extra_lines: tuple[str, ...] | list[str] = ()) -> str:
    lines = [line for line in describe_spec(spec) if not line.startswith("Caution:")] + list(extra_lines)
    items = "".join(f"<li>{_e(line)}</li>" for line in lines)
    return f'<section id="spec"><h2>Requirement</h2><ul class="plain">{items}</ul></section>'


def _search_section(report: ReviewReport, svg: dict[str, str]) -> str:
    summary = report.summary
    items = "".join(f"<li>{_e(line.strip())}</li>" for line in summary_lines(summary))
    scatter = report.scatter
    caption = (
        f"Each circle is a feasible design the search returned ({0 if scatter is None else len(scatter)} of the "
        f"{summary.feasible} feasible stacks it solved; the search keeps only its best designs, and stacks it "
        "proved could not rank there were never solved). Squares are the shortlist, numbered by rank; the "
        "dashed step is the Pareto front (no design has both less error and more margin); the hatched band "
        "meets the tolerance."
    )
    return (f'<section id="search"><h2>Search</h2><ul class="plain">{items}</ul>'
            f"{_figure(svg, 'error-vs-margin', caption)}</section>")


def _verdict(document: dict) -> str:
    if document["meets"]:
        return "Meets the spec at every corner."
    if document["feasible"]:
        return "Feasible, but outside the tolerance window at some corner."
    return f"Not feasible ({document['reason']})."


def _corner_table(candidate: CandidateReview) -> str:
    document, spec = candidate.document, candidate.design.spec
    corners = document["corners"]
    rails = [c["vout_v"] for c in corners if c["solved"]]
    low, high = (min(rails), max(rails)) if rails else (None, None)
    load_key = "load_ohm" if spec.load_kind == "resistance" else "load_a"
    rows = []
    for corner in corners:
        rail = corner["vout_v"]
        mark = "lowest rail" if rail is not None and rail == low else "highest rail" if rail is not None and rail == high else ""
        if not corner["solved"]:
            mark = f"no solution: {corner['status']}"
        load = format_quantity(corner[load_key], "Ω" if load_key == "load_ohm" else "A", 3)
        junction = corner["junction_c"]
        cells = [
            _number_cell(corner["index"], str(corner["index"])),
            f"<td>{_e(corner['label'])}</td>",
            _number_cell(corner["supply_v"], format_quantity(corner["supply_v"], "V")),
            _number_cell(corner[load_key], load),
            _number_cell(corner["ambient_c"], f"{corner['ambient_c']:g} °C"),
            _number_cell(corner["resistor_ohm"], format_quantity(corner["resistor_ohm"], "Ω")),
            _number_cell(rail, _volts(rail)),
            _number_cell(corner["stack_current_a"], "—" if rail is None else format_quantity(corner["stack_current_a"], "A", 3)),
            _number_cell(corner["resistor_power_w"], "—" if rail is None else format_quantity(corner["resistor_power_w"], "W", 3)),
            _number_cell(max(junction) if junction else None, "—" if not junction else f"{max(junction):.1f} °C"),
            f"<td>{_e(mark)}</td>",
        ]
        extreme = ' class="extreme"' if mark else ""
        rows.append(f"<tr{extreme}>{''.join(cells)}</tr>")
    headers = ["#", "corner", "supply", "load", "ambient", "R", "rail", "stack current", "R power",
               "hottest junction", "note"]
    return _table(headers, rows, "corners")


def _margin_table(candidate: CandidateReview) -> str:
    design, document = candidate.design, candidate.document
    parts, spec = design.parts, design.spec
    rows = []
    for element, index in zip(document["elements"], design.stack, strict=True):
        cells = [
            _number_cell(element["position"], str(element["position"])),
            f"<td>{_e(element['part'])}</td>",
            f"<td>{_e(parts.family[index])}</td>",
            f"<td>{_e(parts.description[index])}</td>",
            f"<td>{_e(parts.package[index])}</td>",
            _number_cell(element["worst_power_w"], format_quantity(element["worst_power_w"] or 0.0, "W", 3)),
            _number_cell(float(parts.pd_w[index]), format_quantity(float(parts.pd_w[index]), "W")),
            _number_cell(element["worst_margin"], "—" if element["worst_margin"] is None else f"{100 * element['worst_margin']:.1f} %"),
        ]
        rows.append(f"<tr>{''.join(cells)}</tr>")
    resistor_power = document["metrics"]["resistor_worst_power_w"]
    resistor_margin = None if resistor_power is None else 1.0 - resistor_power / spec.resistor_rating_w
    rows.append(
        "<tr><td></td><td>series resistor</td><td>resistor</td>"
        f"<td>{_e(format_quantity(design.resistor_ohm, 'Ω'))}, ±{spec.resistor_tolerance * 100:g} %</td><td></td>"
        + _number_cell(resistor_power, "—" if resistor_power is None else format_quantity(resistor_power, "W", 3))
        + _number_cell(spec.resistor_rating_w, format_quantity(spec.resistor_rating_w, "W"))
        + _number_cell(resistor_margin, "—" if resistor_margin is None else f"{100 * resistor_margin:.1f} %")
        + "</tr>"
    )
    headers = ["position", "part", "family", "description", "package", "worst power", "rated power", "worst margin"]
    return _table(headers, rows, "margins")


def _metrics_list(document: dict) -> str:
    m = document["metrics"]

    def shown(value, text):
        return "—" if value is None else text

    lines = [
        f"rail {_volts(document['vout_nom_v'])} nominal, {_volts(document['vout_low_v'])} … "
        f"{_volts(document['vout_high_v'])} worst case; worst error "
        + shown(document["error_v"], format_quantity(document["error_v"] or 0.0, "V"))
        + f" (allowed {format_quantity(document['tolerance_v'], 'V')})",
        "least stack current " + shown(document["i_min_a"], format_quantity(document["i_min_a"] or 0.0, "A", 3))
        + "; least dissipation margin " + shown(document["margin"], f"{100 * (document['margin'] or 0.0):.1f} %"),
        "line regulation " + shown(m["line_regulation_mv_per_v"], f"{m['line_regulation_mv_per_v'] or 0:.4g} mV/V")
        + f" ({m['regulation_model']}), ripple attenuation "
        + shown(m["ripple_attenuation_db"], f"{m['ripple_attenuation_db'] or 0:.1f} dB") + f" ({m['ripple_model']})"
        + ", load regulation " + shown(m["load_regulation_mv_per_ma"], f"{m['load_regulation_mv_per_ma'] or 0:.4g} mV/mA")
        + ", rail tempco " + shown(m["tempco_mv_per_k"], f"{m['tempco_mv_per_k'] or 0:.4g} mV/K") + " at nominal",
        # hottest_corner is 1-based in the check document, as every corner reference.
        "hottest junction " + shown(m["hottest_junction_c"], f"{m['hottest_junction_c'] or 0:.1f} °C")
        + f" at corner {m['hottest_corner']}",
    ]
    return '<ul class="plain">' + "".join(f"<li>{_e(line)}</li>" for line in lines) + "</ul>"


def _monte_carlo_caption(design: CheckedDesign) -> str:
    mc = design.monte_carlo
    spread = ", ".join(f"{PERCENTILE_NAMES[p]} {format_quantity(v, 'V', 5)}" for p, v in mc.percentiles.items())
    return (
        f"{mc.samples} units (seed {mc.seed}), each with its parts' tolerances and TC spreads and the resistor's "
        "tolerance and TCR drawn once (normal, 3 sigma at the limit, truncated there), and each solved at the environment "
        "corners (supply × load × ambient extremes). Yield {mc.yield_fraction:.2%} (95 % Wilson interval {mc.yield_low:.2%} … "
        f"{mc.yield_high:.2%}): units inside the hatched window and feasible at every corner; solved "
        f"{mc.solved_fraction:.2%}." + (f" Rail over every unit and corner: {spread}." if spread else "")
    )


def _candidate_section(candidate: CandidateReview, svg: dict[str, str], fixes) -> str:
    from selector.views import report_evidence as evidence_sections
    from selector.views.report_fixes import fixes_section

    key, document = candidate.key, candidate.document
    how = "chosen from the series" if candidate.design.resistor_chosen else "as given"
    parts = [
        f'<article class="candidate" id="{key}" data-stack="{_e(document["stack"])}">',
        f"<h2>{_e(candidate.title)}</h2>",
        evidence_sections.candidate_failure(candidate),
        f'<p><span class="verdict">{_e(_verdict(document))}</span> Series resistor '
        f"{_e(format_quantity(candidate.design.resistor_ohm, 'Ω'))} ({_e(how)}).</p>",
        _metrics_list(document),
    ]
    if candidate.conditions:
        parts.append(f'<p class="conditions"><strong>Conditions of use:</strong> {_e(candidate.conditions)}</p>')
    parts += [
        "<h3>Corners</h3>",
        '<p>All 32 worst-case corners; the lowest and highest rail are in bold.</p>',
        _corner_table(candidate),
        "<h3>Error budget</h3>",
        _figure(svg, f"{key}-budget", "Each source alone at its extremes with every other at nominal, solved exactly: "
                "the bars are the rail's shift below and above the nominal rail; the marks are the small-signal "
                "estimate; 'interaction' is what the 32 corners add beyond the sum of the single shifts."),
        fixes_section(fixes),
        "<h3>Margin per part</h3>",
        '<p>Worst power over the corners and the rated power; the margin is taken against the power allowed '
        "at each corner's ambient, min(rated, (Tj max − Ta)/θ).</p>",
        _margin_table(candidate),
        "<h3>Plots</h3>",
        "" if f"{key}-supply" in svg else "<p>Sweeps are drawn for the first designs only (--sweeps).</p>",
        _figure(svg, f"{key}-supply", "Rail against supply with the exact resistor and every element at nominal, one "
                "curve per load extreme and ambient extreme; the shaded band is the rail over those curves with "
                "every part at either end of its tolerance and TC spread and the resistor at either end of its "
                "tolerance and TCR (red where it leaves the window); hatched: the tolerance window; tinted: the "
                "spec's supply range."),
        _figure(svg, f"{key}-ambient", "Rail against ambient temperature (self-heating included), one curve per "
                "supply extreme and load extreme, with the same worst-case band (red outside the window); tinted: "
                "the spec's ambient range."),
        _figure(svg, f"{key}-monte-carlo", _monte_carlo_caption(candidate.design)),
    ]
    cautions = document["cautions"]
    if cautions:
        parts += ["<h3>Cautions</h3>"] + [f'<p class="caution">{_e(line)}</p>' for line in cautions]
    parts.append("</article>")
    return "".join(parts)


def report_cautions(report: ReviewReport) -> list[str]:
    """Every caution of the report, once each, spec cautions first, the deferral last."""
    # Spec cautions come back from every design; they are shown once, without a design name.
    shared = [f"{line} (this tool is not a safety assessment)" for line in spec_cautions(report.spec)]
    lines = list(shared)
    for candidate in report.candidates:
        lines += [f"{candidate.title}: {line}" for line in design_cautions(candidate.design) if line not in shared]
    return list(dict.fromkeys(lines)) + [DEFER]


def _cautions_section(report: ReviewReport) -> str:
    items = "".join(f'<p class="caution">{_e(line)}</p>' for line in report_cautions(report))
    return f'<section id="cautions"><h2>Cautions</h2>{items}</section>'


def _footer(report: ReviewReport) -> str:
    when = report.generated.astimezone(datetime.UTC).strftime("%Y-%m-%d %H:%M:%S UTC")
    demo = report.evidence is None or report.evidence.uses_demo_parts
    return (
        f'<footer id="footer"><p>Library: <span data-field="library">{_e(report.library_location)}</span>; '
        f'schema revision <span data-field="schema">{_e(report.schema_revision or "none")}</span>. '
        f'Report made <time data-field="time" datetime="{_e(report.generated.isoformat())}">{_e(when)}</time> by '
        f"railwright {_e(__version__)}."
        + (" Parts data in the bundled demo library is invented." if demo else "") + "</p></footer>"
    )


def render_html(report: ReviewReport, svg: dict[str, str], fixes: dict | None = None) -> str:
    """The report as one HTML page.

    Parameters
    ----------
    report : ReviewReport
    svg : dict of str to str
        Inline SVG per figure name (see :func:`report_figures`); missing figures are left out.
    fixes : dict, optional
        The what-if lists by design key (:func:`selector.views.report_fixes.report_fixes`);
        designs without one get no what-if section.

    Returns
    -------
    str
        A complete HTML5 document with inline CSS and SVG and no external reference.
    """
    spec = report.spec
    window = f"{format_quantity(spec.target_v, 'V')} ± {format_quantity(spec.tolerance_v, 'V')}"
    if report.shortlist is not None:
        title = f"Rail design review: {window}, search"
        lead = f"The search's shortlist and the worst-case proof of each of its {len(report.candidates)} designs."
    else:
        title = f"Rail design review: {window}, {report.candidates[0].document['stack']}"
        lead = "The worst-case proof of one design."
    from selector.views import report_evidence as evidence
    from selector.views.saved_design_report import saved_design_section

    body = [f"<h1>{_e(title)}</h1>", f'<p class="lead">{_e(lead)}</p>', evidence.approval_failure_section(report),
            evidence.demo_notice(report), saved_design_section(report),
            _spec_section(spec, evidence.requirement_lines(report))]
    if report.shortlist is not None:
        body += [_search_section(report, svg), _shortlist_section(report)]
    fixes = fixes or {}
    body += [_candidate_section(candidate, svg, fixes.get(candidate.key)) for candidate in report.candidates]
    body += [evidence.approval_section(report), evidence.parameters_section(report), _cautions_section(report),
             evidence.provenance_section(report), evidence.signoff_section(report), _footer(report)]
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{_e(title)}</title><style>{STYLE_SHEET}{evidence.EVIDENCE_STYLE}</style></head>"
        f"<body><main>{''.join(body)}</main></body></html>\n"
    )

