"""What in the library would fix a design: its own variants, each solved exactly.

For one stack and resistor, the variants tried are:

* the neighbouring values of the spec's series (two each side) and the values of the next
  finer series within ±10 % of the resistor;
* each part swapped, in turn, for every usable library part of the same family whose
  nominal voltage (a zener's vz, a forward part's voltage at 1 mA and 25 °C) lies within
  ±5 % of it — the other grades and makers of that voltage, with their tolerances and TC
  spreads — its resistor chosen anew by the contract's rule (DESIGN §3);
* one usable forward element added, when the stack is short of ``max_parts``, likewise.

Every variant is evaluated at the 32 corners in one vectorised call
(:func:`selector.physics.corners.evaluate_designs`, the resistor choice of
:func:`selector.search.resistor_choice.choose_resistors`); the list is ordered meeting
first, then by worst-case error.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from selector.physics.corners import evaluate_designs
from selector.physics.devices import element_voltage_slopes
from selector.physics.partset import PartSet
from selector.search.resistor_choice import candidate_resistors, choose_resistors
from selector.spec.eseries import series_values
from selector.spec.rail_spec import RailSpec
from selector.spec.stack_notation import format_stack
from selector.spec.units import format_quantity

#: A swap keeps parts whose nominal voltage is within this fraction of the original's.
SWAP_VOLTAGE_FRACTION = 0.05
#: Series values tried each side of the resistor.
NEIGHBOUR_STEPS = 2
#: The next finer series of each (IEC 60063), for values near the resistor.
FINER_SERIES = {"E3": "E6", "E6": "E12", "E12": "E24", "E24": "E48", "E48": "E96", "E96": "E192"}


@dataclass(frozen=True)
class Fix:
    """One variant of the design, solved.

    Attributes
    ----------
    change : str
        What was changed, for a person.
    stack : str
        The variant's stack in stack notation.
    resistor_ohm : float [Ω]
    error_v : float [V]
        Worst-case error (inf where the variant is not feasible).
    margin : float [1]
        Least dissipation margin.
    meets, feasible : bool
    """

    change: str
    stack: str
    resistor_ohm: float
    error_v: float
    margin: float
    meets: bool
    feasible: bool


def nominal_voltages(parts: PartSet) -> np.ndarray:
    """Each part's nominal voltage [V]: a zener's vz, a forward part's at 1 mA and 25 °C."""
    index = np.arange(len(parts))
    forward, _, _ = element_voltage_slopes(parts, index, np.full(index.size, 1e-3), np.full(index.size, 25.0))
    return np.where(parts.is_zener, parts.vz_v, forward)


def what_if(parts: PartSet, stack: np.ndarray, resistor_ohm: float, spec: RailSpec,
            usable: np.ndarray | None = None, limit: int = 12) -> list[Fix]:  # fmt: skip
    """The variants of one design (see the module docstring), best first.

    Parameters
    ----------
    parts, stack, resistor_ohm, spec
        The design and its rail, as for :func:`~selector.physics.design_metrics.design_metrics`.
    usable : array of bool, optional
        Per part, whether a variant may use it (the spec's families and approved list); None: all.
    limit : int
        Most variants returned.
    """
    stack = np.asarray(stack, dtype=np.intp)
    width = max(stack.size, spec.max_parts)
    padded = np.full(width, -1, dtype=np.intp)
    padded[: stack.size] = stack
    usable = np.ones(len(parts), dtype=bool) if usable is None else np.asarray(usable, dtype=bool)
    if spec.families is not None:
        usable &= np.isin(parts.family, list(spec.families))
    fixes = _resistor_variants(parts, padded, resistor_ohm, spec)
    variants, changes = [], []
    voltage = nominal_voltages(parts)
    for position in np.flatnonzero(padded >= 0):
        original = padded[position]
        if original in padded[:position]:
            continue  # equal parts are swapped together below
        same = (parts.family == parts.family[original]) & usable & (np.arange(len(parts)) != original)
        near = np.abs(voltage - voltage[original]) <= SWAP_VOLTAGE_FRACTION * abs(voltage[original])
        for replacement in np.flatnonzero(same & near):
            variant = np.where(padded == original, replacement, padded)
            variants.append(variant)
            changes.append(f"{parts.part[original]} → {parts.part[replacement]}")
    if (padded >= 0).sum() < spec.max_parts:
        for extra in np.flatnonzero(usable & ~parts.is_zener):
            variant = padded.copy()
            variant[np.flatnonzero(variant < 0)[0]] = extra
            variants.append(variant)
            changes.append(f"add {parts.part[extra]}")
    if variants:
        rows = np.array(variants)
        resistor, evaluation = choose_resistors(parts, rows, spec)
        for number, change in enumerate(changes):
            fixes.append(_fix(parts, rows[number], float(resistor[number]), evaluation, number, change))
    fixes.sort(key=lambda fix: (not fix.meets, fix.error_v, -fix.margin))
    return fixes[:limit]


