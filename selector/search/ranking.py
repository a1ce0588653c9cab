"""Ranking of solved designs: the shortlist order, the Pareto flag and the pruning test.

Order (issue 4): designs that meet the spec first, then the worst-case error quantised to
a resolution (default 1 mV), then dissipation margin (descending), then part count
(ascending). ``rank_by`` reorders the last three keys of the designs that meet; meeting
the spec always leads, so that when fewer designs meet than the shortlist holds, the
closest feasible ones fill it (DESIGN §4), and those fill rows keep the default order,
error first, whatever ``rank_by`` says: a design outside the window is ranked by how far
outside it is. Remaining ties fall to the caller's tie-breakers (the search uses the
stack's part indices and then the resistor), so the order is reproducible.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from selector.errors import OptionError

RANK_KEYS: tuple[str, ...] = ("error", "margin", "parts")
DEFAULT_RESOLUTION_V = 1e-3


def rank_order(rank_by: Sequence[str] | str | None = None) -> tuple[str, ...]:
    """The full key order after ``meets``: the keys given, then the others in default order.

    Parameters
    ----------
    rank_by : str or sequence of str, optional
        E.g. ``"margin,error"``; names among :data:`RANK_KEYS`.

    Raises
    ------
    OptionError
        Naming an unknown or repeated key.
    """
    if rank_by is None:
        return RANK_KEYS
    names = [name.strip().lower() for name in (rank_by.split(",") if isinstance(rank_by, str) else rank_by)]
    names = [name for name in names if name]
    for name in names:
        if name not in RANK_KEYS:
            raise OptionError(f"--rank-by: unknown key '{name}'; use {', '.join(RANK_KEYS)} (meets always leads)")
    if len(set(names)) != len(names):
        raise OptionError(f"--rank-by: a key is given twice in '{','.join(names)}'")
    return tuple(names) + tuple(key for key in RANK_KEYS if key not in names)


def quantised_error(error_v: np.ndarray, resolution_v: float) -> np.ndarray:
    """Error in whole steps of the resolution, ``floor(error/resolution)`` (monotone)."""
    if not resolution_v > 0:
        raise OptionError(f"--resolution: must be a positive voltage, not {resolution_v!r}")
    return np.floor(np.asarray(error_v, dtype=float) / resolution_v)


def key_columns(
    meets: np.ndarray,
    error_v: np.ndarray,
    margin: np.ndarray,
    parts: np.ndarray,
    order: Sequence[str],
    resolution_v: float,
) -> list[np.ndarray]:
    """Numeric sort keys, most significant first, smaller is better: ``order`` for the
    designs that meet, the default order for the rest."""
    by_name = {
        "error": quantised_error(error_v, resolution_v),
        "margin": -np.asarray(margin, dtype=float),
        "parts": np.asarray(parts, dtype=float),
    }
    return split_order_keys(~np.asarray(meets, dtype=bool), by_name, order)


def split_order_keys(misses: np.ndarray, by_name: dict[str, np.ndarray], order: Sequence[str]) -> list[np.ndarray]:
    """The key columns ``[misses, ...]``: where ``misses`` is 0 the named keys in ``order``,
    where it is 1 in the default order (:data:`RANK_KEYS`).

    A lower bound of every key gives, through this, a lower bound of the key vector: with a
    ``misses`` bound 1 the design certainly misses and takes the default order; with 0 it
    either meets (and takes ``order``) or misses, and a missing design's key starts with 1,
    above any key that starts with 0.
    """
    misses = np.asarray(misses, dtype=float)
    columns = [misses]
    for mine, default in zip(order, RANK_KEYS, strict=True):
        columns.append(by_name[mine] if mine == default else np.where(misses == 0, by_name[mine], by_name[default]))
    return columns


def sort_designs(
    meets: np.ndarray,
    error_v: np.ndarray,
    margin: np.ndarray,
    parts: np.ndarray,
    tie_breakers: Sequence[np.ndarray] = (),
    *,
    order: Sequence[str] = RANK_KEYS,
    resolution_v: float = DEFAULT_RESOLUTION_V,
) -> np.ndarray:
    """Indices that put designs in shortlist order (best first).

    Parameters
    ----------
    meets, error_v, margin, parts : array (n,)
        Rank keys of each design ([1], [V], [1], [1]).
    tie_breakers : sequence of array (n,)
        Further keys for exact ties, most significant first.

    Returns
    -------
    ndarray of int
    """
    keys = key_columns(meets, error_v, margin, parts, order, resolution_v) + list(tie_breakers)
    # np.lexsort sorts by the last key first.
    return np.lexsort(keys[::-1])


def beats_threshold(lower_keys: list[np.ndarray], threshold: Sequence[float]) -> np.ndarray:
    """Where a vector of lower-bound keys is lexicographically above a threshold key.

    If every true key component is at least its lower bound and the bounds are above
    ``threshold`` in lexicographic order, the true key is above it too: at the first
    component where the bounds differ from the threshold the true value is at least as
    large, and every earlier true component is at least the threshold's. Such candidates
    cannot enter a shortlist whose last entry has the key ``threshold``.

    Parameters
    ----------
    lower_keys : list of array (n,)
        Lower bounds of the key components, most significant first.
    threshold : sequence of float
        The key of the shortlist's last entry, same components.

    Returns
    -------
    array (n,) of bool
        True where the candidate is certainly ranked below the threshold.
    """
    count = lower_keys[0].shape[0]
    above = np.zeros(count, dtype=bool)
    tied = np.ones(count, dtype=bool)
    for bound, limit in zip(lower_keys, threshold, strict=True):
        above |= tied & (bound > limit)
        tied &= bound == limit
    return above


def largest_unbeaten_error(threshold: Sequence[float], order: Sequence[str], tolerance_v: float, resolution_v: float) -> float:
    """An error bound above which :func:`beats_threshold` holds whatever the other keys [V].

    With the shortlist's last key ``threshold`` (meets flag first, then ``order`` if it
    meets, else the default order, :func:`key_columns`): when that entry meets, a candidate
    whose error bound is above ``tolerance_v`` has the meets bound 1 and is beaten. When
    the error is the first key after meets (always so for an entry that does not meet), a
    bound ``e`` with ``floor(e/resolution) > threshold's error step q`` is beaten once its
    meets bound is no better than the threshold's, which holds for ``e > tolerance`` if
    the entry does not meet; ``e > (q + 1)·resolution`` (widened by a relative 1e−9
    against rounding) gives that floor.
    """
    by_step = (threshold[1] + 1.0) * resolution_v * (1.0 + 1e-9)
    if threshold[0] != 0:
        return float(max(tolerance_v, by_step))
    return float(min(tolerance_v, by_step) if order and order[0] == "error" else tolerance_v)


def pareto_front(error_v: np.ndarray, margin: np.ndarray, parts: np.ndarray) -> np.ndarray:
    """Designs no other design dominates on (error ↓, margin ↑, parts ↓).

    Design ``j`` dominates ``i`` when it is no worse on all three and better on one.
    Quadratic in the row count; meant for a shortlist, not the whole search.
    """
    error = np.asarray(error_v, dtype=float)
    margin = np.asarray(margin, dtype=float)
    parts = np.asarray(parts, dtype=float)
    no_worse = (error[None, :] <= error[:, None]) & (margin[None, :] >= margin[:, None]) & (parts[None, :] <= parts[:, None])
    better = (error[None, :] < error[:, None]) | (margin[None, :] > margin[:, None]) | (parts[None, :] < parts[:, None])
    return ~(no_worse & better).any(axis=1)
