"""A shortlist (the DataFrame of :mod:`selector.search.shortlist`) as a terminal table, a CSV
file and JSON text, with the columns of :data:`selector.search.shortlist.COLUMNS`."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pandas as pd

from selector.files.csv_writer import write_rows
from selector.search.shortlist import COLUMNS
from selector.spec.units import format_quantity


def _plain(value):
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def frame_records(frame: pd.DataFrame) -> list[dict]:
    """Rows as plain dicts (Python scalars; non-finite floats as None)."""
    return [{column: _plain(value) for column, value in row.items()} for row in frame.to_dict(orient="records")]


def write_shortlist_csv(frame: pd.DataFrame, destination: str | Path) -> int:
    """Write the shortlist CSV (spreadsheet-safe cells, exact floats); returns the row count."""
    return write_rows(destination, COLUMNS, frame_records(frame))


def shortlist_json(frame: pd.DataFrame, summary: dict, context: dict | None = None) -> str:
    """JSON text: ``{"shortlist": [rows…], "summary": {…}}`` (DESIGN §4), then ``context``
    (the spec, library hash, time and version) when given."""
    document = {"shortlist": frame_records(frame), "summary": summary}
    if context is not None:
        document["context"] = context
    return json.dumps(document, indent=2, ensure_ascii=False)


_TABLE = (
    ("#", "rank", lambda v: str(v)),
    ("stack", "stack", str),
    ("parts", "parts", str),
    ("R [Ω]", "resistor_ohm", lambda v: format_quantity(v, "", digits=3)),
    ("Vnom [V]", "vout_nom_v", lambda v: f"{v:.4f}" if math.isfinite(v) else "—"),  # NaN: no nominal solution
    ("Vlow [V]", "vout_low_v", lambda v: f"{v:.4f}"),
    ("Vhigh [V]", "vout_high_v", lambda v: f"{v:.4f}"),
    ("error [mV]", "error_v", lambda v: f"{1000 * v:.1f}"),
    ("window [mV]", "window_v", lambda v: f"{1000 * v:+.1f}"),
    ("P margin [%]", "margin", lambda v: f"{100 * v:.1f}"),
    ("!", "near_limit", lambda v: "!" if v else ""),
    ("meets", "meets", lambda v: "yes" if v else "no"),
    ("Pareto", "pareto", lambda v: "*" if v else ""),
)
#: Columns of :data:`_TABLE` aligned right.
_NUMERIC = {"rank", "parts", "resistor_ohm", "vout_nom_v", "vout_low_v", "vout_high_v", "error_v", "window_v",
            "margin"}
#: The line under the table that says what its marks mean.
TABLE_LEGEND = ("window: tolerance minus worst-case error (negative: outside); P margin: least dissipation margin; "
                "! a part or the resistor within {near:.0%} of its allowed power; * on the Pareto front of error, "
                "margin and part count")

#: Added to the legend when rows use parts with a condition or a status other than approved.
LIST_LEGEND = "; #N lines under the table: the list's conditions of use and parts not approved on it (statuses)"


def terminal_table(frame: pd.DataFrame, tolerance_v: float) -> str:
    """Aligned text table with units in the headers and engineering notation, and a
    one-line legend of its marks."""
    from selector.physics.design_cautions import NEAR_LIMIT_MARGIN

    frame = frame.assign(window_v=tolerance_v - frame["error_v"])
    headers = [title for title, _, _ in _TABLE]
    cells = [[show(row[column]) for _, column, show in _TABLE] for _, row in frame.iterrows()]
    widths = [max([len(h)] + [len(r[i]) for r in cells]) for i, h in enumerate(headers)]
    numeric = {i for i, (_, column, _) in enumerate(_TABLE) if column in _NUMERIC}

    def line(values):
        return "  ".join(v.rjust(w) if i in numeric else v.ljust(w) for i, (v, w) in enumerate(zip(values, widths, strict=True))).rstrip()

    legend = TABLE_LEGEND.format(near=NEAR_LIMIT_MARGIN)
    if any(frame.get("statuses", ())) or any(frame.get("conditions", ())):
        legend += LIST_LEGEND
    return "\n".join([line(headers), line(["-" * w for w in widths])] + [line(r) for r in cells] + [legend])


def summary_lines(summary) -> list[str]:
    """Human summary: counts by outcome, elapsed time."""
    lines = [
        f"Considered {summary.considered} stacks of {summary.part_count} usable parts in {summary.elapsed_s:.2f} s; "
        f"solved {summary.solved} exactly ({summary.designs_solved} stack–resistor designs × 32 corners).",
    ]
    lines += [f"  pruned, {reason}: {count}" for reason, count in summary.pruned.items()]
    lines += [f"  infeasible after solving, {reason}: {count}" for reason, count in summary.infeasible.items()]
    lines.append(f"  feasible: {summary.feasible}, meeting the spec: {summary.meeting}")
    if summary.closest_resistor_conflict and not summary.meeting:
        lines.append(f"  closest to having a resistor: {summary.closest_resistor_conflict}")
    return lines


def nothing_meets_lines(frame: pd.DataFrame, summary, tolerance_v: float) -> list[str]:
    """Why a search met nothing: whether any feasible design comes within twice the
    tolerance, and the nearly feasible designs (closer to the target than any feasible one,
    but breaking a limit), each with what it breaks. Empty when something meets."""
    if summary.meeting:
        return []
    volts = lambda v: format_quantity(v, "V")  # noqa: E731
    lines = []
    if len(frame) and float(frame["error_v"].min()) > 2.0 * tolerance_v:
        lines.append(f"Nothing meets, and no feasible design comes within twice the tolerance ({volts(2 * tolerance_v)}): "
                     f"the closest is {volts(float(frame['error_v'].min()))} off where {volts(tolerance_v)} is allowed.")
    near = getattr(summary, "nearly_feasible", None) or []
    if near:
        lines.append("Nearly feasible (closer to the target than any feasible design, but each breaks a limit; "
                     "closest first):" if len(frame) else
                     "Nearly feasible (each breaks a limit; closest first, those without a solution at every corner "
                     "last):")  # fmt: skip
        for row in near:
            error = "—" if row["error_v"] is None else volts(row["error_v"])
            lines.append(f"  {row['stack']} with {format_quantity(row['resistor_ohm'], 'Ω')}: error {error}")
            lines += [f"    breaks: {text}" for text in row["breaks"]]
    return lines


def rejection_line(summary) -> str:
    """The line of a search that found nothing feasible: the limit that rejected the most
    candidates, and how many."""
    reason = summary.main_rejection
    if reason is None:
        return "No feasible design. Most candidates were rejected because: no candidate."
    count = summary.pruned.get(reason, 0) + summary.infeasible.get(reason, 0)
    return f"No feasible design. Most candidates were rejected because: {reason} ({count} of {summary.considered} stacks)."
