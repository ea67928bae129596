"""Synthetic time-series flight logs of known truth, for testing point detection.

Everything here is synthetic: invented numbers, no real aircraft.  A flight
is a list of segments (holds, transitions, turns, pull-ups); the generator
returns the samples table (canonical columns, as ``read_log`` would give) and
the true holds.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.signal import lfilter


@dataclass(frozen=True)
class Hold:
    """A stabilized hold: steady airspeed, elevator, force, 1 g, steady climb rate."""

    duration_s: float
    ias_kt: float
    elevator_deg: float
    force_lbf: float
    vs_fpm: float = 0.0


@dataclass(frozen=True)
class Turn:
    """A steady turn at load factor ``nz_g``: steady controls but not 1 g."""

    duration_s: float
    nz_g: float = 1.4


@dataclass(frozen=True)
class Pullup:
    """A pull-up: load factor and elevator swing away and back."""

    duration_s: float = 6.0


def elevator_for(ias_kt: float) -> float:
    """Invented trim curve: elevator [deg] against airspeed [kt] (synthetic)."""
    return -1.0 - 4.0e4 / ias_kt**2 + 2.0


def force_for(ias_kt: float, trim_kt: float = 100.0) -> float:
    """Invented stick-force curve: pull positive below the trim speed (synthetic)."""
    return 0.12 * (trim_kt - ias_kt)


def make_log(
    segments: list[object],
    *,
    rate_hz: float = 50.0,
    transition_s: float = 8.0,
    noise: float = 1.0,
    seed: int = 1,
    altitude_ft: float = 5000.0,
    with_nz: bool = True,
) -> tuple[pd.DataFrame, list[tuple[float, float, Hold]]]:
    """Build a synthetic log from segments, with ramps of ``transition_s`` between them.

    Returns the samples and the true holds as (t_start, t_end, hold).
    """
    rng = np.random.default_rng(seed)
    pieces: list[dict[str, np.ndarray]] = []
    truth: list[tuple[float, float, Hold]] = []
    t = 0.0
    state = {"ias": 125.0, "elev": elevator_for(125.0), "force": force_for(125.0)}
    state["alt"] = altitude_ft

    def add(duration: float, ias: np.ndarray | float, elev, force, nz, vs) -> None:
        nonlocal t
        n = max(int(round(duration * rate_hz)), 1)
        times = t + np.arange(n) / rate_hz
        alt = state["alt"] + np.cumsum(np.broadcast_to(vs, (n,)) / 60.0 / rate_hz)
        pieces.append({
            "time_s": times,
            "ias_kt": np.broadcast_to(ias, (n,)).astype(float),
            "elevator_deg": np.broadcast_to(elev, (n,)).astype(float),
            "stick_force_lbf": np.broadcast_to(force, (n,)).astype(float),
            "nz_g": np.broadcast_to(nz, (n,)).astype(float),
            "pressure_alt_ft": alt,
            "vs_true": np.broadcast_to(vs, (n,)).astype(float),
        })
        state["alt"] = float(alt[-1])
        t = float(times[-1]) + 1.0 / rate_hz

    for seg in segments:
        if isinstance(seg, Hold):
            ramp = np.linspace(0.0, 1.0, max(int(transition_s * rate_hz), 1))
            add(transition_s, state["ias"] + (seg.ias_kt - state["ias"]) * ramp,
                state["elev"] + (seg.elevator_deg - state["elev"]) * ramp,
                state["force"] + (seg.force_lbf - state["force"]) * ramp, 1.0, seg.vs_fpm * ramp)
            start = t
            add(seg.duration_s, seg.ias_kt, seg.elevator_deg, seg.force_lbf, 1.0, seg.vs_fpm)
            truth.append((start, t - 1.0 / rate_hz, seg))
            state.update(ias=seg.ias_kt, elev=seg.elevator_deg, force=seg.force_lbf)
        elif isinstance(seg, Turn):
            n = int(seg.duration_s * rate_hz)
            ramp = np.clip(np.arange(n) / (3.0 * rate_hz), 0, 1) * np.clip(
                (n - np.arange(n)) / (3.0 * rate_hz), 0, 1)
            add(seg.duration_s, state["ias"], state["elev"] - 1.5 * ramp,
                state["force"] + 6.0 * ramp, 1.0 + (seg.nz_g - 1.0) * ramp, 0.0)
        elif isinstance(seg, Pullup):
            n = int(seg.duration_s * rate_hz)
            bump = np.sin(np.pi * np.arange(n) / n)
            add(seg.duration_s, state["ias"] - 5.0 * bump, state["elev"] - 3.0 * bump,
                state["force"] + 10.0 * bump, 1.0 + 1.0 * bump, 800.0 * bump)
        else:
            raise TypeError(seg)
    data = {k: np.concatenate([p[k] for p in pieces]) for k in pieces[0]}
    n = len(data["time_s"])
    # Turbulence: slow (AR(1), ~2 s correlation) plus fast sensor noise, in each channel.
    slow = _ar1(rng, n, rate_hz, 2.0)
    data["ias_kt"] = data["ias_kt"] + noise * (0.6 * slow + 0.3 * rng.standard_normal(n))
    data["elevator_deg"] = data["elevator_deg"] + noise * (
        0.08 * _ar1(rng, n, rate_hz, 1.0) + 0.05 * rng.standard_normal(n))
    data["stick_force_lbf"] = data["stick_force_lbf"] + noise * (
        0.25 * _ar1(rng, n, rate_hz, 1.0) + 0.15 * rng.standard_normal(n))
    data["nz_g"] = data["nz_g"] + noise * 0.02 * rng.standard_normal(n)
    data["pressure_alt_ft"] = data["pressure_alt_ft"] + noise * (
        5.0 * slow + 2.0 * rng.standard_normal(n))
    samples = pd.DataFrame({
        "time_s": data["time_s"],
        "ias_kt": data["ias_kt"],
        "pressure_alt_ft": data["pressure_alt_ft"],
        "oat_c": 10.0 - 0.002 * (data["pressure_alt_ft"] - 5000.0),
        "elevator_deg": data["elevator_deg"],
        "stick_force_lbf": data["stick_force_lbf"],
    })
    if with_nz:
        samples["nz_g"] = data["nz_g"]
    samples["source_line"] = np.arange(n, dtype=np.int64) + 2
    return samples, truth


def _ar1(rng: np.random.Generator, n: int, rate_hz: float, tau_s: float) -> np.ndarray:
    """Unit-variance first-order autoregressive noise with time constant ``tau_s``."""
    phi = np.exp(-1.0 / (rate_hz * tau_s))
    white = rng.standard_normal(n) * np.sqrt(1.0 - phi**2)
    white[0] = rng.standard_normal()
    return lfilter([1.0], [1.0, -phi], white)


def standard_flight(
    seed: int = 1, **kwargs: object
) -> tuple[pd.DataFrame, list[tuple[float, float, Hold]]]:
    """Build a synthetic flight: trim, off-trim holds (some climbing), turns, a pull-up."""
    holds = [
        Hold(40, 100.0, elevator_for(100.0), force_for(100.0)),
        Hold(30, 90.0, elevator_for(90.0), force_for(90.0), vs_fpm=-300.0),
        Turn(25, 1.4),
        Hold(30, 80.0, elevator_for(80.0), force_for(80.0), vs_fpm=-600.0),
        Pullup(6),
        Hold(30, 110.0, elevator_for(110.0), force_for(110.0), vs_fpm=400.0),
        Turn(30, 1.3),
        Hold(35, 120.0, elevator_for(120.0), force_for(120.0), vs_fpm=700.0),
        Hold(25, 100.0, elevator_for(100.0), force_for(100.0)),
    ]
    return make_log(holds, seed=seed, **kwargs)
