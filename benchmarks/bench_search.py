"""Benchmark of the exhaustive stack search (issue 4). Prints figures; asserts nothing.

1. An invented 300-part library (60 forward, 240 zener), max_parts 3, E24, all 32
   corners: wall time and peak resident memory of :func:`selector.search_library`.
2. A 10-part invented library: the same search against a plain exhaustive numpy
   implementation of the same contract, which bisects every operating point and tries
   every E24 value from 1 Ω to 10 MΩ; both must give the same shortlist.

Every part here is invented for this benchmark (no real part's data).

Run: ``python benchmarks/bench_search.py [--skip-plain]``
"""

from __future__ import annotations

import argparse
import resource
import time

import numpy as np

from selector.physics.corners import allowed_power_w, worst_case_corners
from selector.physics.partset import PartSet
from selector.physics.self_heating import self_heated_element, stack_voltage
from selector.search.candidates import iterate_multisets
from selector.search.engine import search_library
from selector.spec.eseries import series_values
from selector.spec.rail_spec import RailSpec

E24_STEPS = (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1)


def invented_library(forward_count: int, zener_count: int, seed: int = 4) -> PartSet:
    """An invented library: forward parts of four families, zeners over 2.4 … 47 V."""
    rng = np.random.default_rng(seed)
    records = []
    families = ("signal", "rectifier", "schottky", "led")
    for i in range(forward_count):
        family = families[i % 4]
        n, is_a, rs = {
            "signal": (1.9, 3e-9, 0.6),
            "rectifier": (1.8, 8e-9, 0.05),
            "schottky": (1.05, 4e-7, 0.2),
            "led": (2.0, 1e-18, 6.0),
        }[family]
        records.append(dict(
            part=f"INV-F{i:03d}", family=family, description="invented", n=n * rng.uniform(0.95, 1.05),
            is_a=is_a * rng.uniform(0.5, 2.0), rs_ohm=rs * rng.uniform(0.8, 1.2), pd_w=rng.choice([0.2, 0.5, 1.0]),
            vf_tol_v=rng.choice([0.0, 0.01, 0.02]), if_max_a=0.03 if family == "led" else None,
        ))
    voltages = [m * 10**d for d in (0, 1) for m in E24_STEPS if 2.4 <= m * 10**d <= 47]
    for i in range(zener_count):
        vz = voltages[i % len(voltages)]
        izt = rng.choice([2e-3, 5e-3, 20e-3])
        records.append(dict(
            part=f"INV-Z{i:03d}", family="zener", description="invented", vz_v=vz, izt_a=izt,
            zzt_ohm=rng.uniform(5, 40), izk_a=izt / rng.choice([10, 20]), zzk_ohm=rng.uniform(300, 900),
            vz_tol_pct=rng.choice([1.0, 2.0, 5.0]), tc_v_per_k=(vz - 5.0) * 6e-4 * rng.uniform(0.5, 1.0),
            pd_w=rng.choice([0.25, 0.5, 1.0]),
        ))
    return PartSet.from_records(records)


def rail_spec(series: str = "E24") -> RailSpec:
    """A 5 V ± 3 % rail from 11 … 13 V, 0 … 5 mA load, 0 … 50 °C."""
    return RailSpec(
        target_v=5.0, tolerance_v=0.15, supply_min_v=11.0, supply_max_v=13.0, supply_nominal_v=12.0,
        load_kind="current", load_min=0.0, load_max=5e-3, ambient_min_c=0.0, ambient_max_c=50.0,
        resistor_series=series,
    )


