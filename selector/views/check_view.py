"""What ``railwright check`` shows: one design's proof as terminal lines or a JSON-able dict.

The JSON keys of the interface contract (DESIGN §4) come first: ``resistor_ohm,
vout_nom_v, vout_low_v, vout_high_v, error_v, margin, i_min_a, feasible, meets, corners``;
further keys are added after them. Non-finite numbers become ``null``.
"""

from __future__ import annotations

import math

import numpy as np

from selector.physics.checked_design import CheckedDesign
from selector.physics.circuit import STATUS_NAMES, STATUS_SOLVED, STATUS_STACK_OFF
from selector.physics.corners import CornerSet, worst_case_corners
from selector.physics.design_cautions import Caution, corner_list, margin_words
from selector.physics.design_cautions import design_cautions as physics_cautions
from selector.physics.design_failures import LIMIT_MARKS, Failure, design_failures
from selector.physics.error_budget import dominant_source
from selector.physics.montecarlo import PERCENTILE_NAMES
from selector.spec.rail_spec import RailSpec, spec_cautions
from selector.spec.stack_notation import format_stack
from selector.spec.units import format_quantity

#: Junctions within this of their limit draw a hot-part caution [K] (common practice, no source).
HOT_PART_HEADROOM_K = 25.0
DEFER = "this tool is not a safety assessment; follow local codes and licensed practice"




def _finite(value) -> float | None:
    value = float(value)
    return value if math.isfinite(value) else None


def design_cautions(design: CheckedDesign) -> list[str]:
    """Safety, headroom and model cautions for one design, one line each
    (:func:`selector.physics.design_cautions.design_cautions`, plus the spec's and a hot part's)."""
    spec, metrics = design.spec, design.metrics
    lines = [f"{line} (this tool is not a safety assessment)" for line in spec_cautions(spec)]
    for caution in design_model_cautions(design):
        lines.append(f"{caution.text}; {DEFER}" if caution.kind == "near limit" else caution.text)
    scan = metrics.operating_points
    if metrics.latch_corners.size:
        others = sorted({f"{format_quantity(root, 'A', 3)}" for c in metrics.latch_corners for root in scan.roots_a[c][1:]})
        lines.append(
            f"several operating points at {corner_list(metrics.latch_corners + 1)} (a thermal latch): the one "
            f"reached from zero current is taken; a transient can push the stack to {', '.join(others)}; {DEFER}"
        )
    if metrics.off_lowest_root_corners.size:
        lines.append(
            f"at {corner_list(metrics.off_lowest_root_corners + 1)} the solved current is not the lowest operating "
            "point (the one reached from zero current): these corners are not proven"
        )
    tj_max = design.parts.tj_max_c[design.stack[metrics.hottest_element]]
    if metrics.evaluation.solved[0] and metrics.hottest_junction_c > tj_max - HOT_PART_HEADROOM_K:
        reaches = (f"is past its Tjmax {tj_max:.0f} °C ({metrics.hottest_junction_c:.0f} °C by the model)"
                   if metrics.hottest_junction_c > tj_max
                   else f"reaches {metrics.hottest_junction_c:.0f} °C (limit {tj_max:.0f} °C)")
        lines.append(f"hot part: a junction {reaches} at corner {metrics.hottest_corner + 1}; {DEFER}")
    return lines


def failures(design: CheckedDesign) -> list[Failure]:
    """Every limit the design breaks (:func:`selector.physics.design_failures.design_failures`)."""
    return design_failures(design.parts, design.stack, design.spec, design.metrics.evaluation)


def design_model_cautions(design: CheckedDesign) -> list[Caution]:
    """The structured cautions of one design (near limit, zener range, exact parts, stack off)."""
    return physics_cautions(design.parts, design.stack, design.metrics.evaluation)


def wanted_text(spec: RailSpec) -> str:
    """The rail as the user wrote it: a window ``min … max`` or ``target ± tolerance``."""
    volts = lambda v: format_quantity(v, "V")  # noqa: E731
    if spec.rail_window:
        text = f"{volts(spec.rail_min_v)} … {volts(spec.rail_max_v)}"
    else:
        text = f"{volts(spec.target_v)} ± {volts(spec.tolerance_v)}"
    return text + (f" (nominal {volts(spec.rail_nominal_v)})" if spec.rail_nominal_v is not None else "")


