"""The demo's files: the logger's CSV, the typed point card, loading sheets, README.

:mod:`trimlog.demo.model` holds the invented aircraft and its truth model; this
module turns the noise-free flights it computes into the bytes of
``sample_logs/``: light turbulence (first-order autoregressive noise), white
sensor noise, spikes and dropouts, each channel written at a fixed
resolution in the demo logger's own units, channel names and sign
conventions.  Every function is deterministic given its random generator,
so the same seed gives the same bytes.

References
----------
See :mod:`trimlog.demo.model` for the model and its published sources.
"""

from __future__ import annotations

import argparse
import math
import sys
from collections.abc import Mapping
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from trimlog.demo import calibration
from trimlog.demo.model import (
    _SHIM_DEG,
    DEFAULT_SEED,
    DEMO_PROFILE,
    DEMO_TRUTH,
    HOLD_ELEVATOR_SD_DEG,
    HOLD_FORCE_SD_LBF,
    PROFILE_FILE,
    PROFILE_TOML,
    TRUE_POSITION_ERROR_CAS_KT,
    TRUE_POSITION_ERROR_IAS_KT,
    WINDUP_STEP_S,
    WINDUP_STEPS_G,
    DemoFlight,
    DemoTruth,
    _hold_error_series,
    _sample_interval,
    _smooth_state,
    truth_points,
)
from trimlog.errors import TrimlogError
from trimlog.files import write_files_atomically
from trimlog.physics import airspeed, atmosphere

if TYPE_CHECKING:
    from trimlog.input.profile import AircraftProfile

KT_TO_MPH = 1852.0 / 1609.344
LBF_TO_N = 4.4482216152605


def _ar1(rng: np.random.Generator, n: int, sigma: float, tc_s: float, dt: float) -> np.ndarray:
    """Stationary first-order autoregressive noise: std ``sigma``, time constant ``tc_s``."""
    phi = math.exp(-dt / tc_s)
    shocks = (rng.standard_normal(n) * sigma * math.sqrt(1.0 - phi * phi)).tolist()
    x = sigma * float(rng.standard_normal())
    out = [0.0] * n
    for i, shock in enumerate(shocks):
        x = phi * x + shock
        out[i] = x
    return np.array(out)



def _spikes(rng: np.random.Generator, values: np.ndarray, per_s: float, dt: float,
            low: float, high: float) -> None:
    """Add single-sample spikes of random sign and size ``low..high`` (in place)."""
    n = int(rng.poisson(per_s * values.size * dt))
    where = rng.choice(values.size, size=n, replace=False)
    values[where] += rng.choice([-1.0, 1.0], size=n) * rng.uniform(low, high, size=n)


def _dropouts(rng: np.random.Generator, values: np.ndarray, per_s: float, dt: float) -> None:
    """Blank short runs of 1-5 samples (in place), as a logger that missed a reading."""
    n = int(rng.poisson(per_s * values.size * dt))
    for start, length in zip(rng.integers(0, values.size, size=n),
                             rng.integers(1, 6, size=n), strict=True):
        values[start:start + length] = np.nan


def _cells(values: np.ndarray, decimals: int, step: float | None = None) -> list[str]:
    """Format a column at a fixed resolution; NaN becomes an empty cell."""
    rounded = np.round(values / step) * step if step else values
    rounded = np.round(rounded, decimals) + 0.0  # + 0.0 turns -0.0 into 0.0
    return ["" if v != v else f"{v:.{decimals}f}" for v in rounded.tolist()]


def _table(header: list[str], columns: list[list[str]], preamble: list[str]) -> str:
    lines = [*preamble, ",".join(header)]
    lines.extend(",".join(row) for row in zip(*columns, strict=True))
    return "\n".join(lines) + "\n"


