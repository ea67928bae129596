"""Tail geometry check and the stick-fixed neutral point predicted from geometry.

The tail volume coefficients are compared with the typical values of the
aircraft's class from a design textbook, the tail aspect ratios with their
usual ranges, and the tail-volume formula gives a paper neutral point to set
beside the one measured in flight.  Every number here is a design estimate:
it ignores the fuselage, the propeller and the nacelles, which usually move
the real neutral point forward of this figure.

References
----------
.. [1] D. P. Raymer, *Aircraft Design: A Conceptual Approach*, AIAA, table 6.4
   (typical tail volume coefficients) and eq. 12.6 (lift-curve slope of a
   finite wing, from USAF DATCOM).
.. [2] R. C. Nelson, *Flight Stability and Automatic Control*, 2nd ed.,
   McGraw-Hill, 1998, ch. 2 (tail contribution, downwash gradient of an
   elliptically loaded wing, stick-fixed neutral point).
.. [3] B. Etkin and L. D. Reid, *Dynamics of Flight: Stability and Control*,
   3rd ed., Wiley, 1996, ch. 2 (neutral point from the tail volume).
.. [4] R. T. Jones, "Properties of low-aspect-ratio pointed wings at speeds
   below and above the speed of sound", NACA Report 835, 1946 (the slender
   wing limit dCL/dalpha = pi A / 2).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from trimlog.errors import TrimlogError
from trimlog.input.profile import AircraftProfile

# Raymer [1] table 6.4: (horizontal, vertical) tail volume coefficients.
TYPICAL_TAIL_VOLUMES = {
    "homebuilt": (0.50, 0.04),
    "general aviation single": (0.70, 0.04),
    "general aviation twin": (0.80, 0.07),
    "sailplane": (0.50, 0.02),
}

# Usual tail aspect ratios of light aircraft; common practice, no source.
HTAIL_ASPECT_RANGE = (3.0, 5.0)
VTAIL_ASPECT_RANGE = (1.3, 2.0)

#: Tail dynamic-pressure ratio q_t / q assumed (a stated assumption).
DEFAULT_TAIL_EFFICIENCY = 0.9
#: Section lift-curve slope over 2 pi assumed for the wing and tail sections.
DEFAULT_SECTION_EFFICIENCY = 0.95
#: Aerodynamic centre of the wing, fraction of the MAC (thin-airfoil quarter chord).
WING_AC_FRACTION = 0.25

IN2_PER_FT2 = 144.0


def _positive(name: str, value: float) -> float:
    number = float(value)
    if not math.isfinite(number) or number <= 0.0:
        raise TrimlogError(f"{name}: expected a positive number, found {value!r}")
    return number


def horizontal_tail_volume(
    htail_area_ft2: float, htail_arm_in: float, wing_area_ft2: float, mac_in: float
) -> float:
    """Horizontal tail volume coefficient V_H = S_H l_H / (S c_bar).

    Parameters
    ----------
    htail_area_ft2 : float
        Horizontal tail area [ft^2].
    htail_arm_in : float
        Wing quarter-MAC to tail quarter-MAC [in].
    wing_area_ft2 : float
        Wing reference area [ft^2].
    mac_in : float
        Wing mean aerodynamic chord [in].

    Returns
    -------
    float
        V_H [-].

    References
    ----------
    Raymer, *Aircraft Design: A Conceptual Approach*, eq. 6.28 and table 6.4
    (from memory for the equation number).

    Examples
    --------
    >>> round(horizontal_tail_volume(22.0, 150.0, 118.0, 51.0), 4)
    0.5484
    """
    moment = _positive("htail_area_ft2", htail_area_ft2) * _positive("htail_arm_in", htail_arm_in)
    return moment / (_positive("wing_area_ft2", wing_area_ft2) * _positive("mac_in", mac_in))


def vertical_tail_volume(
    vtail_area_ft2: float, vtail_arm_in: float, wing_area_ft2: float, wing_span_in: float
) -> float:
    """Vertical tail volume coefficient V_V = S_V l_V / (S b).

    Parameters
    ----------
    vtail_area_ft2 : float
        Vertical tail area [ft^2].
    vtail_arm_in : float
        Wing quarter-MAC to fin quarter-MAC [in].
    wing_area_ft2 : float
        Wing reference area [ft^2].
    wing_span_in : float
        Wing span [in].

    Returns
    -------
    float
        V_V [-].

    References
    ----------
    Raymer, *Aircraft Design: A Conceptual Approach*, table 6.4.

    Examples
    --------
    >>> round(vertical_tail_volume(9.0, 155.0, 118.0, 336.0), 4)
    0.0352
    """
    moment = _positive("vtail_area_ft2", vtail_area_ft2) * _positive("vtail_arm_in", vtail_arm_in)
    return moment / (
        _positive("wing_area_ft2", wing_area_ft2) * _positive("wing_span_in", wing_span_in)
    )


def aspect_ratio(span_in: float, area_ft2: float) -> float:
    """Aspect ratio b^2 / S of a surface (for a fin: height^2 / area) [-]."""
    span_ft = _positive("span_in", span_in) / 12.0
    return span_ft**2 / _positive("area_ft2", area_ft2)


def lift_curve_slope_per_rad(
    aspect_ratio: float,
    sweep_half_chord_deg: float = 0.0,
    section_efficiency: float = DEFAULT_SECTION_EFFICIENCY,
) -> float:
    r"""Lift-curve slope of a finite wing, incompressible (Helmbold / DATCOM).

    Parameters
    ----------
    aspect_ratio : float
        Aspect ratio A [-].
    sweep_half_chord_deg : float
        Sweep of the half-chord line [deg].
    section_efficiency : float
        Section lift-curve slope over 2 pi, eta [-] (0.95 assumed).

    Returns
    -------
    float
        dCL/dalpha [1/rad].

    Notes
    -----
    .. math:: a = \frac{2\pi A}{2 + \sqrt{4 + A^2 (1 + \tan^2\Lambda) / \eta^2}}

    It tends to ``2 pi eta`` for large A and to the slender-wing value
    ``pi A / 2`` (Jones) for small A.  Fuselage lift and end-plate effects
    are not included.

    References
    ----------
    Raymer, *Aircraft Design: A Conceptual Approach*, eq. 12.6 (USAF DATCOM
    method) at Mach 0 with the exposed-area and fuselage factors left out;
    R. T. Jones, NACA Report 835 (1946) for the low-aspect-ratio limit.

    Examples
    --------
    >>> round(lift_curve_slope_per_rad(6.0, section_efficiency=1.0), 4)
    4.5287
    """
    a = _positive("aspect_ratio", aspect_ratio)
    eta = _positive("section_efficiency", section_efficiency)
    tan_sweep = math.tan(math.radians(float(sweep_half_chord_deg)))
    return 2.0 * math.pi * a / (2.0 + math.sqrt(4.0 + a * a * (1.0 + tan_sweep**2) / eta**2))


def downwash_gradient(wing_lift_slope_per_rad: float, wing_aspect_ratio: float) -> float:
    """Downwash gradient at the tail, d(epsilon)/d(alpha) = 2 a_w / (pi A_w) [-].

    References
    ----------
    Nelson, *Flight Stability and Automatic Control* (1998), ch. 2: the
    downwash far behind an elliptically loaded wing, epsilon = 2 CL / (pi A).
    """
    return 2.0 * _positive("wing_lift_slope_per_rad", wing_lift_slope_per_rad) / (
        math.pi * _positive("wing_aspect_ratio", wing_aspect_ratio)
    )


def predicted_neutral_point(
    htail_volume: float,
    tail_lift_slope_per_rad: float,
    wing_lift_slope_per_rad: float,
    downwash_gradient: float,
    tail_efficiency: float = DEFAULT_TAIL_EFFICIENCY,
    wing_ac: float = WING_AC_FRACTION,
) -> float:
    """Stick-fixed neutral point from the tail volume [fraction of MAC].

    Parameters
    ----------
    htail_volume : float
        V_H [-].
    tail_lift_slope_per_rad, wing_lift_slope_per_rad : float
        a_t and a_w [1/rad].
    downwash_gradient : float
        d(epsilon)/d(alpha) [-].
    tail_efficiency : float
        q_t / q, eta_t [-] (0.9 assumed).
    wing_ac : float
        Wing(-body) aerodynamic centre h_ac [fraction of MAC] (0.25, the
        thin-airfoil quarter chord, when the fuselage is ignored).

    Returns
    -------
    float
        h_n = h_ac + eta_t V_H (a_t / a_w) (1 - d(epsilon)/d(alpha)).

    References
    ----------
    Nelson (1998) ch. 2 (stick-fixed neutral point); Etkin & Reid (1996)
    ch. 2.
    """
    eta = _positive("tail_efficiency", tail_efficiency)
    slope_ratio = _positive("tail_lift_slope_per_rad", tail_lift_slope_per_rad) / _positive(
        "wing_lift_slope_per_rad", wing_lift_slope_per_rad
    )
    deda = float(downwash_gradient)
    if not 0.0 <= deda < 1.0:
        raise TrimlogError(f"downwash_gradient: expected 0 <= d(eps)/d(alpha) < 1, found {deda:g}")
    return wing_ac + eta * _positive("htail_volume", htail_volume) * slope_ratio * (1.0 - deda)


@dataclass(frozen=True)
class TailGeometryCheck:
    """Tail volumes, aspect ratios and the paper neutral point; None plus a reason when unknown."""

    aircraft_class: str
    htail_volume: float | None
    htail_volume_typical: float
    vtail_volume: float | None
    vtail_volume_typical: float
    htail_aspect_ratio: float | None
    vtail_aspect_ratio: float | None
    wing_aspect_ratio: float | None
    wing_lift_slope_per_rad: float | None
    tail_lift_slope_per_rad: float | None
    downwash_gradient: float | None
    tail_efficiency: float
    predicted_neutral_point_pct_mac: float | None
    measured_neutral_point_pct_mac: float | None
    measured_minus_predicted_pct_mac: float | None
    findings: tuple[str, ...]
    not_computed: tuple[str, ...]
    assumptions: tuple[str, ...]


def check_tail_geometry(
    profile: AircraftProfile,
    aircraft_class: str = "homebuilt",
    *,
    measured_neutral_point_pct_mac: float | None = None,
    tail_efficiency: float = DEFAULT_TAIL_EFFICIENCY,
    section_efficiency: float = DEFAULT_SECTION_EFFICIENCY,
) -> TailGeometryCheck:
    """Check the tail geometry of a profile and predict its neutral point.

    Parameters
    ----------
    profile : AircraftProfile
        Uses the optional tail keys (``htail_area_ft2``, ``htail_span_in``,
        ``htail_arm_in``, ``vtail_area_ft2``, ``vtail_height_in``,
        ``vtail_arm_in``) and ``wing_span_in``; whatever is missing is named in
        ``not_computed``.
    aircraft_class : str
        One of :data:`TYPICAL_TAIL_VOLUMES` (Raymer table 6.4).
    measured_neutral_point_pct_mac : float, optional
        The flight-measured stick-fixed neutral point [%MAC], to set beside
        the prediction.
    tail_efficiency, section_efficiency : float
        eta_t = q_t / q and Cl_alpha / 2 pi (assumptions, stated).

    Returns
    -------
    TailGeometryCheck

    References
    ----------
    Raymer table 6.4 and eq. 12.6; Nelson (1998) ch. 2; Etkin & Reid (1996)
    ch. 2.  Aspect-ratio ranges: common practice, no source.
    """
    if aircraft_class not in TYPICAL_TAIL_VOLUMES:
        raise TrimlogError(
            f"aircraft class: expected one of {', '.join(TYPICAL_TAIL_VOLUMES)}, "
            f"found {aircraft_class!r}"
        )
    vh_typ, vv_typ = TYPICAL_TAIL_VOLUMES[aircraft_class]
    p = profile
    findings: list[str] = []
    missing: list[str] = []

    def need(what: str, *keys: str) -> bool:
        absent = [k for k in keys if getattr(p, k) is None]
        if absent:
            missing.append(f"{what}: not in the profile: {', '.join(absent)}")
        return not absent

    vh = vv = ar_h = ar_v = ar_w = a_w = a_t = deda = hn = None
    if need("horizontal tail volume", "htail_area_ft2", "htail_arm_in"):
        vh = horizontal_tail_volume(p.htail_area_ft2, p.htail_arm_in, p.wing_area_ft2, p.mac_in)
        findings.append(_compare("horizontal tail volume", vh, vh_typ, aircraft_class))
    if need(
        "vertical tail volume", "vtail_area_ft2", "vtail_arm_in", "wing_span_in"
    ):
        vv = vertical_tail_volume(p.vtail_area_ft2, p.vtail_arm_in, p.wing_area_ft2, p.wing_span_in)
        findings.append(_compare("vertical tail volume", vv, vv_typ, aircraft_class))
    if need("horizontal tail aspect ratio", "htail_span_in", "htail_area_ft2"):
        ar_h = aspect_ratio(p.htail_span_in, p.htail_area_ft2)
        findings.append(_range("horizontal tail aspect ratio", ar_h, HTAIL_ASPECT_RANGE))
    if need("vertical tail aspect ratio", "vtail_height_in", "vtail_area_ft2"):
        ar_v = aspect_ratio(p.vtail_height_in, p.vtail_area_ft2)
        findings.append(_range("vertical tail aspect ratio", ar_v, VTAIL_ASPECT_RANGE))
    if p.wing_span_in is not None:
        ar_w = aspect_ratio(p.wing_span_in, p.wing_area_ft2)
        a_w = lift_curve_slope_per_rad(ar_w, section_efficiency=section_efficiency)
        deda = downwash_gradient(a_w, ar_w)
    if ar_h is not None:
        a_t = lift_curve_slope_per_rad(ar_h, section_efficiency=section_efficiency)
    if vh is not None and a_w is not None and a_t is not None and deda is not None:
        hn = 100.0 * predicted_neutral_point(vh, a_t, a_w, deda, tail_efficiency)
    else:
        missing.append(
            "predicted neutral point: needs the horizontal tail area, span and arm and the "
            "wing span"
        )
    difference = None
    if hn is not None and measured_neutral_point_pct_mac is not None:
        measured = float(measured_neutral_point_pct_mac)
        if math.isfinite(measured):
            difference = measured - hn
            findings.append(
                f"measured neutral point {measured:.1f} %MAC is {abs(difference):.1f} %MAC "
                f"{'aft of' if difference > 0 else 'forward of'} the paper estimate {hn:.1f} %MAC"
            )
    return TailGeometryCheck(
        aircraft_class=aircraft_class, htail_volume=vh, htail_volume_typical=vh_typ,
        vtail_volume=vv, vtail_volume_typical=vv_typ, htail_aspect_ratio=ar_h,
        vtail_aspect_ratio=ar_v, wing_aspect_ratio=ar_w, wing_lift_slope_per_rad=a_w,
        tail_lift_slope_per_rad=a_t, downwash_gradient=deda, tail_efficiency=tail_efficiency,
        predicted_neutral_point_pct_mac=hn,
        measured_neutral_point_pct_mac=measured_neutral_point_pct_mac,
        measured_minus_predicted_pct_mac=difference,
        findings=tuple(findings),
        not_computed=tuple(missing),
        assumptions=(
            f"tail efficiency q_t/q = {tail_efficiency:g} (assumed)",
            f"section lift-curve slope = {section_efficiency:g} x 2 pi (assumed)",
            f"wing aerodynamic centre at {100 * WING_AC_FRACTION:g} %MAC; fuselage, propeller "
            "and nacelles ignored (they usually move the real neutral point forward)",
            "lift-curve slopes: Helmbold/DATCOM formula (Raymer eq. 12.6) at Mach 0, no sweep; "
            "downwash 2 a_w / (pi A_w) (Nelson ch. 2)",
        ),
    )


def _compare(what: str, value: float, typical: float, aircraft_class: str) -> str:
    ratio = value / typical
    verdict = "close to" if 0.8 <= ratio <= 1.25 else ("below" if ratio < 1 else "above")
    return (
        f"{what} {value:.3f} is {verdict} the typical {typical:.2f} for a {aircraft_class} "
        "(Raymer table 6.4)"
    )


def _range(what: str, value: float, usual: tuple[float, float]) -> str:
    lo, hi = usual
    verdict = "within" if lo <= value <= hi else ("below" if value < lo else "above")
    return f"{what} {value:.2f} is {verdict} the usual {lo:g}-{hi:g} (common practice)"
