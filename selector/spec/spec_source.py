"""Where a rail requirement came from: the spec file's text and SHA-256, and the options given.

A :class:`SpecSource` is what a saved design keeps and what a report cites as provenance:
the spec file's name, its exact text and the SHA-256 of its bytes, and the command-line
overrides (``"section.key"`` → the text typed). :meth:`SpecSource.load` rebuilds the same
:class:`~selector.spec.rail_spec.RailSpec` from them, so a saved design can be checked
again without its file.
"""

from __future__ import annotations

import hashlib
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path

from selector.errors import SpecError
from selector.files.input_files import InputFileProblem, read_bounded
from selector.spec.rail_spec import MAX_SPEC_BYTES, OPTION_FOR_KEY, RailSpec, load_spec


@dataclass(frozen=True)
class SpecSource:
    """A spec's file and options, enough to build its RailSpec again.

    Attributes
    ----------
    file_name : str or None
        The spec file as the user named it; None when every key came from options.
    text : str
        The file's text (empty without a file).
    sha256 : str or None
        SHA-256 of the file's bytes, hexadecimal; None without a file.
    overrides : dict of str to str
        The options given, ``"section.key"`` → the text typed (only those given).
    """

    file_name: str | None
    text: str = ""
    sha256: str | None = None
    overrides: dict[str, str] = field(default_factory=dict)

    def load(self, label: str | None = None) -> RailSpec:
        """The RailSpec of this file text and these overrides.

        Parameters
        ----------
        label : str, optional
            How messages name the file (default its name).

        Raises
        ------
        SpecError
            When the text or an override no longer reads as a spec.
        """
        shown = label or self.file_name or "spec"
        table = None
        if self.file_name is not None:
            try:
                table = tomllib.loads(self.text)
            except tomllib.TOMLDecodeError as error:
                raise SpecError(f"{shown}: invalid TOML: {error}") from None
        return load_spec(None, self.overrides, table=table, table_label=shown)

    def option_texts(self) -> list[str]:
        """The overrides as the user typed them, e.g. ``--supply-min 11V``, in key order."""
        return [f"{OPTION_FOR_KEY[key]} {value}" for key, value in self.overrides.items() if key in OPTION_FOR_KEY]


def given_overrides(overrides: Mapping[str, object]) -> dict[str, str]:
    """Only the overrides actually given (not None), as text, in spec-key order."""
    return {key: str(overrides[key]) for key in OPTION_FOR_KEY if overrides.get(key) is not None}


def read_spec_source(path: str | Path | None, overrides: Mapping[str, object]) -> tuple[RailSpec, SpecSource]:
    """Read a spec file and its overrides as :func:`load_spec` does, keeping the source.

    The file is first read and checked by :func:`load_spec` (every located message), then
    its bytes are kept; the RailSpec returned is the one those kept bytes give.

    Returns
    -------
    spec : RailSpec
    source : SpecSource
    """
    given = given_overrides(overrides)
    spec = load_spec(path, given)
    if path is None:
        return spec, SpecSource(None, "", None, given)
    try:
        data = read_bounded(path, MAX_SPEC_BYTES)
    except InputFileProblem as problem:
        raise SpecError(f"{path}: {problem}") from None
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise SpecError(f"{path}: not UTF-8 text (it changed while being read)") from None
    source = SpecSource(str(path), text, hashlib.sha256(data).hexdigest(), given)
    return source.load(), source
