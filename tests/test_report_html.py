"""The HTML design review: structure, escaping, offline-only content, footer, cautions."""

from __future__ import annotations

import datetime
import re
from html.parser import HTMLParser

import pytest

from selector.catalog.store import open_library
from selector.errors import OptionError, UnknownPartError
from selector.spec.rail_spec import load_spec
from selector.views.report_html import (
    ReviewReport,
    design_review,
    render_html,
    search_review,
    write_report,
)

HOSTILE_DESCRIPTION = "invented <script>alert('x')</script> see http://parts.invalid/z & co"

#: Invented parts (no real part's data); one carries hostile text in its description.
INVENTED_PARTS = [
    dict(part="TF-SIG", family="signal", description="invented", package="invented", is_a=2e-9, n=1.8,
         rs_ohm=0.5, pd_w=0.4, vf_tol_v=0.02),
    dict(part="TF-LED", family="led", description="invented", package="invented", is_a=1e-18, n=2.0, rs_ohm=8,
         pd_w=0.1, if_max_a=0.03),
    dict(part="TZ-4V7", family="zener", description=HOSTILE_DESCRIPTION, package="<b>pkg</b>", vz_v=4.7,
         izt_a=5e-3, zzt_ohm=15, izk_a=0.25e-3, zzk_ohm=500, vz_tol_pct=5, tc_v_per_k=0.5e-3, pd_w=0.5),
    dict(part="TZ-3V3", family="zener", description="invented", package="invented", vz_v=3.3, izt_a=5e-3,
         zzt_ohm=25, izk_a=0.25e-3, zzk_ohm=600, vz_tol_pct=2, tc_v_per_k=-2e-3, pd_w=0.5),
    dict(part="TZ-2V4", family="zener", description="invented", package="invented", vz_v=2.4, izt_a=5e-3,
         zzt_ohm=30, izk_a=0.5e-3, zzk_ohm=900, vz_tol_pct=1, tc_v_per_k=-2.5e-3, pd_w=0.25),
]

SPEC_OPTIONS = {"rail.target": "5V", "rail.tolerance": "3%", "supply.min": "11V", "supply.max": "13V",
                "load.min": "0", "load.max": "10mA", "ambient.min": "0", "ambient.max": "50",
                "search.max_parts": "2"}
QUICK = ["--target", "5V", "--tolerance", "3%", "--supply-min", "11V", "--supply-max", "13V",
         "--load-min", "0", "--load-max", "10mA", "--ambient-min", "0", "--ambient-max", "50", "--max-parts", "2"]


def make_library(path):
    library = open_library(str(path))
    library.import_records(INVENTED_PARTS, kind="test", file_name="invented", file_sha256="0" * 64)
    return library


@pytest.fixture
def report_library(tmp_path):
    library = make_library(tmp_path / "report.sqlite")
    yield library
    library.close()


class Outline(HTMLParser):
    """Collects ids, tags, attributes and text of a page; fails on unbalanced sections."""

    def __init__(self):
        super().__init__()
        self.ids, self.tags, self.attributes, self.text = set(), [], [], []
        self.figures, self.stack = [], []

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        self.tags.append(tag)
        self.attributes.extend(attrs)
        if "id" in attributes:
            self.ids.add(attributes["id"])
        if "data-figure" in attributes:
            self.figures.append(attributes["data-figure"])
        if tag in ("section", "article", "table", "figure", "footer"):
            self.stack.append(tag)

    def handle_endtag(self, tag):
        if tag in ("section", "article", "table", "figure", "footer"):
            assert self.stack and self.stack.pop() == tag, f"unbalanced </{tag}>"

    def handle_data(self, data):
        self.text.append(data)


def outline(page: str) -> Outline:
    parser = Outline()
    parser.feed(page)
    parser.close()
    assert parser.stack == []
    return parser


@pytest.fixture
def search_page(report_library, tmp_path):
    spec = load_spec(None, SPEC_OPTIONS)
    review = search_review(spec, report_library, top=3, samples=2000)
    out = tmp_path / "review.html"
    write_report(review, out)
    return review, out.read_text(encoding="utf-8")


def test_search_page_has_every_section_and_plot(search_page):
    review, page = search_page
    parsed = outline(page)
    assert {"spec", "search", "shortlist", "cautions", "footer", "rank-01", "rank-02", "rank-03"} <= parsed.ids
    kinds = ("supply", "ambient", "monte-carlo", "budget")
    expected = ["error-vs-margin"] + [f"rank-{r:02d}-{kind}" for r in (1, 2, 3) for kind in kinds]
    assert sorted(parsed.figures) == sorted(expected)
    assert parsed.tags.count("svg") == len(expected)
    assert page.count('class="corners"') == 3 and page.count('class="margins"') == 3
    assert len(review.candidates) == 3


def test_only_the_first_designs_get_sweeps(report_library, tmp_path):
    review = search_review(load_spec(None, SPEC_OPTIONS), report_library, top=3, samples=500)
    write_report(review, tmp_path / "r.html", sweep_designs=1)
    parsed = outline((tmp_path / "r.html").read_text(encoding="utf-8"))
    assert "rank-01-supply" in parsed.figures and "rank-02-supply" not in parsed.figures
    assert "rank-03-monte-carlo" in parsed.figures


def test_library_text_is_escaped_and_inert(search_page):
    _, page = search_page
    assert "<script" not in page.lower()
    assert "<b>pkg</b>" not in page and "&lt;b&gt;pkg&lt;/b&gt;" in page
    assert "invented &lt;script&gt;alert(&#x27;x&#x27;)&lt;/script&gt; see http://parts.invalid/z &amp; co" in page


