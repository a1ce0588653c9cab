"""What a reviewer must be told about a design beyond its verdict: parts near a limit,
zeners outside the current range their data holds for, parts the worst case takes as
exact, and corners where the stack is off.

One threshold serves ``seek``, ``check`` and ``report`` alike: a part or the resistor
within :data:`NEAR_LIMIT_MARGIN` of its allowed power. A zener's tolerance and TC hold at
its test current, so a design that runs one above :data:`ZENER_IZT_CAUTION_RATIO` × izt or
below izk at any corner is flagged with the ratio and the corners.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from selector.physics.corners import DesignEvaluation
from selector.physics.partset import PartSet
from selector.physics.solver_settings import STATUS_STACK_OFF

#: A part or the resistor within this fraction of its allowed power draws a caution, and
#: its rows the mark ``!`` (common practice, no source: 20 % headroom).
NEAR_LIMIT_MARGIN = 0.20
#: A zener run above this multiple of its test current draws a caution: its tolerance and
#: TC are given at izt, and the curve above is the model's extrapolation.
ZENER_IZT_CAUTION_RATIO = 5.0

#: The kinds of caution, as they appear in JSON and CSV.
KINDS: tuple[str, ...] = ("near limit", "above test current", "below knee", "exact", "stack off")


@dataclass(frozen=True)
class Caution:
    """One caution about one design.

    Attributes
    ----------
    kind : str
        One of :data:`KINDS`.
    part : str or None
        The part it concerns (None for the resistor or the whole stack).
    corners : tuple of int
        Corners concerned, numbered from 1.
    text : str
        One line for a person.
    """

    kind: str
    part: str | None
    corners: tuple[int, ...]
    text: str


def corner_list(corners) -> str:
    """``"corners 9–16, 25"``: corner numbers from 1, runs joined."""
    numbers = sorted(int(c) for c in corners)
    if not numbers:
        return "no corner"
    runs, start, last = [], numbers[0], numbers[0]
    for number in numbers[1:] + [None]:
        if number is not None and number == last + 1:
            last = number
            continue
        runs.append(f"{start}" if start == last else f"{start}–{last}")
        if number is not None:
            start = last = number
    return ("corner " if len(numbers) == 1 else "corners ") + ", ".join(runs)


def _zener_range(parts: PartSet, names, elements, current) -> list[Caution]:
    cautions = []
    for index in dict.fromkeys(int(i) for i in elements if parts.is_zener[i]):
        conducting = current > 0
        ratio = current / parts.izt_a[index]
        high = np.flatnonzero(conducting & (ratio > ZENER_IZT_CAUTION_RATIO)) + 1
        if high.size:
            cautions.append(Caution(
                "above test current", names[index], tuple(high.tolist()),
                f"{names[index]} runs at up to {ratio.max():.3g} × its test current {parts.izt_a[index] * 1e3:.3g} mA "
                f"({corner_list(high)}); its tolerance and TC hold at izt, above it the curve is extrapolated",
            ))  # fmt: skip
        low = np.flatnonzero(conducting & (current < parts.izk_a[index])) + 1
        if low.size:
            least = current[conducting].min()
            cautions.append(Caution(
                "below knee", names[index], tuple(low.tolist()),
                f"{names[index]} runs at {least / parts.izk_a[index]:.3g} × its knee current "
                f"{parts.izk_a[index] * 1e3:.3g} mA ({corner_list(low)}); below the knee the model is extrapolated",
            ))  # fmt: skip
    return cautions


def _exact_parts(parts: PartSet, names, elements) -> list[Caution]:
    cautions = []
    for index in dict.fromkeys(int(i) for i in elements):
        missing = []
        tolerance = parts.vz_tol_pct[index] if parts.is_zener[index] else parts.vf_tol_v[index]
        if tolerance == 0:
            missing.append("no voltage tolerance")
        if parts.is_zener[index] and not parts.given("tc_v_per_k")[index]:
            missing.append("no TC given")
        if missing:
            cautions.append(Caution("exact", names[index], (), f"{names[index]} has {' and '.join(missing)}: "
                                    "the worst case assumes this part is exact"))  # fmt: skip
    return cautions


def margin_words(margin: float, format_spec: str = ".0%") -> str:
    """A dissipation margin for a person: ``"7%"``; an overload as how many times the
    allowed power it is (``margin = 1 − P/P_max``, so ``P/P_max = 1 − margin``):
    ``"overload: 5.37 × allowed power"``; ``"none (no allowed dissipation at the ambient)"``
    where nothing is allowed."""
    if margin == -np.inf:
        return "none (no allowed dissipation at the ambient)"
    if margin < 0:
        return f"overload: {1.0 - margin:.3g} × allowed power"
    return format(margin, format_spec)


def _near_limit_text(who: str, margin: float, what: str, near: np.ndarray) -> str:
    """``"Z5V1-B (position 1) has 7% dissipation margin (corners 1–8), under 20%"``, or
    ``"… is in overload: 5.37 × allowed power (corners 1–32)"``."""
    if -np.inf < margin < 0:
        return f"{who} is in {margin_words(margin)} ({corner_list(near)})"
    return f"{who} has {margin_words(margin)} {what} ({corner_list(near)}), under {NEAR_LIMIT_MARGIN:.0%}"


def design_cautions(parts: PartSet, stack: np.ndarray, evaluation: DesignEvaluation, design: int = 0) -> list[Caution]:
    """Every caution of one design of an evaluation (see the module docstring).

    Parameters
    ----------
    parts : PartSet
    stack : int array (max_len,)
        Part indices of the design, padded with −1.
    evaluation : DesignEvaluation
        From :func:`selector.physics.corners.evaluate_designs`; with ``detail`` each element
        and corner is named, without it the least margin alone decides "near limit".
    design : int
        Which design of the evaluation.
    """
    names = parts.part
    elements = np.asarray(stack)[np.asarray(stack) >= 0]
    current = evaluation.stack_current_a[design]
    cautions: list[Caution] = []
    if evaluation.element_margin is not None:
        margin = evaluation.element_margin[design][:, : elements.size]
        for position, index in enumerate(elements):
            near = np.flatnonzero(margin[:, position] < NEAR_LIMIT_MARGIN) + 1
            if near.size:
                least = margin[:, position].min()
                cautions.append(Caution("near limit", names[index], tuple(near.tolist()), _near_limit_text(
                    f"{names[index]} (position {position + 1})", least, "dissipation margin", near)))
        resistor = evaluation.resistor_margin[design]
        near = np.flatnonzero(resistor < NEAR_LIMIT_MARGIN) + 1
        if near.size:
            cautions.append(Caution("near limit", None, tuple(near.tolist()), _near_limit_text(
                "series resistor", resistor.min(), "margin on its allowed power", near)))
    elif evaluation.margin[design] < NEAR_LIMIT_MARGIN:
        least = evaluation.margin[design]
        cautions.append(Caution("near limit", None, (), f"a part or the resistor is in {margin_words(least)}"
                                if -np.inf < least < 0 else f"a part or the resistor has {margin_words(least)} "
                                f"dissipation margin, under {NEAR_LIMIT_MARGIN:.0%}"))  # fmt: skip
    cautions += _zener_range(parts, names, elements, current)
    cautions += _exact_parts(parts, names, elements)
    off = np.flatnonzero(evaluation.corner_status[design] == STATUS_STACK_OFF) + 1
    if off.size:
        cautions.append(Caution("stack off", None, tuple(off.tolist()),
                                f"the stack carries no current at {corner_list(off)}: the rail there is what "
                                "the supply, R and the load make"))  # fmt: skip
    return cautions
