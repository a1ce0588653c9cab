"""The shortlist as a DataFrame: the search's result, one row per ranked design.

The columns are the interface contract's (DESIGN §4): ``rank, stack, parts,
resistor_ohm, vout_nom_v, vout_low_v, vout_high_v, error_v, margin, meets``, followed by
our additions ``pareto`` (on the front of error, margin and part count), ``i_min_a``,
``conditions`` (conditions of use of the stack's parts, when any), ``near_limit`` (a part
or the resistor within 20 % of its allowed power: the table's ``!``) and ``cautions``
(every caution of :mod:`selector.physics.design_cautions`, joined by "; ").
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from selector.physics.design_cautions import NEAR_LIMIT_MARGIN, design_cautions
from selector.search.ranking import pareto_front
from selector.spec.stack_notation import format_stack

CONTRACT_COLUMNS: tuple[str, ...] = (
    "rank", "stack", "parts", "resistor_ohm", "vout_nom_v", "vout_low_v", "vout_high_v",
    "error_v", "margin", "meets",
)  # fmt: skip
EXTRA_COLUMNS: tuple[str, ...] = ("pareto", "i_min_a", "conditions", "near_limit", "cautions", "statuses")
COLUMNS: tuple[str, ...] = CONTRACT_COLUMNS + EXTRA_COLUMNS


def shortlist_frame(parts, stacks: np.ndarray, resistor_ohm: np.ndarray, evaluation, condition: np.ndarray,
                    status: np.ndarray | None = None) -> pd.DataFrame:  # fmt: skip
    """Build the shortlist DataFrame from ranked designs (best first).

    Parameters
    ----------
    parts : PartSet
        The parts the stack indices refer to.
    stacks : int array (n, max_len)
    resistor_ohm : array (n,) [Ω]
    evaluation : DesignEvaluation or None
        Of the same designs, in the same order (None: an empty shortlist).
    condition : array of str
        Per part, its condition of use (empty when none).
    status : array of str, optional
        Per part, its status on the spec's approved list: a row's ``statuses`` lists its
        parts whose status is not ``approved`` (an evaluating part, say), empty otherwise.
    """
    if evaluation is None or len(resistor_ohm) == 0:
        return pd.DataFrame({column: pd.Series(dtype=object) for column in COLUMNS})
    rows = [row[row >= 0] for row in stacks]
    count = np.array([row.size for row in rows])
    conditions = [
        "; ".join(dict.fromkeys(f"{parts.part[i]}: {condition[i]}" for i in row if condition[i])) for row in rows
    ]
    cautions = [design_cautions(parts, stack, evaluation, design) for design, stack in enumerate(stacks)]
    statuses = ["" if status is None else "; ".join(dict.fromkeys(
        f"{parts.part[i]}: {status[i]}" for i in row if status[i] != "approved")) for row in rows]  # fmt: skip
    return pd.DataFrame({
        "rank": np.arange(1, len(rows) + 1),
        "stack": [format_stack(parts.part[row]) for row in rows],
        "parts": count,
        "resistor_ohm": np.asarray(resistor_ohm, dtype=float),
        "vout_nom_v": evaluation.vout_nom_v,
        "vout_low_v": evaluation.vout_low_v,
        "vout_high_v": evaluation.vout_high_v,
        "error_v": evaluation.error_v,
        "margin": evaluation.margin,
        "meets": np.asarray(evaluation.meets, dtype=bool),
        "pareto": pareto_front(evaluation.error_v, evaluation.margin, count),
        "i_min_a": evaluation.i_min_a,
        "conditions": conditions,
        "near_limit": np.asarray(evaluation.margin, dtype=float) < NEAR_LIMIT_MARGIN,
        "cautions": ["; ".join(c.text for c in found) for found in cautions],
        "statuses": statuses,
    })


#: Limits a nearly feasible design is listed for breaking (the window is what fill rows miss anyway).
BROKEN_LIMITS: tuple[str, ...] = ("least current", "most current", "part power", "resistor power", "no solution")


def nearly_feasible_rows(parts, designs, spec, limit: int) -> list[dict]:
    """Designs that break a limit, closest to the target first, each naming what it breaks.

    Parameters
    ----------
    parts : PartSet
        The parts the stack indices refer to.
    designs : (stacks, resistor_ohm) or None
        :attr:`selector.search.engine.SearchSummary.nearly_feasible_designs`.
    spec : RailSpec
    limit : int
        Most rows.

    Returns
    -------
    list of dict
        ``stack, parts, resistor_ohm, vout_low_v, vout_high_v, error_v`` and, per broken
        limit (:func:`selector.physics.design_failures.design_failures`, the window left
        out), ``limits`` and ``breaks``; non-finite numbers as None. Each design is solved
        again at every corner with per-element detail, so a part's power is named; a design
        that breaks nothing there (a bound was not tight) is left out.
    """
    from selector.physics.corners import evaluate_designs
    from selector.physics.design_failures import design_failures

    if designs is None or len(designs[1]) == 0:
        return []
    stacks, resistor_ohm = designs
    detailed = evaluate_designs(parts, stacks, resistor_ohm, spec, detail=True)
    order = np.lexsort((resistor_ohm, np.where(np.isfinite(detailed.error_v), detailed.error_v, np.inf)))
    finite = lambda value: float(value) if np.isfinite(value) else None  # noqa: E731
    rows, seen = [], set()
    for design in order:
        stack = stacks[design]
        broken = [f for f in design_failures(parts, stack, spec, detailed, design) if f.limit in BROKEN_LIMITS]
        name = format_stack(parts.part[stack[stack >= 0]])
        if not broken or (name, float(resistor_ohm[design])) in seen:
            continue
        seen.add((name, float(resistor_ohm[design])))
        rows.append({
            "stack": name, "parts": int((stack >= 0).sum()), "resistor_ohm": float(resistor_ohm[design]),
            "vout_low_v": finite(detailed.vout_low_v[design]), "vout_high_v": finite(detailed.vout_high_v[design]),
            "error_v": finite(detailed.error_v[design]), "limits": [f.limit for f in broken],
            "breaks": [f.text for f in broken],
        })  # fmt: skip
    return rows[:limit]
