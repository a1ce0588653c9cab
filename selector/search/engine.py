"""Exhaustive search of a parts library for stacks that hold a rail (issue 4).

Every multiset of up to ``max_parts`` usable parts is a candidate
(:mod:`selector.search.candidates`). Each is bounded by gathers and sums
(:mod:`selector.search.stack_bounds`) and dropped only where the bounds prove that no series
resistor makes it feasible, or — once the shortlist is full — that its rank key cannot
beat the shortlist's last entry (:func:`selector.search.ranking.beats_threshold`).

The stacks of fewer than ``max_parts`` elements are searched first. Once they fill the
shortlist, the largest stacks are enumerated only where the sum of their elements'
separable rail bounds can still rank (:func:`largest_stack_chunks`); the rest are
counted as considered and pruned by rank without being built. Survivors are taken in
order of their lower-bound key, so the shortlist fills with good designs early and the
threshold tightens fast. Each series value of a survivor then gets its own bounds by
table look-ups (:mod:`selector.search.design_bounds`, coarse to fine over the resistor range):
the stack is dropped when every value is proven infeasible or its best bound cannot beat
the shortlist. The values left are solved at a few screening corners, which raise their
bounds and prove more of them infeasible (:func:`selector.search.resistor_choice.screen_designs`);
only the values whose bound can still win are then solved exactly at all 32 corners, with
the resistor chosen per DESIGN §3 (:mod:`selector.search.resistor_choice`). The per-value bound
tables are built half in a forked worker, and batches are solved in up to two processes.
"""

from __future__ import annotations

import dataclasses
import itertools
import multiprocessing
import os
import time
from collections import Counter
from collections.abc import Callable, Sequence
from concurrent.futures import ProcessPoolExecutor
from dataclasses import asdict, dataclass, field

import numpy as np

from selector.errors import OptionError
from selector.physics.partset import PartSet
from selector.search.candidates import (
    bounded_multiset_count,
    check_search_size,
    iterate_bounded_multisets,
    multiset_chunks,
    multiset_count,
    usable_parts,
)
from selector.search.design_bounds import cell_bound_tables
from selector.search.ranking import (
    DEFAULT_RESOLUTION_V,
    beats_threshold,
    key_columns,
    largest_unbeaten_error,
    quantised_error,
    rank_order,
    sort_designs,
    split_order_keys,
)
from selector.search.resistor_choice import (
    bounded_designs,
    candidate_resistors,
    choose_bounded,
    concatenate_designs,
    evaluate_in_calls,
    resistor_slots,
    screened_bounds,
    take_designs,
)
from selector.search.stack_bounds import (
    bound_stacks,
    may_be_off,
    off_error_floor,
    part_bound_tables,
    part_current_caps,
    separable_rail_bounds,
)
from selector.spec.rail_spec import RailSpec
from selector.spec.stack_notation import format_stack
from selector.spec.units import format_quantity

#: Stacks solved per batch; the pruning threshold is updated between batches.
BATCH_STACKS = 3000
#: Stacks in the first batch.
FIRST_BATCH_STACKS = 128
#: Below this many survivors a process pool costs more than it saves.
PARALLEL_THRESHOLD = 4 * BATCH_STACKS

REASON_WINDOW = "no current is both enough and within a part's power or current limit"
REASON_RESISTOR = ("no series value fits between the limits: enough current needs a lower R than the current "
                   "and power limits allow")
#: The two ends of that: even the lowest allowed R gives too little current, or even the
#: highest allowed R lets a part or the resistor take too much current or power.
REASON_TOO_LITTLE_CURRENT = "too little current: even the lowest allowed R cannot give every corner its least current"
REASON_TOO_MUCH_POWER = ("too much current or dissipation: even the highest allowed R overloads a part or the "
                         "resistor at some corner")
REASON_RANK = "cannot rank above the shortlist (error bound)"
REASON_DESIGN = "every series value proven short of current at some corner"
REASON_SCREEN = "every series value proven infeasible at a screening corner"

#: Stacks no series value serves kept as nearly feasible (closest limits first).
CLOSEST_CONFLICTS = 5
#: Below this many parts the cell tables are built in one process.
PARALLEL_TABLE_PARTS = 64
#: Widening of the separable skip's voltage limit [V] (rounding of the sums).
SKIP_SLACK_V = 1e-9

