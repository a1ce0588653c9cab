"""Provable bounds on a stack's rail voltage, current window and series resistor.

The search prunes a candidate stack only when these bounds prove that no series-resistor
value can make it feasible, or that its worst-case error cannot beat the shortlist so
far. Every bound holds for every *feasible* design (DESIGN §3), so pruning never loses a
feasible design. Infeasible designs are never shortlisted, so they need no bound.

Why the bounds hold
-------------------
1. *Junction range.* At a feasible design every element's margin is at least
   ``min_margin`` ``m``, so its power is ``P ≤ (1 − m)·P_max(Ta)`` and its junction
   ``Tj = Ta + θ·P`` is at most ``Ta + θ·(1 − m)·P_max(Ta)``. Below, ``Tj = Ta + θ·V·I``
   with a forward element's ``V ≥ −vf_tol − tc_tol·|Tj − tnom|`` (its log and ohmic terms
   are ≥ 0), which bounds how far below the ambient it can settle
   (:func:`selector.physics.self_heating.forward_junction_floor_c`, at the least tolerance and
   spread and, for a current range, at its top). A zener settles below the ambient only
   where its voltage is negative: with loop gain below 1 on the cold side of its
   junction, ``V(Ta) ≥ 0`` implies ``V(Tj) ≥ 0``, so its range starts at the ambient, and
   a zener whose bound comes out negative gets no bound at all.
2. *Current window.* Feasibility needs ``I ≥ floor = max(min_current, every element's
   i_min_a)`` at every corner. Above, ``I ≤ if_max_a`` (a zener's ``zener_izt_limit·izt``)
   and ``I·V ≤ (1 − m)·P_max``; with
   ``V ≥ V_low(I)`` (the least voltage at that current over the junction range, which is
   non-decreasing in ``I``) the product ``I·V_low(I)`` is non-decreasing, so once it
   exceeds the allowed power at some ``I*`` every larger current is infeasible:
   ``I < I*``. The stack's window is the floor of its largest element floor and the cap
   of its smallest element cap.
3. *Voltage at fixed temperature versus current.* A forward element's
   ``∂V/∂I = n·Vt/(I + Is) + rs > 0`` (``rs ≥ 0``). A zener's ``∂V/∂I = zzt·(I/izt)^(−m) > 0``
   (DESIGN §3, version 2). Both rise with current, so the extremes over a current interval
   are at its ends.
4. *Voltage at fixed current versus temperature.* A zener is linear in ``Tj`` on either
   side of ``tnom`` (its TC spread bends it there): the ends of the range and ``tnom``.
   A forward element's TC-spread term ``s·tc_tol·|T − tnom|`` is bounded apart, by the
   nearest and farthest distance of the range from ``tnom``; for the rest: A forward element's ``V − I·rs − s·vf_tol = A(T)·B(T)`` with
   ``A = n·Vt(T)`` increasing and ``B = ln(1 + I/Is(T))`` decreasing (``ln Is`` has the
   slope ``(xti·Vt + eg)/(n·Vt·T) > 0`` when ``xti·Vt + eg > 0``). On each of
   ``K`` slices ``[t₀, t₁]`` of the range, ``A(t₀)·B(t₁) ≤ A·B ≤ A(t₁)·B(t₀)``; where in
   addition ``A(t₁)·B(t₀) ≤ f(t₁)·(xti·Vt + eg)`` (``f = I/(I + Is)``, decreasing) the
   slope ``∂V/∂T = (n·Vt·B − f·(xti·Vt + eg))/T`` is ≤ 0 throughout and the ends are exact.
5. *Sums.* Elements share one current; each element's voltage lies in its own bounds over
   the stack's current window, so the stack voltage lies in the sum of the bounds. This
   holds per ambient and tolerance sign, so each of the four (ambient, sign) classes of
   corners has its own rail interval ``[ΣL, ΣU]``.
6. *Error.* Some corner of class ``c`` has ``Vout ≥ ΣL_c`` and some corner of class ``c'``
   has ``Vout ≤ ΣU_c'``, so ``error_v ≥ max(ΣL_c − target, target − ΣU_c',
   (ΣL_c − ΣU_c')/2)`` over every pair of classes.
7. *Resistor.* At the supply minimum, the most load and ``R(Ta, +1)`` (tolerance and TCR
   at the class's ambient, :func:`class_resistor_factors`) the current
   ``(Vin − Vout)/R_c − I_L`` must reach the floor, so ``R ≤ (Vin_min − ΣL)/(f₊·
   (floor + I_L,most))``. At the supply maximum, least load and ``R(Ta, −1)`` it must
   stay below the cap, and the resistor's own dissipation ``(Vin − Vout)²/R_c`` below
   ``(1 − m)·P_R,max(Ta)`` (the rating derated with the ambient), which give lower limits
   on ``R``.

8. *A stack that may be off.* Where no element needs current and the spec asks for none
   (floor below 1 fA), a corner may have the stack off and the design still be feasible
   (DESIGN §3). Its rail is then below the stack's voltage at 1 fA (else the stack would
   conduct) and above 0 V (else the load takes all): the rail intervals of point 5 widen
   down to 0 V, point 7's upper limit on ``R`` goes, and a design with an off corner has
   ``error_v ≥ target − Σ U(1 fA)``, so the error bound of point 6 becomes the lesser of
   the two.

A small slack (:data:`VOLTAGE_SLACK_V`) widens every voltage bound so that the solver's
own convergence tolerance can never make a bound cut a design it should keep.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from selector.physics.corners import part_current_limit
from selector.physics.partset import PartSet
from selector.physics.series_resistor import resistor_allowed_power_w, resistor_factor
from selector.search.element_bounds import lowest_junction_c, voltage_range_fixed_current
from selector.spec.rail_spec import RailSpec

#: Widening of every voltage bound [V]: far above the solver's residual, far below a mV.
VOLTAGE_SLACK_V = 1e-7
#: Smallest current used in place of zero [A]; the solver rejects currents below 1 fA.
CURRENT_FLOOR_A = 1e-300
#: Below this stack current the solver counts the stack as off [A] (its least current).
STACK_OFF_CURRENT_A = 1e-15
#: The (ambient, tolerance sign) classes of corners, in this order.
CLASS_SIGNS = (-1.0, 1.0, -1.0, 1.0)


def class_ambients(spec: RailSpec) -> tuple[float, float, float, float]:
    """Ambient [°C] of each corner class, matching :data:`CLASS_SIGNS`."""
    return (spec.ambient_min_c, spec.ambient_min_c, spec.ambient_max_c, spec.ambient_max_c)


def class_resistor_factors(spec: RailSpec) -> tuple[np.ndarray, np.ndarray]:
    """Per corner class, the resistor's low and high factors ``R(Ta, ∓1)/R`` (DESIGN §3:
    tolerance and TCR at the class's ambient), arrays (4,)."""
    ambient = np.array(class_ambients(spec))
    return resistor_factor(spec, ambient, -1.0), resistor_factor(spec, ambient, 1.0)


