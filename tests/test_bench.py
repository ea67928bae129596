"""Smoke tests of the benchmark: tiny sizes run and print their figures.

No timing is asserted here (speed is measured by ``trimlog bench``, not by
tests); these check that every section runs on tiny synthetic inputs and
prints the lines the contributor guide copies, and that the synthetic log
generator writes what it says.  All logs here are synthetic.
"""

from __future__ import annotations

import re
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trimlog.demo.model import DEMO_TRUTH
from trimlog.errors import TrimlogError
from trimlog.pipeline import chain as analysis

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "benchmarks"))
import bench  # noqa: E402  (the harness lives outside the package)

TINY = bench.Sizes(log_minutes=2.0, short_minutes=1.0, season_flights=2,
                   growth_minutes=(1.0, 2.0), history_flights=3, repeats=1,
                   season_repeats=1, process_repeats=1)


def _run(sections: tuple[str, ...]) -> str:
    lines: list[str] = []
    assert bench.run(sizes=TINY, sections=sections, out=lines.append) == 0
    return "\n".join(lines)


def test_synthetic_log_columns_rate_and_dropouts() -> None:
    log = bench.synthetic_log(3.0, seed=5)
    assert list(log.columns) == list(bench.LOG_COLUMNS)
    assert len(log) == 3 * 60 * 50
    assert np.allclose(np.diff(log["time_s"]), 0.02)
    # Dropouts are empty cells in the measured channels, never in time.
    assert log["time_s"].notna().all()
    assert log.drop(columns="time_s").isna().any(axis=None)


def test_synthetic_log_is_reproducible() -> None:
    a = bench.synthetic_log(1.0, seed=3)
    pd.testing.assert_frame_equal(a, bench.synthetic_log(1.0, seed=3))
    assert not a.equals(bench.synthetic_log(1.0, seed=4))


def test_ar1_noise_has_the_stated_spread_and_correlation() -> None:
    rng = np.random.default_rng(0)
    x = bench._ar1(rng, 200_000, 2.0, 1.5, 0.02)
    assert x.std() == pytest.approx(2.0, rel=0.05)
    # First-order autoregression: correlation exp(-lag / tc) at lag 1.5 s (75 samples).
    lag = np.corrcoef(x[:-75], x[75:])[0, 1]
    assert lag == pytest.approx(np.exp(-1.0), abs=0.05)


def test_written_flight_goes_through_the_chain_to_the_truth(tmp_path) -> None:
    # Two synthetic flights at CGs 7 in apart: the pooled neutral point is the truth's.
    paths = [bench.write_flight(tmp_path, f"f{k}", 8.0, loading=bench.Loading(cg_in=cg),
                                seed=k) for k, cg in enumerate((66.5, 73.5))]
    profile = analysis.load_profile("sample_logs/tinkerfinch_tf2.toml")
    flights = [f for p in paths for f in analysis.load_flight_file(p, profile)]
    assert all(f.loading is not None for f in flights)
    result = analysis.analyze(flights, profile)
    fixed = result.primary.stability.stick_fixed.neutral_point
    assert fixed.identifiable
    assert fixed.pct_mac == pytest.approx(100 * DEMO_TRUTH.neutral_point_fixed, abs=1.5)
    # Every hold that ends in the log is a point; no turn is one.
    holds = bench._holds(8.0)
    assert holds - 1 <= int(result.points["included"].sum()) / 2 <= holds + 1


def test_point_table_reads_as_ten_points(tmp_path) -> None:
    path = tmp_path / "p.csv"
    path.write_bytes(bench.point_table(1, 70.0))
    profile = analysis.load_profile("sample_logs/tinkerfinch_tf2.toml")
    (flight,) = analysis.load_flight_file(path, profile)
    assert flight.log.kind == "point_table"
    assert len(flight.points) == 10


def test_chain_season_growth_print_their_figures() -> None:
    text = _run(("chain", "season", "growth"))
    assert "== 1. end to end" in text
    for stage in ("pandas read_csv", "read + validate", "detect points", "reduce",
                  "fit (stability)", "end to end"):
        assert re.search(rf"{re.escape(stage)}\s+-?[\d.]+ ms\s+-?[\d.]+ ms", text), stage
    assert re.search(r"median (-?[\d.]+|inf) \(rounds .*; target <= 1.50\) (PASS|MISS)", text)
    assert "== 1b. season: 2 flights" in text
    assert re.search(r"fitted exponent \(log-log, all sizes\) -?[\d.]+", text)
    assert "== summary" in text


def test_startup_history_memory_print_their_figures() -> None:
    text = _run(("startup", "history", "memory"))
    assert re.search(r"trimlog analyze --json \(tiny log\)\s+[\d.]+ ms\s+ratio [\d.]+", text)
    assert "imports of the analyse path" in text
    assert "pint" in text  # the unit registry: imported by the analyse path, not by pandas
    for name in ("flights (listing)", "trend", "plan"):
        assert re.search(rf"{re.escape(name)}\s+[\d.]+ ms", text), name
    assert re.search(r"added\s+-?\d+ MB = [\d.]+x the file", text)


def test_dashboard_section_runs_the_app() -> None:
    pytest.importorskip("streamlit.testing.v1")
    text = _run(("dashboard",))
    assert "== 5. dashboard" in text
    if "skipped" not in text:
        assert re.search(r"upload [\d.]+-min log -> results \(median of 1\)\s+[\d.]+ ms", text)
        assert re.search(r"page change on cached data \(median of 10\)\s+[\d.]+ ms", text)
        assert re.search(r"tick a point, re-render \(median of 10\)\s+[\d.]+ ms", text)
        assert "Traceback" not in text


@pytest.mark.slow
def test_report_section_compares_report_with_analyze() -> None:
    text = _run(("report",))
    assert re.search(r"trimlog report \(PDF\)\s+[\d.]+ ms\s+ratio within each pair, median "
                     r"[\d.]+ \([\d.]+-[\d.]+; target <= 2.50\) (PASS|MISS)", text)


def test_unknown_section_is_refused() -> None:
    with pytest.raises(TrimlogError, match="unknown benchmark sections"):
        bench.run(sizes=TINY, sections=("nope",), out=lambda line: None)
