"""Limits: an enormous search is refused up front with an estimate; huge files are refused.

A parts CSV of 1,000,000 rows (invented parts) is refused once it passes
:data:`selector.catalog.parts_import.MAX_ROWS` rows, with one line saying so, and the
refusing process stays within a bounded peak memory.
"""

from __future__ import annotations

import resource
import subprocess
import sys

import pytest
from click.testing import CliRunner

from selector.catalog.parts_import import MAX_FILE_BYTES, MAX_ROWS
from selector.cli import main
from selector.search import candidates

SPEC = ["--target", "5V", "--tolerance", "3%", "--supply-min", "11V", "--supply-max", "13V",
        "--load-min", "0", "--load-max", "10mA", "--ambient-min", "0", "--ambient-max", "50"]  # fmt: skip
#: Peak resident memory the refusing import may reach [MiB]: the interpreter with
#: railwright loaded (~150 MiB) plus MAX_ROWS rows held for validation (~170 MiB).
PEAK_RSS_LIMIT_MIB = 600


@pytest.fixture
def demo_db(tmp_path) -> str:
    db = str(tmp_path / "library.sqlite")
    assert CliRunner().invoke(main, ["--db", db, "init", "--demo"]).exit_code == 0
    return db


def test_enormous_search_is_refused_up_front_with_an_estimate(demo_db):
    result = CliRunner().invoke(main, ["--db", demo_db, "seek", *SPEC, "--max-parts", "12"])
    assert result.exit_code == 1
    lines = result.output.splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: max_parts 12 over ")
    assert "candidate stacks" in lines[0] and "--force" in lines[0]
    estimate = float(lines[0].split(" makes ")[1].split(" ")[0])
    assert estimate > candidates.CANDIDATE_LIMIT


def test_force_gets_past_the_size_refusal(demo_db, monkeypatch):
    # A limit lowered to below a small search stands in for an enormous one, so --force
    # can be seen to run the search through to its shortlist.
    monkeypatch.setattr(candidates, "CANDIDATE_LIMIT", 10)
    refused = CliRunner().invoke(main, ["--db", demo_db, "seek", *SPEC, "--max-parts", "2"])
    assert refused.exit_code == 1 and "pass --force" in refused.output
    forced = CliRunner().invoke(main, ["--db", demo_db, "seek", *SPEC, "--max-parts", "2", "--force"])
    assert forced.exit_code == 0, forced.output
    assert "Considered " in forced.output


_IMPORT_AND_MEASURE = r"""
import resource, sys
from click.testing import CliRunner
from selector.cli import main
result = CliRunner().invoke(main, ["--db", sys.argv[1], "parts", "import", sys.argv[2]])
print(result.exit_code)
print(result.output.strip())
print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
"""


@pytest.mark.slow
def test_million_row_csv_is_refused_with_a_size_message_in_bounded_memory(tmp_path):
    path = tmp_path / "million.csv"
    with open(path, "w", encoding="utf-8") as handle:
        handle.write("part,family,is_a,n,pd_w,description\n")
        handle.writelines(f"M-{index:07d},signal,1n,1.8,0.5,invented\n" for index in range(1_000_000))
    assert path.stat().st_size < MAX_FILE_BYTES  # refused for its rows, not its bytes
    run = subprocess.run([sys.executable, "-c", _IMPORT_AND_MEASURE, str(tmp_path / "lib.sqlite"), str(path)],
                         capture_output=True, text=True, timeout=600)  # fmt: skip
    exit_code, message, peak_kib = run.stdout.strip().splitlines()
    assert exit_code == "1", run.stdout + run.stderr
    assert message == (
        f"Error: {path}:{MAX_ROWS + 2}: more than {MAX_ROWS:,} rows; a parts file holds at most "
        f"{MAX_ROWS:,} parts, so split it into several files"
    )
    peak_mib = int(peak_kib) / 1024  # ru_maxrss is in KiB on Linux
    print(f"peak RSS of the refused 1,000,000-row import: {peak_mib:.0f} MiB")
    assert peak_mib < PEAK_RSS_LIMIT_MIB
    assert resource.getrusage(resource.RUSAGE_SELF).ru_maxrss > 0


def test_force_never_runs_a_search_beyond_the_ceiling(demo_db):
    result = CliRunner().invoke(main, ["--db", demo_db, "seek", *SPEC, "--max-parts", "12", "--force"])
    assert result.exit_code == 1
    assert result.stderr.startswith("Error: max_parts 12 over 74 parts makes ")
    assert result.stderr.endswith("beyond what even --force runs (2e+09); lower --max-parts or narrow --families\n")
