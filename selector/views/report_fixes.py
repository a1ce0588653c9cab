"""The report's what-if list: for the first designs of a report, the variants from the
library that :func:`selector.search.what_if.what_if` solves exactly, and, for a design
dominated by its supply or ambient range, the widest such range at which it would meet.

Each what-if costs about a second on a 300-part library, so like the sweeps it is made
for the first ``--sweeps`` designs only.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from selector.physics.design_cautions import margin_words
from selector.spec.units import format_quantity
from selector.views.check_view import range_lines
from selector.views.report_html import _e, _number_cell, _table

#: Variants listed per design.
REPORT_FIXES = 8


@dataclass(frozen=True)
class DesignFixes:
    """What the report lists for one design: its variants, best first, and the range
    lines of :func:`selector.views.check_view.range_lines` (empty when they do not apply)."""

    fixes: list
    range_lines: list[str]


def report_fixes(report, sweep_designs: int) -> dict[str, DesignFixes]:
    """The what-if of the first ``sweep_designs`` designs of ``report``, by design key."""
    from selector.search.what_if import what_if

    found = {}
    for candidate in report.candidates[:sweep_designs]:
        design = candidate.design
        fixes = what_if(design.parts, design.stack, design.resistor_ohm, design.spec, report.usable_parts,
                        REPORT_FIXES)  # fmt: skip
        found[candidate.key] = DesignFixes(fixes, [line.strip() for line in range_lines(design)])
    return found


def fixes_section(found: DesignFixes | None) -> str:
    """The HTML of one design's what-if list (empty when it was not made)."""
    if found is None:
        return ""
    lead = ("<p>Variants from the library, each solved at all 32 corners with its resistor chosen anew "
            "(a changed resistor is the variant itself); best first. A swap keeps the part's family and a "
            "voltage within ±5 %, and the spec's approved list when it names one.</p>")
    ranges = "".join(f"<p>{_e(line)}</p>" for line in found.range_lines)
    if not found.fixes:
        return f"<h3>What if</h3>{lead}<p>No variant in the library to try.</p>{ranges}"
    rows = []
    for fix in found.fixes:
        error = format_quantity(fix.error_v, "V") if np.isfinite(fix.error_v) else "infeasible"
        klass = ' class="meets-yes"' if fix.meets else ""
        rows.append(
            f'<tr{klass} data-meets="{str(fix.meets).lower()}"><td>{_e(fix.change)}</td><td>{_e(fix.stack)}</td>'
            + _number_cell(fix.resistor_ohm, format_quantity(fix.resistor_ohm, "Ω"))
            + _number_cell(fix.error_v if np.isfinite(fix.error_v) else None, error)
            + _number_cell(fix.margin if np.isfinite(fix.margin) else None, margin_words(fix.margin, '.1%'))
            + f"<td>{'yes' if fix.meets else 'no'}</td></tr>"
        )
    table = _table(["change", "stack", "R", "worst error", "P margin", "meets"], rows, "what-if")
    return f"<h3>What if</h3>{lead}{table}{ranges}"
