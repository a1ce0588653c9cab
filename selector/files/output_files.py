"""Every file the tool writes goes through here, so no output can destroy the library.

A destination is refused, with one line naming it, when it is the library's own SQLite
file or one of its ``-wal``, ``-shm`` and ``-journal`` siblings (compared by the resolved
path and, where it exists, by :func:`os.path.samefile`), when it is a symbolic link (a
write would either follow it non-atomically or replace the link), when it exists and is
not a regular file (a device such as ``/dev/null``, a FIFO, a folder), or when it is
empty. A file is written whole to a ``.partial`` sibling and then renamed over the
destination, so a failed write leaves the old file as it was.

The library registers its file when it is opened (:func:`protect`).
"""

from __future__ import annotations

import contextlib
import os
import stat
from pathlib import Path

from selector.errors import OptionError

#: Files of an SQLite database besides the main one.
SQLITE_SIBLING_SUFFIXES: tuple[str, ...] = ("-wal", "-shm", "-journal")
_PROTECTED: set[Path] = set()


def protect(database_file: str | Path) -> None:
    """Refuse from now on to write over this database file and its siblings."""
    main = Path(database_file).expanduser().resolve()
    _PROTECTED.update([main] + [main.with_name(main.name + suffix) for suffix in SQLITE_SIBLING_SUFFIXES])


def checked_destination(destination: str | Path, option: str) -> Path:
    """The destination as a path, after the refusals of the module docstring.

    Raises
    ------
    OptionError
        Naming ``option`` and the path.
    """
    text = str(destination)
    if not text.strip():
        raise OptionError(f"{option}: empty file name")
    path = Path(text)
    if path.is_symlink():
        raise OptionError(f"{option}: '{path}' is a symbolic link; give the file itself")
    resolved = path.expanduser().resolve()
    for protected in _PROTECTED:
        same = resolved == protected
        with contextlib.suppress(OSError):
            same = same or (resolved.exists() and protected.exists() and os.path.samefile(resolved, protected))
        if same:
            raise OptionError(f"{option}: '{path}' is a file of the parts library ({protected}); write somewhere else")
    try:
        mode = os.stat(path).st_mode
    except FileNotFoundError:
        return path
    except OSError as error:
        raise OptionError(f"{option}: cannot write '{path}': {error.strerror or error}") from None
    if not stat.S_ISREG(mode):
        kind = "a folder" if stat.S_ISDIR(mode) else "not a regular file"
        raise OptionError(f"{option}: '{path}' is {kind}; give a file name")
    return path


def write_atomically(destination: str | Path, data: bytes | str, option: str) -> Path:
    """Write ``data`` (text as UTF-8) to a checked destination, whole or not at all."""
    path = checked_destination(destination, option)
    payload = data.encode("utf-8") if isinstance(data, str) else data
    partial = path.with_name(path.name + ".partial")
    try:
        if partial.is_symlink():
            partial.unlink()
        partial.write_bytes(payload)
        partial.replace(path)
    except OSError as error:
        with contextlib.suppress(OSError):
            partial.unlink(missing_ok=True)
        raise OptionError(f"{option}: cannot write '{path}': {error.strerror or error}") from None
    return path
