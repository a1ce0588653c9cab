"""What ``parts list`` and ``parts show`` print: part rows and one part's full sheet.

The characteristic voltages (forward voltage at 1 mA and 10 mA, zener voltage at Izt,
all with the junction at 25 °C and nominal tolerance) come from the element models in
:mod:`selector.physics.devices`; this module only chooses the points and formats the results.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from selector.catalog.parts_import import RULES
from selector.physics.partset import PartSet
from selector.spec import units
from selector.spec.part_fields import CONTRACT_DEFAULTS, NUMERIC_COLUMNS

#: Junction temperature of the characteristic voltages [°C].
SHEET_JUNCTION_C = 25.0
#: Forward currents of the characteristic voltages [A].
FORWARD_POINTS_A: tuple[float, ...] = (1e-3, 10e-3)

FORWARD_COLUMNS = ("is_a", "n", "rs_ohm", "eg_ev", "xti", "tnom_c", "vf_tol_v")
FORWARD_COLUMNS = FORWARD_COLUMNS + ("tc_tol_v_per_k",)
ZENER_COLUMNS = ("vz_v", "izt_a", "zzt_ohm", "izk_a", "zzk_ohm", "vz_tol_pct", "tc_v_per_k", "tc_tol_v_per_k", "tnom_c")
RATING_COLUMNS = ("pd_w", "tj_max_c", "theta_ja_k_per_w", "if_max_a", "i_min_a")


def quantity_text(column: str, value: float | None) -> str:
    """A column's value with its unit, e.g. ``2.19 nA``; empty when not given."""
    if value is None or value != value:
        return ""
    kind = RULES[column].kind
    if kind.prefixable and kind.symbol:
        return units.format_quantity(float(value), kind.symbol)
    return f"{float(value):.6g} {kind.symbol}".strip()


def characteristic_voltages(parts: PartSet, currents_a: np.ndarray) -> np.ndarray:
    """Every part's voltage at the given currents, junction at 25 °C, nominal tolerance.

    Parameters
    ----------
    parts : PartSet
    currents_a : array [A]
        One current per part (a zener's is usually its Izt).

    Returns
    -------
    array [V]
    """
    from selector.physics.devices import element_voltage_slopes

    if len(parts) == 0:
        return np.empty(0)
    voltage, _, _ = element_voltage_slopes(parts, np.arange(len(parts)), currents_a, SHEET_JUNCTION_C)
    return voltage


def list_rows(records: Sequence[Mapping[str, object]]) -> list[dict[str, str]]:
    """Rows of ``parts list``: part, family, package, characteristic point, rating, description."""
    from selector.physics.part_checks import forward_tempco_v_per_k

    parts = PartSet.from_records(records)
    currents = np.where(parts.is_zener, parts.izt_a, FORWARD_POINTS_A[0])
    voltages = characteristic_voltages(parts, currents)
    tempco = forward_tempco_v_per_k(parts)
    rows = []
    for index, record in enumerate(records):
        symbol = "Vz" if parts.is_zener[index] else "Vf"
        rows.append(
            {
                "part": str(record["part"]),
                "family": str(record["family"]),
                "package": str(record["package"] or ""),
                "at 25 °C": f"{symbol} {units.format_quantity(voltages[index], 'V', 3)} "
                f"@ {units.format_quantity(currents[index], 'A', 3)}",
                "tempco": _tempco_text(tempco[index], parts.is_zener[index] and not parts.given("tc_v_per_k")[index]),
                "pd": quantity_text("pd_w", record["pd_w"]),
                "description": str(record["description"] or ""),
            }
        )
    return rows


def _tempco_text(value: float, defaulted: bool) -> str:
    return "TC not given" if defaulted else f"{value * 1e3:+.2f} mV/K"


