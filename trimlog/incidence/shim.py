"""Stabilizer incidence: the incidence change and the shim to cut.

A fixed stabilizer whose elevator is not near neutral in cruise costs trim
drag; the fix is the stabilizer incidence.  This module turns the elevator at
cruise (from the stability fit) and the elevator effectiveness ``tau`` (from
:mod:`trimlog.incidence.tau`) into an incidence change and a shim under one pair of
attach fittings.

Conventions (DEVELOPERS.md): elevator trailing-edge down positive, stabilizer
incidence leading-edge up positive.  The tail's lift goes with
``alpha - epsilon + i_t + tau * delta_e``, so ``delta_i_t = tau *
delta_e_cruise`` brings the elevator to neutral at cruise.

All functions take plain numbers (estimates, intervals), not fit objects, so
the stability fit and this module stay independent.

References
----------
.. [1] B. Etkin and L. D. Reid, *Dynamics of Flight: Stability and Control*,
   3rd ed., Wiley, 1996, ch. 2 (tail lift linear in the tail angle of attack
   and the elevator).
.. [2] J. Roskam, *Airplane Design, Part VI*, DARcorporation, 1987, fig. 8.13
   (plain-flap effectiveness falling off at larger deflections).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, fields
from typing import Any, Literal

import numpy as np
import pandas as pd

from trimlog import cautions
from trimlog.errors import TrimlogError
from trimlog.findings import Finding, Severity, finding
from trimlog.incidence.tau import TauChoice, TauSource, _finite
from trimlog.input.profile import AircraftProfile
from trimlog.physics import airspeed

# Shim stock: common aluminium/steel sheet gauges and metric sheet or washer
# thicknesses; common practice, no source.  Up to two sheets may be stacked.
INCH_STOCK_IN = (0.016, 0.020, 0.025, 0.032, 0.040, 0.050, 0.063, 0.071, 0.080, 0.090,
                 0.100, 0.125)
METRIC_STOCK_MM = (0.5, 1.0, 1.5, 2.0, 2.5, 3.0)
MM_PER_IN = 25.4

# Usual absolute incidence of a light airplane's stabilizer to the waterline
# [deg]; common practice, no source.
USUAL_INCIDENCE_RANGE_DEG = (-2.0, 1.0)

# Beyond about this deflection a plain flap's effectiveness falls below the
# linear value (Roskam [2] fig. 8.13; from memory).
LINEAR_DEFLECTION_LIMIT_DEG = 10.0

_MONTE_CARLO_DRAWS = 40_000
_MONTE_CARLO_SEED = 20_240_501
_Z95 = 1.959963984540054


def _interval(name: str, value: Any, centre: float | None = None) -> tuple[float, float]:
    try:
        lo, hi = (float(v) for v in value)
    except (TypeError, ValueError):
        raise TrimlogError(f"{name}: expected [lo, hi], found {value!r}") from None
    lo, hi = _finite(f"{name}[0]", lo), _finite(f"{name}[1]", hi)
    if lo > hi or (centre is not None and not lo <= centre <= hi):
        raise TrimlogError(
            f"{name}: expected lo <= estimate <= hi, found [{lo:g}, {hi:g}]"
            + (f" around {centre:g}" if centre is not None else "")
        )
    return lo, hi


# ---------------------------------------------------------------- incidence change

@dataclass(frozen=True)
class IncidenceChange:
    """Delta_i_t = tau * delta_e_cruise with its interval."""

    change_deg: float
    ci95_deg: tuple[float, float]
    method: str


def _split_normal(centre: float, lo: float, hi: float, z: np.ndarray) -> np.ndarray:
    return centre + np.where(z < 0.0, (centre - lo), (hi - centre)) / _Z95 * z


def supported_decimals(lo: float, hi: float, *, finest: int = 3) -> int:
    """Decimal places a value with this 95 % interval supports.

    Parameters
    ----------
    lo, hi : float
        The 95 % interval, in the unit the value is printed in.
    finest : int
        Most decimals ever given (the resolution of the quantity itself).

    Returns
    -------
    int
        Decimals so the last digit printed is the first significant digit of
        the interval's half-width (0 to ``finest``).

    References
    ----------
    JCGM 100:2008 (GUM), 7.2.6: state an uncertainty to at most two
    significant digits and round the value to match; one digit is kept here
    (the conservative reading for a number a builder acts on).

    Examples
    --------
    >>> supported_decimals(0.105, 1.055), supported_decimals(0.101, 0.130)
    (1, 2)
    """
    half = 0.5 * abs(float(hi) - float(lo))
    if not math.isfinite(half) or half <= 0.0:
        return finest
    return int(min(finest, max(0, -math.floor(math.log10(half)))))


def _residual_interval(de: float, de_ci: tuple[float, float], tau: float,
                       tau_ci: tuple[float, float], stock_change_deg: float) -> tuple[float, float]:
    """95 % interval of ``delta_e - stock_change / tau`` (same Monte Carlo as the change)."""
    rng = np.random.default_rng(_MONTE_CARLO_SEED)
    z = rng.standard_normal((2, _MONTE_CARLO_DRAWS))
    taus = np.maximum(_split_normal(tau, *tau_ci, z[0]), 1e-6)
    draws = _split_normal(de, *de_ci, z[1]) - stock_change_deg / taus
    lo, hi = np.percentile(draws, [2.5, 97.5])
    return float(lo), float(hi)


def incidence_change(
    elevator_cruise_deg: float,
    elevator_ci95: tuple[float, float],
    tau: float,
    tau_ci95: tuple[float, float],
) -> IncidenceChange:
    """Incidence change that brings the elevator to neutral at cruise.

    Parameters
    ----------
    elevator_cruise_deg : float
        Elevator at the cruise condition [deg], trailing-edge down positive.
    elevator_ci95 : (float, float)
        Its 95 % interval [deg].
    tau : float
        Elevator effectiveness [-].
    tau_ci95 : (float, float)
        Its 95 % interval [-] (may be asymmetric, e.g. Fieller).

    Returns
    -------
    IncidenceChange
        ``change_deg = tau * elevator_cruise_deg`` [deg], leading-edge up
        positive, and its 95 % interval.

    Notes
    -----
    The interval is propagated by Monte Carlo with a fixed seed (so the
    same inputs always give the same interval): each input is drawn from a
    split normal whose two halves match the lower and upper half-widths of
    its interval, the two independently, and the 2.5 and 97.5 percentiles
    of ``tau * delta_e`` are taken.  A negative elevator (trailing edge up)
    gives a negative change: the leading edge goes down (common practice,
    no source).

    References
    ----------
    Tail lift linear in ``alpha - epsilon + i_t + tau delta_e``: Etkin &
    Reid, *Dynamics of Flight*, ch. 2; Nelson, *Flight Stability and
    Automatic Control*, ch. 2.

    Examples
    --------
    >>> incidence_change(-2.0, (-2.4, -1.6), 0.5, (0.45, 0.55)).change_deg
    -1.0
    """
    de = _finite("elevator_cruise_deg", elevator_cruise_deg)
    de_lo, de_hi = _interval("elevator_ci95", elevator_ci95, de)
    t = _finite("tau", tau)
    t_lo, t_hi = _interval("tau_ci95", tau_ci95, t)
    rng = np.random.default_rng(_MONTE_CARLO_SEED)
    z = rng.standard_normal((2, _MONTE_CARLO_DRAWS))
    draws = _split_normal(t, t_lo, t_hi, z[0]) * _split_normal(de, de_lo, de_hi, z[1])
    lo, hi = np.percentile(draws, [2.5, 97.5])
    return IncidenceChange(
        change_deg=t * de,
        ci95_deg=(float(lo), float(hi)),
        method=(
            f"Monte Carlo, {_MONTE_CARLO_DRAWS} draws, fixed seed; split-normal inputs "
            "matched to each 95 % interval, independent"
        ),
    )


# ---------------------------------------------------------------------------- shim

@dataclass(frozen=True)
class ShimResult:
    """The shim for one incidence change: exact, rounded to stock, in words."""

    change_deg: float
    spacing_in: float
    thickness_in: float
    thickness_mm: float
    location: str | None
    stock: str
    stock_sheets: tuple[float, ...]
    stock_thickness_in: float
    stock_thickness_mm: float
    stock_change_deg: float
    recommended: bool
    residual_elevator_deg: float | None
    current_incidence_deg: float | None
    new_incidence_deg: float | None
    verdict: tuple[Finding, ...]
    findings: tuple[Finding, ...] = ()
    thickness_ci95_in: tuple[float, float] | None = None
    decimals_in: int = 3
    decimals_mm: int = 2
    steps: int = 1
    residual_elevator_ci95_deg: tuple[float, float] | None = None
    #: Thickness of each of the ``steps`` equal cuts [in] (the exact thickness for one cut).
    step_thickness_in: float | None = None

    @property
    def words(self) -> str:
        """The verdict in words (from the findings catalogue)."""
        return " ".join(f.message for f in self.verdict)

    @property
    def warnings(self) -> tuple[str, ...]:
        """The findings in words."""
        return tuple(f.message for f in self.findings)


def shim_thickness_in(change_deg: Any, spacing_in: float) -> Any:
    """Shim thickness that tilts the stabilizer by an angle.

    Parameters
    ----------
    change_deg : float, array or Series
        Incidence change [deg] (sign ignored).
    spacing_in : float
        Fore-aft distance between the front and rear attach points [in].

    Returns
    -------
    float, array or Series
        ``spacing * tan(|change|)`` [in].

    References
    ----------
    Right-triangle identity: rise = run x tan(angle).

    Examples
    --------
    >>> round(shim_thickness_in(1.0, 300 / 25.4) * 25.4, 3)
    5.237
    """
    spacing = _finite("stabilizer_attach_spacing_in", spacing_in)
    if spacing <= 0.0:
        raise TrimlogError(f"stabilizer_attach_spacing_in: expected > 0, found {spacing:g}")
    result = spacing * np.tan(np.radians(np.abs(np.asarray(change_deg, dtype=float))))
    if isinstance(change_deg, pd.Series):
        return pd.Series(result, index=change_deg.index, name="shim_in")
    return result if result.ndim else float(result)


def _stock_choices(stock: str) -> tuple[tuple[tuple[float, ...], float], ...]:
    """Every stack of zero, one or two sheets, with its thickness in inches."""
    if stock == "inch":
        sheets, to_in = INCH_STOCK_IN, 1.0
    elif stock == "metric":
        sheets, to_in = METRIC_STOCK_MM, 1.0 / MM_PER_IN
    else:
        raise TrimlogError(f"shim stock: expected 'inch' or 'metric', found {stock!r}")
    stacks = [((), 0.0)]
    stacks += [((s,), s * to_in) for s in sheets]
    stacks += [((a, b), (a + b) * to_in) for i, a in enumerate(sheets) for b in sheets[i:]]
    return tuple(sorted(stacks, key=lambda item: (item[1], len(item[0]))))


def angle_words(value: float, positive: str, negative: str, decimals: int = 2,
                ci95: tuple[float, float] | None = None) -> str:
    """A signed angle in words: size, then which way ("1.05 deg trailing edge up").

    Parameters
    ----------
    value : float
        The angle [deg], positive in the ``positive`` sense.
    positive, negative : str
        The words for each sign ("trailing edge down", "trailing edge up").
    decimals : int
        Decimals printed.
    ci95 : (float, float), optional
        Its 95 % interval, added in the same words.

    Returns
    -------
    str

    Examples
    --------
    >>> angle_words(-1.046, "trailing edge down", "trailing edge up")
    '1.05 deg trailing edge up'
    >>> angle_words(-0.46, "leading edge up", "leading edge down", 2, (-0.53, -0.41))
    '0.46 deg leading edge down (95 %: 0.41 to 0.53 deg)'
    >>> angle_words(0.001, "up", "down", 2)
    '0.00 deg'
    """
    def one(v: float) -> str:
        text = f"{abs(v):.{decimals}f} deg"
        if float(f"{abs(v):.{decimals}f}") == 0.0:
            return text
        return f"{text} {positive if v > 0 else negative}"

    out = one(value)
    if ci95 is not None:
        lo, hi = ci95
        if lo > 0.0 or hi < 0.0:
            a, b = sorted((abs(lo), abs(hi)))
            out += f" (95 %: {a:.{decimals}f} to {b:.{decimals}f} deg)"
        else:
            out += f" (95 %: {one(lo)} to {one(hi)})"
    return out


ELEVATOR_WORDS = ("trailing edge down", "trailing edge up")
INCIDENCE_WORDS = ("leading edge up", "leading edge down")


def _stock_values(sheets: tuple[float, ...], stock: str) -> tuple[str, dict[str, float]]:
    """Code suffix and sheet thicknesses (in the stock's unit) of a stack of one or two sheets."""
    unit = "in" if stock == "inch" else "mm"
    count = "one" if len(sheets) == 1 else "two"
    return f"{stock}_{count}", {f"sheet_{i + 1}_{unit}": s for i, s in enumerate(sheets)}


# long: one cut's stock, steps, residual and verdict share their intermediate values
def shim(
    change_deg: float,
    spacing_in: float,
    *,
    change_ci95_deg: tuple[float, float] | None = None,
    elevator_cruise_deg: float | None = None,
    tau: float | None = None,
    current_incidence_deg: float | None = None,
    stock: Literal["inch", "metric"] = "inch",
    round_down: bool = False,
    elevator_ci95_deg: tuple[float, float] | None = None,
    tau_ci95: tuple[float, float] | None = None,
    residual_ci95: Callable[[float], tuple[float, float]] | None = None,
) -> ShimResult:
    """Size the shim for an incidence change, rounded to practical stock.

    Parameters
    ----------
    change_deg : float
        Incidence change [deg], leading-edge up positive.
    spacing_in : float
        Fore-aft distance between front and rear attach points [in].
    change_ci95_deg : (float, float), optional
        95 % interval of the change [deg]; when it contains zero no change is
        recommended.
    elevator_cruise_deg, tau : float, optional
        Elevator at cruise [deg] and tau [-], to state the residual elevator
        after the rounded shim.
    current_incidence_deg : float, optional
        Present incidence to the waterline [deg], to state the new one.
    stock : {"inch", "metric"}
        Which stock list to round to (:data:`INCH_STOCK_IN` or
        :data:`METRIC_STOCK_MM`); up to two sheets stacked.
    round_down : bool
        Round to the thickest stack not thicker than the exact shim (for a
        first step that must not overshoot) instead of the nearest.
    elevator_ci95_deg, tau_ci95 : (float, float), optional
        95 % intervals of the elevator at cruise [deg] and of tau [-], to
        give the residual elevator its interval.
    residual_ci95 : callable, optional
        ``f(stock_change_deg) -> (lo, hi)``: the residual elevator's 95 %
        interval from a joint model (tau flight-calibrated from the same fit
        as the elevator); used instead of the independent Monte Carlo.

    Returns
    -------
    ShimResult
        Exact thickness (in and mm), which fitting to raise, the nearest
        stack of stock (ties go to the thinner), the residual elevator
        ``delta_e - delta_i_rounded / tau``, the new incidence, the words.

    Notes
    -----
    Leading edge down (change < 0) means raising the rear attach points (or
    lowering the front ones); leading edge up means raising the front.  No
    change is recommended when the nearest stock is no shim at all or the
    change's interval contains zero.  A shim thicker than two sheets of the
    thickest stock is cut in equal steps (``steps``); the stack, the residual
    and the new incidence are then those of the first step.  The exact
    thickness is rounded to the decimals its interval supports
    (:func:`supported_decimals`).  The new incidence is checked against
    :data:`USUAL_INCIDENCE_RANGE_DEG` (common practice, no source).

    References
    ----------
    Thickness = spacing x tan(|change|) (right-triangle identity).
    """
    change = _finite("change_deg", change_deg)
    exact_in = shim_thickness_in(change, spacing_in)
    spacing = float(spacing_in)
    found: list[Finding] = []
    choices = _stock_choices(stock)
    top_in = choices[-1][1]
    # One cut is at most two sheets of the thickest stock; beyond that, equal steps.
    steps = max(1, math.ceil(exact_in / top_in - 1e-9))
    step_in = exact_in / steps
    if round_down:
        sheets, stock_in = [c for c in choices if c[1] <= step_in + 1e-12][-1]
    else:
        sheets, stock_in = min(choices, key=lambda item: abs(item[1] - step_in))
    interval_has_zero = False
    thickness_ci = None
    decimals_in, decimals_mm, decimals_deg = 3, 2, 2
    if change_ci95_deg is not None:
        lo, hi = _interval("change_ci95_deg", change_ci95_deg, change)
        interval_has_zero = lo <= 0.0 <= hi
        ends = sorted(float(shim_thickness_in(c, spacing_in)) for c in (lo, hi))
        thickness_ci = (0.0 if interval_has_zero else ends[0], ends[1])
        decimals_in = supported_decimals(*thickness_ci, finest=3)
        decimals_mm = supported_decimals(*(t * MM_PER_IN for t in thickness_ci), finest=2)
        decimals_deg = supported_decimals(lo, hi, finest=2)
    recommended = bool(sheets) and not interval_has_zero
    if not recommended:
        sheets, stock_in, steps = (), 0.0, 1
    stock_change = (
        math.copysign(math.degrees(math.atan(stock_in / spacing)), change) if stock_in else 0.0
    )
    location = None if change == 0.0 else ("rear" if change < 0.0 else "front")

    residual = residual_ci = None
    if elevator_cruise_deg is not None and tau is not None:
        t = _finite("tau", tau)
        if t <= 0.0:
            raise TrimlogError(f"tau: expected > 0, found {t:g}")
        de = _finite("elevator_cruise_deg", elevator_cruise_deg)
        residual = de - stock_change / t
        if residual_ci95 is not None:
            residual_ci = residual_ci95(stock_change)
        elif elevator_ci95_deg is not None and tau_ci95 is not None:
            residual_ci = _residual_interval(
                de, _interval("elevator_ci95_deg", elevator_ci95_deg, de), t,
                _interval("tau_ci95", tau_ci95, t), stock_change)
    new_incidence = None
    if current_incidence_deg is not None:
        current = _finite("current_incidence_deg", current_incidence_deg)
        new_incidence = current + stock_change
        # Judge the end of all the steps, not only the first one.
        final = new_incidence if steps == 1 else current + change
        low, high = USUAL_INCIDENCE_RANGE_DEG
        if not low <= final <= high:
            found.append(finding("incidence.shim.unusual_incidence", Severity.WARNING,
                                 new_incidence_deg=final, low_deg=low, high_deg=high,
                                 new_incidence_words=angle_words(final, *INCIDENCE_WORDS)))
    if exact_in > top_in:
        found.append(finding("incidence.shim.thicker_than_stock", Severity.WARNING,
                             thickness_in=exact_in, top_in=top_in, steps=steps,
                             step_in=step_in))

    exact_mm = exact_in * MM_PER_IN
    move = {"location": location, "other": "front" if location == "rear" else "rear",
            "thickness_in": exact_in, "thickness_mm": exact_mm,
            "decimals_in": decimals_in, "decimals_mm": decimals_mm}
    if recommended:
        kind, sheet_values = _stock_values(sheets, stock)
        verdict = [finding(f"incidence.shim.cut.{kind}", Severity.NOTE,
                           direction="down" if change < 0.0 else "up", change_abs_deg=abs(change),
                           decimals_deg=decimals_deg,
                           **move, **sheet_values, stock_in=stock_in,
                           stock_mm=stock_in * MM_PER_IN, stock_change_abs_deg=abs(stock_change))]
        if steps > 1:
            verdict.append(finding("incidence.shim.steps", Severity.CAUTION, steps=steps,
                                   step_in=step_in, step_mm=step_in * MM_PER_IN))
        if residual is not None:
            verdict.append(finding(
                "incidence.shim.residual" + (".step_one" if steps > 1 else ""),
                Severity.NOTE, residual_elevator_deg=residual,
                residual_words=angle_words(residual, *ELEVATOR_WORDS, 2, residual_ci)))
    elif interval_has_zero:
        code = "incidence.shim.none.interval_has_zero" + ("" if location else ".no_shim")
        verdict = [finding(code, Severity.CAUTION, change_deg=change, **move)]
    else:
        code = "incidence.shim.none." + ("step_too_thin" if round_down else "too_thin")
        verdict = [finding(code, Severity.NOTE, change_deg=change,
                           thickness_in=exact_in, thickness_mm=exact_mm)]
    if new_incidence is not None:
        verdict.append(finding("incidence.shim.new_incidence", Severity.NOTE,
                               new_incidence_deg=new_incidence,
                               new_incidence_words=angle_words(new_incidence, *INCIDENCE_WORDS)))
    return ShimResult(
        change_deg=change, spacing_in=spacing, thickness_in=exact_in, thickness_mm=exact_mm,
        location=location, stock=stock, stock_sheets=sheets, stock_thickness_in=stock_in,
        stock_thickness_mm=stock_in * MM_PER_IN, stock_change_deg=stock_change,
        recommended=recommended, residual_elevator_deg=residual,
        current_incidence_deg=current_incidence_deg, new_incidence_deg=new_incidence,
        verdict=tuple(verdict), findings=tuple(found), thickness_ci95_in=thickness_ci,
        decimals_in=decimals_in, decimals_mm=decimals_mm, steps=steps,
        residual_elevator_ci95_deg=residual_ci, step_thickness_in=exact_in / steps,
    )


# ------------------------------------------------------------------ recommendation

def cruise_lift_coefficient(profile: AircraftProfile) -> float:
    """Lift coefficient at the profile's cruise condition.

    Parameters
    ----------
    profile : AircraftProfile
        Uses ``cruise_cas_kt``, ``cruise_pressure_alt_ft``, ``cruise_weight_lb``
        and ``wing_area_ft2`` (the profile states the defaults it filled in).

    Returns
    -------
    float
        CL = W / (q S) in level flight at the cruise EAS [-].

    References
    ----------
    CAS -> EAS compressible (Gracey, NASA RP-1046) in :mod:`trimlog.physics.airspeed`;
    CL = 2 W / (rho0 Ve^2 S).
    """
    eas = airspeed.cas_to_eas(profile.cruise_cas_kt, profile.cruise_pressure_alt_ft)
    return float(airspeed.lift_coefficient(profile.cruise_weight_lb, eas, profile.wing_area_ft2))


@dataclass(frozen=True)
class IncidenceRecommendation:
    """Everything about the incidence correction that the views show.

    Intervals are (lo, hi) tuples; :meth:`to_json` gives the contract keys of
    the ``incidence`` block of ``trimlog analyze --json``.
    """

    cruise_cl: float
    cruise_cg_pct_mac: float
    elevator_at_cruise_deg: float
    elevator_at_cruise_ci95_deg: tuple[float, float]
    tau: float
    tau_source: TauSource
    change_deg: float
    change_ci95_deg: tuple[float, float]
    shim_thickness_in: float
    shim_thickness_mm: float
    shim_location: str
    tau_ci95: tuple[float, float]
    tau_explanation: str
    change_method: str
    shim_recommended: bool
    shim_stock: str
    shim_stock_sheets: tuple[float, ...]
    shim_stock_thickness_in: float
    shim_stock_thickness_mm: float
    shim_stock_change_deg: float
    residual_elevator_deg: float
    current_incidence_deg: float | None
    new_incidence_deg: float | None
    verdict: tuple[Finding, ...]
    findings: tuple[Finding, ...]
    cautions: tuple[str, ...]
    #: The change the shim above makes now [deg]: the estimate when tau is
    #: flight-calibrated, else the near end of ``change_ci95_deg``.
    step_change_deg: float | None = None
    #: "full change" or "first step" (tau not flight-calibrated).
    step_basis: str = "full change"
    shim_thickness_ci95_in: tuple[float, float] | None = None
    shim_decimals_in: int = 3
    shim_decimals_mm: int = 2
    shim_steps: int = 1
    residual_elevator_ci95_deg: tuple[float, float] | None = None
    elevator_at_cruise_words: str = ""
    change_words: str = ""
    #: Thickness of each of the ``shim_steps`` equal cuts [in] (the exact one for one cut).
    shim_step_thickness_in: float | None = None

    @property
    def words(self) -> str:
        """The recommendation in words (from the findings catalogue)."""
        return " ".join(f.message for f in self.verdict)

    @property
    def warnings(self) -> tuple[str, ...]:
        """The findings in words."""
        return tuple(f.message for f in self.findings)

    def to_json(self) -> dict[str, Any]:
        """Return the ``incidence`` block: the contract keys first, then the extras.

        ``verdict`` and ``findings`` appear as their words, under the keys
        ``words`` and ``warnings``.
        """
        out: dict[str, Any] = {}
        for f in fields(self):
            if f.name == "verdict":
                out["words"] = self.words
            elif f.name == "findings":
                out["warnings"] = list(self.warnings)
            else:
                v = getattr(self, f.name)
                out[f.name] = list(v) if isinstance(v, tuple) else v
        return out


def recommend_incidence(
    *,
    cruise_cl: float,
    cruise_cg_pct_mac: float,
    elevator_cruise_deg: float,
    elevator_ci95_deg: tuple[float, float],
    tau: TauChoice,
    spacing_in: float,
    current_incidence_deg: float | None = None,
    stock: Literal["inch", "metric"] = "inch",
    change: IncidenceChange | None = None,
    residual_ci95: Callable[[float], tuple[float, float]] | None = None,
) -> IncidenceRecommendation:
    """Recommend the incidence change and the shim for the elevator at cruise.

    Parameters
    ----------
    cruise_cl : float
        Lift coefficient of the cruise condition [-] (see
        :func:`cruise_lift_coefficient`).
    cruise_cg_pct_mac : float
        Cruise CG [%MAC].
    elevator_cruise_deg : float
        Elevator at cruise for the latest incidence setting [deg], from the
        pooled stick-fixed model.
    elevator_ci95_deg : (float, float)
        Its 95 % interval [deg].
    tau : TauChoice
        From :func:`trimlog.incidence.tau.choose_tau`.
    spacing_in : float
        Stabilizer attach-point spacing [in].
    current_incidence_deg : float, optional
        Present incidence to the waterline [deg].
    stock : {"inch", "metric"}
        Shim stock list to round to.
    change : IncidenceChange, optional
        The change with its interval when computed jointly with tau (tau
        flight-calibrated from the same fit:
        :func:`trimlog.incidence.before_after.joint_incidence_change`);
        default :func:`incidence_change` (inputs independent).
    residual_ci95 : callable, optional
        Passed to :func:`shim` (the residual elevator's joint interval).

    Returns
    -------
    IncidenceRecommendation

    Notes
    -----
    A recommendation after a shim is flown is a residual, not a repeat,
    provided the elevator at cruise is that of the latest setting.

    When tau is not flight-calibrated (a profile value or the chord-ratio
    estimate) the shim is sized for a first step that cannot overshoot: the
    near end (smaller magnitude) of the change's 95 % interval, rounded down
    to stock.  The words say so and ask for a re-fly, whose intercept shift
    calibrates tau (:func:`trimlog.incidence.tau.calibrate_tau`) and sizes the
    rest.  A shim too thick by the error of an uncalibrated tau would leave the
    elevator trimmed the other way and need a second, corrective cut; an
    undersized first step only costs one more flight.

    References
    ----------
    See :func:`incidence_change` and :func:`shim`.
    """
    cl = _finite("cruise_cl", cruise_cl)
    cg = _finite("cruise_cg_pct_mac", cruise_cg_pct_mac)
    de = _finite("elevator_cruise_deg", elevator_cruise_deg)
    de_ci = _interval("elevator_ci95_deg", elevator_ci95_deg, de)
    if change is None:
        change = incidence_change(de, de_ci, tau.tau, tau.ci95)
    step, basis = first_step(change, tau)
    cut = shim(
        step, spacing_in, change_ci95_deg=change.ci95_deg,
        elevator_cruise_deg=de, tau=tau.tau, current_incidence_deg=current_incidence_deg,
        stock=stock, round_down=basis == "first step", elevator_ci95_deg=de_ci,
        tau_ci95=tau.ci95, residual_ci95=residual_ci95,
    )
    step_words: tuple[Finding, ...] = ()
    if basis == "first step" and cut.recommended:
        step_words = (finding(
            "incidence.shim.first_step", Severity.CAUTION, tau_source=tau.tau_source,
            tau_lo=tau.ci95[0], tau_hi=tau.ci95[1], change_deg=change.change_deg,
            step_deg=step),)
    found = list(tau.findings)
    found += cut.findings
    if abs(de) > LINEAR_DEFLECTION_LIMIT_DEG:
        found.append(finding("incidence.elevator_beyond_linear", Severity.CAUTION,
                             elevator_deg=de, limit_deg=LINEAR_DEFLECTION_LIMIT_DEG))
    if cut.location is None or not cut.recommended:
        location = "none (no change recommended)"
    elif cut.location == "rear":
        location = "rear attach points (leading edge down)"
    else:
        location = "front attach points (leading edge up)"
    elevator_words = angle_words(de, *ELEVATOR_WORDS, 2, de_ci)
    change_words = angle_words(change.change_deg, *INCIDENCE_WORDS, 2, change.ci95_deg)
    summary = finding(
        "incidence.summary", Severity.NOTE, elevator_words=elevator_words,
        change_words=change_words, cruise_cl=cl, cruise_cg_pct_mac=cg, elevator_deg=de,
        elevator_lo_deg=de_ci[0], elevator_hi_deg=de_ci[1], change_deg=change.change_deg,
        change_lo_deg=change.ci95_deg[0], change_hi_deg=change.ci95_deg[1], tau=tau.tau,
        tau_source=tau.tau_source)
    return IncidenceRecommendation(
        cruise_cl=cl, cruise_cg_pct_mac=cg, elevator_at_cruise_deg=de,
        elevator_at_cruise_ci95_deg=de_ci, tau=tau.tau, tau_ci95=tau.ci95,
        tau_source=tau.tau_source, tau_explanation=tau.explanation,
        change_deg=change.change_deg, change_ci95_deg=change.ci95_deg,
        change_method=change.method, shim_thickness_in=cut.thickness_in,
        shim_thickness_mm=cut.thickness_mm, shim_location=location,
        shim_recommended=cut.recommended, shim_stock=stock, shim_stock_sheets=cut.stock_sheets,
        shim_stock_thickness_in=cut.stock_thickness_in,
        shim_stock_thickness_mm=cut.stock_thickness_mm,
        shim_stock_change_deg=cut.stock_change_deg,
        residual_elevator_deg=(
            cut.residual_elevator_deg if cut.residual_elevator_deg is not None else de
        ),
        current_incidence_deg=current_incidence_deg, new_incidence_deg=cut.new_incidence_deg,
        verdict=(summary, *cut.verdict, *step_words), findings=tuple(found),
        cautions=(cautions.ESTIMATE_STATEMENT, *cautions.INCIDENCE),
        step_change_deg=step, step_basis=basis,
        shim_thickness_ci95_in=cut.thickness_ci95_in, shim_decimals_in=cut.decimals_in,
        shim_decimals_mm=cut.decimals_mm, shim_steps=cut.steps,
        residual_elevator_ci95_deg=cut.residual_elevator_ci95_deg,
        elevator_at_cruise_words=elevator_words, change_words=change_words,
        shim_step_thickness_in=cut.step_thickness_in,
    )


def first_step(change: IncidenceChange, tau: TauChoice) -> tuple[float, str]:
    """The incidence change to make now: all of it, or a first step that cannot overshoot.

    Parameters
    ----------
    change : IncidenceChange
        From :func:`incidence_change`.
    tau : TauChoice
        Where tau came from.

    Returns
    -------
    (float, str)
        The change to make now [deg] and ``"full change"`` (tau
        flight-calibrated) or ``"first step"`` (otherwise: the end of the
        95 % interval nearer zero; the estimate itself when the interval
        straddles zero, where :func:`shim` recommends nothing).

    Examples
    --------
    >>> from trimlog.incidence.tau import TauChoice
    >>> c = IncidenceChange(-1.3, (-1.5, -0.9), "")
    >>> first_step(c, TauChoice(0.55, (0.39, 0.57), "chord-ratio estimate", ""))
    (-0.9, 'first step')
    >>> first_step(c, TauChoice(0.45, (0.40, 0.50), "flight-calibrated", ""))
    (-1.3, 'full change')
    """
    if tau.tau_source == "flight-calibrated":
        return change.change_deg, "full change"
    lo, hi = change.ci95_deg
    if lo <= 0.0 <= hi:
        return change.change_deg, "first step"
    return (hi if hi < 0.0 else lo), "first step"