def point_table_csv(flight: DemoFlight, points: pd.DataFrame, rng: np.random.Generator,
                    turns: pd.DataFrame | None = None,
                    turns_rng: np.random.Generator | None = None) -> str:
    """Write the hand-typed card of a point-table flight, rounded as a pilot types it.

    Parameters
    ----------
    flight : DemoFlight
        A point-table flight.
    points : pandas.DataFrame
        Its noise-free points (:func:`trimlog.demo.model.truth_points`).
    rng : numpy.random.Generator
        The flight's noise generator; the reading error is drawn from it.
    turns : pandas.DataFrame, optional
        Noise-free steps of its wind-up turn (``truth_points(..., maneuvers=True)``),
        typed after the points with the load factor read off the g-meter.
    turns_rng : numpy.random.Generator, optional
        The reading error of the turns, so that the points keep theirs.

    Returns
    -------
    str
        The CSV text.
    """
    columns = _typed_rows(points, rng, "TP", 1)
    header = ["test_point", "ias_kt", "pressure_alt_ft", "oat_c", "ELEV_POS",
              "stick_force_lbf", "weight_lb", "cg_in", "flap_deg"]
    if turns is not None and len(turns) and turns_rng is not None:
        more = _typed_rows(turns, turns_rng, "WT", 1)
        g_meter = turns["nz_g"].to_numpy() + 0.02 * turns_rng.standard_normal(len(turns))
        columns = [a + b for a, b in zip(columns, more, strict=True)]
        columns.append(["1.00"] * len(points) + _cells(g_meter, 2, 0.05))
        header.append("nz_g")
    preamble = [f"Tinkerfinch TF-2 DEMO-1 (invented demo aircraft): flight {flight.number}, "
                f"forward CG, typed from the knee-board card"]
    return _table(header, columns, preamble)


def _typed_rows(pts: pd.DataFrame, rng: np.random.Generator, prefix: str,
                first: int) -> list[list[str]]:
    """The typed columns of a card's rows, with reading error from ``rng``."""
    n = len(pts)

    def read(column: str, sigma: float) -> np.ndarray:
        return pts[column].to_numpy() + sigma * rng.standard_normal(n)

    # The elevator is typed as the panel indicator shows it: the logger's channel,
    # trailing-edge up positive, under the logger's name (see the profile's [logger]).
    return [
        [f"{prefix}{k}" for k in range(first, first + n)],
        _cells(read("ias_kt", 0.3), 0, 1.0),
        _cells(read("pressure_alt_ft", 8.0), 0, 10.0),
        _cells(read("oat_c", 0.4), 0, 1.0),
        _cells(-read("elevator_deg", 0.15), 1),
        _cells(read("stick_force_lbf", 0.4), 1, 0.5),
        _cells(read("weight_lb", 2.0), 0, 1.0),
        _cells(read("cg_in", 0.04), 1),
        ["0"] * n,
    ]


def time_series_csv(flight: DemoFlight, state: Mapping[str, np.ndarray],
                    held: Mapping[str, np.ndarray], dt: float, profile: AircraftProfile,
                    rng: np.random.Generator,
                    windup_rng: np.random.Generator | None = None) -> str:
    """Write the demo logger's file: hold error, turbulence, noise, spikes, dropouts.

    Parameters
    ----------
    flight : DemoFlight
        A time-series flight.
    state : mapping of str to array
        The noise-free flight sampled every ``dt`` (``t`` [s], ``cas`` [kt],
        ``alt`` [ft], ``oat`` [degC], ``elevator`` [deg], ``force`` [lbf],
        ``nz`` [g], ``vs`` [ft/min], ``fuel`` [US gal]).
    held : mapping of str to array
        Hold-level error per sample: ``elevator`` [deg] and ``force`` [lbf].
    dt : float
        Sample interval [s].
    profile : AircraftProfile
        The demo profile (the true position error of the demo model gives the
        logged IAS, whatever table the profile ships).
    rng : numpy.random.Generator
        The flight's noise generator.
    windup_rng : numpy.random.Generator, optional
        Noise of the appended wind-up turn (from ``flight.windup_from``), so
        that the samples before it draw exactly what they drew without it.

    Returns
    -------
    str
        The CSV text, in the logger's own units and channel names.
    """
    s = state
    cut = s["t"].size
    if flight.windup_from is not None and windup_rng is not None:
        cut = int(np.searchsorted(s["seg"], flight.windup_from))
    parts = [({k: np.asarray(v)[:cut] for k, v in s.items() if np.ndim(v)},
              {k: np.asarray(v)[:cut] for k, v in held.items()}, rng)]
    if cut < s["t"].size:
        parts.append(({k: np.asarray(v)[cut:] for k, v in s.items() if np.ndim(v)},
                      {k: np.asarray(v)[cut:] for k, v in held.items()}, windup_rng))
    pieces = [_noisy_channels(a, b, dt, profile, g) for a, b, g in parts]
    channels = {name: np.concatenate([c[name] for c in pieces]) for name in pieces[0]}
    resolution = {"IAS (mph)": (1, None), "PALT (ft)": (0, 1.0), "OAT (C)": (1, None),
                  "ELEV_POS": (2, None), "FSTK": (1, None), "NZ (g)": (3, None),
                  "VSI (fpm)": (0, 10.0), "FUEL_QTY (gal)": (1, None)}
    time_decimals = 1 if dt >= 0.1 else 2
    columns = [_cells(s["t"], time_decimals)]
    columns += [_cells(values, *resolution[name]) for name, values in channels.items()]
    preamble = [
        "DEMO-LOG (invented logger) session export",
        f"aircraft: DEMO-1 Tinkerfinch TF-2 (invented); flight {flight.number}; "
        f"{flight.sample_rate_hz:g} Hz",
    ]
    return _table(["Time (s)", *channels], columns, preamble)


