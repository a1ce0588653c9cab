"""Stack notation (DESIGN §4): elements joined by ``+``, each ``[COUNT*]PART``.

``2*QZ-1 + ZR-39`` is two QZ-1 and one ZR-39 in series. Spaces are ignored. Part ids may
hold letters, digits and ``. _ - /``; they cannot hold ``+`` or ``*``.
"""

from __future__ import annotations

import re
from collections import Counter
from collections.abc import Iterable

from selector.errors import StackNotationError

PART_ID_PATTERN = r"[A-Za-z0-9][A-Za-z0-9._/\-]{0,63}"
_PART_ID = re.compile(rf"^{PART_ID_PATTERN}$")
# ASCII digits only, and few of them: a count is small, and int() of a long digit run
# would fail (Python's integer-string limit) rather than give a message.
_TERM = re.compile(rf"^(?:([0-9]{{1,6}})\*)?({PART_ID_PATTERN})$")
#: Longest piece of a user's stack text quoted back in a message [characters].
_SHOWN_LENGTH = 40

#: More elements than this in one stack is certainly a typing slip.
MAX_STACK_ELEMENTS = 64


def is_valid_part_id(text: str) -> bool:
    """Whether ``text`` can name a part in stack notation."""
    return bool(_PART_ID.match(text))


def part_id_order(part: str) -> tuple[list[object], str]:
    """Sort key that orders the digit runs of a part id by value: Z2V4-A before Z10V-A.

    A digit run compares by its length without leading zeros, then its digits (no integer
    conversion, so a run of any length is safe); the id itself breaks ties.
    """
    # re.split with a group alternates text and digit runs, so every position holds one kind.
    runs = re.split(r"([0-9]+)", part)
    return [(len(run.lstrip("0")), run.lstrip("0")) if i % 2 else run for i, run in enumerate(runs)], part


def parse_stack(text: str) -> list[tuple[int, str]]:
    """Read a stack text into (count, part) terms, in the order written.

    Parameters
    ----------
    text : str
        For example ``"2*QZ-1 + ZR-39"``.

    Returns
    -------
    list of (int, str)
        Each term's count (≥ 1) and part id; a part written twice keeps both terms.

    Raises
    ------
    StackNotationError
        Naming the term that cannot be read.
    """
    compact = "".join(text.split())
    if not compact:
        raise StackNotationError("--stack: empty stack; write e.g. '2*D1 + Z5V1'")
    terms = []
    total = 0
    for position, term in enumerate(compact.split("+"), start=1):
        match = _TERM.match(term)
        if not match:
            shown = _shown(term) if term else "(nothing)"
            raise StackNotationError(
                f"--stack: term {position} '{shown}' is not [COUNT*]PART, e.g. '2*D1'"
            )
        count = int(match.group(1) or 1)
        if count < 1:
            raise StackNotationError(f"--stack: term {position} '{_shown(term)}' has a count below 1")
        total += count
        if total > MAX_STACK_ELEMENTS:
            raise StackNotationError(f"--stack: more than {MAX_STACK_ELEMENTS} elements in one stack")
        terms.append((count, match.group(2)))
    return terms


def _shown(term: str) -> str:
    """A term for a message: control characters escaped, long text cut."""
    text = "".join(c if c.isprintable() else repr(c)[1:-1] for c in term[:_SHOWN_LENGTH])
    return text + ("…" if len(term) > _SHOWN_LENGTH else "")


def expand_stack(terms: Iterable[tuple[int, str]]) -> list[str]:
    """The stack's elements one by one, e.g. ``[(2, 'D1')]`` → ``['D1', 'D1']``."""
    return [part for count, part in terms for _ in range(count)]


def format_stack(elements: Iterable[str]) -> str:
    """Canonical text of a stack: equal parts grouped, in first-seen order.

    ``['Z5V1', 'D1', 'D1']`` → ``'Z5V1 + 2*D1'``.
    """
    counts = Counter()
    order: list[str] = []
    for part in elements:
        if part not in counts:
            order.append(part)
        counts[part] += 1
    return " + ".join(part if counts[part] == 1 else f"{counts[part]}*{part}" for part in order)
