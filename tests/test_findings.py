"""The findings type and its one catalogue.

The static tests read every call that creates a finding in ``trimlog/`` with
:mod:`ast`, so a code without a template, or a template naming a value the
call does not pass, fails here and not in front of a user.
"""

from __future__ import annotations

import ast
import re
from pathlib import Path

import pytest

from trimlog.findings import (
    CATALOGUE,
    Finding,
    Severity,
    Subject,
    by_severity,
    finding,
    lines,
    template_fields,
)

PACKAGE = Path(__file__).resolve().parent.parent / "trimlog"
CODE = re.compile(r"^[a-z][a-z0-9_]*(\.[a-z0-9_]+)+$")
SUBJECT_FIELDS = {"source", "flight", "point", "config", "quantity"}


def _creators(tree: ast.Module) -> set[str]:
    """Names that create a :class:`trimlog.findings.Finding` in a module.

    ``Finding`` and ``finding`` as imported from :mod:`trimlog.findings` (under
    any alias), and the module's own helpers whose first parameter is
    ``code`` when the module imports from :mod:`trimlog.findings`.  A module's
    unrelated class that happens to be called ``Finding`` is not one.
    """
    names = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module == "trimlog.findings":
            names |= {a.asname or a.name for a in node.names if a.name in ("Finding", "finding")}
    if names:
        for node in ast.walk(tree):
            if (isinstance(node, ast.FunctionDef) and node.args.args
                    and node.args.args[0].arg == "code"):
                names.add(node.name)
    return names


def _codes(node: ast.expr) -> list[str]:
    """String codes an argument can take (both branches of ``a if c else b``)."""
    if isinstance(node, ast.Constant) and isinstance(node.value, str):
        return [node.value]
    if isinstance(node, ast.IfExp):
        return _codes(node.body) + _codes(node.orelse)
    if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Add):  # "a.b" + (".c" if x else "")
        return [left + right for left in _codes(node.left) for right in _codes(node.right)]
    return []


def _calls():
    for path in sorted(PACKAGE.rglob("*.py")):
        if path.name == "findings.py" and path.parent == PACKAGE:
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"), str(path))
        creators = _creators(tree)
        for node in ast.walk(tree):
            if (isinstance(node, ast.Call) and isinstance(node.func, ast.Name)
                    and node.func.id in creators and node.args):
                for code in _codes(node.args[0]):
                    yield f"{path.relative_to(PACKAGE.parent)}:{node.lineno}", code, node


CALLS = list(_calls())


def test_the_package_creates_findings():
    assert len(CALLS) >= 5


@pytest.mark.parametrize(("where", "code"), [(w, c) for w, c, _ in CALLS])
def test_every_code_used_has_a_template(where, code):
    assert code in CATALOGUE, f"{where}: finding code {code!r} has no template in the catalogue"


@pytest.mark.parametrize(("where", "code"), [(w, c) for w, c, n in CALLS
                                             if isinstance(n.func, ast.Name)
                                             and n.func.id == "finding"])
def test_templates_name_only_values_the_call_passes(where, code):
    node = next(n for w, c, n in CALLS if w == where and c == code)
    if any(k.arg is None for k in node.keywords):  # **values: checked at run time
        return
    passed = {k.arg for k in node.keywords}
    missing = template_fields(CATALOGUE[code]) - passed - SUBJECT_FIELDS
    assert not missing, f"{where}: {code!r} names {sorted(missing)} but the call passes {passed}"


def test_a_suffixed_code_is_read_with_both_suffixes():
    node = ast.parse('"stability.fit.curvature" + ("" if x else ".not_removed")').body[0].value
    assert _codes(node) == ["stability.fit.curvature", "stability.fit.curvature.not_removed"]


@pytest.mark.parametrize("code", sorted(CATALOGUE))
def test_no_catch_all_code(code):
    # Every finding has a real code: a template that is only a sentence passed in
    # (``"{text}"``) would let the core build words again and the views parse them.
    fields = template_fields(CATALOGUE[code])
    assert not (fields and CATALOGUE[code].strip("{} ") in fields), code
    assert "unconverted" not in code


@pytest.mark.parametrize("code", sorted(CATALOGUE))
def test_catalogue_codes_are_dotted_and_templates_parse(code):
    assert CODE.match(code), code
    template_fields(CATALOGUE[code])  # raises on a malformed template


def test_unknown_code_and_missing_value_are_refused():
    with pytest.raises(ValueError, match="no template"):
        Finding("no.such_code", Severity.NOTE)
    with pytest.raises(ValueError, match=r"\['reason'\]"):
        finding("incidence.no_recommendation", Severity.CAUTION)


def test_message_line_and_dict():
    f = finding("pipeline.at_stop.left_out", Severity.WARNING,
                Subject(flight="3", point=2, config="clean"), elevator_deg=-12.04)
    assert f.message.startswith("flight '3' point 2: elevator -12.0 deg is at a stop")
    assert f.line() == f.message
    assert f.line(show_config=True) == "[clean] " + f.message
    d = f.to_dict()
    assert d["code"] == "pipeline.at_stop.left_out" and d["severity"] == "warning"
    assert d["subject"] == {"flight": "3", "point": 2, "config": "clean"}
    assert d["values"] == {"elevator_deg": -12.04}


def test_a_missing_number_reads_unknown_whatever_its_format():
    f = finding("pipeline.at_stop.included", Severity.WARNING,
                Subject(flight="1", point=1), elevator_deg=None)
    assert "elevator unknown deg" in f.message


def test_findings_are_frozen_and_values_read_only():
    values = {"reason": "x"}
    f = finding("incidence.no_recommendation", Severity.CAUTION, **values)
    values["reason"] = "changed"
    assert f.values["reason"] == "x"
    with pytest.raises(TypeError):
        f.values["reason"] = "y"  # type: ignore[index]


def test_severity_order_and_lines():
    note = finding("pipeline.no_points_in_log", Severity.NOTE, Subject(source="a.csv"))
    warn = finding("incidence.no_recommendation", Severity.WARNING, reason="r")
    assert [f.code for f in by_severity([note, warn])] == [warn.code, note.code]
    assert lines([note, note, warn]) == ("a.csv: no stabilized point found in this log",
                                        "no incidence recommendation: r")
    assert Severity("caution") is Severity.CAUTION


def test_a_negative_value_that_rounds_to_zero_has_no_sign():
    code = "incidence.shim.none.interval_has_zero.no_shim"
    f = Finding(code, Severity.CAUTION, values={"change_deg": -0.003})
    assert "(+0.00 deg, no shim)" in f.message
    f = Finding(code, Severity.CAUTION, values={"change_deg": -0.02})
    assert "-0.02 deg" in f.message
