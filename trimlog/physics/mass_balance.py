"""Weight and balance: %MAC, weight and CG of a loading, fuel burn through a flight.

Stations and arms are in inches aft of the aircraft's datum, weights in
pounds, fuel in US gallons.  Inputs are numbers, numpy arrays or pandas
Series (a Series in gives a Series out on the same index).

References
----------
.. [1] FAA, *Aircraft Weight and Balance Handbook*, FAA-H-8083-1A, 2007:
   ch. 2 (weight x arm = moment, CG = total moment / total weight) and ch. 3
   (CG in percent of the mean aerodynamic chord).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any, NamedTuple

import numpy as np
import pandas as pd

from trimlog.errors import TrimlogError
from trimlog.physics.arrays import (
    Numeric,
    as_float_array,
    check_range,
    like_input,
    series_template,
    where,
)


@dataclass(frozen=True)
class Loading:
    """Weight, CG and moment of a loading.

    Attributes
    ----------
    weight_lb : float
        Total weight [lb].
    cg_in : float
        CG station [in aft of datum].
    moment_lb_in : float
        Total moment about the datum [lb·in].
    """

    weight_lb: float
    cg_in: float
    moment_lb_in: float


class WeightAndCg(NamedTuple):
    """Weight and CG at each sample of a flight; unpacks as ``weight, cg = ...``.

    Attributes
    ----------
    weight_lb : float, array or Series
        Total weight [lb].
    cg_in : float, array or Series
        CG station [in aft of datum].
    """

    weight_lb: Any
    cg_in: Any


def _positive(value: Any, name: str, unit: str) -> np.ndarray:
    values = as_float_array(value, name)
    check_range(values, 0.0, np.inf, name, unit, series_template(value), low_inclusive=False)
    return values


def _finite(value: Any, name: str, unit: str) -> np.ndarray:
    values = as_float_array(value, name)
    check_range(values, -np.inf, np.inf, name, unit, series_template(value))
    return values


def station_to_pct_mac(station_in: Numeric, lemac_in: float, mac_in: float) -> Numeric:
    """Express a station as percent of the mean aerodynamic chord.

    Parameters
    ----------
    station_in : float, array or Series
        Station [in aft of datum].
    lemac_in : float
        Station of the MAC's leading edge [in aft of datum].
    mac_in : float
        Length of the mean aerodynamic chord [in], positive.

    Returns
    -------
    float, array or Series
        Position aft of the MAC leading edge [% MAC]; may lie outside 0-100.

    Raises
    ------
    TrimlogError
        A MAC length that is not positive.

    Notes
    -----
    %MAC = 100·(station − LEMAC)/MAC.

    References
    ----------
    FAA-H-8083-1A, ch. 3, CG in percent of MAC.

    Examples
    --------
    >>> round(station_to_pct_mac(35.5, 29.3, 58.0), 1)
    10.7
    """
    mac = _positive(mac_in, "mac_in", "in")
    lemac = _finite(lemac_in, "lemac_in", "in")
    station = _finite(station_in, "station_in", "in")
    return like_input(100.0 * (station - lemac) / mac, station_in, name="cg_pct_mac")


def pct_mac_to_station(pct_mac: Numeric, lemac_in: float, mac_in: float) -> Numeric:
    """Convert percent of MAC to a station: the inverse of :func:`station_to_pct_mac`.

    Parameters
    ----------
    pct_mac : float, array or Series
        Position aft of the MAC leading edge [% MAC].
    lemac_in : float
        Station of the MAC's leading edge [in aft of datum].
    mac_in : float
        Length of the mean aerodynamic chord [in], positive.

    Returns
    -------
    float, array or Series
        Station [in aft of datum].

    Raises
    ------
    TrimlogError
        A MAC length that is not positive.

    Notes
    -----
    station = LEMAC + %MAC/100·MAC.

    References
    ----------
    FAA-H-8083-1A, ch. 3, CG in percent of MAC.

    Examples
    --------
    >>> round(pct_mac_to_station(25.0, 60.0, 48.0), 2)
    72.0
    """
    mac = _positive(mac_in, "mac_in", "in")
    lemac = _finite(lemac_in, "lemac_in", "in")
    pct = _finite(pct_mac, "pct_mac", "%MAC")
    return like_input(lemac + pct / 100.0 * mac, pct_mac, name="cg_in")


def _items_arrays(items: Any) -> tuple[np.ndarray, np.ndarray]:
    if isinstance(items, pd.DataFrame):
        missing = [c for c in ("weight_lb", "arm_in") if c not in items.columns]
        if missing:
            raise TrimlogError(
                f"loading items: expected columns 'weight_lb' and 'arm_in', missing "
                f"{', '.join(repr(c) for c in missing)} (found {list(map(str, items.columns))})"
            )
        weights = as_float_array(items["weight_lb"], "weight_lb")
        arms = as_float_array(items["arm_in"], "arm_in")
        labels = list(items.index)
    else:
        if not isinstance(items, Iterable):
            raise TrimlogError(
                f"loading items: expected (weight_lb, arm_in) pairs or a DataFrame, found "
                f"{type(items).__name__}"
            )
        pairs = list(items)
        for number, pair in enumerate(pairs, start=1):
            if np.ndim(pair) != 1 or len(pair) != 2:
                raise TrimlogError(
                    f"loading item {number}: expected a (weight_lb, arm_in) pair, found {pair!r}"
                )
        weights = as_float_array([p[0] for p in pairs], "weight_lb")
        arms = as_float_array([p[1] for p in pairs], "arm_in")
        labels = list(range(1, len(pairs) + 1))
    if weights.size == 0:
        raise TrimlogError(
            "loading items: expected at least one (weight_lb, arm_in) item, found none"
        )
    for name, column in (("weight_lb", weights), ("arm_in", arms)):
        bad = ~np.isfinite(column)
        if bad.any():
            row = int(np.flatnonzero(bad)[0])
            raise TrimlogError(
                f"loading item {labels[row]!r}, {name}: expected a number, found {column[row]}"
            )
    return weights, arms


def weight_and_cg(items: Iterable[tuple[float, float]] | pd.DataFrame) -> Loading:
    """Total weight, CG and moment of a list of items.

    Parameters
    ----------
    items : iterable of (weight_lb, arm_in) pairs, or DataFrame
        Each item's weight [lb] and arm [in aft of datum]; a DataFrame needs
        the columns ``weight_lb`` and ``arm_in``.  A removed item may carry a
        negative weight.

    Returns
    -------
    Loading
        Total weight [lb], CG [in] and moment [lb·in], as floats.

    Raises
    ------
    TrimlogError
        No items, a missing column, a non-numeric value, or a total weight that
        is not positive.

    Notes
    -----
    moment = Σ wᵢ·armᵢ; CG = moment / Σ wᵢ.

    References
    ----------
    FAA-H-8083-1A, ch. 2 (basic weight and balance equation).

    Examples
    --------
    >>> weight_and_cg([(1000.0, 80.0), (200.0, 95.0)]).cg_in
    82.5
    """
    weights, arms = _items_arrays(items)
    total = float(weights.sum())
    if total <= 0.0:
        raise TrimlogError(
            f"loading items: expected a positive total weight, found {total:g} lb "
            f"from {weights.size} items"
        )
    moment = float(np.dot(weights, arms))
    return Loading(weight_lb=total, cg_in=moment / total, moment_lb_in=moment)


def cg_through_flight(
    zero_fuel_weight_lb: float,
    zero_fuel_cg_in: float,
    fuel_gal: Numeric,
    fuel_arm_in: float,
    fuel_density_lb_per_gal: float,
) -> WeightAndCg:
    """Weight and CG at each fuel quantity of a flight.

    Parameters
    ----------
    zero_fuel_weight_lb : float
        Weight with no usable fuel [lb], positive.
    zero_fuel_cg_in : float
        CG with no usable fuel [in aft of datum].
    fuel_gal : float, array or Series
        Usable fuel on board [US gal], not negative (e.g. a logged column).
    fuel_arm_in : float
        Arm of the fuel [in aft of datum].
    fuel_density_lb_per_gal : float
        Fuel density [lb/US gal], positive (avgas is commonly taken as 6.0).

    Returns
    -------
    WeightAndCg
        Weight [lb] and CG [in], each of the kind of ``fuel_gal``.

    Raises
    ------
    TrimlogError
        A negative fuel quantity, or a weight or density that is not positive.

    Notes
    -----
    W = W_zf + ρ_f·V; CG = (W_zf·x_zf + ρ_f·V·x_f) / W.  The CG moves toward
    the fuel arm as fuel is added and away from it as fuel burns.

    References
    ----------
    FAA-H-8083-1A, ch. 2 (basic weight and balance equation).

    Examples
    --------
    >>> round(cg_through_flight(1200.0, 80.0, 20.0, 90.0, 6.0).cg_in, 3)
    80.909
    """
    zfw = _positive(zero_fuel_weight_lb, "zero_fuel_weight_lb", "lb")
    zf_cg = _finite(zero_fuel_cg_in, "zero_fuel_cg_in", "in")
    density = _positive(fuel_density_lb_per_gal, "fuel_density_lb_per_gal", "lb/gal")
    arm = _finite(fuel_arm_in, "fuel_arm_in", "in")
    fuel = as_float_array(fuel_gal, "fuel_gal")
    check_range(fuel, 0.0, np.inf, "fuel_gal", "gal", series_template(fuel_gal))
    fuel_weight = fuel * density
    weight = zfw + fuel_weight
    moment = zfw * zf_cg + fuel_weight * arm
    return WeightAndCg(
        weight_lb=like_input(weight, fuel_gal, name="weight_lb"),
        cg_in=like_input(moment / weight, fuel_gal, name="cg_in"),
    )


def zero_fuel_loading(
    takeoff_weight_lb: float,
    takeoff_cg_in: float,
    fuel_gal: float,
    fuel_arm_in: float,
    fuel_density_lb_per_gal: float,
) -> Loading:
    """Remove the usable fuel from a takeoff loading.

    Parameters
    ----------
    takeoff_weight_lb : float
        Takeoff weight [lb], positive.
    takeoff_cg_in : float
        Takeoff CG [in aft of datum].
    fuel_gal : float
        Usable fuel at takeoff [US gal], not negative.
    fuel_arm_in : float
        Arm of the fuel [in aft of datum].
    fuel_density_lb_per_gal : float
        Fuel density [lb/US gal], positive.

    Returns
    -------
    Loading
        Zero-fuel weight [lb], CG [in] and moment [lb·in].

    Raises
    ------
    TrimlogError
        A fuel weight as large as the takeoff weight, or a bad input.

    Notes
    -----
    The inverse of :func:`cg_through_flight`: W_zf = W_to − ρ_f·V,
    x_zf = (W_to·x_to − ρ_f·V·x_f) / W_zf.

    References
    ----------
    FAA-H-8083-1A, ch. 2 (removing weight).

    Examples
    --------
    >>> round(zero_fuel_loading(1320.0, 80.9091, 20.0, 90.0, 6.0).cg_in, 2)
    80.0
    """
    weight = float(_positive(takeoff_weight_lb, "takeoff_weight_lb", "lb"))
    cg = float(_finite(takeoff_cg_in, "takeoff_cg_in", "in"))
    density = float(_positive(fuel_density_lb_per_gal, "fuel_density_lb_per_gal", "lb/gal"))
    arm = float(_finite(fuel_arm_in, "fuel_arm_in", "in"))
    fuel = as_float_array(fuel_gal, "fuel_gal")
    check_range(fuel, 0.0, np.inf, "fuel_gal", "gal")
    fuel_weight = float(fuel) * density
    zfw = weight - fuel_weight
    if zfw <= 0.0:
        raise TrimlogError(
            f"fuel_gal: {float(fuel):g} gal weighs {fuel_weight:g} lb, not less than the "
            f"takeoff weight {weight:g} lb"
        )
    moment = weight * cg - fuel_weight * arm
    return Loading(weight_lb=zfw, cg_in=moment / zfw, moment_lb_in=moment)


def fuel_from_flow(time_s: Numeric, fuel_flow_gph: Numeric, start_fuel_gal: float) -> Numeric:
    """Fuel on board through a flight, integrated from logged fuel flow.

    Parameters
    ----------
    time_s : array or Series
        Sample times [s], non-decreasing.
    fuel_flow_gph : array or Series
        Fuel flow at each sample [US gal/h], not negative.
    start_fuel_gal : float
        Fuel on board at the first sample [US gal], not negative.

    Returns
    -------
    array or Series
        Fuel on board at each sample [US gal] (a Series when either input is one).

    Raises
    ------
    TrimlogError
        Times that go backwards, missing or negative values, lengths that
        differ, or more fuel burnt than was on board (naming the time).

    Notes
    -----
    Trapezoidal integration: V(tᵢ) = V₀ − Σ ½·(Qₖ + Qₖ₋₁)·(tₖ − tₖ₋₁)/3600.

    References
    ----------
    FAA-H-8083-1A, ch. 2 (fuel burn changes weight and CG); the trapezoidal
    rule of numerical integration.

    Examples
    --------
    >>> fuel_from_flow([0.0, 1800.0, 3600.0], [8.0, 8.0, 8.0], 20.0).tolist()
    [20.0, 16.0, 12.0]
    """
    template = series_template(time_s, fuel_flow_gph)
    time = np.ravel(as_float_array(time_s, "time_s"))
    flow = np.ravel(as_float_array(fuel_flow_gph, "fuel_flow_gph"))
    if time.size != flow.size:
        raise TrimlogError(
            f"fuel_flow_gph: expected one value per time sample, found {flow.size} values "
            f"for {time.size} times"
        )
    if time.size == 0:
        raise TrimlogError("time_s: expected at least one sample, found none")
    start = float(as_float_array(start_fuel_gal, "start_fuel_gal"))
    check_range(np.array(start), 0.0, np.inf, "start_fuel_gal", "gal")
    for name, values in (("time_s", time), ("fuel_flow_gph", flow)):
        missing = np.isnan(values)
        if missing.any():
            row = int(np.flatnonzero(missing)[0])
            raise TrimlogError(
                f"{name}: expected a number at every sample, found a missing value"
                f"{where(row, values.size, template)} ({int(missing.sum())} missing); "
                "fuel cannot be integrated across a gap"
            )
    check_range(time, -np.inf, np.inf, "time_s", "s", template)
    check_range(flow, 0.0, np.inf, "fuel_flow_gph", "gal/h", template)
    steps = np.diff(time)
    if (steps < 0.0).any():
        row = int(np.flatnonzero(steps < 0.0)[0]) + 1
        raise TrimlogError(
            f"time_s: expected times that do not go backwards, found {time[row]:g} s after "
            f"{time[row - 1]:g} s{where(row, time.size, template)}"
        )
    burnt = np.concatenate(([0.0], np.cumsum(0.5 * (flow[1:] + flow[:-1]) * steps / 3600.0)))
    fuel = start - burnt
    # Round-off in the running sum must not turn an exactly empty tank into an error.
    empty = fuel < -1e-9 * max(start, 1.0)
    if empty.any():
        row = int(np.flatnonzero(empty)[0])
        raise TrimlogError(
            f"fuel_flow_gph: the fuel on board would fall below zero at t = {time[row]:g} s"
            f"{where(row, time.size, template)} ({fuel[row]:.3g} gal from a start of "
            f"{start:g} gal); check start_fuel_gal and the fuel-flow unit"
        )
    fuel = np.maximum(fuel, 0.0)
    if template is not None:
        return pd.Series(fuel, index=template.index, name="fuel_gal")
    return fuel


@dataclass(frozen=True)
class Weighing:
    """Empty weight and CG from scale readings, and the loaded weight and CG with the items.

    Attributes
    ----------
    empty : Loading
        As weighed: the wheel readings less their tares.
    loaded : Loading
        With the items added (pilot, passenger, fuel, baggage, ballast).
    """

    empty: Loading
    loaded: Loading


def weighed_loading(
    wheels: Iterable[tuple[float, float, float]],
    items: Iterable[tuple[float, float]] = (),
) -> Weighing:
    """Weight and CG from weighing on the wheels (usually three), plus the items loaded.

    Parameters
    ----------
    wheels : iterable of (reading_lb, tare_lb, arm_in)
        Each scale's reading [lb], its tare (chocks, blocks) [lb] and the
        wheel's weighing-point arm [in aft of datum; negative ahead of it].
    items : iterable of (weight_lb, arm_in)
        Items not on board when weighed [lb, in aft of datum]; a negative
        weight removes one (e.g. undrained fuel).

    Returns
    -------
    Weighing

    Raises
    ------
    TrimlogError
        A tare larger than its reading, no wheel, a non-numeric value, or a
        total weight that is not positive.

    Notes
    -----
    Net weight per wheel = reading - tare; then the basic equation of
    :func:`weight_and_cg` (moment = Σ wᵢ·armᵢ, CG = moment / Σ wᵢ).

    References
    ----------
    FAA-H-8083-1B, *Aircraft Weight and Balance Handbook* (2016), ch. 3
    (weighing the aircraft, empty-weight CG) and ch. 2 (the basic equation).

    Examples
    --------
    >>> w = weighed_loading([(340.0, 0.0, -78.0), (833.0, 0.0, 0.0), (833.0, 0.0, 0.0)])
    >>> round(w.empty.cg_in, 1)
    -13.2
    """
    net = []
    for number, wheel in enumerate(list(wheels), start=1):
        if np.ndim(wheel) != 1 or len(wheel) != 3:
            raise TrimlogError(
                f"wheel {number}: expected (reading_lb, tare_lb, arm_in), found {wheel!r}")
        reading, tare, arm = (float(v) for v in wheel)
        if not (np.isfinite(reading) and np.isfinite(tare) and np.isfinite(arm)):
            raise TrimlogError(f"wheel {number}: expected numbers, found {wheel!r}")
        if tare < 0.0 or tare > reading:
            raise TrimlogError(
                f"wheel {number}: tare {tare:g} lb must be between 0 and the reading "
                f"{reading:g} lb")
        net.append((reading - tare, arm))
    if not net:
        raise TrimlogError("weighing: expected the readings of the wheels, found none")
    empty = weight_and_cg(net)
    extra = list(items)
    loaded = weight_and_cg([*net, *extra]) if extra else empty
    return Weighing(empty=empty, loaded=loaded)
