"""The package's layers: imports run one way, downward, and there are no circles.

Reads every ``import`` of every module under ``trimlog/`` (those inside
functions and ``TYPE_CHECKING`` blocks included) with :mod:`ast`, so a lazy
import cannot hide an upward arrow.  The order is the contributor guide's.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "trimlog"

#: Layer of each subpackage; a module may import its own subpackage and any of a lower rank.
#: Equal ranks in different subpackages know nothing of each other.
RANK = {
    "": 0,  # trimlog/errors.py, trimlog/cautions.py, trimlog/__init__.py: the foundation
    "physics": 1,
    "statistics": 1,
    "input": 2,
    "demo": 3,
    "stability": 3,
    "incidence": 4,
    "pipeline": 5,
    "history": 6,
    "views": 7,
    "dashboard": 8,
    "cli": 9,
}


def module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def layer(module: str) -> str:
    parts = module.split(".")
    if len(parts) == 1:
        return ""
    if parts[1] in RANK:
        return parts[1]
    return ""  # a top-level module of the foundation (errors, cautions)


def imported(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"), str(path))
    found = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found |= {a.name for a in node.names if a.name.split(".")[0] == "trimlog"}
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            if node.module.split(".")[0] != "trimlog":
                continue
            for alias in node.names:
                candidate = f"{node.module}.{alias.name}"
                sub = PACKAGE.joinpath(*candidate.split(".")[1:])
                is_module = sub.with_suffix(".py").is_file() or (sub / "__init__.py").is_file()
                found.add(candidate if is_module else node.module)
    return found


MODULES = {module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}
GRAPH = {name: {m for m in imported(p) if m != name} for name, p in MODULES.items()}


def test_every_subpackage_has_a_rank():
    subpackages = {p.parent.name for p in PACKAGE.glob("*/__init__.py")}
    assert subpackages <= set(RANK), subpackages - set(RANK)


@pytest.mark.parametrize("module", sorted(MODULES))
def test_imports_run_downward(module):
    mine = layer(module)
    wrong = []
    for target in sorted(GRAPH[module]):
        theirs = layer(target)
        if theirs == mine or theirs == "":
            continue
        if mine == "" or RANK[theirs] >= RANK[mine]:
            wrong.append(f"{module} ({mine or 'foundation'}) imports {target} ({theirs})")
    assert not wrong, "\n".join(wrong)


def test_no_import_circles():
    known = {m for m in MODULES}

    def edges(m: str) -> set[str]:
        return {t for t in GRAPH[m] if t in known and t != "trimlog"}

    state: dict[str, int] = {}
    stack: list[str] = []
    circles = []

    def visit(m: str) -> None:
        state[m] = 1
        stack.append(m)
        for t in sorted(edges(m)):
            if state.get(t) == 1:
                circles.append(" -> ".join(stack[stack.index(t):] + [t]))
            elif t not in state:
                visit(t)
        stack.pop()
        state[m] = 2

    for m in sorted(known):
        if m not in state:
            visit(m)
    assert not circles, "\n".join(circles)


def test_the_check_sees_an_upward_import(tmp_path):
    """The reader itself: a physics module importing the views is caught."""
    bad = tmp_path / "bad.py"
    bad.write_text("def f():\n    from trimlog.views import terminal\n")
    assert "trimlog.views.terminal" in imported(bad)
    assert RANK[layer("trimlog.views.terminal")] > RANK[layer("trimlog.physics.airspeed")]
