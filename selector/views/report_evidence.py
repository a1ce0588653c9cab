"""The evidence a reviewer signs against, as sections of the design review report.

:func:`gather_evidence` collects, for the parts the report's designs use, today's
records and list entries (:func:`selector.catalog.design_snapshot.part_snapshot`), the
parameter values the physics used and whether each was given or defaulted, the spec's
source (file name, SHA-256, options), the library's content hash
(:mod:`selector.catalog.library_hash`), its schema revision and the tool's version.

The section functions render it: the red, verdict-level failure when a design uses a
part its list does not allow (banned, no-new-design, a status the spec did not ask for,
or not on the list), the statuses allowed and found, each part's approval, the parts
data, the provenance, the sign-off lines and — only when a demo set is used — the demo
notice. Every text is escaped.
"""

from __future__ import annotations

import datetime
from dataclasses import dataclass, field

import numpy as np

from selector import __version__
from selector.catalog.approved_lists import DEFAULT_USABLE_STATUSES
from selector.catalog.design_snapshot import DEMO_SOURCE, part_snapshot, uses_demo_data, value_text
from selector.catalog.library_hash import content_hash
from selector.catalog.parts_import import RULES
from selector.catalog.saved_designs import audit_chain_status
from selector.files.csv_cells import format_number
from selector.spec.part_fields import CONTRACT_DEFAULTS
from selector.spec.spec_source import SpecSource
from selector.views.design_lines import NO_CHAIN
from selector.views.part_sheet import FORWARD_COLUMNS, RATING_COLUMNS, ZENER_COLUMNS

# The report's own cell helpers; report_html imports this module only when it renders.
from selector.views.report_html import _e, _number_cell, _table

#: Columns of the approval table: (heading, list-entry field). A field added to list
#: entries (see :data:`selector.catalog.design_snapshot.ENTRY_FIELDS`) is one more pair.
APPROVAL_COLUMNS: tuple[tuple[str, str], ...] = (
    ("status", "status"), ("reason", "reason"), ("set by", "by"), ("since (UTC)", "since"),
    ("condition of use", "condition"),
)  # fmt: skip
#: Parameters every family's model uses besides its own (contract version 2).
_SHARED_COLUMNS: tuple[str, ...] = ("tc_tol_v_per_k",)

EVIDENCE_STYLE = """
.failure { border: 3px solid #a40000; background: #fbe9e7; color: #5c0000; padding: 6px 12px; margin: 12px 0; }
.failure h2 { color: #a40000; border-bottom-color: #a40000; margin-top: 4px; }
p.failure-title { font-weight: 700; margin: 4px 0; }
.demo { border: 2px dashed #8a4b08; background: #f8f1e4; padding: 6px 12px; margin: 12px 0; }
tr.changed td, td.changed, li.changed { background: #fff1a8; font-weight: 700; }
tr.refused td { color: #a40000; font-weight: 700; }
table.signoff td { height: 2.6em; min-width: 11em; vertical-align: bottom; }
table.signoff td.blank { border-bottom: 1.5px solid #1d1d1d; }
code.hash { font-size: 11.5px; word-break: break-all; }
@media print { .failure, .demo, tr.changed td { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
               section#sign-off { break-inside: avoid; } }
"""


@dataclass(frozen=True)
class ParameterRow:
    """One parameter of one part as the physics used it."""

    column: str
    value: float
    origin: str


