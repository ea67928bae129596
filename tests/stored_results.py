"""Results stored as JSON and compared exactly: the equivalence tests of the speed work.

A test module keeps a case -> description mapping in a JSON file (written by the
code before a change) and checks that the code after it gives the same
descriptions.  Floats are stored bit for bit (``float.hex``); long columns as a
digest of their values.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Callable
from pathlib import Path

import numpy as np


def bits(value: object) -> object:
    """A JSON-able value that keeps a float bit for bit (None for NaN)."""
    if isinstance(value, float | np.floating):
        return None if np.isnan(value) else float(value).hex()
    if isinstance(value, np.integer | np.bool_):
        return value.item()
    return value


def digest(values: list) -> str:
    """A short digest of a list of JSON-able values (a column, stored compactly)."""
    return hashlib.sha256(json.dumps(values).encode()).hexdigest()[:32]


def load(path: Path) -> dict[str, dict]:
    """The stored descriptions."""
    return json.loads(path.read_text(encoding="utf-8"))


def assert_same(name: str, got: dict, want: dict) -> None:
    """``got``, as it would be stored, equals ``want`` (the first key that differs is named)."""
    got = json.loads(json.dumps(got))
    for key in want:
        assert got.get(key) == want[key], f"{name}: {key} differs"
    assert got == want


def write_when_asked(path: Path, describe_all: Callable[[], dict[str, dict]], script: str,
                     argv: list[str]) -> None:
    """Write the descriptions to ``path`` for ``python SCRIPT --write``; else say how."""
    if argv != ["--write"]:
        raise SystemExit(f"usage: python {script} --write")
    rows = [f"{json.dumps(k)}: {json.dumps(v, sort_keys=True)}"
            for k, v in sorted(describe_all().items())]
    path.write_text("{\n" + ",\n".join(rows) + "\n}\n", encoding="utf-8")
    print(f"wrote {path}")
