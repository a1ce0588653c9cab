"""The library API: what a notebook, a script or the command line calls.

:func:`seek` searches a library for a rail. It is where the catalog (the library and its
approved lists) meets the search engine, which sees only a parts table and a usable mask.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from pathlib import Path
from typing import NamedTuple

import numpy as np
import pandas as pd

from selector.errors import SearchError
from selector.physics.partset import PartSet
from selector.search.engine import SearchSummary, search_library
from selector.search.ranking import DEFAULT_RESOLUTION_V
from selector.search.shortlist import shortlist_frame
from selector.spec.rail_spec import RailSpec, load_spec


class SeekResult(NamedTuple):
    """What :func:`seek` returns: the shortlist DataFrame and the search summary."""

    shortlist: pd.DataFrame
    summary: SearchSummary


def library_partset(library) -> PartSet:
    """Parts of a library given as a PartSet, a catalog ``Library``, or a db path/URL."""
    return _library_parts(library, None, None, None)[0]


def _library_parts(library, list_name, statuses, usable_mask):
    """The library's PartSet and, when a list is named, its usable mask and conditions.

    A list needs the library itself: a bare PartSet with a list name and no
    ``usable_mask`` is refused rather than searched unfiltered.
    """
    if isinstance(library, PartSet):
        if list_name is not None and usable_mask is None:
            raise SearchError(
                f"the spec names the approved-parts list '{list_name}': pass the library "
                "(not a PartSet), or a usable_mask"
            )
        return library, usable_mask, None
    if isinstance(library, (str, Path)):
        from selector.catalog.store import open_library

        library = open_library(str(library))
    parts = library.load_partset()
    if list_name is None or usable_mask is not None:
        return parts, usable_mask, None
    from selector.catalog.approved_lists import list_view

    view = list_view(library, parts, list_name, statuses)
    return parts, view.usable, view.condition


def seek(
    spec: RailSpec | str | Path,
    library,
    *,
    top: int = 10,
    rank_by: Sequence[str] | str | None = None,
    resolution_v: float = DEFAULT_RESOLUTION_V,
    usable_mask: np.ndarray | None = None,
    conditions: Sequence[str] | None = None,
    force: bool = False,
    workers: int | None = None,
    progress: Callable[[int, int], None] | None = None,
) -> SeekResult:
    """Search a library for the stacks and resistors that best hold a rail.

    Parameters
    ----------
    spec : RailSpec or path of a spec TOML
    library : PartSet, ``selector.catalog.store.Library``, or a db path/URL
        When the spec names an approved-parts list (``[search] list``), only the parts
        of the usable statuses on it are searched, and conditional parts' conditions
        come with the rows that use them; this needs a Library or a db path/URL.
    top : int
        Shortlist length; when fewer designs meet, the closest feasible ones fill it.
    rank_by, resolution_v, usable_mask, conditions, force, workers, progress
        As for :func:`search_library`.

    Returns
    -------
    SeekResult
        ``shortlist``: DataFrame with the contract's columns (DESIGN §4) and ``pareto``,
        ``i_min_a``, ``conditions``; ``summary``: :class:`SearchSummary`.

    Examples
    --------
    >>> from selector import seek                                   # doctest: +SKIP
    >>> shortlist, summary = seek("rail.toml", "parts.sqlite", top=5)  # doctest: +SKIP
    """
    if not isinstance(spec, RailSpec):
        spec = load_spec(spec, {})
    parts, usable_mask, list_conditions = _library_parts(library, spec.list_name, spec.statuses, usable_mask)
    shortlist, usable, summary = search_library(
        parts, spec, top=top, rank_by=rank_by, resolution_v=resolution_v, usable_mask=usable_mask,
        conditions=conditions if conditions is not None else list_conditions,
        force=force, workers=workers, progress=progress,
    )
    frame = shortlist_frame(usable.parts, shortlist.stacks, shortlist.resistor_ohm, shortlist.evaluation, usable.condition)
    return SeekResult(frame, summary)
