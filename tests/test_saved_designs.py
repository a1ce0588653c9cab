"""Saved designs through the API, on every backend: what a save keeps, append-only revisions,
and re-verification after a data change, a status change and a removal attempt.

The parts are the invented demo sets; the spec is the README's example scenario.
"""

from __future__ import annotations

import hashlib
import shutil
from pathlib import Path

import pytest
from sqlalchemy import text

import selector.api as api
from selector import __version__
from selector.api import design_figures, save_design, verify_design, verify_designs
from selector.catalog import list_changes as changes
from selector.catalog.audit import history
from selector.catalog.design_snapshot import FieldChange
from selector.catalog.library_hash import library_content_hash
from selector.catalog.saved_designs import (
    UnknownDesignError,
    latest_revisions,
    saved_revision,
    where_used,
)
from selector.catalog.schema_revision import head_revision
from selector.errors import LibraryError, OptionError
from selector.spec.spec_source import read_spec_source

EXAMPLE_SPEC = Path(__file__).parents[1] / "examples" / "rail-5v-from-12v.toml"


@pytest.fixture
def spec_file(tmp_path) -> Path:
    path = tmp_path / "rail.toml"
    shutil.copy(EXAMPLE_SPEC, path)
    return path


def _with_list(spec_file: Path):
    return read_spec_source(spec_file, {"search.list": "line-a"})[1]


def _change_part(library, part: str, **fields):
    library.import_records([library.part_record(part) | fields], kind="parts csv", file_name="edit.csv",
                           file_sha256="1" * 64)


def test_a_save_keeps_spec_stack_figures_snapshot_and_hashes(backend_library, spec_file):
    changes.create_list(backend_library, "line-a", by="C. Lead")
    changes.set_status(backend_library, "line-a", "Z5V1-B", "approved", reason="qualified, report 17", by="C. Lead")
    saved, result = save_design(_with_list(spec_file), backend_library, "bias-5v", "Z5V1-B",
                                reason="first build", by="D. Eng")
    assert (saved.name, saved.revision, saved.revisions, saved.saved_by, saved.reason) == (
        "bias-5v", 1, 1, "D. Eng", "first build")
    content = saved.content
    assert content.spec_source.text == spec_file.read_text(encoding="utf-8")
    assert content.spec_source.sha256 == hashlib.sha256(spec_file.read_bytes()).hexdigest()
    assert content.spec_source.overrides == {"search.list": "line-a"}
    assert (content.stack, content.resistor_ohm, content.resistor_chosen) == ("Z5V1-B", 510.0, True)
    assert content.meets and content.list_allows and content.positive
    assert content.figures == design_figures(result) and content.figures["error_v"] == result.design.metrics.evaluation.error_v[0]
    assert content.snapshot["Z5V1-B"]["record"] == backend_library.part_record("Z5V1-B")
    entry = content.snapshot["Z5V1-B"]["lists"]["line-a"]
    assert (entry["status"], entry["reason"], entry["by"]) == ("approved", "qualified, report 17", "C. Lead")
    assert saved.library_sha256 == library_content_hash(backend_library)
    assert (saved.schema_revision, saved.tool_version) == (head_revision(), __version__)

    second, _ = save_design(spec_file, backend_library, "bias-5v", "D-SCH3 + Z4V7-A", 390, reason="second source")
    assert (second.revision, second.revisions, second.content.resistor_chosen) == (2, 2, False)
    first = saved_revision(backend_library, "bias-5v", 1)
    assert first.content == saved.content and first.revisions == 2  # the old revision is kept unchanged
    assert [r.content.stack for r in latest_revisions(backend_library)] == ["D-SCH3 + Z4V7-A"]
    events = [event for event in history(backend_library) if event["action"] == "design saved"]
    assert [(e["who"], e["why"], e["list"]) for e in events] == [("D. Eng", "first build", "line-a"),
                                                               (events[1]["who"], "second source", "")]
    assert events[0]["new"] == "'bias-5v' revision 1: Z5V1-B with 510 Ω; meets the spec at every corner"


@pytest.mark.parametrize("statement", ["UPDATE design_revisions SET reason = 'rewritten'",
                                       "DELETE FROM design_revisions"])
