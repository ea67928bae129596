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

# -- history stores on both engines ---------------------------------------------------

import pytest  # noqa: E402
from pg_server import make_location, pg_server, pg_url  # noqa: E402,F401 (fixtures)

ENGINES = ["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)]


@pytest.fixture(scope="module", params=ENGINES)
def engine(request) -> str:
    """Which store engine a test runs on: every history test runs on both."""
    return request.param


@pytest.fixture
def new_location(engine, tmp_path, request):
    """Make new empty store locations of the test's engine: a file path, or a server URL."""
    made = []

    def make():
        made.append(make_location(engine, tmp_path, request, f"history-{len(made)}"))
        return made[-1]

    yield make
    if engine == "postgresql":
        server = request.getfixturevalue("pg_server")
        for url in made:
            server.drop_location(url)


@pytest.fixture
def location(new_location):
    """An empty store location of the test's engine."""
    return new_location()
