import pytest
from hypothesis import given
from hypothesis import strategies as st

from trimlog.errors import UnitError
from trimlog.input.units import parse_quantity, parse_unit, unit_factor


@pytest.mark.parametrize(
    ("text", "unit", "expected"),
    [
        # exact definitions: 1 kt = 1852/3600 m/s, 1 mph = 1609.344/3600 m/s, 1 in = 25.4 mm
        ("100 mph", "kt", 100 * 1609.344 / 1852),
        ("185.2 km/h", "kt", 100.0),
        ("25.4 mm", "in", 1.0),
        ("59 degF", "degC", 15.0),
        ("288.15 K", "degC", 15.0),
        # 1 lbf = 4.4482216152605 N (exact by definition of the avoirdupois pound and g0)
        ("4.4482216152605 N", "lbf", 1.0),
        ("1 kg", "lb", 1 / 0.45359237),
        ("0.5 rad", "deg", 28.64788975654116),
        ("500 fpm", "ft/min", 500.0),
    ],
)
def test_parse_quantity_converts_exactly(text, unit, expected):
    assert parse_quantity(text, unit, key="k") == pytest.approx(expected, rel=1e-12)


def test_load_factor_g_is_not_the_gram():
    assert str(parse_unit("g")) == "standard_gravity"


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("12 lb", r"key: '12 lb' is a mass \(weight\); expected a length"),
        ("12", r"key: '12' has no unit"),
        ("twelve in", r"expected a number followed by a unit|is not a number"),
        ("12 wombats", r"unknown unit 'wombats'"),
    ],
)
def test_bad_quantities_name_the_key(text, message):
    with pytest.raises(UnitError, match=message):
        parse_quantity(text, "in", key="key")


@given(st.floats(min_value=-1e6, max_value=1e6, allow_nan=False))
def test_linear_factor_matches_pint_for_offset_units(value):
    scale, offset = unit_factor(parse_unit("degF"), "degC")
    assert scale * value + offset == pytest.approx((value - 32) * 5 / 9, rel=1e-12, abs=1e-9)


@given(st.text(max_size=30))
def test_arbitrary_text_is_a_value_or_a_unit_error(text):
    try:
        value = parse_quantity(text, "in", key="k")
    except UnitError:
        return
    assert isinstance(value, float)