def plain_exhaustive(parts: PartSet, spec: RailSpec, top: int, bisection_steps: int = 60):
    """The contract done the plain way: every stack × every series value × every corner,
    each operating point found by bisection on ln I of ``Vin − R·(I + I_L) − V_stack(I)``."""
    stacks = np.concatenate(list(iterate_multisets(len(parts), spec.max_parts)))
    values = series_values(spec.resistor_series, 1.0, 10e6)
    corners = worst_case_corners(spec)
    design_stack = np.repeat(np.arange(len(stacks)), values.size)
    design_r = np.tile(values, len(stacks))
    point_design = np.repeat(np.arange(design_stack.size), 32)
    corner = np.tile(np.arange(32), design_stack.size)
    supply = corners.supply_v[corner]
    resistance = design_r[point_design] * corners.resistor_factor[corner]
    fixed, conductance = corners.load_current_a[corner], corners.load_conductance_s[corner]
    point_stacks = stacks[design_stack[point_design]]
    low = np.full(point_design.size, np.log(1e-15))
    high = np.log(supply / resistance + 1e-12)
    for _ in range(bisection_steps):
        middle = 0.5 * (low + high)
        v, _ = stack_voltage(parts, point_stacks, np.exp(middle), corners.ambient_c[corner], corners.tolerance_sign[corner])
        residual = supply - resistance * (np.exp(middle) + fixed + conductance * v) - v
        low, high = np.where(residual > 0, middle, low), np.where(residual > 0, high, middle)
    current = np.exp(0.5 * (low + high))
    ambient, sign = corners.ambient_c[corner], corners.tolerance_sign[corner]
    vout, _ = stack_voltage(parts, point_stacks, current, ambient, sign)
    rows, slots = np.nonzero(point_stacks >= 0)
    element = point_stacks[rows, slots]
    state = self_heated_element(parts, element, np.log(current[rows]), ambient[rows], sign[rows])
    element_margin = 1.0 - state.voltage_v * current[rows] / allowed_power_w(parts, element, ambient[rows])
    worst = np.ones(current.size)
    np.minimum.at(worst, rows, element_margin)
    over = np.zeros(current.size, dtype=bool)
    np.logical_or.at(over, rows, current[rows] > parts.if_max_a[element])
    load = fixed + conductance * vout
    worst = np.minimum(worst, 1.0 - resistance * (current + load) ** 2 / spec.resistor_rating_w)
    vout, current = vout.reshape(-1, 32), current.reshape(-1, 32)
    error = np.maximum(np.abs(vout.max(axis=1) - spec.target_v), np.abs(vout.min(axis=1) - spec.target_v))
    need = np.maximum(np.where(stacks >= 0, parts.i_min_a[np.maximum(stacks, 0)], 0).max(axis=1), spec.min_current_a)
    feasible = (
        (current.min(axis=1) >= need[design_stack])
        & (worst.reshape(-1, 32).min(axis=1) >= spec.min_margin)
        & ~over.reshape(-1, 32).any(axis=1)
    )
    return stacks, design_stack, design_r, error, feasible


def peak_rss_mb() -> float:
    """Peak resident set size of this process and its finished children [MB] (Linux: kB)."""
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return max(own, children) / 1024.0


def children_cpu_s() -> float:
    """User plus system CPU time of this process's finished children (the workers) [s]."""
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--skip-plain", action="store_true", help="skip the slow plain implementation")
    arguments = parser.parse_args()

    spec = rail_spec()
    big = invented_library(60, 240)
    started, cpu_started, children_started = time.perf_counter(), time.process_time(), children_cpu_s()
    shortlist, _, summary = search_library(big, spec, top=10)
    elapsed = time.perf_counter() - started
    cpu = time.process_time() - cpu_started + children_cpu_s() - children_started
    print(f"300 parts, max_parts 3, E24, 32 corners: {elapsed:.2f} s wall, {cpu:.2f} s CPU "
          f"(this process and its workers), peak RSS {peak_rss_mb():.0f} MB")
    print(f"  considered {summary.considered}, pruned {summary.pruned}, solved {summary.solved} stacks "
          f"({summary.designs_solved} designs), feasible {summary.feasible}, meeting {summary.meeting}")
    print(f"  best error {shortlist.evaluation.error_v[0] * 1e3:.2f} mV" if shortlist.evaluation is not None else "  nothing feasible")

    small = invented_library(4, 6, seed=7)
    started = time.perf_counter()
    small_list, _, _ = search_library(small, spec, top=5, workers=1)
    fast = time.perf_counter() - started
    print(f"10 parts: search {fast * 1e3:.1f} ms")
    if arguments.skip_plain:
        return
    started = time.perf_counter()
    stacks, design_stack, design_r, error, feasible = plain_exhaustive(small, spec, top=5)
    plain = time.perf_counter() - started
    print(f"10 parts: plain exhaustive {plain:.1f} s → speed-up {plain / fast:.0f}×")
    best = np.where(feasible, error, np.inf)
    per_stack = np.full(len(stacks), np.inf)
    np.minimum.at(per_stack, design_stack, best)
    plain_best = np.sort(per_stack)[:5]
    print(f"  best errors, search: {np.round(small_list.evaluation.error_v * 1e3, 3)} mV")
    print(f"  best errors, plain : {np.round(plain_best * 1e3, 3)} mV")


if __name__ == "__main__":
    main()
