"""``railwright report`` through click's CliRunner: numbers against ``seek --json``, options, bad input."""

from __future__ import annotations

import json
from html.parser import HTMLParser

import pytest
from click.testing import CliRunner
from test_report_html import QUICK, make_library

from selector.cli import main
from selector.search.shortlist import CONTRACT_COLUMNS


@pytest.fixture
def report_db(tmp_path):
    path = tmp_path / "report.sqlite"
    make_library(path).close()
    return str(path)


def run(*arguments):
    return CliRunner().invoke(main, [str(a) for a in arguments])


class ShortlistCells(HTMLParser):
    """Rows of the shortlist table as {column: data-value}."""

    def __init__(self):
        super().__init__()
        self.rows, self.inside = [], False

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        if tag == "table" and attributes.get("class") == "shortlist":
            self.inside = True
        elif self.inside and tag == "tr" and "data-rank" in attributes:
            self.rows.append({})
        elif self.inside and tag == "td" and "data-column" in attributes and "data-value" in attributes:
            self.rows[-1][attributes["data-column"]] = attributes["data-value"]

    def handle_endtag(self, tag):
        if tag == "table":
            self.inside = False


def test_report_numbers_match_seek_json(report_db, tmp_path):
    out = tmp_path / "review.html"
    result = run("--db", report_db, "report", *QUICK, "--top", "4", "--monte-carlo", "500", "--out", out)
    assert result.exit_code == 0, result.output
    assert result.output == f"Report written to {out} (4 design(s)).\n"
    seek = run("--db", report_db, "seek", *QUICK, "--top", "4", "--json")
    assert seek.exit_code == 0, seek.output
    expected = json.loads(seek.output)["shortlist"]
    parser = ShortlistCells()
    parser.feed(out.read_text(encoding="utf-8"))
    assert len(parser.rows) == len(expected) == 4
    for cells, row in zip(parser.rows, expected, strict=True):
        for column in CONTRACT_COLUMNS + ("pareto", "i_min_a"):
            value = row[column]
            shown = cells[column]
            if isinstance(value, bool):
                assert shown == str(value), column
            elif isinstance(value, float):
                assert float(shown) == value, column  # exact: the HTML keeps repr(float)
            else:
                assert shown == str(value), column


def test_report_writes_pngs_and_respects_scatter(report_db, tmp_path):
    out, png = tmp_path / "r.html", tmp_path / "png"
    result = run("--db", report_db, "report", *QUICK, "--top", "2", "--sweeps", "1", "--scatter", "3",
                 "--monte-carlo", "300", "--out", out, "--png", png)
    assert result.exit_code == 0, result.output
    assert "6 PNG file(s)" in result.output
    assert sorted(p.name for p in png.iterdir()) == [
        "error-vs-margin.png", "rank-01-ambient.png", "rank-01-budget.png", "rank-01-monte-carlo.png",
        "rank-01-supply.png",
        "rank-02-monte-carlo.png",
    ]
    assert "(3 of the" in out.read_text(encoding="utf-8")


def test_report_of_one_design(report_db, tmp_path):
    out = tmp_path / "one.html"
    result = run("--db", report_db, "report", *QUICK, "--stack", "TF-SIG + TZ-4V7", "--resistor", "390",
                 "--monte-carlo", "200", "--out", out)
    assert result.exit_code == 0, result.output
    page = out.read_text(encoding="utf-8")
    assert 'id="design"' in page and "390 Ω (as given)" in page


@pytest.mark.parametrize(
    ("arguments", "code", "message"),
    [
        (["--stack", "NOPE"], 1, "Error: unknown part 'NOPE' (not in the library, or filtered out)"),
        (["--stack", "2*"], 2, "Error: --stack: term 1 '2*' is not [COUNT*]PART, e.g. '2*D1'"),
        (["--target", "five"], 2, None),
        (["--top", "0"], 2, "Error: Invalid value for '--top': 0 is not in the range 1<=x<=100. (see 'railwright report --help')"),
        (["--monte-carlo", "0"], 2, "Error: Invalid value for '--monte-carlo': 0 is not in the range 1<=x<=1000000. (see 'railwright report --help')"),
    ],
)
def test_bad_input_is_one_line(report_db, tmp_path, arguments, code, message):
    result = run("--db", report_db, "report", *QUICK, "--out", tmp_path / "r.html", *arguments)
    assert result.exit_code == code, result.output
    assert result.stderr.count("\n") == 1, result.stderr
    last = result.stderr.strip()
    assert last.startswith("Error: ") and "Traceback" not in result.output
    if message is not None:
        assert last == message
    assert not (tmp_path / "r.html").exists()


def test_unwritable_out_is_a_usage_error(report_db, tmp_path):
    target = tmp_path / "no" / "such" / "dir" / "r.html"
    result = run("--db", report_db, "report", *QUICK, "--stack", "TZ-4V7", "--monte-carlo", "100", "--out", target)
    assert result.exit_code == 2
    assert result.output.strip().startswith(f"Error: --out: cannot write '{target}'")


def test_out_is_required_and_help_has_examples():
    missing = run("report", *QUICK)
    assert missing.exit_code == 2 and "Missing option '--out'" in missing.output
    shown = run("report", "--help")
    assert shown.exit_code == 0
    assert "railwright report --spec rail.toml --top 10 --out review.html" in shown.output
    assert "--list" in shown.output and "--stack" in shown.output and "--png" in shown.output
