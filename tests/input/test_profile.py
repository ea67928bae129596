import textwrap

import pytest

from trimlog.errors import ProfileError
from trimlog.input.profile import load_profile, parse_profile, profile_findings

CONTRACT = textwrap.dedent(
    """
    [aircraft]
    name = "Test aircraft"
    wing_area = "118 ft^2"
    mac = "51 in"
    lemac = "60 in"
    [tail]
    tau = 0.5
    elevator_chord_ratio = 0.35
    stabilizer_attach_spacing = "14 in"
    elevator_up_stop = "25 deg"
    elevator_down_stop = "18 deg"
    [limits]
    cg_forward = "69 in"
    cg_aft = "76 in"
    max_weight = "1750 lb"
    [cruise]
    cas = "120 kt"
    """
)


def test_contract_keys_parse_to_declared_units():
    profile = parse_profile(CONTRACT, "contract.toml")
    assert profile.name == "Test aircraft"
    assert profile.wing_area_ft2 == 118.0
    assert profile.mac_in == 51.0 and profile.lemac_in == 60.0
    assert profile.tau == 0.5 and profile.elevator_chord_ratio == 0.35
    assert profile.stabilizer_attach_spacing_in == 14.0
    assert profile.elevator_up_stop_deg == 25.0 and profile.elevator_down_stop_deg == 18.0
    assert (profile.cg_forward_in, profile.cg_aft_in) == (69.0, 76.0)
    assert profile.max_weight_lb == 1750.0
    assert profile.cruise_cas_kt == 120.0


def test_missing_cruise_details_take_stated_defaults():
    profile = parse_profile(CONTRACT, "contract.toml")
    assert profile.cruise_cg_in == pytest.approx(72.5)
    assert profile.cruise_weight_lb == pytest.approx(1575.0)
    assert profile.cruise_pressure_alt_ft == 5000.0
    assert any("mid-envelope" in d for d in profile.defaults_used)
    assert any("policy" in d for d in profile.defaults_used)


def test_metric_values_are_converted_once():
    text = CONTRACT.replace('"51 in"', '"1.2954 m"').replace('"118 ft^2"', '"10.9626 m^2"')
    profile = parse_profile(text, "metric.toml")
    assert profile.mac_in == pytest.approx(51.0, rel=1e-6)  # 1 in = 0.0254 m exactly
    assert profile.wing_area_ft2 == pytest.approx(118.0, rel=1e-5)  # 1 ft = 0.3048 m exactly


def test_pct_mac_round_trip():
    profile = parse_profile(CONTRACT, "contract.toml")
    assert profile.pct_mac(72.75) == pytest.approx(25.0)
    assert profile.station(25.0) == pytest.approx(72.75)
    assert profile.cg_forward_pct_mac == pytest.approx(100 * 9 / 51)


@pytest.mark.parametrize(
    ("old", "new", "message"),
    [
        ('mac = "51 in"', 'mac = "51 lb"', r"aircraft.mac: '51 lb' is a mass .*expected a length"),
        ('mac = "51 in"', "mac = 51", r"aircraft.mac: expected a value with a unit of a length"),
        ('mac = "51 in"', 'mac = "51 furlongz"', r"unknown unit 'furlongz'"),
        ('mac = "51 in"', "", r"missing key 'aircraft.mac' in \[aircraft\]"),
        ('wing_area = "118 ft^2"', 'wing_area = "-118 ft^2"',
         r"aircraft.wing_area: '-118 ft\^2' is outside the plausible range 0.1..5000"),
        ('wing_area = "118 ft^2"', 'wing_area = "118 ft"', r"is a length; expected an area"),
        ('cg_forward = "69 in"', 'cg_forward = "77 in"',
         r"forward limit \(77 in\) must lie forward"),
        ('cg_aft = "76 in"', 'cg_aft = "160 in"', r"cg_aft: 160 in is 196 %MAC"),
        ("tau = 0.5", "tau = 1.5", r"tail.tau: 1.5 is outside the plausible range \(0, 1\]"),
        ('elevator_up_stop = "25 deg"', 'elevator_up_stop = "95 deg"',
         r"tail.elevator_up_stop: '95 deg' is outside the plausible range \(0, 60\] deg"),
        ('cas = "120 kt"', 'cas = "120 ft"', r"cruise.cas: '120 ft' is a length; expected a speed"),
        ('name = "Test aircraft"', "name = 3", r"aircraft.name: expected text, found int 3"),
    ],
)
def test_bad_profiles_give_specific_messages(old, new, message):
    text = CONTRACT.replace(old, new)
    assert text != CONTRACT
    with pytest.raises(ProfileError, match=message):
        parse_profile(text, "bad.toml")


