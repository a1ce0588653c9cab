"""Reading SPICE-format diode ``.model`` cards into part records.

Accepted: ``.model NAME D(IS=2.5n N=1.8 RS=0.6)`` or without parentheses, ``+``
continuation lines, ``*`` comment lines and ``;`` trailing comments, any letter case,
commas or spaces between parameters. Numbers take the SPICE scale suffixes f p n u m k
meg g t (``m`` is milli, ``meg`` mega); letters after the number and suffix are ignored,
as the format does (``2.5nA`` is 2.5e-9).

Parameters used: IS N RS EG XTI TNOM (forward elements) and BV IBV (zeners). Others
(CJO, M, TT, …) are kept as text in the part's ``model_extra`` with a warning. A card
carries no family and no ratings: those come from the caller (an option or a ratings
CSV keyed by part id) and are merged before the usual row validation.

Zener mapping (``family = zener``; the card must give BV). The card's breakdown branch
has the SPICE form ``I = IBV·exp((V − BV)/(N·Vt))`` plus the ohmic drop ``RS·I``, so its
dynamic resistance is ``r_card(I) = a/I + RS`` with ``a = N·Vt(TNOM)``. With the test
current ``izt_a`` (given, else IBV) and the knee current ``izk_a`` (given, else
izt_a/10) the datasheet points are

    vz_v    = BV + a·ln(izt_a/IBV) + RS·izt_a
    zzt_ohm = a/izt_a + RS
    zzk_ohm = a/izk_a + RS

Where the two curves meet: the contract's breakdown element (DESIGN §3, version 2) has the
power-law dynamic resistance ``zzt·(I/izt)^(−m)`` through both points, so it equals the
card's voltage at izt and its slope at izt and at izk. With ``RS = 0`` the exponent is
``m = 1`` and the power law *is* the card's logarithm: the curves are the same at every
current. With ``RS > 0`` they part between the points, most at izk, by
``∫ (r_pl − r_card) dI`` from izt to izk: 3.2 mV for ``N = 1.2, RS = 2 Ω`` at 5 mA / 0.5 mA
(the test's card), 13 mV for ``N = 2, RS = 10 Ω``. Limits: the card has no temperature
coefficient (give ``tc_v_per_k``) and no tolerance (give ``vz_tol_pct``); the
exponential breakdown is a fit of a real zener's knee only near IBV, and ``a = N·Vt`` is
far smaller than most real low-voltage zeners' soft knee, so a card fitted at one current
says little about the knee.

References
----------
.. [1] T. Quarles et al., *SPICE3 Version 3f3 User's Manual*, UC Berkeley, 1993: the
       ``.model`` card syntax, scale factors, diode parameters and their defaults
       (IS 1e-14 A, N 1, RS 0, EG 1.11 eV, XTI 3, BV infinite, IBV 1e-3 A), TNOM 27 °C.
       The breakdown branch with ``N·Vt`` is from memory of the SPICE3 diode code.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from decimal import Decimal, DecimalException
from pathlib import Path

from selector.catalog.part_validation import RawRow, validate_rows
from selector.catalog.parts_import import (
    PartsFile,
    data_warnings,
    decode_text,
    file_digest,
    read_csv_rows,
    read_input_bytes,
)
from selector.errors import InputDataError
from selector.physics.devices import thermal_voltage_v
from selector.spec import units
from selector.spec.part_fields import FORWARD_FAMILIES

#: SPICE scale suffixes as powers of ten (``meg`` must be tried before ``m``).
SPICE_SCALE: dict[str, int] = {"f": -15, "p": -12, "n": -9, "u": -6, "m": -3, "k": 3, "meg": 6, "g": 9, "t": 12}
_SPICE_NUMBER = re.compile(r"^([+-]?(?:\d+\.?\d*|\.\d+)(?:e[+-]?\d+)?)(meg|[fpnumkgt])?[a-z]*$", re.IGNORECASE)
_PARAMETER = re.compile(r"([A-Za-z_][A-Za-z0-9_]*)\s*=\s*([^\s=]+)")

#: Card parameters the tool uses, and the part column each feeds for a forward element.
FORWARD_PARAMETERS: dict[str, str] = {
    "IS": "is_a", "N": "n", "RS": "rs_ohm", "EG": "eg_ev", "XTI": "xti", "TNOM": "tnom_c",
}  # fmt: skip
BREAKDOWN_PARAMETERS: tuple[str, ...] = ("BV", "IBV")
USED_PARAMETERS: tuple[str, ...] = tuple(FORWARD_PARAMETERS) + BREAKDOWN_PARAMETERS

#: SPICE defaults for parameters a card leaves out [1]; TNOM per DESIGN §3.
CARD_DEFAULTS: dict[str, float] = {
    "IS": 1e-14, "N": 1.0, "RS": 0.0, "EG": 1.11, "XTI": 3.0, "TNOM": 27.0, "IBV": 1e-3,
}  # fmt: skip


@dataclass(frozen=True)
class ModelCard:
    """One diode ``.model`` card: its name, first line, and parameters by upper-case name."""

    name: str
    line: int
    values: dict[str, float]
    texts: dict[str, str] = field(default_factory=dict)

    def value(self, parameter: str) -> float:
        """A parameter's value, or the SPICE default when the card leaves it out."""
        return self.values.get(parameter, CARD_DEFAULTS.get(parameter, math.nan))

    def extra_text(self, parameters: Sequence[str]) -> str:
        """``NAME=value`` text of the given parameters, in card order."""
        return " ".join(f"{name}={self.texts[name]}" for name in self.texts if name in parameters)


