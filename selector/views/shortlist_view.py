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


def shortlist_json(frame: pd.DataFrame, summary: dict) -> str:
    """JSON text: ``{"shortlist": [rows…], "summary": {…}}``."""
    return json.dumps({"shortlist": frame_records(frame), "summary": summary}, indent=2, ensure_ascii=False)


_TABLE = (
    ("#", "rank", lambda v: str(v)),
    ("stack", "stack", str),
    ("n", "parts", str),
    ("R [Ω]", "resistor_ohm", lambda v: format_quantity(v, "", digits=3)),
    ("Vnom [V]", "vout_nom_v", lambda v: f"{v:.4f}" if math.isfinite(v) else "—"),  # NaN: no nominal solution
    ("Vlow [V]", "vout_low_v", lambda v: f"{v:.4f}"),
    ("Vhigh [V]", "vout_high_v", lambda v: f"{v:.4f}"),
    ("error [mV]", "error_v", lambda v: f"{1000 * v:.1f}"),
    ("margin [%]", "margin", lambda v: f"{100 * v:.1f}"),
    ("!", "near_limit", lambda v: "!" if v else ""),
    ("meets", "meets", lambda v: "yes" if v else "no"),
    ("front", "pareto", lambda v: "*" if v else ""),
)


def terminal_table(frame: pd.DataFrame) -> str:
    """Aligned text table with units in the headers and engineering notation."""
    headers = [title for title, _, _ in _TABLE]
    cells = [[show(row[column]) for _, column, show in _TABLE] for _, row in frame.iterrows()]
    widths = [max([len(h)] + [len(r[i]) for r in cells]) for i, h in enumerate(headers)]
    numeric = {0, 2, 3, 4, 5, 6, 7, 8}

    def line(values):
        return "  ".join(v.rjust(w) if i in numeric else v.ljust(w) for i, (v, w) in enumerate(zip(values, widths, strict=True))).rstrip()

    legend = "! a part or the resistor within 20 % of its allowed power; * on the Pareto front"
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
    return lines
