"""The report's evidence: the verdict-level list failure, statuses allowed and found, approval
and parts-data tables, provenance, sign-off, the demo notice, and ``report --design``.

Parts are the invented test parts of ``test_report_html`` (no source) or the invented demo
sets; the HTML keeps passing the report's existing checks (no scripts, nothing remote,
escaped text, a Chromium screenshot that is not blank).
"""

from __future__ import annotations

import hashlib
import re
import shutil
from html.parser import HTMLParser
from pathlib import Path

import matplotlib.image
import pytest
from test_report_browser import CHROMIUM, screenshot
from test_report_html import SPEC_OPTIONS, make_library, outline

from selector import __version__
from selector.catalog import list_changes as changes
from selector.catalog.design_snapshot import DEMO_SOURCE
from selector.catalog.library_hash import library_content_hash
from selector.catalog.resources import demo_csv_path
from selector.spec.spec_source import read_spec_source
from selector.views.report_html import design_review, render_html, search_review

HOSTILE_REASON = "failed <qualification> & see http://parts.invalid/q"
HOSTILE_CONDITION = "ambient at most 40 °C <dry> & \"clean\""
EXAMPLE_SPEC = Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml"


class Rows(HTMLParser):
    """Cells of every row of the tables of one class, and each row's class."""

    def __init__(self, table_class: str):
        super().__init__()
        self.table_class, self.inside, self.rows, self.cell = table_class, False, [], None

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        if tag == "table" and attributes.get("class") == self.table_class:
            self.inside = True
        elif self.inside and tag == "tr":
            self.rows.append((attributes.get("class", ""), []))
        elif self.inside and tag in ("td", "th"):
            self.cell = []

    def handle_endtag(self, tag):
        if tag == "table":
            self.inside = False
        elif self.inside and tag in ("td", "th") and self.cell is not None:
            self.rows[-1][1].append("".join(self.cell).strip())
            self.cell = None

    def handle_data(self, data):
        if self.cell is not None:
            self.cell.append(data)


def table_rows(page: str, table_class: str) -> list[tuple[str, list[str]]]:
    parser = Rows(table_class)
    parser.feed(page)
    return parser.rows


def section(page: str, section_id: str) -> str:
    start = page.index(f'id="{section_id}"')
    return page[start:page.index("</section>", start)]


@pytest.fixture
def own_library(tmp_path):
    """The invented test parts of the report tests (no demo source)."""
    library = make_library(tmp_path / "report.sqlite")
    yield library
    library.close()


@pytest.fixture
def listed_library(own_library):
    changes.create_list(own_library, "line-a", by="C. Lead")
    changes.set_status(own_library, "line-a", "TZ-4V7", "banned", reason=HOSTILE_REASON, by="C. <Lead>")
    changes.set_status(own_library, "line-a", "TF-SIG", "conditional", reason="leaky when hot",
                       condition=HOSTILE_CONDITION, by="C. Lead")
    changes.set_status(own_library, "line-a", "TZ-3V3", "evaluating", reason="samples ordered", by="C. Lead")
    return own_library


def _page(library, stack: str, overrides=None, **evidence) -> str:
    spec, source = read_spec_source(None, {**SPEC_OPTIONS, "search.list": "line-a", **(overrides or {})})
    review = design_review(spec, library, stack, samples=200, spec_source=source, **evidence)
    return render_html(review, {})