def verdict_text(design: CheckedDesign) -> str:
    """The verdict of one design, as the check report's first line states it."""
    ev = design.metrics.evaluation
    if design.metrics.off_lowest_root_corners.size:
        return (f"NOT PROVEN (at {corner_list(design.metrics.off_lowest_root_corners + 1)} the solver's operating "
                "point is not the one reached from zero current)")  # fmt: skip
    if ev.meets[0]:
        return "MEETS the spec at every corner"
    if ev.feasible[0]:
        return "feasible, but OUTSIDE the tolerance window"
    if ev.solved[0]:
        return f"NOT FEASIBLE ({ev.reason_name(0)})"
    status = ev.corner_status[0]
    causes = "; ".join(f"{STATUS_NAMES[code]} at {np.count_nonzero(status == code)}"
                       for code in np.unique(status[status != STATUS_SOLVED]))  # fmt: skip
    return f"NOT FEASIBLE (no solution at {np.count_nonzero(status != STATUS_SOLVED)} of {status.size} corners: {causes})"


def check_json(design: CheckedDesign) -> dict:
    """The JSON document of ``railwright check --json`` (contract keys first)."""
    ev, metrics, spec = design.metrics.evaluation, design.metrics, design.spec
    corners = worst_case_corners(spec)
    document = {
        "resistor_ohm": design.resistor_ohm,
        "vout_nom_v": _finite(ev.vout_nom_v[0]),
        "vout_low_v": _finite(ev.vout_low_v[0]) if ev.solved[0] else None,
        "vout_high_v": _finite(ev.vout_high_v[0]) if ev.solved[0] else None,
        "error_v": _finite(ev.error_v[0]),
        "margin": _finite(ev.margin[0]),
        "i_min_a": _finite(ev.i_min_a[0]) if ev.solved[0] else None,
        "feasible": bool(ev.feasible[0]),
        "meets": design.meets,
        "corners": _corner_objects(design, corners),
        "stack": format_stack(design.elements),
        "parts": len(design.elements),
        "resistor_chosen": design.resistor_chosen,
        "reason": ev.reason_name(0),
        "target_v": spec.target_v,
        "tolerance_v": spec.tolerance_v,
        "rail_min_v": spec.rail_min_v,
        "rail_max_v": spec.rail_max_v,
        "metrics": {
            "line_regulation_mv_per_v": _finite(metrics.line_regulation_mv_per_v),
            "load_regulation_mv_per_ma": _finite(metrics.load_regulation_mv_per_ma),
            "tempco_mv_per_k": _finite(metrics.tempco_mv_per_k),
            "ripple_attenuation_db": _finite(metrics.ripple_attenuation_db),
            "regulation_model": "DC, self-heating included",
            "ripple_model": "isothermal: junctions held at the nominal solution",
            "stack_dynamic_resistance_ohm": _finite(metrics.stack_dynamic_resistance_ohm),
            "efficiency": _finite(metrics.efficiency),
            "hottest_junction_c": _finite(metrics.hottest_junction_c),
            "hottest_corner": metrics.hottest_corner + 1,
            "resistor_worst_power_w": _finite(metrics.resistor_worst_power_w),
            "resistor_worst_margin": _finite(metrics.resistor_worst_margin),
            "resistor_worst_corner": metrics.resistor_worst_corner + 1,
            "resistor_allowed_power_w": _finite(metrics.resistor_allowed_power_w),
            "resistor_rating_needed_w": metrics.resistor_rating_needed_w,
        },
        "elements": [
            {
                "position": position + 1,
                "part": part,
                "worst_power_w": _finite(metrics.element_worst_power_w[position]),
                "worst_margin": _finite(metrics.element_worst_margin[position]),
            }
            for position, part in enumerate(design.elements)
        ],
        "cautions": design_cautions(design),
        "caution_details": [
            {"kind": c.kind, "part": c.part, "corners": list(c.corners), "text": c.text}
            for c in design_model_cautions(design)
        ],
        "budget": [
            {"source": line.source, "low_v": _finite(line.low_v), "high_v": _finite(line.high_v),
             "linear_low_v": _finite(line.linear_low_v), "linear_high_v": _finite(line.linear_high_v),
             "share": _finite(line.share)}
            for line in design.budget
        ],
        "budget_method": "each source alone at its extremes, the rest nominal, solved exactly; shifts from the "
        "nominal rail; the interaction is what the 32 corners add beyond their sum; linear_*: the small-signal "
        "estimate",
        "meeting_resistors_ohm": None if design.meeting_resistors_ohm is None
        else [float(value) for value in design.meeting_resistors_ohm],
        "failures": [
            {"limit": f.limit, "part": f.part, "corners": list(f.corners), "value": _finite(f.value),
             "allowed": _finite(f.allowed), "text": f.text}
            for f in failures(design)
        ],
    }
    if design.monte_carlo is not None:
        mc = design.monte_carlo
        document["monte_carlo"] = {
            "samples": mc.samples,
            "seed": mc.seed,
            "yield": mc.yield_fraction,
            "yield_interval_95": [mc.yield_low, mc.yield_high],
            "yield_counts": "units passing at every environment corner (supply × load × ambient extremes)",
            "solved_fraction": mc.solved_fraction,
            "percentiles_v": {f"{p:g}": v for p, v in mc.percentiles.items()},
            "percentile_names": {f"{p:g}": PERCENTILE_NAMES[p] for p in mc.percentiles},
        }
    return document


