"""How the solver lays out stacks: each element's key, a layout signature per point, and
the groups of points that share one (solver internals of :mod:`selector.physics.circuit`).

Points of one layout have their distinct parts in the same columns with the same
multiplicities, so each block of them is solved with no empty slot.
"""

from __future__ import annotations

import numpy as np

from selector.physics.partset import PartSet


def stack_layout(parts: PartSet, stacks: np.ndarray, merge: bool) -> tuple[np.ndarray, np.ndarray]:
    """Element keys per stack position and a layout signature per point.

    Keys: forward part ``p`` → ``p``, breakdown part ``p`` → ``P + p``, padding → ``2P``.
    With ``merge`` each row's keys are sorted (forward, then breakdown, then padding) and
    the signature packs the forward count, the breakdown count and where each run of
    equal keys starts, so every point of one signature has its distinct parts in the same
    columns with the same multiplicities. Without ``merge`` (one tolerance sign per
    element) the columns stay in place and the signature is their family pattern.

    Returns
    -------
    keys : int array (max_len, n)
    signature : int array (n,)
    """
    count, width = stacks.shape
    part_count = len(parts)
    pad = 2 * part_count
    # Narrow integers: this pass touches every element of every stack.
    key_type = np.int16 if pad < 1 << 15 else np.int32
    key_of_part = np.append(np.arange(part_count) + parts.is_zener * part_count, pad).astype(key_type)
    columns = [key_of_part[stacks[:, j]] for j in range(width)]
    if merge:
        _sort_columns(columns)
        forward = np.zeros(count, dtype=np.int32)
        filled = np.zeros(count, dtype=np.int32)
        for column in columns:
            forward += column < part_count
            filled += column < pad
        forward *= width + 1
        forward += filled
        signature = np.left_shift(forward, width - 1, out=forward)
        for j in range(1, width):
            head = (columns[j] != columns[j - 1]).astype(np.int32)
            signature |= np.left_shift(head, j - 1, out=head)
    else:
        signature = np.zeros(count, dtype=np.int64)
        for j in range(width):
            signature += ((columns[j] >= part_count).astype(np.int64) + (columns[j] == pad)) * 3**j
    return np.stack(columns), signature


def decode_layout(signature: int, width: int, merge: bool) -> tuple[list[tuple[int, int]], list[tuple[int, int]]]:
    """(column, multiplicity) of each forward and each breakdown slot of a signature."""
    if not merge:
        codes = [(signature // 3**j) % 3 for j in range(width)]
        return [(j, 1) for j in range(width) if codes[j] == 0], [(j, 1) for j in range(width) if codes[j] == 1]
    forward, filled = divmod(signature >> (width - 1), width + 1)
    starts = [0] + [j for j in range(1, width) if signature >> (j - 1) & 1]
    slots: list[list[tuple[int, int]]] = [[], []]
    for family, (begin, end) in enumerate(((0, forward), (forward, filled))):
        if end > begin:
            heads = [begin] + [j for j in starts if begin < j < end]
            slots[family] = [(j, following - j) for j, following in zip(heads, heads[1:] + [end], strict=True)]
    return slots[0], slots[1]


def layout_groups(signature: np.ndarray):
    """Yield ``(signature, points)`` for each layout; ``points`` is a slice when all share one."""
    if signature.size == 0:
        return
    first, last = int(signature.min()), int(signature.max())
    if first == last:
        yield first, slice(0, signature.size)
        return
    # A stable sort on 16-bit keys is a radix sort: linear in the number of points.
    narrow = signature.astype(np.uint16) if last < 1 << 16 else signature
    order = np.argsort(narrow, kind="stable")
    ordered = narrow[order]
    boundaries = np.flatnonzero(ordered[1:] != ordered[:-1]) + 1
    for begin, end in zip(np.r_[0, boundaries], np.r_[boundaries, order.size], strict=True):
        yield int(ordered[begin]), order[begin:end]


def _sort_columns(columns: list[np.ndarray]) -> None:
    """Sort each row across a short list of column arrays, in place (odd-even transposition
    network: ``width`` passes of compare-exchange; D. E. Knuth, *The Art of Computer
    Programming* vol. 3, 2nd ed., §5.3.4)."""
    width = len(columns)
    spare = np.empty_like(columns[0]) if width > 1 else None
    for rank in range(width):
        for i in range(rank % 2, width - 1, 2):
            low = np.minimum(columns[i], columns[i + 1], out=spare)
            np.maximum(columns[i], columns[i + 1], out=columns[i + 1])
            spare, columns[i] = columns[i], low


def family_slots(parts: PartSet, stacks: np.ndarray, element_sign: np.ndarray | None = None) -> tuple[np.ndarray, ...]:
    """Forward and breakdown parts of each stack in separate slot rows, with multiplicities.

    Equal parts in one stack carry one current at one ambient, so they share one junction
    temperature and one voltage: solving each distinct part once is exact. With
    per-element tolerance signs (``element_sign``) equal parts differ and are kept apart.
    This is the solver's own layout (:func:`stack_layout`), spelled out per row.

    Parameters
    ----------
    parts : PartSet
    stacks : int array (n, max_len), padded with −1

    Returns
    -------
    forward_part, forward_count, forward_sign : arrays (n, max_len)
        Distinct forward parts first in each row, their multiplicity (0 = empty slot), and
        their tolerance sign (0 unless ``element_sign`` is given).
    breakdown_part, breakdown_count, breakdown_sign : arrays (n, max_len)
        The same for breakdown parts.
    """
    stacks = np.atleast_2d(np.asarray(stacks, dtype=np.intp))
    merge = element_sign is None
    keys, signature = stack_layout(parts, stacks, merge)
    sign = None if merge else np.broadcast_to(np.asarray(element_sign, dtype=float), stacks.shape)
    result = []
    for _ in range(2):
        result += [np.zeros(stacks.shape, dtype=np.intp), np.zeros(stacks.shape, dtype=np.intp), np.zeros(stacks.shape)]
    for layout, rows in layout_groups(signature):
        for family, slots in enumerate(decode_layout(layout, stacks.shape[1], merge)):
            part_out, count_out, sign_out = result[3 * family : 3 * family + 3]
            for slot, (column, multiplicity) in enumerate(slots):
                part_out[rows, slot] = keys[column][rows] - family * len(parts)
                count_out[rows, slot] = multiplicity
                if sign is not None:
                    sign_out[rows, slot] = sign[rows, column]
    return tuple(result)
