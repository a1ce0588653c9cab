"""One stack at every series value: the values at which it meets the spec, and the value
a reviewer's preference picks among them (``check --pick``, ``seek --pick``).

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
        e = self.evaluation
        column = picked_columns(e.feasible[None], e.meets[None], e.error_v[None], e.margin[None],
                                e.vout_low_v[None], e.vout_high_v[None], spec, preference)[0]  # fmt: skip
        return None if column < 0 else float(self.values_ohm[column])


def picked_columns(feasible, meets, error_v, margin, vout_low_v, vout_high_v, spec: RailSpec,
                   preference: str) -> np.ndarray:  # fmt: skip
    """Per row of designs (one stack at ascending series values), the column the preference
    picks (see the module docstring); −1 where no value is feasible.

    Parameters
    ----------
    feasible, meets : bool array (rows, values)
    error_v, margin, vout_low_v, vout_high_v : array (rows, values) [V], [1], [V], [V]
    spec : RailSpec
    preference : str
        One of :data:`PICKS`.
    """
    error = np.where(feasible, error_v, np.inf)
    choice = _last_where(error <= error.min(axis=1, keepdims=True) + TIE_V)
    if preference == "margin":
        score = np.where(meets, margin, -np.inf)
        choice = np.where(meets.any(axis=1), _last_where(score >= score.max(axis=1, keepdims=True)), choice)
    elif preference == "centre":
        centre = (spec.rail_min_v + spec.rail_max_v) / 2.0
        score = np.where(meets, np.abs((vout_low_v + vout_high_v) / 2.0 - centre), np.inf)
        choice = np.where(meets.any(axis=1), _last_where(score <= score.min(axis=1, keepdims=True) + TIE_V), choice)
    return np.where(feasible.any(axis=1), choice, -1)


def _last_where(condition: np.ndarray) -> np.ndarray:
    """Per row, the last column where ``condition`` holds (the larger value of a tie)."""
    return condition.shape[1] - 1 - np.argmax(condition[:, ::-1], axis=1)


def series_sweep(parts: PartSet, stack: np.ndarray, spec: RailSpec) -> SeriesSweep:
    """Evaluate one stack at every series value of the spec (its range, not a fixed R)."""
    values = candidate_resistors(replace(spec, resistor_fixed_ohm=None))
    stacks = np.repeat(np.asarray(stack, dtype=np.intp)[None, :], values.size, axis=0)
    return SeriesSweep(values, evaluate_designs(parts, stacks, values, spec))


def repicked_designs(parts: PartSet, stacks: np.ndarray, resistor_ohm: np.ndarray, spec: RailSpec,
                     preference: str):  # fmt: skip
    """The resistor ``preference`` picks for each stack, and the designs' evaluation.

    Every stack is evaluated at every series value in one call, so the picked design's
    figures are those of the sweep. With ``"error"`` or a fixed resistor the designs are
    returned as given (the contract's choice).

    Parameters
    ----------
    parts : PartSet
    stacks : int array (rows, max_len)
    resistor_ohm : array (rows,) [Ω]
        The contract's choice of each stack.
    spec : RailSpec
    preference : str
        One of :data:`PICKS`.

    Returns
    -------
    resistor_ohm : array (rows,) [Ω]
    evaluation : DesignEvaluation, or None when nothing was re-picked
    """
    from selector.search.resistor_choice import take_designs

    if preference == "error" or spec.resistor_fixed_ohm is not None or not len(stacks):
        return resistor_ohm, None
    values = candidate_resistors(spec)
    rows = len(stacks)
    evaluation = evaluate_designs(parts, np.repeat(stacks, values.size, axis=0), np.tile(values, rows), spec)
    grid = lambda name: np.asarray(getattr(evaluation, name)).reshape(rows, values.size)  # noqa: E731
    columns = picked_columns(grid("feasible"), grid("meets"), grid("error_v"), grid("margin"), grid("vout_low_v"),
                             grid("vout_high_v"), spec, preference)  # fmt: skip
    # A stack the search listed is feasible at its contract value, so a column exists.
    columns = np.where(columns < 0, np.searchsorted(values, resistor_ohm), columns)
    chosen = np.arange(rows) * values.size + columns
    return values[columns], take_designs(evaluation, chosen)


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
