"""Where a design's worst-case error comes from: the error budget, exact and linearised.

**Exact, one source at a time.** Each source of spread — the supply range, the load range,
the ambient range (with the self-heating it brings), the resistor's tolerance, its TCR,
each part's voltage tolerance and each part's TC spread (by part id) — is moved alone to
each of its extremes, every other source at the nominal point of DESIGN §3 (nominal
supply, midpoint load and ambient, R exact, every part at s = s' = 0), and the circuit is
solved exactly (all of them in one :func:`selector.physics.circuit.solve_operating_points`
call). A source's ``low_v`` and ``high_v`` are the rail's largest shifts below (≤ 0) and
above (≥ 0) the nominal rail at its extremes. The 32 corners move every source at once;
what the one-at-a-time shifts do not add up to is the **interaction** remainder on each
side: ``(vout_low − vout_nom) − Σ low_v`` and ``(vout_high − vout_nom) − Σ high_v``.

**Linearised, beside it** (the small-signal model of the stack). About the nominal
operating point each element has the self-heated slope
``dV/dI = (∂V/∂I + ∂V/∂T·θ·(V + I·∂V/∂I))/(1 − g)``, ``g = θ·I·∂V/∂T``; with
``r = Σ dV/dI`` and ``D = R + r·(1 + R·G_L)`` KCL gives ``ΔVout = (r/D)·ΔVin`` (line; for
one element and no load the textbook shunt-regulator relation ``r_d/(R + r_d)``),
``−(R·r/D)·ΔI_L`` and ``−(R·Vout·r/D)·ΔG_L`` (load), ``−((I + I_L)·r/D)·ΔR`` (resistor), and
for a shift ``ΔV_s`` of the stack at a fixed current ``ΔVout = (R/D)·ΔV_s``. A part's
tolerance or TC spread shifts its elements by ``∂V/∂s`` at a fixed current and junction,
and the junction then follows its own power: ``ΔV_s = Σ ∂V/∂s / (1 − g)``; the ambient
moves each junction by ``ΔTa/(1 − g)``. Where the linear estimate and the exact shift
part, the design is in a nonlinear region (near a zener's knee, at strong self-heating).

References
----------
.. [1] P. Horowitz and W. Hill, *The Art of Electronics*, 3rd ed., Cambridge University
       Press, 2015, §1.2.6 and §2.2.7 (a zener's dynamic resistance and the regulation of a
       resistor-fed shunt regulator) — from memory.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from selector.physics.circuit import STATUS_SOLVED, solve_operating_points
from selector.physics.corners import DesignEvaluation, load_terms, nominal_point
from selector.physics.devices import element_voltage_slopes
from selector.physics.partset import PartSet
from selector.physics.series_resistor import resistor_factor
from selector.spec.rail_spec import RailSpec

#: The source naming the interaction remainder.
INTERACTION = "interaction (sources together)"


@dataclass(frozen=True)
class BudgetLine:
    """One source of the error budget.

    Attributes
    ----------
    source : str
        What moves: ``"supply"``, ``"load"``, ``"ambient"``, ``"resistor tolerance"``,
        ``"resistor TCR"``, ``"PART tolerance"``, ``"PART TC spread"`` or :data:`INTERACTION`.
    low_v, high_v : float [V]
        The rail's largest shift below (≤ 0) and above (≥ 0) the nominal rail, exact
        (NaN where an extreme has no solution).
    linear_low_v, linear_high_v : float [V]
        The same from the linearised model (NaN for the interaction).
    share : float [1]
        ``max(|low_v|, |high_v|)`` over the worst side's deviation from the nominal rail.
    """

    source: str
    low_v: float
    high_v: float
    linear_low_v: float
    linear_high_v: float
    share: float

    @property
    def size_v(self) -> float:
        return max(abs(self.low_v), abs(self.high_v))


def _sources(parts: PartSet, stack: np.ndarray, spec: RailSpec):
    """Each source's two extremes as changes of the nominal point: (name, field, values)."""
    load_least, load_most = (spec.load_max, spec.load_min) if spec.load_kind == "resistance" else (
        spec.load_min, spec.load_max)  # fmt: skip
    sources = [
        ("supply", "supply", (spec.supply_min_v, spec.supply_max_v)),
        ("load", "load", (load_least, load_most)),
        ("ambient", "ambient", (spec.ambient_min_c, spec.ambient_max_c)),
        ("resistor tolerance", "resistor_sign", (-1.0, 1.0)),
        ("resistor TCR", "tcr_sign", (-1.0, 1.0)),
    ]
    for index in dict.fromkeys(int(i) for i in stack if i >= 0):
        name = str(parts.part[index])
        sources.append((f"{name} tolerance", ("tolerance", index), (-1.0, 1.0)))
        sources.append((f"{name} TC spread", ("spread", index), (-1.0, 1.0)))
    return sources


