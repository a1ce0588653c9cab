"""One design's figures beyond the contract metrics: regulation, tempco, ripple,
efficiency, thermal detail, the resistor's worst power and the rating it needs.

DC figures (line and load regulation, tempco) are central finite differences of the full
nonlinear solve at the nominal point, self-heating included: a slow change of supply or
load moves the junctions too. Ripple attenuation is **isothermal** (DESIGN §3): a ripple is
far faster than a junction's thermal time constant, so the junctions stay where the
nominal solution put them and only each element's isothermal dynamic resistance
``r_d = ∂V/∂I`` counts; the stack, R and the load then form the small-signal divider
``ΔVout/ΔVin = r/(r + R·(1 + G_L·r))`` with ``r = Σ r_d`` — for a single element and no load
the textbook shunt relation ``r_d/(R + r_d)``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from selector.physics.circuit import solve_operating_points
from selector.physics.corners import (
    DesignEvaluation,
    evaluate_designs,
    nominal_point,
    worst_case_corners,
)
from selector.physics.devices import element_voltage_slopes
from selector.physics.operating_point_scan import OperatingPointScan, scan_operating_points
from selector.physics.partset import PartSet
from selector.physics.series_resistor import resistor_allowed_power_w
from selector.physics.solver_settings import STATUS_SOLVED
from selector.spec.rail_spec import RailSpec

#: Common resistor power ratings [W] (common practice, no source: the usual catalogue steps).
STANDARD_RESISTOR_RATINGS_W: tuple[float, ...] = (0.063, 0.1, 0.125, 0.25, 0.5, 0.75, 1.0, 2.0, 3.0, 5.0, 10.0)
#: Relative size of the finite-difference steps: small against every range, large against
#: the solver's 0.1 nV residual.
RELATIVE_STEP = 1e-3


def smallest_standard_rating_w(power_w: float, derating: float = 1.0) -> float | None:
    """Smallest standard rating that carries ``power_w`` when used at ``derating`` × its rating.

    Parameters
    ----------
    power_w : float [W]
    derating : float [1]
        Fraction of the rating the shop allows (1 = full rating, 0.5 = half).

    Returns
    -------
    float [W] or None
        None when even the largest standard rating is too small.
    """
    for rating in STANDARD_RESISTOR_RATINGS_W:
        if power_w <= rating * derating:
            return rating
    return None


@dataclass(frozen=True)
class DesignMetrics:
    """Metrics of one design beyond the contract's (see :func:`design_metrics`).

    Attributes
    ----------
    evaluation : DesignEvaluation
        The contract metrics of this one design, with detail.
    line_regulation_mv_per_v : float [mV/V]
        DC ``dVout/dVin`` at nominal, self-heating included.
    load_regulation_mv_per_ma : float [mV/mA]
        DC ``dVout/dI_L`` at nominal (an extra load current drawn), self-heating included.
    tempco_mv_per_k : float [mV/K]
        ``dVout/dTa`` at nominal, self-heating included.
    ripple_attenuation_db : float [dB]
        ``−20·log10|ΔVout/ΔVin|`` of a supply ripple, isothermal (junctions held at the
        nominal solution; see the module docstring).
    stack_dynamic_resistance_ohm : float [Ω]
        ``Σ r_d`` of the stack at nominal, isothermal.
    efficiency : float [1]
        Load power over supply power at nominal.
    hottest_junction_c : float [°C]
    hottest_corner : int
        Index of the corner with the hottest junction (shown from 1).
    hottest_element : int
        Stack position of that junction.
    element_worst_power_w, element_worst_margin : ndarray (max_len,)
        Per stack position, over the corners.
    resistor_worst_power_w : float [W]
    resistor_worst_margin : float [1]
        Least ``1 − P_R/P_R,max(Ta)`` over the corners (derated with the ambient).
    resistor_worst_corner : int
        Index of that corner.
    resistor_allowed_power_w : float [W]
        ``P_R,max`` at that corner's ambient.
    resistor_rating_needed_w : float or None [W]
        Smallest standard rating that carries the worst power at the derating, with the
        ambient derating of that corner.
    reason : str
        Named infeasibility reason, ``"ok"`` when feasible.
    operating_points : OperatingPointScan
        Every operating point of each of the 32 corners
        (:mod:`selector.physics.operating_point_scan`).
    latch_corners : ndarray of int
        Corners (0-based) with more than one stable operating point (a thermal latch).
    off_lowest_root_corners : ndarray of int
        Corners (0-based) whose solved current is not the lowest operating point, the one
        reached from zero current (the scan found a lower one).
    """

    evaluation: DesignEvaluation
    line_regulation_mv_per_v: float
    load_regulation_mv_per_ma: float
    tempco_mv_per_k: float
    ripple_attenuation_db: float
    stack_dynamic_resistance_ohm: float
    efficiency: float
    hottest_junction_c: float
    hottest_corner: int
    hottest_element: int
    element_worst_power_w: np.ndarray
    element_worst_margin: np.ndarray
    resistor_worst_power_w: float
    resistor_worst_margin: float
    resistor_worst_corner: int
    resistor_allowed_power_w: float
    resistor_rating_needed_w: float | None
    reason: str
    operating_points: OperatingPointScan
    latch_corners: np.ndarray
    off_lowest_root_corners: np.ndarray


def _dc_slopes(parts, stack, resistor_ohm, spec, nominal, stack_current_a):
    """Central differences of the heated solve: line, load, tempco; and the nominal point."""
    supply_step = RELATIVE_STEP * max(spec.supply_nominal_v, 1.0)
    # A fraction of the stack's own current, so that a µA design keeps conducting.
    load_step = RELATIVE_STEP * max(stack_current_a, 1e-12)
    ambient_step = 0.1
    base = dict(supply=nominal.supply_v[0], extra_load=0.0, ambient=nominal.ambient_c[0])
    steps = [
        dict(base, supply=base["supply"] + supply_step),
        dict(base, supply=base["supply"] - supply_step),
        dict(base, extra_load=load_step),
        dict(base, extra_load=-load_step),
        dict(base, ambient=base["ambient"] + ambient_step),
        dict(base, ambient=base["ambient"] - ambient_step),
        base,
    ]
    points = solve_operating_points(
        parts,
        np.repeat(stack, len(steps), axis=0),
        np.array([s["supply"] for s in steps]),
        np.full(len(steps), resistor_ohm),
        np.array([s["ambient"] for s in steps]),
        np.zeros(len(steps)),
        nominal.load_current_a[0] + np.array([s["extra_load"] for s in steps]),
        np.full(len(steps), nominal.load_conductance_s[0]),
    )
    v = points.vout_v
    nan = float("nan")
    if not points.conducting.all():
        return nan, nan, nan, points
    line = (v[0] - v[1]) / (2 * supply_step)
    load = (v[2] - v[3]) / (2 * load_step)
    tempco = (v[4] - v[5]) / (2 * ambient_step)
    return line, load, tempco, points


def isothermal_ripple_gain(parts: PartSet, stack: np.ndarray, resistor_ohm: float, load_conductance_s: float,
                           current_a: float, junction_c: np.ndarray) -> tuple[float, float]:  # fmt: skip
    """``ΔVout/ΔVin`` of a fast supply ripple, and ``Σ r_d`` [Ω], with every junction held.

    Parameters
    ----------
    parts : PartSet
    stack : int array (max_len,)
    resistor_ohm : float [Ω]
    load_conductance_s : float [S]
    current_a : float [A]
        The stack current of the operating point.
    junction_c : array (max_len,) [°C]
        Each element's junction at that point.
    """
    present = stack >= 0
    _, dv_di, _ = element_voltage_slopes(parts, stack[present], current_a, junction_c[present])
    dynamic = float(dv_di.sum())
    return dynamic / (dynamic + resistor_ohm * (1.0 + load_conductance_s * dynamic)), dynamic


def design_metrics(
    parts: PartSet,
    stack: np.ndarray,
    resistor_ohm: float,
    spec: RailSpec,
    *,
    resistor_derating: float = 1.0,
) -> DesignMetrics:
    """Contract metrics plus regulation, tempco, ripple, efficiency and thermal detail of one design.

    Parameters
    ----------
    parts : PartSet
    stack : int array (max_len,)
        Part indices, padded with −1.
    resistor_ohm : float [Ω]
    spec : RailSpec
    resistor_derating : float [1]
        Fraction of its rating the shop lets a resistor run at (1 = none).

    Returns
    -------
    DesignMetrics
    """
    stack = np.asarray(stack, dtype=np.intp).reshape(1, -1)
    evaluation = evaluate_designs(parts, stack, np.array([resistor_ohm]), spec, detail=True)
    nominal = nominal_point(spec)
    nominal_current = float(evaluation.nominal["stack_current_a"][0])
    line, load, tempco, points = _dc_slopes(parts, stack, resistor_ohm, spec, nominal, nominal_current)
    nan = float("nan")
    conducting = bool(points.conducting[6])
    ripple_db, dynamic = nan, nan
    if conducting:
        gain, dynamic = isothermal_ripple_gain(parts, stack[0], resistor_ohm, float(nominal.load_conductance_s[0]),
                                               float(points.stack_current_a[6]), evaluation.nominal["junction_c"][0])
        ripple_db = float(-20.0 * np.log10(abs(gain))) if gain != 0 else nan
    supply_power = nominal.supply_v[0] * (points.stack_current_a[6] + points.load_current_a[6])
    solved = bool(points.solved[6])
    efficiency = points.vout_v[6] * points.load_current_a[6] / supply_power if solved and supply_power > 0 else nan

    junction = evaluation.junction_c[0]
    hottest_corner, hottest_element = np.unravel_index(int(np.argmax(junction)), junction.shape)
    resistor_margin = evaluation.resistor_margin[0]
    worst_corner = int(np.argmin(resistor_margin))
    resistor_worst = float(evaluation.resistor_power_w[0].max())
    allowed = resistor_allowed_power_w(spec, worst_case_corners(spec).ambient_c)
    fraction_of_rating = allowed / spec.resistor_rating_w
    # The rating that carries every corner's power at that corner's ambient derating.
    needed_at_full = float(np.max(np.where(fraction_of_rating > 0, evaluation.resistor_power_w[0] / np.where(
        fraction_of_rating > 0, fraction_of_rating, 1.0), np.inf)))  # fmt: skip
    corners = worst_case_corners(spec)
    scan = scan_operating_points(parts, stack[0], corners.supply_v, resistor_ohm * corners.resistor_factor,
                                 corners.ambient_c, corners.tolerance_sign, corners.load_current_a,
                                 corners.load_conductance_s)  # fmt: skip
    return DesignMetrics(
        operating_points=scan,
        latch_corners=scan.several(),
        off_lowest_root_corners=_not_the_lowest_root(scan, evaluation.stack_current_a[0], evaluation.corner_status[0]),
        evaluation=evaluation,
        line_regulation_mv_per_v=float(1e3 * line),
        load_regulation_mv_per_ma=float(load),
        tempco_mv_per_k=float(1e3 * tempco),
        ripple_attenuation_db=ripple_db,
        stack_dynamic_resistance_ohm=dynamic,
        efficiency=float(efficiency),
        hottest_junction_c=float(junction[hottest_corner, hottest_element]),
        hottest_corner=int(hottest_corner),
        hottest_element=int(hottest_element),
        element_worst_power_w=evaluation.element_power_w[0].max(axis=0),
        element_worst_margin=evaluation.element_margin[0].min(axis=0),
        resistor_worst_power_w=resistor_worst,
        resistor_worst_margin=float(resistor_margin[worst_corner]),
        resistor_worst_corner=worst_corner,
        resistor_allowed_power_w=float(allowed[worst_corner]),
        resistor_rating_needed_w=smallest_standard_rating_w(needed_at_full, resistor_derating)
        if np.isfinite(needed_at_full) else None,
        reason=evaluation.reason_name(0),
    )



def _not_the_lowest_root(scan: OperatingPointScan, current_a: np.ndarray, status: np.ndarray) -> np.ndarray:
    """Corners whose solved (conducting) current lies above the lowest root the scan found,
    by more than the scan's own resolution."""
    wrong = [c for c, roots in enumerate(scan.roots_a)
             if status[c] == STATUS_SOLVED and roots.size and current_a[c] > roots[0] * (1 + 1e-6)]  # fmt: skip
    return np.array(wrong, dtype=int)
