"""What-if: the library's variants of a design, each solved exactly. The library here is
invented, with a tighter grade of the failing zener so that a fix is known to exist."""

from __future__ import annotations

import numpy as np
import pytest

from selector.physics.corners import evaluate_designs
from selector.physics.partset import PartSet
from selector.search.what_if import what_if
from selector.spec.rail_spec import RailSpec

GRADE_5 = dict(part="WI-Z5", family="zener", vz_v=5.1, izt_a=5e-3, zzt_ohm=10.0, izk_a=0.5e-3, zzk_ohm=200.0,
               vz_tol_pct=5.0, tc_v_per_k=1e-3, pd_w=0.5)  # fmt: skip
GRADE_1 = GRADE_5 | {"part": "WI-Z1", "vz_tol_pct": 1.0}
FAR = GRADE_5 | {"part": "WI-Z9", "vz_v": 9.1}
DIODE = dict(part="WI-D", family="signal", is_a=2e-9, n=1.8, rs_ohm=0.5, vf_tol_v=0.02, pd_w=0.4)
SPEC = RailSpec(target_v=5.1, tolerance_v=0.15, supply_min_v=11.9, supply_max_v=12.1, supply_nominal_v=12.0,
                load_kind="current", load_min=0.0, load_max=1e-3, ambient_min_c=20.0, ambient_max_c=30.0,
                max_parts=2)  # fmt: skip


def test_a_tighter_grade_of_the_same_voltage_is_found_and_meets():
    parts = PartSet.from_records([GRADE_5, GRADE_1, FAR, DIODE])
    stack = parts.index_of(["WI-Z5"])
    evaluation = evaluate_designs(parts, stack[None, :], np.array([1000.0]), SPEC)
    assert not evaluation.meets[0]  # 5 % of 5.1 V is 255 mV, past the 150 mV allowed
    fixes = what_if(parts, stack, 1000.0, SPEC)
    best = fixes[0]
    assert best.change == "WI-Z5 → WI-Z1" and best.meets and best.stack == "WI-Z1"
    assert not any("WI-Z9" in fix.change for fix in fixes)  # 9.1 V is not within 5 % of 5.1 V
    assert any(fix.change.startswith("R 1 kΩ → ") for fix in fixes)
    assert any(fix.change == "add WI-D" for fix in fixes)
    # Each variant's figures are the exact evaluation of that variant.
    again = evaluate_designs(parts, parts.index_of(["WI-Z1"])[None, :], np.array([best.resistor_ohm]), SPEC)
    assert again.error_v[0] == best.error_v and bool(again.meets[0])


def test_parts_the_list_does_not_allow_are_not_proposed():
    parts = PartSet.from_records([GRADE_5, GRADE_1, FAR, DIODE])
    usable = np.array([True, False, True, True])
    fixes = what_if(parts, parts.index_of(["WI-Z5"]), 1000.0, SPEC, usable)
    assert not any("WI-Z1" in fix.change for fix in fixes)


