"""Unit mistakes that pass every range check but give impossible lift coefficients.

An airspeed logged in m/s under an ``ias_kt`` header, a weight in pounds typed
where kilograms were declared (or 999,999 lb), or a wing area in m² given as
ft² all stay inside the plausible ranges of the reader, yet make CL several
times what a wing can give: the fits then run on nonsense and the elevator
authority is overstated.  After the reduction the points are checked here:

* a weight above :data:`MAX_WEIGHT_FACTOR` x the profile's maximum weight is an
  error (kg against lb is a factor 2.2);
* a point whose CL exceeds :data:`CL_MARGIN` x the highest CLmax of the profile
  (or :data:`CL_ABSOLUTE_MAX` when the profile gives none) is flying below the
  stall speed for its weight, which no stabilized trim point can: an error
  naming the column, the value, the stall speed and the unit mistakes that
  would explain it, each with the CL it would give;
* lift coefficients that are all tiny (every point below
  :data:`CL_ALL_BELOW`, i.e. speeds about 1.85 x too high, km/h read as kt)
  are a warning finding, since a fast-only programme is possible.

The factors are the unit ratios (1 kt = 0.514444 m/s, 1 kt = 1.852 km/h,
1 lb = 0.45359237 kg, 1 m² = 10.7639 ft²; NIST SP 811, Appendix B); the
thresholds are common practice, no source.

Examples
--------
>>> round(stall_speed_eas_kt(1585.0, 118.0, 1.5), 1)
51.4
"""

from __future__ import annotations

import math
from typing import Final

import numpy as np
import pandas as pd

from trimlog.errors import InputFileError
from trimlog.findings import Finding, Severity, Subject, finding
from trimlog.input.profile import MAX_CRUISE_WEIGHT_FACTOR, AircraftProfile

#: A point weight above this multiple of the maximum weight is a unit mistake.
MAX_WEIGHT_FACTOR: Final = MAX_CRUISE_WEIGHT_FACTOR
#: Measured CL may exceed the profile's CLmax by position error and gusts; beyond
#: this factor it cannot be a trim point (common practice, no source).
CL_MARGIN: Final = 1.15
#: Without a CLmax in the profile: above any light aircraft's, flaps down
#: (common practice, no source).
CL_ABSOLUTE_MAX: Final = 3.0
#: Every point's CL below this: speeds read too high (common practice, no source).
CL_ALL_BELOW: Final = 0.1
#: The slowest trim point of a light aircraft flies at least at this CL (common
#: practice, no source); a unit correction giving less does not explain the data.
CL_SLOWEST_MIN: Final = 0.4
#: CL = 295.37 n W[lb] / (Ve[kt]^2 S[ft^2]): 2 g0 / (rho0 kt^2) in lb, ft, kt units
#: (U.S. Standard Atmosphere 1976 rho0 = 0.0023769 slug/ft^3).
_CL_CONSTANT: Final = 295.37

# The unit mistakes that raise CL, each with its factor on CL.
_RAISE_CL: Final = (
    ("the speed column holds m/s, not kt (CL reads 3.78x too high)", 1.0 / 0.514444**2),
    ("the weight was given in lb but declared kg (CL reads 2.2x too high)", 1.0 / 0.45359237),
    ("the wing area is in m², not ft² (CL reads 10.8x too high)", 10.7639),
)


def stall_speed_eas_kt(weight_lb: float, wing_area_ft2: float, clmax: float,
                       nz_g: float = 1.0) -> float:
    """Equivalent airspeed at which CL reaches ``clmax`` for this weight.

    Parameters
    ----------
    weight_lb : float
        Weight [lb].
    wing_area_ft2 : float
        Reference wing area [ft²].
    clmax : float
        Maximum lift coefficient [-].
    nz_g : float
        Normal load factor [g].

    Returns
    -------
    float
        Stall speed [kt EAS].

    References
    ----------
    Etkin, B. and Reid, L. D., *Dynamics of Flight*, 3rd ed., Wiley (1996),
    ch. 2: CL = n W / (q S).
    """
    return math.sqrt(_CL_CONSTANT * nz_g * weight_lb / (clmax * wing_area_ft2))


def _where(points: pd.DataFrame, i: int) -> tuple[str | None, int | None, str]:
    row = points.iloc[i]
    file = str(row["source"]) if "source" in points and pd.notna(row["source"]) else None
    line = None
    if "source_line_start" in points and pd.notna(row["source_line_start"]):
        line = int(row["source_line_start"])
    prefix = f"flight '{row['flight']}' point {row['point']}: " if "point" in points else ""
    return file, line, prefix