#: Tables the worker processes inherit when forked (set just before the pool starts).
_WORKER_TABLES: dict = {}


@dataclass
class SearchSummary:
    """What a search did: counts by outcome, the spec, the time taken.

    Attributes
    ----------
    considered : int
        Candidate stacks enumerated.
    pruned : dict of str to int
        Stacks dropped by a proven bound, per reason.
    solved : int
        Stacks solved exactly (each at every series value in its resistor range).
    designs_solved : int
        (stack, resistor) designs solved at all corners.
    infeasible : dict of str to int
        Solved stacks with no feasible resistor, per reason of their closest design.
    feasible, meeting : int
        Solved stacks with a feasible design, and those that meet the spec.
    spec : RailSpec
    elapsed_s : float [s]
    part_count : int
        Usable parts searched.
    """

    considered: int = 0
    pruned: dict[str, int] = field(default_factory=dict)
    solved: int = 0
    designs_solved: int = 0
    infeasible: dict[str, int] = field(default_factory=dict)
    feasible: int = 0
    meeting: int = 0
    spec: RailSpec | None = None
    elapsed_s: float = 0.0
    part_count: int = 0
    #: The stack whose resistor limits came closest to overlapping, as one line (or None).
    closest_resistor_conflict: str | None = None
    #: Designs that break a limit but come close, for telling why nothing meets: the
    #: solved ones with the least error and the stacks whose R limits came closest to
    #: overlapping (:func:`conflict_designs`), as ``(stacks, resistor_ohm)``; the API
    #: turns them into the ``nearly_feasible`` rows, each naming what it breaks.
    nearly_feasible_designs: tuple | None = field(default=None, repr=False)
    nearly_feasible: list = field(default_factory=list)
    _conflicts: list = field(default_factory=list, repr=False)
    _part_names: tuple[str, ...] = field(default=(), repr=False)

    @property
    def main_rejection(self) -> str | None:
        """The reason that rejected the most candidates (pruned or solved), if any."""
        tally = Counter(self.pruned) + Counter(self.infeasible)
        tally.pop(REASON_RANK, None)
        return tally.most_common(1)[0][0] if tally else None

    def as_dict(self) -> dict:
        """A JSON-able form (the spec as field → value in SI units)."""
        spec = {k: list(v) if isinstance(v, tuple) else v for k, v in asdict(self.spec).items()} if self.spec else None
        return {
            "considered": self.considered,
            "pruned": dict(self.pruned),
            "solved": self.solved,
            "designs_solved": self.designs_solved,
            "infeasible": dict(self.infeasible),
            "feasible": self.feasible,
            "meeting": self.meeting,
            "part_count": self.part_count,
            "main_rejection": self.main_rejection,
            "closest_resistor_conflict": self.closest_resistor_conflict,
            "nearly_feasible": list(self.nearly_feasible),
            "elapsed_s": self.elapsed_s,
            "spec": spec,
        }


@dataclass
class Shortlist:
    """The best feasible designs so far, at most ``top``, in rank order."""

    top: int
    order: tuple[str, ...]
    resolution_v: float
    stacks: np.ndarray
    resistor_ohm: np.ndarray
    evaluation: object | None = None

    def merge(self, stacks, resistor_ohm, evaluation) -> None:
        """Add feasible designs and keep the best ``top``."""
        if self.evaluation is not None:
            evaluation = concatenate_designs([self.evaluation, evaluation])
            stacks = np.concatenate([self.stacks, stacks])
            resistor_ohm = np.concatenate([self.resistor_ohm, resistor_ohm])
        ties = [stacks[:, column] for column in range(stacks.shape[1])] + [resistor_ohm]
        order = sort_designs(
            evaluation.meets, evaluation.error_v, evaluation.margin, (stacks >= 0).sum(axis=1),
            ties, order=self.order, resolution_v=self.resolution_v,
        )[: self.top]
        self.stacks, self.resistor_ohm = stacks[order], resistor_ohm[order]
        self.evaluation = take_designs(evaluation, order)

    @property
    def full(self) -> bool:
        return self.evaluation is not None and len(self.resistor_ohm) >= self.top

    def threshold(self) -> list[float]:
        """The rank key of the last entry (meets flag first)."""
        e = self.evaluation
        keys = key_columns(e.meets[-1:], e.error_v[-1:], e.margin[-1:], (self.stacks[-1:] >= 0).sum(axis=1), self.order, self.resolution_v)
        return [float(k[0]) for k in keys]


