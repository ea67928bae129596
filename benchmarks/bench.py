"""Benchmark of the whole program: ``trimlog bench [--quick]``.

Not a test: it prints measured times and ratios, each against a yardstick
timed in the same run on the same machine, and says PASS or MISS for each
target.  Nothing here is imported by the analysis.

The logs are synthetic: an invented flight programme of the invented demo
aircraft (:mod:`trimlog.demo.model`), flown through the demo's truth model with
turbulence, sensor noise, a per-hold pilot offset, single-sample spikes and
short dropouts, logged at 50 Hz with 15 columns (the demo logger's
``ELEV_POS`` and ``FSTK`` channels, canonical names for the rest, six
channels the analysis does not use).  :func:`synthetic_log` is the one
generator of big logs; ``benchmarks/bench_read.py`` uses it too.
"""

from __future__ import annotations

import math
import statistics
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from trimlog.demo.files import LBF_TO_N
from trimlog.demo.model import DEMO_PROFILE, DEMO_TRUTH, PROFILE_TOML
from trimlog.errors import TrimlogError
from trimlog.physics import airspeed

#: Segments of one cycle of the programme: (kind, duration [s], IAS - trim [kt],
#: vertical speed [ft/min], bank [deg]).  Nine holds of 20-30 s (two off-trim,
#: climbing and descending at fixed power), brisk speed changes, two level turns.
_CYCLE = (
    ("hold", 30, 0, 0, 0), ("move", 12, -6, 0, 0), ("hold", 25, -6, 0, 0),
    ("move", 12, -12, 0, 0), ("hold", 25, -12, 0, 0), ("move", 14, -20, 0, 0),
    ("hold", 25, -20, 0, 0), ("move", 30, 0, 0, 0), ("turn", 45, 0, 0, 35),
    ("move", 15, 10, 0, 0), ("hold", 25, 10, 0, 0), ("move", 15, 20, 0, 0),
    ("hold", 20, 20, 0, 0), ("move", 30, -10, 500, 0), ("hold", 25, -10, 500, 0),
    ("move", 30, 10, -600, 0), ("hold", 25, 10, -600, 0), ("move", 20, 0, 0, 0),
    ("turn", 40, 0, 0, 30), ("move", 12, 0, 0, 0),
)
_TRIM_IAS_KT = 95.0
_TEST_ALTITUDE_FT = 5500.0
_BURN_GPH = 8.0
_KT_TO_FPS = 1852.0 / 0.3048 / 3600.0
_ROLL_S = 5.0

#: The logged columns, in file order: the demo logger's elevator (trailing-edge
#: up positive) and force (newtons) channels, canonical names, unused channels.
LOG_COLUMNS = (
    "time_s", "ias_kt", "pressure_alt_ft", "oat_c", "ELEV_POS", "FSTK", "nz_g", "vs_fpm",
    "fuel_gal", "rpm", "map_inhg", "aileron_deg", "rudder_deg", "pitch_deg", "gps_alt_ft",
)


@dataclass(frozen=True)
class Loading:
    """Takeoff loading of one synthetic flight [lb], [in aft of datum], [US gal]."""

    weight_lb: float = 1570.0
    cg_in: float = 70.0
    fuel_gal: float = 24.0

    def sheet(self, flight: str) -> str:
        """The loading sheet (format of :func:`trimlog.input.loading_sheet.read_loading_sheet`)."""
        return (
            f'flight = "{flight}"\nlabel = "synthetic benchmark flight {flight}"\n\n'
            f'[takeoff]\nweight = "{self.weight_lb:.1f} lb"\ncg = "{self.cg_in:.2f} in"\n'
            f'fuel = "{self.fuel_gal:.1f} gal"\n\n'
            '[config]\nflap = "0 deg"\nstab_setting = "as rigged"\nstab_incidence = "-1.0 deg"\n'
        )


def _programme(duration_s: float, rate_hz: float) -> dict[str, np.ndarray]:
    """Commanded IAS [kt], vertical speed [ft/min], bank [deg] and segment index per sample."""
    n_total = int(round(duration_s * rate_hz))
    ias_parts, vs_parts, bank_parts, seg_parts = [], [], [], []
    ias0, vs0, done, k = _TRIM_IAS_KT + 12.0, 0.0, 0, 0
    while done < n_total:
        kind, seconds, dv, vs, bank = _CYCLE[k % len(_CYCLE)]
        n = min(int(round(seconds * rate_hz)), n_total - done)
        u = np.arange(1, n + 1) / (seconds * rate_hz)
        ramp = 0.5 * (1.0 - np.cos(np.pi * u)) if kind == "move" else np.ones(n)
        ias = ias0 + (_TRIM_IAS_KT + dv - ias0) * ramp
        vsi = vs0 + (vs - vs0) * ramp
        phi = np.zeros(n)
        if kind == "turn":
            edge = np.minimum(u, 1.0 - u + 1.0 / n) * seconds
            phi = bank * np.clip(edge / _ROLL_S, 0.0, 1.0)
        ias_parts.append(ias)
        vs_parts.append(vsi)
        bank_parts.append(phi)
        seg_parts.append(np.full(n, k))
        ias0, vs0, done, k = float(ias[-1]), float(vsi[-1]), done + n, k + 1
    return {"ias": np.concatenate(ias_parts), "vs": np.concatenate(vs_parts),
            "bank": np.concatenate(bank_parts), "seg": np.concatenate(seg_parts)}


def _ar1(rng: np.random.Generator, n: int, sigma: float, tc_s: float, dt: float) -> np.ndarray:
    """Stationary first-order autoregressive noise: std ``sigma``, time constant ``tc_s``.

    The recursion ``x[i] = phi·x[i-1] + e[i]`` is applied as a convolution
    with its impulse response ``phi**k``, cut where it falls below 1e-6 and
    computed by FFT, after a burn-in of that length.
    """
    phi = math.exp(-dt / tc_s)
    taps = int(math.ceil(math.log(1e-6) / math.log(phi)))
    shocks = rng.standard_normal(n + taps) * sigma * math.sqrt(1.0 - phi * phi)
    size = 1 << (n + 2 * taps).bit_length()
    spectrum = np.fft.rfft(shocks, size) * np.fft.rfft(phi ** np.arange(taps), size)
    return np.fft.irfft(spectrum, size)[taps:taps + n]


