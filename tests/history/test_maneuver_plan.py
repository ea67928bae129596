"""The plan of the history (``trimlog plan/trend --db``) keeps the maneuvering limits of analyze.

Synthetic point tables of known truth (invented numbers, no real aircraft) unless
a line says otherwise.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest

from trimlog.cli import main
from trimlog.history import service as history
from trimlog.history.store import open_store

SAMPLES = Path(__file__).resolve().parents[2] / "sample_logs"
PROFILE = SAMPLES / "tinkerfinch_tf2.toml"
DEMO_LOGS = sorted(p for p in SAMPLES.glob("flight*.csv") if p.is_file())

# Synthetic truth [fraction of MAC]: neutral points well aft, a stick-free maneuver
# point whose stick force per g falls to the minimum (about 5.4 lbf/g) near 28 %MAC.
HN, HN_FREE, HM, HM_FREE = 0.40, 0.38, 0.45, 0.43
K_TRIM, K_FREE = 7.0, 3.0          # force gradients [ft^2] (synthetic)
CGS = (0.15, 0.18, 0.21, 0.24, 0.26)
MANEUVER_CODES = {"stick_fixed_mp", "stick_free_mp", "min_stick_force_per_g"}


def _point_table(h: float, rng: np.random.Generator, weight: float = 1550.0) -> str:
    """One flight: six trim points at 1 g and a wind-up turn in five steps (synthetic)."""
    rows = ["synthetic programme (invented numbers)",
            "test_point,ias_kt,pressure_alt_ft,oat_c,ELEV_POS,stick_force_lbf,weight_lb,cg_in,"
            "flap_deg,nz_g"]
    cg_in, v_trim, ws = 58.0 + 53.0 * h, 100.0, weight / 120.0
    for i, v in enumerate((70, 80, 90, 100, 110, 120), 1):
        cl = weight / (v**2 / 295.37 * 120.0)
        e = 2.0 + 10.0 * (HN - h) * cl + 0.05 * rng.standard_normal()
        f = K_TRIM * (HN_FREE - h) * ws * (1 - v**2 / v_trim**2) + 0.2 * rng.standard_normal()
        rows.append(f"TP{i},{v},500,15,{e:.2f},{f:.2f},{weight:.0f},{cg_in:.2f},0,1.00")
    cl1 = weight / (v_trim**2 / 295.37 * 120.0)
    e_trim = 2.0 + 10.0 * (HN - h) * cl1
    for j, nz in enumerate((1.2, 1.4, 1.6, 1.8, 2.0), 1):
        e = e_trim + math.degrees(cl1 * (HM - h)) * (nz - 1) + 0.05 * rng.standard_normal()
        f = K_FREE * (HM_FREE - h) * ws * (nz - 1) + 0.2 * rng.standard_normal()
        rows.append(f"WU{j},{v_trim:.0f},500,15,{e:.2f},{f:.2f},{weight:.0f},{cg_in:.2f},0,{nz:.2f}")
    return "\n".join(rows) + "\n"


def _history(directory: Path, logs: list[Path], profile_text: str) -> Path:
    db = directory / "history.sqlite"
    with open_store(db) as store:
        for log in logs:
            history.import_log(store, log, profile_text=profile_text, profile_source="profile")
    return db


@pytest.fixture(scope="module")
def synthetic(tmp_path_factory):
    directory = tmp_path_factory.mktemp("synthetic")
    rng = np.random.default_rng(3)
    logs = []
    for k, h in enumerate(CGS, 1):
        path = directory / f"syn{k}.csv"
        path.write_text(_point_table(h, rng))
        logs.append(path)
    return _history(directory, logs, PROFILE.read_text())


def _agree(plan, analysed) -> None:
    assert plan.limited_by == analysed.limited_by
    assert plan.reason == analysed.reason
    if analysed.max_cg_pct_mac is None:
        assert plan.max_cg_pct_mac is None
    else:
        assert plan.max_cg_pct_mac == pytest.approx(analysed.max_cg_pct_mac, abs=1e-9)
        assert plan.max_cg_station_in == pytest.approx(analysed.max_cg_station_in, abs=1e-9)


def test_plan_keeps_the_maneuvering_limit_like_analyze_on_synthetic_data(synthetic):
    with open_store(synthetic) as store:
        plan = history.trend(store).next_step
        full = history.analyze_history(store)
    analysed = full.primary.stability.next_step
    # the minimum stick force per g, not the neutral points or the policy step, sets the step
    assert analysed.limited_by in MANEUVER_CODES and analysed.max_cg_pct_mac is not None
    assert analysed.max_cg_pct_mac == pytest.approx(
        full.maneuvering.cg_limits[analysed.limited_by])
    assert analysed.most_aft_flown_pct_mac < analysed.max_cg_pct_mac < 29.0
    _agree(plan, analysed)


def test_plan_min_margin_applies_to_the_maneuver_margins_too(synthetic, tmp_path):
    # A wide policy margin: the plan's --min-margin is kept ahead of the maneuver points too,
    # exactly as analyze does with the same margin in the profile.
    text = PROFILE.read_text().replace("min_static_margin = 5.0", "min_static_margin = 12.0")
    assert "min_static_margin = 12.0" in text
    logs = sorted(p for p in synthetic.parent.glob("syn*.csv"))
    wide = _history(tmp_path, logs, text)
    with open_store(synthetic) as store:
        plan = history.trend(store, min_margin_pct_mac=12.0).next_step
    with open_store(wide) as store:
        analysed = history.analyze_history(store).primary.stability.next_step
    _agree(plan, analysed)


def test_cli_plan_json_names_the_maneuvering_limit(synthetic, tmp_path):
    out = tmp_path / "plan.json"
    assert main(["plan", "--db", str(synthetic), "--json", str(out)]) == 0
    plan = json.loads(out.read_text())
    assert plan["limited_by"] in MANEUVER_CODES
    assert "stick force per g" in plan["reason"] or "maneuver margin" in plan["reason"]


def test_trend_carries_the_maneuver_point_after_each_flight(synthetic):
    with open_store(synthetic) as store:
        data = history.trend(store).to_dict()
        full = history.analyze_history(store)
    trend = data["trend"]
    assert len(trend) == len(CGS)
    # too few flights first: the maneuver point cannot be said yet, and says why
    first = trend[0]["maneuver_point"]
    assert not first["stick_fixed"]["identifiable"] and first["stick_fixed"]["reason"]
    assert first["stick_fixed"]["pct_mac"] is None
    # after the last flight it is the full analysis's
    last = trend[-1]["maneuver_point"]
    for kind in ("stick_fixed", "stick_free"):
        mine = getattr(full.maneuvering, kind)
        assert last[kind]["identifiable"] == mine.identifiable
        if mine.identifiable:
            assert last[kind]["pct_mac"] == pytest.approx(mine.pct_mac, abs=1e-9)
            assert last[kind]["ci95_pct_mac"] == pytest.approx(list(mine.ci95_pct_mac))
    assert last["n_points"] == 5 * len(CGS)
    # the existing keys are still there
    assert {"stick_fixed_pct_mac", "ci95_pct_mac", "stick_free_pct_mac"} <= set(trend[-1])


@pytest.mark.parametrize("margin", [None, 1.0])
def test_plan_and_analyze_agree_on_the_demo(tmp_path, margin):
    # The demo programme; with a 1 %MAC policy and the aft limit moved aft the minimum stick
    # force per g is what stops the next step (demo data, invented aircraft).
    text = PROFILE.read_text()
    if margin is not None:
        text = (text.replace('cg_aft = "74.5 in"', 'cg_aft = "80 in"')
                .replace("min_static_margin = 5.0", f"min_static_margin = {margin}"))
    db = _history(tmp_path, DEMO_LOGS, text)
    with open_store(db) as store:
        plan = history.trend(store).next_step
        full = history.analyze_history(store)
    analysed = full.primary.stability.next_step
    _agree(plan, analysed)
    if margin is not None:
        assert analysed.limited_by in MANEUVER_CODES