@dataclass(frozen=True)
class ReportEvidence:
    """What the evidence sections show (see :func:`gather_evidence`).

    Attributes
    ----------
    list_name : str or None
        The spec's approved-parts list.
    allowed_statuses : tuple of str
    parts : dict
        Today's :func:`~selector.catalog.design_snapshot.part_snapshot` of the used parts.
    parameters : dict of str to list of ParameterRow
    spec_source : SpecSource or None
        None when the spec was handed over as an object, without a file or options.
    library_sha256, schema_revision, tool_version : str
    prepared_by : str
    chain_status : str or None
        The audit trail's hash chain, when the library keeps one.
    verification : DesignVerification or None
        For the report of a saved design: its re-verification.
    """

    list_name: str | None
    allowed_statuses: tuple[str, ...]
    parts: dict
    parameters: dict[str, list[ParameterRow]]
    spec_source: SpecSource | None
    library_sha256: str
    schema_revision: str
    tool_version: str
    prepared_by: str
    chain_status: str | None = None
    verification: object | None = None
    saved_changes: dict[tuple[str, str], object] = field(default_factory=dict)

    @property
    def uses_demo_parts(self) -> bool:
        return uses_demo_data(self.parts)


def _origin(column: str, record: dict, zener: bool) -> str:
    if record.get(column) is not None:
        return "given"
    if column == "theta_ja_k_per_w":
        return "derived: (tj_max_c − 25 °C)/pd_w"
    if column == "i_min_a":
        return "derived: izk_a" if zener else "default"
    if column == "if_max_a":
        return "not given: no limit"
    return "default" if column in CONTRACT_DEFAULTS else "not given"


def parameter_rows(parts, index: int, record: dict) -> list[ParameterRow]:
    """Every parameter of the part at ``index`` of a PartSet as used, and its origin."""
    zener = bool(parts.is_zener[index])
    columns = (ZENER_COLUMNS if zener else FORWARD_COLUMNS) + _SHARED_COLUMNS + RATING_COLUMNS
    return [ParameterRow(column, float(getattr(parts, column)[index]), _origin(column, record, zener))
            for column in dict.fromkeys(columns)]


def gather_evidence(library, spec, candidates, *, spec_source: SpecSource | None = None,
                    prepared_by: str | None = None, verification=None) -> ReportEvidence:
    """Collect the evidence of a report's designs (one reading transaction for the data).

    Parameters
    ----------
    library : selector.catalog.store.Library
    spec : RailSpec
    candidates : list of CandidateReview
    spec_source : SpecSource, optional
    prepared_by : str, optional
        Who prepared the report; default the login name.
    verification : DesignVerification, optional
        The re-verification of a saved design, whose differences are highlighted.
    """
    from selector.catalog import audit

    names = list(dict.fromkeys(part for candidate in candidates for part in candidate.design.elements))
    with library.session() as session:
        snapshot = part_snapshot(session, names)
        library_sha256 = content_hash(session)
    parameters = {}
    for candidate in candidates:
        parts = candidate.design.parts
        for index in candidate.design.stack:
            name = str(parts.part[index])
            if name in snapshot and name not in parameters:
                parameters[name] = parameter_rows(parts, int(index), snapshot[name]["record"])
    changes = {(change.part, change.field): change.old for change in getattr(verification, "field_changes", [])}
    return ReportEvidence(
        list_name=spec.list_name, allowed_statuses=tuple(spec.statuses or DEFAULT_USABLE_STATUSES),
        parts=snapshot, parameters=parameters, spec_source=spec_source, library_sha256=library_sha256,
        schema_revision=library.schema_revision(), tool_version=__version__,
        prepared_by=audit.person(prepared_by), chain_status=audit_chain_status(library),
        verification=verification, saved_changes=changes,
    )


# Sections --------------------------------------------------------------------------------


def _list_entry(evidence: ReportEvidence, part: str) -> dict | None:
    return evidence.parts.get(part, {}).get("lists", {}).get(evidence.list_name)


def failure_items(candidate) -> str:
    """The list's refusals of one design as ``<li>`` items (empty when it allows every part)."""
    return "".join(f"<li>{_e(warning)}</li>" for warning in candidate.list_warnings)