def _spikes_and_dropouts(rng: np.random.Generator, values: np.ndarray, dt: float,
                         spike: tuple[float, float] | None) -> None:
    """About one spike a minute (when ``spike`` gives its size range) and short dropouts."""
    if spike is not None:
        n = int(rng.poisson(values.size * dt / 60.0))
        where = rng.choice(values.size, size=n, replace=False)
        values[where] += rng.choice([-1.0, 1.0], size=n) * rng.uniform(*spike, size=n)
    for start in rng.integers(0, values.size, size=int(rng.poisson(values.size * dt / 150.0))):
        values[start:start + int(rng.integers(1, 6))] = np.nan


def synthetic_log(
    minutes: float,
    *,
    rate_hz: float = 50.0,
    loading: Loading = Loading(),
    seed: int = 1,
) -> pd.DataFrame:
    """Return a synthetic time-series log of the demo aircraft, as the logger writes it.

    Parameters
    ----------
    minutes : float
        Length of the log [min]; one cycle of the programme (nine holds,
        two turns) takes about eight minutes and repeats.
    rate_hz : float
        Logging rate [Hz].
    loading : Loading
        Takeoff loading; weight and CG follow the fuel burnt (8 US gal/h).
    seed : int
        Seed of the noise.

    Returns
    -------
    pandas.DataFrame
        The columns of :data:`LOG_COLUMNS` (NaN where the logger dropped a
        sample), rounded to the logger's resolution; write it with
        ``to_csv(index=False)`` and read it with the demo profile.

    Notes
    -----
    Elevator and stick force come from the demo truth model
    (:class:`trimlog.demo.model.DemoTruth`) at the flight condition of each
    sample; see :mod:`trimlog.demo.model` for the model and its references.
    """
    p, truth = DEMO_PROFILE, DEMO_TRUTH
    dt = 1.0 / rate_hz
    rng = np.random.default_rng(seed)
    s = _programme(60.0 * minutes, rate_hz)
    n = s["ias"].size
    t = dt * np.arange(n)
    alt = _TEST_ALTITUDE_FT + np.cumsum(s["vs"] / 60.0 * dt)
    oat = 15.0 - 0.0019812 * alt + truth.isa_deviation_c  # ISA lapse, 1.98 degC per 1000 ft
    fuel = loading.fuel_gal - 1.5 - _BURN_GPH * t / 3600.0
    fuel_lb = p.fuel_density_lb_per_gal * loading.fuel_gal
    moment0 = loading.weight_lb * loading.cg_in - fuel_lb * p.fuel_arm_in
    weight = loading.weight_lb - fuel_lb + p.fuel_density_lb_per_gal * fuel
    cg = (moment0 + p.fuel_density_lb_per_gal * fuel * p.fuel_arm_in) / weight
    h = (cg - p.lemac_in) / p.mac_in
    cas = airspeed.ias_to_cas(s["ias"], p.position_error_ias_kt, p.position_error_cas_kt).cas_kt
    eas = airspeed.cas_to_eas(cas, alt)
    tas = airspeed.eas_to_tas(eas, alt, oat)
    nz = np.cos(np.arcsin(s["vs"] / 60.0 / (tas * _KT_TO_FPS))) / np.cos(np.radians(s["bank"]))
    q = airspeed.dynamic_pressure_psf(eas)
    cl = airspeed.lift_coefficient(weight, eas, p.wing_area_ft2, nz)
    incidence = truth.rigged_incidence_deg
    elevator = truth.elevator_deg(cl, h, incidence)
    trim_cl = float(airspeed.lift_coefficient(
        weight[0], airspeed.cas_to_eas(_TRIM_IAS_KT, _TEST_ALTITUDE_FT), p.wing_area_ft2))
    force = truth.stick_force_lbf(q, cl, h, truth.tab_term_ft2(trim_cl, float(h[0])))
    # The pilot's offset from trim: one draw per segment, joined linearly.
    mids = np.array([t[s["seg"] == k].mean() for k in np.unique(s["seg"])])
    held_e = np.interp(t, mids, 0.14 * rng.standard_normal(mids.size))
    held_f = np.interp(t, mids, 0.4 * rng.standard_normal(mids.size))
    white = rng.standard_normal
    ias_logged = np.interp(cas + _ar1(rng, n, 0.3, 1.5, dt), p.position_error_cas_kt,
                           p.position_error_ias_kt) + 0.15 * white(n)
    channels = {
        "ias_kt": (ias_logged, 1, (10.0, 25.0)),
        "pressure_alt_ft": (alt + _ar1(rng, n, 6.0, 5.0, dt) + 2.0 * white(n), 0, None),
        "oat_c": (oat + 0.1 * white(n), 1, None),
        "ELEV_POS": (-(elevator + held_e + _ar1(rng, n, 0.12, 0.8, dt) + 0.03 * white(n)),
                     2, (4.0, 9.0)),
        "FSTK": ((force + held_f + _ar1(rng, n, 0.3, 0.8, dt) + 0.1 * white(n)) * LBF_TO_N,
                 1, (30.0, 70.0)),
        "nz_g": (nz + _ar1(rng, n, 0.02, 0.3, dt) + 0.005 * white(n), 3, None),
        "vs_fpm": (s["vs"] + _ar1(rng, n, 60.0, 1.5, dt), -1, None),
        "fuel_gal": (fuel + 0.05 * white(n), 1, None),
        "rpm": (2450.0 + 4.0 * (s["ias"] - _TRIM_IAS_KT) + 8.0 * white(n), 0, None),
        "map_inhg": (22.0 + 0.1 * white(n), 2, None),
        "aileron_deg": (_ar1(rng, n, 0.8, 0.5, dt), 2, None),
        "rudder_deg": (_ar1(rng, n, 0.5, 0.5, dt), 2, None),
        "pitch_deg": (np.degrees(np.arcsin(s["vs"] / 60.0 / (tas * _KT_TO_FPS))) + 2.0
                      + _ar1(rng, n, 0.3, 1.0, dt), 2, None),
        "gps_alt_ft": (alt + 150.0 + _ar1(rng, n, 10.0, 20.0, dt), 0, None),
    }
    out = {"time_s": np.round(t, 3)}
    for name, (values, decimals, spike) in channels.items():
        _spikes_and_dropouts(rng, values, dt, spike)
        out[name] = np.round(values, decimals) + 0.0  # + 0.0 turns -0.0 into 0.0
    return pd.DataFrame(out, columns=list(LOG_COLUMNS))


