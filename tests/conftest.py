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


# -- shared profiles and the demo programme ----------------------------------------------

SAMPLES = Path(__file__).resolve().parent.parent / "sample_logs"

#: The required keys only, every other value left to its default (an invented aircraft).
MINIMAL_PROFILE_TEXT = """\
[aircraft]
name = "minimal test aircraft"
wing_area = "120 ft^2"
mac = "50 in"
lemac = "60 in"
[tail]
stabilizer_attach_spacing = "14 in"
elevator_up_stop = "25 deg"
elevator_down_stop = "18 deg"
[limits]
cg_forward = "67 in"
cg_aft = "76 in"
max_weight = "1750 lb"
[cruise]
cas = "120 kt"
"""


@pytest.fixture(scope="session")
def samples_dir() -> Path:
    """The shipped demo folder (sample_logs/: the logs, loading sheets and profile)."""
    return SAMPLES


@pytest.fixture(scope="session")
def demo_profile_path() -> Path:
    """The demo aircraft's profile file."""
    return SAMPLES / "tinkerfinch_tf2.toml"


@pytest.fixture(scope="session")
def demo_profile(demo_profile_path):
    """The demo aircraft's profile, read once for the session (frozen)."""
    from trimlog.input.profile import load_profile

    return load_profile(demo_profile_path)


@pytest.fixture(scope="session")
def demo_logs() -> list[Path]:
    """The demo's flight logs in name order (files only: sample_logs/ holds a folder too)."""
    return sorted(p for p in SAMPLES.glob("flight*.csv") if p.is_file())


@pytest.fixture(scope="session")
def demo_flights(demo_logs, demo_profile):
    """The demo's flights read once with their loading sheets (tuple: do not change them)."""
    from trimlog.pipeline import chain

    return tuple(f for log in demo_logs for f in chain.load_flight_file(log, demo_profile))


@pytest.fixture(scope="session")
def minimal_profile_text() -> str:
    """A profile with the required keys only (see :data:`MINIMAL_PROFILE_TEXT`)."""
    return MINIMAL_PROFILE_TEXT


@pytest.fixture(scope="session")
def minimal_profile():
    """:data:`MINIMAL_PROFILE_TEXT` parsed."""
    from trimlog.input.profile import parse_profile

    return parse_profile(MINIMAL_PROFILE_TEXT, "minimal.toml")


@pytest.fixture(scope="session")
def demo_analysis(demo_flights, demo_profile):
    """The analysis of the whole demo programme, once for the session (views only read it)."""
    from trimlog.pipeline import chain

    return chain.analyze(list(demo_flights), demo_profile)
