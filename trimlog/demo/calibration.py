"""The demo's airspeed-calibration flight: GPS legs at eight indicated speeds.

Before the stability flights the invented Tinkerfinch TF-2 flies a calibration
(``sample_logs/calibration/calibration_flight.csv``): at each of nine
indicated airspeeds from 55 to 135 KIAS, four straight legs of 40 s on
headings 90 deg apart, joined by standard-rate turns, at 4500 ft in a steady
wind.  The logger records IAS (mph), pressure altitude, OAT, load factor and
the GPS ground speed and track at 5 Hz.

Truth: the position error is the demo's :data:`~trimlog.demo.model.TRUE_POSITION_ERROR_IAS_KT`
/ ``_CAS_KT`` table (the one every demo flight was generated with); the wind is
:data:`WIND_KT` from :data:`WIND_FROM_DEG`; the day is the demo's ISA deviation.
TAS from CAS through the compressible relations; ground velocity = air velocity +
wind.  Measurement: turbulence in airspeed (0.3 kt) and in the wind (0.5 kt
gusts, first-order autoregressive with a 5 s time constant), the pilot holding
altitude within a few feet, GPS speed (0.1 kt) and track (0.3 deg) noise, a few
airspeed spikes and short dropouts.  The profile shipped with the demo carries
the table that ``trimlog calibrate`` gives for this flight.

References
----------
G. V. Lewis, *Using GPS to determine pitot-static errors*, National Test Pilot
School, 2003 (the legs flown: constant IAS and altitude, three or more headings).

The file itself is written by :func:`trimlog.demo.files.calibration_flight_csv`.
"""

from __future__ import annotations

import numpy as np

#: File of the calibration flight, relative to the demo folder.
CALIBRATION_FILE = "calibration/calibration_flight.csv"
#: Indicated airspeeds flown [kt].
SPEEDS_KIAS = (55.0, 65.0, 75.0, 85.0, 95.0, 105.0, 115.0, 125.0, 135.0)
#: Headings of the four legs at each speed [deg true].
HEADINGS_DEG = (20.0, 110.0, 200.0, 290.0)
#: Wind speed [kt] and the direction it blows from [deg true].
WIND_KT, WIND_FROM_DEG = 14.0, 240.0
#: Pressure altitude of the calibration [ft].
ALTITUDE_FT = 4500.0
#: Logging rate [Hz].
RATE_HZ = 5.0
LEG_S, TURN_S, SPEED_CHANGE_S = 40.0, 30.0, 25.0


def plan(dt: float) -> dict[str, np.ndarray]:
    """Commanded IAS [kt] and heading [deg, unwrapped], per sample; leg index or -1."""
    ias, heading, leg = [], [], []
    psi, v = HEADINGS_DEG[0], SPEEDS_KIAS[0] + 10.0
    n_leg = 0

    def hold(seconds: float, v_end: float, psi_end: float, kind: int) -> None:
        nonlocal psi, v
        n = int(round(seconds / dt))
        u = np.arange(1, n + 1) / n
        ramp = 0.5 * (1.0 - np.cos(np.pi * u))
        ias.append(v + (v_end - v) * ramp)
        heading.append(psi + (psi_end - psi) * u)  # a turn at constant rate
        leg.append(np.full(n, kind))
        v, psi = v_end, psi_end

    for speed in SPEEDS_KIAS:
        hold(SPEED_CHANGE_S, speed, psi, -1)
        for k in range(len(HEADINGS_DEG)):
            hold(LEG_S, speed, psi, n_leg)
            n_leg += 1
            if k < len(HEADINGS_DEG) - 1:
                hold(TURN_S, speed, psi + 90.0, -1)
        hold(TURN_S, speed, psi + 90.0, -1)
    out = {"ias": np.concatenate(ias), "heading": np.concatenate(heading),
           "leg": np.concatenate(leg)}
    out["t"] = dt * np.arange(out["ias"].size)
    return out


