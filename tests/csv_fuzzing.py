"""What the CSV fuzz tests share: hostile bytes of a drawn table, and the located-error check."""

from __future__ import annotations

import csv
import io

from hypothesis import strategies as st

#: Encodings a file from outside may come in, UTF-8 the most often.
ENCODINGS = ["utf-8", "utf-8", "utf-8", "utf-8-sig", "utf-16", "latin-1", "cp1252"]


def spoiled_csv_bytes(draw, columns: list[str], rows: list[list[str]], *, spoil: bool = True) -> bytes:
    """The table as CSV bytes (comma or semicolon, LF or CRLF, one of :data:`ENCODINGS`),
    and unless ``spoil`` is false perhaps truncated anywhere, with a NUL or stray byte, an
    unterminated quote or its rows repeated."""
    buffer = io.StringIO()
    delimiter = draw(st.sampled_from([",", ",", ",", ";"]))
    writer = csv.writer(buffer, delimiter=delimiter, lineterminator=draw(st.sampled_from(["\n", "\r\n"])))
    writer.writerow(columns)
    writer.writerows(rows)
    data = buffer.getvalue().encode(draw(st.sampled_from(ENCODINGS)), errors="replace")
    how = draw(st.integers(0, 7)) if spoil else None
    if how == 0 and data:  # truncated anywhere
        data = data[: draw(st.integers(0, len(data)))]
    elif how == 1:  # a NUL or stray byte somewhere
        at = draw(st.integers(0, len(data)))
        data = data[:at] + draw(st.sampled_from([b"\x00", b"\xff", b"\x80", b"\""])) + data[at:]
    elif how == 2:  # an unterminated quote
        data += b'"unterminated'
    elif how == 3:  # the rows twice
        data += data.split(b"\n", 1)[-1]
    return data


def assert_located_errors(exit_code: int, output: str, path) -> None:
    """A refused file: exit 1 or 2, and every error line (warnings aside) names the file,
    the first as ``Error: FILE…``."""
    assert exit_code in (1, 2), (exit_code, output)
    errors = [line for line in output.splitlines() if not line.startswith("Warning: ")]
    assert errors[0].startswith(f"Error: {path}"), errors
    assert all(line.startswith(str(path)) for line in errors[1:]), errors