def test_a_banned_part_fails_at_the_top_and_in_the_design(listed_library):
    page = _page(listed_library, "TF-SIG + TZ-4V7", prepared_by="A. <Tester>")
    parsed = outline(page)
    assert {"approval-failure", "approval", "parameters", "provenance", "sign-off"} <= parsed.ids
    assert page.index('id="approval-failure"') < page.index('id="spec"') < page.index('id="design"')
    top = section(page, "approval-failure")
    assert 'class="failure"' in top and "FAILS the approved-parts list" in top
    assert "TZ-4V7 is banned on the list &#x27;line-a&#x27;: failed &lt;qualification&gt; &amp; see" in top
    design = page[page.index('id="design"'):]
    assert design.index("FAILS the approved-parts list: this design may not be built from it.") < design.index(
        'class="verdict"')
    requirement = section(page, "spec")
    assert ("Approved-parts list &#x27;line-a&#x27;: statuses allowed approved, conditional; found TF-SIG "
            "conditional (allowed); TZ-4V7 banned (NOT allowed).") in requirement
    # The conditional part's condition is shown, escaped, beside the design and in the approval table.
    assert ('<strong>Conditions of use:</strong> TF-SIG: ambient at most 40 °C &lt;dry&gt; &amp; &quot;clean&quot;'
            in page)
    approval = table_rows(page, "approval")
    assert approval[0][1] == ["part", "list", "status", "reason", "set by", "since (UTC)", "condition of use"]
    by_part = {cells[0]: (klass, cells) for klass, cells in approval[1:]}
    assert by_part["TZ-4V7"][0] == "refused" and by_part["TZ-4V7"][1][2:5] == ["banned", HOSTILE_REASON, "C. <Lead>"]
    assert by_part["TF-SIG"][0] == "" and by_part["TF-SIG"][1][6] == HOSTILE_CONDITION
    assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\+00:00", by_part["TF-SIG"][1][5])


@pytest.mark.parametrize(("stack", "statuses", "refused"), [
    ("TZ-3V3", None, "TZ-3V3 is evaluating on the list 'line-a' (usable here: approved, conditional): samples ordered"),
    ("TZ-3V3", "approved,evaluating", None),
    ("TZ-2V4", None, "TZ-2V4 is not on the list 'line-a'"),
    ("TF-SIG", None, None),
])
def test_evaluating_unlisted_and_allowed_parts(listed_library, stack, statuses, refused):
    page = _page(listed_library, stack, {"search.statuses": statuses} if statuses else None)
    if refused is None:
        assert 'id="approval-failure"' not in page and "FAILS" not in page
    else:
        assert refused.replace("'", "&#x27;") in section(page, "approval-failure")


def test_a_search_report_names_no_failure_and_says_what_it_found(listed_library):
    spec, source = read_spec_source(None, {**SPEC_OPTIONS, "search.list": "line-a", "search.max_parts": "2"})
    review = search_review(spec, listed_library, top=2, samples=200, spec_source=source)
    page = render_html(review, {})
    assert 'id="approval-failure"' not in page
    assert "TZ-4V7" not in section(page, "approval")  # the banned part was never searched
    assert "statuses allowed approved, conditional; found " in section(page, "spec")


def test_parts_data_shows_every_parameter_used_its_unit_and_origin(own_library):
    page = _page_without_list(own_library, "TZ-4V7 + TF-SIG")
    rows = [cells for _, cells in table_rows(page, "parameters")]
    assert rows[0] == ["part", "parameter", "value used", "unit", "origin"]
    assert rows[1] == ["TZ-4V7 (zener); source: (not given)"]
    zener = {cells[1]: cells[2:] for cells in rows if cells[0] == "TZ-4V7" and len(cells) == 5}
    assert zener["vz_v"] == ["4.7", "V", "given"]
    assert zener["vz_tol_pct"] == ["5.0", "%", "given"]
    assert zener["tnom_c"] == ["25.0", "°C", "default"]  # DESIGN §3 default
    assert zener["theta_ja_k_per_w"] == ["250.0", "K/W", "derived: (tj_max_c − 25 °C)/pd_w"]  # (150 − 25)/0.5
    assert zener["i_min_a"] == ["0.00025", "A", "derived: izk_a"]
    assert zener["if_max_a"] == ["no limit", "A", "not given: no limit"]
    forward = {cells[1]: cells[2:] for cells in rows if cells[0] == "TF-SIG" and len(cells) == 5}
    assert forward["is_a"] == ["2e-09", "A", "given"] and forward["eg_ev"] == ["1.11", "eV", "default"]
    assert "vz_v" not in forward and "is_a" not in zener


