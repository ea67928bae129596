"""A programme mixing point tables in calibrated airspeed with logs in indicated airspeed."""

from pathlib import Path

import numpy as np

from trimlog.pipeline import chain

SAMPLES = Path(__file__).resolve().parents[2] / "sample_logs"


def test_each_flight_keeps_its_own_kind_of_airspeed(tmp_path):
    profile = chain.load_profile(SAMPLES / "tinkerfinch_tf2.toml")
    table = (SAMPLES / "flight1_points.csv").read_text()
    typed_cas = tmp_path / "flight1_cas.csv"
    typed_cas.write_text(table.replace("test_point,ias_kt,", "test_point,cas_kt,"))
    logs = [SAMPLES / "flight2.csv", SAMPLES / "flight3.csv"]
    flights = [f for p in [typed_cas, *logs] for f in chain.load_flight_file(p, profile)]
    mixed = chain.analyze(flights, profile).points  # failed: "calibrated airspeed nan kt"
    plain = chain.analyze(
        [f for p in logs for f in chain.load_flight_file(p, profile)], profile).points
    rows = mixed["flight"] == "flight1_cas"
    # the typed column is calibrated airspeed: used as typed
    # (the trim points "TP*"; the wind-up turn's rows "WT*" are maneuvering points)
    typed = [float(line.split(",")[1]) for line in table.splitlines()[2:]
             if line.startswith("TP")]
    np.testing.assert_allclose(mixed.loc[rows, "cas_kt"].to_numpy(), typed)
    # the logs' indicated airspeed still goes through the position-error correction
    for flight in ("flight2", "flight3"):
        np.testing.assert_allclose(mixed.loc[mixed["flight"] == flight, "cas_kt"].to_numpy(),
                                   plain.loc[plain["flight"] == flight, "cas_kt"].to_numpy())
    assert np.isfinite(mixed["cas_kt"]).all()
