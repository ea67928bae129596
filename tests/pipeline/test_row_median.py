"""The medians of the point summaries equal numpy's, bit for bit.

``points._median_of_finite_rows`` takes one partition instead of ``np.median``'s
(which also looks for NaN); the stabilized points must not move by a bit.  Synthetic
random rows (no published value is involved): odd and even lengths, ties from
rounding, magnitudes from 1e-5 to 1e5.
"""

from __future__ import annotations

import numpy as np
import pytest

from trimlog.pipeline import points


@pytest.mark.parametrize("n", [1, 2, 3, 4, 7, 250, 1251])
def test_median_of_finite_rows_is_numpys_bit_for_bit(n):
    for seed in range(100):
        rng = np.random.default_rng([seed, n])
        rows = np.round(rng.standard_normal((5, n)) * 10.0 ** rng.uniform(-5, 5), seed % 6)
        assert np.array_equal(points._median_of_finite_rows(rows), np.median(rows, axis=1))


def test_row_median_with_gaps_and_empty_rows():
    rows = np.array([[1.0, np.nan, 3.0, 2.0], [np.nan] * 4, [4.0, 1.0, 2.0, 3.0]])
    out = points._row_median(rows)
    assert out[0] == 2.0 and np.isnan(out[1]) and out[2] == 2.5
