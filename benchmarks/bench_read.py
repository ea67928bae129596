"""Benchmark: read + validate + segment a one-hour 50 Hz log, against pandas' own read.

Not a test (no timed assertions anywhere): run it and read the numbers::

    .venv/bin/python benchmarks/bench_read.py [--repeat 7]

It writes a synthetic one-hour log at 50 Hz (about 180,000 rows, 15 columns)
into a temporary folder, then times, interleaved in the same run, several
``pandas.read_csv`` of that file and trimlog's ``read_log`` followed by
``find_stabilized_points``, and prints the medians and their ratio.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from synthetic_logs import Hold, Turn, elevator_for, force_for, make_log  # noqa: E402

from trimlog.points import find_stabilized_points  # noqa: E402
from trimlog.readers import read_log  # noqa: E402


def write_hour_log(folder: Path) -> tuple[Path, int]:
    """Write the synthetic one-hour 50 Hz log; return its path and number of true holds."""
    segments: list[object] = []
    for _ in range(13):
        for speed in (100.0, 90.0, 80.0, 110.0, 120.0, 100.0):
            segments += [Hold(30.0, speed, elevator_for(speed), force_for(speed)), Turn(8.0)]
    samples, truth = make_log(segments, rate_hz=50.0)
    samples = samples[samples["time_s"] < 3600.0].drop(columns="source_line")
    n = len(samples)
    rng = np.random.default_rng(3)
    samples["vs_fpm"] = np.gradient(samples["pressure_alt_ft"], samples["time_s"]) * 60.0
    samples["fuel_gal"] = 30.0 - samples["time_s"] * (8.0 / 3600.0)
    samples["flap_deg"] = 0.0
    samples["aileron_deg"] = 0.3 * rng.standard_normal(n)
    samples["rudder_deg"] = 0.3 * rng.standard_normal(n)
    samples["rpm"] = 2400.0 + 10.0 * rng.standard_normal(n)
    samples["map_inhg"] = 22.0 + 0.1 * rng.standard_normal(n)
    samples["gps_alt_ft"] = samples["pressure_alt_ft"] + 120.0
    path = folder / "hour_50hz.csv"
    samples.to_csv(path, index=False, float_format="%.4f")
    holds = sum(1 for t0, _, _ in truth if t0 < 3600.0 - 30.0)
    return path, holds


def timed(function) -> tuple[float, object]:
    """Return the wall time of one call [s] and its result."""
    start = time.perf_counter()
    result = function()
    return time.perf_counter() - start, result


def main() -> None:
    """Run the benchmark and print the timings and their ratio."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=7)
    args = parser.parse_args()
    runs: dict[str, list[float]] = {"pandas": [], "read": [], "points": [], "total": []}
    with tempfile.TemporaryDirectory() as tmp:
        path, holds = write_hour_log(Path(tmp))
        size_mb = path.stat().st_size / 1e6
        # Interleaved, so that a busy shared machine slows both sides alike.
        for _ in range(args.repeat):
            seconds, frame = timed(lambda: pd.read_csv(path))
            runs["pandas"].append(seconds)
            seconds, log = timed(lambda: read_log(path))
            runs["read"].append(seconds)
            seconds, points = timed(lambda data=log.data: find_stabilized_points(data))
            runs["points"].append(seconds)
            seconds, _ = timed(lambda: find_stabilized_points(read_log(path).data))
            runs["total"].append(seconds)
    median = {k: statistics.median(v) for k, v in runs.items()}
    print(f"log: {frame.shape[0]} rows x {frame.shape[1]} columns, {size_mb:.1f} MB, "
          f"{holds} true holds; kind {log.kind!r}; {len(points)} points found")
    print(f"load average (1 min) at the end: {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores")
    print(f"pandas.read_csv                   {median['pandas'] * 1e3:7.1f} ms "
          f"(median of {args.repeat})")
    print(f"trimlog read_log                  {median['read'] * 1e3:7.1f} ms")
    print(f"trimlog find_stabilized_points    {median['points'] * 1e3:7.1f} ms")
    print(f"trimlog read + validate + segment {median['total'] * 1e3:7.1f} ms")
    print(f"ratio (trimlog total / pandas read_csv) = {median['total'] / median['pandas']:.2f}")
    print(f"ratio (segmenting / trimlog read)       = {median['points'] / median['read']:.2f}")


if __name__ == "__main__":
    main()
