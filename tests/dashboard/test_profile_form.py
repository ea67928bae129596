"""The Aircraft page's form: the same profile as the TOML text, errors beside the field.

The demo profile (invented aircraft) goes through the form and must come back
the same, value for value; the expected numbers are the profile reader's own.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pandas as pd
import pytest
from streamlit.testing.v1 import AppTest

from trimlog.dashboard import profile_form
from trimlog.input.profile import PROFILE_KEYS, parse_profile

ROOT = Path(__file__).resolve().parents[2]
APP = str(ROOT / "trimlog" / "dashboard" / "app.py")
DEMO = (ROOT / "sample_logs" / "tinkerfinch_tf2.toml").read_text()
# Not part of what the profile says about the aircraft: where it was read from.
IGNORED = {"text", "source", "warnings"}


def _same(a, b) -> dict:
    return {f.name: (getattr(a, f.name), getattr(b, f.name))
            for f in dataclasses.fields(a) if f.name not in IGNORED
            and getattr(a, f.name) != getattr(b, f.name)}


def test_the_form_writes_the_same_profile_as_the_toml_text():
    values, table = profile_form.initial_values(DEMO, "demo.toml")
    text, errors, general = profile_form.build(values, table, DEMO, "demo.toml")
    assert not errors and not general, (errors, general)
    assert _same(parse_profile(DEMO, "demo.toml"), parse_profile(text, "form")) == {}


def test_every_number_key_of_the_profile_sections_is_a_field():
    shown = {k.key for k in profile_form.fields()}
    for k in PROFILE_KEYS:
        if k.section in profile_form.GROUPS and k.kind in ("quantity", "number", "text"):
            assert k.key in shown
    labels = [profile_form.label(k) for k in profile_form.fields()]
    assert len(set(labels)) == len(labels)  # no two fields look alike
    # each label carries its unit
    for k in profile_form.fields():
        if k.unit:
            assert profile_form.label(k).endswith("]"), profile_form.label(k)


def test_a_key_left_out_stays_out_and_its_default_applies():
    text = DEMO.replace("min_static_margin = 5.0\n", "")
    values, table = profile_form.initial_values(text, "t.toml")
    assert values["limits.min_static_margin"] is None
    out, errors, _ = profile_form.build(values, table, text, "t.toml")
    assert not errors and "min_static_margin" not in out
    assert any("minimum static margin" in d for d in parse_profile(out).defaults_used)


def test_errors_name_the_field_with_rounded_numbers():
    values, table = profile_form.initial_values(DEMO, "demo.toml")
    values["aircraft.mac"] = 0.123456  # below the 0.5 in plausible range (the schema's)
    values["limits.cg_aft"] = 60.0  # ahead of the forward limit, 65.5 in
    _, errors, general = profile_form.build(values, table, DEMO, "demo.toml")
    assert set(errors) == {"aircraft.mac"} and "0.12 in" in errors["aircraft.mac"]
    assert "0.123456" not in errors["aircraft.mac"] and general
    values["aircraft.mac"] = 53.0
    _, errors, _ = profile_form.build(values, table, DEMO, "demo.toml")
    # the rule across two keys is shown beside the field it names, rounded
    (key,) = errors
    assert key == "limits.cg_forward" and "65.5 in" in errors[key]
    values["limits.cg_aft"] = 74.5
    values["aircraft.name"] = "  "
    _, errors, _ = profile_form.build(values, table, DEMO, "demo.toml")
    assert errors == {"aircraft.name": "required: aircraft name"}


def test_a_half_filled_position_error_row_is_refused():
    values, table = profile_form.initial_values(DEMO, "demo.toml")
    table = pd.concat([table, pd.DataFrame({profile_form.PE_IAS: [150.0],
                                            profile_form.PE_CAS: [None]})], ignore_index=True)
    _, errors, _ = profile_form.build(values, table, DEMO, "demo.toml")
    assert "row 10" in errors["airspeed_calibration"]


def test_the_page_form_applies_a_change_and_shows_an_error_beside_its_field():
    at = AppTest.from_file(APP, default_timeout=180)
    at.run()
    at.sidebar.radio(key="page").set_value("Aircraft").run()
    assert not at.exception, at.exception
    at.number_input(key="form_limits.min_static_margin").set_value(8.0)
    next(b for b in at.button if b.label == "Apply the form").click().run()
    assert not at.exception, at.exception
    assert at.session_state["profile_source"] == "Aircraft form"
    p = parse_profile(at.session_state["profile_text"])
    assert p.min_static_margin_pct_mac == 8.0
    assert _same(parse_profile(DEMO), dataclasses.replace(p, min_static_margin_pct_mac=5.0)
                 ) == {}
    assert at.metric[3].value == "8.0 %MAC"
    # a value out of range: refused beside its field, the profile kept
    at.number_input(key="form_aircraft.wing_area").set_value(0.01)
    next(b for b in at.button if b.label == "Apply the form").click().run()
    assert not at.exception, at.exception
    errors = [e.value for e in at.error]
    assert any("0.01 ft²" in e and "outside the plausible range" in e for e in errors), errors
    assert any("Not applied" in e for e in errors)
    assert parse_profile(at.session_state["profile_text"]).wing_area_ft2 == 120.0


def test_profile_messages_carry_rounded_stations():
    from trimlog.errors import ProfileError

    text = DEMO.replace('cg = "70.5 in"', 'cg = "4000 mm"')  # 157.48 in, far aft of the MAC
    with pytest.raises(ProfileError, match=r"cruise.cg: 157.5 in is \d+ %MAC") as info:
        parse_profile(text, "t.toml")
    assert "157.48" not in str(info.value)