def error_budget(parts: PartSet, stack: np.ndarray, resistor_ohm: float, spec: RailSpec,
                 evaluation: DesignEvaluation) -> list[BudgetLine]:  # fmt: skip
    """The error budget of one design, largest first (the interaction remainder among them).

    Parameters
    ----------
    parts, stack, resistor_ohm, spec
        The design and its rail, as for :func:`~selector.physics.design_metrics.design_metrics`.
    evaluation : DesignEvaluation
        The design's 32-corner evaluation (row 0): its nominal, lowest and highest rail.

    Returns
    -------
    list of BudgetLine
        Empty when the nominal point has no solution.
    """
    stack = np.asarray(stack, dtype=np.intp)
    width = stack.size
    nominal = nominal_point(spec)
    sources = _sources(parts, stack, spec)
    count = 1 + 2 * len(sources)
    supply = np.full(count, nominal.supply_v[0])
    load_value = np.full(count, nominal.load_value[0])
    ambient = np.full(count, nominal.ambient_c[0])
    resistor_sign, tcr_sign = np.zeros(count), np.zeros(count)
    tolerance, spread = np.zeros((count, width)), np.zeros((count, width))
    for number, (_, field, extremes) in enumerate(sources):
        rows = [1 + 2 * number, 2 + 2 * number]
        for row, value in zip(rows, extremes, strict=True):
            if field == "supply":
                supply[row] = value
            elif field == "load":
                load_value[row] = value
            elif field == "ambient":
                ambient[row] = value
            elif field == "resistor_sign":
                resistor_sign[row] = value
            elif field == "tcr_sign":
                tcr_sign[row] = value
            else:
                kind, index = field
                (tolerance if kind == "tolerance" else spread)[row, stack == index] = value
    load_current, conductance = load_terms(spec, load_value)
    resistor = resistor_ohm * resistor_factor(spec, ambient, resistor_sign, tcr_sign)
    points = solve_operating_points(parts, np.repeat(stack[None, :], count, axis=0), supply, resistor, ambient,
                                    tolerance, load_current, conductance, tc_spread_sign=spread, detail=True)  # fmt: skip
    solved = points.solved
    if not solved[0]:
        return []
    rail = np.where(solved, points.vout_v, np.nan)
    shift = (rail[1:] - rail[0]).reshape(-1, 2)
    if points.status[0] == STATUS_SOLVED:
        linear = _linear_shifts(parts, stack, resistor_ohm, spec, sources, points).reshape(-1, 2)
    else:  # the stack is off at nominal: no small-signal model of it
        linear = np.full(shift.shape, np.nan)
    names = [name for name, _, _ in sources]
    low = np.minimum(shift.min(axis=1), 0.0)
    high = np.maximum(shift.max(axis=1), 0.0)
    # An extreme without a solution leaves that source's bound unknown: NaN, not 0.
    low = np.where(np.isnan(shift).any(axis=1), np.nan, low)
    high = np.where(np.isnan(shift).any(axis=1), np.nan, high)
    linear_low, linear_high = np.minimum(linear.min(axis=1), 0.0), np.maximum(linear.max(axis=1), 0.0)
    worst_low = float(evaluation.vout_low_v[0] - rail[0])
    worst_high = float(evaluation.vout_high_v[0] - rail[0])
    worst = max(abs(worst_low), abs(worst_high)) or np.inf
    lines = [BudgetLine(name, float(lo), float(hi), float(llo), float(lhi), max(abs(lo), abs(hi)) / worst)
             for name, lo, hi, llo, lhi in zip(names, low, high, linear_low, linear_high, strict=True)]  # fmt: skip
    rest_low, rest_high = worst_low - float(np.nansum(low)), worst_high - float(np.nansum(high))
    lines.append(BudgetLine(INTERACTION, rest_low, rest_high, np.nan, np.nan,
                            max(abs(rest_low), abs(rest_high)) / worst))  # fmt: skip
    # Largest first (DESIGN §4), a source whose extreme has no solution first of all.
    lines.sort(key=lambda line: -line.size_v if np.isfinite(line.size_v) else -np.inf)
    return lines


