"""The library API: what a notebook, a script or the command line calls.

:func:`seek` searches a library for a rail; :func:`check` proves one stack at every
worst-case corner. This is where the catalog (the library and its approved lists) meets
the physics and the search, which see only a parts table and a usable mask.

A library is given as a catalog ``Library``, a database path or URL, or ``None`` for the
user's default library; :func:`seek` also takes a bare ``PartSet``. A spec is a
:class:`~selector.spec.rail_spec.RailSpec`, the path of a spec TOML, or a dict shaped like
one (``{"rail": {"target": "5 V", ...}, ...}``).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, NamedTuple

import numpy as np

from selector.errors import SearchError
from selector.physics.checked_design import CheckedDesign
from selector.physics.partset import PartSet
from selector.search.ranking import DEFAULT_RESOLUTION_V
from selector.spec.rail_spec import RailSpec, load_spec

if TYPE_CHECKING:
    import pandas as pd

    from selector.search.engine import SearchSummary


class SeekResult(NamedTuple):
    """What :func:`seek` returns: the shortlist DataFrame and the search summary."""

    shortlist: pd.DataFrame
    summary: SearchSummary


@dataclass(frozen=True)
class CheckResult:
    """What :func:`check` returns: the proven design and what its list says about it.

    Attributes
    ----------
    design : CheckedDesign
        The spec, parts, stack, resistor, contract metrics and (optionally) Monte Carlo.
    list_warnings : list of str
        One line per part the spec's approved-parts list does not allow, naming its status.
    list_conditions : list of str
        ``PART: condition`` for each conditional part.
    """

    design: CheckedDesign
    list_warnings: list[str] = field(default_factory=list)
    list_conditions: list[str] = field(default_factory=list)

    @property
    def meets(self) -> bool:
        """Feasible at every corner and within the tolerance window (DESIGN §3)."""
        return self.design.meets

    @property
    def feasible(self) -> bool:
        return bool(self.design.metrics.evaluation.feasible[0])


def as_spec(spec: RailSpec | str | Path | Mapping) -> RailSpec:
    """A RailSpec from a RailSpec, the path of a spec TOML, or a dict shaped like the TOML."""
    if isinstance(spec, RailSpec):
        return spec
    if isinstance(spec, Mapping):
        return load_spec(table={section: dict(body) if isinstance(body, Mapping) else body
                                for section, body in spec.items()}, table_label="spec dict")
    return load_spec(spec, {})


def open_catalog(library):
    """A catalog ``Library`` from a Library, a db path or URL, or None (the default library)."""
    if library is None or isinstance(library, (str, Path)):
        from selector.catalog.store import open_library

        return open_library(None if library is None else str(library))
    return library


def library_partset(library) -> PartSet:
    """Parts of a library given as a PartSet, a catalog ``Library``, a db path/URL or None."""
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
    library = open_catalog(library)
    parts = library.load_partset()
    if list_name is None or usable_mask is not None:
        return parts, usable_mask, None
    from selector.catalog.approved_lists import list_view

    view = list_view(library, parts, list_name, statuses)
    return parts, view.usable, view.condition


def seek(
    spec: RailSpec | str | Path | Mapping,
    library=None,
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
    spec : RailSpec, path of a spec TOML, or dict shaped like one
    library : PartSet, ``selector.catalog.store.Library``, a db path/URL, or None
        None opens the user's default library. When the spec names an approved-parts
        list (``[search] list``), only the parts of the usable statuses on it are
        searched, and conditional parts' conditions come with the rows that use them;
        this needs a Library, a db path/URL or None.
    top : int
        Shortlist length; when fewer designs meet, the closest feasible ones fill it.
    rank_by, resolution_v, usable_mask, conditions, force, workers, progress
        As for :func:`selector.search.engine.search_library`.

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
    # Imported here: 'check' shares this module but runs no search and builds no DataFrame.
    from selector.search.engine import search_library
    from selector.search.shortlist import shortlist_frame

    spec = as_spec(spec)
    parts, usable_mask, list_conditions = _library_parts(library, spec.list_name, spec.statuses, usable_mask)
    shortlist, usable, summary = search_library(
        parts, spec, top=top, rank_by=rank_by, resolution_v=resolution_v, usable_mask=usable_mask,
        conditions=conditions if conditions is not None else list_conditions,
        force=force, workers=workers, progress=progress,
    )
    frame = shortlist_frame(usable.parts, shortlist.stacks, shortlist.resistor_ohm, shortlist.evaluation, usable.condition)
    return SeekResult(frame, summary)


def check(
    spec: RailSpec | str | Path | Mapping,
    library=None,
    stack: str = "",
    resistor: float | None = None,
    *,
    derating: float = 1.0,
    samples: int | None = None,
    seed: int = 0,
) -> CheckResult:
    """Prove one stack and series resistor at all 32 worst-case corners (DESIGN §3).

    Parameters
    ----------
    spec : RailSpec, path of a spec TOML, or dict shaped like one
    library : ``selector.catalog.store.Library``, a db path/URL, or None (default library)
    stack : str
        Stack notation, e.g. ``"2*D-SIG1 + Z4V7-A"``.
    resistor : float [Ω], optional
        The series resistor; default the spec's fixed one, else the contract's choice from
        the spec's series (least worst-case error among feasible values).
    derating : float [1]
        Fraction of a resistor rating the shop lets a design use, for the rating advice.
    samples, seed : int
        Monte Carlo units and seed (no Monte Carlo when ``samples`` is None or 0).

    Returns
    -------
    CheckResult

    Examples
    --------
    >>> from selector import check                                       # doctest: +SKIP
    >>> result = check("rail.toml", None, "Z4V7-A + D-SIG1")             # doctest: +SKIP
    >>> result.meets, result.design.resistor_ohm                         # doctest: +SKIP
    """
    from selector.catalog.approved_lists import list_view, stack_notes
    from selector.physics.design_metrics import design_metrics
    from selector.search.resistor_choice import choose_resistors
    from selector.spec.stack_notation import expand_stack, parse_stack

    spec = as_spec(spec)
    catalog = open_catalog(library)
    parts = catalog.load_partset()
    indices = parts.index_of(expand_stack(parse_stack(stack)))
    warnings, conditions = [], []
    if spec.list_name is not None:
        warnings, conditions = stack_notes(list_view(catalog, parts, spec.list_name, spec.statuses), parts, indices)
    fixed = resistor if resistor is not None else spec.resistor_fixed_ohm
    chosen = float(fixed) if fixed is not None else float(choose_resistors(parts, indices[None, :], spec)[0][0])
    monte_carlo = None
    if samples:
        # Imported only when asked for: Monte Carlo loads scipy.special.
        from selector.physics.montecarlo import run_monte_carlo

        monte_carlo = run_monte_carlo(parts, indices, chosen, spec, samples=samples, seed=seed)
    design = CheckedDesign(
        spec=spec,
        parts=parts,
        stack=indices,
        resistor_ohm=chosen,
        resistor_chosen=fixed is None,
        metrics=design_metrics(parts, indices, chosen, spec, resistor_derating=derating),
        monte_carlo=monte_carlo,
    )
    return CheckResult(design, warnings, conditions)
