"""Where the installed package keeps its migrations and bundled demo sets.

In an installed wheel they are the packages ``selector.migrations`` and
``selector.demo_library``; in a source tree imported without installation they are the
repository's ``migrations/`` and ``library/`` folders next to ``selector/``.
"""

from __future__ import annotations

import importlib.resources
from pathlib import Path

import selector
from selector.errors import LibraryError

#: The bundled demo sets, one CSV in ``library/``.
DEMO_CSV_NAME = "demo_parts.csv"


def _package_folder(package: str, repository_folder: str, marker: str) -> Path:
    try:
        folder = Path(str(importlib.resources.files(package)))
        if (folder / marker).is_file():
            return folder
    except ModuleNotFoundError:
        pass
    folder = Path(selector.__file__).resolve().parents[1] / repository_folder
    if (folder / marker).is_file():
        return folder
    raise LibraryError(
        f"the installation is incomplete: cannot find {repository_folder}/{marker}; reinstall railwright"
    )


def migrations_folder() -> Path:
    """The Alembic script folder (holding ``env.py`` and ``versions/``)."""
    return _package_folder("selector.migrations", "migrations", "env.py")


def demo_csv_path() -> Path:
    """The bundled demo parts CSV."""
    return _package_folder("selector.demo_library", "library", DEMO_CSV_NAME) / DEMO_CSV_NAME
