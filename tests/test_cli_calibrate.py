"""``trimlog calibrate``: the JSON contract, exit codes 0/1/2, and --write-profile."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests import synthetic_calibration as synth
from trimlog.cli import EXIT_BAD_INPUT, EXIT_OK, EXIT_REFUSED, main
from trimlog.input.profile import load_profile

SAMPLES = Path(__file__).resolve().parent.parent / "sample_logs"
PROFILE = SAMPLES / "tinkerfinch_tf2.toml"
SIX = (10.0, 70.0, 130.0, 190.0, 250.0, 310.0)
SPEED_KEYS = {"ias_kt", "cas_kt", "cas_ci95_kt", "delta_v_kt", "tas_kt", "wind_kt",
              "wind_from_deg", "n_legs", "pressure_alt_ft"}


def _legs_file(tmp_path, rows, name="legs.csv"):
    path = tmp_path / name
    path.write_bytes(synth.csv_text(rows))
    return path


def test_calibrate_writes_the_contract_and_a_profile(tmp_path, capsys):
    legs = _legs_file(tmp_path, synth.legs((60.0, 80.0, 100.0, 120.0), SIX))
    out, new = tmp_path / "cal.json", tmp_path / "new.toml"
    code = main(["calibrate", str(legs), "--aircraft", str(PROFILE), "--json", str(out),
                 "--write-profile", str(new)])
    assert code == EXIT_OK
    data = json.loads(out.read_text())
    assert {"speeds", "table", "warnings"} <= set(data)
    assert all(SPEED_KEYS <= set(s) for s in data["speeds"]) and len(data["speeds"]) == 4
    assert set(data["table"]) >= {"ias_kt", "cas_kt"}
    assert data["table"]["ias_kt"] == [60.0, 80.0, 100.0, 120.0]
    assert all(isinstance(w, str) for w in data["warnings"])
    assert all(len(s["cas_ci95_kt"]) == 2 for s in data["speeds"])
    assert "KCAS" in capsys.readouterr().out
    # the new profile: the table filled, everything else byte for byte
    old_text, new_text = PROFILE.read_text(), new.read_text()
    profile = load_profile(new)
    assert list(profile.position_error_ias_kt) == data["table"]["ias_kt"]
    assert list(profile.position_error_cas_kt) == data["table"]["cas_kt"]
    before, _, rest = old_text.partition("[airspeed_calibration]")
    after_new, _, rest_new = new_text.partition("[airspeed_calibration]")
    assert before == after_new
    assert rest[rest.index("\n\n"):] == rest_new[rest_new.index("\n\n"):]


def test_calibrate_appends_a_table_to_a_profile_without_one(tmp_path):
    text = PROFILE.read_text()
    start = text.index("[airspeed_calibration]")
    end = text.index("[logger]")
    bare = tmp_path / "bare.toml"
    bare.write_text(text[:start] + text[end:])
    legs = _legs_file(tmp_path, synth.legs((60.0, 100.0), SIX))
    new = tmp_path / "new.toml"
    assert main(["calibrate", str(legs), "--aircraft", str(bare), "--write-profile", str(new),
                 "--quiet"]) == EXIT_OK
    assert new.read_text().startswith(bare.read_text())
    assert load_profile(new).position_error_ias_kt == (60.0, 100.0)


def test_two_legs_only_exit_1_and_no_profile(tmp_path):
    legs = _legs_file(tmp_path, synth.legs((70.0,), (0.0, 180.0)))
    out, new = tmp_path / "cal.json", tmp_path / "new.toml"
    code = main(["calibrate", str(legs), "--aircraft", str(PROFILE), "--json", str(out),
                 "--write-profile", str(new), "--quiet"])
    assert code == EXIT_REFUSED
    data = json.loads(out.read_text())
    assert data["speeds"] == [] and data["table"] == {"ias_kt": [], "cas_kt": []}
    assert "pipeline.calibration.too_few_legs" in {f["code"] for f in data["findings"]}
    assert not new.exists()


def test_bad_input_exit_2_names_file_line_and_column(tmp_path, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("ias_kt,pressure_alt_ft,gps_groundspeed_kt\n70,3000,80\n")
    assert main(["calibrate", str(bad), "--aircraft", str(PROFILE)]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert "bad.csv" in err and "line 1" in err and "GPS track" in err
    assert "Traceback" not in err
    worse = tmp_path / "worse.csv"
    worse.write_text("ias_kt,pressure_alt_ft,gps_groundspeed_kt,gps_track_deg\n"
                     "70,3000,80,90\n70,3000,80 kt,abc\n70,3000,8000,90\n")
    assert main(["calibrate", str(worse), "--aircraft", str(PROFILE)]) == EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert "worse.csv" in err and "gps_groundspeed_kt" in err


@pytest.mark.parametrize("header", ["GS (kt)", "ground speed [mph]", "gps_speed"])
def test_ground_speed_synonyms_and_units(tmp_path, header):
    rows = synth.legs((70.0, 100.0), SIX)
    text = synth.csv_text(rows).decode().replace("gps_groundspeed_kt", header)
    if "mph" in header:
        lines = text.splitlines()
        body = []
        for line in lines[1:]:
            cells = line.split(",")
            cells[4] = f"{float(cells[4]) * 1852.0 / 1609.344:.6f}"
            body.append(",".join(cells))
        text = "\n".join([lines[0], *body]) + "\n"
    path = tmp_path / "legs.csv"
    path.write_text(text)
    out = tmp_path / "cal.json"
    assert main(["calibrate", str(path), "--aircraft", str(PROFILE), "--json", str(out),
                 "--quiet"]) == EXIT_OK
    speeds = json.loads(out.read_text())["speeds"]
    assert speeds[0]["delta_v_kt"] == pytest.approx(float(synth.true_delta_v(70.0)), abs=1e-3)


def test_json_follows_its_schema(tmp_path):
    # the contract pinned by trimlog/views/calibration.schema.json
    from importlib import resources

    import jsonschema

    schema = json.loads(resources.files("trimlog.views").joinpath(
        "calibration.schema.json").read_text("utf-8"))
    jsonschema.Draft202012Validator.check_schema(schema)
    cases = [synth.legs((60.0, 90.0, 120.0), SIX),          # intervals
             synth.legs((60.0, 90.0), (0.0, 120.0, 240.0)),  # three legs: null intervals
             synth.legs((70.0,), (0.0, 180.0))]              # not determinable
    for k, rows in enumerate(cases):
        out = tmp_path / f"cal{k}.json"
        main(["calibrate", str(_legs_file(tmp_path, rows, f"legs{k}.csv")), "--aircraft",
              str(PROFILE), "--json", str(out), "--quiet"])
        jsonschema.validate(json.loads(out.read_text()), schema)