def _page_without_list(library, stack: str, **evidence) -> str:
    spec, source = read_spec_source(None, SPEC_OPTIONS)
    return render_html(design_review(spec, library, stack, samples=200, spec_source=source, **evidence), {})


def test_provenance_names_spec_library_schema_and_version(own_library, tmp_path):
    spec_file = tmp_path / "rail.toml"
    shutil.copy(EXAMPLE_SPEC, spec_file)
    spec, source = read_spec_source(spec_file, {"search.max_parts": "2"})
    page = render_html(design_review(spec, own_library, "TZ-4V7", samples=100, spec_source=source), {})
    rows = {cells[0]: cells[1] for _, cells in table_rows(page, "provenance")}
    assert rows["spec file"] == str(spec_file)
    assert rows["spec file SHA-256"] == hashlib.sha256(spec_file.read_bytes()).hexdigest()
    assert rows["spec options"] == "--max-parts 2"
    assert rows["library content SHA-256"] == library_content_hash(own_library)
    assert rows["schema revision"] == own_library.schema_revision()
    assert rows["railwright version"] == __version__
    assert rows["audit trail"] == "hash chain not checked (this library keeps none)"


def test_sign_off_has_the_preparer_and_blank_lines(own_library):
    page = _page_without_list(own_library, "TZ-4V7", prepared_by="A. <Tester>")
    rows = [cells for _, cells in table_rows(page, "signoff")]
    day = re.search(r'datetime="(\d{4}-\d\d-\d\d)', page).group(1)
    assert rows == [["prepared by", "A. <Tester>", "date", day, "signature", ""],
                    ["checked by", "", "date", "", "signature", ""],
                    ["approved by", "", "date", "", "signature", ""]]
    assert section(page, "sign-off").count('class="blank"') == 7


def test_the_demo_notice_appears_only_when_a_demo_part_is_used(own_library, demo_library):
    assert {record["source"] for record in demo_library.part_records()} == {DEMO_SOURCE}
    assert DEMO_SOURCE in demo_csv_path().read_text(encoding="utf-8")
    own = _page_without_list(own_library, "TZ-4V7")
    assert 'id="demo-notice"' not in own and "invented" not in section(own + "</section>", "footer")
    demo = _page_without_list(demo_library, "Z5V1-B + D-SIG1")
    notice = section(demo, "demo-notice")
    assert "Z5V1-B, D-SIG1 are bundled demo sets with invented parameters" in notice


def test_evidence_page_is_inert_and_renders(listed_library, tmp_path):
    page = _page(listed_library, "TF-SIG + TZ-4V7", prepared_by="A. <Tester>")
    parsed = outline(page)
    for name, value in parsed.attributes:
        if name in ("href", "src", "xlink:href", "action", "srcset"):
            assert value is None or value.startswith("#"), (name, value)
    assert not re.search(r"<script\b|<link\b|<iframe\b|<object\b|<embed\b|@import|url\((?!#)", page, re.I)
    assert not re.search(r"https?://", page.replace("see http://parts.invalid/q", "").replace(
        "see http://parts.invalid/z", ""))
    assert "<qualification>" not in page and "<Lead>" not in page and "<dry>" not in page
    if CHROMIUM is None:
        pytest.skip("Chromium is not installed (Debian package 'chromium')")
    path = tmp_path / "evidence.html"
    path.write_text(page, encoding="utf-8")
    pixels = matplotlib.image.imread(screenshot(path, tmp_path))[..., :3]
    assert pixels.std() > 0.05
    top = pixels[:500]
    # The failure box is red: its border and heading (#a40000) in the top of the page.
    red = (top[..., 0] > 0.5) & (top[..., 1] < 0.2) & (top[..., 2] < 0.2)
    assert red.mean() > 0.002


