"""The parts table as a structure of numpy arrays, with the contract's defaults applied.

This is the one hand-over between the catalog (SQL rows) and the physics (arrays): the
catalog builds a :class:`PartSet` once from library rows; the element models, the
solver and the search index into its arrays and never see a database.

Defaults follow the physics contract (DESIGN §3): ``eg_ev`` 1.11, ``xti`` 3, ``rs_ohm``
0, ``vf_tol_v`` 0, ``tnom_c`` 25, ``tj_max_c`` 150, ``θ = (tj_max_c − 25)/pd_w`` when
``theta_ja_k_per_w`` is absent, ``i_min_a`` = ``izk_a`` for a zener and 0 for a forward
element, ``if_max_a`` unlimited when absent. Fields that do not apply to a family are
filled with benign values (never NaN) so that masked vectorised evaluation of both
models raises no floating-point warning.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, fields

import numpy as np

from selector.errors import UnknownPartError
from selector.spec.part_fields import (
    CONTRACT_DEFAULTS,
    NUMERIC_COLUMNS,
)

#: Stand-in values for fields that do not apply to an element's family.
_BENIGN_FORWARD = {"is_a": 1e-14, "n": 1.0}
_BENIGN_BREAKDOWN = {"vz_v": 0.0, "izt_a": 1e-3, "zzt_ohm": 1.0, "izk_a": 1e-4, "zzk_ohm": 1.0}


def zener_knee_exponent(zzt_ohm: np.ndarray, izt_a: np.ndarray, zzk_ohm: np.ndarray, izk_a: np.ndarray) -> np.ndarray:
    """Exponent ``m = ln(zzk/zzt)/ln(izt/izk)`` of the zener's power-law dynamic resistance.

    ``r(I) = zzt·(I/izt)^(−m)`` passes through both datasheet points (izt, zzt) and
    (izk, zzk) (DESIGN §3, version 2): on log–log axes a zener's impedance against current
    is close to a straight line.

    Parameters
    ----------
    zzt_ohm : array [Ω]
        Dynamic impedance at the test current.
    izt_a : array [A]
        Test current.
    zzk_ohm : array [Ω]
        Dynamic impedance at the knee current (``≥ zzt_ohm``).
    izk_a : array [A]
        Knee current (``< izt_a``).

    Returns
    -------
    array [1]
        ``m ≥ 0``.
    """
    return np.log(zzk_ohm / zzt_ohm) / np.log(izt_a / izk_a)



@dataclass(frozen=True)
class PartSet:
    """Library parts as parallel arrays, one entry per part, contract defaults applied.

    Attributes
    ----------
    part, family, description, package : ndarray of str
    is_zener : ndarray of bool
        True for the breakdown family.
    is_a : array [A]; n : array [1]; rs_ohm : array [Ω]; eg_ev : array [eV]; xti : array [1]
    tnom_c : array [°C]; vf_tol_v : array [V]
    vz_v : array [V]; izt_a : array [A]; zzt_ohm : array [Ω]; izk_a : array [A]; zzk_ohm : array [Ω]
    vz_tol_pct : array [%]; tc_v_per_k : array [V/K]
    tc_tol_v_per_k : array [V/K]
        Spread (±) of the temperature coefficient, any family (0 when not given).
    pd_w : array [W]; tj_max_c : array [°C]; theta_ja_k_per_w : array [K/W]
    if_max_a : array [A]
        ``inf`` where the part gives no limit.
    i_min_a : array [A]
        Least stack current the part needs.
    zener_knee_exponent : array [1]
        ``m`` of the zener's power-law dynamic resistance
        (:func:`selector.physics.devices.zener_knee_exponent`); 0 for forward parts.
    given_mask : bool array (n_parts, len(NUMERIC_COLUMNS))
        Whether the library gave each numeric field (else the contract default, or a
        benign stand-in for a field of the other family, is used); see :meth:`given`.
    """

    part: np.ndarray
    family: np.ndarray
    description: np.ndarray
    package: np.ndarray
    is_zener: np.ndarray
    is_a: np.ndarray
    n: np.ndarray
    rs_ohm: np.ndarray
    eg_ev: np.ndarray
    xti: np.ndarray
    tnom_c: np.ndarray
    vf_tol_v: np.ndarray
    vz_v: np.ndarray
    izt_a: np.ndarray
    zzt_ohm: np.ndarray
    izk_a: np.ndarray
    zzk_ohm: np.ndarray
    vz_tol_pct: np.ndarray
    tc_v_per_k: np.ndarray
    tc_tol_v_per_k: np.ndarray
    pd_w: np.ndarray
    tj_max_c: np.ndarray
    theta_ja_k_per_w: np.ndarray
    if_max_a: np.ndarray
    i_min_a: np.ndarray
    zener_knee_exponent: np.ndarray
    given_mask: np.ndarray

    def __len__(self) -> int:
        return int(self.part.shape[0])

    @classmethod
    def from_records(cls, records: Iterable[Mapping[str, object]]) -> PartSet:
        """Build from mappings with the contract's column names; None or NaN = not given.

        The records are assumed validated (the catalog validates on import).
        """
        rows = list(records)

        def text(column: str) -> np.ndarray:
            return np.array([str(row.get(column) or "") for row in rows], dtype=object)

        def number(column: str) -> np.ndarray:
            values = []
            for row in rows:
                value = row.get(column)
                values.append(math.nan if value is None else float(value))
                if values[-1] != values[-1]:
                    values[-1] = math.nan
            return np.array(values, dtype=float)

        family = text("family")
        is_zener = family == "zener"
        raw = {column: number(column) for column in NUMERIC_COLUMNS}
        filled: dict[str, np.ndarray] = {}
        for column, values in raw.items():
            default = CONTRACT_DEFAULTS.get(column)
            filled[column] = np.where(np.isnan(values), default, values) if default is not None else values
        for column, benign in _BENIGN_FORWARD.items():
            filled[column] = np.where(is_zener | np.isnan(filled[column]), benign, filled[column])
        for column, benign in _BENIGN_BREAKDOWN.items():
            filled[column] = np.where(~is_zener | np.isnan(filled[column]), benign, filled[column])
        filled["vz_tol_pct"] = np.where(is_zener, filled["vz_tol_pct"], 0.0)
        filled["tc_v_per_k"] = np.where(is_zener, filled["tc_v_per_k"], 0.0)
        filled["tc_tol_v_per_k"] = np.where(np.isfinite(filled["tc_tol_v_per_k"]), filled["tc_tol_v_per_k"], 0.0)
        filled["vf_tol_v"] = np.where(is_zener, 0.0, filled["vf_tol_v"])
        filled["rs_ohm"] = np.where(is_zener, 0.0, filled["rs_ohm"])
        theta = (filled["tj_max_c"] - 25.0) / filled["pd_w"]
        filled["theta_ja_k_per_w"] = np.where(np.isnan(raw["theta_ja_k_per_w"]), theta, raw["theta_ja_k_per_w"])
        filled["if_max_a"] = np.where(np.isnan(raw["if_max_a"]) | is_zener, np.inf, raw["if_max_a"])
        default_i_min = np.where(is_zener, filled["izk_a"], 0.0)
        filled["i_min_a"] = np.where(np.isnan(raw["i_min_a"]), default_i_min, raw["i_min_a"])
        knee = zener_knee_exponent(filled["zzt_ohm"], filled["izt_a"], filled["zzk_ohm"], filled["izk_a"])
        given = np.stack([~np.isnan(raw[column]) for column in NUMERIC_COLUMNS], axis=1)
        return cls(
            part=text("part"),
            family=family,
            description=text("description"),
            package=text("package"),
            is_zener=is_zener,
            zener_knee_exponent=np.where(is_zener, knee, 0.0),
            given_mask=given,
            **filled,
        )

    def given(self, column: str) -> np.ndarray:
        """Per part, whether the library gave ``column`` (a numeric parts-CSV column)."""
        return self.given_mask[:, NUMERIC_COLUMNS.index(column)]

    def take(self, indices: Sequence[int] | np.ndarray) -> PartSet:
        """A new PartSet holding the parts at ``indices``, in that order."""
        index = np.asarray(indices, dtype=np.intp)
        return PartSet(**{f.name: getattr(self, f.name)[index] for f in fields(self)})

    def select(self, mask: np.ndarray) -> PartSet:
        """A new PartSet holding the parts where ``mask`` is True."""
        return self.take(np.flatnonzero(mask))

    def index_of(self, names: Iterable[str]) -> np.ndarray:
        """Positions of named parts; raises UnknownPartError naming the first unknown one."""
        lookup = {name: i for i, name in enumerate(self.part)}
        positions = []
        for name in names:
            if name not in lookup:
                raise UnknownPartError(
                    f"unknown part '{name}' (not in the library, or filtered out){_suggestion(name, lookup)}"
                )
            positions.append(lookup[name])
        return np.array(positions, dtype=np.intp)


def _suggestion(name: str, known: Iterable[str]) -> str:
    """``"; did you mean 'X'?"`` for a near miss (part ids are case-sensitive), else ``""``."""
    known = list(known)
    same_letters = [part for part in known if part.lower() == name.lower()]
    close = same_letters or difflib.get_close_matches(name, known, n=1, cutoff=0.75)
    return f"; did you mean '{close[0]}'?" if close else ""
