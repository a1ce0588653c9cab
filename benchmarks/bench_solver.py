"""Operating points per second of the rail solver, against a per-point brentq loop.

Prints figures; it is not a test. Four-element stacks of invented parts (two forward,
two zener kinds, mixed at random), self-heating on. Two workloads:

* random points: every point its own stack and conditions over a plausible rail range;
* stack-major: random stacks, each with its own series resistor, at the 32 corners of one
  rail spec, through :func:`selector.physics.corners.evaluate_designs` (which also solves each
  design's nominal point, not counted in the figure, and reduces the metrics) and through
  :func:`selector.physics.circuit.solve_stack_corners` alone.

Every vectorised workload runs ``--repeat`` times; the figures are the median run's and the
best run's, in wall time and in CPU time of the process (CPU time is less affected by
other work on the machine, but a busy neighbour core still slows the shared caches).

The reference solves a subsample of the random points one at a time with
``scipy.optimize.brentq`` on the same model (``selector.physics.self_heating.stack_voltage``).

Run:  python benchmarks/bench_solver.py [--points N] [--stacks S] [--reference M] [--repeat K]
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from scipy.optimize import brentq

from selector.physics.circuit import solve_operating_points, solve_stack_corners
from selector.physics.corners import CORNER_COUNT, evaluate_designs, worst_case_corners
from selector.physics.partset import PartSet
from selector.physics.self_heating import stack_voltage
from selector.spec.rail_spec import RailSpec

INVENTED_PARTS = [
    dict(part="B-SIG", family="signal", is_a=2e-9, n=1.9, rs_ohm=0.6, vf_tol_v=0.02, pd_w=0.4),
    dict(part="B-REC", family="rectifier", is_a=5e-9, n=1.8, rs_ohm=0.05, pd_w=1.0),
    dict(part="B-Z3V3", family="zener", vz_v=3.3, izt_a=5e-3, zzt_ohm=60, izk_a=2.5e-4, zzk_ohm=900,
         vz_tol_pct=5, tc_v_per_k=-2e-3, pd_w=0.5),
    dict(part="B-Z5V1", family="zener", vz_v=5.1, izt_a=5e-3, zzt_ohm=12, izk_a=2.5e-4, zzk_ohm=500,
         vz_tol_pct=5, tc_v_per_k=1.5e-3, pd_w=0.5),
]  # fmt: skip


def conditions(count: int, seed: int = 1):
    rng = np.random.default_rng(seed)
    stacks = rng.integers(0, 4, (count, 4))
    stack_cold = stacks.shape[1] * 6.0
    supply = rng.uniform(stack_cold, stack_cold + 15.0, count)
    resistor = rng.uniform(200.0, 2000.0, count)
    ambient = rng.uniform(-40.0, 85.0, count)
    sign = rng.choice([-1.0, 1.0], count)
    load = rng.uniform(0.0, 2e-3, count)
    return stacks, supply, resistor, ambient, sign, load


#: Invented rail for the stack-major workload: 24 … 28 V supply, 0 … 2 mA load, −20 … 70 °C.
BENCH_SPEC = RailSpec(
    target_v=12.0, tolerance_v=0.5, supply_min_v=24.0, supply_max_v=28.0, supply_nominal_v=26.0,
    load_kind="current", load_min=0.0, load_max=2e-3, ambient_min_c=-20.0, ambient_max_c=70.0,
    resistor_rating_w=1.0,
)  # fmt: skip
#: Rough voltage of each bench part at a few milliamperes [V], for picking a resistor.
ROUGH_VOLTAGE_V = np.array([0.7, 0.7, 3.3, 5.1])


def designs(count: int, seed: int = 3):
    """Random four-element stacks, each with a resistor for roughly 2 … 10 mA at nominal."""
    rng = np.random.default_rng(seed)
    stacks = rng.integers(0, 4, (count, 4))
    headroom = BENCH_SPEC.supply_nominal_v - ROUGH_VOLTAGE_V[stacks].sum(axis=1)
    resistor = headroom / rng.uniform(3e-3, 11e-3, count)
    return stacks, resistor


def brentq_point(parts, stack, supply, resistor, ambient, sign, load):
    def residual(current):
        v, _ = stack_voltage(parts, stack[None, :], current, ambient, sign)
        return supply - resistor * (current + load) - v[0]

    return brentq(residual, 1e-15, (supply - resistor * load) / resistor, xtol=1e-15, rtol=1e-12)


def positive_count(text: str) -> int:
    """A whole number of at least 1, for argparse."""
    if not text.strip().isdigit() or int(text) < 1:
        raise argparse.ArgumentTypeError(f"'{text}' is not a whole number of at least 1")
    return int(text)


def timed(solve, repeat: int):
    """``solve()`` run ``repeat`` times: its last result, and the wall and CPU seconds of each run."""
    wall, cpu = [], []
    for _ in range(repeat):
        start, start_cpu = time.perf_counter(), time.process_time()
        result = solve()
        wall.append(time.perf_counter() - start)
        cpu.append(time.process_time() - start_cpu)
    return result, np.array(wall), np.array(cpu)


def rates(points: int, wall: np.ndarray, cpu: np.ndarray) -> str:
    """Median and best points per second, wall and CPU."""
    return (f"median {points / np.median(wall):,.0f} points/s (wall), {points / np.median(cpu):,.0f} (CPU); "
            f"best {points / wall.min():,.0f} (wall), {points / cpu.min():,.0f} (CPU); {wall.size} runs")  # fmt: skip


def main() -> None:
    parser = argparse.ArgumentParser(
        description=__doc__.splitlines()[0],
        epilog="example: python benchmarks/bench_solver.py --points 200000 --stacks 6250 --reference 100",
    )
    parser.add_argument("--points", type=int, default=1_000_000)
    parser.add_argument("--stacks", type=int, default=31_250)
    parser.add_argument("--reference", type=int, default=300)
    parser.add_argument("--repeat", type=positive_count, default=5, help="runs of each vectorised workload (default 5)")
    args = parser.parse_args()
    parts = PartSet.from_records(INVENTED_PARTS)

    stacks, supply, resistor, ambient, sign, load = conditions(args.points)
    solve_operating_points(parts, stacks[:20000], supply[:20000], resistor[:20000], ambient[:20000],
                           sign[:20000], load[:20000])  # fmt: skip  # warm-up
    op, wall, cpu = timed(lambda: solve_operating_points(parts, stacks, supply, resistor, ambient, sign, load),
                          args.repeat)  # fmt: skip
    vector_rate = args.points / np.median(wall)

    picked = np.random.default_rng(2).choice(args.points, args.reference, replace=False)
    start = time.perf_counter()
    reference = [
        brentq_point(parts, stacks[i], supply[i], resistor[i], ambient[i], sign[i], load[i]) for i in picked
    ]
    scalar_seconds = time.perf_counter() - start
    scalar_rate = args.reference / scalar_seconds
    agreement = np.max(np.abs(np.array(reference) - op.stack_current_a[picked]) / np.array(reference))

    print(f"random points (solve_operating_points): {args.points} four-element stack-corner points with "
          f"self-heating, one process: {rates(args.points, wall, cpu)}")  # fmt: skip
    print(f"  solved {op.solved.mean():.4%}; largest |KCL residual| {np.max(np.abs(op.kcl_residual_v)):.2e} V")
    print(f"per-point brentq loop: {args.reference} points in {scalar_seconds:.3f} s = {scalar_rate:,.0f} points/s")
    print(f"speed-up (median vectorised run): {vector_rate / scalar_rate:,.0f}x; "
          f"largest relative current difference {agreement:.2e}")  # fmt: skip

    stacks, resistor = designs(args.stacks)
    evaluate_designs(parts, stacks[:1000], resistor[:1000], BENCH_SPEC)  # warm-up
    evaluation, wall, cpu = timed(lambda: evaluate_designs(parts, stacks, resistor, BENCH_SPEC), args.repeat)
    corner_points = args.stacks * CORNER_COUNT
    print(f"stack-major (evaluate_designs): {args.stacks} four-element stacks x {CORNER_COUNT} corners = "
          f"{corner_points} stack-corner points: {rates(corner_points, wall, cpu)}")  # fmt: skip
    print(f"  every corner solved for {evaluation.solved.mean():.2%} of the designs, "
          f"{evaluation.feasible.mean():.2%} feasible")  # fmt: skip

    corners = worst_case_corners(BENCH_SPEC)
    rows = [value[None, :] for value in (corners.supply_v, corners.ambient_c, corners.tolerance_sign,
                                         corners.load_current_a, corners.load_conductance_s)]  # fmt: skip
    supply, ambient, sign, load, conductance = rows
    corner_resistor = resistor[:, None] * corners.resistor_factor
    op, wall, cpu = timed(lambda: solve_stack_corners(parts, stacks, supply, corner_resistor, ambient, sign, load,
                                                      conductance), args.repeat)  # fmt: skip
    print(f"stack-major solve alone (solve_stack_corners, the 32 corners): {rates(corner_points, wall, cpu)}; "
          f"largest |KCL residual| {np.max(np.abs(op.kcl_residual_v)):.2e} V")  # fmt: skip


if __name__ == "__main__":
    main()
