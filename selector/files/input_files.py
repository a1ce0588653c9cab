"""Every file the tool reads comes through :func:`read_bounded`: a FIFO or a device is
refused before it is opened (opening a FIFO waits for a writer forever; ``/dev/zero``
never ends), and the size limit is enforced while reading, not taken from ``stat``
(which says 0 for many special files)."""

from __future__ import annotations

import os
import stat
from pathlib import Path


class InputFileProblem(Exception):
    """Why a file cannot be read, as one line without the file name (the caller adds it
    with its own error class)."""


def read_bounded(path: str | Path, limit_bytes: int) -> bytes:
    """The bytes of a regular file of at most ``limit_bytes``.

    Raises
    ------
    InputFileProblem
        No such file, a folder, not a regular file, unreadable, or too large.
    """
    try:
        mode = os.stat(path).st_mode
    except FileNotFoundError:
        raise InputFileProblem("no such file") from None
    except OSError as error:
        raise InputFileProblem(f"cannot read ({error.strerror or error})") from None
    if stat.S_ISDIR(mode):
        raise InputFileProblem("is a folder, not a file")
    if not stat.S_ISREG(mode):
        raise InputFileProblem("is not a regular file (a device, FIFO or socket); give a file")
    try:
        with open(path, "rb") as handle:
            data = handle.read(limit_bytes + 1)
    except OSError as error:
        raise InputFileProblem(f"cannot read ({error.strerror or error})") from None
    if len(data) > limit_bytes:
        raise InputFileProblem(f"larger than {limit_bytes} bytes (the limit)")
    return data