def _noisy_channels(s: Mapping[str, np.ndarray], held: Mapping[str, np.ndarray], dt: float,
                    p: AircraftProfile, rng: np.random.Generator) -> dict[str, np.ndarray]:
    """The logger's channels of one stretch of flight, with its noise drawn from ``rng``."""
    n = s["t"].size
    white = rng.standard_normal
    cas = s["cas"] + _ar1(rng, n, 0.3, 1.5, dt)
    ias = np.interp(cas, TRUE_POSITION_ERROR_CAS_KT, TRUE_POSITION_ERROR_IAS_KT) + 0.15 * white(n)
    channels = {
        "IAS (mph)": ias * KT_TO_MPH,
        "PALT (ft)": s["alt"] + _ar1(rng, n, 6.0, 5.0, dt) + 2.0 * white(n),
        "OAT (C)": s["oat"] + 0.1 * white(n),
        # The logger records the elevator trailing-edge up positive.
        "ELEV_POS": -(s["elevator"] + held["elevator"] + _ar1(rng, n, 0.12, 0.8, dt)
                      + 0.03 * white(n)),
        "FSTK": (s["force"] + held["force"] + _ar1(rng, n, 0.3, 0.8, dt)
                 + 0.1 * white(n)) * LBF_TO_N,
        "NZ (g)": s["nz"] + _ar1(rng, n, 0.02, 0.3, dt) + 0.005 * white(n),
        "VSI (fpm)": s["vs"] + _ar1(rng, n, 60.0, 1.5, dt),
        "FUEL_QTY (gal)": s["fuel"] + 0.05 * white(n),
    }
    _spikes(rng, channels["IAS (mph)"], 1 / 60, dt, 12.0, 30.0)
    _spikes(rng, channels["ELEV_POS"], 1 / 60, dt, 4.0, 9.0)
    _spikes(rng, channels["FSTK"], 1 / 60, dt, 30.0, 70.0)
    for values in channels.values():
        _dropouts(rng, values, 1 / 150, dt)
    return channels


