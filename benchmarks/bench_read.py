"""Benchmark: read + validate + segment a one-hour 50 Hz log, against pandas' own read.

Not a test (no timed assertions anywhere): run it and read the numbers::

    .venv/bin/python benchmarks/bench_read.py [--minutes 60] [--repeat 7]

A quick loop for whoever works on the reader or the point detection: it
writes one synthetic log with :func:`trimlog.bench.write_flight` (the one
generator of big logs; ``trimlog bench`` measures the whole program) and
times, in the same run, the median of several ``pandas.read_csv`` of that
file and of trimlog's ``read_log`` followed by ``points_from_log``.
"""

from __future__ import annotations

import argparse
import tempfile
from pathlib import Path

import pandas as pd

from trimlog.bench import LOG_COLUMNS, median_time, write_flight
from trimlog.demo import DEMO_PROFILE
from trimlog.points import points_from_log
from trimlog.readers import read_log


def main() -> None:
    """Run the benchmark and print the timings and their ratio."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--minutes", type=float, default=60.0, help="length of the log")
    parser.add_argument("--repeat", type=int, default=7)
    args = parser.parse_args()
    p = DEMO_PROFILE
    with tempfile.TemporaryDirectory() as tmp:
        path = write_flight(Path(tmp), "hour_50hz", args.minutes)
        raw = path.read_bytes()
        size_mb = len(raw) / 1e6

        def read():
            return read_log(raw, name=path.name, column_map=p.column_map,
                            inverted=p.inverted_columns)

        pandas_s, frame = median_time(lambda: pd.read_csv(path), args.repeat)
        read_s, log = median_time(read, args.repeat)
        points_s, points = median_time(lambda: points_from_log(log), args.repeat)
        both_s, _ = median_time(lambda: points_from_log(read()), args.repeat)
    print(f"log: {frame.shape[0]} rows x {len(LOG_COLUMNS)} columns, {size_mb:.1f} MB; "
          f"kind {log.kind!r}; {len(points)} points found")
    print(f"pandas.read_csv                   {pandas_s * 1e3:8.1f} ms  (median of {args.repeat})")
    print(f"trimlog read_log                  {read_s * 1e3:8.1f} ms")
    print(f"trimlog points_from_log           {points_s * 1e3:8.1f} ms")
    print(f"trimlog read + validate + segment {both_s * 1e3:8.1f} ms")
    print(f"ratio (trimlog total / pandas read_csv) = {both_s / pandas_s:.2f}")
    print(f"ratio (segmenting / reading)            = {points_s / read_s:.2f}")


if __name__ == "__main__":
    main()
