"""SPICE-format diode .model cards: syntax, scale suffixes, and the zener mapping."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants, integrate

from selector.catalog.model_cards import load_model_cards, parse_model_cards, parse_spice_number
from selector.errors import InputDataError
from selector.physics.devices import element_voltage_slopes
from selector.physics.partset import PartSet

CARDS = """* invented test cards
.MODEL D-C1 d(Is=2.5n n=1.8
+ rs=0.6 cjo=2p, m=0.33) ; trailing comment
.model Z-C1 D IS=1e-14 N=1.2 RS=2 BV=5.1 IBV=1MA TNOM=25
.model Q1 NPN(BF=100)
R1 1 2 1k
.end
"""


@pytest.mark.parametrize(
    ("text", "value"),
    [
        # Scale factors and ignored trailing letters: SPICE3 User's Manual (Quarles et
        # al., UC Berkeley, 1993), section on numbers: f p n u m k meg g t.
        ("2.5n", 2.5e-9),
        ("2.5nA", 2.5e-9),
        ("1MEG", 1e6),
        ("1meghz", 1e6),
        ("1M", 1e-3),
        ("10mV", 10e-3),
        ("1e-14", 1e-14),
        ("3.3K", 3300.0),
        ("4u", 4e-6),
        ("2.6f", 2.6e-15),
        ("7p", 7e-12),
        ("1.5g", 1.5e9),
        ("2t", 2e12),
        ("5", 5.0),
        ("1A", 1.0),
        ("-0.5", -0.5),
    ],
)
def test_spice_numbers(text, value):
    assert parse_spice_number(text) == value


@pytest.mark.parametrize("text", ["abc", "1e999", "", "1.2.3", "n5"])
def test_bad_spice_numbers(text):
    with pytest.raises(ValueError):
        parse_spice_number(text)


def test_continuations_comments_case_and_commas():
    cards, warnings = parse_model_cards(CARDS, "c.lib")
    assert [card.name for card in cards] == ["D-C1", "Z-C1"]
    diode = cards[0]
    assert diode.line == 2
    assert diode.values == {"IS": 2.5e-9, "N": 1.8, "RS": 0.6, "CJO": 2e-12, "M": 0.33}
    assert diode.value("EG") == 1.11 and diode.value("XTI") == 3.0 and diode.value("TNOM") == 27.0
    assert warnings == ["c.lib:5: Q1: a NPN model, not a diode (D); ignored", "c.lib:6: not a .model card; ignored"]


@pytest.mark.parametrize(
    ("text", "message"),
    [
        (".model\n", "c.lib:1: .model needs a name and a type, e.g. '.model D-X1 D(IS=1n)'"),
        (".model D1 IS=1n\n", "c.lib:1: D1: the model type (D) is missing before 'IS=1n'"),
        (".model D1 D(IS=1n IS=2n)\n", "c.lib:1: D1: IS: given twice"),
        (".model D1 D(IS=abc)\n", "c.lib:1: D1: IS: 'abc' is not a SPICE number"),
        (".model D1 D(IS=1n oops)\n", "c.lib:1: D1: cannot read 'oops' (parameters are NAME=value)"),
    ],
)
def test_malformed_cards(text, message):
    with pytest.raises(InputDataError) as caught:
        parse_model_cards(text, "c.lib")
    assert str(caught.value) == message


def test_forward_import_uses_card_defaults_and_keeps_unused_parameters(tmp_path):
    path = tmp_path / "c.lib"
    path.write_text(CARDS)
    parts = load_model_cards(path, overrides={"family": "signal", "pd_w": "500m"})
    diode = {record["part"]: record for record in parts.records}["D-C1"]
    assert (diode["is_a"], diode["n"], diode["rs_ohm"]) == (2.5e-9, 1.8, 0.6)
    assert diode["tnom_c"] == 27.0  # DESIGN §3: a model card without TNOM is at 27 °C
    assert diode["model_extra"] == "CJO=2p M=0.33"
    assert diode["pd_w"] == 0.5
    assert f"{path}:2: D-C1: CJO, M not used (kept as text)" in parts.warnings


def test_cards_without_family_or_ratings_are_refused_with_every_problem(tmp_path):
    path = tmp_path / "c.lib"
    path.write_text(".model D-C1 D(IS=1n)\n.model D-C2 D(IS=1n N=5)\n")
    with pytest.raises(InputDataError) as caught:
        load_model_cards(path, overrides={"pd_w": "0.2"})
    assert str(caught.value).splitlines() == [
        f"{path}:1: D-C1: family: not given; use --family or a ratings CSV",
        f"{path}:2: D-C2: family: not given; use --family or a ratings CSV",
    ]
    path.write_text(".model D-C1 D(IS=1n)\n.model Z-C2 D(IS=1n N=5)\n.model D-C3 D(N=0.5)\n")
    with pytest.raises(InputDataError) as caught:
        load_model_cards(path, overrides={"pd_w": "0.2", "family": "zener"})
    assert str(caught.value).splitlines() == [
        f"{path}:1: D-C1: BV: missing; a card imported as a zener needs BV",
        f"{path}:2: Z-C2: BV: missing; a card imported as a zener needs BV",
        f"{path}:3: D-C3: BV: missing; a card imported as a zener needs BV",
    ]
    with pytest.raises(InputDataError) as caught:
        load_model_cards(path, overrides={"pd_w": "0.2", "family": "signal"})
    assert str(caught.value).splitlines() == [
        f"{path}:2: n: must be at most 4, not 5",
        f"{path}:3: n: must be at least 1, not 0.5",
    ]


def test_ratings_csv_beats_options(tmp_path):
    cards = tmp_path / "c.lib"
    cards.write_text(CARDS)
    ratings = tmp_path / "ratings.csv"
    ratings.write_text("part,family,pd_w,izt_a\nZ-C1,zener,1.3,20m\nD-X9,signal,1,\n")
    parts = load_model_cards(cards, overrides={"family": "signal", "pd_w": "0.25"}, ratings_path=ratings)
    by_part = {record["part"]: record for record in parts.records}
    assert by_part["D-C1"]["family"] == "signal" and by_part["D-C1"]["pd_w"] == 0.25
    assert by_part["Z-C1"]["family"] == "zener" and by_part["Z-C1"]["pd_w"] == 1.3
    assert by_part["Z-C1"]["izt_a"] == 0.02
    assert f"{ratings}:3: part D-X9: no model card of that name; ignored" in parts.warnings


def test_zener_without_bv_is_refused(tmp_path):
    path = tmp_path / "c.lib"
    path.write_text(".model Z-1 D(IS=1n)\n")
    with pytest.raises(InputDataError) as caught:
        load_model_cards(path, overrides={"family": "zener", "pd_w": "0.5"})
    assert str(caught.value) == f"{path}:1: Z-1: BV: missing; a card imported as a zener needs BV"


def test_zener_mapping_meets_the_card_breakdown_curve_at_izt_and_parts_from_it_by_a_known_gap(tmp_path):
    """The derived datasheet points, put through the contract's breakdown element (DESIGN §3
    version 2, via selector.physics.devices), meet the card's breakdown branch
    V = BV + N·Vt·ln(I/IBV) + RS·I (SPICE3 diode model, from memory) in voltage at izt; below
    it they part by ∫(r_pl − r_card) dI, which scipy.integrate.quad computes independently."""
    path = tmp_path / "z.lib"
    path.write_text(".model Z-C1 D(IS=1e-14 N=1.2 RS=2 BV=5.1 IBV=1m TNOM=25)\n")
    parts_file = load_model_cards(path, overrides={"family": "zener", "pd_w": "0.5", "izt_a": "5m"})
    (record,) = parts_file.records
    vt = constants.k * (25 + constants.zero_Celsius) / constants.e  # scipy.constants
    a = 1.2 * vt
    assert record["izt_a"] == 5e-3 and record["izk_a"] == pytest.approx(5e-4)
    assert record["zzt_ohm"] == pytest.approx(a / 5e-3 + 2.0, rel=1e-12)
    assert record["zzk_ohm"] == pytest.approx(a / 5e-4 + 2.0, rel=1e-12)
    parts = PartSet.from_records([record])
    currents = np.geomspace(5e-4, 5e-3, 41)
    voltage, dv_di, _ = element_voltage_slopes(parts, np.zeros(41, dtype=int), currents, 25.0)
    card_curve = 5.1 + a * np.log(currents / 1e-3) + 2.0 * currents
    assert voltage[-1] == pytest.approx(card_curve[-1], abs=1e-12)
    np.testing.assert_allclose(dv_di[[0, -1]], a / currents[[0, -1]] + 2.0, rtol=1e-12)
    knee = parts.zener_knee_exponent[0]

    def gap(current):
        return integrate.quad(lambda i: record["zzt_ohm"] * (i / 5e-3) ** -knee - (a / i + 2.0), 5e-3, current,
                              epsabs=1e-14)[0]  # fmt: skip

    np.testing.assert_allclose(voltage - card_curve, [gap(i) for i in currents], rtol=0, atol=1e-10)
    # The largest gap is at izk, the 3.2 mV the module docstring states.
    assert np.argmax(np.abs(voltage - card_curve)) == 0
    assert abs(voltage[0] - card_curve[0]) == pytest.approx(3.2e-3, abs=0.1e-3)
    assert math.isclose(record["vz_v"], 5.1 + a * math.log(5.0) + 2.0 * 5e-3, rel_tol=1e-14)
    assert "BV=5.1" in record["model_extra"]


def test_a_card_without_series_resistance_is_the_power_law_exactly(tmp_path):
    # With RS = 0, zzk/zzt = izt/izk, so m = 1 and L_1 = ln (DESIGN §3 v2): the card's curve.
    path = tmp_path / "z.lib"
    path.write_text(".model Z-C0 D(N=1.5 BV=6.2 IBV=2m TNOM=25)\n")
    (record,) = load_model_cards(path, overrides={"family": "zener", "pd_w": "0.5"}).records
    parts = PartSet.from_records([record])
    assert parts.zener_knee_exponent[0] == pytest.approx(1.0, abs=1e-12)
    vt = constants.k * (25 + constants.zero_Celsius) / constants.e
    currents = np.geomspace(1e-5, 0.05, 13)
    voltage, _, _ = element_voltage_slopes(parts, np.zeros(13, dtype=int), currents, 25.0)
    np.testing.assert_allclose(voltage, 6.2 + 1.5 * vt * np.log(currents / 2e-3), rtol=0, atol=1e-9)