def _resistor_variants(parts, stack, resistor_ohm, spec) -> list[Fix]:
    values = candidate_resistors(spec) if spec.resistor_fixed_ohm is None else np.array([resistor_ohm])
    position = int(np.searchsorted(values, resistor_ohm))
    tried = [values[i] for i in range(position - NEIGHBOUR_STEPS, position + NEIGHBOUR_STEPS + 1)
             if 0 <= i < values.size and not np.isclose(values[i], resistor_ohm, rtol=1e-9)]  # fmt: skip
    finer = FINER_SERIES.get(spec.resistor_series)
    if finer is not None and spec.resistor_fixed_ohm is None:
        close = series_values(finer, 0.9 * resistor_ohm, 1.1 * resistor_ohm)
        tried += [value for value in close if value not in values]
    if not tried:
        return []
    tried = np.array(sorted(set(tried)))
    rows = np.repeat(stack[None, :], tried.size, axis=0)
    evaluation = evaluate_designs(parts, rows, tried, spec)
    series_of = {value: (finer if value not in values else spec.resistor_series) for value in tried}
    return [_fix(parts, rows[n], float(value), evaluation, n,
                 f"R {format_quantity(resistor_ohm, 'Ω')} → {format_quantity(value, 'Ω')} ({series_of[value]})")
            for n, value in enumerate(tried)]  # fmt: skip


def _fix(parts, stack, resistor, evaluation, row, change) -> Fix:
    feasible = bool(evaluation.feasible[row])
    return Fix(change, format_stack([str(parts.part[i]) for i in stack if i >= 0]), resistor,
               float(evaluation.error_v[row]) if feasible else np.inf, float(evaluation.margin[row]),
               bool(evaluation.meets[row]), feasible)  # fmt: skip


#: Bisection steps for the largest meeting range (the range is then known to 2⁻²⁰ of itself).
RANGE_BISECTIONS = 20


def largest_meeting_range(parts: PartSet, stack: np.ndarray, resistor_ohm: float, spec: RailSpec,
                          quantity: str) -> tuple[float, float] | None:  # fmt: skip
    """The widest supply (or ambient) range, shrunk symmetrically about its nominal, at
    which the design meets the spec, by bisection on the exact 32-corner solve.

    Parameters
    ----------
    quantity : str
        ``"supply"`` (about the nominal supply) or ``"ambient"`` (about the range's middle).

    Returns
    -------
    (low, high) [V or °C], or None when it does not meet even at the nominal point alone.
    """
    if quantity == "supply":
        centre, low, high = spec.supply_nominal_v, spec.supply_min_v, spec.supply_max_v
    else:
        centre = (spec.ambient_min_c + spec.ambient_max_c) / 2.0
        low, high = spec.ambient_min_c, spec.ambient_max_c
    stack = np.asarray(stack, dtype=np.intp)[None, :]

    def bounds(fraction: float) -> tuple[float, float]:
        return centre - fraction * (centre - low), centre + fraction * (high - centre)

    def meets(fraction: float) -> bool:
        lo, hi = bounds(fraction)
        changed = (replace(spec, supply_min_v=lo, supply_max_v=hi) if quantity == "supply"
                   else replace(spec, ambient_min_c=lo, ambient_max_c=hi))  # fmt: skip
        return bool(evaluate_designs(parts, stack, np.array([resistor_ohm]), changed).meets[0])

    if meets(1.0):
        return bounds(1.0)
    if not meets(0.0):
        return None
    inside, outside = 0.0, 1.0
    for _ in range(RANGE_BISECTIONS):
        middle = 0.5 * (inside + outside)
        inside, outside = (middle, outside) if meets(middle) else (inside, middle)
    return bounds(inside)
