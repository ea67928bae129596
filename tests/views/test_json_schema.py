"""The ``trimlog analyze --json`` contract, pinned by the schema shipped in the package.

The demo programme (five flights, two stabilizer settings), a one-flight
analysis (neutral points not identifiable: nulls with reasons) and a
two-configuration analysis must validate; a dropped, renamed or retyped key
must not.  A new key is allowed (the contract only grows); add it to
``trimlog/views/result.schema.json`` as required once it is part of the
contract.
"""

from __future__ import annotations

import copy
import json
from importlib import resources

import jsonschema
import pytest

from trimlog.pipeline import chain
from trimlog.views.json_export import analysis_to_dict


@pytest.fixture(scope="module")
def schema():
    text = resources.files("trimlog.views").joinpath("result.schema.json").read_text("utf-8")
    schema = json.loads(text)
    jsonschema.Draft202012Validator.check_schema(schema)
    return schema


@pytest.fixture(scope="module")
def flights(demo_flights):
    return list(demo_flights)  # read once for the session (tests/conftest.py)


@pytest.fixture(scope="module")
def demo(flights, demo_profile):
    # through JSON text, as a user's script reads it
    return json.loads(json.dumps(analysis_to_dict(chain.analyze(flights, demo_profile))))


def _errors(schema, payload):
    validator = jsonschema.Draft202012Validator(schema)
    return [f"{'/'.join(map(str, e.absolute_path))}: {e.message}"
            for e in validator.iter_errors(payload)]


def test_demo_json_validates(schema, demo):
    assert _errors(schema, demo) == []
    assert demo["findings"] and all(f["code"] and f["message"] for f in demo["findings"])


def test_one_flight_json_validates(schema, flights, demo_profile):
    one = json.loads(json.dumps(analysis_to_dict(chain.analyze(flights[:1], demo_profile))))
    assert one["neutral_point"]["stick_fixed"]["pct_mac"] is None  # not identifiable
    assert _errors(schema, one) == []


def test_two_configuration_json_validates(schema, flights, demo_profile):
    flapped = []
    for f in flights[:2]:
        points = f.points.copy()
        points["flap_deg"] = 20.0
        points["flight"] = f.flight + "_flaps"
        flapped.append(chain.FlightData(f.flight + "_flaps", f.source + " (flaps)", f.sha256,
                                        f.log, points, f.loading))
    both = json.loads(json.dumps(analysis_to_dict(
        chain.analyze([*flights, *flapped], demo_profile))))
    assert both["other_configurations"]
    assert _errors(schema, both) == []


@pytest.mark.parametrize("path", [
    ("warnings",), ("findings",), ("neutral_point", "stick_fixed", "pct_mac"),
    ("incidence", "change_ci95_deg"), ("static_margin", 0, "meets_minimum"),
    ("points", 0, "cl"), ("software", "version"),
])
def test_a_dropped_key_fails(schema, demo, path):
    broken = copy.deepcopy(demo)
    parent = broken
    for step in path[:-1]:
        parent = parent[step]
    del parent[path[-1]]
    assert _errors(schema, broken)


def test_a_retyped_value_or_a_bad_finding_fails(schema, demo):
    broken = copy.deepcopy(demo)
    broken["neutral_point"]["stick_fixed"]["pct_mac"] = "37.6"
    assert _errors(schema, broken)
    broken = copy.deepcopy(demo)
    broken["incidence"]["change_ci95_deg"] = [1.0]
    assert _errors(schema, broken)
    broken = copy.deepcopy(demo)
    broken["findings"][0]["severity"] = "fatal"
    assert _errors(schema, broken)


def test_a_new_key_is_allowed(schema, demo):
    grown = copy.deepcopy(demo)
    grown["something_new"] = {"value": 1.0}
    grown["neutral_point"]["stick_fixed"]["another"] = None
    assert _errors(schema, grown) == []
