"""Import speed of a generated 10,000-row parts CSV, validation included.

Run: ``python benchmarks/bench_import.py [--rows N]``. Prints rows per second for
validation alone, for a first import into an empty library (validation + one
transaction), and for re-importing the same file (validation + comparison, no writes).
The generated parts are invented; half are written with units ("2.5 nA", "500 mW").
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import numpy as np

from selector.catalog.parts_import import load_parts_csv
from selector.catalog.store import open_library
from selector.files.csv_writer import write_rows
from selector.spec.part_fields import PART_COLUMNS


def generated_rows(count: int, seed: int = 7) -> list[dict[str, object]]:
    """Invented forward and zener rows, alternating plain numbers and quantity texts."""
    rng = np.random.default_rng(seed)
    rows = []
    for index in range(count):
        with_units = index % 2 == 0
        if index % 3 == 0:
            vz = float(rng.uniform(2.4, 39))
            rows.append({
                "part": f"BZ-{index:06d}", "family": "zener", "description": "generated zener",
                "package": "axial", "vz_v": f"{vz:.3f} V" if with_units else vz,
                "izt_a": "5 mA" if with_units else 5e-3, "zzt_ohm": float(rng.uniform(5, 60)),
                "izk_a": "1m" if with_units else 1e-3, "zzk_ohm": float(rng.uniform(200, 600)),
                "vz_tol_pct": "5 %" if with_units else 5.0, "tc_v_per_k": "2 mV/K" if with_units else 2e-3,
                "pd_w": "500 mW" if with_units else 0.5, "tj_max_c": 150.0,
            })
        else:
            is_a = float(10 ** rng.uniform(-15, -7))
            rows.append({
                "part": f"BD-{index:06d}", "family": "signal", "description": "generated diode",
                "package": "SMD", "is_a": f"{is_a * 1e9:.4g} nA" if with_units else is_a,
                "n": float(rng.uniform(1.0, 2.5)), "rs_ohm": "600m" if with_units else 0.6,
                "eg_ev": 1.11, "xti": 3.0, "pd_w": "250 mW" if with_units else 0.25,
                "if_max_a": "200 mA" if with_units else 0.2,
            })
    return rows


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=10_000)
    rows = parser.parse_args().rows
    with tempfile.TemporaryDirectory() as folder:
        csv_path = Path(folder) / "generated.csv"
        write_rows(csv_path, PART_COLUMNS, generated_rows(rows))
        library = open_library(str(Path(folder) / "bench.sqlite"))

        start = time.perf_counter()
        parts_file = load_parts_csv(csv_path)
        validate_s = time.perf_counter() - start

        start = time.perf_counter()
        parts_file = load_parts_csv(csv_path)
        plan = library.import_parts_file(parts_file)
        first_s = time.perf_counter() - start
        assert len(plan.added) == rows

        start = time.perf_counter()
        plan = library.import_parts_file(load_parts_csv(csv_path))
        again_s = time.perf_counter() - start
        assert len(plan.unchanged) == rows
        library.close()

    print(f"rows: {rows}")
    print(f"validation only:            {validate_s:7.3f} s  {rows / validate_s:9.0f} rows/s")
    print(f"first import (validated):   {first_s:7.3f} s  {rows / first_s:9.0f} rows/s")
    print(f"re-import, all unchanged:   {again_s:7.3f} s  {rows / again_s:9.0f} rows/s")
    print("goal: >= 2000 rows/s for the first import")


if __name__ == "__main__":
    main()