def batch_slices(count: int) -> list[slice]:
    """Batches growing from small to :data:`BATCH_STACKS`: the first, most promising
    stacks fill the shortlist quickly, so the threshold prunes the rest early."""
    slices, start, size = [], 0, FIRST_BATCH_STACKS
    while start < count:
        slices.append(slice(start, min(start + size, count)))
        start += size
        size = min(2 * size, BATCH_STACKS)
    return slices


def lower_bound_keys(error_lower_v, parts, spec: RailSpec, order, resolution_v) -> list[np.ndarray]:
    """Lower bounds of each rank-key component for stacks (see :mod:`selector.search.ranking`).

    ``meets`` cannot hold where the error bound exceeds the tolerance; the error key is
    monotone in the error; margin is at most 1, so its key (−margin) is at least −1; the
    part count is exact.
    """
    by_name = {
        "error": quantised_error(error_lower_v, resolution_v),
        "margin": np.full(error_lower_v.shape, -1.0),
        "parts": parts.astype(float),
    }
    return split_order_keys((error_lower_v > spec.tolerance_v).astype(float), by_name, order)


def _solve_batch(parts: PartSet, spec: RailSpec, stacks: np.ndarray, threshold, order, resolution_v):
    """Bound, prune and solve one batch of stacks (module docstring).

    Returns ``(rows, resistor, evaluation, designs_solved, pruned)``: the rows of
    ``stacks`` solved, their chosen values and evaluation, and the stacks pruned per reason.
    """
    tables, cell_tables = _WORKER_TABLES["stack"], _WORKER_TABLES["cell"]
    if spec.resistor_fixed_ohm is not None:
        resistor = np.full(len(stacks), candidate_resistors(spec)[0])
        return np.arange(len(stacks)), resistor, evaluate_in_calls(parts, stacks, resistor, spec), len(stacks), {}
    bounds = bound_stacks(tables, stacks, spec)
    error_cut = largest_unbeaten_error(threshold, order, spec.tolerance_v, resolution_v) if threshold is not None else np.inf
    stack_of_design, resistor, error_lower = bounded_designs(cell_tables, stacks, bounds, spec, error_cut)
    part_count = (stacks >= 0).sum(axis=1)
    proven_by_tables = _stack_minimum(error_lower, stack_of_design, len(stacks)) == np.inf
    wanted = _wanted_designs(error_lower, part_count[stack_of_design], spec, threshold, order, resolution_v)
    error_lower = screened_bounds(parts, stacks, spec, stack_of_design, resistor, error_lower, wanted)
    stack_lower = _stack_minimum(error_lower, stack_of_design, len(stacks))
    proven = stack_lower == np.inf
    beaten = np.zeros(len(stacks), dtype=bool)
    if threshold is not None:
        keys = lower_bound_keys(np.where(proven, 0.0, stack_lower), part_count, spec, order, resolution_v)
        beaten = ~proven & beats_threshold(keys, threshold)
    wanted = _wanted_designs(error_lower, part_count[stack_of_design], spec, threshold, order, resolution_v)
    rows, chosen, evaluation, designs = choose_bounded(
        parts, stacks, spec, stack_of_design[wanted], resistor[wanted], error_lower[wanted]
    )
    pruned = {
        REASON_DESIGN: int(proven_by_tables.sum()),
        REASON_SCREEN: int((proven & ~proven_by_tables).sum()),
        REASON_RANK: int(beaten.sum()),
    }
    return rows, chosen, evaluation, designs, pruned


def _stack_minimum(design_values, stack_of_design, stack_count) -> np.ndarray:
    """Least value over each stack's designs (inf for a stack with none)."""
    least = np.full(stack_count, np.inf)
    np.minimum.at(least, stack_of_design, design_values)
    return least


