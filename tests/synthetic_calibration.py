"""Synthetic GPS calibration legs of known wind and known position error (test helper).

Every value is made up; the truth is stated by the arguments.  A leg is flown
at a heading; its ground velocity is the air velocity (TAS from the true CAS at
the leg's altitude and true OAT) plus the wind.
"""

from __future__ import annotations

import numpy as np

from trimlog.physics import airspeed


def true_delta_v(ias_kt):
    """The invented position error [kt]: +3 kt at 50 KIAS, falling to about -0.7 kt at 130 KIAS."""
    ias = np.asarray(ias_kt, dtype=float)
    return 3.0 - 0.07 * (ias - 50.0) + 0.0003 * (ias - 50.0) ** 2


def legs(speeds, headings, *, wind_kt=15.0, wind_from_deg=250.0, alt_ft=4500.0, oat_c=12.0,
         rng=None, ias_sd=0.0, gs_sd=0.0, track_sd=0.0, oat_bias_c=0.0, wind_drift_kt=0.0,
         wind_veer_deg=0.0):
    """Rows (ias, alt, oat, gs, track) of legs at each speed and heading.

    ``ias_sd``: the pilot's error holding the speed on a leg (moves the TAS);
    ``gs_sd``, ``track_sd``: leg-mean GPS errors; ``oat_bias_c``: the logged
    OAT's error, shared by every leg; ``wind_drift_kt``, ``wind_veer_deg``: the
    wind grows and turns by this much from one leg to the next (a changing wind).
    """
    rows = []
    for ias in speeds:
        for k, heading in enumerate(headings):
            w = wind_kt + k * wind_drift_kt
            towards = np.radians(wind_from_deg + k * wind_veer_deg + 180.0)
            flown = ias + (rng.normal(0.0, ias_sd) if ias_sd else 0.0)
            cas = flown + float(true_delta_v(flown))
            tas = float(airspeed.cas_to_tas(cas, alt_ft, oat_c))
            h = np.radians(heading)
            east = tas * np.sin(h) + w * np.sin(towards)
            north = tas * np.cos(h) + w * np.cos(towards)
            gs = float(np.hypot(east, north)) + (rng.normal(0.0, gs_sd) if gs_sd else 0.0)
            track = float(np.degrees(np.arctan2(east, north))) % 360.0
            track += rng.normal(0.0, track_sd) if track_sd else 0.0
            rows.append((ias, alt_ft, oat_c + oat_bias_c, gs, track % 360.0))
    return rows


def csv_text(rows, *, with_oat=True):
    """A typed leg table: one row per leg."""
    head = "leg,ias_kt,pressure_alt_ft," + ("oat_c," if with_oat else "") + \
        "gps_groundspeed_kt,gps_track_deg"
    out = [head]
    for n, (ias, alt, oat, gs, trk) in enumerate(rows, start=1):
        cells = [str(n), f"{ias:.4f}", f"{alt:.1f}"] + ([f"{oat:.3f}"] if with_oat else [])
        cells += [f"{gs:.6f}", f"{trk:.6f}"]
        out.append(",".join(cells))
    return ("\n".join(out) + "\n").encode()
