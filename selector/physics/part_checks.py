"""Derived figures of single parts, for data entry and for part sheets: a forward part's
tempco, a zener's knee exponent, its modelled impedance and where its curve reaches 0 V,
and the plausibility warnings an import gives.

Every figure comes from the element models of :mod:`selector.physics.devices` (DESIGN §3,
version 2) at 25 °C and nominal tolerance.
"""

from __future__ import annotations

import numpy as np

from selector.physics.devices import element_voltage_slopes
from selector.physics.partset import PartSet

#: Where a forward part's tempco is taken: 1 mA, junction at 25 °C.
TEMPCO_CURRENT_A = 1e-3
TEMPCO_JUNCTION_C = 25.0
#: A forward junction's tempco lies in this range [V/K]: negative, about −1 … −2.5 mV/K
#: for silicon and LEDs (common practice, no source); outside it the parameters are
#: suspect (silicon's 1.11 eV given to an LED gives a positive one).
FORWARD_TEMPCO_RANGE_V_PER_K = (-4e-3, 0.0)
#: A zener curve that reaches 0 V above this fraction of izk is suspect (the model is
#: extrapolated far below its knee anyway, but not by that little).
ZERO_CROSSING_FRACTION_OF_IZK = 0.01
#: Currents of a zener's modelled impedance on its sheet, as multiples of izt
#: (izk is added per part).
IMPEDANCE_POINTS_OF_IZT: tuple[float, ...] = (1.0, 5.0)


def forward_tempco_v_per_k(parts: PartSet) -> np.ndarray:
    """``∂Vf/∂T`` of every part at 1 mA and 25 °C [V/K]; a zener's is its given TC."""
    if len(parts) == 0:
        return np.empty(0)
    _, _, slope = element_voltage_slopes(parts, np.arange(len(parts)), TEMPCO_CURRENT_A, TEMPCO_JUNCTION_C)
    return np.where(parts.is_zener, parts.tc_v_per_k, slope)


def zener_zero_crossing_a(parts: PartSet) -> np.ndarray:
    """Current at which each zener's curve (``tnom``, nominal) reaches 0 V [A]; 0 where it
    never does (``m < 1``: the curve ends above 0 V at zero current) and for forward parts.

    ``vz + c·(x^q − 1)/q = 0`` with ``c = zzt·izt``, ``q = 1 − m``, ``x = I/izt`` (DESIGN §3):
    ``x = (1 − q·vz/c)^(1/q)``, or ``exp(−vz/c)`` for ``q = 0``.
    """
    c = parts.zzt_ohm * parts.izt_a
    q = 1.0 - parts.zener_knee_exponent
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        base = 1.0 - q * parts.vz_v / c
        power = np.where(np.abs(q) < 1e-12, np.exp(-parts.vz_v / c), np.where(base > 0, base ** (1.0 / q), 0.0))
    return np.where(parts.is_zener & np.isfinite(power), parts.izt_a * power, 0.0)


def zener_impedance_ohm(parts: PartSet, current_a: np.ndarray) -> np.ndarray:
    """The modelled dynamic impedance ``zzt·(I/izt)^(−m)`` at a current per part [Ω]."""
    return parts.zzt_ohm * (np.asarray(current_a) / parts.izt_a) ** -parts.zener_knee_exponent


def plausibility_warnings(parts: PartSet) -> list[tuple[int, str]]:
    """(part position, message) for every part whose derived figures are suspect."""
    warnings = []
    tempco = forward_tempco_v_per_k(parts)
    low, high = FORWARD_TEMPCO_RANGE_V_PER_K
    for index in np.flatnonzero(~parts.is_zener & ((tempco >= high) | (tempco < low))):
        warnings.append((int(index), f"Vf tempco at 1 mA and 25 °C is {tempco[index] * 1e3:+.2f} mV/K by these "
                         f"parameters; a forward junction's is negative, about −1 … −4 mV/K (common practice): "
                         "check eg_ev, xti and n"))  # fmt: skip
    crossing = zener_zero_crossing_a(parts)
    for index in np.flatnonzero(parts.is_zener & (crossing > ZERO_CROSSING_FRACTION_OF_IZK * parts.izk_a)):
        warnings.append((int(index), f"its modelled curve reaches 0 V at {crossing[index] * 1e6:.3g} µA, above "
                         f"izk/100: check zzk_ohm and izk_a (knee exponent m = "
                         f"{parts.zener_knee_exponent[index]:.3g})"))  # fmt: skip
    return warnings