def approval_failure_section(report) -> str:
    """The red, verdict-level failure at the top: designs using parts their list refuses."""
    failing = [candidate for candidate in report.candidates if candidate.list_warnings]
    evidence = report.evidence
    if not failing or evidence is None:
        return ""
    allowed = ", ".join(evidence.allowed_statuses)
    items = "".join(f"<li><strong>{_e(candidate.title)}</strong><ul>{failure_items(candidate)}</ul></li>"
                    for candidate in failing)
    return (
        '<section id="approval-failure" class="failure"><h2>FAILS the approved-parts list</h2>'
        f"<p>The list '{_e(evidence.list_name)}' allows only parts that are {_e(allowed)}. Whatever the electrical "
        "verdict below says, a design listed here may not be built from this list.</p>"
        f'<ul class="plain">{items}</ul></section>'
    )


def candidate_failure(candidate) -> str:
    """The verdict-level failure inside one design's section (empty when its list allows it)."""
    if not candidate.list_warnings:
        return ""
    return (f'<div class="failure"><p class="failure-title">FAILS the approved-parts list: this design may not be '
            f'built from it.</p><ul class="plain">{failure_items(candidate)}</ul></div>')


def requirement_lines(report) -> list[str]:
    """Lines the Requirement section adds: the statuses allowed, and those found."""
    evidence = report.evidence
    if evidence is None:
        return []
    if evidence.list_name is None:
        return ["Approved-parts list: none named; parts were taken from the whole library and no status was required."]
    found = []
    for part in evidence.parameters:
        entry = _list_entry(evidence, part)
        status = entry["status"] if entry else "not on the list"
        verdict = "allowed" if entry and status in evidence.allowed_statuses else "NOT allowed"
        found.append(f"{part} {status} ({verdict})")
    return [f"Approved-parts list '{evidence.list_name}': statuses allowed {', '.join(evidence.allowed_statuses)}; "
            f"found {'; '.join(found) if found else 'no parts'}."]


def approval_section(report) -> str:
    """Each used part's standing: on the spec's list, or (without one) on every list."""
    evidence = report.evidence
    if evidence is None:
        return ""
    headers = ["part", "list", *[heading for heading, _ in APPROVAL_COLUMNS]]
    rows = []
    for part in evidence.parameters:
        lists = evidence.parts[part]["lists"]
        shown = {evidence.list_name: lists.get(evidence.list_name)} if evidence.list_name else lists
        for list_name, entry in shown.items():
            refused = evidence.list_name is not None and (entry is None or entry["status"] not in evidence.allowed_statuses)
            cells = [part, list_name] + ([entry.get(key, "") for _, key in APPROVAL_COLUMNS] if entry
                                         else ["not on the list"] + [""] * (len(APPROVAL_COLUMNS) - 1))
            klass = ' class="refused"' if refused else ""
            rows.append(f"<tr{klass}>" + "".join(f"<td>{_e(cell)}</td>" for cell in cells) + "</tr>")
    if evidence.list_name is None:
        lead = "The spec names no approved-parts list, so none was enforced; each part's entries on the library's lists:"
    else:
        lead = (f"Each part's entry on the list '{evidence.list_name}' (allowed: "
                f"{', '.join(evidence.allowed_statuses)}); refused parts are in red.")
    body = _table(headers, rows, "approval") if rows else "<p>No used part is on any list.</p>"
    return f'<section id="approval"><h2>Approval</h2><p>{_e(lead)}</p>{body}</section>'


def _parameter_cells(evidence: ReportEvidence, part: str, row: ParameterRow) -> str:
    unit = RULES[row.column].kind.symbol
    shown = "no limit" if np.isinf(row.value) else format_number(row.value)
    value = _number_cell(None if np.isinf(row.value) else row.value, shown)
    origin = row.origin
    klass = ""
    if (part, row.column) in evidence.saved_changes:
        klass = ' class="changed"'
        origin += f"; saved: {value_text(evidence.saved_changes[(part, row.column)])}"
    return f"<tr{klass}><td>{_e(part)}</td><td>{_e(row.column)}</td>{value}<td>{_e(unit)}</td><td>{_e(origin)}</td></tr>"


