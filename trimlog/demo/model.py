"""The invented demo aircraft and the generator of its flights.

The demo is a test programme on an invented two-seat light aircraft, the
*Tinkerfinch TF-2* (tail mark ``DEMO-1``; no such aircraft exists).  Five
flights move the CG aft in steps and then re-fly one CG after a stabilizer
incidence shim:

====== ============ ========= ================================================
flight kind         CG (%MAC) what it shows
====== ============ ========= ================================================
1      point table  ~16       forward CG, eight hand-typed points 60-130 KIAS
2      time series  ~22       first logged flight, 10 Hz
3      time series  ~27       20 Hz
4      time series  ~30       most aft CG flown, 10 Hz
5      time series  ~27       after a -0.6 deg (leading-edge down) shim, 10 Hz
====== ============ ========= ================================================

Every number in the files comes from the model below with the values of
:data:`DEMO_TRUTH`, so an analysis of the files can be checked against the
truth.  :func:`write_demo` writes the same bytes for the same seed; the file
formats and the measurement noise are written by :mod:`trimlog.demo.files`.

Truth model
-----------
*Stick-fixed trim.*  The pitching moment about the CG,
``Cm = Cm0 + (h - hn)·CL + Cmδ·(δe + Δi_t/τ)``, is zero at trim, so

``δe_trim = -[Cm0 + (h - hn)·CL] / Cmδ - Δi_t/τ``

with δe trailing-edge down positive, Δi_t the stabilizer incidence relative
to the original rigging (leading-edge up positive), ``h`` the CG and ``hn``
the stick-fixed neutral point as fractions of the MAC.  Hence
``dδe/dCL = (hn - h)/Cmδ`` and an incidence change moves every trim line by
``-Δi_t/τ`` [1]_ [2]_.

*Stick force* (pull positive).  ``Fs/q = A + K·(hn' - h)·CL``, so
``d(Fs/q)/dCL = K·(hn' - h)`` is positive forward of the stick-free neutral
point ``hn'`` (stable: a pull is needed to fly slower than trim) [1]_ [3]_.
``A`` is the trim-tab term: the pilot sets the tab once per flight so that
``Fs = 0`` at that flight's trim speed and leaves it there.

*Flight condition.*  ``CL = n·W/(q·S)`` with ``q`` from EAS; EAS from CAS
through the compressible relations of :mod:`trimlog.physics.airspeed` at the pressure
altitude; IAS from CAS through the inverse of the true position-error table
:data:`TRUE_POSITION_ERROR_IAS_KT` / ``_CAS_KT``.  ``n = cos γ / cos φ`` (climb
angle γ, bank angle φ).  Weight and CG follow the fuel burnt, at the profile's
fuel arm and density.  Thrust, pitch-rate damping in turns and the tab's own
pitching moment are left out: the model is a clean oracle, not a simulation.

*Hold-level error.*  No hold is flown exactly at trim: the pilot keeps a
small untrimmed pitch attitude or pitch rate, the air moves slowly, the
control circuit has friction.  Each logged hold gets its own offset of
elevator (standard deviation :data:`HOLD_ELEVATOR_SD_DEG`) and stick force
(:data:`HOLD_FORCE_SD_LBF`, independent of the elevator's because friction
dominates it), drifting linearly across the hold by a further
:data:`HOLD_DRIFT_SD` of that size end to end, and joined linearly through
the speed changes and turns; :func:`hold_errors` gives each hold's offset.
The sensor noise below averages out over a hold of hundreds of samples;
this error does not, so it sets the point-to-point scatter about the trim
line, about 0.1-0.3 deg and 0.3-1 lbf in practice (common practice, no
source).  The typed card gets no such offset: its reading error (below) is
of about the same size.

*Measurement.*  Light turbulence as first-order autoregressive noise
(smooth morning air: airspeed 0.3 kt, load factor 0.02 g, the pilot's
elevator 0.12 deg and force 0.3 lbf), white sensor noise, the logger's
resolution, about one single-sample spike per minute in airspeed, elevator
and force, and short dropouts (empty cells) in every channel.  The point
table is read with 0.15 deg and 0.4 lbf of error and rounded as a pilot
types it (1 kt, 10 ft, 1 degC, 0.1 deg, 0.5 lbf, 1 lb, 0.1 in).

Reproducibility: each flight draws its measurement noise from
``numpy.random.default_rng([seed, flight])`` and its hold-level error from
``numpy.random.default_rng([seed, flight, 1])``; every value is written
through a fixed format.

References
----------
.. [1] B. Etkin and L. D. Reid, *Dynamics of Flight: Stability and Control*,
   3rd ed., Wiley, 1996, ch. 2 (static longitudinal stability, elevator angle
   to trim, stick-free stability and control force).
.. [2] R. C. Nelson, *Flight Stability and Automatic Control*, 2nd ed.,
   McGraw-Hill, 1998, ch. 2 (elevator angle to trim, stick-fixed and
   stick-free neutral points).
.. [3] USAF Test Pilot School, *Flying Qualities Textbook*, vol. II part 1,
   1988 (DTIC ADA319976), ch. 5: the stabilized-trim method, Fs/q against CL.
.. [4] W. Gracey, *Measurement of Aircraft Speed and Altitude*, NASA RP-1046,
   1980 (position error; CAS, EAS).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from trimlog.errors import TrimlogError
from trimlog.input.profile import AircraftProfile, parse_profile
from trimlog.physics import airspeed, atmosphere

#: The seed of the files in ``sample_logs/``.
DEFAULT_SEED = 20260
#: Standard deviation of the per-hold elevator offset of a logged point [deg].
HOLD_ELEVATOR_SD_DEG = 0.2
#: Standard deviation of the per-hold stick-force offset of a logged point [lbf].
HOLD_FORCE_SD_LBF = 0.4
#: Standard deviation of the end-to-end drift within a hold, as a fraction
#: of the offset's standard deviation [-].
HOLD_DRIFT_SD = 0.3

PROFILE_FILE = "tinkerfinch_tf2.toml"

PROFILE_TOML = """\
# Aircraft profile of the INVENTED demo aircraft of trimlog.  No such aircraft
# exists; every value was made up to give a plausible two-seat light aircraft.
[aircraft]
name = "Tinkerfinch TF-2 DEMO-1 (invented demo aircraft)"
wing_area = "120 ft^2"
mac = "53 in"
lemac = "58 in"
wing_span = "27 ft"
clmax_clean = 1.5
clmax_landing = 1.95