def _wanted_designs(error_lower, part_count, spec, threshold, order, resolution_v) -> np.ndarray:
    """Designs worth solving: a finite bound whose key the shortlist's last entry does not beat.

    A value whose own key bound is beaten need not be solved: were it the stack's choice,
    any other value reported instead has an error at least as large, so it is beaten too
    and never enters the shortlist.
    """
    wanted = np.isfinite(error_lower)
    if threshold is not None:
        keys = lower_bound_keys(np.where(wanted, error_lower, 0.0), part_count, spec, order, resolution_v)
        wanted &= ~beats_threshold(keys, threshold)
    return wanted


def _reason_texts(evaluation) -> np.ndarray:
    reason = np.asarray(evaluation.reason)
    names = getattr(evaluation, "reason_names", None) or getattr(evaluation, "names", None)
    if reason.dtype.kind in "iu" and names is not None:
        return np.asarray(names, dtype=object)[reason]
    return reason.astype(object)


def _count_resistor_conflicts(no_resistor, bounds, values, chunk, summary: SearchSummary, pruned: Counter) -> None:
    """Count the stacks no series value serves, by which end fails, and keep the few whose
    limits came closest to overlapping (their R range for current and for power): first
    those whose error bound is nearest the tolerance (any within it alike), then the
    narrowest gap."""
    if not no_resistor.any():
        return
    high, low = bounds.resistor_high_ohm[no_resistor], bounds.resistor_low_ohm[no_resistor]
    too_little = high < values[0]
    too_much = ~too_little & (low > values[-1])
    pruned[REASON_TOO_LITTLE_CURRENT] += int(too_little.sum())
    pruned[REASON_TOO_MUCH_POWER] += int(too_much.sum())
    both = ~too_little & ~too_much
    pruned[REASON_RESISTOR] += int(both.sum())
    if both.any():
        rows = np.flatnonzero(no_resistor)[np.flatnonzero(both)]
        outside = np.maximum(bounds.error_lower_v[rows] - summary.spec.tolerance_v, 0.0)
        found = [(float(o), float(lo / hi), tuple(int(i) for i in chunk[row] if i >= 0), float(hi), float(lo))
                 for o, lo, hi, row in zip(outside, low[both], high[both], rows, strict=True)]  # fmt: skip
        summary._conflicts = sorted(summary._conflicts + found)[:CLOSEST_CONFLICTS]
        _, ratio, stack, most, least = summary._conflicts[0]
        name = format_stack([summary._part_names[i] for i in stack])
        need = (f"the current and power limits with the spec's {summary.spec.min_margin:.0%} margin"
                if summary.spec.min_margin > 0 else "the parts' and the resistor's current and power limits")
        summary.closest_resistor_conflict = (
            f"{name}: enough current needs R ≤ {format_quantity(most, 'Ω')}; {need} need R ≥ "
            f"{format_quantity(least, 'Ω')}"
            + (f" (no {summary.spec.resistor_series} value lies between)" if ratio <= 1 else ""))  # fmt: skip


def conflict_designs(summary: SearchSummary, values: np.ndarray, max_parts: int) -> tuple[np.ndarray, np.ndarray]:
    """The stacks kept by :func:`_count_resistor_conflicts`, each at the series value
    nearest the geometric middle of the gap between its two R limits (padded stacks, [Ω])."""
    stacks = np.full((len(summary._conflicts), max_parts), -1, dtype=np.int32)
    middle = np.zeros(len(summary._conflicts))
    for row, (_, _, stack, most, least) in enumerate(summary._conflicts):
        stacks[row, : len(stack)] = stack
        middle[row] = np.sqrt(most * least)
    nearest = np.abs(np.log(values[None, :]) - np.log(middle[:, None])).argmin(axis=1) if len(middle) else []
    return stacks, values[nearest]