def test_the_database_refuses_to_change_or_delete_revisions(backend_library, spec_file, statement):
    save_design(spec_file, backend_library, "bias-5v", "Z5V1-B", reason="first build")
    with pytest.raises(LibraryError) as caught, backend_library.session() as session:
        session.execute(text(statement))
    assert "saved design revisions are append-only: they cannot be changed or deleted" in str(caught.value)
    assert saved_revision(backend_library, "bias-5v").reason == "first build"


def test_truncate_of_revisions_is_refused_on_postgresql(postgres_db, spec_file):
    from selector.catalog.store import open_library

    library = open_library(postgres_db, create_with_demo=True)
    save_design(spec_file, library, "bias-5v", "Z5V1-B", reason="first build")
    with pytest.raises(LibraryError, match="append-only"), library.session() as session:
        session.execute(text("TRUNCATE design_revisions CASCADE"))
    assert saved_revision(library, "bias-5v").revision == 1
    library.close()


def test_verify_unchanged_then_after_a_data_change(backend_library, spec_file):
    save_design(spec_file, backend_library, "bias-5v", "Z5V1-B", reason="first build")
    same = verify_design(backend_library, "bias-5v")
    assert same.positive and same.unchanged and same.figure_changes() == []
    _change_part(backend_library, "Z5V1-B", vz_tol_pct=10.0, description="new lot")
    changed = verify_design(backend_library, "bias-5v")
    assert changed.field_changes == [FieldChange("Z5V1-B", "description", "5.1 V zener, 1.2 W plastic class", "new lot"),
                                     FieldChange("Z5V1-B", "vz_tol_pct", 5.0, 10.0)]
    assert not changed.positive and not changed.unchanged
    assert changed.verdict == "not feasible (bias)"
    keys = [key for key, _, _ in changed.figure_changes()]
    assert "error_v" in keys and "meets" in keys
    assert changed.figures["resistor_ohm"] == 510.0  # the saved resistor, not a new choice


def test_verify_after_a_status_change(backend_library, spec_file):
    changes.create_list(backend_library, "line-a")
    changes.set_status(backend_library, "line-a", "Z5V1-B", "approved", reason="qualified")
    save_design(_with_list(spec_file), backend_library, "bias-5v", "Z5V1-B", reason="first build")
    save_design(spec_file, backend_library, "other", "Z5V1-B", reason="no list")
    changes.set_status(backend_library, "line-a", "Z5V1-B", "banned", reason="supplier discontinued")
    listed, unlisted = verify_designs(backend_library)
    assert listed.saved.name == "bias-5v" and unlisted.saved.name == "other"
    assert [change.text() for change in listed.status_changes] == [
        "Z5V1-B on 'line-a': approved (qualified) \u2192 banned (supplier discontinued)"]
    assert listed.list_warnings == ["Z5V1-B is banned on the list 'line-a': supplier discontinued"]
    assert not listed.positive
    assert listed.verdict == "uses parts its list does not allow; meets the spec at every corner"
    assert listed.figure_changes() == []  # the electrical figures are the same
    # A design without a list sees the change but still holds.
    assert unlisted.status_changes and unlisted.positive
    assert where_used(backend_library, "Z5V1-B", "line-a") == [("bias-5v", 1)]
    assert where_used(backend_library, "Z5V1-B") == [("bias-5v", 1), ("other", 1)]


def test_a_part_a_design_uses_cannot_be_removed_and_its_snapshot_stays(backend_library, spec_file):
    save_design(spec_file, backend_library, "bias-5v", "Z5V1-B", reason="first build")
    with pytest.raises(LibraryError) as caught:
        backend_library.remove_part("Z5V1-B", reason="end of life")
    assert str(caught.value) == (
        "cannot remove Z5V1-B: the saved design(s) 'bias-5v' (revision 1) use it; mark it banned or no-new-design "
        "on its lists instead (the saved snapshots keep its data either way)")
    assert backend_library.part_record("Z5V1-B")["part"] == "Z5V1-B"
    assert verify_design(backend_library, "bias-5v").positive

    save_design(spec_file, backend_library, "bias-5v", "D-SCH3 + Z4V7-A", 390, reason="Z5V1-B at end of life")
    backend_library.remove_part("Z5V1-B", reason="end of life")  # only an old revision used it
    old = saved_revision(backend_library, "bias-5v", 1)
    assert old.content.snapshot["Z5V1-B"]["record"]["vz_v"] == 5.1
    old_check = verify_design(backend_library, old)
    assert old_check.problems == ["Z5V1-B is no longer in the library"] and not old_check.positive
    assert old_check.verdict == "cannot be checked again: Z5V1-B is no longer in the library"