def write_csv(frame: pd.DataFrame, path: Path) -> None:
    """Write a numeric table as CSV, NaN as an empty cell (pyarrow's writer when present)."""
    try:
        import pyarrow as pa
        import pyarrow.csv as pa_csv
    except ImportError:  # pyarrow comes with streamlit; pandas' writer is 4x slower
        frame.to_csv(path, index=False, na_rep="")
        return
    table = pa.table({c: pa.array(frame[c].to_numpy(), from_pandas=True) for c in frame})
    with open(path, "wb") as out:
        out.write((",".join(frame.columns) + "\n").encode("ascii"))
        pa_csv.write_csv(table, out, pa_csv.WriteOptions(include_header=False))


def write_flight(folder: Path, name: str, minutes: float, *, loading: Loading = Loading(),
                 seed: int = 1, rate_hz: float = 50.0) -> Path:
    """Write ``<name>.csv`` and ``<name>.loading.toml`` into ``folder``; return the log's path."""
    path = Path(folder) / f"{name}.csv"
    write_csv(synthetic_log(minutes, rate_hz=rate_hz, loading=loading, seed=seed), path)
    path.with_name(f"{name}.loading.toml").write_text(loading.sheet(name), encoding="utf-8")
    return path


def point_table(number: int, cg_in: float, *, seed: int = 1, n_points: int = 10) -> bytes:
    """A typed point table of one synthetic flight: ``n_points`` holds, weight and CG per row."""
    p, truth = DEMO_PROFILE, DEMO_TRUTH
    rng = np.random.default_rng([seed, number])
    ias = np.linspace(70.0, 125.0, n_points)
    alt = 5500.0 + 30.0 * rng.standard_normal(n_points)
    weight = 1580.0 - 4.0 * np.arange(n_points)
    eas = airspeed.cas_to_eas(airspeed.ias_to_cas(
        ias, p.position_error_ias_kt, p.position_error_cas_kt).cas_kt, alt)
    cl = airspeed.lift_coefficient(weight, eas, p.wing_area_ft2)
    h = (cg_in - p.lemac_in) / p.mac_in
    tab = truth.tab_term_ft2(float(np.interp(_TRIM_IAS_KT, ias, cl)), h)
    elevator = truth.elevator_deg(cl, h, truth.rigged_incidence_deg) + 0.15 * rng.standard_normal(
        n_points)
    force = truth.stick_force_lbf(airspeed.dynamic_pressure_psf(eas), cl, h, tab) + (
        0.4 * rng.standard_normal(n_points))
    # The elevator under the demo logger's channel, trailing-edge up positive (see the profile).
    rows = ["test_point,ias_kt,pressure_alt_ft,oat_c,ELEV_POS,stick_force_lbf,weight_lb,"
            "cg_in,flap_deg"]
    rows += [f"TP{k + 1},{ias[k]:.0f},{alt[k]:.0f},{11.0:.0f},{-elevator[k]:.2f},{force[k]:.1f},"
             f"{weight[k]:.0f},{cg_in:.2f},0" for k in range(n_points)]
    return ("\n".join(rows) + "\n").encode("ascii")


# --------------------------------------------------------------------------- measuring


@dataclass(frozen=True)
class Sizes:
    """What one run measures: sizes [min, flights] and repeats."""

    log_minutes: float
    short_minutes: float
    season_flights: int
    growth_minutes: tuple[float, ...]
    history_flights: int
    repeats: int
    season_repeats: int
    process_repeats: int


FULL = Sizes(60.0, 2.0, 30, (1.0, 4.0, 16.0, 64.0), 500, 7, 1, 5)
QUICK = Sizes(10.0, 2.0, 5, (1.0, 2.0, 4.0, 8.0), 50, 3, 1, 3)


def median_time(function: Callable[[], Any], repeat: int) -> tuple[float, Any]:
    """Median wall time of ``repeat`` calls [s], and the last call's result."""
    times, result = [], None
    for _ in range(max(repeat, 1)):
        start = time.perf_counter()
        result = function()
        times.append(time.perf_counter() - start)
    return statistics.median(times), result


def _verdict(ok: bool) -> str:
    return "PASS" if ok else "MISS"


def _ms(seconds: float) -> str:
    return f"{1e3 * seconds:9.1f} ms"


class _Run:
    """One benchmark run: sizes, the temporary folder, the profile, the printed lines."""

    def __init__(self, sizes: Sizes, folder: Path, out: Callable[[str], None]) -> None:
        from trimlog.pipeline import chain as analysis

        self.sizes, self.folder, self.out = sizes, folder, out
        self.profile_path = folder / "tinkerfinch_tf2.toml"
        self.profile_path.write_text(PROFILE_TOML, encoding="utf-8")
        self.profile = analysis.load_profile(self.profile_path)
        self.verdicts: list[tuple[str, bool]] = []
        self._process_env: dict[str, str] | None = None

    @property
    def process_env(self) -> dict[str, str]:
        """:func:`_installed_env`, trimlog's bytecode compiled into it on first use."""
        if self._process_env is None:
            import subprocess
            import sys

            import trimlog

            self._process_env = _installed_env()
            subprocess.run([sys.executable, "-m", "compileall", "-q",
                            str(Path(trimlog.__file__).parent)],
                           check=True, capture_output=True, env=self._process_env)
        return self._process_env

    def verdict(self, what: str, ok: bool) -> str:
        self.verdicts.append((what, ok))
        return _verdict(ok)

    def log(self, name: str, minutes: float, *, cg_in: float = 70.0, seed: int = 1,
            rate_hz: float = 50.0) -> Path:
        path = self.folder / f"{name}.csv"
        if not path.exists():
            write_flight(self.folder, name, minutes, loading=Loading(cg_in=cg_in), seed=seed,
                         rate_hz=rate_hz)
        return path

    def end_to_end(self, paths: list[Path]) -> Any:
        """Read, validate, detect, reduce, fit, incidence and the JSON result of ``paths``."""
        from trimlog.pipeline import chain as analysis
        from trimlog.views.json_export import analysis_to_dict

        flights = [f for path in paths for f in analysis.load_flight_file(path, self.profile)]
        result = analysis.analyze(flights, self.profile)
        analysis_to_dict(result)
        return result