def load_current_ranges(spec: RailSpec, vout_low_v, vout_high_v):
    """Bounds on the load current at the least-load and the most-load corners [A].

    Returns ``(least_high, most_low)``: an upper bound on the load current at the corner
    with the least load, and a lower bound at the corner with the most load, for rail
    voltages within ``[vout_low_v, vout_high_v]`` (``I_L = Vout/R_L`` for a resistor).
    """
    if spec.load_kind == "resistance":
        least_high = np.maximum(vout_high_v, 0.0) / spec.load_max
        most_low = np.maximum(vout_low_v, 0.0) / spec.load_min
        return least_high, most_low
    return np.full(np.shape(vout_low_v), spec.load_min), np.full(np.shape(vout_low_v), spec.load_max)


@dataclass(frozen=True)
class PartBoundTables:
    """Per-part voltage bounds, tabulated for every possible stack current window.

    Attributes
    ----------
    floors_a : array (F,) [A]
        Every distinct current floor a stack can have, ascending.
    floor_index : int array (n_parts + 1,)
        Each part's own floor in ``floors_a`` (last entry: padding, the spec's floor).
    caps_a : array (4, G) [A]
        Per corner class, every distinct current cap, ascending (``inf`` allowed).
    cap_index : int array (4, n_parts + 1)
        Each part's own cap in ``caps_a`` (padding: the largest).
    lower_v : array (4, n_parts + 1, F) [V]
        Least voltage of the part at currents from ``floors_a[f]`` up to its cap.
    upper_v : array (4, n_parts + 1, G) [V]
        Greatest voltage at currents from its floor up to ``caps_a[c, g]``.
    off_upper_v : array (4, n_parts + 1) [V]
        Greatest voltage of the part at the solver's least current, 1 fA (point 8).
    """

    floors_a: np.ndarray
    floor_index: np.ndarray
    caps_a: np.ndarray
    cap_index: np.ndarray
    lower_v: np.ndarray
    upper_v: np.ndarray
    off_upper_v: np.ndarray