def test_a_renamed_list_makes_verification_fail_with_its_reason(backend_library, spec_file):
    changes.create_list(backend_library, "line-a")
    changes.set_status(backend_library, "line-a", "Z5V1-B", "approved", reason="qualified")
    save_design(_with_list(spec_file), backend_library, "bias-5v", "Z5V1-B", reason="first build")
    changes.rename_list(backend_library, "line-a", "line-b", reason="product line renamed")
    verification = verify_design(backend_library, "bias-5v")
    assert not verification.positive and verification.result is None
    assert verification.problems[0].startswith("unknown list 'line-a' (known lists: line-b)")


def test_a_change_while_checking_is_refused(demo_library, spec_file, monkeypatch):
    checked = api.check

    def check_then_edit(*args, **kwargs):
        result = checked(*args, **kwargs)
        _change_part(demo_library, "Z5V1-B", pd_w=1.0)
        return result

    monkeypatch.setattr(api, "check", check_then_edit)
    with pytest.raises(LibraryError) as caught:
        save_design(spec_file, demo_library, "bias-5v", "Z5V1-B", reason="first build")
    assert str(caught.value) == "the parts or list entries of 'bias-5v' changed while it was being checked; save it again"
    assert latest_revisions(demo_library) == []


@pytest.mark.parametrize(("name", "reason", "message"), [
    ("", "x", "NAME: empty; give the saved design a name"),
    ("a\nb", "x", "NAME: 'a\\nb' is not a usable design name (one line, at most 100 characters)"),
    ("bias", "  ", "--reason: missing; every save of a design needs a reason"),
    ("bias", "two\nlines", "--reason: must be one line of at most 2000 characters"),
])
def test_bad_names_and_reasons_are_refused_before_the_check(demo_library, spec_file, name, reason, message):
    with pytest.raises(OptionError) as caught:
        save_design(spec_file, demo_library, name, "Z5V1-B", reason=reason)
    assert str(caught.value) == message


def test_unknown_designs_and_revisions(demo_library, spec_file):
    with pytest.raises(UnknownDesignError, match=r"^unknown saved design 'nope' \(the library has no saved designs yet\)$"):
        saved_revision(demo_library, "nope")
    save_design(spec_file, demo_library, "bias-5v", "Z5V1-B", reason="first build")
    with pytest.raises(UnknownDesignError, match=r"^unknown saved design 'nope' \(saved designs: bias-5v\)$"):
        verify_designs(demo_library, ["nope"])
    with pytest.raises(OptionError, match=r"^--revision: 'bias-5v' has revisions 1 … 1, not 2$"):
        saved_revision(demo_library, "bias-5v", 2)


def test_revision_0005_steps_down_and_up_with_its_guard(backend_library, spec_file):
    from alembic import command
    from sqlalchemy import inspect

    from selector.catalog.schema_revision import alembic_config

    save_design(spec_file, backend_library, "bias-5v", "Z5V1-B", reason="first build")
    parts = backend_library.part_records()
    with backend_library.engine.begin() as connection:
        command.downgrade(alembic_config(connection), "0003")
        assert not {"saved_designs", "design_revisions"} & set(inspect(connection).get_table_names())
        command.upgrade(alembic_config(connection), "head")
    assert backend_library.part_records() == parts and latest_revisions(backend_library) == []
    save_design(spec_file, backend_library, "bias-5v", "Z5V1-B", reason="again")
    with pytest.raises(LibraryError, match="append-only"), backend_library.session() as session:
        session.execute(text("DELETE FROM design_revisions"))