def parse_spice_number(text: str) -> float:
    """Read a SPICE number such as ``2.5n``, ``1MEG``, ``10mV`` or ``1e-14``.

    Raises
    ------
    ValueError
        When the text is not a finite SPICE number.
    """
    match = _SPICE_NUMBER.match(text.strip())
    if not match:
        raise ValueError(f"'{units.shown(text[:40])}' is not a SPICE number")
    number, suffix = match.group(1), (match.group(2) or "").lower()
    try:
        value = float(Decimal(number).scaleb(SPICE_SCALE.get(suffix, 0)))
    except (DecimalException, OverflowError):
        # decimal.Overflow (an exponent past the decimal context) is not an OverflowError.
        raise ValueError(f"'{text[:40]}' is out of range") from None
    if not math.isfinite(value):
        raise ValueError(f"'{text[:40]}' is out of range")
    return value


def _statements(text: str) -> list[tuple[int, str]]:
    """Logical statements with their first line: comments dropped, ``+`` lines joined."""
    statements: list[tuple[int, str]] = []
    for number, raw in enumerate(text.splitlines(), start=1):
        line = raw.split(";", 1)[0].strip()
        if not line or line.startswith("*"):
            continue
        if line.startswith("+"):
            if statements:
                first, joined = statements[-1]
                statements[-1] = (first, f"{joined} {line[1:]}")
            continue
        statements.append((number, line))
    return statements


def parse_model_cards(text: str, label: str) -> tuple[list[ModelCard], list[str]]:
    """Every diode card in a text, and warnings for what was skipped.

    Raises
    ------
    InputDataError
        One line per problem (``FILE:LINE: NAME: message``) for malformed cards.
    """
    cards: list[ModelCard] = []
    warnings: list[str] = []
    errors: list[str] = []
    for line, statement in _statements(text):
        if not statement.lower().startswith(".model"):
            if statement.lower().split()[0] not in (".end", ".lib", ".endl"):
                warnings.append(f"{label}:{line}: not a .model card; ignored")
            continue
        body = statement[len(".model"):].replace("(", " ").replace(")", " ").replace(",", " ")
        head = body.split(None, 2)
        if len(head) < 2:
            errors.append(f"{label}:{line}: .model needs a name and a type, e.g. '.model D-X1 D(IS=1n)'")
            continue
        name, kind = head[0], head[1]
        if "=" in kind:
            errors.append(f"{label}:{line}: {name}: the model type (D) is missing before '{kind}'")
            continue
        if kind.upper() != "D":
            warnings.append(f"{label}:{line}: {name}: a {kind.upper()} model, not a diode (D); ignored")
            continue
        rest = head[2] if len(head) > 2 else ""
        card_errors = []
        values: dict[str, float] = {}
        texts: dict[str, str] = {}
        leftover = _PARAMETER.sub(" ", rest).strip()
        if leftover:
            card_errors.append(f"cannot read '{leftover.split()[0][:40]}' (parameters are NAME=value)")
        for key, value_text in _PARAMETER.findall(rest):
            parameter = key.upper()
            if parameter in texts:
                card_errors.append(f"{parameter}: given twice")
                continue
            texts[parameter] = value_text
            try:
                values[parameter] = parse_spice_number(value_text)
            except ValueError as error:
                if parameter in USED_PARAMETERS:
                    card_errors.append(f"{parameter}: {error}")
        errors.extend(f"{label}:{line}: {name}: {message}" for message in card_errors)
        if not card_errors:
            cards.append(ModelCard(name, line, values, texts))
    if errors:
        raise InputDataError("\n".join(errors))
    return cards, warnings


def _quantity_or_none(cells: Mapping[str, object], column: str, kind: units.Kind) -> float | None:
    value = cells.get(column)
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    try:
        return units.parse_quantity(value, kind)
    except units.QuantityError:
        return None  # reported by the row validation


def card_cells(card: ModelCard, overrides: Mapping[str, object]) -> tuple[dict[str, object], list[str]]:
    """The parts-CSV cells of a card once merged with ``overrides``, and its warnings.

    Parameters
    ----------
    card : ModelCard
    overrides : mapping of column → text or number
        Family, ratings and anything else the caller gives; they win over the card.
    """
    family = str(overrides.get("family") or "").strip().lower()
    unused = [name for name in card.texts if name not in USED_PARAMETERS]
    warnings = []
    if unused:
        warnings.append(f"{card.name}: {', '.join(unused)} not used (kept as text)")
    cells: dict[str, object] = {"part": card.name}
    if family == "zener":
        cells.update(_zener_cells(card, overrides))
        cells["model_extra"] = card.extra_text(list(card.texts))
    else:
        for parameter, column in FORWARD_PARAMETERS.items():
            cells[column] = card.value(parameter)
        if family in FORWARD_FAMILIES and "BV" in card.values:
            unused = unused + list(BREAKDOWN_PARAMETERS)
        cells["model_extra"] = card.extra_text(unused)
    cells.update({column: value for column, value in overrides.items() if value not in (None, "")})
    return cells, warnings