def _stages(run: _Run, paths: list[Path], rounds: int,
            keep: list | None = None) -> list[dict[str, float]]:
    """Median time of each stage of the chain on each log [s].

    Each repeat runs every stage on every log in turn, so that a change of
    the machine's load during the run reaches all of them alike.
    """
    from trimlog.input.loading_sheet import read_loading_sheet
    from trimlog.input.logs import read_log
    from trimlog.pipeline import chain as analysis
    from trimlog.pipeline.points import points_from_log
    from trimlog.pipeline.reduction import reduce_points
    from trimlog.stability import neutral_points as stability
    from trimlog.views.json_export import analysis_to_dict

    p = run.profile

    def once(path: Path) -> dict[str, float]:
        t: dict[str, float] = {}

        def timed(stage: str, function: Callable[[], Any]) -> Any:
            start, cpu = time.perf_counter(), time.process_time()
            result = function()
            t[stage] = time.perf_counter() - start
            t[f"cpu {stage}"] = time.process_time() - cpu
            return result

        raw = path.read_bytes()
        timed("pandas read_csv", lambda: pd.read_csv(path))
        log = timed("read + validate", lambda: read_log(
            raw, name=path.name, column_map=p.column_map, inverted=p.inverted_columns))
        points = timed("detect points", lambda: points_from_log(log, flight=path.stem))
        sheet = read_loading_sheet(analysis.sibling_sheet(path))
        reduced = timed("reduce", lambda: reduce_points(points, p, {path.stem: sheet}))
        timed("fit (stability)", lambda: stability.analyze_stability(reduced.points, p))
        flights = analysis.load_flight_file(path, p)
        result = timed("analyze()", lambda: analysis.analyze(flights, p))
        t["incidence, tail, assembly"] = max(
            t.pop("analyze()") - t["reduce"] - t["fit (stability)"], 0.0)
        t["cpu incidence, tail, assembly"] = max(
            t.pop("cpu analyze()") - t["cpu reduce"] - t["cpu fit (stability)"], 0.0)
        timed("JSON result", lambda: analysis_to_dict(result))
        timed("end to end", lambda: run.end_to_end([path]))
        return t

    runs = [[once(path) for path in paths] for _ in range(max(rounds, 1))]
    if keep is not None:
        keep.extend(runs)
    return [{stage: statistics.median(r[k][stage] for r in runs) for stage in runs[0][k]}
            for k in range(len(paths))]


def bench_chain(run: _Run) -> None:
    """1. The chain stage by stage on a short and a long log, against pandas' plain read."""
    s = run.sizes
    # Noise: each round times every stage of both logs back to back, and the ratio is
    # taken within a round (the same load on both) before the median over rounds.
    rounds = s.repeats
    short = run.log("short", s.short_minutes, seed=11)
    long = run.log("long", s.log_minutes, seed=12)
    size_mb = long.stat().st_size / 1e6
    run.out(f"\n== 1. end to end: {s.log_minutes:g}-minute 50 Hz log ({size_mb:.1f} MB, "
            f"{int(s.log_minutes * 3000)} rows x {len(LOG_COLUMNS)} columns) and a "
            f"{s.short_minutes:g}-minute one; median of {rounds} rounds")
    runs: list[list[dict[str, float]]] = []
    a, b = _stages(run, [short, long], rounds, runs)
    run.out(f"  {'stage (wall time)':28s} {s.short_minutes:>9g} min {s.log_minutes:>9g} min")
    for stage in a:
        if not stage.startswith("cpu "):
            run.out(f"  {stage:28s} {_ms(a[stage])} {_ms(b[stage])}")
    added = b["end to end"] - a["end to end"]
    yard = b["pandas read_csv"] - a["pandas read_csv"]

    def ratio_of(r: list[dict[str, float]]) -> float:
        d = r[1]["pandas read_csv"] - r[0]["pandas read_csv"]
        return (r[1]["end to end"] - r[0]["end to end"]) / d if d > 0 else math.inf

    ratios = sorted(ratio_of(r) for r in runs)
    ratio = statistics.median(ratios)
    # The same in CPU time of this process: what other processes take of the cores moves
    # it far less (a loaded machine stretches wall time, not the work done).
    cpu = sorted((r[1]["cpu end to end"] - r[0]["cpu end to end"])
                 / max(r[1]["cpu pandas read_csv"] - r[0]["cpu pandas read_csv"], 1e-9)
                 for r in runs)
    run.out(f"  cost the data adds: analyse {added * 1e3:.1f} ms, pandas read {yard * 1e3:.1f} ms"
            f" (medians); ratio within each round, median {ratio:.2f} (rounds "
            f"{ratios[0]:.2f}-{ratios[-1]:.2f}; target <= 1.50) "
            f"{run.verdict('data cost: analyse / pandas read_csv <= 1.5', ratio <= 1.5)}")
    run.out(f"  the same in CPU time of this process: median {statistics.median(cpu):.2f} "
            f"(rounds {cpu[0]:.2f}-{cpu[-1]:.2f})")
    result = run.end_to_end([long])
    n_points = int(result.points["included"].sum())
    run.out(f"  {n_points} points found in the {s.log_minutes:g}-minute log "
            f"(the programme holds {_holds(s.log_minutes)})")


