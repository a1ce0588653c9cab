"""Report figures: sweep data against a closed form, one solver call per sweep, SVG and PNG output."""

from __future__ import annotations

import re

import matplotlib
import matplotlib.image
import numpy as np
import pytest

from selector.physics import sweeps
from selector.physics.montecarlo import run_monte_carlo
from selector.physics.partset import PartSet
from selector.spec.rail_spec import RailSpec
from selector.views import plots

#: Invented parts. LIN-Z has zzk = zzt, so a = 0 and its breakdown curve is the straight
#: line vz + rz·(I − izt) with rz = zzt (DESIGN §3), and no tempco: a closed form exists.
PARTS = PartSet.from_records([
    dict(part="LIN-Z", family="zener", description="invented", vz_v=5.0, izt_a=5e-3, zzt_ohm=10.0, izk_a=0.5e-3,
         zzk_ohm=10.0, vz_tol_pct=2.0, tc_v_per_k=0.0, pd_w=0.5),
    dict(part="TF-SIG", family="signal", description="invented", is_a=2e-9, n=1.8, rs_ohm=0.5, pd_w=0.4),
])


def spec(**changes) -> RailSpec:
    fields = dict(target_v=5.0, tolerance_v=0.15, supply_min_v=11.0, supply_max_v=13.0, supply_nominal_v=12.0,
                  load_kind="current", load_min=0.0, load_max=0.01, ambient_min_c=0.0, ambient_max_c=50.0)
    fields.update(changes)
    return RailSpec(**fields)


def linear_zener_rail(supply_v, load_a, resistor_ohm, vz_v=5.0, rz_ohm=10.0, izt_a=5e-3):
    """KCL of Vin — R — (zener ‖ current load) with a straight-line zener (Ohm's and Kirchhoff's laws)."""
    current = (supply_v - resistor_ohm * load_a - vz_v + rz_ohm * izt_a) / (resistor_ohm + rz_ohm)
    return vz_v + rz_ohm * (current - izt_a)


def test_supply_sweep_matches_the_closed_form_of_a_straight_line_zener():
    rail_spec = spec()
    sweep = sweeps.supply_sweep(PARTS, np.array([0]), 330.0, rail_spec)
    assert sweep.vout_v.shape == (4, sweeps.SWEEP_POINTS)
    loads = [0.0, 0.0, 0.01, 0.01]  # curve order: load least/most × ambient min/max
    for curve, load in zip(sweep.vout_v, loads, strict=True):
        expected = linear_zener_rail(sweep.x, load, 330.0)
        np.testing.assert_allclose(curve, expected, rtol=0, atol=1e-9)


def test_sweeps_span_the_spec_range_and_beyond():
    rail_spec = spec()
    supply = sweeps.supply_sweep(PARTS, np.array([0]), 330.0, rail_spec)
    ambient = sweeps.ambient_sweep(PARTS, np.array([0, 1]), 330.0, rail_spec)
    assert supply.x[0] < 11.0 and supply.x[-1] > 13.0
    assert ambient.x[0] < 0.0 < 50.0 < ambient.x[-1]
    assert ambient.x[0] >= -55.0 and ambient.x[-1] <= 150.0
    assert ambient.labels[0].startswith("Vin 11 V, load least")


def test_ambient_sweep_follows_the_forward_diode_tempco():
    # A forward diode's voltage falls as it warms: about −2 mV/K for silicon (from memory).
    sweep = sweeps.ambient_sweep(PARTS, np.array([1]), 1000.0, spec(target_v=0.7, tolerance_v=0.1))
    slope = np.polyfit(sweep.x, sweep.vout_v[0], 1)[0]
    assert -3e-3 < slope < -1e-3


def test_each_sweep_is_one_solver_call(monkeypatch):
    calls = []
    original = sweeps.solve_operating_points

    def counting(*args, **kwargs):
        calls.append(args[1].shape[0])
        return original(*args, **kwargs)

    monkeypatch.setattr(sweeps, "solve_operating_points", counting)
    sweeps.supply_sweep(PARTS, np.array([0, 1]), 330.0, spec())
    sweeps.ambient_sweep(PARTS, np.array([0, 1]), 330.0, spec())
    # Four curves, each at nominal and at the band's four (parts, resistor) extremes.
    assert calls == [5 * 4 * sweeps.SWEEP_POINTS, 5 * 4 * sweeps.SWEEP_POINTS]


