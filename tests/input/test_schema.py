"""The declarative schema of the profile and the loading sheet (issue 19, 16 §7, 13 §4).

Every case here failed before the schema: unknown profile keys were ignored,
huge integers raised OverflowError, deep nesting raised RecursionError, and
out-of-range values (cruise CG far off the MAC, negative elevator reserve,
zero fuel density) were accepted.
"""

import re
import textwrap

import pytest

from trimlog.errors import InputFileError, ProfileError, TrimlogError
from trimlog.input.loading_sheet import SHEET_KEYS, read_loading_sheet
from trimlog.input.profile import PROFILE_KEYS, check_policy, parse_profile, with_policy
from trimlog.input.schema import MAX_NESTING, Key, describe

PROFILE = textwrap.dedent(
    """
    [aircraft]
    name = "Test aircraft"
    wing_area = "118 ft^2"
    mac = "51 in"
    lemac = "60 in"
    clmax_clean = 1.5
    [tail]
    tau = 0.5
    stabilizer_attach_spacing = "14 in"
    elevator_up_stop = "25 deg"
    elevator_down_stop = "18 deg"
    [limits]
    cg_forward = "69 in"
    cg_aft = "76 in"
    max_weight = "1750 lb"
    min_static_margin = 5.0
    cg_step_max = 2.0
    elevator_reserve = "3 deg"
    [cruise]
    cas = "120 kt"
    cg = "72.5 in"
    weight = "1600 lb"
    [fuel]
    density = "6.0 lb/gal"
    [airspeed_calibration]
    ias = [50, 100, 150]
    cas = [52, 100, 148]
    unit = "kt"
    """
)

SHEET = 'flight = "1"\n[takeoff]\nweight = "1500 lb"\ncg = "78 in"\nfuel = "20 gal"\n'

HUGE = "1" + "0" * 400  # an integer no float can hold
VERY_HUGE = "1" + "0" * 5000  # beyond Python's integer-text limit too


def _replace(text: str, old: str, new: str) -> str:
    out = text.replace(old, new, 1)
    assert out != text, old
    return out


def test_profile_base_parses():
    profile = parse_profile(PROFILE, "p.toml")
    assert profile.min_static_margin_pct_mac == 5.0 and profile.cruise_cg_in == 72.5


@pytest.mark.parametrize(("old", "new", "message"), [
    # issue 13 §4: the misspelled policy key is refused, with the key it meant
    ("min_static_margin = 5.0", "min_static_margn = 12",
     r"unknown key 'limits.min_static_margn'; did you mean 'limits.min_static_margin'\?"),
    ("cg_step_max = 2.0", "cg_stepmax = 2.0", r"did you mean 'limits.cg_step_max'"),
    ('cas = "120 kt"', 'cas = "120 kt"\nmin_static_margin = 8',
     r"unknown key 'cruise.min_static_margin'; did you mean 'limits.min_static_margin'"),
    ("[fuel]", "[fule]", r"unknown section 'fule'; did you mean 'fuel'"),
    ('name = "Test aircraft"', 'name = "Test aircraft"\ncolour = "red"',
     r"unknown key 'aircraft.colour'"),
    ('unit = "kt"', 'unit = "kt"\nmach = [0.1, 0.2]', r"unknown key 'airspeed_calibration.mach'"),
    ("[fuel]", "fuel = 3\n[fuel2]", r"unknown section 'fuel2'|'fuel' must be a table"),
])
def test_unknown_profile_keys_are_errors_with_the_nearest_key(old, new, message):
    with pytest.raises(ProfileError, match=message) as caught:
        parse_profile(_replace(PROFILE, old, new), "typo.toml")
    assert str(caught.value).startswith("typo.toml: ")