def calibration_flight_csv(rng: np.random.Generator) -> str:
    """Write the demo calibration flight's log (see the module notes).

    Parameters
    ----------
    rng : numpy.random.Generator
        The flight's noise generator.

    Returns
    -------
    str
        CSV text in the demo logger's units and channel names.
    """
    dt = 1.0 / calibration.RATE_HZ
    s = calibration.plan(dt)
    n = s["t"].size
    white = rng.standard_normal
    alt = calibration.ALTITUDE_FT + _ar1(rng, n, 6.0, 5.0, dt)
    oat = (atmosphere.isa_temperature_k(calibration.ALTITUDE_FT) - atmosphere.KELVIN_OFFSET
           + DEMO_TRUTH.isa_deviation_c)
    ias_flown = s["ias"] + _ar1(rng, n, 0.3, 1.5, dt)
    cas = np.interp(ias_flown, TRUE_POSITION_ERROR_IAS_KT, TRUE_POSITION_ERROR_CAS_KT)
    tas = np.asarray(airspeed.cas_to_tas(cas, alt, np.full(n, oat)))
    psi = np.radians(s["heading"])
    towards = math.radians(calibration.WIND_FROM_DEG + 180.0)
    gust_e, gust_n = _ar1(rng, n, 0.5, 5.0, dt), _ar1(rng, n, 0.5, 5.0, dt)
    east = tas * np.sin(psi) + calibration.WIND_KT * math.sin(towards) + gust_e
    north = tas * np.cos(psi) + calibration.WIND_KT * math.cos(towards) + gust_n
    turn_rate = np.gradient(psi, dt)  # [rad/s]
    bank = np.arctan(turn_rate * tas * 1852.0 / 3600.0 / atmosphere.G0_MPS2)
    channels = {
        "IAS (mph)": (ias_flown + 0.15 * white(n)) * KT_TO_MPH,
        "PALT (ft)": alt + 2.0 * white(n),
        "OAT (C)": oat + 0.1 * white(n),
        "NZ (g)": 1.0 / np.cos(bank) + _ar1(rng, n, 0.02, 0.3, dt) + 0.005 * white(n),
        "GPS_GS (kt)": np.hypot(east, north) + 0.1 * white(n),
        "GPS_TRK (deg)": np.mod(np.degrees(np.arctan2(east, north)) + 0.3 * white(n), 360.0),
    }
    _spikes(rng, channels["IAS (mph)"], 1 / 60, dt, 12.0, 30.0)
    for values in channels.values():
        _dropouts(rng, values, 1 / 150, dt)
    resolution = {"IAS (mph)": (1, None), "PALT (ft)": (0, 1.0), "OAT (C)": (1, None),
                  "NZ (g)": (3, None), "GPS_GS (kt)": (1, None), "GPS_TRK (deg)": (1, None)}
    columns = [_cells(s["t"], 1)]
    columns += [_cells(values, *resolution[name]) for name, values in channels.items()]
    preamble = [
        "DEMO-LOG (invented logger) session export",
        "aircraft: DEMO-1 Tinkerfinch TF-2 (invented); airspeed calibration, GPS legs; "
        f"{calibration.RATE_HZ:g} Hz",
    ]
    return _table(["Time (s)", *channels], columns, preamble)


def loading_sheet_toml(flight: DemoFlight) -> str:
    """Return the loading sheet of a logged flight (format of ``read_loading_sheet``)."""
    return (
        f'flight = "{flight.number}"\n'
        f"date = 2026-05-{10 + 3 * flight.number:02d}\n"
        f'label = "flight {flight.number}: CG {flight.takeoff_cg_pct_mac:.1f} %MAC at takeoff, '
        f'{flight.stab_setting}"\n'
        'notes = "invented demo flight; smooth morning air, two on board plus ballast"\n'
        "\n[takeoff]\n"
        f'weight = "{flight.takeoff_weight_lb:.0f} lb"\n'
        f'cg = "{flight.takeoff_cg_in:.1f} in"\n'
        f'fuel = "{flight.takeoff_fuel_gal:.1f} gal"\n'
        "\n[config]\n"
        'flap = "0 deg"\n'
        f'stab_setting = "{flight.stab_setting}"\n'
        f'stab_incidence = "{flight.stab_incidence_deg:.1f} deg"\n'
    )


