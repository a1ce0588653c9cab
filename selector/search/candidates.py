"""Candidate stacks: every multiset of up to ``max_parts`` usable library parts, as arrays.

A stack is a multiset of parts (the order of elements in series does not change the
circuit), written as a row of part indices in non-decreasing order and padded with −1.
Enumeration yields the rows in chunks so that even millions of candidates never sit in
memory at once, and never loops in Python per candidate.

When each part has a number ``w_p`` and only stacks with ``Σ w_p ≤ limit`` can matter,
:func:`iterate_bounded_multisets` yields just those: with the parts relabelled in
ascending ``w``, the last element of a stack whose other elements are fixed runs over a
contiguous range of labels, found by one ``searchsorted`` for all prefixes at once.
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Sequence
from dataclasses import dataclass

import numpy as np

from selector.errors import SearchError
from selector.physics.partset import PartSet
from selector.spec.part_fields import FAMILIES

#: Candidate counts above this need ``force``: the search would take minutes or more.
CANDIDATE_LIMIT = 50_000_000
#: Candidate counts above this are refused even with ``force``: hours of work and more
#: index memory than a workstation has.
FORCED_CANDIDATE_CEILING = 2_000_000_000
#: Rows per enumerated chunk (about 12 MB of indices at three parts per stack).
DEFAULT_CHUNK_ROWS = 1 << 19


def multiset_count(part_count: int, size: int) -> int:
    """Number of multisets of ``size`` elements drawn from ``part_count`` kinds, C(n+k−1, k)."""
    if part_count <= 0:
        return 0
    return math.comb(part_count + size - 1, size)


def candidate_count(part_count: int, max_parts: int) -> int:
    """Stacks of 1 … ``max_parts`` elements from ``part_count`` parts, repetition allowed."""
    return sum(multiset_count(part_count, size) for size in range(1, max_parts + 1))


def check_search_size(part_count: int, max_parts: int, *, force: bool = False) -> int:
    """The candidate count, refusing an absurd search up front unless ``force``.

    Raises
    ------
    SearchError
        When the count exceeds :data:`CANDIDATE_LIMIT` and ``force`` is false; the message
        gives the estimate and how to proceed.
    """
    count = candidate_count(part_count, max_parts)
    if force and count > FORCED_CANDIDATE_CEILING:
        raise SearchError(
            f"max_parts {max_parts} over {part_count} parts makes {count:.3g} candidate stacks, "
            f"beyond what even --force runs ({FORCED_CANDIDATE_CEILING:.0e}); lower --max-parts "
            "or narrow --families"
        )
    if count > CANDIDATE_LIMIT and not force:
        raise SearchError(
            f"max_parts {max_parts} over {part_count} parts makes {count:.3g} candidate stacks "
            f"(limit {CANDIDATE_LIMIT:.0e}); lower --max-parts, narrow --families, or pass --force"
        )
    return count


def _nondecreasing_tuples(part_count: int, size: int) -> np.ndarray:
    """All non-decreasing index tuples of ``size`` from ``range(part_count)``, sorted.

    Built by prefixing each first index to the suffix of the (size−1)-table whose first
    entry is not smaller; numpy concatenation per first index, not per tuple.
    """
    if size == 0:
        return np.zeros((1, 0), dtype=np.int32)
    tail = _nondecreasing_tuples(part_count, size - 1)
    if size == 1:
        return np.arange(part_count, dtype=np.int32)[:, None]
    first_column = tail[:, 0]
    blocks = []
    for first in range(part_count):
        suffix = tail[np.searchsorted(first_column, first) :]
        blocks.append(np.concatenate([np.full((len(suffix), 1), first, np.int32), suffix], axis=1))
    return np.concatenate(blocks, axis=0)


def iterate_multisets(
    part_count: int, max_parts: int, *, chunk_rows: int = DEFAULT_CHUNK_ROWS
) -> Iterator[np.ndarray]:
    """Every multiset of 1 … ``max_parts`` indices, in chunks of padded rows.

    Parameters
    ----------
    part_count : int
        Number of usable parts; indices run 0 … part_count − 1.
    max_parts : int
        Most elements in a stack.
    chunk_rows : int
        Upper bound on rows per chunk (a chunk of one size class may be smaller).

    Yields
    ------
    ndarray of int32, shape (rows, max_parts)
        Non-decreasing indices, padded with −1; smaller stacks come first.
    """
    for size in range(1, max_parts + 1):
        yield from multiset_chunks(part_count, size, max_parts, chunk_rows=chunk_rows)


def bounded_multiset_count(weight: np.ndarray, size: int, limit: float) -> int:
    """How many rows :func:`iterate_bounded_multisets` yields for these arguments."""
    return int(_last_element_ranges(weight, size, limit)[3].sum())


def _last_element_ranges(weight, size, limit):
    """Relabelling, prefixes and each prefix's range of last labels (see the Notes above)."""
    weight = np.nan_to_num(np.asarray(weight, dtype=float), nan=-np.inf, posinf=np.inf, neginf=-np.inf)
    order = np.argsort(weight, kind="stable").astype(np.int32)
    ascending = weight[order]
    prefixes = _nondecreasing_tuples(weight.size, size - 1)
    first_label = prefixes[:, -1] if size > 1 else np.zeros(1, dtype=np.int32)
    with np.errstate(invalid="ignore"):
        prefix_sum = ascending[prefixes].sum(axis=1) if size > 1 else np.zeros(1)
        room = limit - prefix_sum
    high = np.searchsorted(ascending, np.where(np.isnan(room), np.inf, room), side="right")
    return order, prefixes, first_label, np.maximum(high - first_label, 0)