def _holds(minutes: float) -> int:
    """Holds of the programme that end within ``minutes``."""
    t, n, k = 0.0, 0, 0
    while True:
        kind, seconds = _CYCLE[k % len(_CYCLE)][:2]
        t += seconds
        if t > 60.0 * minutes:
            return n
        n += kind == "hold"
        k += 1


def bench_season(run: _Run) -> None:
    """1b. A season of flights, each a long log at its own CG, analysed together."""
    s = run.sizes
    cgs = np.linspace(66.5, 73.5, s.season_flights)
    paths = [run.log(f"season{k + 1:02d}", s.log_minutes, cg_in=float(cg), seed=100 + k)
             for k, cg in enumerate(cgs)]
    size_mb = sum(p.stat().st_size for p in paths) / 1e6
    run.out(f"\n== 1b. season: {s.season_flights} flights of {s.log_minutes:g} min "
            f"({size_mb:.0f} MB), CG {cgs[0]:.1f}-{cgs[-1]:.1f} in; median of {s.season_repeats}")
    yard, _ = median_time(lambda: [pd.read_csv(p) for p in paths], s.season_repeats)
    whole, result = median_time(lambda: run.end_to_end(paths), s.season_repeats)
    fixed = result.primary.stability.stick_fixed.neutral_point
    run.out(f"  pandas read_csv of every file {_ms(yard)}")
    run.out(f"  trimlog end to end            {_ms(whole)}   ratio {whole / yard:.2f}")
    where = f"{fixed.pct_mac:.2f} %MAC" if fixed.identifiable else "not identifiable"
    run.out(f"  stick-fixed neutral point {where} (truth "
            f"{100 * DEMO_TRUTH.neutral_point_fixed:.1f}) from "
            f"{int(result.points['included'].sum())} points")


def _trimlog_command() -> list[str]:
    """The installed ``trimlog`` script beside this interpreter, else ``python -m trimlog.cli``."""
    import sys

    script = Path(sys.executable).with_name("trimlog")
    return [str(script)] if script.is_file() else [sys.executable, "-m", "trimlog.cli"]


def _installed_env() -> dict[str, str]:
    """The environment of the timed processes: Python's bytecode cache on, as a user has it.

    An installed trimlog, like pandas beside it, runs from compiled bytecode
    (pip compiles a package when it installs it, and Python keeps what it
    compiles on a first run).  A shell with ``PYTHONDONTWRITEBYTECODE`` set
    (some containers and CI images) would instead make every trimlog process
    compile its ~0.4 s of source again while the libraries' bytecode from
    their install is used: an unfair yardstick.  The timed processes run
    without it, after trimlog's bytecode is compiled as pip would
    (:attr:`_Run.process_env`).
    """
    import os

    return {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}


def _process_time(command: list[str], repeat: int, env: dict[str, str]) -> float:
    import subprocess

    def once() -> None:
        subprocess.run(command, check=False, capture_output=True, env=env)

    return median_time(once, repeat)[0]


def _import_tree(stderr: str) -> list[tuple[int, str, int, int]]:
    """``-X importtime`` lines as (depth, module, self [us], cumulative [us]), in print order."""
    rows = []
    for line in stderr.splitlines():
        if not line.startswith("import time:") or "[us]" in line:
            continue
        self_us, cumulative_us, name = line[len("import time:"):].split("|", 2)
        stripped = name.lstrip(" ")
        rows.append(((len(name) - len(stripped) - 1) // 2, stripped.strip(),
                     int(self_us), int(cumulative_us)))
    return rows


def _importtime(code: str, env: dict[str, str]) -> list[tuple[int, str, int, int]]:
    import subprocess
    import sys

    done = subprocess.run([sys.executable, "-X", "importtime", "-c", code], check=False,
                          capture_output=True, text=True, env=env)
    return _import_tree(done.stderr)


def _extra_imports(path_rows: list[tuple[int, str, int, int]],
                   bare_rows: list[tuple[int, str, int, int]]) -> list[tuple[str, str, int]]:
    """Packages the analyse path imports beyond the bare yardstick: (package, imported by, [us]).

    ``-X importtime`` prints a module after everything it imported, so the
    importer of a line is the next line one level shallower.
    """
    bare = {name.split(".")[0] for _, name, _, _ in bare_rows}
    roots: dict[str, list[int]] = {}
    for i, (_, name, _, _) in enumerate(path_rows):
        root = name.split(".")[0]
        if root not in bare and root != "trimlog":
            roots.setdefault(root, []).append(i)
    out = []
    for root, lines in roots.items():
        total = sum(path_rows[i][2] for i in lines)
        first = min(lines, key=lambda i: path_rows[i][0])
        depth = path_rows[first][0]
        parent = next((path_rows[j][1] for j in range(first + 1, len(path_rows))
                       if path_rows[j][0] < depth), "(top level)")
        out.append((f"{root} ({path_rows[first][1]})", parent, total))
    return sorted(out, key=lambda r: -r[2])


