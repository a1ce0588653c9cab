"""Fuzzing the rail spec: TOML files and the command-line spec options, through ``check``.

Generated spec files hold the contract's sections with values spoiled (wrong types,
nested tables, huge and tiny exponents, NaN and inf, unknown keys and sections, NUL
bytes, truncation, Latin-1 and UTF-16); generated option sets mix valid and hostile
values. The property: a valid spec reaches the library (exit 1 naming it); any other input exits 1 or 2 with exactly one ``Error: `` line that
names the file and key or the option — never a traceback. The ``--db`` given is a file
that is not a library, so a spec that passes is told so at once without opening SQLite.
"""

from __future__ import annotations

import json
import math

import pytest
from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from selector.cli import main
from selector.errors import SpecError
from selector.spec.rail_spec import OPTION_FOR_KEY, load_spec

CASES = settings(
    max_examples=2000,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],
)

VALID = {
    "rail": {"target": "5 V", "tolerance": "3 %"},
    "supply": {"min": "11 V", "max": "13 V"},
    "load": {"min": "0", "max": "10 mA"},
    "ambient": {"min": 0, "max": 50},
}
_HOSTILE = st.one_of(
    st.sampled_from(["nan", "inf", "-inf", "1e999", "1e-999", "1e9999999999", "", " ", "5", "5 %", "500 %",
                     "-5 V", "0", "4k7", "10 kohm", "1 mA", "=1+1", "\x00", "E24", "e96", "zener,signal",
                     "banned", "approved", "current", "ohms", "20 K", "300 °C", "1" * 80, "3", "13"]),
    st.floats(),
    st.integers(min_value=-(10**20), max_value=10**20),
    st.booleans(),
    st.lists(st.sampled_from(["zener", "x", 1]), max_size=3),
    st.fixed_dictionaries({"x": st.just(1)}),
    st.text(max_size=10),
)  # fmt: skip
_DOTTED = st.sampled_from([*OPTION_FOR_KEY, "rail.colour", "extra.key"])


def toml_value(value) -> str:
    """TOML text of a value (strings as basic strings, floats as TOML spells them)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf") if math.isinf(value) else repr(value)
    if isinstance(value, int):
        return str(value)
    if isinstance(value, list):
        return "[" + ", ".join(toml_value(item) for item in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{key} = {toml_value(item)}" for key, item in value.items()) + "}"
    # JSON string escapes are TOML basic-string escapes, except that TOML has no \/ (unused).
    return json.dumps(value, ensure_ascii=False)


@st.composite
def spec_files(draw) -> bytes:
    table = {section: dict(keys) for section, keys in VALID.items()}
    for _ in range(draw(st.integers(0, 4))):
        section, _, key = draw(_DOTTED).partition(".")
        table.setdefault(section, {})[key] = draw(_HOSTILE)
    if draw(st.integers(0, 9)) == 0:
        table.pop(draw(st.sampled_from(sorted(table))))
    lines = []
    for section, keys in table.items():
        lines.append(f"[{section}]")
        lines += [f"{key} = {toml_value(value)}" for key, value in keys.items()]
    data = "\n".join(lines).encode(draw(st.sampled_from(["utf-8", "utf-8", "utf-8-sig", "utf-16", "latin-1"])),
                                   errors="replace")
    spoil = draw(st.integers(0, 6))
    if spoil == 0:
        data = data[: draw(st.integers(0, len(data)))]
    elif spoil == 1:
        at = draw(st.integers(0, len(data)))
        data = data[:at] + draw(st.sampled_from([b"\x00", b"\xff", b"[", b"=", b'"', b"\n[rail]\n"])) + data[at:]
    return data


@pytest.fixture(scope="module")
def spec_db(tmp_path_factory) -> str:
    path = tmp_path_factory.mktemp("spec") / "not-a-library.sqlite"
    path.write_bytes(b"invented: not a library at all\n")
    return str(path)


def _assert_clean(result, place_prefixes, spec_db) -> bool:
    """One clean error line naming a place; True when the spec passed (the library was next)."""
    assert "Traceback" not in result.output
    assert result.exception is None or isinstance(result.exception, SystemExit), repr(result.exception)
    assert result.exit_code in (1, 2), result.output
    # A spec may also draw warnings (a tolerance that looks like a percentage): not errors.
    lines = [line for line in result.output.splitlines()
             if line and not line.startswith(("created ", "Warning: "))]  # fmt: skip
    assert len(lines) == 1 and lines[0].startswith("Error: "), lines
    message = lines[0][len("Error: "):]
    assert message.isprintable()
    if message == f"{spec_db}: not a railwright library (not an SQLite database file)":
        return True
    assert message.startswith(place_prefixes), message
    return False


@CASES
@given(data=spec_files())
def test_any_spec_file_is_valid_or_one_error_line_naming_file_and_key(spec_db, tmp_path_factory, data):
    path = tmp_path_factory.getbasetemp() / "fuzz-rail.toml"
    path.write_bytes(data)
    result = CliRunner().invoke(main, ["--db", spec_db, "check", "--spec", str(path), "--stack", "NOPE-1"])
    passed = _assert_clean(result, (str(path),), spec_db)
    # The API agrees with the command: a SpecError exactly when the command refused the spec.
    try:
        load_spec(path)
    except SpecError as error:
        assert not passed and result.output.strip() == f"Error: {error}"
    else:
        assert passed


_VALID_OPTIONS = {
    "--target": "5V", "--tolerance": "3%", "--supply-min": "11V", "--supply-max": "13V",
    "--load-min": "0", "--load-max": "10mA", "--ambient-min": "0", "--ambient-max": "50",
}  # fmt: skip
_OPTION_TEXT = st.one_of(
    st.sampled_from(["nan", "inf", "1e999", "", "-1", "0", "5", "3 %", "10 kohm", "E12", "E7", "zener", "x,y",
                     "approved", "banned", "resistance", "13", "4k7", "\x00", "--target", "1" * 70]),
    st.text(max_size=12),
)  # fmt: skip


@CASES
@given(
    changes=st.dictionaries(st.sampled_from(sorted(set(OPTION_FOR_KEY.values()))), _OPTION_TEXT, max_size=4),
    dropped=st.sets(st.sampled_from(sorted(_VALID_OPTIONS)), max_size=2),
)
def test_any_spec_options_are_valid_or_one_error_line_naming_the_option(spec_db, changes, dropped):
    options = {name: value for name, value in _VALID_OPTIONS.items() if name not in dropped} | changes
    arguments = [item for name, value in options.items() for item in (f"{name}={value}",)]
    result = CliRunner().invoke(main, ["--db", spec_db, "check", *arguments, "--stack", "NOPE-1"])
    _assert_clean(result, ("--", "missing --"), spec_db)
