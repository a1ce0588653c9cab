"""Turning datasheet points and a fit of them into a part record for the library.

The fit itself (least squares of the forward element's equation) is
:func:`selector.physics.fitting.fit_forward_points`; this module reads the points as the user
writes them, and merges the fitted ``is_a``, ``n`` and ``rs_ohm`` with the part's other
fields (kept from the library, or given as options) before the usual validation.
"""

from __future__ import annotations

import hashlib
from collections.abc import Mapping, Sequence

import numpy as np

from selector.catalog.part_validation import RawRow, validate_rows
from selector.catalog.parts_import import PartsFile, data_warnings
from selector.errors import OptionError
from selector.spec import units
from selector.spec.part_fields import BREAKDOWN_FAMILIES

#: Label of a fit in messages and in the import log.
FIT_LABEL = "datasheet points"


def parse_point(text: str, option: str = "--point") -> tuple[float, float]:
    """Read one datasheet point ``"0.62 V @ 1 mA"`` as (forward voltage [V], current [A]).

    Bare numbers are volts and amperes. Raises :class:`OptionError` naming the point.
    """
    voltage_text, at, current_text = text.partition("@")
    if not at:
        raise OptionError(f"{option}: '{text[:60]}' is not VOLTAGE @ CURRENT, e.g. '0.62 V @ 1 mA'")
    try:
        voltage = units.parse_quantity(voltage_text, units.VOLTAGE)
        current = units.parse_quantity(current_text, units.CURRENT)
    except units.QuantityError as error:
        raise OptionError(f"{option}: '{text.strip()[:60]}': {error}") from None
    if not voltage > 0 or not current > 0:
        raise OptionError(f"{option}: '{text.strip()[:60]}': voltage and current must be positive")
    return voltage, current


def parse_points(texts: Sequence[str]) -> tuple[np.ndarray, np.ndarray]:
    """Two or three datasheet points as arrays sorted by current: voltage [V], current [A]."""
    if not 2 <= len(texts) <= 3:
        raise OptionError(f"--point: give two or three points, not {len(texts)}")
    points = sorted((parse_point(text) for text in texts), key=lambda point: point[1])
    voltages = np.array([voltage for voltage, _ in points])
    currents = np.array([current for _, current in points])
    if len(set(currents.tolist())) != len(currents):
        raise OptionError("--point: two points have the same current")
    return voltages, currents


def fitted_parts_file(
    part: str,
    fitted: Mapping[str, float],
    *,
    existing: Mapping[str, object] | None,
    overrides: Mapping[str, object],
    points_text: Sequence[str],
) -> PartsFile:
    """The validated record of a part after a fit.

    Parameters
    ----------
    part : str
        Part id.
    fitted : mapping
        ``is_a`` [A], ``n`` [1], ``rs_ohm`` [Ω] from the fit; ``tnom_c`` is 25 °C.
    existing : mapping or None
        The part's library record, whose other fields are kept.
    overrides : mapping of column → value
        Options such as ``family`` or ``pd_w``; they beat the existing record.
    points_text : sequence of str
        The points as written, hashed for the import log.
    """
    cells: dict[str, object] = {"part": part}
    if existing:
        cells.update({column: value for column, value in existing.items() if value is not None})
    cells.update({column: value for column, value in overrides.items() if value not in (None, "")})
    if str(cells.get("family", "")).strip().lower() in BREAKDOWN_FAMILIES:
        raise OptionError(f"{part}: a zener has no forward fit; use a forward family (--family)")
    cells.update(fitted)
    cells["tnom_c"] = 25.0
    if not cells.get("family"):
        raise OptionError(
            f"--family: {part} is not in the library; give its family and ratings (--set pd_w=...)"
        )
    records = validate_rows([RawRow(0, cells)], f"fit of {part}")
    digest = hashlib.sha256("\n".join(points_text).encode("utf-8")).hexdigest()
    label = f"{FIT_LABEL}: " + "; ".join(points_text)
    return PartsFile(label, digest, records, data_warnings(records, FIT_LABEL))