def dominant_source(lines: list[BudgetLine]) -> BudgetLine | None:
    """The largest single source (the interaction remainder is not one)."""
    sources = [line for line in lines if line.source != INTERACTION]
    return sources[0] if sources else None


def _linear_shifts(parts, stack, resistor_ohm, spec, sources, points) -> np.ndarray:
    """The linearised rail shift of every source extreme (see the module docstring) [V]."""
    elements = stack[stack >= 0]
    current = float(points.stack_current_a[0])
    vout = float(points.vout_v[0])
    junction = points.junction_c[0, : elements.size]
    theta = parts.theta_ja_k_per_w[elements]
    voltage, dv_di, dv_dt = element_voltage_slopes(parts, elements, np.full(elements.size, current), junction)
    gain = theta * current * dv_dt
    feedback = 1.0 / (1.0 - gain)
    heated_slope = (dv_di + dv_dt * theta * (voltage + current * dv_di)) * feedback
    r = float(heated_slope.sum())
    nominal = nominal_point(spec)
    load_current, conductance = float(nominal.load_current_a[0]), float(nominal.load_conductance_s[0])
    through = current + load_current + conductance * vout
    divider = resistor_ohm + r * (1.0 + resistor_ohm * conductance)
    # ∂V/∂s and ∂V/∂s' at a fixed current and junction: each is linear in its sign.
    base, _, _ = element_voltage_slopes(parts, elements, np.full(elements.size, current), junction, 0.0, 0.0)
    by_tolerance = element_voltage_slopes(parts, elements, np.full(elements.size, current), junction, 1.0, 0.0)[0] - base
    by_spread = element_voltage_slopes(parts, elements, np.full(elements.size, current), junction, 0.0, 1.0)[0] - base
    shifts = []
    for _, field, extremes in sources:
        for value in extremes:
            if field == "supply":
                shifts.append(r / divider * (value - spec.supply_nominal_v))
            elif field == "load":
                extra_current, extra_conductance = (float(v[0]) for v in load_terms(spec, np.array([value])))
                shifts.append(-resistor_ohm * r / divider * ((extra_current - load_current)
                                                            + vout * (extra_conductance - conductance)))  # fmt: skip
            elif field == "ambient":
                stack_shift = float((dv_dt * feedback).sum()) * (value - float(nominal.ambient_c[0]))
                shifts.append(resistor_ohm / divider * stack_shift)
            elif field in ("resistor_sign", "tcr_sign"):
                factor = resistor_factor(spec, nominal.ambient_c, np.array([value if field == "resistor_sign" else 0.0]),
                                         np.array([value if field == "tcr_sign" else 0.0]))[0]  # fmt: skip
                shifts.append(-through * r / divider * resistor_ohm * (factor - 1.0))
            else:
                kind, index = field
                mine = elements == index
                partial = (by_tolerance if kind == "tolerance" else by_spread)[mine]
                shifts.append(resistor_ohm / divider * float((partial * feedback[mine]).sum()) * value)
    return np.array(shifts)
