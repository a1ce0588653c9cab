"""Element models: outside checks and numerical safety. All part data here is invented."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import constants

from selector.physics.corners import allowed_power_w
from selector.physics.devices import (
    element_voltage_slopes,
    forward_log_saturation_current,
    thermal_voltage_v,
)
from selector.physics.partset import PartSet
from selector.physics.self_heating import JUNCTION_CEILING_C, self_heated_element, stack_voltage

INVENTED_PARTS = [
    # invented: a small-signal silicon diode
    dict(part="INV-SIG", family="signal", is_a=1e-14, n=1.0, rs_ohm=0.0, pd_w=0.5),
    # invented: a rectifier with series resistance and tolerance
    dict(part="INV-REC", family="rectifier", is_a=4e-9, n=1.8, rs_ohm=0.04, vf_tol_v=0.03, pd_w=1.0),
    # invented: a 3.3 V zener (negative TC) and an 8.2 V zener (positive TC)
    dict(part="INV-Z3V3", family="zener", vz_v=3.3, izt_a=5e-3, zzt_ohm=60, izk_a=2.5e-4, zzk_ohm=900,
         vz_tol_pct=5, tc_v_per_k=-2.0e-3, pd_w=0.5),
    dict(part="INV-Z8V2", family="zener", vz_v=8.2, izt_a=5e-3, zzt_ohm=8, izk_a=2.5e-4, zzk_ohm=60,
         vz_tol_pct=2, tc_v_per_k=4.5e-3, pd_w=0.5, theta_ja_k_per_w=200.0),
]  # fmt: skip


@pytest.fixture
def parts() -> PartSet:
    return PartSet.from_records(INVENTED_PARTS)


def test_no_floating_point_trouble_from_1fA_to_10A_and_minus55_to_200C(parts):
    currents = np.logspace(-15, 1, 161)
    temperatures = np.linspace(-55.0, 200.0, 52)
    current, temperature = np.meshgrid(currents, temperatures)
    with np.errstate(all="raise"):
        for index in range(len(parts)):
            for sign in (-1.0, 0.0, 1.0):
                v, dvdi, dvdt = element_voltage_slopes(parts, index, current, temperature, sign)
                assert np.all(np.isfinite(v)) and np.all(np.isfinite(dvdi)) and np.all(np.isfinite(dvdt))
            state = self_heated_element(parts, index, np.log(current), temperature)
            assert np.all(np.isfinite(state.voltage_v)) and np.all(np.isfinite(state.junction_c))


def test_spice_saturation_current_scaling_27_to_127C():
    # SPICE3 diode model (Quarles et al., SPICE3 Version 3f3 User's Manual, 1993):
    # IS(T) = IS·(T/TNOM)^(XTI/N)·exp((T/TNOM − 1)·EG/(N·Vt)); default EG 1.11, XTI 3
    # gives a factor of 1.0774e5 from 27 °C to 127 °C.
    ratio = np.exp(
        forward_log_saturation_current(127.0, 1e-14, 1.0, 1.11, 3.0, 27.0)
        - forward_log_saturation_current(27.0, 1e-14, 1.0, 1.11, 3.0, 27.0)
    )
    assert ratio == pytest.approx(1.0774e5, rel=1e-4)


def test_slope_per_decade_at_n_1_and_300K(parts):
    # 59.5 mV/decade = n·k·T/q·ln 10 at n = 1, T = 300 K with k, q from scipy.constants;
    # "about 60 mV per decade" is common practice (no source).
    expected = constants.k * 300.0 / constants.e * np.log(10.0)
    assert expected == pytest.approx(59.5e-3, abs=0.05e-3)
    t_c = 300.0 - constants.zero_Celsius
    v, _, _ = element_voltage_slopes(parts, np.array([0, 0]), np.array([1e-4, 1e-3]), t_c)
    assert v[1] - v[0] == pytest.approx(expected, rel=1e-9)


def test_silicon_forward_tempco_near_minus_2_mV_per_K(parts):
    # Common practice (no source): a silicon junction's Vf falls by about 2 mV/K.
    _, _, dvdt = element_voltage_slopes(parts, 0, 1e-3, 25.0)
    assert -2.5e-3 < dvdt < -1.5e-3


@pytest.mark.parametrize("index, sign", [(2, -1.0), (3, 1.0)], ids=["3.3 V falls", "8.2 V rises"])
def test_zener_rail_tempco_has_the_sign_of_its_tc_and_the_self_heated_value(parts, index, sign):
    # Common practice (no source): breakdown below about 5 V has a negative TC (Zener
    # effect), above about 6 V a positive one (avalanche). The rail's tempco is computed
    # here from the full self-heated solve (finite differences of the ambient) and compared
    # with implicit differentiation of V = V(I, Tj), Tj = Ta + θ·I·V, I = (Vin − V)/R
    # (DESIGN §3): dV/dTa = tc/(1 + rz/R + tc·θ·(V/R − I)).
    from selector.physics.design_metrics import design_metrics
    from selector.spec.rail_spec import RailSpec

    vz = parts.vz_v[index]
    spec = RailSpec(target_v=vz, tolerance_v=0.5, supply_min_v=2.5 * vz, supply_max_v=2.5 * vz,
                    supply_nominal_v=2.5 * vz, load_kind="current", load_min=0.0, load_max=0.0,
                    ambient_min_c=20.0, ambient_max_c=30.0)  # fmt: skip
    resistor = 1.5 * vz / 5e-3
    metrics = design_metrics(parts, np.array([index]), resistor, spec)
    current = metrics.evaluation.nominal["stack_current_a"][0]
    junction = metrics.evaluation.nominal["junction_c"][0][0]
    voltage, rz, tc = element_voltage_slopes(parts, np.array([index]), current, junction)
    theta = parts.theta_ja_k_per_w[index]
    expected = tc[0] / (1 + rz[0] / resistor + tc[0] * theta * (voltage[0] / resistor - current))
    assert np.sign(metrics.tempco_mv_per_k) == sign
    assert metrics.tempco_mv_per_k == pytest.approx(1e3 * expected, rel=1e-4)


def test_default_theta_is_the_datasheet_derating(parts):
    # Common datasheet practice (no source): θJA = (Tjmax − 25 °C)/Pd; full power at 25 °C,
    # none at Tjmax.
    assert parts.theta_ja_k_per_w[0] == pytest.approx((150.0 - 25.0) / 0.5, rel=1e-12)
    assert allowed_power_w(parts, np.array([0]), np.array([25.0]))[0] == pytest.approx(0.5, rel=1e-12)
    assert allowed_power_w(parts, np.array([0]), np.array([150.0]))[0] == pytest.approx(0.0, abs=1e-15)


def test_breakdown_element_passes_through_its_datasheet_point(parts):
    v, dvdi, _ = element_voltage_slopes(parts, 3, 5e-3, 25.0, 0.0)
    assert v == pytest.approx(8.2, abs=1e-12)
    assert dvdi == pytest.approx(8.0, rel=1e-9)  # zzt at izt
    _, dvdi_knee, _ = element_voltage_slopes(parts, 3, 2.5e-4, 25.0, 0.0)
    assert dvdi_knee == pytest.approx(60.0, rel=1e-9)  # zzk at izk
    high, _, _ = element_voltage_slopes(parts, 3, 5e-3, 25.0, 1.0)
    assert high == pytest.approx(8.2 * 1.02, abs=1e-12)


@pytest.mark.parametrize("index", [0, 1, 2, 3])
def test_slopes_match_finite_differences(parts, index):
    current, temperature, step = 2e-3, 40.0, 1e-6
    v, dvdi, dvdt = element_voltage_slopes(parts, index, current, temperature, 1.0)
    up, _, _ = element_voltage_slopes(parts, index, current * (1 + step), temperature, 1.0)
    down, _, _ = element_voltage_slopes(parts, index, current * (1 - step), temperature, 1.0)
    assert dvdi == pytest.approx((up - down) / (2 * current * step), rel=1e-6)
    warm, _, _ = element_voltage_slopes(parts, index, current, temperature + 1e-3, 1.0)
    cool, _, _ = element_voltage_slopes(parts, index, current, temperature - 1e-3, 1.0)
    assert dvdt == pytest.approx((warm - cool) / 2e-3, rel=1e-5, abs=1e-12)


def test_self_heated_junction_is_at_steady_state_to_1_mK(parts):
    index = np.array([0, 1, 2, 3, 1])
    current = np.array([0.05, 0.8, 0.02, 0.03, 10.0])
    state = self_heated_element(parts, index, np.log(current), 30.0, 1.0)
    theta = parts.theta_ja_k_per_w[index]
    assert np.all(np.abs(state.junction_c - 30.0 - theta * state.voltage_v * current) < 1e-3)
    v, _, _ = element_voltage_slopes(parts, index, current, state.junction_c, 1.0)
    np.testing.assert_allclose(state.voltage_v, v, rtol=0, atol=1e-12)


def test_self_heated_slope_matches_finite_difference(parts):
    for index in range(4):
        u, step = np.log(0.02), 1e-6
        state = self_heated_element(parts, index, u, 25.0)
        up = self_heated_element(parts, index, u + step, 25.0).voltage_v
        down = self_heated_element(parts, index, u - step, 25.0).voltage_v
        assert state.dv_dlog_current_v == pytest.approx((up - down) / (2 * step), rel=1e-5)


def test_runaway_is_flagged_where_loop_gain_reaches_one(parts):
    # θ·I·tc = 200·I·4.5e-3 reaches 1 at I = 1.11 A.
    state = self_heated_element(parts, np.array([3, 3]), np.log([0.5, 1.5]), 25.0)
    assert state.runaway.tolist() == [False, True]
    assert state.loop_gain[0] == pytest.approx(200 * 0.5 * 4.5e-3, rel=1e-12)


def test_stack_voltage_sums_self_heated_elements(parts):
    stacks = np.array([[0, 0, 3, -1], [-1, -1, -1, -1]])
    voltage, runaway = stack_voltage(parts, stacks, np.array([0.01, 0.01]), 25.0, -1.0)
    single = self_heated_element(parts, np.array([0, 3]), np.log(0.01), 25.0, -1.0).voltage_v
    assert voltage[0] == pytest.approx(2 * single[0] + single[1], abs=1e-12)
    assert voltage[1] == 0.0
    assert not runaway.any()


def test_thermal_voltage_at_300_K_is_25_852_mV():
    # CODATA 2022 via scipy.constants; k = 1.380649e-23 J/K and e = 1.602176634e-19 C are
    # exact since the 2019 redefinition of the SI, so k·300 K/e = 25.852 mV to 5 figures.
    assert thermal_voltage_v(300.0 - 273.15) == pytest.approx(25.852e-3, abs=0.5e-6)
    assert thermal_voltage_v(300.0 - 273.15) == pytest.approx(constants.k * 300 / constants.e, rel=1e-15)


def test_k_over_q_and_zero_celsius_are_scipy_constants_bit_for_bit():
    # The solver writes k, e (exact in the 2019 SI) and 0 °C out to start faster; they
    # must be scipy.constants' own values (CODATA 2022), not merely close to them.
    from selector.physics.devices import BOLTZMANN_OVER_CHARGE_V_PER_K, ZERO_CELSIUS_K

    assert BOLTZMANN_OVER_CHARGE_V_PER_K == constants.k / constants.e
    assert ZERO_CELSIUS_K == constants.zero_Celsius


# An invented LED-like set with a large series resistance: amperes heat it past any rating.
_HOT_LED = dict(part="INV-HOT", family="led", is_a=1e-20, n=2.5, rs_ohm=1.85, eg_ev=2.68, xti=6.9, tnom_c=9.0,
                pd_w=0.17, tj_max_c=200.0)  # fmt: skip


def test_junction_far_above_ambient_settles_and_past_the_ceiling_is_runaway():
    parts = PartSet.from_records([_HOT_LED])
    state = self_heated_element(parts, np.array([0, 0]), np.log([1.0, 2.0]), 20.0)
    theta = parts.theta_ja_k_per_w[0]
    # 1 A: a steady state some 2,400 K above the ambient (absurd, but a solution of the model).
    assert not state.runaway[0] and 2000.0 < state.junction_c[0] < JUNCTION_CEILING_C
    assert abs(state.junction_c[0] - 20.0 - theta * 1.0 * state.voltage_v[0]) < 1e-6
    # 2 A: no steady state below JUNCTION_CEILING_C.
    assert state.runaway[1]


def test_zener_junction_past_the_ceiling_is_runaway(parts):
    # INV-Z8V2 (θ = 200 K/W, tc +4.5 mV/K): at 1 A the loop gain θ·I·tc is 0.9, below 1,
    # but Tj = (Ta + θ·I·(V(tnom) − tc·tnom))/(1 − 0.9) comes to some 17,000 °C.
    state = self_heated_element(parts, np.array([3, 3]), np.log([0.02, 1.0]), 25.0)
    assert state.runaway.tolist() == [False, True]


def test_negative_tolerance_can_settle_a_junction_below_the_ambient(parts):
    # INV-REC at its low tolerance (−30 mV) and 1 nA: V < 0, so Tj = Ta + θ·V·I < Ta.
    state = self_heated_element(parts, np.array([1]), np.log([1e-9]), 40.0, -1.0)
    assert state.voltage_v[0] < 0 and state.junction_c[0] < 40.0 and not state.runaway[0]
    theta = parts.theta_ja_k_per_w[1]
    assert abs(state.junction_c[0] - 40.0 - theta * 1e-9 * state.voltage_v[0]) < 1e-12
