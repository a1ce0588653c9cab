"""The library API: what a notebook, a script or the command line calls.

:func:`seek` searches a library for a rail; :func:`check` proves one stack at every
worst-case corner; :func:`save_design` keeps a checked design with its evidence and
:func:`verify_design` checks a saved one again against today's library. This is where
the catalog (the library and its approved lists) meets the physics and the search,
which see only a parts table and a usable mask.

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

from selector.errors import OptionError, SearchError
from selector.physics.checked_design import CheckedDesign
from selector.physics.partset import PartSet
from selector.search.ranking import DEFAULT_RESOLUTION_V
from selector.spec.rail_spec import RailSpec, load_spec

if TYPE_CHECKING:
    import pandas as pd

    from selector.search.engine import SearchSummary


#: Most nearly feasible designs a search that meets nothing names.
NEARLY_ROWS = 5


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
    #: Per library part, whether the spec's families and list let a variant use it (None: all).
    usable_parts: object = None

    def what_if(self, limit: int = 12) -> list:
        """Variants of the design from the library, each solved exactly, best first
        (:func:`selector.search.what_if.what_if`): neighbouring and finer resistor values,
        each part swapped for a usable part of its family within ±5 % of its voltage, one
        forward element added."""
        from selector.search.what_if import what_if

        design = self.design
        return what_if(design.parts, design.stack, design.resistor_ohm, design.spec, self.usable_parts, limit)

    @property
    def meets(self) -> bool:
        """Feasible at every corner and within the tolerance window (DESIGN §3)."""
        return self.design.meets

    @property
    def feasible(self) -> bool:
        return bool(self.design.metrics.evaluation.feasible[0])

    @property
    def verdict(self) -> str:
        """The verdict line of ``railwright check`` (without "Verdict: ")."""
        from selector.views.check_view import verdict_text

        return verdict_text(self.design)

    @property
    def failures(self) -> list:
        """Every limit the design breaks (:class:`selector.physics.design_failures.Failure`)."""
        from selector.views.check_view import failures

        return failures(self.design)

    @property
    def metrics(self):
        """:class:`selector.physics.design_metrics.DesignMetrics` of the design."""
        return self.design.metrics

    @property
    def corners(self):
        """The 32 corners as a pandas DataFrame, one row per corner (numbered from 1)."""
        import pandas as pd

        from selector.views.check_view import check_json

        rows = check_json(self.design)["corners"]
        return pd.DataFrame(rows).set_index("index")

    @property
    def budget(self):
        """The error budget as a pandas DataFrame, largest source first
        (:func:`selector.physics.error_budget.error_budget`)."""
        import pandas as pd

        columns = ["source", "low_v", "high_v", "linear_low_v", "linear_high_v", "share"]
        return pd.DataFrame([[getattr(line, name) for name in columns] for line in self.design.budget],
                            columns=columns)  # fmt: skip


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
        return library, usable_mask, None, None
    library = open_catalog(library)
    parts = library.load_partset()
    if list_name is None or usable_mask is not None:
        return parts, usable_mask, None, None
    from selector.catalog.approved_lists import list_view

    view = list_view(library, parts, list_name, statuses)
    return parts, view.usable, view.condition, view.status


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
    pick: str = "error",
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
    rank_by, resolution_v, usable_mask, conditions, force, workers, progress, pick
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
    from selector.search.shortlist import nearly_feasible_rows, shortlist_frame

    spec = as_spec(spec)
    parts, usable_mask, list_conditions, list_status = _library_parts(library, spec.list_name, spec.statuses,
                                                                      usable_mask)  # fmt: skip
    shortlist, usable, summary = search_library(
        parts, spec, top=top, rank_by=rank_by, resolution_v=resolution_v, usable_mask=usable_mask,
        conditions=conditions if conditions is not None else list_conditions,
        force=force, workers=workers, progress=progress, pick=pick,
    )
    status = None if list_status is None else np.asarray(list_status, dtype=object)[usable.library_index]
    frame = shortlist_frame(usable.parts, shortlist.stacks, shortlist.resistor_ohm, shortlist.evaluation, usable.condition,
                            status)  # fmt: skip
    if not summary.meeting:  # why nothing meets: designs closer than any feasible one that break a limit, named
        best = float(frame["error_v"].min()) if len(frame) else np.inf
        summary.nearly_feasible = [row for row in nearly_feasible_rows(usable.parts, summary.nearly_feasible_designs,
                                                                       spec, NEARLY_ROWS)
                                   if not len(frame) or (row["error_v"] is not None and row["error_v"] < best)]  # fmt: skip
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
    pick: str = "error",
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
    pick : str
        Which meeting series value to take when the resistor is chosen: ``"error"`` (the
        contract's least worst-case error, the default), ``"margin"`` (the most
        dissipation margin) or ``"centre"`` (the rail centred in the window); see
        :mod:`selector.search.series_sweep`.

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
    from selector.search.series_sweep import PICKS, series_sweep
    from selector.spec.stack_notation import expand_stack, parse_stack

    if pick not in PICKS:
        raise OptionError(f"--pick: '{pick}' is not one of {', '.join(PICKS)}")

    spec = as_spec(spec)
    catalog = open_catalog(library)
    parts = catalog.load_partset()
    indices = parts.index_of(expand_stack(parse_stack(stack)))
    warnings, conditions, usable = [], [], None
    if spec.list_name is not None:
        view = list_view(catalog, parts, spec.list_name, spec.statuses)
        warnings, conditions = stack_notes(view, parts, indices)
        usable = view.usable
    fixed = resistor if resistor is not None else spec.resistor_fixed_ohm
    sweep = series_sweep(parts, indices, spec)
    picked = None if fixed is not None else sweep.pick(spec, pick)
    if fixed is not None:
        chosen = float(fixed)
    elif picked is not None:
        chosen = picked
    else:  # nothing feasible: the contract's choice still names a design and its reason
        chosen = float(choose_resistors(parts, indices[None, :], spec)[0][0])
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
        series_values_ohm=sweep.values_ohm,
        meeting_resistors_ohm=sweep.meeting_ohm,
    )
    return CheckResult(design, warnings, conditions, usable)


#: Keys of ``check --json`` a saved design keeps: the contract's figures (no corners) and
#: the infeasibility reason.
FIGURE_KEYS: tuple[str, ...] = (
    "resistor_ohm", "vout_nom_v", "vout_low_v", "vout_high_v", "error_v", "margin", "i_min_a", "feasible",
    "meets", "reason",
)  # fmt: skip


def design_figures(result: CheckResult) -> dict:
    """The :data:`FIGURE_KEYS` of a checked design, as ``check --json`` gives them."""
    from selector.views.check_view import check_json

    document = check_json(result.design)
    return {key: document[key] for key in FIGURE_KEYS}


def _spec_source(spec):
    from selector.spec.spec_source import SpecSource, read_spec_source

    return spec if isinstance(spec, SpecSource) else read_spec_source(spec, {})[1]


def save_design(spec, library, name: str, stack: str, resistor: float | None = None, *, reason: str,
                by: str | None = None):
    """Check a design (:func:`check`) and save it as the next revision of ``name``.

    Parameters
    ----------
    spec : SpecSource or path of a spec TOML
        What the revision keeps as its spec (file text, SHA-256 and options).
    library : ``selector.catalog.store.Library``, a db path/URL, or None
    name : str
        The design's name; a new save of a name adds a revision and keeps the old ones.
    stack : str
        Stack notation.
    resistor : float [Ω], optional
        As for :func:`check`.
    reason : str
        Why it is saved (required).
    by : str, optional
        Who saves it; default the login name.

    Returns
    -------
    saved : selector.catalog.saved_designs.SavedRevision
    result : CheckResult
    """
    from selector import __version__
    from selector.catalog import saved_designs
    from selector.catalog.design_snapshot import part_snapshot
    from selector.spec.stack_notation import expand_stack, format_stack, parse_stack

    saved_designs.check_design_name(name)
    saved_designs.check_reason(reason)
    source = _spec_source(spec)
    catalog = open_catalog(library)
    with catalog.session() as session:
        snapshot = part_snapshot(session, expand_stack(parse_stack(stack)))
    result = check(source.load(), catalog, stack, resistor)
    design = result.design
    content = saved_designs.DesignContent(
        spec_source=source, stack=format_stack(design.elements), resistor_ohm=design.resistor_ohm,
        resistor_chosen=design.resistor_chosen, list_name=design.spec.list_name, feasible=result.feasible,
        meets=result.meets, list_allows=not result.list_warnings, figures=design_figures(result),
        list_warnings=list(result.list_warnings), list_conditions=list(result.list_conditions), snapshot=snapshot,
    )
    saved = saved_designs.save_revision(catalog, name, content, reason=reason, by=by,
                                        schema_revision=catalog.schema_revision(), tool_version=__version__)
    return saved, result


@dataclass(frozen=True)
class DesignVerification:
    """A saved design's latest revision checked again against today's library and lists.

    Attributes
    ----------
    saved : selector.catalog.saved_designs.SavedRevision
    result : CheckResult or None
        Today's check of the same stack and resistor; None when it cannot run.
    figures : dict or None
        Today's :data:`FIGURE_KEYS`.
    field_changes, status_changes : list
        :func:`selector.catalog.design_snapshot.snapshot_changes` against the snapshot.
    problems : list of str
        Why the design cannot be checked again (a part gone, a list renamed …).
    """

    saved: object
    result: CheckResult | None
    figures: dict | None
    field_changes: list = field(default_factory=list)
    status_changes: list = field(default_factory=list)
    problems: list[str] = field(default_factory=list)

    @property
    def list_warnings(self) -> list[str]:
        return list(self.result.list_warnings) if self.result is not None else []

    @property
    def positive(self) -> bool:
        """Still meets the spec, and its list still allows every part."""
        return self.result is not None and self.result.meets and not self.result.list_warnings and not self.problems

    @property
    def verdict(self) -> str:
        from selector.catalog.saved_designs import verdict_text

        if self.result is None:
            return "cannot be checked again: " + "; ".join(self.problems)
        return verdict_text(self.result.meets, self.result.feasible, not self.result.list_warnings,
                            str(self.figures["reason"]))

    def figure_changes(self) -> list[tuple[str, object, object]]:
        """``(key, saved, today)`` for every figure that differs (exactly) from the save."""
        if self.figures is None:
            return []
        saved = self.saved.content.figures
        return [(key, saved.get(key), self.figures[key]) for key in FIGURE_KEYS if saved.get(key) != self.figures[key]]

    @property
    def unchanged(self) -> bool:
        """Nothing differs from the save: data, statuses, figures and verdict."""
        return not (self.field_changes or self.status_changes or self.problems or self.figure_changes()) and \
            self.verdict == self.saved.content.verdict


def verify_design(library, saved, *, samples: int | None = None, seed: int = 0) -> DesignVerification:
    """Check a saved design's revision again, with its own spec, stack and resistor.

    Parameters
    ----------
    library : ``selector.catalog.store.Library``, a db path/URL, or None
    saved : str or SavedRevision
        A design name (its latest revision is checked) or a revision read before.
    samples, seed : int
        Monte Carlo units and seed, as for :func:`check` (none by default).
    """
    from selector.catalog import saved_designs
    from selector.catalog.design_snapshot import part_snapshot, snapshot_changes
    from selector.errors import RailwrightError

    catalog = open_catalog(library)
    if isinstance(saved, str):
        saved = saved_designs.saved_revision(catalog, saved)
    content = saved.content
    with catalog.session() as session:
        today = part_snapshot(session, saved.parts_used)
    field_changes, status_changes, missing = snapshot_changes(content.snapshot, today)
    problems = [f"{part} is no longer in the library" for part in missing]
    result = None
    if not missing:
        label = f"saved design '{saved.name}': {content.spec_source.file_name or 'spec options'}"
        try:
            result = check(content.spec_source.load(label), catalog, content.stack, content.resistor_ohm,
                           samples=samples, seed=seed)
        except RailwrightError as error:
            problems.append(str(error))
    figures = design_figures(result) if result is not None else None
    return DesignVerification(saved, result, figures, field_changes, status_changes, problems)


def verify_designs(library, names: Sequence[str] | None = None) -> list[DesignVerification]:
    """:func:`verify_design` for the latest revision of each named design (default all), by name."""
    from selector.catalog.saved_designs import latest_revisions

    catalog = open_catalog(library)
    return [verify_design(catalog, saved) for saved in latest_revisions(catalog, names)]
