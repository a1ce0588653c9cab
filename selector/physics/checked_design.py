"""One design proven at every corner: the spec, the parts, the stack, the resistor and what
the physics found (the contract metrics and their detail, and optionally a Monte Carlo run)."""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from typing import TYPE_CHECKING

import numpy as np

from selector.physics.design_metrics import DesignMetrics
from selector.physics.error_budget import BudgetLine, error_budget
from selector.physics.partset import PartSet
from selector.spec.rail_spec import RailSpec

if TYPE_CHECKING:
    # Only named here: Monte Carlo loads scipy.special, which 'seek' never needs.
    from selector.physics.montecarlo import MonteCarloResult


@dataclass(frozen=True)
class CheckedDesign:
    """Everything the check report shows for one design."""

    spec: RailSpec
    parts: PartSet
    stack: np.ndarray
    resistor_ohm: float
    resistor_chosen: bool
    metrics: DesignMetrics
    monte_carlo: MonteCarloResult | None = None
    #: The spec's series values the stack was tried at [Ω], and those at which it meets.
    series_values_ohm: np.ndarray | None = None
    meeting_resistors_ohm: np.ndarray | None = None

    @property
    def meets(self) -> bool:
        """Meets the spec at every corner (DESIGN §3), each corner at the operating point
        reached from zero current."""
        return bool(self.metrics.evaluation.meets[0]) and self.metrics.off_lowest_root_corners.size == 0

    @cached_property
    def budget(self) -> list[BudgetLine]:
        """The error budget (:func:`selector.physics.error_budget.error_budget`), largest first."""
        return error_budget(self.parts, self.stack, self.resistor_ohm, self.spec, self.metrics.evaluation)

    @property
    def elements(self) -> list[str]:
        return [str(self.parts.part[i]) for i in self.stack if i >= 0]