def part_sheet(record: Mapping[str, object]) -> list[tuple[str, str]]:
    """Every parameter of one part with its unit, then derived values, as (label, text).

    Parameters not given show the contract default that applies (DESIGN §3).
    """
    parts = PartSet.from_records([record])
    zener = bool(parts.is_zener[0])
    lines: list[tuple[str, str]] = [
        ("part", str(record["part"])),
        ("family", str(record["family"])),
        ("description", str(record["description"] or "")),
        ("package", str(record["package"] or "")),
    ]
    shown = (ZENER_COLUMNS if zener else FORWARD_COLUMNS) + RATING_COLUMNS
    for column in shown:
        given = record.get(column)
        if given is not None:
            lines.append((column, quantity_text(column, given)))
        elif column in CONTRACT_DEFAULTS:
            lines.append((column, f"{quantity_text(column, CONTRACT_DEFAULTS[column])} (default)"))
        elif column == "theta_ja_k_per_w":
            lines.append((column, "(from tj_max_c and pd_w)"))
        elif column == "if_max_a":
            lines.append((column, "(no limit given)"))
        elif column == "i_min_a":
            lines.append((column, "(izk_a)" if zener else "0 A (default)"))
        else:
            lines.append((column, "(not given)"))
    for column in NUMERIC_COLUMNS:
        if column not in shown and record.get(column) is not None:
            lines.append((f"{column} (not used by {record['family']})", quantity_text(column, record[column])))
    lines.append(("source", str(record.get("source") or "")))
    if record.get("model_extra"):
        lines.append(("model card, unused", str(record["model_extra"])))
    lines.append(("derived θJA", quantity_text("theta_ja_k_per_w", parts.theta_ja_k_per_w[0])))
    if zener:
        voltage = characteristic_voltages(parts, parts.izt_a)[0]
        lines.append((f"Vz at Izt ({quantity_text('izt_a', parts.izt_a[0])}), 25 °C", units.format_quantity(voltage, "V", 5)))
        lines.append(("Vz tempco", _tempco_text(parts.tc_v_per_k[0], not parts.given("tc_v_per_k")[0])))
        lines += _knee_lines(parts)
    else:
        for current in FORWARD_POINTS_A:
            voltage = characteristic_voltages(parts, np.array([current]))[0]
            lines.append((f"Vf at {units.format_quantity(current, 'A')}, 25 °C", units.format_quantity(voltage, "V", 5)))
        from selector.physics.part_checks import forward_tempco_v_per_k

        lines.append(("Vf tempco at 1 mA, 25 °C", _tempco_text(forward_tempco_v_per_k(parts)[0], False)))
    return lines


def _knee_lines(parts: PartSet) -> list[tuple[str, str]]:
    """A zener's power-law knee (DESIGN §3 v2): its exponent, the modelled impedance at izk,
    izt and 5 × izt to compare with the datasheet, and where the curve reaches 0 V."""
    from selector.physics.part_checks import (
        IMPEDANCE_POINTS_OF_IZT,
        zener_impedance_ohm,
        zener_zero_crossing_a,
    )

    lines = [("knee exponent m = ln(zzk/zzt)/ln(izt/izk)", f"{parts.zener_knee_exponent[0]:.4g}")]
    points = [("izk", parts.izk_a[0])] + [(f"{k:g} × izt" if k != 1 else "izt", k * parts.izt_a[0])
                                          for k in IMPEDANCE_POINTS_OF_IZT]  # fmt: skip
    for name, current in points:
        impedance = zener_impedance_ohm(parts, np.array([current]))[0]
        lines.append((f"modelled impedance at {name} ({units.format_quantity(current, 'A', 3)})",
                      units.format_quantity(impedance, "Ω", 4)))  # fmt: skip
    crossing = zener_zero_crossing_a(parts)[0]
    lines.append(("modelled curve reaches 0 V at", units.format_quantity(crossing, "A", 3) if crossing > 0
                  else "never (it ends above 0 V)"))  # fmt: skip
    return lines


def format_table(rows: Sequence[Mapping[str, str]], columns: Sequence[str]) -> str:
    """Plain fixed-width text table with a header line; the last column is not padded."""
    widths = [max([len(column)] + [len(row[column]) for row in rows]) for column in columns]
    lines = []
    for cells in [dict(zip(columns, columns, strict=True)), *rows]:
        padded = [cells[column].ljust(width) for column, width in zip(columns[:-1], widths, strict=False)]
        lines.append("  ".join([*padded, cells[columns[-1]]]).rstrip())
    return "\n".join(lines)