def test_unsolvable_points_are_gaps_not_zeros():
    # 13 V through 330 Ω gives at most 39 mA, so a 100 mA load has no operating point.
    sweep = sweeps.supply_sweep(PARTS, np.array([0]), 330.0, spec(load_max=0.1))
    assert np.isfinite(sweep.vout_v[:2]).all()
    assert np.isnan(sweep.vout_v[2:]).all()


def _ids(svg: str) -> list[str]:
    return re.findall(r'\bid="([^"]+)"', svg)


def test_svg_markup_is_inline_ready_and_ids_are_prefixed():
    rail_spec = spec()
    figure = plots.sweep_figure(sweeps.supply_sweep(PARTS, np.array([0]), 330.0, rail_spec), rail_spec, "t <&>")
    first, second = plots.svg_markup(figure, "one"), plots.svg_markup(figure, "two")
    assert first.startswith("<svg") and first.endswith("</svg>")
    assert "http://" not in first and "https://" not in first and "<?xml" not in first
    assert "<script" not in first
    assert all(i.startswith("one-") for i in _ids(first))
    assert not set(_ids(first)) & set(_ids(second))
    for reference in re.findall(r'(?:href="#|url\(#)([^")]+)', first):
        assert reference in _ids(first)
    assert "t &lt;&amp;&gt;" in first  # matplotlib escapes figure text


def test_figures_leave_global_style_alone():
    before = dict(matplotlib.rcParams)
    rail_spec = spec()
    result = run_monte_carlo(PARTS, np.array([0]), 330.0, rail_spec, samples=500, seed=1)
    plots.svg_markup(plots.monte_carlo_figure(result, rail_spec, "mc"), "mc")
    assert dict(matplotlib.rcParams) == before


def test_png_is_written_and_not_blank(tmp_path):
    rail_spec = spec()
    result = run_monte_carlo(PARTS, np.array([0]), 330.0, rail_spec, samples=2000, seed=3)
    path = tmp_path / "mc.png"
    path.write_bytes(plots.png_bytes(plots.monte_carlo_figure(result, rail_spec, "mc")))
    pixels = matplotlib.image.imread(path)
    assert pixels.shape[0] > 300 and pixels.shape[1] > 600
    assert pixels[..., :3].std() > 0.05


def _line(figure, label):
    return next(line for line in figure.axes[0].get_lines() if line.get_label() == label)


def test_pareto_front_drawn_is_the_undominated_set():
    rng = np.random.default_rng(5)
    error, margin = rng.uniform(0.01, 0.5, 60), rng.uniform(0.0, 0.9, 60)
    figure = plots.error_margin_figure(error, margin, error[:3], margin[:3], np.arange(1, 4), spec(), "front")
    drawn = _line(figure, "Pareto front")
    points = set(zip(np.round(drawn.get_xdata(), 9), np.round(drawn.get_ydata(), 9), strict=True))
    # Plain reference: a design is on the front when no other has less-or-equal error and
    # more-or-equal margin with one strictly better.
    expected = set()
    for i in range(60):
        dominated = any(
            error[j] <= error[i] and margin[j] >= margin[i] and (error[j] < error[i] or margin[j] > margin[i])
            for j in range(60)
        )
        if not dominated:
            expected.add((round(100 * margin[i], 9), round(1e3 * error[i], 9)))
    assert points == expected
    labels = [text.get_text() for text in figure.axes[0].texts]
    assert labels == ["1", "2", "3"]


@pytest.mark.parametrize("maker", ["sweep", "scatter", "histogram"])
def test_curves_differ_by_more_than_colour(maker):
    rail_spec = spec()
    if maker == "sweep":
        figure = plots.sweep_figure(sweeps.supply_sweep(PARTS, np.array([0]), 330.0, rail_spec), rail_spec, "s")
        lines = [line for line in figure.axes[0].get_lines() if not line.get_label().startswith("_")]
        assert len({(line.get_linestyle(), line.get_marker()) for line in lines}) == len(lines) == 4
    elif maker == "scatter":
        figure = plots.error_margin_figure(np.array([0.1, 0.2]), np.array([0.5, 0.3]), np.array([0.1]),
                                           np.array([0.5]), np.array([1]), rail_spec, "e")
        assert _line(figure, "Pareto front").get_linestyle() == "--"
    else:
        result = run_monte_carlo(PARTS, np.array([0]), 330.0, rail_spec, samples=500, seed=1)
        figure = plots.monte_carlo_figure(result, rail_spec, "h")
    hatched = [patch for patch in figure.axes[0].patches if patch.get_hatch()]
    assert hatched, "the tolerance window is hatched for black-and-white print"