def test_broken_toml_names_the_file():
    with pytest.raises(ProfileError, match=r"bad.toml: not valid TOML"):
        parse_profile("[aircraft\nname = ", "bad.toml")


def test_unknown_section_is_an_error_naming_the_nearest():
    # issue 13 §4: a misspelled section or key must never pass silently
    with pytest.raises(ProfileError, match=r"typo.toml: unknown section 'cruse'; did you mean "
                                           r"'cruise'\?"):
        parse_profile(CONTRACT + "\n[cruse]\ncas = '100 kt'\n", "typo.toml")


def test_missing_tau_and_chord_ratio_warns():
    text = CONTRACT.replace("tau = 0.5\n", "").replace("elevator_chord_ratio = 0.35\n", "")
    profile = parse_profile(text, "notau.toml")
    assert profile.tau is None and any("tau" in w for w in profile.warnings)
    assert [f.code for f in profile_findings(None, None, "notau.toml")] == [
        "input.profile.no_tau_source"]
    assert profile.warnings == ("notau.toml: neither tail.tau nor tail.elevator_chord_ratio is "
                                "given; the shim needs a flight-calibrated tau (flights before "
                                "and after an incidence change)",)


def test_position_error_table_and_logger_mapping():
    text = CONTRACT + textwrap.dedent(
        """
        [airspeed_calibration]
        ias = [50, 100, 150]
        cas = [52, 100, 148]
        unit = "mph"
        [logger]
        columns = { "ELEV" = "elevator_deg" }
        inverted = ["elevator_deg"]
        """
    )
    profile = parse_profile(text, "cal.toml")
    # 1 mph = 0.868976 kt (1 international mile = 1609.344 m, 1 nmi = 1852 m, exact)
    assert profile.position_error_ias_kt[1] == pytest.approx(86.8976, rel=1e-6)
    assert profile.column_map == {"ELEV": "elevator_deg"}
    assert profile.inverted_columns == ("elevator_deg",)


def test_decreasing_calibration_table_is_refused():
    text = CONTRACT + "\n[airspeed_calibration]\nias = [100, 50]\ncas = [100, 52]\n"
    with pytest.raises(ProfileError, match="strictly increasing"):
        parse_profile(text, "cal.toml")


def test_unreadable_file_is_a_profile_error(tmp_path):
    with pytest.raises(ProfileError, match="cannot read the aircraft profile"):
        load_profile(tmp_path / "absent.toml")
    binary = tmp_path / "binary.toml"
    binary.write_bytes(b"\xff\xfe\x00garbage")
    with pytest.raises(ProfileError, match="not UTF-8"):
        load_profile(binary)


def test_the_required_keys_alone_make_a_profile(minimal_profile, minimal_profile_text):
    # tests/conftest.py's minimal profile: every optional key left to its default, and said
    assert minimal_profile.tau is None and minimal_profile.elevator_chord_ratio is None
    assert minimal_profile.defaults_used  # the assumed values are listed, not hidden
    assert [f.code for f in profile_findings(None, None, "minimal.toml")] == [
        "input.profile.no_tau_source"]
    with pytest.raises(ProfileError, match="cruise"):
        parse_profile(minimal_profile_text.replace('[cruise]\ncas = "120 kt"\n', ""), "x.toml")
