"""The parts table's vocabulary: device families, the contract's CSV columns, required
fields and defaults (DESIGN §3 and §4). Shared by the catalog, which stores parts, and
the physics, which computes with them."""

from __future__ import annotations

FORWARD_FAMILIES: tuple[str, ...] = ("signal", "rectifier", "schottky", "led")
BREAKDOWN_FAMILIES: tuple[str, ...] = ("zener",)
FAMILIES: tuple[str, ...] = FORWARD_FAMILIES + BREAKDOWN_FAMILIES

#: Parts CSV columns of the interface contract (DESIGN §4), in contract order.
PART_COLUMNS: tuple[str, ...] = (
    "part", "family", "description", "package", "is_a", "n", "rs_ohm", "eg_ev", "xti",
    "tnom_c", "vf_tol_v", "vz_v", "izt_a", "zzt_ohm", "izk_a", "zzk_ohm", "vz_tol_pct",
    "tc_v_per_k", "tc_tol_v_per_k", "pd_w", "tj_max_c", "theta_ja_k_per_w", "if_max_a", "i_min_a",
)  # fmt: skip

#: The numeric columns, all SI floats.
NUMERIC_COLUMNS: tuple[str, ...] = PART_COLUMNS[4:]

REQUIRED_FORWARD: tuple[str, ...] = ("is_a", "n", "pd_w")
#: Further fields a family requires (DESIGN §3: silicon's 1.11 eV gives an LED a tempco of
#: the wrong sign, so an LED must give its own band gap, and its Tjmax).
REQUIRED_EXTRA: dict[str, tuple[str, ...]] = {"led": ("eg_ev", "tj_max_c")}
REQUIRED_BREAKDOWN: tuple[str, ...] = ("vz_v", "izt_a", "zzt_ohm", "izk_a", "zzk_ohm", "pd_w")

CONTRACT_DEFAULTS: dict[str, float] = {
    "eg_ev": 1.11,
    "xti": 3.0,
    "rs_ohm": 0.0,
    "vf_tol_v": 0.0,
    "tnom_c": 25.0,
    "vz_tol_pct": 0.0,
    "tc_v_per_k": 0.0,
    "tc_tol_v_per_k": 0.0,
    "tj_max_c": 150.0,
}

#: Largest knee exponent ``m = ln(zzk/zzt)/ln(izt/izk)`` a part may have (DESIGN §3, version
#: 2): an impedance rising faster than ``(izt/I)^4`` below the test current is no real
#: zener's (common practice, no source), and would put the curve far below 0 V within a
#: decade of the knee.
MAX_KNEE_EXPONENT = 4.0