def bench_startup(run: _Run) -> None:
    """2. Start-up of ``trimlog analyze --json`` on a tiny log, against bare imports."""
    import sys

    s = run.sizes
    tiny = run.log("tiny", 2.0, rate_hz=10.0, seed=21)
    out_json = run.folder / "tiny.json"
    args = ["analyze", "--json", str(out_json), "--quiet", str(tiny),
            "--aircraft", str(run.profile_path)]
    bare = [sys.executable, "-c", "import pandas, statsmodels.api"]
    command = _trimlog_command() + args
    env = run.process_env
    for warm_up in (bare, command):  # not timed: the first runs fill the file cache
        _process_time(warm_up, 1, env)
    # Alternate the two so that a change of machine load hits both alike.
    t_bare, t_cli = [], []
    for _ in range(s.process_repeats):
        t_bare.append(_process_time(bare, 1, env))
        t_cli.append(_process_time(command, 1, env))
    bare_s, cli_s = statistics.median(t_bare), statistics.median(t_cli)
    ratio = cli_s / bare_s
    run.out(f"\n== 2. start-up: whole process, median of {s.process_repeats}")
    run.out(f"  python -c 'import pandas, statsmodels.api' {_ms(bare_s)}")
    run.out(f"  trimlog analyze --json (tiny log)         {_ms(cli_s)}   ratio {ratio:.2f} "
            f"(target <= 0.60) "
            f"{run.verdict('start-up: analyze / bare pandas+statsmodels <= 0.6', ratio <= 0.6)}")
    code = ("import sys; from trimlog.cli import main; "
            f"sys.exit(main({args!r}))")
    path_rows = _importtime(code, env)
    bare_rows = _importtime("import pandas, statsmodels.api", env)
    by_package: dict[str, int] = {}
    for _, name, self_us, _ in path_rows:
        by_package[name.split(".")[0]] = by_package.get(name.split(".")[0], 0) + self_us
    total_us = sum(by_package.values())
    run.out(f"  imports of the analyse path: {total_us / 1e3:.0f} ms (-X importtime, own time "
            "summed by package); the heaviest:")
    for package, self_us in sorted(by_package.items(), key=lambda kv: -kv[1])[:8]:
        run.out(f"    {package:40s} {self_us / 1e3:8.1f} ms  {100 * self_us / total_us:4.1f} %")
    extra = [e for e in _extra_imports(path_rows, bare_rows) if e[2] >= 2000]
    run.out("  imported beyond 'pandas, statsmodels.api' (>= 2 ms own time; package, first "
            "module <- imported by):")
    for package, parent, total in extra:
        run.out(f"    {package:40s} <- {parent:32s} {total / 1e3:7.1f} ms")
    for banned in ("matplotlib", "streamlit"):
        if any(name.split(".")[0] == banned for _, name, _, _ in path_rows):
            run.out(f"  {banned} is imported by the analyse path (it should not be)")


def bench_report(run: _Run) -> None:
    """2b. ``trimlog report`` of the demo against ``trimlog analyze`` of the same files."""
    import subprocess

    s = run.sizes
    demo = run.folder / "demo"
    if not demo.is_dir():
        subprocess.run(_trimlog_command() + ["demo", str(demo)], check=True,
                       capture_output=True)
    logs = [str(p) for p in sorted(demo.glob("flight*.csv"))]
    profile = str(min(p for p in demo.glob("*.toml") if not p.name.endswith(".loading.toml")))
    analyze = _trimlog_command() + ["analyze", *logs, "--aircraft", profile, "--quiet",
                                    "--json", str(run.folder / "demo.json")]
    report = _trimlog_command() + ["report", *logs, "--aircraft", profile,
                                   "-o", str(run.folder / "demo.pdf")]
    env = run.process_env
    for warm_up in (analyze, report):  # not timed: the first runs fill the file cache
        _process_time(warm_up, 1, env)
    t_analyze, t_report = [], []
    for _ in range(s.process_repeats):  # interleaved: a change of load reaches both
        t_analyze.append(_process_time(analyze, 1, env))
        t_report.append(_process_time(report, 1, env))
    ratios = sorted(r / a for r, a in zip(t_report, t_analyze, strict=True))
    ratio = statistics.median(ratios)
    run.out(f"\n== 2b. report: whole processes on the demo ({len(logs)} files), "
            f"median of {s.process_repeats}, interleaved")
    run.out(f"  trimlog analyze --json {_ms(statistics.median(t_analyze))}")
    run.out(f"  trimlog report (PDF)   {_ms(statistics.median(t_report))}   ratio within each "
            f"pair, median {ratio:.2f} ({ratios[0]:.2f}-{ratios[-1]:.2f}; target <= 2.50) "
            f"{run.verdict('report / analyze of the demo <= 2.5', ratio <= 2.5)}")