def _corner_objects(design: CheckedDesign, corners: CornerSet) -> list[dict]:
    ev = design.metrics.evaluation
    load_key = "load_ohm" if design.spec.load_kind == "resistance" else "load_a"
    objects = []
    for c in range(len(corners)):
        solved = bool(ev.corner_solved[0, c])
        objects.append(
            {
                "index": c + 1,
                "label": corners.labels[c],
                "supply_v": float(corners.supply_v[c]),
                load_key: float(corners.load_value[c]),
                "ambient_c": float(corners.ambient_c[c]),
                "resistor_ohm": design.resistor_ohm * float(corners.resistor_factor[c]),
                "tolerance_sign": float(corners.tolerance_sign[c]),
                "solved": solved,
                "status": STATUS_NAMES[ev.corner_status[0, c]],
                "operating_points_a": [float(root) for root in design.metrics.operating_points.roots_a[c]],
                "several_operating_points": bool(design.metrics.operating_points.roots_a[c].size > 1),
                "vout_v": float(ev.vout_v[0, c]) if solved else None,
                "stack_current_a": float(ev.stack_current_a[0, c]) if solved else None,
                "load_current_a": float(ev.load_current_a[0, c]) if solved else None,
                "resistor_power_w": float(ev.resistor_power_w[0, c]) if solved else None,
                "junction_c": [float(t) for t in ev.junction_c[0, c, : len(design.elements)]] if solved else None,
                "element_power_w": [float(p) for p in ev.element_power_w[0, c, : len(design.elements)]]
                if solved
                else None,
            }
        )
    return objects