@pytest.mark.parametrize(("old", "new", "key"), [
    ("clmax_clean = 1.5", f"clmax_clean = {HUGE}", "aircraft.clmax_clean"),
    ("min_static_margin = 5.0", f"min_static_margin = {HUGE}", "limits.min_static_margin"),
    ("cg_step_max = 2.0", f"cg_step_max = -{HUGE}", "limits.cg_step_max"),
    ("tau = 0.5", f"tau = {HUGE}", "tail.tau"),
    ("ias = [50, 100, 150]", f"ias = [50, 100, {HUGE}]", "airspeed_calibration.ias"),
    ("cas = [52, 100, 148]", f"cas = [52, {HUGE}, 148]", "airspeed_calibration.cas"),
    ('mac = "51 in"', f"mac = {HUGE}", "aircraft.mac"),
    ('mac = "51 in"', f'mac = "{HUGE} in"', "aircraft.mac"),
    ("clmax_clean = 1.5", f"clmax_clean = {VERY_HUGE}", "too long to read"),
])
def test_huge_integers_in_the_profile_are_clear_errors(old, new, key):
    with pytest.raises(ProfileError, match=re.escape(key)):
        parse_profile(_replace(PROFILE, old, new), "huge.toml")


@pytest.mark.parametrize(("old", "new", "message"), [
    # issue 19 §3: each printed an absurd shim or was accepted
    ('cg = "72.5 in"', 'cg = "-1e9 in"', r"cruise.cg: '-1e9 in' is outside"),
    ('cg = "72.5 in"', 'cg = "200 in"', r"cruise.cg: 200 in is 275 %MAC"),
    ('cg = "72.5 in"', 'cg = "40 in"', r"cruise.cg: 40 in is -39 %MAC"),
    ('elevator_reserve = "3 deg"', 'elevator_reserve = "-1e6 deg"',
     r"limits.elevator_reserve: '-1e6 deg' is outside the plausible range 0..30 deg"),
    ('elevator_reserve = "3 deg"', 'elevator_reserve = "-1 deg"', r"limits.elevator_reserve"),
    ('density = "6.0 lb/gal"', 'density = "0 lb/gal"', r"fuel.density: '0 lb/gal' is outside"),
    ('density = "6.0 lb/gal"', 'density = "0.72 kg/l"', None),  # 6.01 lb/gal: fine
    ('density = "6.0 lb/gal"', 'density = "720 lb/gal"', r"fuel.density"),
    ("min_static_margin = 5.0", "min_static_margin = -10", r"limits.min_static_margin: -10"),
    ("min_static_margin = 5.0", "min_static_margin = 41", r"0..40 %MAC"),
    ("min_static_margin = 5.0", "min_static_margin = nan", r"limits.min_static_margin"),
    ("min_static_margin = 5.0", "min_static_margin = inf", r"limits.min_static_margin"),
    ("min_static_margin = 5.0", "min_static_margin = true", r"found the boolean true"),
    ("cg_step_max = 2.0", "cg_step_max = -0.5", r"limits.cg_step_max"),
    ('weight = "1600 lb"', 'weight = "1600 kg"',
     r"cruise.weight: 3527.4 lb is more than 1.25 x .*kg against lb"),
    ('cas = "120 kt"', 'cas = "120000 kt"', r"cruise.cas"),
    ('cas = "120 kt"', 'cas = "0 kt"', r"cruise.cas"),
    ('max_weight = "1750 lb"', 'max_weight = "999999 lb"', r"limits.max_weight"),
    ('lemac = "60 in"', 'lemac = "1e9 in"', r"aircraft.lemac"),
    ("ias = [50, 100, 150]", "ias = [50, 100, 15000]", r"airspeed_calibration.ias"),
    ('elevator_up_stop = "25 deg"', 'elevator_up_stop = "0 deg"', r"tail.elevator_up_stop"),
])
def test_every_profile_value_has_a_plausible_range_naming_its_key(old, new, message):
    text = _replace(PROFILE, old, new)
    if message is None:
        assert parse_profile(text, "r.toml").fuel_density_lb_per_gal == pytest.approx(6.009, 1e-3)
        return
    with pytest.raises(ProfileError, match=message):
        parse_profile(text, "r.toml")


def test_margin_zero_is_a_value_not_missing():
    profile = parse_profile(_replace(PROFILE, "min_static_margin = 5.0",
                                     "min_static_margin = 0"), "zero.toml")
    assert profile.min_static_margin_pct_mac == 0.0
    assert not any("static margin" in d for d in profile.defaults_used)