# long: the demo folder's README text, one template filled in
def readme(seed: int, truth: DemoTruth, profile: AircraftProfile, *, profile_file: str,
           shim_deg: float, hold_elevator_sd_deg: float, hold_force_sd_lbf: float) -> str:
    """Return ``sample_logs/README.md``: the scenario, the truth and how to regenerate.

    Parameters
    ----------
    seed : int
        Seed of the files.
    truth : DemoTruth
        The model values and flights (:data:`trimlog.demo.model.DEMO_TRUTH`).
    profile : AircraftProfile
        The demo profile.
    profile_file : str
        File name of the profile.
    shim_deg : float
        Incidence change of the shim flown in flight 5 [deg], leading-edge up positive.
    hold_elevator_sd_deg, hold_force_sd_lbf : float
        Standard deviations of the per-hold offsets [deg], [lbf].

    Returns
    -------
    str
        The Markdown text.
    """
    t = truth
    p = profile
    rows = []
    for f in t.flights:
        h = f.takeoff_cg_pct_mac / 100.0
        files = f"`{f.log_file}`" + (f", `{f.loading_file}`" if f.loading_file else "")
        rate = f"{f.sample_rate_hz:g} Hz" if f.sample_rate_hz else "typed card"
        rows.append(
            f"| {f.number} | {files} | {rate} | {f.takeoff_weight_lb:.0f} lb, "
            f"{f.takeoff_cg_in:.1f} in ({100 * h:.1f} %MAC) | {f.stab_setting} "
            f"({f.stab_incidence_deg:+.1f} deg) | {f.trim_ias_kt:.0f} | {f.n_points} | "
            f"{100 * (t.neutral_point_fixed - h):.1f} / {100 * (t.neutral_point_free - h):.1f} |"
        )
    shimmed = t.rigged_incidence_deg + shim_deg
    rigged = t.rigged_incidence_deg
    values = (
        ("stick-fixed neutral point hn", f"{100 * t.neutral_point_fixed:.1f} %MAC"),
        ("stick-free neutral point hn'", f"{100 * t.neutral_point_free:.1f} %MAC"),
        ("Cm0 (CL = 0, δe = 0, as rigged)", f"{t.cm0:g}"),
        ("elevator power Cmδ", f"{t.cm_delta_per_rad:g} /rad"),
        ("elevator effectiveness τ",
         f"{t.tau:g} (the profile gives only the chord ratio {p.elevator_chord_ratio:g})"),
        ("stick-force gain K in Fs/q = A + K·(hn' − h)·CL", f"{t.force_gain_ft2:g} ft²"),
        ("stabilizer incidence as rigged / after the shim", f"{rigged:+.1f} / {shimmed:+.1f} deg"),
        ("cruise condition (profile)",
         f"{p.cruise_cas_kt:g} KCAS, {p.cruise_pressure_alt_ft:g} ft, "
         f"{p.cruise_weight_lb:g} lb, {p.cruise_cg_in:g} in: CL = {t.cruise_cl:.4f}"),
        ("elevator at cruise, as rigged", f"{t.cruise_elevator_deg(rigged):+.2f} deg"),
        ("elevator at cruise, after the shim", f"{t.cruise_elevator_deg(shimmed):+.2f} deg"),
        ("incidence change for zero cruise elevator, from as rigged",
         f"{t.incidence_change_deg(rigged):+.3f} deg (shim {t.shim_in(rigged):.3f} in over "
         f"{p.stabilizer_attach_spacing_in:g} in)"),
        ("remaining change after the shim",
         f"{t.incidence_change_deg(shimmed):+.3f} deg (shim {t.shim_in(shimmed):.3f} in)"),
        ("day", f"ISA {t.isa_deviation_c:+g} degC, test block at {t.test_altitude_ft:g} ft, "
                f"fuel flow {t.burn_gph:g} gal/h"),
    )
    truth_rows = "\n".join(f"| {name} | {value} |" for name, value in values)
    header = ("| flight | files | kind | takeoff loading | stabilizer | trim KIAS | points "
              "| static margin fixed / free (%MAC) |")
    return f"""# Demo data: the invented Tinkerfinch TF-2

Everything here is **invented**, written by `trimlog.demo.model` (seed {seed}) from a stated
model with known truth, so an analysis of these files can be checked against the values
below.  The Tinkerfinch TF-2 (tail mark DEMO-1) does not exist; no real aircraft,
registration or person is described, and these are not data for any real aircraft.

## Scenario

A homebuilt two-seater ({p.wing_area_ft2:g} ft² wing, MAC {p.mac_in:g} in from
{p.lemac_in:g} in aft of the datum, CG limits {p.cg_forward_in:g}-{p.cg_aft_in:g} in =
{p.cg_forward_pct_mac:.1f}-{p.cg_aft_pct_mac:.1f} %MAC) flies a stabilized-trim programme,
moving the CG aft one flight at a time.  Its elevator sits about
{-t.cruise_elevator_deg(rigged):.1f} deg trailing-edge up in cruise, so after
flight 4 the builder puts a {abs(shim_deg):.1f} deg leading-edge-down shim under the stabilizer
and re-flies the mid CG (flight 5), which also calibrates the elevator effectiveness τ.

{header}
|---|---|---|---|---|---|---|---|
{chr(10).join(rows)}

Flight 1 is a hand-typed card (one row per point, weight and CG per row; the
elevator typed as the panel indicator shows it, trailing-edge up positive, under
the logger's channel name `ELEV_POS`).  Flights 2-5 are logger files, each with a
loading sheet (`*.loading.toml`: takeoff weight, CG and fuel, stabilizer setting);
weight and CG through the flight follow the logged fuel quantity.  Each logged
flight holds {t.flights[1].n_points} stabilized points of 20-30 s (level holds, an
off-trim climb at +450 ft/min and an off-trim descent at -550 ft/min at fixed power)
joined by speed changes, and flies {t.flights[1].n_turns} level turns at 30-40 deg bank that
are not trim points.  After the last hold each logged flight flies a wind-up turn at its
trim speed in {t.flights[1].n_windup_steps} steps of {WINDUP_STEP_S:.0f} s at
{", ".join(f"{n:g}" for n in WINDUP_STEPS_G)} g: with the level turns at trim speed these
are the maneuvering points (elevator and stick force per g, the maneuver points).  The
demo model leaves out pitch damping, so its maneuver points equal its neutral points
(stick fixed {100 * t.neutral_point_fixed:.0f} %MAC, stick free
{100 * t.neutral_point_free:.0f} %MAC).  The logger (see `[logger]` in `{profile_file}`)
writes airspeed in mph, stick force in newtons under `FSTK`, and the elevator
trailing-edge up positive under `ELEV_POS`; the files carry turbulence, sensor noise,
single-sample spikes and short dropouts (empty cells).

No point is flown exactly at trim: each logged hold carries its own offset of
elevator (standard deviation {hold_elevator_sd_deg:g} deg) and stick force
({hold_force_sd_lbf:g} lbf), steady or drifting slowly through the hold, as a small
untrimmed pitch attitude, slowly moving air and control friction give.  The sensor
noise averages out over a hold; this does not, so the points scatter about the trim
lines by that much (`trimlog.demo.model.hold_errors(flight)` gives each hold's offset).
The typed card carries a reading error of about the same size (0.15 deg, 0.4 lbf,
then rounded, and its speeds typed to the knot), so every flight scatters alike
and the neutral points come with intervals of about a percent of MAC.

## Truth

| quantity | value |
|---|---|
{truth_rows}

Model (details and references in `trimlog/demo/model.py`): δe = −[Cm0 + (h − hn)·CL]/Cmδ − Δi_t/τ,
CL = n·W/(q·S) with q from EAS; the trim tab is set once per flight for zero force at the
trim speed.  Elevator trailing-edge down, incidence leading-edge up, pull force positive.

## Regenerate

`trimlog demo OUTDIR`, `python -m trimlog.demo.files OUTDIR [--seed N]` or
`trimlog.demo.files.write_demo(Path("OUTDIR"), seed={seed})`: the same seed gives the same
bytes (the tests compare them byte for byte).  `trimlog.demo.model.DEMO_TRUTH` holds the
truth, `trimlog.demo.model.truth_points(flight)` the noise-free points of each flight.
"""