def check_lines(design: CheckedDesign) -> list[str]:
    """The terminal report of ``railwright check``."""
    ev, metrics, spec = design.metrics.evaluation, design.metrics, design.spec
    volts = lambda v: format_quantity(v, "V")  # noqa: E731
    amps = lambda v: format_quantity(v, "A", 3)  # noqa: E731
    how = f"chosen from {spec.resistor_series}" if design.resistor_chosen else "as given"
    lines = [
        f"Design: {format_stack(design.elements)} with {format_quantity(design.resistor_ohm, 'Ω')} ({how})",
        f"Wanted: {wanted_text(spec)}; "
        f"supply {volts(spec.supply_min_v)} … {volts(spec.supply_max_v)}; "
        f"ambient {spec.ambient_min_c:g} … {spec.ambient_max_c:g} °C",
        f"Verdict: {verdict_text(design)}",
    ]
    broken = failures(design)
    lines += [f"  fails: {failure.text}" for failure in broken]
    if ev.solved[0]:
        lines += [
            f"  rail {volts(ev.vout_nom_v[0]) if np.isfinite(ev.vout_nom_v[0]) else '— (no solution)'} nominal, "
            f"{volts(ev.vout_low_v[0])} … {volts(ev.vout_high_v[0])} "
            f"worst case; error {volts(ev.error_v[0])} (allowed {volts(spec.tolerance_v)})",
            f"  least stack current {amps(ev.i_min_a[0])}; least margin {margin_words(ev.margin[0], '.1%')}",
        ]
    if design.series_values_ohm is not None:
        lines.append("  " + meeting_range_text(design))
    dominant = dominant_source(design.budget)
    if dominant is not None and np.isfinite(dominant.share):
        lines.append(f"  largest source of error: {dominant.source} ({dominant.share:.0%} of the worst-side deviation)")
    lines += budget_lines(design)
    lines += ["", "Corners (< lowest rail, > highest rail, o stack off, ! no solution; R at its tolerance and TCR; "
                  "parts −/+: every part at its low/high tolerance and TC spread):"]
    lines += _corner_table(design, broken)
    if ev.solved[0] and np.isfinite(ev.vout_nom_v[0]):
        tj_max = float(design.parts.tj_max_c[design.stack[metrics.hottest_element]])
        lines += [
            "",
            "At nominal:",
            f"  line regulation {metrics.line_regulation_mv_per_v:.4g} mV/V (DC, self-heating included)",
            f"  ripple attenuation {metrics.ripple_attenuation_db:.1f} dB (isothermal: junctions held at nominal)",
            f"  load regulation {metrics.load_regulation_mv_per_ma:.4g} mV/mA (DC)",
            f"  rail tempco {metrics.tempco_mv_per_k:.4g} mV/K",
            f"  efficiency {metrics.efficiency:.1%}",
            "Hottest junction: " + _junction_text(metrics.hottest_junction_c, tj_max) + ", "
            f"{design.elements[metrics.hottest_element]} (position {metrics.hottest_element + 1}) "
            f"at corner {metrics.hottest_corner + 1}",
            f"Series resistor: worst {format_quantity(metrics.resistor_worst_power_w, 'W', 3)}; "
            + (f"overload: {1.0 - metrics.resistor_worst_margin:.3g} × the " if metrics.resistor_worst_margin < 0
               else f"{margin_words(metrics.resistor_worst_margin, '.1%')} margin on ")
            + f"{format_quantity(metrics.resistor_allowed_power_w, 'W', 3)} allowed at corner "
            f"{metrics.resistor_worst_corner + 1} ({format_quantity(spec.resistor_rating_w, 'W')} rating, derated "
            f"from {spec.resistor_full_power_ambient_c:g} °C to 0 at {spec.resistor_zero_power_ambient_c:g} °C); "
            "smallest standard rating that carries every corner: "
            + (format_quantity(metrics.resistor_rating_needed_w, "W") if metrics.resistor_rating_needed_w else "over 10 W"),
            "",
            "Margin per part (worst corner):",
        ]
        for position, part in enumerate(design.elements):
            lines.append(
                f"  {position + 1:>2}. {part:<16} {format_quantity(metrics.element_worst_power_w[position], 'W', 3):>10}"
                f"   {'' if metrics.element_worst_margin[position] < 0 else 'margin '}"
                f"{margin_words(metrics.element_worst_margin[position], '7.1%')}"
            )
    if design.monte_carlo is not None:
        mc = design.monte_carlo
        lines += ["", f"Monte Carlo ({mc.samples} units, seed {mc.seed}, each at every supply × load × ambient extreme): "
                      f"yield {mc.yield_fraction:.2%} (95 % interval {mc.yield_low:.2%} … {mc.yield_high:.2%})"]
        if mc.percentiles:
            spread = ", ".join(f"{PERCENTILE_NAMES[p]} {volts(v)}" for p, v in mc.percentiles.items())
            lines.append(f"  rail over every unit and corner: {spread}")
    cautions = design_cautions(design)
    if cautions:
        lines.append("")
        lines += [f"Caution: {line}" for line in cautions]
    return lines


def meeting_range_text(design: CheckedDesign) -> str:
    """``"meets for 390 … 510 Ω (E24)"``: the series values at which the stack meets."""
    from selector.search.series_sweep import value_ranges_text

    values, meeting, spec = design.series_values_ohm, design.meeting_resistors_ohm, design.spec
    if not meeting.size:
        return (f"meets for no {spec.resistor_series} value from {format_quantity(values[0], 'Ω')} to "
                f"{format_quantity(values[-1], 'Ω')}")  # fmt: skip
    return f"meets for {value_ranges_text(values, meeting)} ({spec.resistor_series})"


def what_if_lines(fixes) -> list[str]:
    """The what-if list as a table (:class:`selector.search.what_if.Fix`), best first."""
    if not fixes:
        return ["", "What if: no variant in the library to try."]
    rows = ["", "What if (variants from the library, each solved at every corner; best first, * meets):",
            f"  {'':1} {'change':<28} {'stack':<24} {'R':>9} {'error [mV]':>10} {'P margin':>8}"]
    for fix in fixes:
        error = f"{1e3 * fix.error_v:.1f}" if np.isfinite(fix.error_v) else "infeasible"
        rows.append(f"  {'*' if fix.meets else ' '} {fix.change:<28} {fix.stack:<24} "
                    f"{format_quantity(fix.resistor_ohm, 'Ω'):>9} {error:>10} {margin_words(fix.margin, '.1%'):>8}")
    return rows


def range_lines(design: CheckedDesign) -> list[str]:
    """For a design whose largest error source is the supply or the ambient range: the
    widest such range at which it would meet (:func:`selector.search.what_if.largest_meeting_range`)."""
    from selector.search.what_if import largest_meeting_range

    dominant = dominant_source(design.budget)
    if design.meets or dominant is None or dominant.source not in ("supply", "ambient"):
        return []
    found = largest_meeting_range(design.parts, design.stack, design.resistor_ohm, design.spec, dominant.source)
    if found is None:
        return [f"  It does not meet even with the {dominant.source} held at its nominal value."]
    low, high = found
    text = (f"{format_quantity(low, 'V')} … {format_quantity(high, 'V')}" if dominant.source == "supply"
            else f"{low:.1f} … {high:.1f} °C")  # fmt: skip
    return [f"  It would meet with the {dominant.source} range narrowed to {text} (the rest of the spec as it is)."]


