"""Benchmark: read + validate + segment a one-hour 50 Hz log, against pandas' own read.

Not a test (no timed assertions anywhere): run it and read the numbers::

    .venv/bin/python benchmarks/bench_read.py [--minutes 60] [--repeat 7]

A quick loop for whoever works on the reader or the point detection: it
writes one synthetic log with :func:`trimlog.bench.write_flight` (the one
generator of big logs; ``trimlog bench`` measures the whole program) and
times, in the same run, ``pandas.read_csv`` of that file, trimlog's
``read_log``, ``points_from_log`` on its result, and the two together.  The
machine may be shared, so the four are interleaved (one of each per round)
and the median of the rounds is printed: a burst of load then hits all four
alike instead of one of them.
"""

from __future__ import annotations

import argparse
import statistics
import tempfile
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pandas as pd
from trimlog.bench import LOG_COLUMNS, write_flight

from trimlog.demo.model import DEMO_PROFILE
from trimlog.input.logs import read_log
from trimlog.pipeline.points import points_from_log


def interleaved(tasks: dict[str, Callable[[], Any]], repeat: int) -> dict[str, float]:
    """Median wall time of each task [s] over ``repeat`` rounds of one call of each."""
    times: dict[str, list[float]] = {name: [] for name in tasks}
    for _ in range(max(repeat, 1)):
        for name, task in tasks.items():
            start = time.perf_counter()
            task()
            times[name].append(time.perf_counter() - start)
    return {name: statistics.median(t) for name, t in times.items()}


def main() -> None:
    """Run the benchmark and print the timings and their ratios."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--minutes", type=float, default=60.0, help="length of the log")
    parser.add_argument("--repeat", type=int, default=7, help="interleaved rounds")
    args = parser.parse_args()
    p = DEMO_PROFILE
    with tempfile.TemporaryDirectory() as tmp:
        path = write_flight(Path(tmp), "hour_50hz", args.minutes)
        raw = path.read_bytes()

        def read():
            return read_log(raw, name=path.name, column_map=p.column_map,
                            inverted=p.inverted_columns)

        frame, log = pd.read_csv(path), read()
        points = points_from_log(log)  # also warms every cache before the rounds
        median = interleaved({
            "pandas": lambda: pd.read_csv(path),
            "read": read,
            "points": lambda: points_from_log(log),
            "both": lambda: points_from_log(read()),
        }, args.repeat)
    print(f"log: {frame.shape[0]} rows x {len(LOG_COLUMNS)} columns, {len(raw) / 1e6:.1f} MB; "
          f"kind {log.kind!r}; {len(points)} points found")
    print(f"pandas.read_csv                   {median['pandas'] * 1e3:8.1f} ms  "
          f"(median of {args.repeat} interleaved rounds)")
    print(f"trimlog read_log                  {median['read'] * 1e3:8.1f} ms")
    print(f"trimlog points_from_log           {median['points'] * 1e3:8.1f} ms")
    print(f"trimlog read + validate + segment {median['both'] * 1e3:8.1f} ms")
    print(f"ratio (trimlog total / pandas read_csv) = {median['both'] / median['pandas']:.2f}")
    print(f"ratio (segmenting / reading)            = {median['points'] / median['read']:.2f}")


if __name__ == "__main__":
    main()