def _junction_ranges(parts: PartSet, spec: RailSpec) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per class and part: ambient, top junction temperature [°C] and allowed power [W]."""
    ambient = np.array(class_ambients(spec))[:, None]
    theta = parts.theta_ja_k_per_w[None, :]
    p_max = np.minimum(parts.pd_w[None, :], (parts.tj_max_c[None, :] - ambient) / theta)
    allowed = np.maximum((1.0 - spec.min_margin) * p_max, 0.0)
    return np.broadcast_to(ambient, allowed.shape), ambient + theta * allowed, allowed


def _class_grid(parts: PartSet, count: int):
    part = np.broadcast_to(np.arange(len(parts))[None, :], (4, len(parts)))
    sign = np.broadcast_to(np.array(CLASS_SIGNS)[:, None], (4, len(parts)))
    return part, sign


def _least_voltage(parts, part, current, t_low, t_high, sign, cap):
    """Least voltage over currents from ``current`` to ``cap`` (point 3: at fixed junction
    every element rises with current, so the least is at ``current``)."""
    top = np.where(np.isfinite(cap), np.maximum(cap, current), 1e3)
    floor = lowest_junction_c(parts, part, top, t_low)
    low, _ = voltage_range_fixed_current(parts, part, current, t_low, t_high, sign, junction_low_c=floor)
    return low


def _dissipation_caps(parts, part, floor, t_low, t_high, sign, allowed):
    """Point 2: a current above which ``I·V_low(I)`` exceeds the allowed power [A]."""
    low = np.log(floor)
    high = np.full(floor.shape, np.log(1e3))
    for _ in range(60):
        middle = 0.5 * (low + high)
        current = np.exp(middle)
        too_hot = current * _least_voltage(parts, part, current, t_low, t_high, sign, current) > allowed
        high = np.where(too_hot, middle, high)
        low = np.where(too_hot, low, middle)
    cap = np.exp(high)
    at_top = cap * _least_voltage(parts, part, cap, t_low, t_high, sign, cap) <= allowed
    return np.where(at_top, np.inf, cap)


def part_bound_tables(parts: PartSet, spec: RailSpec) -> PartBoundTables:
    """Tabulate every part's voltage bounds for every possible stack current window.

    A stack's floor is one of the parts' floors and its cap one of their caps, so
    tabulating per part over those finitely many values lets the search bound millions of
    stacks by gathers and sums alone (module docstring, points 1–5).
    """
    count = len(parts)
    part_floor = np.maximum(np.maximum(spec.min_current_a, parts.i_min_a), CURRENT_FLOOR_A)
    floors = np.unique(np.append(part_floor, max(spec.min_current_a, CURRENT_FLOOR_A)))
    floor_index = np.append(np.searchsorted(floors, part_floor), 0)

    part, sign = _class_grid(parts, count)
    ambient, t_top, allowed = _junction_ranges(parts, spec)
    floor_grid = np.broadcast_to(part_floor[None, :], (4, count))
    cap = _dissipation_caps(parts, part, floor_grid, ambient, t_top, sign, allowed)
    cap = np.minimum(cap, part_current_limit(parts, spec)[None, :])
    cap = np.where(allowed > 0, cap, 0.0)

    lower = np.zeros((4, count + 1, floors.size))
    upper = np.zeros((4, count + 1, count))
    caps = np.sort(cap, axis=1)
    cap_index = np.zeros((4, count + 1), dtype=np.intp)
    for corner_class in range(4):
        cap_index[corner_class, :count] = np.searchsorted(caps[corner_class], cap[corner_class])
        cap_index[corner_class, count] = count - 1
    shape_f = (4, count, floors.size)
    current_f = np.broadcast_to(np.maximum(floors[None, None, :], part_floor[None, :, None]), shape_f)
    broad = {
        name: np.broadcast_to(values[:, :, None], shape_f)
        for name, values in (("part", part), ("sign", sign), ("t_low", ambient), ("t_top", t_top), ("cap", cap))
    }
    lower[:, :count, :] = _least_voltage(
        parts, broad["part"].ravel(), current_f.ravel(), broad["t_low"].ravel(), broad["t_top"].ravel(),
        broad["sign"].ravel(), broad["cap"].ravel(),
    ).reshape(shape_f)
    # Upper bound up to min(cap of slot g, own cap): where slot g's cap is not below the
    # part's own, that is the part's own cap, so only the lower slots need their own
    # evaluation; the floor end depends on the part alone.
    own_top = np.maximum(np.where(np.isfinite(cap), cap, 1e3), part_floor[None, :])
    _, high_own = voltage_range_fixed_current(parts, part, own_top, ambient, t_top, sign)
    _, high_bottom = voltage_range_fixed_current(parts, part, np.broadcast_to(part_floor[None, :], cap.shape), ambient, t_top, sign)
    below = caps[:, None, :] < cap[:, :, None]
    corner_class, part_row, slot = np.nonzero(below)
    slot_top = np.maximum(caps[corner_class, slot], part_floor[part_row])
    _, high_slot = voltage_range_fixed_current(
        parts, part_row, slot_top, ambient[corner_class, part_row], t_top[corner_class, part_row],
        sign[corner_class, part_row],
    )
    high = np.broadcast_to(high_own[:, :, None], (4, count, count)).copy()
    high[below] = high_slot
    high = np.maximum(high, high_bottom[:, :, None])
    unbounded = ~np.isfinite(np.minimum(caps[:, None, :], cap[:, :, None]))
    upper[:, :count, :] = np.where(unbounded, np.inf, high)
    off_upper = np.zeros((4, count + 1))
    _, off_high = voltage_range_fixed_current(
        parts, part.ravel(), STACK_OFF_CURRENT_A, ambient.ravel(), t_top.ravel(), sign.ravel()
    )
    off_upper[:, :count] = off_high.reshape(4, count)
    return PartBoundTables(
        floors_a=floors,
        floor_index=floor_index,
        caps_a=caps,
        cap_index=cap_index,
        lower_v=lower - VOLTAGE_SLACK_V,
        upper_v=upper + VOLTAGE_SLACK_V,
        off_upper_v=off_upper + VOLTAGE_SLACK_V,
    )


def may_be_off(floor_a: np.ndarray) -> np.ndarray:
    """Stacks whose floor lets a corner's stack be off and still feasible (point 8)."""
    return floor_a < STACK_OFF_CURRENT_A