def fix_json(fix) -> dict:
    """One what-if variant as JSON."""
    return {"change": fix.change, "stack": fix.stack, "resistor_ohm": fix.resistor_ohm, "error_v": _finite(fix.error_v),
            "margin": _finite(fix.margin), "meets": fix.meets, "feasible": fix.feasible}


def budget_lines(design: CheckedDesign) -> list[str]:
    """The error budget as a table: each source's exact shift below and above the nominal
    rail, its share of the worst-side deviation, and the linearised estimate beside it."""
    if not design.budget:
        return []
    mv = lambda v: "—" if not np.isfinite(v) else f"{1e3 * v:+.2f}"  # noqa: E731
    nominal = format_quantity(float(design.metrics.evaluation.vout_nom_v[0]), "V")
    rows = ["", f"Error budget (each source alone at its extremes, the rest nominal, solved exactly; shift from the "
                f"nominal {nominal}; linear: the small-signal estimate):",
            f"  {'source':<32} {'below [mV]':>11} {'above [mV]':>11} {'share':>6}  {'linear [mV]':>17}"]
    for line in design.budget:
        linear = f"{mv(line.linear_low_v)} {mv(line.linear_high_v)}" if np.isfinite(line.linear_low_v) else ""
        share = f"{line.share:.0%}" if np.isfinite(line.share) else "—"
        rows.append(f"  {line.source:<32} {mv(line.low_v):>11} {mv(line.high_v):>11} {share:>6}  {linear:>17}")
    return rows


def _junction_text(junction_c: float, tj_max_c: float) -> str:
    if junction_c > tj_max_c:
        return f"past Tjmax {tj_max_c:.0f} °C ({junction_c:.0f} °C by the model)"
    return f"{junction_c:.1f} °C"


def _corner_table(design: CheckedDesign, broken: list[Failure]) -> list[str]:
    ev, spec = design.metrics.evaluation, design.spec
    corners = worst_case_corners(spec)
    resistive = spec.load_kind == "resistance"
    load_header = "load [Ω]" if resistive else "load [mA]"
    header = (
        f"  {'#':>2}  {'supply [V]':>10} {load_header:>10} {'Ta [°C]':>8} {'R [Ω]':>10} {'parts':>5}"
        f"  {'rail [V]':>10} {'stack [mA]':>10} {'P_R [mW]':>10} {'hot Tj [°C]':>11}"
        + ("  breaks" if broken else "")
    )
    marks: dict[int, list[str]] = {}
    for failure in broken:
        for corner in failure.corners:
            marks.setdefault(corner - 1, []).append(LIMIT_MARKS[failure.limit])
    rows = [header]
    solved = ev.corner_solved[0]
    vout = ev.vout_v[0]
    low = int(np.argmin(np.where(solved, vout, np.inf))) if solved.any() else -1
    high = int(np.argmax(np.where(solved, vout, -np.inf))) if solved.any() else -1
    for c in range(len(corners)):
        off = ev.corner_status[0, c] == STATUS_STACK_OFF
        mark = "!" if not solved[c] else "<" if c == low else ">" if c == high else "o" if off else " "
        load = format_quantity(float(corners.load_value[c]), "") if resistive else f"{1e3 * corners.load_value[c]:.3f}"
        cells = (
            f"{mark}{c + 1:>2}  {corners.supply_v[c]:>10.3f} {load:>10} "
            f"{corners.ambient_c[c]:>8.1f} {design.resistor_ohm * corners.resistor_factor[c]:>10.1f} "
            f"{'+' if corners.tolerance_sign[c] > 0 else '−':>5}"
        )
        if solved[c]:
            cells += (
                f"  {vout[c]:>10.4f} {1e3 * ev.stack_current_a[0, c]:>10.3f} "
                f"{1e3 * ev.resistor_power_w[0, c]:>10.1f} {ev.hottest_junction_c[0, c]:>11.1f}"
            )
            if c in marks:
                cells += "  " + ", ".join(dict.fromkeys(marks[c]))
        else:
            cells += f"  no solution: {STATUS_NAMES[ev.corner_status[0, c]]}"
        rows.append(" " + cells)
    return rows
