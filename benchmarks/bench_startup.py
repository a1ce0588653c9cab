"""Benchmark of the command line's start-up (issue 16). Prints figures; asserts nothing.

Each command runs as a user runs it, through the installed ``railwright`` script, in a
fresh process, against a temporary library: a private ``HOME``, ``XDG_DATA_HOME`` and
``RAILWRIGHT_DB``, with the invented demo sets and one approved-parts list made first
(not timed). One untimed run per command warms the file cache; then ``--repeat`` timed
runs give the median and best wall time, printed beside the goal. One more run with
``PYTHONPROFILEIMPORTTIME`` (the environment form of ``python -X importtime``) shows where
the imports go: the costliest points where one package imports another, by cumulative
time, and the self time summed per top-level package.

Start-up is mostly imports and the interpreter's own work, so a busy machine inflates
every figure; measure on an idle one.
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from collections import defaultdict
from pathlib import Path

REPOSITORY = Path(__file__).resolve().parents[1]
LIST_NAME = "bench-list"

#: (label, arguments, goal [s]); the goals are issue 16's, for an idle 2-core machine.
COMMANDS: tuple[tuple[str, tuple[str, ...], float], ...] = (
    ("--help", ("--help",), 0.15),
    ("parts list", ("parts", "list"), 0.4),
    ("approved set", ("approved", "set", LIST_NAME, "D-SIG1", "approved", "--reason", "benchmark",
                      "--by", "bench"), 0.4),
    ("seek (README demo)", ("seek", "--spec", "examples/rail-5v-from-12v.toml", "--top", "10"), 1.0),
)


def console_script() -> str:
    """The ``railwright`` script of this interpreter's environment."""
    beside_python = Path(sys.executable).with_name("railwright")
    if beside_python.is_file():
        return str(beside_python)
    found = shutil.which("railwright")
    if found is None:
        sys.exit("the railwright console script is not installed (pip install -e .)")
    return found


def private_environment(folder: Path) -> dict[str, str]:
    """The environment of every run: the user's own, with a throwaway home and library."""
    return dict(os.environ, HOME=str(folder), XDG_DATA_HOME=str(folder / "data"),
                RAILWRIGHT_DB=str(folder / "library.sqlite"))


def run(script: str, arguments: tuple[str, ...], environment: dict[str, str]) -> subprocess.CompletedProcess:
    """One command in a fresh process; exits the benchmark if the command fails."""
    result = subprocess.run([script, *arguments], capture_output=True, text=True, env=environment,
                            cwd=REPOSITORY, timeout=600)
    if result.returncode != 0:
        sys.exit(f"railwright {' '.join(arguments)} failed ({result.returncode}): {result.stderr.strip()}")
    return result


def wall_times_s(script: str, arguments: tuple[str, ...], environment: dict[str, str], repeat: int) -> list[float]:
    """Wall time of ``repeat`` fresh runs [s], after one untimed run."""
    run(script, arguments, environment)
    times = []
    for _ in range(repeat):
        started = time.perf_counter()
        run(script, arguments, environment)
        times.append(time.perf_counter() - started)
    return times


def import_profile(stderr: str) -> list[tuple[int, int, int, str]]:
    """``(self [µs], cumulative [µs], depth, module)`` per line of ``-X importtime`` output."""
    rows = []
    for line in stderr.splitlines():
        if not line.startswith("import time:") or "cumulative" in line:
            continue
        self_us, cumulative_us, name = line[len("import time:"):].split("|")
        depth = (len(name) - len(name.lstrip(" ")) - 1) // 2
        rows.append((int(self_us), int(cumulative_us), depth, name.strip()))
    return rows


def package_crossings(rows: list[tuple[int, int, int, str]]) -> list[tuple[int, str, str]]:
    """``(cumulative [µs], module, importer)`` where a module is imported from another
    top-level package; the importer is empty for a top-level import (one made while no
    other import was running: by the script, or inside a function)."""
    crossings = []
    # importtime prints a module after everything it imported, so a line's importer is the
    # next line up the tree (the next one, in order, with a smaller depth).
    for index, (_, cumulative_us, depth, name) in enumerate(rows):
        importer = next((other for _, _, other_depth, other in rows[index + 1:] if other_depth < depth), "")
        if importer.split(".")[0] != name.split(".")[0]:
            crossings.append((cumulative_us, name, importer))
    return sorted(crossings, reverse=True)


def self_time_by_package(rows: list[tuple[int, int, int, str]]) -> list[tuple[int, str]]:
    """Self time summed per top-level package [µs], largest first."""
    totals: dict[str, int] = defaultdict(int)
    for self_us, _, _, name in rows:
        totals[name.split(".")[0]] += self_us
    return sorted(((total, package) for package, total in totals.items()), reverse=True)


def print_imports(script: str, arguments: tuple[str, ...], environment: dict[str, str], shown: int) -> None:
    result = run(script, arguments, dict(environment, PYTHONPROFILEIMPORTTIME="1"))
    rows = import_profile(result.stderr)
    print(f"    imports: {len(rows)} modules, {sum(row[0] for row in rows) / 1000:.0f} ms in all (self times)")
    for cumulative_us, name, importer in package_crossings(rows)[:shown]:
        where = f"imported by {importer}" if importer else "top level"
        print(f"      {cumulative_us / 1000:7.1f} ms  {name}  ({where})")
    packages = ", ".join(f"{package} {total / 1000:.0f}" for total, package in self_time_by_package(rows)[:shown])
    print(f"    self time by package [ms]: {packages}")


def main() -> None:
    options = argparse.ArgumentParser(
        description="Wall time and imports of railwright's start-up, per command, in fresh processes.",
        epilog="Example: python benchmarks/bench_startup.py --repeat 9 --imports 10",
    )
    options.add_argument("--repeat", type=int, default=5, metavar="N",
                         help="timed runs per command (default 5), after one untimed run")
    options.add_argument("--imports", type=int, default=8, metavar="K",
                         help="import lines shown per command (default 8)")
    arguments = options.parse_args()
    if arguments.repeat < 1:
        options.error("--repeat: give at least 1")
    script = console_script()
    with tempfile.TemporaryDirectory(prefix="railwright-startup-") as folder:
        environment = private_environment(Path(folder))
        run(script, ("init", "--demo"), environment)
        run(script, ("approved", "create", LIST_NAME, "--by", "bench"), environment)
        print(f"railwright start-up, {arguments.repeat} fresh runs per command "
              f"(Python {sys.version.split()[0]}, {os.cpu_count()} CPUs, load average "
              f"{' '.join(f'{load:.2f}' for load in os.getloadavg())})")
        for label, command, goal_s in COMMANDS:
            times = wall_times_s(script, command, environment, arguments.repeat)
            print(f"\n{label}: median {statistics.median(times):.3f} s, best {min(times):.3f} s "
                  f"(goal ≤ {goal_s:.2f} s)")
            print_imports(script, command, environment, arguments.imports)


if __name__ == "__main__":
    main()
