"""The minimum-versions constraints file pins every declared dependency at its floor.

``tests/constraints-minimum.txt`` is what the run at the minimum versions installs
(DEVELOPERS.md, "A run at the minimum versions"); a floor raised in pyproject.toml
without the file (or the other way round) would make that run test something else.
"""

import re
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _floors(requirements: list[str]) -> dict[str, str]:
    out = {}
    for req in requirements:
        m = re.fullmatch(r"([A-Za-z0-9_.\-]+)(\[[^\]]*\])?>=([0-9][0-9.]*)", req.replace(" ", ""))
        assert m, f"pyproject.toml: expected NAME>=FLOOR, found {req!r}"
        out[m.group(1).lower()] = m.group(3)
    return out


def _pins() -> dict[str, str]:
    pins = {}
    for line in (ROOT / "tests" / "constraints-minimum.txt").read_text().splitlines():
        line = line.split("#")[0].strip()
        if line:
            name, version = line.split("==")
            pins[name.strip().lower()] = version.strip()
    return pins


def _same(floor: str, pin: str) -> bool:
    def parts(v: str) -> list[int]:
        return [int(x) for x in v.split(".")]
    a, b = parts(floor), parts(pin)
    n = max(len(a), len(b))
    return a + [0] * (n - len(a)) == b + [0] * (n - len(b))


def test_every_floor_is_pinned_in_the_minimum_constraints():
    project = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
    runtime = _floors(project["dependencies"])
    test = _floors(project["optional-dependencies"]["test"])
    pins = _pins()
    for name, floor in runtime.items():
        # the test extra may ask more of a run-time dependency (streamlit's AppTest); the
        # test run then pins the higher of the two
        wanted = test.get(name, floor)
        assert name in pins, f"{name} (>= {floor}) is not pinned"
        assert _same(wanted, pins[name]), f"{name}: floor {wanted}, pinned {pins[name]}"
    for name, floor in test.items():
        assert name in pins and _same(floor, pins[name]), f"{name}: floor {floor}"
    assert set(pins) == set(runtime) | set(test), "a pin without a declared dependency"