def calibration_readme(profile: AircraftProfile) -> str:
    """The README section on the calibration flight: plan, truth, and the table shipped."""
    c = calibration
    true_rows = "\n".join(
        f"| {i:g} | {v:g} | {v - i:+.1f} |"
        for i, v in zip(TRUE_POSITION_ERROR_IAS_KT, TRUE_POSITION_ERROR_CAS_KT, strict=True))
    shipped = ", ".join(f"{i:g} -> {v:g}" for i, v in zip(
        profile.position_error_ias_kt or (), profile.position_error_cas_kt or (), strict=True))
    return f"""
## Airspeed calibration flight

`{c.CALIBRATION_FILE}`: before the stability flights, GPS legs at
{len(c.SPEEDS_KIAS)} indicated speeds ({c.SPEEDS_KIAS[0]:g}-{c.SPEEDS_KIAS[-1]:g} KIAS), four
straight legs of {c.LEG_S:g} s per speed on headings
{", ".join(f"{h:03.0f}" for h in c.HEADINGS_DEG)} joined by standard-rate turns, at
{c.ALTITUDE_FT:g} ft in a wind of {c.WIND_KT:g} kt from {c.WIND_FROM_DEG:03.0f} deg,
logged at {c.RATE_HZ:g} Hz (IAS in mph, pressure altitude, OAT, load factor, GPS ground speed
`GPS_GS (kt)` and track `GPS_TRK (deg)`), with light turbulence and gusts, GPS noise,
airspeed spikes and dropouts.  The true position error every demo flight was generated with:

| IAS (kt) | CAS (kt) | ΔV (kt) |
|---|---|---|
{true_rows}

`trimlog calibrate {c.CALIBRATION_FILE} --aircraft {PROFILE_FILE} --write-profile NEW.toml`
finds the table that `{PROFILE_FILE}` ships (IAS -> CAS, kt): {shipped}.
"""


