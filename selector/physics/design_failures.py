"""Why a design does not meet its spec: every limit it breaks, with the part, the corners
and the values.

A negative verdict must say what failed, where and by how much: "Z5V1-B current 19.5 µA
below its least current 1 mA at corners 9–16 (Vin min, load most)". Each
:class:`Failure` names one limit of DESIGN §3 — the rail window, a part's least current
(a zener's knee by default) or most current, a part's or the resistor's allowed power
(derated with the ambient, less the spec's least margin), or a corner with no solution —
the part it concerns, the corners (numbered from 1) and the worst value against what is
allowed there. The rules are those of :func:`selector.physics.corners.reduce_corners`;
this module only names what they found.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from selector.physics.circuit import STATUS_NAMES
from selector.physics.corners import (
    DesignEvaluation,
    allowed_power_w,
    part_current_limit,
    worst_case_corners,
)
from selector.physics.design_cautions import corner_list
from selector.physics.partset import PartSet
from selector.physics.series_resistor import resistor_allowed_power_w
from selector.spec.rail_spec import RailSpec
from selector.spec.units import format_quantity

#: The limits a failure can name, as they appear in JSON.
LIMITS: tuple[str, ...] = (
    "rail below window", "rail above window", "least current", "most current", "part power", "resistor power",
    "no solution",
)  # fmt: skip
#: Short marks of each limit for the corner table.
LIMIT_MARKS: dict[str, str] = {
    "rail below window": "low", "rail above window": "high", "least current": "bias", "most current": "current",
    "part power": "P part", "resistor power": "P_R", "no solution": "none",
}  # fmt: skip


@dataclass(frozen=True)
class Failure:
    """One broken limit of one design.

    Attributes
    ----------
    limit : str
        One of :data:`LIMITS`.
    part : str or None
        The part concerned, ``"resistor"``, or None for the rail or the whole stack.
    corners : tuple of int
        Corners where it is broken, numbered from 1.
    value, allowed : float
        The worst value over those corners and what is allowed at that corner, in SI units
        (V, A or W; NaN for a corner with no solution).
    text : str
        One line for a person.
    """

    limit: str
    part: str | None
    corners: tuple[int, ...]
    value: float
    allowed: float
    text: str


def common_conditions(labels: tuple[str, ...], corners: np.ndarray) -> str:
    """What the given corners (0-based) share, from their labels: ``"Vin min, load most"``."""
    shared = None
    for corner in corners:
        items = labels[int(corner)].split(", ")
        shared = items if shared is None else [item for item in shared if item in items]
    return ", ".join(shared or [])


def _where(labels, corners: np.ndarray) -> str:
    shared = common_conditions(labels, corners)
    return corner_list(corners + 1) + (f" ({shared})" if shared else "")


def design_failures(parts: PartSet, stack: np.ndarray, spec: RailSpec, evaluation: DesignEvaluation,
                    design: int = 0) -> list[Failure]:  # fmt: skip
    """Every limit one design breaks, in the order of :data:`LIMITS`.

    Parameters
    ----------
    parts : PartSet
    stack : int array (max_len,)
        Part indices, padded with −1.
    spec : RailSpec
    evaluation : DesignEvaluation
        With ``detail=True`` (per-element power), as :func:`selector.physics.corners.evaluate_designs` gives it.
    design : int
        Row of the design in ``evaluation``.

    Returns
    -------
    list of Failure
        Empty when the design meets the spec.
    """
    corners = worst_case_corners(spec)
    labels, count = corners.labels, len(corners)
    solved = evaluation.corner_solved[design, :count]
    vout = np.where(solved, evaluation.vout_v[design, :count], np.nan)
    current = np.where(solved, evaluation.stack_current_a[design, :count], np.nan)
    failures: list[Failure] = []

    def add(limit, part, broken, values, allowed, worst_is_high, describe, severity=None):
        # The worst corner is the one furthest past its limit: by value, or by ``severity``
        # where the limit itself varies between corners (allowed power falls with ambient).
        where = np.flatnonzero(broken)
        if not where.size:
            return
        score = values if severity is None else severity
        pick = where[np.argmax(score[where]) if worst_is_high or severity is not None else np.argmin(score[where])]
        value, limit_value = float(values[pick]), float(np.broadcast_to(allowed, values.shape)[pick])
        failures.append(Failure(limit, part, tuple(int(c) + 1 for c in where), value, limit_value,
                                describe(value, limit_value, _where(labels, where), float(corners.ambient_c[pick]))))  # fmt: skip

    volts = lambda v: format_quantity(v, "V")  # noqa: E731
    with np.errstate(invalid="ignore"):
        add("rail below window", None, vout < spec.rail_min_v, vout, spec.rail_min_v, False,
            lambda v, a, w, _: f"rail {volts(v)} below the window's {volts(a)} at {w}")
        add("rail above window", None, vout > spec.rail_max_v, vout, spec.rail_max_v, True,
            lambda v, a, w, _: f"rail {volts(v)} above the window's {volts(a)} at {w}")
        elements = [int(i) for i in stack if i >= 0]
        limits = part_current_limit(parts, spec)
        if spec.min_current_a > 0:  # the spec's own floor, once for the whole stack
            add("least current", None, current < spec.min_current_a, current, spec.min_current_a, False,
                lambda v, a, w, _: f"stack current {_apart(v, a, 'A')} below the spec's least current "
                                   f"{_apart(a, v, 'A')} at {w}")
        for index in dict.fromkeys(elements):
            name = str(parts.part[index])
            need = float(parts.i_min_a[index])
            what = "its knee" if parts.is_zener[index] else "its least current"
            if need > spec.min_current_a:  # a part's floor above the spec's is named with the part
                add("least current", name, current < need, current, need, False,
                    lambda v, a, w, _, n=name, t=what: f"{n} current {_apart(v, a, 'A')} below {t} "
                                                       f"{_apart(a, v, 'A')} at {w}")
            add("most current", name, current > limits[index], current, limits[index], True,
                lambda v, a, w, _, n=name: f"{n} current {_apart(v, a, 'A')} above its limit {_apart(a, v, 'A')} "
                                           f"at {w}")
        headroom = 1.0 - spec.min_margin
        if evaluation.element_power_w is not None:
            for position, index in enumerate(elements):
                name = str(parts.part[index])
                power = np.where(solved, evaluation.element_power_w[design, :count, position], np.nan)
                allowed = headroom * allowed_power_w(parts, np.full(count, index), corners.ambient_c)
                add("part power", name, power > allowed, power, allowed, True,
                    lambda v, a, w, t, n=name: _power_text(n, v, a, w, t, spec), _excess(power, allowed))
        resistor_power = np.where(solved, evaluation.resistor_power_w[design, :count], np.nan)
        allowed_r = headroom * resistor_allowed_power_w(spec, corners.ambient_c)
        add("resistor power", "resistor", resistor_power > allowed_r, resistor_power, allowed_r, True,
            lambda v, a, w, t: _power_text("resistor", v, a, w, t, spec), _excess(resistor_power, allowed_r))
    unsolved = np.flatnonzero(~solved)
    if unsolved.size:
        statuses = sorted({STATUS_NAMES[evaluation.corner_status[design, c]] for c in unsolved})
        failures.append(Failure("no solution", None, tuple(int(c) + 1 for c in unsolved), float("nan"), float("nan"),
                                f"no solution at {_where(labels, unsolved)}: {'; '.join(statuses)}"))  # fmt: skip
    return failures


def _apart(value: float, other: float, unit: str) -> str:
    """``value`` in engineering form with enough digits (3 to 6) to read apart from ``other``
    ("14.98 mA below 15 mA", not "15 mA below 15 mA")."""
    for digits in (3, 4, 5, 6):
        text = format_quantity(value, unit, digits)
        if text != format_quantity(other, unit, digits):
            return text
    return text


def _excess(power_w: np.ndarray, allowed_w: np.ndarray) -> np.ndarray:
    """How far past its allowance each corner's power is (P/P_allowed; inf where nothing is allowed)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(allowed_w > 0, power_w / np.where(allowed_w > 0, allowed_w, 1.0), np.inf)


def _power_text(name: str, value: float, allowed: float, where: str, ambient_c: float, spec: RailSpec) -> str:
    """``"resistor 204 mW above 125 mW allowed at 50 °C ambient, corners 17–32 (Vin max)"``:
    the worst corner's power against what that corner's ambient allows."""
    watts = lambda v: format_quantity(v, "W", 3)  # noqa: E731
    at = f"at {ambient_c:g} °C ambient"
    if allowed <= 0:
        return f"{name} dissipates {watts(value)} where nothing is allowed {at}, {where}"
    margin = f" (less the {spec.min_margin:.0%} margin)" if spec.min_margin > 0 else ""
    if value >= 2.0 * allowed:
        return f"{name} overload: {value / allowed:.3g} × the power allowed{margin} {at}, {where}"
    return f"{name} {watts(value)} above {watts(allowed)} allowed{margin} {at}, {where}"