def survey_candidates(spec: RailSpec, tables, chunks, summary: SearchSummary, pruned: Counter):
    """Bound every candidate of ``chunks``; returns the survivors and their error bounds.

    Candidates are counted in ``summary.considered``, those no resistor can make feasible
    in ``pruned`` by reason.
    """
    values = candidate_resistors(spec)
    kept_stacks, kept_error = [np.zeros((0, spec.max_parts), dtype=np.int32)], [np.zeros(0)]
    for chunk in chunks:
        summary.considered += chunk.shape[0]
        bounds = bound_stacks(tables, chunk, spec)
        first, last = resistor_slots(bounds, values)
        window = bounds.window_empty
        no_resistor = ~window & (first > last) & (spec.resistor_fixed_ohm is None)
        pruned[REASON_WINDOW] += int(window.sum())
        _count_resistor_conflicts(no_resistor, bounds, values, chunk, summary, pruned)
        keep = ~(window | no_resistor)
        kept_stacks.append(chunk[keep])
        kept_error.append(bounds.error_lower_v[keep])
    return np.concatenate(kept_stacks), np.concatenate(kept_error)


def largest_stack_chunks(part_count: int, spec: RailSpec, tables, error_keep_v: float, summary: SearchSummary, pruned: Counter):
    """The stacks of ``max_parts`` elements whose separable error bound is within ``error_keep_v``.

    A stack is left out only when, for one corner class, the sum of its elements' least
    voltages is above ``target + error_keep_v``
    (:func:`selector.search.stack_bounds.separable_rail_bounds`): its error bound is then above
    ``error_keep_v``, so the shortlist's last entry beats it. Those left out are counted
    as considered and pruned by rank; the class that leaves out the most is used.
    """
    size = spec.max_parts
    total = multiset_count(part_count, size)
    if not np.isfinite(error_keep_v):
        return multiset_chunks(part_count, size, size)
    least, _ = separable_rail_bounds(tables)
    # A stack whose parts need no current may have its stack off at a corner, with a rail
    # below its 1 fA voltage (stack bounds, point 8); skipping is sound only while such a
    # design's error, at least target − that rail, is beyond the cut too.
    off_parts = may_be_off(tables.floors_a[tables.floor_index[:-1]])
    if off_parts.any():
        off_rail = size * float(tables.off_upper_v[:, :-1][:, off_parts].max())
        if float(off_error_floor(spec, np.array(off_rail))) <= error_keep_v + SKIP_SLACK_V:
            return multiset_chunks(part_count, size, size)
    limit = spec.target_v + error_keep_v + SKIP_SLACK_V
    kept = [bounded_multiset_count(least[corner_class], size, limit) for corner_class in range(4)]
    best = int(np.argmin(kept))
    summary.considered += total - kept[best]
    pruned[REASON_RANK] += total - kept[best]
    return iterate_bounded_multisets(least[best], size, limit, size)


def shared_cell_tables(parts: PartSet, spec: RailSpec, tables, worker_count: int):
    """:func:`selector.search.design_bounds.cell_bound_tables`, half the parts in a second process.

    The rows of each part are independent, so every other part is tabulated in a forked
    worker while this process does the rest, and the rows are joined.
    """
    resistor_low = float(candidate_resistors(spec)[0])
    caps = part_current_caps(tables)
    if worker_count < 2 or len(parts) < PARALLEL_TABLE_PARTS:
        return cell_bound_tables(parts, spec, resistor_low, part_caps_a=caps)
    # Alternate parts, so both halves hold forward parts (the costly rows) alike.
    theirs = np.arange(len(parts)) % 2 == 1
    with ProcessPoolExecutor(1, mp_context=multiprocessing.get_context("fork")) as pool:
        future = pool.submit(cell_bound_tables, parts, spec, resistor_low, part_caps_a=caps, part_mask=theirs)
        mine = cell_bound_tables(parts, spec, resistor_low, part_caps_a=caps, part_mask=~theirs)
        other = future.result()
    rows = np.append(theirs, False)[None, :, None]
    return dataclasses.replace(
        mine, lower_v=np.where(rows, other.lower_v, mine.lower_v), upper_v=np.where(rows, other.upper_v, mine.upper_v)
    )