def _saved_design_page(run_cli, db, tmp_path, *extra) -> tuple[object, str]:
    out = tmp_path / "saved.html"
    result = run_cli("--db", db, "report", "--design", "bias-5v", "--monte-carlo", "200", "--out", out, *extra)
    return result, out.read_text(encoding="utf-8") if out.exists() else ""


def test_report_of_a_saved_design_highlights_what_differs(run_cli, demo_library, library_path, tmp_path):
    db = str(library_path)
    spec_file = tmp_path / "rail.toml"
    shutil.copy(EXAMPLE_SPEC, spec_file)
    changes.create_list(demo_library, "line-a")
    changes.set_status(demo_library, "line-a", "Z5V1-B", "approved", reason="qualified")
    saved = run_cli("--db", db, "designs", "save", "bias-5v", "--spec", spec_file, "--list", "line-a",
                    "--stack", "Z5V1-B", "--reason", "first build")
    assert saved.exit_code == 0, saved.output
    result, page = _saved_design_page(run_cli, db, tmp_path, "--by", "A. Tester")
    assert result.exit_code == 0 and result.stdout == f"Report written to {tmp_path / 'saved.html'} (1 design(s)).\n"
    assert "Nothing differs from the saved snapshot" in section(page, "saved-design")
    assert "(the same as today)" in section(page, "provenance")

    demo_library.import_records([demo_library.part_record("Z5V1-B") | {"vz_tol_pct": 10.0}], kind="parts csv",
                                file_name="edit.csv", file_sha256="1" * 64)
    changes.set_status(demo_library, "line-a", "Z5V1-B", "banned", reason="supplier discontinued")
    result, page = _saved_design_page(run_cli, db, tmp_path)
    assert result.exit_code == 0
    assert result.stderr == "Warning: Z5V1-B is banned on the list 'line-a': supplier discontinued\n"
    saved_section = section(page, "saved-design")
    assert 'class="failure"' in saved_section and "FAILS" in saved_section
    differences = [cells for klass, cells in table_rows(page, "differences") if klass == "changed"]
    assert ["parts data", "Z5V1-B: vz_tol_pct", "5.0", "10.0"] in differences
    assert ["list status", "Z5V1-B on 'line-a'", "approved (qualified)", "banned (supplier discontinued)"] in differences
    assert ["verdict", "verdict", "meets the spec at every corner",
            "uses parts its list does not allow; not feasible (bias)"] in differences
    assert any(cells[:2] == ["figure", "error_v"] for cells in differences)
    parameters = {cells[1]: (klass, cells) for klass, cells in table_rows(page, "parameters") if len(cells) == 5}
    assert parameters["vz_tol_pct"] == ("changed", ["Z5V1-B", "vz_tol_pct", "10.0", "%", "given; saved: 5.0"])
    assert parameters["vz_v"][0] == ""
    assert "(different from today" in section(page, "provenance")
    assert 'id="approval-failure"' in page and 'id="demo-notice"' in page


@pytest.mark.parametrize(("extra", "code", "message"), [
    (["--stack", "Z5V1-B"], 2, "Error: --design: a saved design brings its own spec and stack; "
                               "leave out --stack, --spec and the spec options"),
    (["--target", "5V"], 2, None),
    (["--by", " "], 2, "Error: --by: empty; give the name of the person making the change"),
])
def test_report_design_refuses_a_second_spec(run_cli, demo_library, library_path, tmp_path, extra, code, message):
    result, page = _saved_design_page(run_cli, str(library_path), tmp_path, *extra)
    assert result.exit_code == code and page == ""
    assert result.stderr.count("\n") == 1
    if message:
        assert result.stderr.strip() == message


def test_report_of_an_unknown_design_is_one_line(run_cli, demo_library, library_path, tmp_path):
    result, page = _saved_design_page(run_cli, str(library_path), tmp_path)
    assert (result.exit_code, result.stderr) == (
        1, "Error: unknown saved design 'bias-5v' (the library has no saved designs yet)\n")
