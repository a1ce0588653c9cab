"""The report rendered by headless Chromium with the network off: the screenshot is not blank.

Skipped, with the reason printed, when Chromium is not installed (Debian package
``chromium``).
"""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import matplotlib.image
import pytest
from test_report_html import SPEC_OPTIONS, make_library

from selector.spec.rail_spec import load_spec
from selector.views.report_html import search_review, write_report

CHROMIUM = next((found for name in ("chromium", "chromium-browser") if (found := shutil.which(name))), None)
if CHROMIUM is None and Path("/usr/bin/chromium").exists():
    CHROMIUM = "/usr/bin/chromium"


def screenshot(page: Path, tmp_path: Path) -> Path:
    shot = tmp_path / "shot.png"
    command = [
        CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
        "--disable-background-networking", "--disable-component-update", "--disable-sync",
        # Every host resolves nowhere, so any attempt to fetch from the network would fail.
        "--host-resolver-rules=MAP * ~NOTFOUND", "--proxy-server=127.0.0.1:9",
        f"--user-data-dir={tmp_path / 'profile'}", f"--screenshot={shot}", "--window-size=1200,2000",
        page.resolve().as_uri(),
    ]
    completed = subprocess.run(command, capture_output=True, text=True, timeout=120, check=False)
    assert shot.exists(), f"no screenshot; chromium said: {completed.stderr[-800:]}"
    return shot


def test_report_renders_in_headless_chromium(tmp_path):
    if CHROMIUM is None:
        print("skipped: Chromium is not installed (Debian package 'chromium')")
        pytest.skip("Chromium is not installed (Debian package 'chromium')")
    library = make_library(tmp_path / "lib.sqlite")
    try:
        review = search_review(load_spec(None, SPEC_OPTIONS), library, top=2, samples=2000)
    finally:
        library.close()
    page = tmp_path / "review.html"
    write_report(review, page)
    pixels = matplotlib.image.imread(screenshot(page, tmp_path))[..., :3]
    assert pixels.shape[:2] == (2000, 1200)
    # A blank page is one flat colour; text, tables and plots give spread in every band.
    assert pixels.std() > 0.05
    for band in (pixels[:600], pixels[600:1300], pixels[1300:]):
        assert band.std() > 0.02
    dark = (pixels.mean(axis=2) < 0.35).mean()
    assert 0.005 < dark < 0.5  # some ink, not a black screen


def _red_share(tmp_path, tolerance_v: float) -> float:
    import numpy as np

    from selector.physics.partset import PartSet
    from selector.physics.sweeps import supply_sweep
    from selector.spec.rail_spec import RailSpec
    from selector.views import plots

    zener = dict(part="BR-Z", family="zener", vz_v=5.1, izt_a=5e-3, zzt_ohm=10.0, izk_a=0.5e-3, zzk_ohm=200.0,
                 vz_tol_pct=5.0, tc_v_per_k=1e-3, pd_w=0.5)  # invented
    rail = RailSpec(target_v=5.1, tolerance_v=tolerance_v, supply_min_v=11.0, supply_max_v=13.0,
                    supply_nominal_v=12.0, load_kind="current", load_min=0.0, load_max=1e-3, ambient_min_c=0.0,
                    ambient_max_c=50.0)  # fmt: skip
    figure = plots.sweep_figure(supply_sweep(PartSet.from_records([zener]), np.array([0]), 1000.0, rail), rail, "sweep")
    folder = tmp_path / f"tol-{tolerance_v:g}"
    folder.mkdir()
    page = folder / "sweep.html"
    page.write_text(f"<!doctype html><html><body>{plots.svg_markup(figure, 'sweep')}</body></html>", encoding="utf-8")
    pixels = matplotlib.image.imread(screenshot(page, folder))[..., :3]
    red = (pixels[..., 0] > 0.6) & (pixels[..., 1] < 0.45) & (pixels[..., 2] < 0.45)
    return float(red.mean())


def test_a_failing_designs_sweep_shows_its_band_outside_the_window_in_chromium(tmp_path):
    if CHROMIUM is None:
        print("skipped: Chromium is not installed (Debian package 'chromium')")
        pytest.skip("Chromium is not installed (Debian package 'chromium')")
    # 5 % of 5.1 V: outside a ±100 mV window at every supply, inside ±500 mV.
    assert _red_share(tmp_path, 0.1) > 0.01
    assert _red_share(tmp_path, 0.5) < 0.001