class _Solver:
    """Solves sorted survivors batch by batch into one shortlist (module docstring)."""

    def __init__(self, parts, spec, order, resolution_v, shortlist, summary, pruned, worker_count, progress):
        self.parts, self.spec, self.order, self.resolution_v = parts, spec, order, resolution_v
        self.shortlist, self.summary, self.pruned = shortlist, summary, pruned
        self.worker_count, self.progress = worker_count, progress
        self.infeasible = Counter()
        self.nearly = Shortlist(shortlist.top, order, resolution_v, np.zeros((0, spec.max_parts), dtype=np.int32),
                                np.zeros(0))  # fmt: skip
        self.pool = None
        self.done = self.total = 0

    def close(self) -> None:
        if self.pool is not None:
            self.pool.shutdown()

    def solve(self, stacks: np.ndarray, error_lower: np.ndarray) -> None:
        """Solve survivors in order of their lower-bound key, pruning by the shortlist."""
        spec, order, resolution_v, shortlist = self.spec, self.order, self.resolution_v, self.shortlist
        part_counts = (stacks >= 0).sum(axis=1)
        lower_keys = lower_bound_keys(error_lower, part_counts, spec, order, resolution_v)
        sequence = np.lexsort(lower_keys[::-1])
        stacks, lower_keys = stacks[sequence], [k[sequence] for k in lower_keys]
        self.total += len(stacks)
        batches = batch_slices(len(stacks))
        if self.pool is None and self.worker_count > 1 and len(stacks) >= PARALLEL_THRESHOLD:
            self.pool = ProcessPoolExecutor(self.worker_count, mp_context=multiprocessing.get_context("fork"))
        position = 0
        while position < len(batches):
            group = batches[position : position + (self.worker_count if self.pool else 1)]
            position += len(group)
            selected = []
            for piece in group:
                keep = np.ones(piece.stop - piece.start, dtype=bool)
                if shortlist.full:
                    keep = ~beats_threshold([k[piece] for k in lower_keys], shortlist.threshold())
                self.pruned[REASON_RANK] += int((~keep).sum())
                if keep.any():
                    selected.append(stacks[piece][keep])
            threshold = shortlist.threshold() if shortlist.full else None
            arguments = [(self.parts, spec, chosen, threshold, order, resolution_v) for chosen in selected]
            if self.pool is not None and len(selected) > 1:
                results = list(self.pool.map(_solve_batch, *zip(*arguments, strict=True)))
            else:
                results = [_solve_batch(*call) for call in arguments]
            for batch_stacks, result in zip(selected, results, strict=True):
                self._take(batch_stacks, *result)
            if self.progress is not None:
                self.progress(self.done + batches[position - 1].stop, self.total)
        self.done = self.total

    def _take(self, batch_stacks, rows, resistor, evaluation, designs, batch_pruned) -> None:
        self.pruned.update(batch_pruned)
        self.summary.solved += len(rows)
        self.summary.designs_solved += designs
        if evaluation is None:
            return
        batch_stacks = batch_stacks[rows]
        feasible = np.asarray(evaluation.feasible, dtype=bool)
        self.infeasible.update(_reason_texts(evaluation)[~feasible].tolist())
        self.summary.feasible += int(feasible.sum())
        self.summary.meeting += int(np.asarray(evaluation.meets)[feasible].sum())
        breaking = np.flatnonzero(~feasible & np.isfinite(evaluation.error_v))
        if breaking.size:
            self.nearly.merge(batch_stacks[breaking], resistor[breaking], take_designs(evaluation, breaking))
        if feasible.any():
            rows = np.flatnonzero(feasible)
            self.shortlist.merge(batch_stacks[rows], resistor[rows], take_designs(evaluation, rows))


