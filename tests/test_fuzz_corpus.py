"""Replays the regression corpus: inputs that once crashed the tool (``tests/corpus/``).

Each case of ``tests/corpus/cases.json`` names a corpus file, the command line that once
failed on it, and the exit code and message it must give now. All inputs are invented.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from selector.cli import main

CORPUS = Path(__file__).parent / "corpus"
CASES = json.loads((CORPUS / "cases.json").read_text(encoding="utf-8"))["cases"]


@pytest.mark.parametrize("case", CASES, ids=[case["file"] for case in CASES])
def test_corpus_input_gives_its_clean_answer(tmp_path, case):
    path = CORPUS / case["file"]
    text = path.read_text(encoding="utf-8").strip()
    arguments = [argument.replace("{file}", str(path)).replace("{text}", text) for argument in case["arguments"]]
    result = CliRunner().invoke(main, ["--db", str(tmp_path / "library.sqlite"), *arguments])
    assert result.exception is None or isinstance(result.exception, SystemExit), repr(result.exception)
    assert "Traceback" not in result.output
    assert result.exit_code == case["exit_code"], result.output
    assert case["message"] in result.output


def test_every_corpus_file_is_replayed():
    used = {case["file"] for case in CASES}
    assert used == {path.name for path in CORPUS.iterdir() if path.name != "cases.json"}