def _zener_cells(card: ModelCard, overrides: Mapping[str, object]) -> dict[str, object]:
    """Datasheet points of the card's breakdown branch (see the module docstring)."""
    if "BV" not in card.values:
        return {}
    tnom_c = card.value("TNOM")
    slope_v = card.value("N") * float(thermal_voltage_v(tnom_c))
    rs_ohm, ibv_a = card.value("RS"), card.value("IBV")
    if not (ibv_a > 0 and slope_v > 0 and rs_ohm >= 0):
        return {"vz_v": card.values["BV"], "tnom_c": tnom_c}
    izt_a = _quantity_or_none(overrides, "izt_a", units.CURRENT) or ibv_a
    izk_a = _quantity_or_none(overrides, "izk_a", units.CURRENT) or izt_a / 10.0
    if izt_a <= 0 or izk_a <= 0:
        return {"vz_v": card.values["BV"], "tnom_c": tnom_c}
    return {
        # ln(izt) − ln(IBV), not ln(izt/IBV): the quotient of far-apart values can
        # underflow to 0 (a math domain error) or overflow.
        "vz_v": card.values["BV"] + slope_v * (math.log(izt_a) - math.log(ibv_a)) + rs_ohm * izt_a,
        "izt_a": izt_a,
        "izk_a": izk_a,
        "zzt_ohm": slope_v / izt_a + rs_ohm,
        "zzk_ohm": slope_v / izk_a + rs_ohm,
        "tnom_c": tnom_c,
    }


def read_ratings_csv(path: str | Path) -> tuple[dict[str, RawRow], list[str]]:
    """A ratings CSV: rows keyed by part id, any parts columns (``family``, ``pd_w``, …)."""
    label = str(path)
    _, rows, warnings = read_csv_rows(decode_text(read_input_bytes(path), label), label, required=("part",))
    by_part: dict[str, RawRow] = {}
    errors = []
    for row in rows:
        part = str(row.cells.get("part", "")).strip()
        if part in by_part:
            errors.append(f"{label}:{row.line}: part: '{part}' appears twice")
        by_part[part] = row
    if errors:
        raise InputDataError("\n".join(errors))
    return by_part, warnings


def load_model_cards(
    path: str | Path,
    *,
    overrides: Mapping[str, object] | None = None,
    ratings_path: str | Path | None = None,
) -> PartsFile:
    """Read a model-card file into validated part records.

    Parameters
    ----------
    path : path
        Text file with one or more ``.model NAME D(...)`` cards.
    overrides : mapping of column → value, optional
        Given to every card (e.g. ``family``, ``pd_w``); beats the card's own values.
    ratings_path : path, optional
        A CSV keyed by ``part`` whose cells beat ``overrides`` for that part.

    Raises
    ------
    InputDataError
        One line per problem, for the card file or the merged records.
    """
    label = str(path)
    data = read_input_bytes(path)
    cards, warnings = parse_model_cards(decode_text(data, label), label)
    if not cards:
        raise InputDataError(f"{label}: no diode .model card found")
    ratings: dict[str, RawRow] = {}
    if ratings_path is not None:
        ratings, rating_warnings = read_ratings_csv(ratings_path)
        warnings += rating_warnings
        names = {card.name for card in cards}
        warnings += [
            f"{ratings_path}:{row.line}: part {part}: no model card of that name; ignored"
            for part, row in ratings.items()
            if part not in names
        ]
    rows = []
    errors = []
    for card in cards:
        merged = dict(overrides or {})
        if card.name in ratings:
            merged.update({k: v for k, v in ratings[card.name].cells.items() if k != "part" and v.strip()})
        family = str(merged.get("family", "")).strip().lower()
        if not family:
            errors.append(f"{label}:{card.line}: {card.name}: family: not given; use --family or a ratings CSV")
            continue
        if family == "zener" and "BV" not in card.values:
            errors.append(f"{label}:{card.line}: {card.name}: BV: missing; a card imported as a zener needs BV")
            continue
        cells, card_warnings = card_cells(card, merged)
        warnings += [f"{label}:{card.line}: {warning}" for warning in card_warnings]
        rows.append(RawRow(card.line, cells))
    try:
        records = validate_rows(rows, label)
    except InputDataError as error:
        errors.extend(str(error).splitlines())
    if errors:
        raise InputDataError("\n".join(sorted(errors, key=_line_of)))
    return PartsFile(label, file_digest(data), records, warnings + data_warnings(records, label))


def _line_of(message: str) -> int:
    """The line number in a ``FILE:LINE: …`` message, for ordering (stable)."""
    match = re.search(r":(\d+): ", message)
    return int(match.group(1)) if match else 0
