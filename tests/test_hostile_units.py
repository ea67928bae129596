"""Unit mistakes in logs (issue 19 §3): impossible CL or weight is a clear error.

Before: airspeed logged in m/s under an ``ias_kt`` header gave CL up to 3.33
against a CLmax of 1.5 with exit 0, and elevator authority 3.8x too easy; a
weight of 999,999 lb gave CL 150-640 with exit 0.  Each case edits the demo's
point table (invented data) one way and runs ``trimlog analyze``: exit 2, no
traceback, the message names the file, line, column, the value and the likely
mistake.  The control case (the file as shipped) analyses.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest

from trimlog.cli import EXIT_BAD_INPUT, main
from trimlog.input.profile import load_profile
from trimlog.pipeline.plausibility import (
    CL_ABSOLUTE_MAX,
    CL_MARGIN,
    check_units_plausible,
    stall_speed_eas_kt,
)

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_logs"
PROFILE = SAMPLES / "tinkerfinch_tf2.toml"
KT_IN_MS = 0.514444  # NIST SP 811 (2008), Appendix B.8: 1 kn = 0.514 444 m/s
LB_IN_KG = 0.45359237  # NIST SP 811 (2008), Appendix B.8: 1 lb = 0.453 592 37 kg


def edited_table(tmp_path: Path, column: int, change) -> Path:
    """The demo point table with one column of every data row changed."""
    lines = (SAMPLES / "flight1_points.csv").read_text(encoding="utf-8").splitlines()
    out = []
    for line in lines:
        cells = line.split(",")
        if len(cells) > column and cells[0].startswith("TP"):
            cells[column] = change(cells[column])
        out.append(",".join(cells))
    path = tmp_path / "points.csv"
    path.write_text("\n".join(out) + "\n", encoding="utf-8")
    return path


def analyze(path: Path, capsys, *extra: str) -> tuple[int, str]:
    code = main(["analyze", str(path), "--aircraft", str(PROFILE), *extra])
    out, err = capsys.readouterr()
    assert "Traceback" not in out + err
    return code, err


def test_the_control_table_analyses(tmp_path, capsys):
    path = edited_table(tmp_path, 1, lambda v: v)
    code, err = analyze(path, capsys)
    assert code != EXIT_BAD_INPUT, err


def test_airspeed_in_metres_per_second_under_a_knot_header(tmp_path, capsys):
    path = edited_table(tmp_path, 1, lambda v: f"{float(v) * KT_IN_MS:.1f}")
    code, err = analyze(path, capsys)
    assert code == EXIT_BAD_INPUT
    assert "points.csv, line" in err and "column 'ias_kt'" in err
    assert "below the stall speed" in err
    assert "the speed column holds m/s, not kt" in err


def test_weight_of_999999_lb_is_refused(tmp_path, capsys):
    path = edited_table(tmp_path, 6, lambda v: "999999")
    code, err = analyze(path, capsys)
    assert code == EXIT_BAD_INPUT
    assert "column 'weight_lb'" in err and "999,999 lb" in err and "kg against lb" in err


def test_weight_in_kg_doubled_by_a_wrong_header(tmp_path, capsys):
    """A weight typed in lb under a header declaring kg: converted, it is 2.2x too heavy."""
    path = edited_table(tmp_path, 6, lambda v: v)
    text = path.read_text(encoding="utf-8").replace(",weight_lb,", ",weight_kg,")
    path.write_text(text, encoding="utf-8")
    code, err = analyze(path, capsys)
    assert code == EXIT_BAD_INPUT
    assert "more than 1.25 x the maximum weight" in err


def test_weight_from_a_loading_sheet_is_named(tmp_path, capsys):
    from trimlog.input.loading_sheet import read_loading_sheet

    sheet = (SAMPLES / "flight2.loading.toml").read_text(encoding="utf-8")
    heavy = sheet.replace('weight = "1585 lb"', 'weight = "99999 lb"')
    assert heavy != sheet
    (tmp_path / "flight2.csv").write_bytes((SAMPLES / "flight2.csv").read_bytes())
    (tmp_path / "flight2.loading.toml").write_text(heavy, encoding="utf-8")
    read_loading_sheet(tmp_path / "flight2.loading.toml")  # in range for a sheet alone
    code, err = analyze(tmp_path / "flight2.csv", capsys)
    assert code == EXIT_BAD_INPUT
    assert "column 'takeoff.weight'" in err and "(from the loading sheet)" in err


def _reduced(cl: list[float], weight: float = 1500.0) -> pd.DataFrame:
    n = len(cl)
    return pd.DataFrame({"flight": ["F"] * n, "point": range(1, n + 1), "cl": cl,
                         "weight_lb": [weight] * n, "eas_kt": [80.0] * n, "ias_kt": [80.0] * n,
                         "nz_g": [1.0] * n, "source": ["f.csv"] * n,
                         "source_line_start": range(2, n + 2)})


def test_the_cl_limit_is_the_profile_clmax_with_its_margin():
    profile = load_profile(PROFILE)
    limit = CL_MARGIN * max(profile.clmax_clean, profile.clmax_landing)
    check_units_plausible(_reduced([0.3, limit - 1e-9]), profile, True, found := [])
    assert found == []
    from trimlog.errors import InputFileError

    with pytest.raises(InputFileError, match=r"f\.csv, line 3, column 'ias_kt'.*point 2: CL"):
        check_units_plausible(_reduced([0.3, limit + 1e-6]), profile, True, [])


def test_without_clmax_in_the_profile_an_absolute_limit_holds():
    from dataclasses import replace

    from trimlog.errors import InputFileError

    profile = replace(load_profile(PROFILE), clmax_clean=None, clmax_landing=None)
    check_units_plausible(_reduced([0.5, CL_ABSOLUTE_MAX - 0.01]), profile, True, [])
    with pytest.raises(InputFileError, match="a CLmax no light aircraft exceeds"):
        check_units_plausible(_reduced([0.5, CL_ABSOLUTE_MAX + 0.01]), profile, True, [])


def test_all_tiny_lift_coefficients_are_a_warning_finding():
    profile = load_profile(PROFILE)
    found: list = []
    check_units_plausible(_reduced([0.03, 0.05, 0.08]), profile, True, found)
    assert [f.code for f in found] == ["pipeline.plausibility.cl_all_tiny"]
    assert found[0].values["max_cl"] == pytest.approx(0.08)


def test_stall_speed_against_the_lift_equation():
    # CL = 295.37 n W / (Ve^2 S) in lb, kt, ft^2 (2 g0 / (rho0 kt^2), U.S. Standard
    # Atmosphere 1976 rho0); 1500 lb, 120 ft^2, 100 KEAS -> CL 0.3692 (worked by hand,
    # from memory of the US-units form).
    assert stall_speed_eas_kt(1500.0, 120.0, 0.3692) == pytest.approx(100.0, rel=1e-3)
    assert stall_speed_eas_kt(1500.0, 120.0, 0.3692, nz_g=4.0) == pytest.approx(200.0, rel=1e-3)


def test_a_kilogram_pound_factor_is_recognised_as_such():
    # 1 lb = 0.45359237 kg exactly (NIST SP 811, Appendix B.8).
    from trimlog.pipeline import plausibility

    factors = dict((text.split(" (")[0], f) for text, f in plausibility._RAISE_CL)
    assert factors["the weight was given in lb but declared kg"] == pytest.approx(1 / LB_IN_KG)
    assert factors["the speed column holds m/s, not kt"] == pytest.approx(1 / KT_IN_MS**2)
