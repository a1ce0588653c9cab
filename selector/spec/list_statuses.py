"""The statuses an approved-parts list gives a part (DESIGN §4), shared by the spec's
``[search]`` section, the catalog's lists and their commands."""

from __future__ import annotations

#: Every status an approved-parts list may give a part.
LIST_STATUSES: tuple[str, ...] = ("approved", "conditional", "evaluating", "no-new-design", "banned")
#: Statuses a design may never use, whatever the spec asks.
UNUSABLE_STATUSES: tuple[str, ...] = ("no-new-design", "banned")
