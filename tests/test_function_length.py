"""No function in trimlog/ is over 80 lines without a reason written beside it.

A function's length is counted from its ``def`` line to its last line, less
its docstring (numpydoc docstrings with Examples are wanted, and are not what
makes a function hard to read).  A longer function needs a comment
``# long: <why>`` on its ``def`` line or on the line above it (above its
decorators, if any), so a reader knows it was left long on purpose.
"""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parent.parent / "trimlog"
MAX_LINES = 80  # the contributor guide's limit (common practice, no source)
REASON = "# long:"


def _code_lines(node: ast.FunctionDef | ast.AsyncFunctionDef) -> int:
    length = node.end_lineno - node.lineno + 1
    first = node.body[0]
    if (isinstance(first, ast.Expr) and isinstance(first.value, ast.Constant)
            and isinstance(first.value.value, str)):
        length -= first.end_lineno - first.lineno + 1
    return length


def _has_reason(node: ast.FunctionDef | ast.AsyncFunctionDef, lines: list[str]) -> bool:
    top = min([node.lineno, *(d.lineno for d in node.decorator_list)])
    candidates = [lines[node.lineno - 1]]
    if top >= 2:
        candidates.append(lines[top - 2])
    return any(REASON in line and line.split(REASON, 1)[1].strip() for line in candidates)


def long_functions(root: Path = PACKAGE) -> list[tuple[str, int, int, bool]]:
    """Every function over :data:`MAX_LINES`: (file:line name, line, length, has a reason)."""
    out = []
    for path in sorted(root.rglob("*.py")):
        text = path.read_text(encoding="utf-8")
        lines = text.splitlines()
        for node in ast.walk(ast.parse(text, str(path))):
            if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef):
                n = _code_lines(node)
                if n > MAX_LINES:
                    where = f"{path.relative_to(root.parent)}:{node.lineno} {node.name}"
                    out.append((where, node.lineno, n, _has_reason(node, lines)))
    return out


def test_no_long_function_without_a_reason():
    missing = [f"{where} ({n} lines)" for where, _, n, ok in long_functions() if not ok]
    assert not missing, ("over 80 lines without a '# long: <why>' comment on or above the "
                         "def line (split it, or say why not): " + "; ".join(missing))


def test_the_check_finds_a_long_function_and_reads_its_reason(tmp_path):
    body = "\n".join(f"    x{i} = {i}" for i in range(MAX_LINES))
    pkg = tmp_path / "pkg"
    pkg.mkdir()
    (pkg / "m.py").write_text(
        f'def short():\n    """Doc."""\n    return 1\n\n\ndef bare():\n{body}\n\n\n'
        f"# long: a table, on purpose\n@staticmethod\ndef told():\n{body}\n\n\n"
        f'def docs_only():\n    """' + "\n" * 100 + '    """\n    return 1\n',
        encoding="utf-8")
    found = {where.rsplit(" ", 1)[1]: ok for where, _, _, ok in long_functions(pkg)}
    assert found == {"bare": False, "told": True}  # the docstring is not counted
