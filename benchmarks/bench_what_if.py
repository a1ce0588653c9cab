"""Wall time of a what-if over an invented 300-part library (60 forward, 240 zeners).

Prints figures; it is not a test. Every part is invented (see bench_search.py).

Run:  python benchmarks/bench_what_if.py
"""

from __future__ import annotations

import time

from bench_search import invented_library, rail_spec

from selector.search.what_if import what_if


def main() -> None:
    parts, spec = invented_library(60, 240), rail_spec()
    stacks = [["INV-F000", "INV-Z010"], ["INV-Z011"], ["INV-F001", "INV-F002", "INV-Z008"]]
    for names in stacks:
        stack = parts.index_of(names)
        what_if(parts, stack, 470.0, spec)  # warm-up
        started = time.perf_counter()
        fixes = what_if(parts, stack, 470.0, spec, limit=1000)
        elapsed = time.perf_counter() - started
        best = fixes[0] if fixes else None
        print(f"{' + '.join(names)} at 470 Ω: {len(fixes)} variants in {elapsed:.2f} s; best: "
              + (f"{best.change}, error {1e3 * best.error_v:.1f} mV, meets {best.meets}" if best else "none"))


if __name__ == "__main__":
    main()