@pytest.mark.parametrize("depth", [MAX_NESTING + 1, 100, 1000, 100_000])
def test_deep_nesting_is_a_clear_error(depth):
    arrays = "[" * depth + "]" * depth
    tables = "{a = " * depth + "1" + "}" * depth
    for extra in (f"deep = {arrays}\n", f"deep = {tables}\n"):
        with pytest.raises(ProfileError, match="nested"):
            parse_profile(extra + PROFILE, "deep.toml")
        with pytest.raises(InputFileError, match="nested"):
            read_loading_sheet((extra + SHEET).encode(), name="deep.loading.toml")


def test_nesting_in_logger_columns_is_refused_by_kind():
    text = PROFILE + '[logger]\ncolumns = { "IAS" = { a = "ias_kt" } }\n'
    with pytest.raises(ProfileError, match="logger.columns: expected a table of text = text"):
        parse_profile(text, "x.toml")


@pytest.mark.parametrize(("old", "new", "key"), [
    ('"1500 lb"', f"{HUGE}", "takeoff.weight"),
    ('"1500 lb"', f'"{HUGE} lb"', "takeoff.weight"),
    ('"1500 lb"', '"999999 lb"', "takeoff.weight"),
    ('"20 gal"', f"{VERY_HUGE}", "too long to read"),
    ('flight = "1"', f"flight = {HUGE}", "flight"),
])
def test_huge_numbers_in_a_loading_sheet_are_clear_errors(old, new, key):
    with pytest.raises(InputFileError, match=re.escape(key)):
        read_loading_sheet(_replace(SHEET, old, new).encode(), name="huge.loading.toml")


def test_huge_fuel_flow_is_refused():
    text = SHEET + f"[fuel]\nflow = {HUGE}\n"
    with pytest.raises(InputFileError, match="fuel.flow"):
        read_loading_sheet(text.encode(), name="flow.loading.toml")


def test_loading_sheet_unknown_section_suggests():
    with pytest.raises(InputFileError, match=r"unknown section 'confg'; did you mean 'config'"):
        read_loading_sheet((SHEET + "[confg]\nflap = '0 deg'\n").encode(), name="s.toml")


def test_policies_typed_elsewhere_use_the_profile_rule():
    assert check_policy("limits.min_static_margin", 0.0) == 0.0
    for bad in (-10.0, float("nan"), 1e308, float("inf"), 40.5):
        with pytest.raises(ProfileError, match="--min-margin: limits.min_static_margin"):
            check_policy("limits.min_static_margin", bad, source="--min-margin")
    for bad in (float("inf"), -3.0, 20.5):
        with pytest.raises(ProfileError, match="limits.cg_step_max"):
            check_policy("limits.cg_step_max", bad)
    profile = with_policy(parse_profile(PROFILE, "p.toml"), min_static_margin_pct_mac=0.0)
    assert profile.min_static_margin_pct_mac == 0.0


def test_tables_are_consistent():
    for keys, cls in ((PROFILE_KEYS, "AircraftProfile"), (SHEET_KEYS, "LoadingSheet")):
        assert len({k.key for k in keys}) == len(keys), cls
        for k in keys:
            assert k.description, k.key
            if k.low is not None and k.high is not None:
                assert k.low < k.high, k.key
    import dataclasses

    from trimlog.input.loading_sheet import LoadingSheet
    from trimlog.input.profile import AircraftProfile
    profile_fields = {f.name for f in dataclasses.fields(AircraftProfile)}
    assert {k.field for k in PROFILE_KEYS if not k.key.startswith("airspeed_calibration")} \
        <= profile_fields
    assert {k.field for k in SHEET_KEYS} <= {f.name for f in dataclasses.fields(LoadingSheet)}
    assert "| `limits.min_static_margin` | number | %MAC | 5 | 0..40 %MAC |" in describe(
        PROFILE_KEYS)


def test_a_key_of_unknown_kind_is_a_programming_error():
    with pytest.raises(ValueError, match="unknown kind"):
        Key("a.b", "float")


def test_all_errors_are_trimlog_errors():
    with pytest.raises(TrimlogError):
        parse_profile("[aircraft]\n" + "x" * 10, "junk.toml")
