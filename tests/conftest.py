"""Shared test configuration.

Hypothesis runs without its per-example deadline: the suite shares a busy
2-core machine, and timing belongs in benchmarks/, not in assertions.
"""

import sys
from pathlib import Path

from hypothesis import settings

# The shared synthetic-data helpers (synthetic_flights, synthetic_logs) sit in tests/ beside this
# file; the test modules live in folders that mirror the package.
sys.path.insert(0, str(Path(__file__).resolve().parent))

settings.register_profile("trimlog", deadline=None, max_examples=100)
settings.load_profile("trimlog")