def check_units_plausible(points: pd.DataFrame, profile: AircraftProfile,
                          weight_logged: bool, found: list[Finding]) -> None:
    """Refuse impossible weights and lift coefficients; warn of tiny ones.

    Parameters
    ----------
    points : DataFrame
        Reduced points with ``weight_lb``, ``eas_kt``, ``nz_g``, ``cl``.
    profile : AircraftProfile
        Maximum weight, wing area, CLmax.
    weight_logged : bool
        Whether the weight came from the log (else from loading sheets).
    found : list of Finding
        Receives the warning of tiny lift coefficients.

    Raises
    ------
    InputFileError
        Naming the file, line and column, the value and the likely unit mistake.
    """
    if not len(points):
        return
    weight_column = "weight_lb" if weight_logged else "takeoff.weight"
    weight = points["weight_lb"].to_numpy(dtype=float)
    heavy = np.flatnonzero(weight > MAX_WEIGHT_FACTOR * profile.max_weight_lb)
    if len(heavy):
        file, line, prefix = _where(points, int(heavy[0]))
        raise InputFileError(
            f"{prefix}weight {weight[heavy[0]]:,.0f} lb"
            f"{'' if weight_logged else ' (from the loading sheet)'} is more than "
            f"{MAX_WEIGHT_FACTOR:g} x the maximum weight ({profile.max_weight_lb:,.0f} lb, "
            "limits.max_weight): check the unit (kg against lb is a factor 2.2) and the digits",
            file=file, line=line, column=weight_column)
    clmaxes = [c for c in (profile.clmax_clean, profile.clmax_landing) if c is not None]
    limit = CL_MARGIN * max(clmaxes) if clmaxes else CL_ABSOLUTE_MAX
    cl = points["cl"].to_numpy(dtype=float)
    high = np.flatnonzero(cl > limit)
    if len(high):
        _refuse_high_cl(points, profile, int(high[np.argmax(cl[high])]), limit, clmaxes,
                        len(high))
    if np.all(cl[np.isfinite(cl)] < CL_ALL_BELOW):
        found.append(finding("pipeline.plausibility.cl_all_tiny", Severity.WARNING,
                             Subject(quantity="ias_kt"), max_cl=float(np.nanmax(cl)),
                             limit_cl=CL_ALL_BELOW))


def _refuse_high_cl(points: pd.DataFrame, profile: AircraftProfile, i: int, limit: float,
                    clmaxes: list[float], count: int) -> None:
    """The error for the point of highest CL, ``i``."""
    row = points.iloc[i]
    file, line, prefix = _where(points, i)
    speed_column = "ias_kt" if "ias_kt" in points and pd.notna(row.get("ias_kt")) else "cas_kt"
    clmax = max(clmaxes) if clmaxes else CL_ABSOLUTE_MAX / CL_MARGIN
    stall = stall_speed_eas_kt(float(row["weight_lb"]), profile.wing_area_ft2, clmax,
                               float(row["nz_g"]))
    # A mistake explains the data when the slowest point's CL, corrected, is what a
    # light aircraft's slowest trim point has: from CL_SLOWEST_MIN to the limit.
    likely = "; ".join(f"{text}: CL would be {row['cl'] / factor:.2f}" for text, factor in _RAISE_CL
                       if CL_SLOWEST_MIN <= row["cl"] / factor <= limit)
    source = "the profile's CLmax" if clmaxes else "a CLmax no light aircraft exceeds"
    raise InputFileError(
        f"{prefix}CL {row['cl']:.2f} at {row[speed_column]:g} kt ({speed_column}), weight "
        f"{row['weight_lb']:,.0f} lb, is above {limit:.2f} ({CL_MARGIN:g} x {source}, "
        f"{clmax:g}): the speed {row['eas_kt']:.0f} kt EAS is below the stall speed "
        f"{stall:.0f} kt EAS for that weight ({count} such point(s)), which no trim point can "
        f"fly. Likely a unit mistake: {likely or 'check the speed, weight and wing area units'}"
        + ("; or the profile's CLmax (aircraft.clmax_clean / clmax_landing) is set too low"
           if clmaxes else ""),
        file=file, line=line, column=speed_column)
