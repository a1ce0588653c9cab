"""The review report of a saved design (``report --design NAME``), re-verified today.

:func:`saved_design_review` checks the design's latest revision again
(:func:`selector.api.verify_design`, with the report's Monte Carlo run) and gathers the
report of it; :func:`saved_design_section` shows the revision and, highlighted,
everything that differs from its snapshot: parts data, list statuses, figures, verdict.
"""

from __future__ import annotations

from selector.catalog.design_snapshot import entry_text, value_text
from selector.errors import LibraryError
from selector.physics.montecarlo import DEFAULT_SAMPLES
from selector.views.check_view import check_json
from selector.views.design_lines import figure_text
from selector.views.report_html import CandidateReview, ReviewReport, _e, _now, _table


def saved_design_review(library, name: str, *, samples: int = DEFAULT_SAMPLES, seed: int = 0,
                        prepared_by: str | None = None) -> ReviewReport:
    """Gather the report of a saved design's latest revision, checked against today's library.

    Raises
    ------
    UnknownDesignError
        When no design has that name.
    LibraryError
        When the design cannot be checked again (its list renamed or gone, say); the
        message says why.
    """
    from selector.api import verify_design
    from selector.views.report_evidence import gather_evidence

    verification = verify_design(library, name, samples=samples, seed=seed)
    if verification.result is None:
        raise LibraryError(f"the saved design '{verification.saved.name}' {verification.verdict}")
    result = verification.result
    design = result.design
    candidate = CandidateReview(rank=None, design=design, document=check_json(design),
                                conditions="; ".join(result.list_conditions), list_warnings=tuple(result.list_warnings))
    evidence = gather_evidence(library, design.spec, [candidate], spec_source=verification.saved.content.spec_source,
                               prepared_by=prepared_by, verification=verification)
    return ReviewReport(design.spec, [candidate], None, None, None, library.location_text(),
                        evidence.schema_revision, _now(), evidence=evidence, usable_parts=result.usable_parts)


def _difference_rows(verification) -> list[str]:
    rows = []
    own_list = verification.saved.content.list_name
    for change in verification.field_changes:
        rows.append(("parts data", f"{change.part}: {change.field}", change.old, change.new))
    for change in verification.status_changes:
        note = "" if change.list_name == own_list else " (not this design's list)"
        rows.append(("list status", f"{change.part} on '{change.list_name}'{note}",
                     entry_text(change.old), entry_text(change.new)))
    for key, old, new in verification.figure_changes():
        rows.append(("figure", key, figure_text(key, old), figure_text(key, new)))
    then, now = verification.saved.content.verdict, verification.verdict
    if then != now:
        rows.append(("verdict", "verdict", then, now))
    return [f'<tr class="changed"><td>{_e(kind)}</td><td>{_e(what)}</td><td>{_e(value_text(old))}</td>'
            f"<td>{_e(value_text(new))}</td></tr>" for kind, what, old, new in rows]


def saved_design_section(report: ReviewReport) -> str:
    """The saved revision and what differs today (empty for a report of no saved design)."""
    evidence = report.evidence
    verification = getattr(evidence, "verification", None)
    if verification is None:
        return ""
    saved = verification.saved
    state = "still holds" if verification.positive else "FAILS"
    lead = (f"Revision {saved.revision} of {saved.revisions}, saved {saved.saved_at.isoformat(timespec='seconds')} by "
            f"{saved.saved_by}: {saved.reason}. Verdict at the save: {saved.content.verdict}. Checked again against "
            f"today's library and lists: {verification.verdict}.")
    rows = _difference_rows(verification)
    if rows:
        body = ("<p>Differences from the saved snapshot (highlighted):</p>"
                + _table(["what", "item", "at the save", "today"], rows, "differences"))
    else:
        body = "<p>Nothing differs from the saved snapshot: parts data, list statuses, figures and verdict are the same.</p>"
    klass = "" if verification.positive else ' class="failure"'
    return (f'<section id="saved-design"{klass}><h2>Saved design \u2018{_e(saved.name)}\u2019: {_e(state)}</h2>'
            f"<p>{_e(lead)}</p>{body}</section>")
