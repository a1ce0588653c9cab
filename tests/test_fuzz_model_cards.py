"""Fuzzing ``railwright parts import-cards``: hand-edited SPICE ``.model`` cards never crash.

Generated card files hold valid cards (invented values) with spoiled parameters: huge and
tiny exponents, NaN and inf, unknown suffixes, duplicate or missing names, stray
parentheses, continuation lines without a card, NUL bytes, truncation and other
encodings. The property: exit 0, or ``Error: `` lines that each name the card file — never
a traceback — and a failed call leaves a full ``parts export`` byte-identical.
"""

from __future__ import annotations

import io

import pytest
from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from selector.catalog.parts_export import write_parts_csv
from selector.catalog.store import open_library
from selector.cli import main

CASES = settings(
    max_examples=2000,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],
)

_NAMES = ["IS", "N", "RS", "EG", "XTI", "TNOM", "BV", "IBV", "CJO", "M", "TT", "is", "Bv", "X", "1N", ""]
_VALUES = st.one_of(
    st.sampled_from(["2.5n", "1.8", "0.6", "1.11", "3", "27", "5.1", "5m", "1MEG", "10mV", "1e-14", "nan",
                     "inf", "-inf", "1e999999999999", "1e-999999999", "0", "-1", "1e308", "2.5x", "=1",
                     "1,5", "", "(", ")", "\x00", "1e", "meg", ".5u"]),
    st.floats().map(repr),
    st.text(max_size=8),
)  # fmt: skip


@st.composite
def card_files(draw) -> tuple[bytes, str]:
    """Bytes of a card file, and the family given with ``--family``."""
    lines = [draw(st.sampled_from(["* invented cards for fuzzing", "", ".lib shop"]))]
    for number in range(draw(st.integers(0, 4))):
        name = draw(st.sampled_from([f"FC-{number}", f"FC-{number}", "FC-0", "X+Y", "", "(", "A" * 80]))
        kind = draw(st.sampled_from(["D", "D", "d", "NPN", "", "IS=1n"]))
        parameters = " ".join(
            f"{draw(st.sampled_from(_NAMES))}{draw(st.sampled_from(['=', ' = ', '==', '']))}{draw(_VALUES)}"
            for _ in range(draw(st.integers(0, 6)))
        )
        opening, closing = draw(st.sampled_from([("(", ")"), ("", ""), ("(", ""), ("((", ")")]))
        lines.append(f".model {name} {kind}{opening}{parameters}{closing}")
        if draw(st.booleans()):
            lines.append(f"+ {draw(st.sampled_from(_NAMES))}={draw(_VALUES)} ; comment")
    if draw(st.integers(0, 9)) == 0:
        lines.insert(0, "+ IS=1n")
    text = draw(st.sampled_from(["\n", "\r\n"])).join(lines)
    data = text.encode(draw(st.sampled_from(["utf-8", "utf-8", "utf-16", "latin-1"])), errors="replace")
    spoil = draw(st.integers(0, 5))
    if spoil == 0 and data:
        data = data[: draw(st.integers(0, len(data)))]
    elif spoil == 1:
        at = draw(st.integers(0, len(data)))
        data = data[:at] + draw(st.sampled_from([b"\x00", b"\xff", b"\xc3"])) + data[at:]
    family = draw(st.sampled_from(["signal", "zener", "rectifier", "led"]))
    return data, family


@pytest.fixture(scope="module")
def card_library(tmp_path_factory):
    path = tmp_path_factory.mktemp("cards") / "library.sqlite"
    library = open_library(str(path))
    state = {"export": _export(library)}
    yield path, library, state
    library.close()


def _export(library) -> str:
    buffer = io.StringIO()
    write_parts_csv(buffer, library.part_records())
    return buffer.getvalue()


@CASES
@given(case=card_files(), settings_given=st.sampled_from([(), ("--set", "pd_w=500m"), ("--set", "pd_w=1e999"),
                                                          ("--set", "izt_a=1e-300", "--set", "pd_w=1")]))
def test_card_import_is_clean_or_a_located_error_and_leaves_the_library_alone(card_library, tmp_path_factory, case, settings_given):
    data, family = case
    path, library, state = card_library
    card_path = tmp_path_factory.getbasetemp() / "fuzz.lib"
    card_path.write_bytes(data)
    arguments = ["--db", str(path), "parts", "import-cards", str(card_path), "--family", family, *settings_given]
    result = CliRunner().invoke(main, arguments)
    assert "Traceback" not in result.output
    assert result.exception is None or isinstance(result.exception, SystemExit), repr(result.exception)
    before, after = state["export"], _export(library)
    state["export"] = after
    if result.exit_code != 0:
        assert result.exit_code in (1, 2), result.output
        errors = [line for line in result.output.splitlines() if not line.startswith("Warning: ")]
        assert errors[0].startswith("Error: "), errors
        first = errors[0][len("Error: "):]
        assert first.startswith((str(card_path), "--set")), errors
        assert all(line.startswith(str(card_path)) for line in errors[1:]), errors
        assert after == before
