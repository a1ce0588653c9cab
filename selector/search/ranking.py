"""Ranking of solved designs: the shortlist order, the Pareto flag and the pruning test.

Order (issue 4): designs that meet the spec first, then the worst-case error quantised to
a resolution (default 1 mV), then dissipation margin (descending), then part count
(ascending). ``rank_by`` reorders the last three keys; meeting the spec always leads, so
that when fewer designs meet than the shortlist holds, the closest feasible ones fill it
(DESIGN §4). Remaining ties fall to the caller's tie-breakers (the search uses the
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
    """Numeric sort keys, most significant first, smaller is better."""
    by_name = {
        "error": quantised_error(error_v, resolution_v),
        "margin": -np.asarray(margin, dtype=float),
        "parts": np.asarray(parts, dtype=float),
    }
    return [(~np.asarray(meets, dtype=bool)).astype(float)] + [by_name[name] for name in order]


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

    With the shortlist's last key ``threshold`` (meets flag first, then ``order``): when
    that entry meets, a candidate whose error bound is above ``tolerance_v`` has the meets
    bound 1 and is beaten. When the error is the first key after meets, a bound ``e`` with
    ``floor(e/resolution) > threshold's error step q`` is beaten once its meets bound is no
    better than the threshold's, which holds for ``e > tolerance`` if the entry does not
    meet; ``e > (q + 1)·resolution`` (widened by a relative 1e−9 against rounding) gives
    that floor. Returns inf when neither applies.
    """
    meets_flag = threshold[0]
    limit = tolerance_v if meets_flag == 0 else np.inf
    if order and order[0] == "error":
        by_step = (threshold[1] + 1.0) * resolution_v * (1.0 + 1e-9)
        limit = min(limit, by_step) if meets_flag == 0 else max(tolerance_v, by_step)
    return float(limit)


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
