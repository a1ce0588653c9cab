"""The library content hash: the documented canonical form, and a hash that changes exactly
when parts or lists change, the same on every backend. All part data here is invented."""

from __future__ import annotations

import hashlib

from selector.api import save_design
from selector.catalog import list_changes as changes
from selector.catalog.library_hash import canonical_lines, library_content_hash
from selector.catalog.part_validation import RawRow, validate_rows
from selector.catalog.store import open_library
from selector.spec.spec_source import SpecSource

#: The canonical form written out by hand from the module's docstring (form 1).
EXPECTED_CANONICAL = """railwright library content 1
parts
["part","family","description","package","is_a","n","rs_ohm","eg_ev","xti","tnom_c","vf_tol_v","vz_v","izt_a","zzt_ohm","izk_a","zzk_ohm","vz_tol_pct","tc_v_per_k","tc_tol_v_per_k","pd_w","tj_max_c","theta_ja_k_per_w","if_max_a","i_min_a","source","model_extra"]
["D-H1","signal","invented \\u00fc","",2e-09,1.9,null,null,null,null,null,null,null,null,null,null,null,null,null,0.5,null,null,null,null,"",null]
lists
["name","description"]
["line-a","x"]
entries
["list","part","status","reason","condition"]
["line-a","D-H1","approved","ok",""]
"""


def _import(library, **cells):
    row = {"part": "D-H1", "family": "signal", "is_a": "2n", "n": "1.9", "pd_w": "500m",
           "description": "invented \u00fc"} | cells
    return library.import_records(validate_rows([RawRow(2, row)], "hash.csv"), kind="parts csv",
                                  file_name="hash.csv", file_sha256="0" * 64)


def _small_library(db):
    library = open_library(db)
    _import(library)
    changes.create_list(library, "line-a", description="x", by="C. Lead")
    changes.set_status(library, "line-a", "D-H1", "approved", reason="ok", by="C. Lead")
    return library


def test_canonical_form_is_the_documented_one(backend_db):
    library = _small_library(backend_db)
    with library.session() as session:
        text = "".join(line + "\n" for line in canonical_lines(session))
    assert text == EXPECTED_CANONICAL
    assert library_content_hash(library) == hashlib.sha256(EXPECTED_CANONICAL.encode("utf-8")).hexdigest()
    library.close()


def test_the_hash_changes_exactly_when_parts_or_lists_change(backend_db):
    library = _small_library(backend_db)
    hashes = [library_content_hash(library)]

    def unchanged():
        assert library_content_hash(library) == hashes[-1]

    def changed():
        now = library_content_hash(library)
        assert now not in hashes
        hashes.append(now)

    _import(library)  # the same data again: nothing changes
    unchanged()
    changes.set_status(library, "line-a", "D-H1", "approved", reason="ok", by="someone else")  # no-op
    unchanged()
    _import(library, pd_w="250m")
    changed()
    _import(library, pd_w="500m")  # back to the first data: back to the first hash
    assert library_content_hash(library) == hashes[0]
    hashes.append(hashes[0])
    _import(library, is_a="2.0000000000000004n")  # the last bit of a float counts
    changed()
    changes.set_status(library, "line-a", "D-H1", "banned", reason="supplier discontinued")
    changed()
    changes.set_status(library, "line-a", "D-H1", "banned", reason="failed qualification")
    changed()
    changes.create_list(library, "line-b")
    changed()
    changes.rename_list(library, "line-b", "line-c", reason="renamed product line")
    changed()
    _import(library, part="D-H2")
    changed()
    library.remove_part("D-H2", reason="entered by mistake")
    changes.drop_entry(library, "line-a", "D-H1", reason="line cancelled")
    changed()
    library.close()


def test_saving_a_design_leaves_the_hash_alone(demo_library):
    before = library_content_hash(demo_library)
    source = SpecSource(None, "", None, {"rail.target": "5 V", "rail.tolerance": "8 %", "supply.min": "11 V",
                                         "supply.max": "13 V", "load.min": "0", "load.max": "10 mA",
                                         "ambient.min": "0", "ambient.max": "50"})
    saved, _ = save_design(source, demo_library, "bias-5v", "Z5V1-B", reason="first build")
    assert saved.library_sha256 == before == library_content_hash(demo_library)


def test_the_same_content_gives_the_same_hash_on_another_backend(backend_db, tmp_path):
    reference = open_library(str(tmp_path / "reference.sqlite"), create_with_demo=True)
    other = open_library(backend_db, create_with_demo=True)
    for library in (reference, other):
        changes.create_list(library, "line-a", by="whoever")
        changes.set_status(library, "line-a", "Z5V1-A", "conditional", reason="leaky when hot",
                           condition="ambient at most 40 °C", by="whoever")
    assert library_content_hash(other) == library_content_hash(reference)
    reference.close()
    other.close()