def test_page_refers_to_nothing_outside_itself(search_page):
    _, page = search_page
    parsed = outline(page)
    for name, value in parsed.attributes:
        if name in ("href", "src", "xlink:href", "action", "srcset"):
            assert value is None or value.startswith("#"), (name, value)
        assert "http://" not in (value or "") and "https://" not in (value or "")
    escaped_user_text = "see http://parts.invalid/z"
    assert not re.search(r"https?://", page.replace(escaped_user_text, ""))
    assert not re.search(r"<script\b|<link\b|<iframe\b|<object\b|<embed\b|@import|url\((?!#)", page, re.I)


def test_footer_names_library_revision_and_utc_time(report_library, search_page):
    _, page = search_page
    footer = page[page.index('<footer id="footer">'):]
    assert report_library.location_text() in footer
    assert f'data-field="schema">{report_library.schema_revision()}<' in footer
    assert re.search(r"\d{4}-\d\d-\d\d \d\d:\d\d:\d\d UTC", footer)


def _small_review(**changes) -> ReviewReport:
    base = dict(spec=load_spec(None, SPEC_OPTIONS), candidates=[], shortlist=None, summary=None, scatter=None,
                library_location="lib.sqlite", schema_revision="0002",
                generated=datetime.datetime(2030, 1, 2, 3, 4, 5, tzinfo=datetime.UTC))
    base.update(changes)
    return ReviewReport(**base)


def test_design_page_for_one_stack(report_library, tmp_path):
    spec = load_spec(None, {**SPEC_OPTIONS, "resistor.fixed": "390"})
    review = design_review(spec, report_library, "TF-SIG + TZ-4V7", samples=1000, seed=2)
    write_report(review, tmp_path / "one.html")
    page = (tmp_path / "one.html").read_text(encoding="utf-8")
    parsed = outline(page)
    assert {"spec", "design", "cautions", "footer"} <= parsed.ids
    assert "shortlist" not in parsed.ids and "search" not in parsed.ids
    assert sorted(parsed.figures) == ["design-ambient", "design-budget", "design-monte-carlo", "design-supply"]
    assert "TZ-4V7 + TF-SIG with 390 Ω" in page or "TF-SIG + TZ-4V7 with 390 Ω" in page
    assert "(as given)" in page
    assert review.candidates[0].design.monte_carlo.seed == 2


def test_design_review_names_an_unknown_part(report_library):
    with pytest.raises(UnknownPartError, match="unknown part 'NOPE'"):
        design_review(load_spec(None, SPEC_OPTIONS), report_library, "NOPE + TZ-4V7")


def test_high_voltage_supply_draws_the_es1_caution(report_library, tmp_path):
    # IEC 62368-1:2018, Table 4: 60 V DC is the ES1 limit.
    spec = load_spec(None, {**SPEC_OPTIONS, "supply.min": "61V", "supply.max": "65V", "rail.target": "47V",
                            "search.max_parts": "3"})
    review = design_review(spec, report_library, "10*TZ-4V7", samples=200)
    page = render_html(review, {})
    cautions = page[page.index('<section id="cautions">'):page.index("</section>", page.index('<section id="cautions">'))]
    assert "60 V DC ES1 limit of IEC 62368-1" in cautions
    assert cautions.count("ES1 limit") == 1
    assert "follow local codes and licensed practice" in cautions


def test_conditions_from_the_search_result_are_shown_escaped(search_page):
    review, _ = search_page
    shortlist = review.shortlist.copy()
    shortlist["conditions"] = ["TZ-4V7: only <below> 40 °C"] + [""] * (len(shortlist) - 1)
    candidates = [review.candidates[0].__class__(c.rank, c.design, c.document, "TZ-4V7: only <below> 40 °C" if c.rank == 1 else "")
                  for c in review.candidates]
    page = render_html(_small_review(candidates=candidates, shortlist=shortlist, summary=review.summary,
                                     scatter=review.scatter), {})
    assert "<th>conditions of use</th>" in page
    assert page.count("TZ-4V7: only &lt;below&gt; 40 °C") == 2  # shortlist cell and the design's section
    assert 'class="conditions"' in page


def test_no_conditions_column_without_conditions(search_page):
    _, page = search_page
    assert "conditions of use" not in page


def test_empty_search_says_why(report_library, tmp_path):
    spec = load_spec(None, {**SPEC_OPTIONS, "search.min_margin": "99 %"})
    review = search_review(spec, report_library, top=3, samples=100)
    write_report(review, tmp_path / "none.html")
    page = (tmp_path / "none.html").read_text(encoding="utf-8")
    assert "No feasible design. Most candidates were rejected because:" in page
    assert outline(page).figures == []


def test_unwritable_outputs_name_the_option(report_library, tmp_path):
    review = design_review(load_spec(None, SPEC_OPTIONS), report_library, "TF-SIG + TZ-4V7", samples=100)
    blocker = tmp_path / "file"
    blocker.write_text("x")
    with pytest.raises(OptionError, match=r"^--out: cannot write '.*missing.*review.html'"):
        write_report(review, tmp_path / "missing" / "review.html")
    with pytest.raises(OptionError, match=r"^--png: cannot write into '.*file.*sub'"):
        write_report(review, tmp_path / "ok.html", blocker / "sub")


def test_png_dir_gets_one_file_per_figure(report_library, tmp_path):
    review = design_review(load_spec(None, SPEC_OPTIONS), report_library, "TF-SIG + TZ-4V7", samples=100)
    written = write_report(review, tmp_path / "r.html", tmp_path / "png")
    assert sorted(p.name for p in written) == ["design-ambient.png", "design-budget.png", "design-monte-carlo.png",
                                                "design-supply.png"]
    assert all(p.read_bytes().startswith(b"\x89PNG") for p in written)
