"""The sweeps' worst-case band: parts and resistor at their tolerance extremes around the
nominal curves, and where it leaves the window. The parts are invented."""

from __future__ import annotations

import numpy as np

from selector.physics.corners import evaluate_designs
from selector.physics.partset import PartSet
from selector.physics.sweeps import ambient_sweep, supply_sweep
from selector.spec.rail_spec import RailSpec

ZENER = dict(part="SB-Z", family="zener", vz_v=5.1, izt_a=5e-3, zzt_ohm=10.0, izk_a=0.5e-3, zzk_ohm=200.0,
             vz_tol_pct=5.0, tc_v_per_k=1e-3, tc_tol_v_per_k=0.2e-3, pd_w=0.5)  # fmt: skip


def spec(tolerance_v: float) -> RailSpec:
    return RailSpec(target_v=5.1, tolerance_v=tolerance_v, supply_min_v=11.0, supply_max_v=13.0, supply_nominal_v=12.0,
                    load_kind="current", load_min=0.0, load_max=1e-3, ambient_min_c=0.0, ambient_max_c=50.0)


def test_the_band_holds_the_nominal_curves_and_reaches_the_corner_extremes():
    parts, rail = PartSet.from_records([ZENER]), spec(0.5)
    for sweep in (supply_sweep(parts, np.array([0]), 1000.0, rail), ambient_sweep(parts, np.array([0]), 1000.0, rail)):
        assert np.all(sweep.band_low_v <= sweep.vout_v.min(axis=0)) and np.all(sweep.band_high_v >= sweep.vout_v.max(axis=0))
    # Inside the spec's supply range the band's extremes are the 32-corner extremes (the
    # sweep's end points are the supply extremes, and its curves the load and ambient ones).
    sweep = supply_sweep(parts, np.array([0]), 1000.0, rail)
    evaluation = evaluate_designs(parts, np.array([[0]]), np.array([1000.0]), rail)
    inside = (sweep.x >= rail.supply_min_v) & (sweep.x <= rail.supply_max_v)
    assert sweep.band_high_v[inside].max() <= evaluation.vout_high_v[0] + 1e-9
    assert sweep.band_low_v[inside].min() >= evaluation.vout_low_v[0] - 1e-9


def test_a_design_that_fails_shows_its_band_outside_the_window():
    parts = PartSet.from_records([ZENER])
    wide, tight = supply_sweep(parts, np.array([0]), 1000.0, spec(0.5)), supply_sweep(parts, np.array([0]), 1000.0, spec(0.1))
    inside = (wide.x >= 11.0) & (wide.x <= 13.0)
    assert not wide.outside_window(spec(0.5))[inside].any()
    assert tight.outside_window(spec(0.1))[inside].all()  # 5 % of 5.1 V is past 100 mV everywhere
