"""The rail requirement: what the rail must hold, over which conditions.

:class:`RailSpec` is the validated, SI-unit form every physics and search function takes.
Loading from the spec TOML of DESIGN §4 and from command-line options lives here too.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class RailSpec:
    """A validated rail requirement, all quantities in SI units.

    Attributes
    ----------
    target_v : float [V]
        Wanted rail voltage.
    tolerance_v : float [V]
        Allowed worst-case deviation from ``target_v`` (a percentage is converted).
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
        IEC 60063 series name, ``"E6"`` … ``"E192"``; default ``"E24"``.
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