[tail]
elevator_chord_ratio = 0.30   # tau is left to estimation and to flight calibration
stabilizer_attach_spacing = "14 in"
elevator_up_stop = "25 deg"
elevator_down_stop = "15 deg"
current_incidence = "-1.0 deg"  # as originally rigged (flights 1-4)
horizontal_area = "24 ft^2"
horizontal_span = "8.5 ft"
horizontal_arm = "168 in"
vertical_area = "10 ft^2"
vertical_height = "4 ft"
vertical_arm = "175 in"

[limits]
cg_forward = "65.5 in"
cg_aft = "74.5 in"
max_weight = "1650 lb"
min_static_margin = 5.0
cg_step_max = 3.0
elevator_reserve = "3 deg"

[measurement]
cg_uncertainty = 0.3
stick_force_zero_uncertainty = "0.3 lbf"

[trim]
system = "tab"
friction = "0.5 lbf"   # half-width of the friction band, invented like the aircraft

[cruise]
cas = "110 kt"
pressure_altitude = "5500 ft"
weight = "1550 lb"
cg = "70.5 in"

[fuel]
arm = "62 in"
density = "6.0 lb/gal"

[airspeed_calibration]
# from `trimlog calibrate calibration/calibration_flight.csv` (GPS legs, see README.md)
ias = [55, 65, 75, 85, 95, 105, 114.9, 124.9, 134.9]
cas = [57.7, 66.6, 75.8, 85.1, 94.6, 104.2, 113.6, 123.2, 132.6]
unit = "kt"

