"""The bundled demo sets: invented, complete, valid, and physically sane.

The ranges checked here are rules of thumb, "common practice (no source)" unless said
otherwise; the voltages are computed with the contract's element models (DESIGN §3)
through :mod:`selector.physics.devices`, and cross-checked against the plain SPICE diode
equation for the forward sets.
"""

from __future__ import annotations

import csv

import numpy as np
import pytest
from scipy import constants

from selector.catalog.parts_import import load_parts_csv
from selector.catalog.resources import demo_csv_path
from selector.physics.devices import element_voltage_slopes
from selector.physics.partset import PartSet
from selector.spec.eseries import decade_values
from selector.spec.part_fields import PART_COLUMNS


@pytest.fixture(scope="module")
def demo():
    parts_file = load_parts_csv(demo_csv_path())  # passes the import validation
    assert parts_file.warnings == []
    return parts_file.records


@pytest.fixture(scope="module")
def parts(demo):
    return PartSet.from_records(demo)


def voltages_at(parts: PartSet, mask: np.ndarray, current_a, junction_c=25.0) -> np.ndarray:
    index = np.flatnonzero(mask)
    voltage, _, _ = element_voltage_slopes(parts, index, np.broadcast_to(current_a, index.shape), junction_c)
    return voltage


def test_every_contract_column_and_source_marks_the_data_invented(demo):
    with demo_csv_path().open(encoding="utf-8", newline="") as handle:
        header = next(csv.reader(handle))
    assert tuple(header[: len(PART_COLUMNS)]) == PART_COLUMNS and "source" in header
    assert {record["source"] for record in demo} == {"invented demo data"}


def test_at_least_twelve_forward_sets_of_every_kind(parts):
    forward = parts.family[~parts.is_zener]
    assert len(forward) >= 12
    assert {"signal", "rectifier", "schottky", "led"} <= set(forward)
    descriptions = " ".join(parts.description[parts.family == "led"])
    assert {"red", "green", "blue"} <= set(descriptions.split())


def test_zeners_at_every_e24_voltage_from_2v4_to_39v_in_two_power_classes(parts):
    e24 = np.concatenate([decade_values("E24"), 10 * decade_values("E24")])
    wanted = np.round(e24[(e24 >= 2.4) & (e24 <= 39)], 6)
    zener = parts.is_zener
    for power in (0.4, 1.2):
        voltages = np.round(np.sort(parts.vz_v[zener & (parts.pd_w == power)]), 6)
        assert voltages.tolist() == wanted.tolist()


def test_zener_datasheet_points_are_plausible(parts):
    zener = parts.is_zener
    assert np.all(parts.izk_a[zener] < parts.izt_a[zener])
    assert np.all(parts.zzk_ohm[zener] >= parts.zzt_ohm[zener])
    assert np.all(parts.vz_tol_pct[zener] == 5.0)
    # Temperature coefficient sign (common practice, no source): negative below about
    # 5 V, near zero around 5–6 V, positive above.
    vz, tc = parts.vz_v[zener], parts.tc_v_per_k[zener]
    assert np.all(tc[vz < 5.0] < 0)
    assert np.all(tc[vz > 6.0] > 0)
    assert np.all(np.abs(tc[(vz >= 5.0) & (vz <= 6.0)] / vz[(vz >= 5.0) & (vz <= 6.0)]) < 2e-4)  # < 0.02 %/K
    # the 1.2 W class has the lower test-point impedance at every voltage
    for voltage in np.unique(vz):
        half, big = parts.zzt_ohm[zener & (parts.vz_v == voltage) & (parts.pd_w == 0.4)], \
            parts.zzt_ohm[zener & (parts.vz_v == voltage) & (parts.pd_w == 1.2)]
        assert big[0] <= half[0]


@pytest.mark.parametrize(
    ("family", "words", "current_a", "low_v", "high_v"),
    [
        # Forward voltages, common practice (no source)
        ("signal", "", 1e-3, 0.58, 0.72),
        ("rectifier", "", 1e-3, 0.42, 0.65),
        ("schottky", "", 10e-3, 0.2, 0.42),
        ("led", "red", 5e-3, 1.7, 1.95),
        ("led", "yellow", 5e-3, 1.85, 2.05),
        ("led", "green", 5e-3, 2.0, 2.3),
        ("led", "blue", 5e-3, 2.6, 3.1),
    ],
)
def test_forward_voltages_are_plausible(parts, family, words, current_a, low_v, high_v):
    mask = (parts.family == family) & np.array([words in d for d in parts.description])
    assert mask.any()
    voltage = voltages_at(parts, mask, current_a)
    assert np.all((voltage > low_v) & (voltage < high_v)), (parts.part[mask], voltage)


def test_forward_curves_match_the_plain_diode_equation(parts):
    """Shockley/SPICE diode equation V = n·Vt·ln(1 + I/Is) + I·Rs at Tnom
    (SPICE3 User's Manual, Quarles et al. 1993), Vt = kT/q from scipy.constants."""
    forward = ~parts.is_zener
    vt = constants.k * (25.0 + constants.zero_Celsius) / constants.e
    for current in (1e-4, 1e-3, 2e-2):
        plain = parts.n[forward] * vt * np.log1p(current / parts.is_a[forward]) + current * parts.rs_ohm[forward]
        np.testing.assert_allclose(voltages_at(parts, forward, current), plain, rtol=1e-12, atol=1e-12)


def test_every_curve_rises_with_current_and_falls_with_temperature(parts):
    currents = np.geomspace(1e-5, 1.0, 41)
    for index in range(len(parts)):
        top = parts.if_max_a[index] if np.isfinite(parts.if_max_a[index]) else parts.pd_w[index] / parts.vz_v[index]
        grid = currents[currents <= top]
        voltage, dv_di, dv_dt = element_voltage_slopes(parts, np.full(grid.shape, index), grid, 25.0)
        assert np.all(np.diff(voltage) > 0), parts.part[index]
        assert np.all(dv_di > 0) and np.all(np.isfinite(voltage))
        if not parts.is_zener[index]:
            # forward tempco negative, about −1 to −3 mV/K at 1 mA (common practice, no source)
            _, _, tempco = element_voltage_slopes(parts, np.array([index]), np.array([1e-3]), 25.0)
            assert -3.2e-3 < tempco[0] < -0.8e-3, parts.part[index]