def test_check_lists_the_variants_of_a_failing_design(run_cli, tmp_path):
    import json
    from pathlib import Path

    db = str(tmp_path / "lib.sqlite")
    assert run_cli("--db", db, "init", "--demo").exit_code == 0
    example = str(Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml")
    result = run_cli("--db", db, "check", "--spec", example, "--stack", "D-SCH3 + Z4V7-B")
    assert result.exit_code == 3
    lines = result.stdout.splitlines()
    assert "What if (variants from the library, each solved at every corner; best first, * meets):" in lines
    assert any(line.strip().startswith("R 300 Ω → 316 Ω (E48)") for line in lines)
    document = json.loads(run_cli("--db", db, "check", "--spec", example, "--stack", "Z5V1-B", "--what-if",
                                  "--json").stdout)
    assert {"change", "stack", "resistor_ohm", "error_v", "margin", "meets", "feasible"} == set(document["what_if"][0])


def test_the_largest_supply_range_that_meets_is_found_by_bisection():
    import dataclasses

    from selector.search.what_if import largest_meeting_range

    tight = GRADE_1 | {"vz_tol_pct": 0.5, "zzt_ohm": 40.0, "zzk_ohm": 400.0}
    parts = PartSet.from_records([tight])
    stack = np.array([0])
    nominal = evaluate_designs(parts, stack[None, :], np.array([1000.0]), SPEC).vout_nom_v[0]
    wide = dataclasses.replace(SPEC, target_v=float(nominal), supply_min_v=8.0, supply_max_v=16.0, tolerance_v=0.1)

    def meets(spec):
        return bool(evaluate_designs(parts, stack[None, :], np.array([1000.0]), spec).meets[0])

    assert not meets(wide)
    low, high = largest_meeting_range(parts, stack, 1000.0, wide, "supply")
    assert 8.0 < low < 12.0 < high < 16.0
    assert (12.0 - low) / 4.0 == pytest.approx((high - 12.0) / 4.0, rel=1e-9)  # shrunk about the nominal
    assert meets(dataclasses.replace(wide, supply_min_v=low, supply_max_v=high))
    wider = 1.001
    assert not meets(dataclasses.replace(wide, supply_min_v=12.0 - wider * (12.0 - low),
                                         supply_max_v=12.0 + wider * (high - 12.0)))


def _what_if_rows(page: str) -> list[tuple[str, str]]:
    """(change, data-meets) per row of the report's what-if table."""
    from html.parser import HTMLParser

    class Rows(HTMLParser):
        def __init__(self):
            super().__init__()
            self.rows, self.inside, self.cell = [], False, None

        def handle_starttag(self, tag, attrs):
            attributes = dict(attrs)
            if tag == "table" and attributes.get("class") == "what-if":
                self.inside = True
            elif self.inside and tag == "tr" and "data-meets" in attributes:
                self.rows.append(["", attributes["data-meets"]])
                self.cell = 0
            elif self.inside and tag == "td" and self.cell is not None:
                self.cell += 1

        def handle_endtag(self, tag):
            if tag == "table":
                self.inside = False

        def handle_data(self, data):
            if self.inside and self.rows and self.cell == 1:
                self.rows[-1][0] += data

    parser = Rows()
    parser.feed(page)
    return [tuple(row) for row in parser.rows]


def test_the_report_lists_the_variants_of_its_first_designs(run_cli, tmp_path):
    from selector.catalog.store import open_library

    db = str(tmp_path / "lib.sqlite")
    library = open_library(db)
    library.import_records([GRADE_5, GRADE_1, FAR, DIODE], kind="test", file_name="invented", file_sha256="0" * 64)
    library.close()
    window = ["--target", "5.1V", "--tolerance", "150mV", "--supply-min", "11.9V", "--supply-max", "12.1V",
              "--load-min", "0", "--load-max", "1mA", "--ambient-min", "20", "--ambient-max", "30", "--max-parts", "2"]
    out = tmp_path / "design.html"
    result = run_cli("--db", db, "report", *window, "--stack", "WI-Z5", "--resistor", "1k", "--monte-carlo", "50",
                     "--out", str(out))
    assert result.exit_code == 0, result.output
    rows = _what_if_rows(out.read_text(encoding="utf-8"))
    assert rows[0] == ("WI-Z5 → WI-Z1", "true")
    assert any(change == "add WI-D" for change, _ in rows)
    assert not any("WI-Z9" in change for change, _ in rows)
    # With no sweeps asked for, no design gets a what-if list either.
    result = run_cli("--db", db, "report", *window, "--stack", "WI-Z5", "--resistor", "1k", "--monte-carlo", "50",
                     "--sweeps", "0", "--out", str(out))
    assert result.exit_code == 0, result.output
    assert _what_if_rows(out.read_text(encoding="utf-8")) == []
    assert "<h3>What if</h3>" not in out.read_text(encoding="utf-8")