def write_demo(directory: Path, *, seed: int = DEFAULT_SEED) -> list[Path]:
    """Write the demo profile, flights, loading sheets and README into ``directory``.

    Parameters
    ----------
    directory : pathlib.Path
        Folder to write into (created if missing); existing files of the same
        names are replaced.
    seed : int
        Seed of the noise.  The default gives the files in ``sample_logs/``.

    Returns
    -------
    list of pathlib.Path
        The files written: profile, then each flight's log (and loading
        sheet), the calibration flight (``calibration/``), then ``README.md``.
    """
    directory = Path(directory)
    directory.mkdir(parents=True, exist_ok=True)
    texts = {PROFILE_FILE: PROFILE_TOML}
    for flight in DEMO_TRUTH.flights:
        rng = np.random.default_rng([seed, flight.number])
        if flight.kind == "point_table":
            texts[flight.log_file] = point_table_csv(
                flight, truth_points(flight), rng, truth_points(flight, maneuvers=True),
                np.random.default_rng([seed, flight.number, 2]))
        else:
            dt = _sample_interval(flight)
            texts[flight.log_file] = time_series_csv(
                flight, _smooth_state(flight, dt, DEMO_TRUTH), _hold_error_series(flight, seed),
                dt, DEMO_PROFILE, rng, np.random.default_rng([seed, flight.number, 2]))
            texts[flight.loading_file] = loading_sheet_toml(flight)
    texts[calibration.CALIBRATION_FILE] = calibration_flight_csv(
        np.random.default_rng([seed, 0]))
    texts["README.md"] = readme(
        seed, DEMO_TRUTH, DEMO_PROFILE, profile_file=PROFILE_FILE, shim_deg=_SHIM_DEG,
        hold_elevator_sd_deg=HOLD_ELEVATOR_SD_DEG, hold_force_sd_lbf=HOLD_FORCE_SD_LBF,
    ) + calibration_readme(DEMO_PROFILE)
    for name in texts:
        (directory / name).parent.mkdir(parents=True, exist_ok=True)
    return write_files_atomically(
        [(directory / name, text.encode("utf-8")) for name, text in texts.items()],
        what="demo files")


def main(argv: list[str] | None = None) -> int:
    """Command line: ``python -m trimlog.demo.files OUTDIR [--seed N]``."""
    parser = argparse.ArgumentParser(
        prog="python -m trimlog.demo.files",
        description="Write the invented demo aircraft profile and its flights.",
    )
    parser.add_argument("directory", type=Path, help="folder to write into")
    parser.add_argument("--seed", type=int, default=DEFAULT_SEED, help="noise seed")
    args = parser.parse_args(argv)
    try:
        written = write_demo(args.directory, seed=args.seed)
    except OSError as exc:
        print(f"{args.directory}: cannot write the demo files: {exc.strerror}", file=sys.stderr)
        return 2
    except TrimlogError as exc:
        print(f"trimlog: error: {exc}", file=sys.stderr)
        return 2
    for path in written:
        print(path)
    return 0


if __name__ == "__main__":
    sys.exit(main())