def multiset_chunks(part_count: int, size: int, width: int, *, chunk_rows: int = DEFAULT_CHUNK_ROWS) -> Iterator[np.ndarray]:
    """Every multiset of exactly ``size`` indices, in chunks of rows padded to ``width``."""
    if size == 1:
        yield _pad(np.arange(part_count, dtype=np.int32)[:, None], width)
        return
    tail = _nondecreasing_tuples(part_count, size - 1)
    starts = np.searchsorted(tail[:, 0], np.arange(part_count))
    pending: list[np.ndarray] = []
    pending_rows = 0
    for first in range(part_count):
        suffix = tail[starts[first] :]
        block = np.empty((len(suffix), size), dtype=np.int32)
        block[:, 0] = first
        block[:, 1:] = suffix
        pending.append(block)
        pending_rows += len(block)
        if pending_rows >= chunk_rows:
            yield _pad(np.concatenate(pending, axis=0), width)
            pending, pending_rows = [], 0
    if pending:
        yield _pad(np.concatenate(pending, axis=0), width)


def iterate_bounded_multisets(
    weight: np.ndarray, size: int, limit: float, width: int, *, chunk_rows: int = DEFAULT_CHUNK_ROWS
) -> Iterator[np.ndarray]:
    """Every multiset of exactly ``size`` indices whose weights sum to at most ``limit``.

    Parameters
    ----------
    weight : array (n,)
        Per part weight; ``±inf`` allowed. A NaN weight, or a sum of ``−inf`` and ``+inf``,
        counts as within the limit (the caller only ever loses pruning, never a stack).
    size : int
        Elements per multiset (at least 1).
    limit : float
        Largest allowed sum.
    width : int
        Row width; rows are padded with −1.
    chunk_rows : int
        Rows per chunk, about (a single prefix's range is never split).

    Yields
    ------
    ndarray of int32, shape (rows, width)
        Rows of non-decreasing part indices, each multiset once.

    Notes
    -----
    Relabel the parts so that ``w`` ascends (label ``r`` is part ``order[r]``). A multiset
    is one non-decreasing tuple of labels ``r₁ ≤ … ≤ r_size``; with the first ``size − 1``
    fixed, the sum is within the limit exactly for ``r_size`` in
    ``[r_{size−1}, hi)``, ``hi`` the count of labels with ``w ≤ limit − Σ`` of the prefix,
    since ``w`` ascends. Labels map back to part indices and each row is sorted.
    """
    order, prefixes, first_label, widths = _last_element_ranges(weight, size, limit)
    live = np.flatnonzero(widths)
    if live.size == 0:
        return
    ends = np.cumsum(widths[live])
    cuts = np.searchsorted(ends, np.arange(chunk_rows, ends[-1], chunk_rows), side="left") + 1
    for piece in np.split(live, cuts):
        if piece.size == 0:
            continue
        counts = widths[piece]
        owner = np.repeat(piece, counts)
        offset = np.arange(owner.size) - np.repeat(np.cumsum(counts) - counts, counts)
        labels = np.empty((owner.size, size), dtype=np.int32)
        if size > 1:
            labels[:, :-1] = prefixes[owner]
        labels[:, -1] = first_label[owner] + offset
        yield _pad(np.sort(order[labels], axis=1), width)


def _pad(rows: np.ndarray, width: int) -> np.ndarray:
    if rows.shape[1] == width:
        return rows
    padded = np.full((rows.shape[0], width), -1, dtype=np.int32)
    padded[:, : rows.shape[1]] = rows
    return padded


@dataclass(frozen=True)
class UsableParts:
    """The parts a search may use, and why each one is there.

    Attributes
    ----------
    parts : PartSet
        The usable parts only; stack indices refer to this set.
    library_index : ndarray of int
        Position of each usable part in the library's PartSet.
    condition : ndarray of str
        Per usable part, any condition attached to its use (e.g. from an approved list);
        empty when none.
    """

    parts: PartSet
    library_index: np.ndarray
    condition: np.ndarray


def usable_parts(
    library: PartSet,
    families: Sequence[str] | None = None,
    usable_mask: np.ndarray | None = None,
    condition_text: Sequence[str] | None = None,
) -> UsableParts:
    """Filter the library to the parts a search may use.

    Parameters
    ----------
    library : PartSet
        Every part in the library.
    families : sequence of str, optional
        Allowed families; None allows all.
    usable_mask : array of bool, optional
        Per library part, whether it may be used (e.g. on the approved list); None: all.
    condition_text : sequence of str, optional
        Per library part, a condition of use shown beside shortlist rows.

    Raises
    ------
    SearchError
        For an unknown family, an empty library, or a library left empty by the filter.
    """
    if len(library) == 0:
        raise SearchError("the library holds no parts; add some with 'railwright parts import FILE.csv'")
    keep = np.ones(len(library), dtype=bool)
    if families is not None:
        unknown = [family for family in families if family not in FAMILIES]
        if unknown:
            raise SearchError(f"unknown family '{unknown[0]}'; known: {', '.join(FAMILIES)}")
        keep &= np.isin(library.family.astype(str), list(families))
        if not keep.any():
            raise SearchError(f"no part of the library is in the families {', '.join(families)}")
    if usable_mask is not None:
        mask = np.asarray(usable_mask, dtype=bool)
        if mask.shape != (len(library),):
            raise ValueError("usable_mask must hold one flag per library part")
        keep &= mask
        if not keep.any():
            raise SearchError("no usable part is left after the approved-list filter")
    index = np.flatnonzero(keep)
    conditions = (
        np.array([str(text or "") for text in condition_text], dtype=object)[index]
        if condition_text is not None
        else np.full(index.size, "", dtype=object)
    )
    return UsableParts(parts=library.take(index), library_index=index, condition=conditions)