def off_error_floor(spec: RailSpec, off_rail_v: np.ndarray) -> np.ndarray:
    """Point 8: the error of a design with an off corner, at least ``target − off rail``."""
    return np.maximum(spec.target_v - off_rail_v, 0.0)


def part_current_caps(tables: PartBoundTables) -> np.ndarray:
    """Each part's own current cap per corner class (module docstring, point 2) [A], shape (4, n)."""
    index = tables.cap_index[:, :-1]
    return np.take_along_axis(tables.caps_a, index, axis=1)


def separable_rail_bounds(tables: PartBoundTables) -> tuple[np.ndarray, np.ndarray]:
    """Per corner class and part, bounds that hold for the part in any full stack [V].

    For a stack without padding slots, :func:`bound_stacks` sums, per class, one entry of each element's row of
    ``lower_v`` (at the stack's floor) and of ``upper_v`` (at the stack's cap); the least
    entry of a row is at most the one used and the greatest at least it, so the sums of
    these bound the stack's ``vout_lower_v`` from below and ``vout_upper_v`` from above.

    Returns
    -------
    least_v, greatest_v : array (4, n_parts) [V]
    """
    return tables.lower_v[:, :-1, :].min(axis=2), tables.upper_v[:, :-1, :].max(axis=2)


@dataclass(frozen=True)
class StackBounds:
    """Bounds for many stacks, each valid for every feasible design of that stack.

    Attributes
    ----------
    vout_lower_v, vout_upper_v : array (n, 4) [V]
        Rail interval of each corner class (module docstring, point 5).
    floor_a : array (n,) [A]
        Least stack current feasibility needs.
    cap_a : array (n, 4) [A]
        Current no feasible corner of the class exceeds.
    error_lower_v : array (n,) [V]
        Lower bound on ``error_v`` at any resistor (point 6).
    resistor_low_ohm, resistor_high_ohm : array (n,) [Ω]
        Every feasible series resistor lies in this range (point 7).
    window_empty : array (n,) of bool
        The floor exceeds a cap: no current is both enough and safe.
    resistor_high_conducting_ohm : array (n,) [Ω]
        The range's top for designs whose stack conducts at every corner. For a stack that
        may be off (point 8) ``resistor_high_ohm`` is unbounded, since above this value a
        corner's load pulls the rail below the stack's conduction; every such design has an
        off corner and so an error of at least ``off_error_floor_v``.
    off_error_floor_v : array (n,) [V]
        Least error of any design of the stack with an off corner (inf for a stack that
        cannot be off): a search whose cut is below it needs only the conducting range.
    """

    vout_lower_v: np.ndarray
    vout_upper_v: np.ndarray
    floor_a: np.ndarray
    cap_a: np.ndarray
    error_lower_v: np.ndarray
    resistor_low_ohm: np.ndarray
    resistor_high_ohm: np.ndarray
    window_empty: np.ndarray
    resistor_high_conducting_ohm: np.ndarray | None = None
    off_error_floor_v: np.ndarray | None = None

    def resistor_high_within(self, error_cut_v: float) -> np.ndarray:
        """The range's top that matters to a search keeping only designs whose error
        bound is at most ``error_cut_v`` [Ω]."""
        if self.resistor_high_conducting_ohm is None:
            return self.resistor_high_ohm
        return np.where(self.off_error_floor_v > error_cut_v, self.resistor_high_conducting_ohm, self.resistor_high_ohm)