def search_library(
    library_parts: PartSet,
    spec: RailSpec,
    *,
    top: int = 10,
    rank_by: Sequence[str] | str | None = None,
    resolution_v: float = DEFAULT_RESOLUTION_V,
    usable_mask: np.ndarray | None = None,
    conditions: Sequence[str] | None = None,
    force: bool = False,
    workers: int | None = None,
    progress: Callable[[int, int], None] | None = None,
    pick: str = "error",
):
    """Search every candidate stack; returns ``(shortlist, usable, summary)``.

    Parameters
    ----------
    library_parts : PartSet
        The whole library.
    spec : RailSpec
    top : int
        Shortlist length.
    rank_by : str or sequence of str, optional
        Key order after ``meets`` (:func:`selector.search.ranking.rank_order`).
    resolution_v : float [V]
        Error quantum of the ranking.
    usable_mask, conditions : optional
        Per library part, whether it may be used and the condition shown with it.
    force : bool
        Search even when the candidate count is above the sane limit.
    workers : int, optional
        Processes for exact solving (default: the machine's cores, at most 2).
    progress : callable(done, total), optional
        Called as survivors are solved.
    pick : str
        Which meeting series value each listed stack gets
        (:mod:`selector.search.series_sweep`): ``"error"``, the contract's choice, by which
        the search ranks and prunes; ``"margin"`` or ``"centre"`` re-pick the resistor of
        each listed stack among its meeting values, and the list is sorted again. Which
        stacks are listed is still decided by the contract's choice.
    """
    from selector.search.series_sweep import PICKS

    started = time.perf_counter()
    if top < 1:
        raise OptionError(f"--top: must be at least 1, not {top}")
    if pick not in PICKS:
        raise OptionError(f"--pick: '{pick}' is not one of {', '.join(PICKS)}")
    order = rank_order(rank_by)
    quantised_error(np.zeros(1), resolution_v)
    usable = usable_parts(library_parts, spec.families, usable_mask, conditions)
    parts = usable.parts
    summary = SearchSummary(spec=spec, part_count=len(parts), _part_names=tuple(str(name) for name in parts.part))
    check_search_size(len(parts), spec.max_parts, force=force)
    tables = part_bound_tables(parts, spec)
    worker_count = workers if workers is not None else min(os.cpu_count() or 1, 2)
    # A fixed resistor is solved directly: no per-value bounds to tabulate.
    cell_tables = shared_cell_tables(parts, spec, tables, worker_count) if spec.resistor_fixed_ohm is None else None
    _WORKER_TABLES.update(stack=tables, cell=cell_tables)
    shortlist = Shortlist(top, order, resolution_v, np.zeros((0, spec.max_parts), dtype=np.int32), np.zeros(0))
    pruned = Counter()
    solver = _Solver(parts, spec, order, resolution_v, shortlist, summary, pruned, worker_count, progress)
    try:
        # Smaller stacks first: they are few, and the shortlist they fill lets most of
        # the largest stacks be left out unenumerated (largest_stack_chunks).
        smaller = (multiset_chunks(len(parts), size, spec.max_parts) for size in range(1, spec.max_parts))
        solver.solve(*survey_candidates(spec, tables, itertools.chain.from_iterable(smaller), summary, pruned))
        error_keep = largest_unbeaten_error(shortlist.threshold(), order, spec.tolerance_v, resolution_v) if shortlist.full else np.inf
        largest = largest_stack_chunks(len(parts), spec, tables, error_keep, summary, pruned)
        solver.solve(*survey_candidates(spec, tables, largest, summary, pruned))
    finally:
        solver.close()
        _WORKER_TABLES.clear()
    shortlist = _repicked(shortlist, parts, spec, pick)
    summary.pruned = {reason: count for reason, count in pruned.items() if count}
    infeasible = solver.infeasible
    summary.infeasible = dict(infeasible)
    conflicts = conflict_designs(summary, candidate_resistors(spec), spec.max_parts)
    if solver.nearly.evaluation is not None:
        conflicts = (np.concatenate([solver.nearly.stacks, conflicts[0]]), np.concatenate([solver.nearly.resistor_ohm,
                                                                                           conflicts[1]]))
    summary.nearly_feasible_designs = conflicts if len(conflicts[1]) else None
    summary.elapsed_s = time.perf_counter() - started
    return shortlist, usable, summary


def _repicked(shortlist: Shortlist, parts: PartSet, spec: RailSpec, pick: str) -> Shortlist:
    """The shortlist with each stack's resistor re-picked by ``pick``, sorted again."""
    from selector.search.series_sweep import repicked_designs

    if shortlist.evaluation is None:
        return shortlist
    resistor, evaluation = repicked_designs(parts, shortlist.stacks, shortlist.resistor_ohm, spec, pick)
    if evaluation is None:
        return shortlist
    again = Shortlist(shortlist.top, shortlist.order, shortlist.resolution_v, shortlist.stacks[:0], resistor[:0])
    again.merge(shortlist.stacks, resistor, evaluation)
    return again
