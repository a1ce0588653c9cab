"""IEC 60063 preferred-number series for resistors (E3 … E192).

References
----------
.. [1] IEC 60063:2015, *Preferred number series for resistors and capacitors*, value tables.
       E3–E24 carry two significant figures and are defined by their table, which departs
       from rounded 10**(i/24) at 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2. E48–E192
       carry three significant figures, equal to 10**(i/N) rounded, except the E192
       entry 9.20 where rounding gives 9.19.
"""

from __future__ import annotations

import numpy as np

from selector.errors import OptionError

_E24 = (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
        3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1)  # fmt: skip

#: Series name → steps per decade.
SERIES_STEPS: dict[str, int] = {"E3": 3, "E6": 6, "E12": 12, "E24": 24, "E48": 48, "E96": 96, "E192": 192}

#: Where the standard's three-figure tables depart from rounding 10**(i/N) [1].
_THREE_FIGURE_EXCEPTIONS = {9.19: 9.20}


def decade_values(series: str) -> np.ndarray:
    """The mantissas of one decade of a series, from 1.0 up to below 10.

    Parameters
    ----------
    series : str
        ``"E3"``, ``"E6"``, ``"E12"``, ``"E24"``, ``"E48"``, ``"E96"`` or ``"E192"``
        (case-insensitive).

    Returns
    -------
    ndarray of float
        Ascending mantissas in [1, 10).
    """
    name = series.strip().upper()
    if name not in SERIES_STEPS:
        known = ", ".join(SERIES_STEPS)
        raise OptionError(f"unknown resistor series '{series}'; known: {known}")
    steps = SERIES_STEPS[name]
    if steps <= 24:
        return np.array(_E24[:: 24 // steps])
    exact = 10.0 ** (np.arange(steps) / steps)
    rounded = np.round(exact, 2)
    return np.array([_THREE_FIGURE_EXCEPTIONS.get(float(v), float(v)) for v in rounded])


def series_values(series: str, low_ohm: float = 1.0, high_ohm: float = 10e6) -> np.ndarray:
    """Every value of a series between two limits, inclusive.

    Parameters
    ----------
    series : str
        Series name, e.g. ``"E24"``.
    low_ohm, high_ohm : float [Ω]
        Inclusive limits; the contract's resistor choice uses 1 Ω … 10 MΩ.

    Returns
    -------
    ndarray of float [Ω]
        Ascending values, each a decade mantissa times a power of ten, rounded so that
        ``4.7e3`` is exactly the float 4700.0.
    """
    if not (low_ohm > 0 and high_ohm >= low_ohm):
        raise OptionError(f"resistor range {low_ohm!r} … {high_ohm!r} Ω is empty or not positive")
    mantissas = decade_values(series)
    first = int(np.floor(np.log10(low_ohm))) - 1
    last = int(np.ceil(np.log10(high_ohm))) + 1
    decades = np.arange(first, last + 1)
    values = np.array([float(f"{m:.2f}e{d}") for d in decades for m in mantissas])
    tolerance = 1e-9
    keep = (values >= low_ohm * (1 - tolerance)) & (values <= high_ohm * (1 + tolerance))
    return values[keep]


def nearest_series_value(resistance_ohm: float, series: str) -> float:
    """The series value nearest on a log scale to a resistance [Ω]."""
    candidates = series_values(series, resistance_ohm / 10, resistance_ohm * 10)
    return float(candidates[np.argmin(np.abs(np.log(candidates / resistance_ohm)))])