def bound_stacks(tables: PartBoundTables, stacks: np.ndarray, spec: RailSpec) -> StackBounds:
    """Bound many stacks at once by gathers and sums over :class:`PartBoundTables`.

    Parameters
    ----------
    tables : PartBoundTables
        From :func:`part_bound_tables` for the same parts and spec.
    stacks : int array (n, max_len)
        Part indices, padded with −1.
    spec : RailSpec

    Returns
    -------
    StackBounds
    """
    padding = tables.floor_index.size - 1
    elements = np.where(stacks >= 0, stacks, padding)
    floor_slot = tables.floor_index.take(elements).max(axis=1)
    floor = tables.floors_a[floor_slot]
    lower = np.empty((stacks.shape[0], 4))
    upper = np.empty((stacks.shape[0], 4))
    cap = np.empty((stacks.shape[0], 4))
    columns = range(elements.shape[1])
    for corner_class in range(4):
        # Column-wise takes from the flattened tables: far cheaper than a 2-d gather.
        cap_index = tables.cap_index[corner_class]
        cap_slot = cap_index.take(elements[:, 0])
        for column in columns[1:]:
            np.minimum(cap_slot, cap_index.take(elements[:, column]), out=cap_slot)
        cap[:, corner_class] = tables.caps_a[corner_class].take(cap_slot)
        for target, table, slot in ((lower, tables.lower_v[corner_class], floor_slot), (upper, tables.upper_v[corner_class], cap_slot)):
            flat, width = table.ravel(), table.shape[1]
            total = flat.take(elements[:, 0] * width + slot)
            for column in columns[1:]:
                total += flat.take(elements[:, column] * width + slot)
            target[:, corner_class] = total
    window_empty = (floor[:, None] > cap).any(axis=1)
    off = may_be_off(floor)
    off_rail = tables.off_upper_v.take(elements, axis=1).sum(axis=2).max(axis=0)
    lower = np.where(off[:, None], np.minimum(lower, 0.0), lower)

    highest_lower = lower.max(axis=1)
    lowest_upper = upper.min(axis=1)
    with np.errstate(invalid="ignore"):
        error_lower = np.maximum.reduce([
            highest_lower - spec.target_v,
            spec.target_v - lowest_upper,
            0.5 * (highest_lower - lowest_upper),
            np.zeros_like(highest_lower),
        ])
    error_lower = np.where(np.isnan(error_lower), 0.0, error_lower)
    error_lower = np.where(off, np.minimum(error_lower, off_error_floor(spec, off_rail)), error_lower)

    factor_low, factor_high = class_resistor_factors(spec)
    least_high, _ = load_current_ranges(spec, lower, upper)
    _, most_low = load_current_ranges(spec, lower, upper)
    with np.errstate(divide="ignore", invalid="ignore"):
        high = (spec.supply_min_v - lower) / (factor_high[None, :] * (floor[:, None] + most_low))
        high = np.where(floor[:, None] + most_low > 0, high, np.inf)
        headroom = np.maximum(spec.supply_max_v - upper, 0.0)
        by_current = np.where(np.isfinite(cap), headroom / (factor_low[None, :] * (cap + least_high)), 0.0)
        # The resistor's allowed power derates with the class's ambient (DESIGN §3).
        rating = max(1.0 - spec.min_margin, 0.0) * resistor_allowed_power_w(spec, np.array(class_ambients(spec)))
        by_rating = np.where(rating[None, :] > 0, headroom**2 / (rating[None, :] * factor_low[None, :]),
                             np.where(headroom > 0, np.inf, 0.0))  # fmt: skip
    high = np.where(np.isnan(high), np.inf, high)
    conducting_high = high.min(axis=1)
    high = np.where(off[:, None], np.inf, high)
    low = np.nan_to_num(np.maximum(by_current, by_rating), nan=0.0)
    return StackBounds(
        vout_lower_v=lower,
        vout_upper_v=upper,
        floor_a=floor,
        cap_a=cap,
        error_lower_v=error_lower,
        resistor_low_ohm=low.max(axis=1),
        resistor_high_ohm=high.min(axis=1),
        window_empty=window_empty,
        resistor_high_conducting_ohm=conducting_high,
        off_error_floor_v=np.where(off, off_error_floor(spec, off_rail), np.inf),
    )
