"""One stack at every series value: the values at which it meets the spec, and the value
a reviewer's preference picks among them (``check --pick``).

The contract's choice (DESIGN §3) stays the default: the feasible value with the least
worst-case error, ties within 1 nV to the larger value. ``margin`` picks the meeting value
with the most dissipation margin, ``centre`` the one whose worst-case rail is centred in
the window (least ``|(low + high)/2 − centre of the window|``); where no value meets, both
fall back to the contract's choice.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from selector.physics.corners import DesignEvaluation, evaluate_designs
from selector.physics.partset import PartSet
from selector.search.resistor_choice import candidate_resistors
from selector.spec.rail_spec import RailSpec
from selector.spec.units import format_quantity

#: The preferences ``--pick`` takes.
PICKS: tuple[str, ...] = ("error", "margin", "centre")
#: Ties of the contract's choice [V] (DESIGN §3).
TIE_V = 1e-9


@dataclass(frozen=True)
class SeriesSweep:
    """One stack evaluated at every value of the spec's series in its allowed range.

    Attributes
    ----------
    values_ohm : ndarray [Ω]
        Ascending.
    evaluation : DesignEvaluation
        One design per value.
    """

    values_ohm: np.ndarray
    evaluation: DesignEvaluation

    @property
    def meeting_ohm(self) -> np.ndarray:
        """The values at which the stack meets the spec [Ω]."""
        return self.values_ohm[self.evaluation.meets]

    def pick(self, spec: RailSpec, preference: str = "error") -> float | None:
        """The value ``preference`` picks (see the module docstring); None when no value
        is feasible."""
        feasible = self.evaluation.feasible
        if not feasible.any():
            return None
        meets = self.evaluation.meets
        if preference == "error" or not meets.any():
            error = np.where(feasible, self.evaluation.error_v, np.inf)
            return float(self.values_ohm[np.flatnonzero(error <= error.min() + TIE_V).max()])
        if preference == "margin":
            score = np.where(meets, self.evaluation.margin, -np.inf)
            return float(self.values_ohm[np.flatnonzero(score >= score.max()).max()])
        centre = (spec.rail_min_v + spec.rail_max_v) / 2.0
        offset = np.abs((self.evaluation.vout_low_v + self.evaluation.vout_high_v) / 2.0 - centre)
        score = np.where(meets, offset, np.inf)
        return float(self.values_ohm[np.flatnonzero(score <= score.min() + TIE_V).max()])


def series_sweep(parts: PartSet, stack: np.ndarray, spec: RailSpec) -> SeriesSweep:
    """Evaluate one stack at every series value of the spec (its range, not a fixed R)."""
    values = candidate_resistors(replace(spec, resistor_fixed_ohm=None))
    stacks = np.repeat(np.asarray(stack, dtype=np.intp)[None, :], values.size, axis=0)
    return SeriesSweep(values, evaluate_designs(parts, stacks, values, spec))


def value_ranges_text(values_ohm: np.ndarray, meeting_ohm: np.ndarray) -> str:
    """``"390 … 510 Ω"`` for each run of consecutive series values, runs joined by ``", "``."""
    inside = np.isin(values_ohm, meeting_ohm)
    runs, start = [], None
    for index, flag in enumerate(np.append(inside, False)):
        if flag and start is None:
            start = index
        elif not flag and start is not None:
            low, high = values_ohm[start], values_ohm[index - 1]
            runs.append(format_quantity(low, "Ω") if start == index - 1 else
                        f"{format_quantity(low, 'Ω')} … {format_quantity(high, 'Ω')}")  # fmt: skip
            start = None
    return ", ".join(runs)