[logger]
# The demo logger's own channel names; it records the elevator trailing-edge
# UP positive and the stick force in newtons.
columns = { "ELEV_POS" = "elevator_deg", "FSTK" = "stick_force_N" }
inverted = ["elevator_deg"]
"""

@dataclass(frozen=True)
class Segment:
    """One piece of a flight's programme.

    Parameters
    ----------
    kind : {"move", "hold", "turn", "windup"}
        ``move``: change speed and vertical speed smoothly (a transition);
        ``hold``: a stabilized point (level, or an off-trim climb or descent
        at fixed power when ``vs_fpm`` is not zero); ``turn``: a level turn at
        constant speed; ``windup``: one step of a wind-up turn, rolling from
        the previous step's bank to ``bank_deg`` and holding it level.
    duration_s : float
        Duration [s] (for a point table: time to the next point).
    ias_kt : float
        Indicated airspeed at the end of the segment [kt].
    vs_fpm : float
        Vertical speed at the end of the segment [ft/min].
    bank_deg : float
        Bank angle of a turn [deg].
    alt_ft : float or None
        Pressure altitude of a point-table hold [ft]; None: the altitude
        follows the vertical speed from the start of the test block.
    """

    kind: str
    duration_s: float
    ias_kt: float
    vs_fpm: float = 0.0
    bank_deg: float = 0.0
    alt_ft: float | None = None


@dataclass(frozen=True)
class DemoFlight:
    """The plan and loading of one demo flight (all of it truth).

    Parameters
    ----------
    number : int
        Flight number, 1-based.
    kind : {"point_table", "time_series"}
        What the file is.
    log_file : str
        File name of the log or point table.
    loading_file : str or None
        File name of the loading sheet (time series only).
    takeoff_weight_lb, takeoff_cg_in, takeoff_fuel_gal : float
        Loading at takeoff [lb], [in aft of datum], [US gal].
    stab_setting : str
        Label of the stabilizer incidence setting.
    stab_incidence_deg : float
        Stabilizer incidence flown [deg], leading-edge up positive.
    trim_ias_kt : float
        Speed at which the trim tab was set for zero stick force [kt IAS].
    sample_rate_hz : float or None
        Logging rate of a time series [Hz].
    segments : tuple of Segment
        The programme flown, in order.  A logged flight ends with a wind-up
        turn in steps (segments of kind ``windup``), flown after every hold.
    """

    number: int
    kind: str
    log_file: str
    loading_file: str | None
    takeoff_weight_lb: float
    takeoff_cg_in: float
    takeoff_fuel_gal: float
    stab_setting: str
    stab_incidence_deg: float
    trim_ias_kt: float
    sample_rate_hz: float | None
    segments: tuple[Segment, ...]

    @property
    def n_points(self) -> int:
        """Stabilized 1-g points in the flight: the holds (turns are not points)."""
        return sum(s.kind == "hold" for s in self.segments)

    @property
    def n_turns(self) -> int:
        """Level turns flown (nz away from 1, never a point)."""
        return sum(s.kind == "turn" for s in self.segments)

    @property
    def n_windup_steps(self) -> int:
        """Steps of the wind-up turn at the end of a logged flight (maneuvering points)."""
        return sum(s.kind == "windup" and s.bank_deg > 0.0 for s in self.segments)

    @property
    def windup_from(self) -> int | None:
        """Index of the first segment of the appended wind-up turn (None without one).

        The wind-up turn, the speed change into it and the roll-out are drawn
        from their own noise stream, so the holds before it keep theirs.
        """
        first = [k for k, s in enumerate(self.segments) if s.kind == "windup"]
        return first[0] - 1 if first else None

    @property
    def takeoff_cg_pct_mac(self) -> float:
        """Takeoff CG [%MAC]."""
        return DEMO_PROFILE.pct_mac(self.takeoff_cg_in)


def _logged_programme(trim: float) -> tuple[Segment, ...]:
    """Return the programme of a logged flight trimmed at ``trim`` KIAS.

    Holds of 20-30 s joined by brisk speed changes (about 1 kt/s at most,
    so that no transition is steady for the 10 s a point needs), an off-trim
    climb and an off-trim descent at fixed power, and four level turns at
    30-40 deg bank (about 1.15-1.3 g), which are never points.
    """
    plan = (  # (kind, duration [s], IAS - trim [kt], vertical speed [ft/min], bank [deg])
        ("move", 15, 0, 0, 0), ("hold", 30, 0, 0, 0), ("move", 12, -5, 0, 0),
        ("hold", 30, -5, 0, 0), ("move", 12, -10, 0, 0), ("hold", 25, -10, 0, 0),
        ("move", 12, -15, 0, 0), ("hold", 30, -15, 0, 0), ("move", 12, -20, 0, 0),
        ("hold", 25, -20, 0, 0), ("move", 18, -28, 0, 0), ("hold", 25, -28, 0, 0),
        ("move", 35, 0, 0, 0), ("turn", 70, 0, 0, 30), ("hold", 30, 0, 0, 0),
        ("move", 18, 10, 0, 0), ("hold", 25, 10, 0, 0), ("move", 18, 20, 0, 0),
        ("hold", 25, 20, 0, 0), ("turn", 70, 20, 0, 35), ("move", 18, 30, 0, 0),
        ("hold", 20, 30, 0, 0), ("move", 40, -15, 450, 0), ("hold", 30, -15, 450, 0),
        ("move", 35, 15, -550, 0), ("hold", 30, 15, -550, 0), ("move", 25, 0, 0, 0),
        ("turn", 60, 0, 0, 40), ("hold", 30, 0, 0, 0), ("turn", 45, 0, 0, 30),
        ("move", 20, 12, 0, 0),
    )
    return tuple(Segment(kind, float(duration), trim + dv, float(vs), float(bank))
                 for kind, duration, dv, vs, bank in plan) + _windup(trim)


#: Load factors of the wind-up turn's steps [g] (level turn: n = 1/cos(bank)).
WINDUP_STEPS_G = (1.3, 1.5, 1.7, 1.9)
#: Duration of each wind-up step, the roll to its bank included [s].
WINDUP_STEP_S = 20.0


def _windup(trim: float) -> tuple[Segment, ...]:
    """A wind-up turn at the trim speed in steps of :data:`WINDUP_STEPS_G`, after the holds.

    A speed change back to trim, then each step rolls to its bank in
    ``_ROLL_S`` and holds it level at constant speed, then the roll-out.
    """
    steps = tuple(Segment("windup", WINDUP_STEP_S, trim, 0.0, math.degrees(math.acos(1.0 / n)))
                  for n in WINDUP_STEPS_G)
    # Brisk enough that neither the speed change nor the roll-out holds still for the 10 s
    # of a trim point.
    return (Segment("move", 12.0, trim), *steps, Segment("windup", 6.0, trim, 0.0, 0.0))


def _point_programme() -> tuple[Segment, ...]:
    """Eight points of a hand-flown card, each at its own altitude, 4 min apart; a wind-up turn."""
    speeds = (100, 90, 80, 70, 60, 110, 120, 130)
    altitudes = (5500, 5450, 5600, 5700, 5650, 5400, 5300, 5200)
    pairs = zip(speeds, altitudes, strict=True)
    holds = tuple(Segment("hold", 240.0, float(v), alt_ft=float(a)) for v, a in pairs)
    # Then a wind-up turn at the trim speed, one typed row per step, read off the g-meter.
    steps = tuple(Segment("windup", 120.0, 100.0, 0.0, math.degrees(math.acos(1.0 / n)),
                          alt_ft=5500.0) for n in WINDUP_STEPS_G)
    return holds + steps


DEMO_PROFILE: AircraftProfile = parse_profile(PROFILE_TOML, source=PROFILE_FILE)

#: The demo aircraft's true position error, IAS -> CAS [kt], with which every demo
#: flight is generated.  The profile ships the table that ``trimlog calibrate``
#: finds from the demo's calibration flight (:mod:`trimlog.demo.calibration`).
TRUE_POSITION_ERROR_IAS_KT = (50.0, 60.0, 70.0, 80.0, 90.0, 100.0, 110.0, 120.0, 130.0, 140.0)
TRUE_POSITION_ERROR_CAS_KT = (53.5, 62.0, 71.0, 80.5, 90.0, 99.5, 109.0, 118.5, 128.0, 137.5)

_RIGGED_DEG = -1.0
_SHIM_DEG = -0.6

DEMO_FLIGHTS: tuple[DemoFlight, ...] = (
    DemoFlight(1, "point_table", "flight1_points.csv", None, 1620.0, 66.5, 24.0,
               "as rigged", _RIGGED_DEG, 100.0, None, _point_programme()),
    DemoFlight(2, "time_series", "flight2.csv", "flight2.loading.toml", 1585.0, 69.7, 24.0,
               "as rigged", _RIGGED_DEG, 100.0, 10.0, _logged_programme(100.0)),
    DemoFlight(3, "time_series", "flight3.csv", "flight3.loading.toml", 1565.0, 72.3, 22.0,
               "as rigged", _RIGGED_DEG, 95.0, 20.0, _logged_programme(95.0)),
    DemoFlight(4, "time_series", "flight4.csv", "flight4.loading.toml", 1550.0, 73.9, 22.0,
               "as rigged", _RIGGED_DEG, 95.0, 10.0, _logged_programme(95.0)),
    DemoFlight(5, "time_series", "flight5.csv", "flight5.loading.toml", 1570.0, 72.3, 24.0,
               "shim 0.6 deg LE down", _RIGGED_DEG + _SHIM_DEG, 95.0, 10.0,
               _logged_programme(95.0)),
)


@dataclass(frozen=True)
class DemoTruth:
    """The true aerodynamics of the demo aircraft and the flights flown.

    Parameters
    ----------
    cm0 : float
        Pitching moment coefficient at CL = 0, δe = 0, original rigging [-].
    neutral_point_fixed : float
        Stick-fixed neutral point hn [fraction of MAC].
    neutral_point_free : float
        Stick-free neutral point hn' [fraction of MAC].
    cm_delta_per_rad : float
        Elevator power Cmδ [1/rad] (negative).
    tau : float
        Elevator effectiveness τ = dα_t/dδe [-].
    force_gain_ft2 : float
        K of ``Fs/q = A + K·(hn' - h)·CL`` [ft^2].
    rigged_incidence_deg : float
        Stabilizer incidence as originally rigged [deg], leading-edge up positive.
    isa_deviation_c : float
        Temperature of the day relative to ISA [degC].
    burn_gph : float
        Fuel flow during the test points [US gal/h].
    test_altitude_ft : float
        Pressure altitude of the test block [ft].
    flights : tuple of DemoFlight
        The five flights.
    """

    cm0: float
    neutral_point_fixed: float
    neutral_point_free: float
    cm_delta_per_rad: float
    tau: float
    force_gain_ft2: float
    rigged_incidence_deg: float
    isa_deviation_c: float
    burn_gph: float
    test_altitude_ft: float
    flights: tuple[DemoFlight, ...]

    def elevator_deg(self, cl: float | np.ndarray, h: float | np.ndarray,
                     stab_incidence_deg: float) -> float | np.ndarray:
        """Elevator angle to trim, stick fixed.

        Parameters
        ----------
        cl, h : float or array
            Lift coefficient [-] and CG [fraction of MAC].
        stab_incidence_deg : float
            Stabilizer incidence flown [deg], leading-edge up positive.

        Returns
        -------
        float or array
            δe [deg], trailing-edge down positive.

        Notes
        -----
        δe = -[Cm0 + (h - hn)·CL]/Cmδ - Δi_t/τ, Δi_t from the original rigging.

        References
        ----------
        Etkin and Reid (1996), ch. 2; Nelson (1998), ch. 2.
        """
        delta_it = math.radians(stab_incidence_deg - self.rigged_incidence_deg)
        rad = (-(self.cm0 + (h - self.neutral_point_fixed) * cl) / self.cm_delta_per_rad
               - delta_it / self.tau)
        return np.degrees(rad)

    def tab_term_ft2(self, cl_trim: float, h: float) -> float:
        """Trim-tab term A [ft^2] that makes Fs = 0 at ``cl_trim`` and CG ``h``."""
        return -self.force_gain_ft2 * (self.neutral_point_free - h) * cl_trim

    def stick_force_lbf(self, q_psf: float | np.ndarray, cl: float | np.ndarray,
                        h: float | np.ndarray, tab_term_ft2: float) -> float | np.ndarray:
        """Stick force, pull positive.

        Parameters
        ----------
        q_psf, cl, h : float or array
            Dynamic pressure [lbf/ft^2], lift coefficient [-], CG [fraction of MAC].
        tab_term_ft2 : float
            The flight's trim-tab term A [ft^2] (:meth:`tab_term_ft2`).

        Returns
        -------
        float or array
            Fs [lbf].

        References
        ----------
        Etkin and Reid (1996), ch. 2; USAF TPS Flying Qualities Textbook, ch. 5.
        """
        return q_psf * (tab_term_ft2 + self.force_gain_ft2 * (self.neutral_point_free - h) * cl)

    @property
    def cruise_cl(self) -> float:
        """CL at the profile's cruise condition [-]."""
        p = DEMO_PROFILE
        eas = airspeed.cas_to_eas(p.cruise_cas_kt, p.cruise_pressure_alt_ft)
        return airspeed.lift_coefficient(p.cruise_weight_lb, eas, p.wing_area_ft2)

    @property
    def cruise_h(self) -> float:
        """CG of the cruise condition [fraction of MAC]."""
        return DEMO_PROFILE.pct_mac(DEMO_PROFILE.cruise_cg_in) / 100.0

    def cruise_elevator_deg(self, stab_incidence_deg: float) -> float:
        """Elevator at the cruise condition with a given incidence [deg]."""
        return float(self.elevator_deg(self.cruise_cl, self.cruise_h, stab_incidence_deg))

    def incidence_change_deg(self, stab_incidence_deg: float) -> float:
        """Change from ``stab_incidence_deg`` that makes the cruise elevator zero [deg]."""
        return self.tau * self.cruise_elevator_deg(stab_incidence_deg)

    def shim_in(self, stab_incidence_deg: float) -> float:
        """Shim under one attach pair for :meth:`incidence_change_deg` [in]."""
        change = math.radians(abs(self.incidence_change_deg(stab_incidence_deg)))
        return DEMO_PROFILE.stabilizer_attach_spacing_in * math.tan(change)


DEMO_TRUTH = DemoTruth(
    cm0=0.004,
    neutral_point_fixed=0.38,
    neutral_point_free=0.34,
    cm_delta_per_rad=-1.0,
    tau=0.45,
    force_gain_ft2=7.0,
    rigged_incidence_deg=_RIGGED_DEG,
    isa_deviation_c=7.0,
    burn_gph=8.0,
    test_altitude_ft=5500.0,
    flights=DEMO_FLIGHTS,
)

#: Fuel used from engine start to the start of the test block [US gal].
_CLIMB_FUEL_GAL = 1.5
#: Duration of the roll into and out of a turn [s].
_ROLL_S = 5.0
_KT_TO_FPS = 1852.0 / 0.3048 / 3600.0


def _programme(flight: DemoFlight, dt: float, truth: DemoTruth) -> dict[str, np.ndarray]:
    """Commanded IAS, vertical speed, bank, altitude and segment index, per sample."""
    ias0, vs0, bank0 = flight.trim_ias_kt + 12.0, 0.0, 0.0
    parts: dict[str, list[np.ndarray]] = {"ias": [], "vs": [], "bank": [], "seg": [], "alt": []}
    for k, seg in enumerate(flight.segments):
        n = int(round(seg.duration_s / dt))
        u = np.arange(1, n + 1) / n
        ramp = 0.5 * (1.0 - np.cos(np.pi * u)) if seg.kind == "move" else np.ones(n)
        ias = ias0 + (seg.ias_kt - ias0) * ramp
        vs = vs0 + (seg.vs_fpm - vs0) * ramp
        bank = np.zeros(n)
        if seg.kind == "turn":
            edge = np.minimum(u, 1.0 - u + 1.0 / n) * seg.duration_s
            bank = seg.bank_deg * np.clip(edge / _ROLL_S, 0.0, 1.0)
        elif seg.kind == "windup":  # roll from the last step's bank to this one's, then hold it
            bank = bank0 + (seg.bank_deg - bank0) * np.clip(u * seg.duration_s / _ROLL_S, 0, 1)
        parts["ias"].append(ias)
        parts["vs"].append(vs)
        parts["bank"].append(bank)
        parts["seg"].append(np.full(n, k))
        parts["alt"].append(np.full(n, np.nan if seg.alt_ft is None else seg.alt_ft))
        ias0, vs0, bank0 = float(ias[-1]), float(vs[-1]), float(bank[-1])
    out = {key: np.concatenate(value) for key, value in parts.items()}
    out["t"] = dt * np.arange(out["ias"].size)
    climbed = truth.test_altitude_ft + np.cumsum(out["vs"] / 60.0 * dt)
    out["alt"] = np.where(np.isnan(out["alt"]), climbed, out["alt"])
    return out


def _smooth_state(flight: DemoFlight, dt: float, truth: DemoTruth) -> dict[str, np.ndarray]:
    """Compute the noise-free flight: programme, loading, and the model's δe and Fs."""
    p = DEMO_PROFILE
    s = _programme(flight, dt, truth)
    s["oat"] = atmosphere.isa_temperature_k(s["alt"]) - atmosphere.KELVIN_OFFSET + (
        truth.isa_deviation_c
    )
    s["fuel"] = flight.takeoff_fuel_gal - _CLIMB_FUEL_GAL - truth.burn_gph * s["t"] / 3600.0
    fuel_lb = p.fuel_density_lb_per_gal * flight.takeoff_fuel_gal
    zero_fuel_lb = flight.takeoff_weight_lb - fuel_lb
    zero_fuel_moment = flight.takeoff_weight_lb * flight.takeoff_cg_in - fuel_lb * p.fuel_arm_in
    fuel_now_lb = p.fuel_density_lb_per_gal * s["fuel"]
    s["weight"] = zero_fuel_lb + fuel_now_lb
    s["cg"] = (zero_fuel_moment + fuel_now_lb * p.fuel_arm_in) / s["weight"]
    s["h"] = (s["cg"] - p.lemac_in) / p.mac_in
    s["cas"] = airspeed.ias_to_cas(
        s["ias"], TRUE_POSITION_ERROR_IAS_KT, TRUE_POSITION_ERROR_CAS_KT
    ).cas_kt
    s["eas"] = airspeed.cas_to_eas(s["cas"], s["alt"])
    tas = airspeed.eas_to_tas(s["eas"], s["alt"], s["oat"])
    gamma = np.arcsin(s["vs"] / 60.0 / (tas * _KT_TO_FPS))
    s["nz"] = np.cos(gamma) / np.cos(np.radians(s["bank"]))
    s["q"] = airspeed.dynamic_pressure_psf(s["eas"])
    s["cl"] = airspeed.lift_coefficient(s["weight"], s["eas"], p.wing_area_ft2, s["nz"])
    s["elevator"] = truth.elevator_deg(s["cl"], s["h"], flight.stab_incidence_deg)
    trim_hold = next(
        k for k, seg in enumerate(flight.segments)
        if seg.kind == "hold" and seg.ias_kt == flight.trim_ias_kt and seg.vs_fpm == 0.0
    )
    in_trim = s["seg"] == trim_hold
    tab = truth.tab_term_ft2(float(s["cl"][in_trim].mean()), float(s["h"][in_trim].mean()))
    s["force"] = truth.stick_force_lbf(s["q"], s["cl"], s["h"], tab)
    s["tab"] = np.array(tab)
    return s


def _sample_interval(flight: DemoFlight) -> float:
    return 1.0 / flight.sample_rate_hz if flight.sample_rate_hz else 1.0


def truth_points(flight: DemoFlight, truth: DemoTruth | None = None, *,
                 maneuvers: bool = False) -> pd.DataFrame:
    """Return the noise-free stabilized points of a demo flight (the oracle for tests).

    Parameters
    ----------
    flight : DemoFlight
        One of ``DEMO_TRUTH.flights``.
    truth : DemoTruth, optional
        The model values (default :data:`DEMO_TRUTH`).

    Returns
    -------
    pandas.DataFrame
        One row per hold, in flight order: ``point`` (1-based), ``t_start_s``,
        ``t_end_s`` (time in the log; point tables: from the first point, 4 min
        apart), and the means over the hold of ``ias_kt``, ``cas_kt``,
        ``eas_kt``, ``pressure_alt_ft``, ``oat_c``, ``vs_fpm``, ``nz_g``,
        ``fuel_gal``, ``weight_lb``, ``cg_in``, ``h``, ``cl`` and ``q_psf``;
        ``elevator_deg`` (trailing-edge down positive) and ``stick_force_lbf``
        (pull positive) from the model at those means; ``stab_incidence_deg``.
        With ``maneuvers=True``: the same for each step of the wind-up turn
        instead (the maneuvering points; point tables: the whole typed step).
    """
    truth = truth or DEMO_TRUTH
    dt = _sample_interval(flight)
    s = _smooth_state(flight, dt, truth)
    names = {"ias": "ias_kt", "cas": "cas_kt", "eas": "eas_kt", "alt": "pressure_alt_ft",
             "oat": "oat_c", "vs": "vs_fpm", "nz": "nz_g", "fuel": "fuel_gal",
             "weight": "weight_lb", "cg": "cg_in", "h": "h", "cl": "cl", "q": "q_psf",
             "elevator": "elevator_deg", "force": "stick_force_lbf"}
    rows = []
    holds = [k for k, seg in enumerate(flight.segments)
             if (seg.kind == "windup" and seg.bank_deg > 0.0 if maneuvers else seg.kind == "hold")]
    for number, k in enumerate(holds, start=1):
        mask = s["seg"] == k
        if maneuvers and flight.kind == "time_series":  # the step once rolled to its bank
            mask &= s["t"] >= s["t"][mask][0] + _ROLL_S
        row = {"flight": str(flight.number), "point": number,
               "t_start_s": float(s["t"][mask][0]), "t_end_s": float(s["t"][mask][-1])}
        row.update({out: float(s[key][mask].mean()) for key, out in names.items()})
        # The model at the hold's mean condition, so that the oracle is exact.
        row["elevator_deg"] = float(truth.elevator_deg(row["cl"], row["h"],
                                                       flight.stab_incidence_deg))
        row["stick_force_lbf"] = float(truth.stick_force_lbf(row["q_psf"], row["cl"], row["h"],
                                                             float(s["tab"])))
        row["stab_incidence_deg"] = flight.stab_incidence_deg
        rows.append(row)
    return pd.DataFrame(rows)


# ------------------------------------------------------------------ hold-level error


def _hold_error_series(flight: DemoFlight, seed: int) -> dict[str, np.ndarray]:
    """Per-sample hold-level error of a logged flight: elevator [deg] and force [lbf].

    Each hold gets an offset drifting linearly across it; the speed changes and
    turns join neighbouring holds linearly (from zero before the first hold, to
    zero at the end of the log), so the error is continuous and a hold stays as
    steady as the air and the pilot make it.
    """
    dt = _sample_interval(flight)
    s = _programme(flight, dt, DEMO_TRUTH)
    rng = np.random.default_rng([seed, flight.number, 1])
    out = {"t": s["t"], "seg": s["seg"]}
    knots_t: list[float] = []
    knots: dict[str, list[float]] = {"elevator": [], "force": []}
    # Each step of the wind-up turn is held like a trim point, with its own offset drawn
    # from a stream of its own, so that the holds keep theirs.
    steps_rng = np.random.default_rng([seed, flight.number, 3])
    for k, seg in enumerate(flight.segments):
        is_step = seg.kind == "windup" and seg.bank_deg > 0.0
        if seg.kind != "hold" and not is_step:
            continue
        t = s["t"][s["seg"] == k]
        # A step's offset settles once rolled to its bank, so the error stays continuous.
        knots_t += [float(t[0]) + (_ROLL_S if is_step else 0.0), float(t[-1])]
        draw = steps_rng if is_step else rng
        for name, sd in (("elevator", HOLD_ELEVATOR_SD_DEG), ("force", HOLD_FORCE_SD_LBF)):
            offset = sd * draw.standard_normal()
            drift = HOLD_DRIFT_SD * sd * draw.standard_normal()
            knots[name] += [offset - 0.5 * drift, offset + 0.5 * drift]
    ends = [0.0, float(s["t"][-1])]
    for name, values in knots.items():
        out[name] = np.interp(s["t"], [ends[0] - dt, *knots_t, ends[1] + dt],
                              [0.0, *values, 0.0])
    return out


def hold_errors(flight: DemoFlight, seed: int = DEFAULT_SEED) -> pd.DataFrame:
    """Return the hold-level error of each stabilized point of a logged demo flight.

    Parameters
    ----------
    flight : DemoFlight
        One of the time-series flights of ``DEMO_TRUTH.flights``.
    seed : int
        Seed of the files (default: the one of ``sample_logs/``).

    Returns
    -------
    pandas.DataFrame
        One row per hold, in flight order: ``point`` (1-based),
        ``elevator_deg`` [deg, trailing-edge down positive] and
        ``stick_force_lbf`` [lbf, pull positive]: the mean offset over the
        hold that the file carries on top of :func:`truth_points`.

    Raises
    ------
    TrimlogError
        For a point-table flight, whose scatter is its typed reading error.
    """
    if flight.kind != "time_series":
        raise TrimlogError(f"demo flight {flight.number} is a point table: its hold-level "
                           "scatter is the typed reading error, not a logged offset")
    e = _hold_error_series(flight, seed)
    holds = [k for k, seg in enumerate(flight.segments) if seg.kind == "hold"]
    rows = [{"point": number, "elevator_deg": float(e["elevator"][e["seg"] == k].mean()),
             "stick_force_lbf": float(e["force"][e["seg"] == k].mean())}
            for number, k in enumerate(holds, start=1)]
    return pd.DataFrame(rows)
