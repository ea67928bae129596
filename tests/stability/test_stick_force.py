"""Trim-system declaration and the free-return / friction-band check (issue 12 §3, §5).

Rule: 14 CFR 23.173(b), text before amendment 23-64 (from memory): released slowly from a
speed away from trim, the speed returns to within 10 % of the original trim speed (7.5 % in
the cruise condition of commuter aeroplanes).  Synthetic flights below are of known truth.
"""

from __future__ import annotations

import dataclasses
import math

import pytest

from trimlog.errors import ProfileError
from trimlog.input.profile import TRIM_SYSTEMS, load_profile
from trimlog.stability.results import FlightGradient, NeutralPoint
from trimlog.stability.stick_force import (
    FREE_RETURN_FRACTION,
    free_return,
    free_return_findings,
    stick_free_not_identifiable,
    trim_system_findings,
)


def _gradient(flight="1", trim=100.0, grad=-0.20, ci=(-0.25, -0.15)):
    blank = {f.name: None for f in dataclasses.fields(FlightGradient)}
    return FlightGradient(**{**blank, "flight": flight, "trim_eas_kt": trim,
                             "dfs_dv_lbf_per_kt": grad, "dfs_dv_ci95_lbf_per_kt": ci,
                             "warnings": ()})


def test_rule_figure_is_the_23_173_b_one():
    assert FREE_RETURN_FRACTION == 0.10  # 14 CFR 23.173(b) pre-amendment 23-64, from memory


def test_band_edges_are_where_the_force_equals_the_friction():
    r = free_return(_gradient(), 0.5)
    v_t, g = 100.0, -0.15  # the gradient's bound nearest zero is used (the widest band)
    for v in r.band_eas_kt:
        # Fs(V) = (G / 2 V_t)(V^2 - V_t^2): exact for Fs = A q + B W/S (Etkin & Reid sec. 2.8)
        assert abs(g / (2 * v_t) * (v * v - v_t * v_t)) == pytest.approx(0.5, rel=1e-12)
    # near trim the band is about f/|G| either side (common practice, no source)
    lo, hi = r.band_eas_kt
    assert v_t - lo == pytest.approx(0.5 / 0.15, rel=0.03)
    assert hi - v_t == pytest.approx(0.5 / 0.15, rel=0.03)
    assert r.meets_rule is True


def test_a_shallow_gradient_fails_free_return_and_says_so():
    # -0.05 lbf/kt with 0.5 lbf friction: about 10 kt each way at 100 kt, beyond 10 %
    found = free_return_findings([_gradient(grad=-0.06, ci=(-0.07, -0.05))], 0.5, True)
    assert [f.code for f in found] == ["stability.free_return.too_wide"]
    assert found[0].values["band_pct"] > 10.0
    assert found[0].severity.value == "warning"


def test_friction_larger_than_any_force_below_trim_is_unbounded():
    r = free_return(_gradient(grad=-0.01, ci=(-0.015, -0.005)), 1.0)
    assert r.band_eas_kt is None and r.meets_rule is False
    found = free_return_findings([_gradient(grad=-0.01, ci=(-0.015, -0.005))], 1.0, True)
    assert found[0].code == "stability.free_return.too_wide"


def test_not_clearly_stable_cannot_say():
    found = free_return_findings([_gradient(grad=-0.05, ci=(-0.2, 0.1))], 0.5, True)
    assert [f.code for f in found] == ["stability.free_return.cannot_say"]


def test_no_friction_declared_is_a_note_and_no_number():
    found = free_return_findings([_gradient()], None, True)
    assert [f.code for f in found] == ["stability.free_return.no_friction"]
    assert free_return_findings([_gradient()], None, False) == []


def test_each_trim_system_has_its_words():
    assert [f.code for f in trim_system_findings(None, True)] == ["stability.trim.assumed_tab"]
    assert trim_system_findings("tab", True) == []
    for system in TRIM_SYSTEMS[1:]:
        (f,) = trim_system_findings(system, True)
        assert f.code == f"stability.trim.{system}" and f.message


def test_spring_trim_does_not_advise_another_cg():
    np_ = NeutralPoint("stick_free", "pooled", False, None, None, None, None, None, None,
                       "unbounded", 15.0, 32, 4)
    spring = stick_free_not_identifiable("spring", np_)
    tab = stick_free_not_identifiable("tab", np_)
    assert spring.code == "stability.trim.spring.np_free_not_identifiable"
    assert tab.code == "stability.np_not_identifiable"
    assert "one recorded setting" in spring.message


def _profile(tmp_path, extra):
    from trimlog.demo.model import PROFILE_TOML
    text = PROFILE_TOML.replace('[trim]\nsystem = "tab"\nfriction = "0.5 lbf"', extra)
    path = tmp_path / "p.toml"
    path.write_text(text)
    return path


def test_profile_trim_keys_are_checked(tmp_path):
    p = load_profile(_profile(tmp_path, '[trim]\nsystem = "spring"\nfriction = "2 N"'))
    assert p.trim_system == "spring"
    assert p.trim_friction_lbf == pytest.approx(2.0 / 4.4482216152605)  # 1 lbf = 4.448 N (NIST)
    with pytest.raises(ProfileError, match=r"trim.system: expected one of .*did you mean 'tab'"):
        load_profile(_profile(tmp_path, '[trim]\nsystem = "tabb"'))
    with pytest.raises(ProfileError, match="trim.friction"):
        load_profile(_profile(tmp_path, '[trim]\nfriction = "50 lbf"'))
    assert load_profile(_profile(tmp_path, "")).trim_system is None


def test_demo_flight_four_is_too_light_to_return_and_a_stabilator_gets_no_shim(tmp_path):
    from pathlib import Path

    from trimlog.pipeline import chain
    samples = Path(__file__).resolve().parents[2] / "sample_logs"
    logs = sorted(samples.glob("flight*.csv"))
    profile = chain.load_profile(samples / "tinkerfinch_tf2.toml")
    flights = [f for log in logs for f in chain.load_flight_file(log, profile)]
    result = chain.analyze(flights, profile)
    codes = {(f.code, f.subject and f.subject.flight) for f in result.findings}
    # the demo's aft flight (about 1 lbf per 14 kt) is the one whose stick stays put
    assert ("stability.free_return.too_wide", "flight4") in codes
    assert ("stability.free_return.band", "flight2") in codes
    stab = dataclasses.replace(profile, trim_system="stabilator")
    other = chain.analyze(flights, stab)
    assert other.primary.incidence is None
    assert any(f.code == "incidence.not_applicable.trim_system" for f in other.findings)
    assert math.isfinite(other.primary.stability.stick_fixed.neutral_point.pct_mac)


def test_the_aircraft_form_carries_the_trim_keys():
    from pathlib import Path

    from trimlog.dashboard import profile_form
    from trimlog.input.profile import parse_profile
    text = (Path(__file__).resolve().parents[2] / "sample_logs" / "tinkerfinch_tf2.toml"
            ).read_text()
    values, table = profile_form.initial_values(text, "demo.toml")
    assert values["trim.system"] == "tab"
    for typed, expected in (("spring", "spring"), ("", None)):  # cleared field: not declared
        out, errors, _ = profile_form.build({**values, "trim.system": typed}, table, text, "d")
        assert not errors and parse_profile(out, "form").trim_system == expected
