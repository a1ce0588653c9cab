"""Benchmark of the design review report (issue 6). Prints figures; asserts nothing.

The bundled demo library (invented parts), a 5 V ± 3 % rail from 11 … 13 V with a
0 … 10 mA load over 0 … 50 °C, up to 3 parts, the top 10. Times, in one process and in
this order (so the first report pays the matplotlib and scipy.stats imports, as a
command-line run does):

1. the search as ``seek --top 10`` runs it;
2. the search the report runs (``max(top, --scatter)`` designs);
3. the report beyond that search: each design's corner proof and Monte Carlo run, the
   sweeps, every figure drawn as SVG, and the HTML written;
4. the same report again, warm.

Wall time and this process's CPU time are both printed: on a busy machine the CPU time is
the better estimate of the wall time on an idle one (the search may use a second
process, whose CPU time is not counted).

Run: ``python benchmarks/bench_report.py [--scatter N] [--sweeps K] [--png]``
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

from selector.api import seek
from selector.catalog.store import open_library
from selector.spec.rail_spec import load_spec
from selector.views.report_html import (
    DEFAULT_SCATTER_DESIGNS,
    DEFAULT_SWEEP_DESIGNS,
    search_review,
    write_report,
)

DEMO_SPEC = {"rail.target": "5V", "rail.tolerance": "3%", "supply.min": "11V", "supply.max": "13V",
             "load.min": "0", "load.max": "10mA", "ambient.min": "0", "ambient.max": "50"}
TOP = 10


def main() -> None:
    options = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    options.add_argument("--scatter", type=int, default=DEFAULT_SCATTER_DESIGNS)
    options.add_argument("--sweeps", type=int, default=DEFAULT_SWEEP_DESIGNS)
    options.add_argument("--png", action="store_true", help="also write every figure as PNG")
    arguments = options.parse_args()
    spec = load_spec(None, DEMO_SPEC)
    with tempfile.TemporaryDirectory() as folder:
        library = open_library(str(Path(folder) / "demo.sqlite"), create_with_demo=True)
        started = time.perf_counter()
        seek(spec, library, top=TOP)
        seek_s = time.perf_counter() - started
        print(f"search as seek --top {TOP}: {seek_s:.2f} s")
        for label in ("cold", "warm"):
            started, started_cpu = time.perf_counter(), time.process_time()
            review = search_review(spec, library, top=TOP, scatter_designs=arguments.scatter)
            gathered, gathered_cpu = time.perf_counter(), time.process_time()
            search_s = review.summary.elapsed_s
            out = Path(folder) / f"review-{label}.html"
            written = write_report(review, out, Path(folder) / "png" if arguments.png else None,
                                   sweep_designs=arguments.sweeps)
            finished, finished_cpu = time.perf_counter(), time.process_time()
            beyond = finished - started - search_s
            print(f"report ({label}): search of {max(TOP, arguments.scatter)} designs {search_s:.2f} s; "
                  f"designs proved and sampled {gathered - started - search_s:.2f} s "
                  f"(search and designs CPU {gathered_cpu - started_cpu:.2f} s); figures and HTML "
                  f"{finished - gathered:.2f} s (CPU {finished_cpu - gathered_cpu:.2f} s); beyond the search {beyond:.2f} s; "
                  f"beyond seek --top {TOP} {finished - started - seek_s:.2f} s; "
                  f"{out.stat().st_size / 1e6:.2f} MB HTML, {len(written)} PNG")
        library.close()


if __name__ == "__main__":
    main()