def bench_browser(run: _Run) -> None:
    """5b. The first Results page in a real browser (chromium), after the server answers."""
    import socket
    import subprocess
    import sys
    import urllib.request

    chromium = Path("/usr/bin/chromium")
    run.out("\n== 5b. dashboard in chromium (playwright): first Results page")
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        run.out("  skipped: playwright is not installed")
        return
    if not chromium.is_file():
        run.out(f"  skipped: needs {chromium} (tests/install_system_packages.sh)")
        return
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        port = sock.getsockname()[1]
    env = {**run.process_env, "TRIMLOG_DB": str(run.folder / "browser.sqlite")}
    # the server as `trimlog dashboard` starts it (trimlog.dashboard.serve), which loads the
    # analysis stack before it answers; `streamlit run app.py` leaves that to the first page
    server = subprocess.Popen(
        [sys.executable, "-m", "trimlog.dashboard.serve", "--server.headless", "true",
         "--server.address", "127.0.0.1", "--server.port", str(port),
         "--browser.gatherUsageStats", "false", "--server.fileWatcherType", "none"],
        env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    url = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline:
            try:
                with urllib.request.urlopen(f"{url}/_stcore/health", timeout=2) as r:
                    if r.status == 200:
                        break
            except OSError:
                time.sleep(0.2)
        with sync_playwright() as p:
            browser = p.chromium.launch(executable_path=str(chromium), headless=True,
                                        args=["--no-sandbox", "--disable-gpu"])
            page = browser.new_page(viewport={"width": 1366, "height": 768})
            times = []
            for _ in range(3):  # the first is the one a user meets; then reloads
                start = time.perf_counter()
                page.goto(url)
                page.wait_for_selector('[data-testid="stMetric"]', timeout=120_000)
                times.append(time.perf_counter() - start)
            browser.close()
    finally:
        server.terminate()
        server.wait(timeout=30)
    first = times[0]
    run.out(f"  server answering -> first Results metric {_ms(first)} (reloads "
            f"{', '.join(f'{1e3 * t:.0f}' for t in times[1:])} ms); target <= 3 s "
            f"{run.verdict('first Results page in a browser <= 3 s', first <= 3.0)}")


def bench_growth(run: _Run) -> None:
    """3. How the end-to-end time grows with the length of the log."""
    s = run.sizes
    paths = [run.log(f"growth{minutes:g}", minutes, seed=31) for minutes in s.growth_minutes]
    # Round robin over the sizes, so that a change of load reaches all of them alike.
    rounds = [[median_time(lambda p=path: run.end_to_end([p]), 1)[0] for path in paths]
              for _ in range(max(s.repeats, 1))]
    times = [statistics.median(r[k] for r in rounds) for k in range(len(paths))]
    slope = float(np.polyfit(np.log(s.growth_minutes), np.log(times), 1)[0])
    tail = math.log(times[-1] / times[-2]) / math.log(s.growth_minutes[-1] / s.growth_minutes[-2])
    run.out(f"\n== 3. growth: end to end against log length, median of {s.repeats}")
    for minutes, seconds in zip(s.growth_minutes, times, strict=True):
        run.out(f"  {minutes:5g} min {_ms(seconds)}")
    ok = max(slope, tail) <= 1.1
    run.out(f"  fitted exponent (log-log, all sizes) {slope:.2f}; between the two longest "
            f"{tail:.2f} (target <= 1.1 both) "
            f"{run.verdict('linear growth: exponent <= 1.1', ok)}")


def bench_history(run: _Run) -> None:
    """4. The history: many flights of ten points; listing, trend and plan as the CLI does."""
    from trimlog.history import service as history
    from trimlog.history.store import open_store
    from trimlog.views import terminal as summary

    s = run.sizes
    db = run.folder / "history.sqlite"
    start = time.perf_counter()
    with open_store(db) as store:
        for k in range(s.history_flights):
            cg = 66.0 + 7.5 * k / max(s.history_flights - 1, 1)
            history.import_flight(store, point_table(k + 1, cg), f"hist{k + 1:03d}.csv",
                                  PROFILE_TOML, profile_source=run.profile_path.name)
    imported = time.perf_counter() - start

    def listing() -> str:
        with open_store(db) as store:
            return summary.render_flights(history.flight_listing(store))

    def trend() -> dict:
        with open_store(db) as store:
            return history.trend(store).to_dict()

    def plan() -> dict:
        with open_store(db) as store:
            return history.trend(store, min_margin_pct_mac=5.0,
                                 max_step_pct_mac=2.0).to_dict()["next_step"]

    run.out(f"\n== 4. history: {s.history_flights} flights x 10 points "
            f"(imported in {imported:.1f} s, {1e3 * imported / s.history_flights:.0f} ms each); "
            f"median of {min(s.repeats, 3)}, store opened each time as the CLI does")
    for name, function, target in (("flights (listing)", listing, 1.0), ("trend", trend, 0.5),
                                   ("plan", plan, 0.5)):
        seconds, result = median_time(function, min(s.repeats, 3))
        run.out(f"  {name:20s} {_ms(seconds)}  (target < {target:g} s) "
                f"{run.verdict(f'history {name} < {target:g} s', seconds < target)}")
    step = result
    if step.get("max_cg_pct_mac") is None:  # synthetic points: the plan may refuse a number
        run.out(f"  next step: cannot say yet ({step.get('reason')})")
    else:
        run.out(f"  next step: at most {step['max_cg_pct_mac']:.2f} %MAC "
                f"(minimum margin {step.get('min_static_margin_pct_mac')} %MAC)")


def bench_dashboard(run: _Run) -> None:
    """5. The dashboard through Streamlit's app test harness: upload, page changes, ticking."""
    app = Path(__file__).resolve().parent.parent / "app.py"
    run.out("\n== 5. dashboard (streamlit.testing.v1.AppTest, app.py)")
    if not app.is_file():
        run.out(f"  skipped: {app} is not there (trimlog not installed from its source folder)")
        return
    import logging

    import streamlit as st
    from streamlit.testing.v1 import AppTest

    # Importing the cached functions and clearing the caches between uploads, outside a
    # script run, log "missing ScriptRunContext" and "No runtime found" (harmless,
    # Streamlit says): not part of the figures.
    # Streamlit sets its loggers' levels again when a script runs: a filter stays.
    for name in ("streamlit.runtime.scriptrunner_utils.script_run_context",
                 "streamlit.runtime.caching", "streamlit.runtime.caching.cache_data_api",
                 "streamlit.runtime.caching.cache_resource_api"):
        logging.getLogger(name).addFilter(lambda record: record.levelno >= logging.ERROR)
    from trimlog.dashboard import compute  # after the loggers are quieted
    from trimlog.dashboard.session import FileBytes

    log = run.log("long", run.sizes.log_minutes, seed=12)
    sheet = log.with_name("long.loading.toml")
    # Bytes in, from a file name: they go where the Flights page's uploader puts them
    # (session.add_uploads); the browser test drives the real uploader.
    name = f"dash_{log.name}"
    sheet_name = f"dash_{sheet.name}"
    at = AppTest.from_file(str(app), default_timeout=600)
    problems: list[str] = []

    def timed(action: Callable[[], Any]) -> float:
        start = time.perf_counter()
        action()
        seconds = time.perf_counter() - start
        problems.extend(str(e.value)[:120] for e in [*at.exception, *at.error])
        return seconds

    def page(name: str) -> Callable[[], Any]:
        return lambda: at.radio(key="page").set_value(name).run()

    cold = timed(at.run)
    run.out(f"  first page, demo flights (cold start, imports)  {_ms(cold)}")

    def upload() -> None:
        st.cache_resource.clear()
        st.cache_data.clear()
        compute._analysed.clear()
        at.session_state["user_logs"] = {name: FileBytes.of(name, log.read_bytes())}
        at.session_state["user_sheets"] = {sheet_name: FileBytes.of(sheet_name,
                                                                    sheet.read_bytes())}
        at.session_state["use_demo"] = False
        at.session_state["exclusions"] = set()
        at.session_state["page"] = "Results"
        at.run()

    n_up = max(run.sizes.repeats // 2, 1)
    up = statistics.median(timed(upload) for _ in range(n_up))
    metrics = [m.label for m in at.metric][:3]
    # Every page once (first draws), then page changes on cached data, round robin.
    for name_ in ("Points", "Flights", "Aircraft", "History", "Results"):
        timed(page(name_))
    order = ["Points", "Results", "Flights", "Results", "Aircraft"] * 2
    changes = [timed(page(p)) for p in order]
    change = statistics.median(changes)
    # Ticking a point on the Points page: a new analysis (fits) and the log redrawn.
    timed(page("Points"))
    ticks = []
    for k in range(1, 11):
        def tick(k: int = k) -> None:
            at.session_state["exclusions"] = {(Path(name).stem, k)}
            at.run()
        ticks.append(timed(tick))
    tick_s = statistics.median(ticks)
    run.out(f"  results shown: {', '.join(metrics) if metrics else 'no metric found'}"
            + (f"; shown: {problems[0]}" if problems else ""))
    run.out(f"  upload {run.sizes.log_minutes:g}-min log -> results (median of {n_up}) "
            f"{_ms(up)}   target <= 2 s "
            f"{run.verdict('dashboard upload of a long log to results <= 2 s', up <= 2.0)}")
    run.out(f"  page change on cached data (median of {len(changes)}) {_ms(change)}   "
            f"target <= 0.3 s {run.verdict('dashboard page change <= 0.3 s', change <= 0.3)}")
    ok = tick_s <= 0.3
    run.out(f"  tick a point, re-render (median of {len(ticks)})   {_ms(tick_s)}   "
            f"target <= 0.3 s {run.verdict('dashboard re-render after a tick <= 0.3 s', ok)}")


def _peak_rss(code: str) -> tuple[float, float]:
    """Run ``code`` in a fresh interpreter; its printed (baseline, peak) resident memory [MB]."""
    import subprocess
    import sys

    done = subprocess.run([sys.executable, "-c", code], check=True, capture_output=True,
                          text=True)
    scale = 1e-6 if sys.platform == "darwin" else 1e-3  # ru_maxrss: bytes on macOS, else kB
    base, peak = (float(v) * scale for v in done.stdout.split()[-2:])
    return base, peak


def bench_memory(run: _Run) -> None:
    """6. Peak resident memory of the analysis of the long log, in a fresh process."""
    log = run.log("long", run.sizes.log_minutes, seed=12)
    size_mb = log.stat().st_size / 1e6
    # ru_maxrss survives exec on Linux, so a child started from this (large) process would
    # report our peak; the kernel's high-water mark of the new address space does not.
    rss = ("next((int(l.split()[1]) for l in open('/proc/self/status') if l.startswith('VmHWM'))"
           ", 0) or resource.getrusage(resource.RUSAGE_SELF).ru_maxrss")
    base, peak = _peak_rss(
        f"import resource\nfrom trimlog.pipeline import chain as analysis\n"
        "from trimlog.views.json_export import analysis_to_dict\n"
        f"b = {rss}\n"
        f"p = analysis.load_profile({str(run.profile_path)!r})\n"
        f"analysis_to_dict(analysis.analyze(analysis.load_flight_file({str(log)!r}, p), p))\n"
        f"print(b, {rss})\n")
    pbase, ppeak = _peak_rss(
        f"import resource\nimport pandas, statsmodels.api\nb = {rss}\n"
        f"pandas.read_csv({str(log)!r})\nprint(b, {rss})\n")
    added, yard = peak - base, ppeak - pbase
    run.out(f"\n== 6. memory: {size_mb:.1f} MB log, fresh process, peak resident (VmHWM)")
    run.out(f"  trimlog analysis: baseline after imports {base:6.0f} MB, peak {peak:6.0f} MB, "
            f"added {added:6.0f} MB = {added / size_mb:.1f}x the file")
    run.out(f"  pandas read_csv:  baseline after imports {pbase:6.0f} MB, peak {ppeak:6.0f} MB, "
            f"added {yard:6.0f} MB = {yard / size_mb:.1f}x the file")
    run.out(f"  bound: what the analysis adds <= 2 x what pandas' plain read adds "
            f"({2.0 * yard:.0f} MB) {run.verdict('memory bound', added <= 2.0 * yard)}")


SECTIONS: dict[str, Callable[[_Run], None]] = {
    "chain": bench_chain,
    "season": bench_season,
    "startup": bench_startup,
    "report": bench_report,
    "growth": bench_growth,
    "history": bench_history,
    "dashboard": bench_dashboard,
    "browser": bench_browser,
    "memory": bench_memory,
}


def run(
    quick: bool = False,
    *,
    sizes: Sizes | None = None,
    sections: tuple[str, ...] | None = None,
    out: Callable[[str], None] = print,
) -> int:
    """Run the benchmark and print its figures; return the exit status (0).

    Parameters
    ----------
    quick : bool
        Smaller sizes (:data:`QUICK`, under a minute) instead of :data:`FULL`.
    sizes : Sizes, optional
        Explicit sizes (overrides ``quick``).
    sections : tuple of str, optional
        Names of :data:`SECTIONS` to run (default all, in order).
    out : callable
        Where each printed line goes.

    Returns
    -------
    int
        0: the figures were measured (a missed target is a finding, printed
        as MISS, not a failure of the command).
    """
    import datetime
    import os
    import platform
    import tempfile

    sizes = sizes or (QUICK if quick else FULL)
    names = sections or tuple(SECTIONS)
    unknown = [n for n in names if n not in SECTIONS]
    if unknown:
        raise TrimlogError(f"unknown benchmark sections {unknown}; known: {list(SECTIONS)}")
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    out(f"trimlog bench ({'quick' if sizes == QUICK else 'full' if sizes == FULL else 'custom'})"
        f" {datetime.datetime.now():%Y-%m-%d %H:%M}: Python {platform.python_version()}, "
        f"pandas {pd.__version__}, {os.cpu_count()} CPUs, load average {load:.1f} at start")
    out("synthetic logs of the invented demo aircraft (trimlog.bench.synthetic_log), "
        "profile sample_logs/tinkerfinch_tf2.toml")
    started = time.perf_counter()
    with tempfile.TemporaryDirectory(prefix="trimlog-bench-") as tmp:
        this = _Run(sizes, Path(tmp), out)
        for name in names:
            SECTIONS[name](this)
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    out(f"\n== summary ({time.perf_counter() - started:.0f} s, load average {load:.1f} at end)")
    for what, ok in this.verdicts:
        out(f"  {_verdict(ok)}  {what}")
    return 0
