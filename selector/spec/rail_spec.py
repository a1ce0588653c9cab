"""The rail requirement: what the rail must hold, over which conditions.

:class:`RailSpec` is the validated, SI-unit form every physics and search function takes.
:func:`load_spec` builds it from the spec TOML of DESIGN §4 and from command-line
overrides, and refuses anything malformed, contradictory or absurd with one
:class:`~selector.errors.SpecError` line that names the file and key, or the option.
The spec's keys are :mod:`selector.spec.spec_keys`, its values as written
:mod:`selector.spec.spec_entries`, its sections' checks :mod:`selector.spec.spec_sections`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

from selector.errors import SpecError, SpecOptionError
from selector.spec.list_statuses import LIST_STATUSES, UNUSABLE_STATUSES
from selector.spec.spec_entries import (
    MAX_SPEC_BYTES,
    Entry,
    file_entries,
    missing_message,
    option_entries,
    read_toml,
    volts,
)
from selector.spec.spec_keys import OPTION_FOR_KEY, RAIL_FORMS, REQUIRED_KEYS
from selector.spec.spec_sections import (
    FULL_POWER_AMBIENT_C,
    ZERO_POWER_AMBIENT_C,
    ambient_fields,
    choose_rail_form,
    load_fields,
    rail_fields,
    resistor_fields,
    search_fields,
    supply_fields,
)


@dataclass(frozen=True)
class RailSpec:
    """A validated rail requirement, all quantities in SI units.

    Attributes
    ----------
    target_v : float [V]
        Wanted rail voltage: as written, or the middle of a ``[rail] min, max`` window.
    tolerance_v : float [V]
        Allowed worst-case deviation from ``target_v`` (a percentage is converted; for a
        window, half its width).
    supply_min_v, supply_max_v : float [V]
        Supply range.
    supply_nominal_v : float [V]
        Nominal supply; the midpoint of the range unless the spec gives one.
    load_kind : str
        ``"current"`` (``load_min``/``load_max`` in A) or ``"resistance"`` (in Ω).
    load_min, load_max : float [A] or [Ω]
        Load range as written. For a resistive load the least current is at ``load_max``.
    ambient_min_c, ambient_max_c : float [°C]
        Ambient temperature range.
    resistor_series : str
        IEC 60063 series name, ``"E3"`` … ``"E192"``; default ``"E24"``.
    resistor_tolerance : float [1]
        Fractional tolerance, 0.01 for 1 %.
    resistor_rating_w : float [W]
        Power rating of the series resistor; default 0.25 W.
    max_parts : int
        Most elements in one stack; default 3.
    families : tuple of str or None
        Families the search may use; None for all.
    list_name : str or None
        Approved-parts list the search must respect; None for the whole library.
    statuses : tuple of str or None
        Usable list statuses; None for the default (approved, conditional).
    min_current_a : float [A]
        Least stack current at every corner; default 0.
    min_margin : float [1]
        Least dissipation margin at every corner; default 0.
    resistor_fixed_ohm : float or None [Ω]
        A resistor fixed by the user instead of chosen.
    resistor_min_ohm, resistor_max_ohm : float [Ω]
        Range the resistor choice may use; default 1 Ω … 10 MΩ.
    resistor_tcr_per_k : float [1/K]
        Series-resistor temperature coefficient (``"100 ppm/K"`` is 1e-4); default 0.
    resistor_full_power_ambient_c, resistor_zero_power_ambient_c : float [°C]
        The resistor's derating: full rating up to the first, none from the second,
        linear between (DESIGN §3); defaults 70 °C and 155 °C.
    zener_izt_limit : float or None [1]
        Most zener current as a multiple of its test current, a feasibility limit; None
        (the default) sets none.
    rail_window : bool
        Whether the spec gave the rail as ``[rail] min, max`` (then shown that way).
    rail_nominal_v : float or None [V]
        A nominal rail voltage given for display only.
    """

    target_v: float
    tolerance_v: float
    supply_min_v: float
    supply_max_v: float
    supply_nominal_v: float
    load_kind: str
    load_min: float
    load_max: float
    ambient_min_c: float
    ambient_max_c: float
    resistor_series: str = "E24"
    resistor_tolerance: float = 0.01
    resistor_rating_w: float = 0.25
    max_parts: int = 3
    families: tuple[str, ...] | None = None
    list_name: str | None = None
    statuses: tuple[str, ...] | None = None
    min_current_a: float = 0.0
    min_margin: float = 0.0
    resistor_fixed_ohm: float | None = None
    resistor_min_ohm: float = 1.0
    resistor_max_ohm: float = 10e6
    resistor_tcr_per_k: float = 0.0
    resistor_full_power_ambient_c: float = FULL_POWER_AMBIENT_C
    resistor_zero_power_ambient_c: float = ZERO_POWER_AMBIENT_C
    zener_izt_limit: float | None = None
    rail_window: bool = False
    rail_nominal_v: float | None = None

    @property
    def rail_min_v(self) -> float:
        """Least rail voltage the window allows [V]."""
        return self.target_v - self.tolerance_v

    @property
    def rail_max_v(self) -> float:
        """Greatest rail voltage the window allows [V]."""
        return self.target_v + self.tolerance_v


#: IEC 62368-1:2018, Table 4: ES1 limit for DC voltage [V].
ES1_DC_LIMIT_V = 60.0


def load_spec(
    path: str | Path | None = None,
    overrides: Mapping[str, object] | None = None,
    *,
    table: Mapping[str, object] | None = None,
    table_label: str = "spec",
) -> RailSpec:
    """Read and validate a rail requirement from a spec TOML file and/or overrides.

    Parameters
    ----------
    path : str or Path or None
        Spec TOML file (DESIGN §4); None when every required key comes from overrides.
    overrides : mapping of str to object, optional
        ``"section.key"`` (e.g. ``"supply.min"``) → the text or number the user typed;
        each replaces the file's value. ``None`` values are ignored.
    table : mapping, optional
        The spec as a dict shaped like the TOML (``{"rail": {"target": "5 V"}, …}``),
        instead of a file; messages name it ``table_label``.

    Returns
    -------
    RailSpec
        All quantities in SI units; a percent rail tolerance is converted to volts as
        ``target · pct / 100``.

    Raises
    ------
    SpecError
        One line naming the file and key (``rail.toml: [supply] min: …``), exit 1, or the
        option (``--supply-min: …``): then a :class:`~selector.errors.SpecOptionError`,
        exit 2.
    """
    entries: dict[str, Entry] = {}
    file_label = None
    if path is not None:
        file_label, table = read_toml(path)
    elif table is not None:
        file_label, table = table_label, dict(table)
    if table is not None:
        entries.update(file_entries(file_label, table))
    entries.update(option_entries(overrides or {}))
    choose_rail_form(entries)
    window = "rail.min" in entries or "rail.max" in entries
    required = list(RAIL_FORMS[1 if window else 0]) + [d for d in REQUIRED_KEYS if not d.startswith("rail.")]
    missing = [dotted for dotted in required if dotted not in entries]
    if missing:
        raise (SpecError if file_label else SpecOptionError)(missing_message(file_label, missing))
    fields = rail_fields(entries)
    fields.update(supply_fields(entries, fields["target_v"]))
    fields.update(load_fields(entries))
    fields.update(ambient_fields(entries))
    fields.update(resistor_fields(entries))
    fields.update(search_fields(entries))
    return RailSpec(**fields)


#: A rail tolerance above this fraction of the target is warned about: a bare number is
#: volts, so "3" meant as 3 % reads as 3 V (common practice, no source: few rails allow 20 %).
TOLERANCE_TYPO_FRACTION = 0.20


def spec_warnings(spec: RailSpec) -> list[str]:
    """Likely slips in a spec, one line each: a tolerance so wide it was probably meant as
    a percentage."""
    warnings = []
    if not spec.rail_window and spec.target_v > 0 and spec.tolerance_v > TOLERANCE_TYPO_FRACTION * spec.target_v:
        warnings.append(
            f"[rail] tolerance: {volts(spec.tolerance_v)} is {spec.tolerance_v / spec.target_v:.0%} of the "
            f"{volts(spec.target_v)} target (a bare number is volts); write '{spec.tolerance_v:g} %' if a "
            "percentage was meant"
        )
    return warnings


def spec_cautions(spec: RailSpec) -> list[str]:
    """Safety cautions a spec calls for, one line each (empty when none).

    A supply above 60 V DC exceeds the ES1 limit of IEC 62368-1:2018, Table 4.
    """
    cautions = []
    if spec.supply_max_v > ES1_DC_LIMIT_V:
        cautions.append(
            f"the supply reaches {volts(spec.supply_max_v)}, above the 60 V DC ES1 limit of "
            "IEC 62368-1: follow local codes and licensed practice for hazardous voltages"
        )
    return cautions


__all__ = [
    "LIST_STATUSES",
    "MAX_SPEC_BYTES",
    "OPTION_FOR_KEY",
    "REQUIRED_KEYS",
    "RailSpec",
    "UNUSABLE_STATUSES",
    "load_spec",
    "spec_cautions",
    "spec_warnings",
]
