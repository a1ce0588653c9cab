"""Where a parts library lives: the ``--db`` value read (the per-user default file, a path
or a database URL), its password masked wherever it is shown, and the checks on a library
file before it is opened (a folder, an empty file, another program's database).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import platformdirs
from sqlalchemy.engine import URL, make_url
from sqlalchemy.exc import ArgumentError

from selector.errors import LibraryError, OptionError

#: File name of the default library inside the per-user data directory.
DEFAULT_LIBRARY_FILE = "library.sqlite"
#: Database backends the migrations (and the audit trail's guard) support.
SUPPORTED_BACKENDS: tuple[str, ...] = ("sqlite", "postgresql")
_SQLITE_MAGIC = b"SQLite format 3\x00"


def default_library_path() -> Path:
    """The per-user library file (platformdirs' user data directory for railwright)."""
    return platformdirs.user_data_path("railwright", appauthor=False) / DEFAULT_LIBRARY_FILE


@dataclass(frozen=True)
class LibraryLocation:
    """Where a library lives: its URL, its file (SQLite) and whether it is the default."""

    url: URL
    path: Path | None
    is_default: bool

    def text(self) -> str:
        """The file path, or the URL with any password shown as ``***``."""
        if self.path is not None:
            return str(self.path)
        return _masked(self.url.render_as_string(hide_password=False))


#: Longest ``--db`` value read [characters] (far past any real path or URL).
MAX_DB_OPTION_LENGTH = 1024


def resolve_location(db_option: str | None) -> LibraryLocation:
    """Read the ``--db`` value: None (default), a file path, or an SQLAlchemy URL."""
    if db_option is not None and len(db_option) > MAX_DB_OPTION_LENGTH:
        raise OptionError(f"--db: {len(db_option)} characters is too long for a path or URL (at most "
                          f"{MAX_DB_OPTION_LENGTH})")  # fmt: skip
    try:
        return _resolved_location(db_option)
    except (ValueError, OSError) as error:  # a port that is no number, a bracket left open, an unusable path
        detail = error.strerror if isinstance(error, OSError) and error.strerror else "not a usable path or URL"
        raise OptionError(f"--db: '{_masked(db_option or '')}': {detail}") from None


def _resolved_location(db_option: str | None) -> LibraryLocation:
    if db_option is None:
        path = default_library_path()
        return LibraryLocation(URL.create("sqlite", database=str(path)), path, True)
    text = db_option.strip()
    if not text:
        raise OptionError("--db: empty; give a library file path or a database URL")
    if "://" in text:
        if text.partition("://")[2].split("/", 1)[0].count("@") > 1:
            # An '@' in the password, not encoded: the driver would take part of the
            # password for the host name and print it in its error.
            raise OptionError(f"--db: '{_masked(text)}': more than one '@' before the host; write an '@' in the "
                              "password as %40")  # fmt: skip
        try:
            url = make_url(text)
            url.port  # noqa: B018 - SQLAlchemy reads the port only when asked
        except ArgumentError:
            raise OptionError(f"--db: '{_masked(text)}' is not a database URL") from None
        if url.get_backend_name() not in SUPPORTED_BACKENDS:
            raise OptionError(
                f"--db: '{_masked(text)}': {url.get_backend_name()} is not supported; "
                "use an SQLite file or a postgresql+psycopg:// URL"
            )
        if url.get_backend_name() == "sqlite" and url.database not in (None, "", ":memory:"):
            path = Path(url.database).expanduser().resolve()
            return LibraryLocation(url.set(database=str(path)), path, False)
        return LibraryLocation(url, None, False)
    path = Path(text).expanduser().resolve()
    return LibraryLocation(URL.create("sqlite", database=str(path)), path, False)


def _masked(text: str) -> str:
    """A ``--db`` value safe to print: the password — everything between the user name's
    ``:`` and the last ``@``, whatever characters it holds — and any ``password=`` in the
    query become ``***``."""
    import re

    scheme, separator, rest = text.partition("://")
    if separator and "@" in rest:
        userinfo, host = rest.rsplit("@", 1)
        user, colon, _ = userinfo.partition(":")
        rest = f"{user}:***@{host}" if colon else f"{userinfo}@{host}"
    rest = re.sub(r"(?i)(password=)[^&]*", r"\1***", rest)
    return f"{scheme}{separator}{rest}"


def check_sqlite_file(path: Path) -> bool:
    """Whether ``path`` is a new library; refuse a folder or a file that is not SQLite."""
    if path.is_dir():
        raise LibraryError(f"{path}: is a folder, not a library file")
    if not path.exists():
        return True
    if path.stat().st_size == 0:
        # An empty file may be a library truncated by a failed copy: never start afresh in it.
        raise LibraryError(f"{path}: not a railwright library (an empty file)")
    try:
        with path.open("rb") as handle:
            magic = handle.read(len(_SQLITE_MAGIC))
    except OSError as error:
        raise LibraryError(f"{path}: cannot read ({error.strerror or error})") from None
    if magic != _SQLITE_MAGIC:
        raise LibraryError(f"{path}: not a railwright library (not an SQLite database file)")
    _refuse_foreign_database(path)
    return False


def _refuse_foreign_database(path: Path) -> None:
    """Refuse another program's SQLite file before our connection settings (WAL) touch it."""
    import sqlite3

    try:
        connection = sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True)
        try:
            tables = {row[0] for row in connection.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
        finally:
            connection.close()
    except sqlite3.DatabaseError as error:
        raise LibraryError(f"{path}: not a railwright library ({error})") from None
    if tables and "alembic_version" not in tables:
        raise LibraryError(f"{path}: holds a database, but not a railwright library")


def prepare_folder(location: LibraryLocation) -> None:
    folder = location.path.parent
    if folder.is_dir():
        return
    if not location.is_default:
        raise LibraryError(f"{location.path}: cannot create the library; folder {folder} does not exist")
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as error:
        raise LibraryError(f"{folder}: cannot create the library folder ({error.strerror or error})") from None