def parameters_section(report) -> str:
    """Every parameter of every used part as the physics used it, its unit and origin."""
    evidence = report.evidence
    if evidence is None or not evidence.parameters:
        return ""
    rows = []
    for part, parameters in evidence.parameters.items():
        record = evidence.parts[part]["record"]
        source = record.get("source") or "(not given)"
        rows.append(f'<tr><td colspan="5"><strong>{_e(part)}</strong> ({_e(record.get("family"))}); '
                    f"source: {_e(source)}</td></tr>")
        rows += [_parameter_cells(evidence, part, row) for row in parameters]
    return (
        '<section id="parameters"><h2>Parts data</h2><p>Every parameter the models used, in SI units, exactly as '
        "computed with (given in the library, a contract default, or derived); a highlighted row differs from the "
        f"saved snapshot.</p>{_table(['part', 'parameter', 'value used', 'unit', 'origin'], rows, 'parameters')}"
        "</section>"
    )


def _spec_rows(source: SpecSource | None) -> list[tuple[str, str]]:
    if source is None:
        return [("spec", "handed over as an object: no file or options recorded")]
    rows = [("spec file", source.file_name or "(none: every key given by an option)")]
    if source.sha256:
        rows.append(("spec file SHA-256", source.sha256))
    rows.append(("spec options", " ".join(source.option_texts()) or "(none)"))
    return rows


def provenance_section(report) -> str:
    """Which spec and library produced the report, and with which version of the tool."""
    evidence = report.evidence
    if evidence is None:
        return ""
    rows = _spec_rows(evidence.spec_source) + [
        ("library", report.library_location),
        ("library content SHA-256", evidence.library_sha256),
    ]
    verification = evidence.verification
    if verification is not None:
        then = verification.saved.library_sha256
        same = "the same as today" if then == evidence.library_sha256 else "different from today's"
        rows.append(("library content SHA-256 at the save", f"{then} ({same})"))
    rows += [
        ("schema revision", evidence.schema_revision or "none"),
        ("railwright version", evidence.tool_version),
        ("audit trail", evidence.chain_status or NO_CHAIN),
    ]
    cells = [f"<tr><th>{_e(label)}</th><td>" + (f'<code class="hash">{_e(text)}</code>' if "SHA-256" in label
                                                else _e(text)) + "</td></tr>" for label, text in rows]
    return (
        '<section id="provenance"><h2>Provenance</h2><p>The library content hash is the SHA-256 of a canonical '
        "export of its parts and approved lists (see the README, 'Sign-off and saved designs'); it changes exactly "
        f"when a part or a list changes.</p><table class=\"provenance\"><tbody>{''.join(cells)}</tbody></table></section>"
    )


def signoff_section(report) -> str:
    """Prepared by (filled) and blank checked-by and approved-by lines, for print."""
    evidence = report.evidence
    if evidence is None:
        return ""
    day = report.generated.astimezone(datetime.UTC).date().isoformat()
    rows = [f"<tr><th>prepared by</th><td>{_e(evidence.prepared_by)}</td><th>date</th><td>{_e(day)}</td>"
            '<th>signature</th><td class="blank"></td></tr>']
    rows += [f'<tr><th>{role}</th><td class="blank"></td><th>date</th><td class="blank"></td>'
             '<th>signature</th><td class="blank"></td></tr>' for role in ("checked by", "approved by")]
    return (f'<section id="sign-off"><h2>Sign-off</h2><table class="signoff"><tbody>{"".join(rows)}</tbody></table>'
            "</section>")


def demo_notice(report) -> str:
    """The demo-data notice, only when a used part is a bundled, invented demo set."""
    evidence = report.evidence
    if evidence is None or not evidence.uses_demo_parts:
        return ""
    demo = [part for part, entry in evidence.parts.items() if entry["record"].get("source") == DEMO_SOURCE]
    return (f'<section id="demo-notice" class="demo"><p><strong>Demo data:</strong> {_e(", ".join(demo))} '
            "are bundled demo sets with invented parameters, not any maker's data. Do not build from this report; "
            "put your own parts' data in the library and report again.</p></section>")
