"""What the ``designs`` commands print: saved revisions, the list of designs, re-verification.

Numbers in figures are shown in engineering notation; field changes show exact values
(:func:`selector.catalog.design_snapshot.value_text`), so a change in the last digit is
visible.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

from selector.catalog.audit import record_text
from selector.catalog.design_snapshot import entry_text
from selector.catalog.models import RECORD_COLUMNS
from selector.spec.units import format_quantity

#: What verify and the report say while the library keeps no hash chain of its audit trail.
NO_CHAIN = "hash chain not checked (this library keeps none)"
#: How each figure is shown: a unit symbol, or a formatter.
_FIGURE_UNITS: dict[str, str] = {
    "resistor_ohm": "Ω", "vout_nom_v": "V", "vout_low_v": "V", "vout_high_v": "V", "error_v": "V", "i_min_a": "A",
}


def figure_text(key: str, value) -> str:
    """One figure for a person: ``4.963 V``, ``46.2 %``, ``yes``; ``—`` when there is none."""
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if key in _FIGURE_UNITS:
        return format_quantity(float(value), _FIGURE_UNITS[key], 5)
    if key == "margin":
        from selector.physics.design_cautions import margin_words

        return f"{100 * float(value):.2f} %" if float(value) >= 0 else margin_words(float(value))
    return str(value)


def figures_line(figures: Mapping[str, object]) -> str:
    """The contract figures in one line."""
    return (
        f"rail {figure_text('vout_nom_v', figures.get('vout_nom_v'))} nominal, "
        f"{figure_text('vout_low_v', figures.get('vout_low_v'))} … {figure_text('vout_high_v', figures.get('vout_high_v'))}"
        f" worst case; error {figure_text('error_v', figures.get('error_v'))}; "
        f"margin {figure_text('margin', figures.get('margin'))}; "
        f"least stack current {figure_text('i_min_a', figures.get('i_min_a'))}"
    )


def _resistor_text(content) -> str:
    how = "chosen from the spec's series" if content.resistor_chosen else "as given"
    return f"{format_quantity(content.resistor_ohm, 'Ω')} ({how})"


def revision_lines(saved) -> list[tuple[str, str]]:
    """``designs show``: one revision as (label, text) lines, its parts' snapshot last."""
    content, source = saved.content, saved.content.spec_source
    spec = f"{source.file_name}, sha256 {source.sha256}" if source.file_name else "options only"
    if source.overrides:
        spec += "; options: " + " ".join(source.option_texts())
    lines = [
        ("design", f"{saved.name}, revision {saved.revision} of {saved.revisions}"),
        ("saved", f"{saved.saved_at.isoformat(timespec='seconds')} by {saved.saved_by}: {saved.reason}"),
        ("stack", content.stack),
        ("resistor", _resistor_text(content)),
        ("verdict", content.verdict),
        ("figures", figures_line(content.figures)),
        ("list", content.list_name or "(none: parts from the whole library)"),
    ]
    lines += [("list warning", line) for line in content.list_warnings]
    lines += [("condition", line) for line in content.list_conditions]
    lines += [
        ("spec", spec),
        ("library", f"content sha256 {saved.library_sha256}, schema revision {saved.schema_revision}, "
                    f"railwright {saved.tool_version}"),
    ]
    for part, entry in content.snapshot.items():
        record = entry["record"]
        lines.append((f"part {part}", f"{record.get('family')}; source: {record.get('source') or '(not given)'}"))
        lines.append(("", record_text(record, RECORD_COLUMNS[1:])))
        lines += [("", f"on '{name}': {entry_text(listed)}, since {listed['since']} by {listed['by']}")
                  for name, listed in entry["lists"].items()]
    return lines


def summary_rows(revisions: Sequence) -> list[dict[str, str]]:
    """``designs list``: one row per design (its latest revision)."""
    return [
        {
            "design": saved.name,
            "rev": str(saved.revision),
            "saved": saved.saved_at.date().isoformat(),
            "by": saved.saved_by,
            "design stack": f"{saved.content.stack} with {format_quantity(saved.content.resistor_ohm, 'Ω')}",
            "verdict at save": saved.content.verdict,
        }
        for saved in revisions
    ]


def verification_lines(verification) -> list[str]:
    """``designs verify``: one design's headline, then what changed since its save."""
    saved = verification.saved
    state = "holds" if verification.positive else "FAILS"
    news = "unchanged since the save" if verification.unchanged else "changed since the save"
    lines = [f"{saved.name}, revision {saved.revision} (saved {saved.saved_at.date().isoformat()} by "
             f"{saved.saved_by}): {state}, {news}"]
    then, now = saved.content.verdict, verification.verdict
    lines.append(f"  verdict: {now}" if then == now else f"  verdict: {then} \u2192 {now}")
    if verification.result is not None and not verification.result.meets:
        lines += [f"  fails: {failure.text}" for failure in verification.result.failures]
    lines += [f"  data: {change.text()}" for change in verification.field_changes]
    own_list = saved.content.list_name
    lines += [f"  status: {change.text()}" + ("" if change.list_name == own_list else " (not this design's list)")
              for change in verification.status_changes]
    lines += [f"  figure: {key} {figure_text(key, old)} \u2192 {figure_text(key, new)}"
              for key, old, new in verification.figure_changes()]
    lines += [f"  not allowed: {warning}" for warning in verification.list_warnings]
    lines += [f"  problem: {problem}" for problem in verification.problems]
    if verification.result is not None and not (verification.field_changes or verification.status_changes):
        lines.append("  data and statuses: unchanged")
    return lines


def verification_summary(verifications: Sequence, chain_status: str | None) -> list[str]:
    """The closing lines of ``designs verify``: counts, and the audit trail's chain."""
    failing = sum(not verification.positive for verification in verifications)
    lines = [f"verified {len(verifications)} saved design(s): {len(verifications) - failing} hold, {failing} fail"]
    lines.append(f"audit trail: {chain_status or NO_CHAIN}")
    return lines
