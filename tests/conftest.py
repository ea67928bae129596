"""Shared test configuration.

Hypothesis runs without its per-example deadline: the suite shares a busy
2-core machine, and timing belongs in benchmarks/, not in assertions.
"""

from hypothesis import settings

settings.register_profile("trimlog", deadline=None, max_examples=100)
settings.load_profile("trimlog")
