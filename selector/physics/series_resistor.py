"""The series resistor of the physics contract: its value at a corner and its allowed power.

DESIGN §3, version 2: at ambient ``Ta`` and resistor sign ``r ∈ {−1, +1}``
``R(Ta, r) = R·(1 + r·(tol + tcr·|Ta − 25 °C|))``, and the resistor may dissipate
``P_R,max(Ta) = rating·clip((T_zero − Ta)/(T_zero − T_full), 0, 1)`` — full rating up to
``T_full`` (70 °C by default), nothing from ``T_zero`` (155 °C), linear between, the usual
shape of a fixed resistor's derating curve. The resistor's own heating is not modelled.
"""

from __future__ import annotations

import numpy as np

from selector.spec.rail_spec import RailSpec

#: Ambient at which a resistor's tolerance and TCR are specified [°C] (DESIGN §3).
RESISTOR_REFERENCE_C = 25.0


def resistor_factor(spec: RailSpec, ambient_c: np.ndarray, resistor_sign: np.ndarray,
                    tcr_sign: np.ndarray | None = None) -> np.ndarray:  # fmt: skip
    """``R(Ta, r)/R = 1 + r·tol + r'·tcr·|Ta − 25 °C|`` [1], with ``r' = r`` at the corners.

    Parameters
    ----------
    spec : RailSpec
        Its ``resistor_tolerance`` [1] and ``resistor_tcr_per_k`` [1/K].
    ambient_c : array [°C]
    resistor_sign : array [1]
        −1 … +1, the position in the tolerance.
    tcr_sign : array [1], optional
        −1 … +1, the position in the TCR spread (default: ``resistor_sign``; the Monte
        Carlo draws it apart).
    """
    tcr_sign = resistor_sign if tcr_sign is None else tcr_sign
    drift = spec.resistor_tcr_per_k * np.abs(np.asarray(ambient_c, dtype=float) - RESISTOR_REFERENCE_C)
    return 1.0 + np.asarray(resistor_sign) * spec.resistor_tolerance + np.asarray(tcr_sign) * drift


def resistor_allowed_power_w(spec: RailSpec, ambient_c: np.ndarray) -> np.ndarray:
    """``P_R,max(Ta) = rating·clip((T_zero − Ta)/(T_zero − T_full), 0, 1)`` [W] (DESIGN §3)."""
    full, zero = spec.resistor_full_power_ambient_c, spec.resistor_zero_power_ambient_c
    fraction = np.clip((zero - np.asarray(ambient_c, dtype=float)) / (zero - full), 0.0, 1.0)
    return spec.resistor_rating_w * fraction


def resistor_margin(power_w: np.ndarray, allowed_w: np.ndarray) -> np.ndarray:
    """``1 − P_R/P_R,max`` [1]; 1 for no power, −inf for power where none is allowed."""
    power = np.asarray(power_w, dtype=float)
    allowed = np.broadcast_to(np.asarray(allowed_w, dtype=float), power.shape)
    with np.errstate(divide="ignore", invalid="ignore"):
        margin = 1.0 - power / allowed
    return np.where(power <= 0.0, 1.0, np.where(allowed > 0.0, margin, -np.inf))
