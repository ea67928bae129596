"""The flight-test report: rendered from the demo programme and read back with pypdf.

The demo data in sample_logs/ are synthetic flights of known truth
(sample_logs/README.md); the report's numbers are checked against the JSON
result of the same analysis, and the headline against that truth.
"""

from __future__ import annotations

import errno
import re

import pytest
from matplotlib.backends.backend_pdf import PdfPages
from pypdf import PdfReader

from trimlog import cautions
from trimlog.errors import TrimlogError
from trimlog.pipeline import chain as analysis
from trimlog.views import report
from trimlog.views.json_export import analysis_to_dict

TREND = [  # synthetic trend records in the history module's shape (no real flights)
    {"n_flights": 1, "label": "flight1_points", "stick_fixed_pct_mac": None,
     "ci95_pct_mac": None, "stick_free_pct_mac": None, "stick_free_ci95_pct_mac": None,
     "cg_pct_mac": 16.2},
    {"n_flights": 2, "label": "flight2", "stick_fixed_pct_mac": 39.0,
     "ci95_pct_mac": [35.0, 45.0], "stick_free_pct_mac": 34.5,
     "stick_free_ci95_pct_mac": [31.0, 40.0], "cg_pct_mac": 22.2},
]


FOOTER = re.compile(r"trimlog \S+ \| .*? page \d+ of \d+ "
                    r"Estimates from your own flight data, not an approval\.")


def _flat(text: str) -> str:
    return re.sub(r"\s+", " ", text)


def _body(pages: list[str]) -> str:
    """The text of every page without its footer, so a paragraph reads across a page break."""
    return " ".join(FOOTER.sub("", _flat(p)).strip() for p in pages)


@pytest.fixture(scope="module")
def demo(demo_profile, demo_flights):
    return demo_profile, list(demo_flights)  # read once for the session (tests/conftest.py)


@pytest.fixture(scope="module")
def full(demo_analysis):
    return demo_analysis


@pytest.fixture(scope="module")
def one_flight(demo):
    profile, flights = demo
    return analysis.analyze([f for f in flights if f.flight == "flight1_points"], profile)


@pytest.fixture(scope="module")
def rendered(full, tmp_path_factory):
    path = tmp_path_factory.mktemp("report") / "demo.pdf"
    written = report.write_report(full, path, trend=TREND)
    reader = PdfReader(written)
    pages = [page.extract_text() for page in reader.pages]
    return written, pages, _body(pages), analysis_to_dict(full)


@pytest.fixture(scope="module")
def refused(one_flight, tmp_path_factory):
    path = tmp_path_factory.mktemp("report") / "one.pdf"
    report.write_report(one_flight, path)
    return _body([p.extract_text() for p in PdfReader(path).pages])


def test_pages_and_sections(rendered, full):
    path, pages, text, _ = rendered
    assert path.suffix == ".pdf" and path.stat().st_size > 10_000
    logged = sum(1 for f in full.flights if f.samples is not None)
    # title, summary (2), loading + points (2), 5 figures, warnings (2), one page per log
    assert len(pages) >= 10 + logged
    for title in ("Flight-test report", "Headline results", "Neutral points",
                  "Static margins", "Elevator authority at the forward CG limit",
                  "Stabilizer incidence and shim", "Stabilizer shim: side view",
                  "Loading and flights", "Stabilized points",
                  "Trim curves", "Gradient against CG", "Stick force per dynamic pressure",
                  "Stick force against speed", "Neutral point after each flight", "Warnings",
                  "Time history: flight2", "Time history: flight5"):
        assert title in text, title
    assert "Time history: flight1_points" not in text  # a point table has no time history
    assert all(f"page {i} of {len(pages)}" in p for i, p in enumerate(pages, start=1))
    assert f"trimlog {full.software_version}" in text
    assert full.profile.name in text


def test_neutral_points_match_the_json(rendered):
    _, _, text, d = rendered
    for key in ("stick_fixed", "stick_fixed_two_stage", "stick_free"):
        np_ = d["neutral_point"][key]
        lo, hi = np_["ci95_pct_mac"]
        assert f"{np_['pct_mac']:.1f} %MAC [{lo:.1f}, {hi:.1f}] %MAC" in text, key
        assert f"{np_['station_in']:.2f} in" in text
    fixed = d["neutral_point"]["stick_fixed"]
    lo, hi = fixed["ci95_pct_mac"]
    assert (f"Stick-fixed neutral point: {fixed['pct_mac']:.1f} %MAC, 95 % interval "
            f"[{lo:.1f}, {hi:.1f}] %MAC") in text


def test_headline_near_the_demo_truth(rendered):
    # sample_logs/README.md: true stick-fixed neutral point 38.0 %MAC, stick-free 34.0 %MAC
    _, _, text, _ = rendered
    fixed = re.search(r"Stick-fixed neutral point: (\d+\.\d) %MAC", text)
    free = re.search(r"Stick-free neutral point: (\d+\.\d) %MAC", text)
    assert float(fixed.group(1)) == pytest.approx(38.0, abs=1.5)
    assert float(free.group(1)) == pytest.approx(34.0, abs=1.5)


def test_shim_and_margins_match_the_json(rendered):
    _, _, text, d = rendered
    inc = d["incidence"]
    assert inc["shim_recommended"]
    # the sheets to stack with their total, then the computed thickness rounded to
    # what its interval supports, and the residual elevator in words
    sheets = " + ".join(f"{t:.3f} in" for t in inc["shim_stock_sheets"])
    assert (f"stack {sheets} = {inc['shim_stock_thickness_in']:.3f} in / "
            f"{inc['shim_stock_thickness_mm']:.2f} mm") in text
    d_in, d_mm = inc["shim_decimals_in"], inc["shim_decimals_mm"]
    assert d_in < 3  # the demo's interval does not support thousandths
    lo, hi = inc["shim_thickness_ci95_in"]
    assert (f"computed {inc['shim_thickness_in']:.{d_in}f} in / "
            f"{inc['shim_thickness_mm']:.{d_mm}f} mm (95 %: {lo:.{d_in}f} to {hi:.{d_in}f} in)"
            ) in text
    assert _flat(inc["change_words"]) in text and "leading edge" in inc["change_words"]
    assert "elevator at cruise after the shim: " in text
    assert inc["shim_location"] in text
    assert _flat(inc["words"]) in text
    aft = next(m for m in d["static_margin"] if m["label"] == "aft CG limit")
    lo, hi = aft["stick_fixed_ci95_pct_mac"]
    assert f"aft CG limit {aft['cg_pct_mac']:.1f} {aft['stick_fixed_pct_mac']:.1f} " \
           f"[{lo:.1f}, {hi:.1f}]" in text
    for g in d["gradients"]:
        lo, hi = g["delev_dcl_ci95_deg"]
        assert f"{g['delev_dcl_deg']:.2f} [{lo:.2f}, {hi:.2f}]" in text
        assert f"{g['dfs_dv_lbf_per_kt']:.3f}" in text
    case = d["elevator_authority"]["cases"][0]
    assert f"{case['elevator_deg']:+.1f} [{case['pi95_deg'][0]:+.1f}, " in text


def test_every_caution_and_warning_is_printed(rendered):
    _, pages, text, d = rendered
    assert cautions.ESTIMATE_STATEMENT in _flat(pages[0])
    for caution in d["cautions"]:
        assert _flat(caution) in text, caution
    for warning in d["warnings"]:
        assert _flat(warning) in text, warning


def test_points_table_lists_every_point(rendered):
    _, _, text, d = rendered
    for p in d["points"][:3] + d["points"][-3:]:
        assert f"{p['flight']} {p['point']} " in text
        assert f"{p['cl']:.3f}" in text
    assert not re.search(r"-0\.0+\b", text)  # a value that rounds to zero has no sign


def test_not_identifiable_report_gives_the_verdict_and_no_number(refused, one_flight):
    d = analysis_to_dict(one_flight)
    assert not d["neutral_point"]["stick_fixed"]["identifiable"]
    reason = d["neutral_point"]["stick_fixed"]["reason"]
    assert f"Stick-fixed neutral point: not identifiable: {reason}" in refused
    assert "stick-fixed, pooled (headline) not identifiable" in refused
    assert not re.search(r"neutral point: \d", refused)
    assert not re.search(r"neutral point, (pooled|two-stage): \d", refused)
    assert "Neutral point not identifiable" in refused  # on the gradient figure
    for caution in d["cautions"]:
        assert _flat(caution) in refused


def test_html_report_is_self_contained(one_flight, tmp_path):
    path = report.write_report(one_flight, tmp_path / "one.html")
    page = path.read_text(encoding="utf-8")
    assert page.startswith("<!DOCTYPE html>")
    # four stability figures, two of maneuvering (the flight ends with a wind-up turn), and
    # the shim's side view when there is an incidence result
    drawing = one_flight.primary.incidence is not None
    assert page.count("data:image/png;base64,") == 6 + drawing
    assert ("Stabilizer shim: side view" in page) == drawing
    assert "http://" not in page and "https://" not in page
    assert "not identifiable" in page
    assert cautions.ESTIMATE_STATEMENT.replace("'", "&#x27;") in page


def test_disk_full_leaves_no_file(one_flight, tmp_path, monkeypatch):
    target = tmp_path / "full.pdf"

    def no_space(self, *args, **kwargs):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(PdfPages, "savefig", no_space)
    with pytest.raises(TrimlogError, match="disk is full"):
        report.write_report(one_flight, target)
    assert list(tmp_path.iterdir()) == []


def test_failed_write_keeps_the_previous_report(one_flight, tmp_path, monkeypatch):
    target = tmp_path / "old.pdf"
    target.write_bytes(b"previous report")

    def no_space(self, *args, **kwargs):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(PdfPages, "savefig", no_space)
    with pytest.raises(TrimlogError, match="no report was written"):
        report.write_report(one_flight, target)
    assert target.read_bytes() == b"previous report"
    assert [p.name for p in tmp_path.iterdir()] == ["old.pdf"]


def test_unwritable_targets(one_flight, tmp_path):
    with pytest.raises(TrimlogError, match="folder .* does not exist"):
        report.write_report(one_flight, tmp_path / "missing" / "r.pdf")
    with pytest.raises(TrimlogError, match="it is a folder"):
        report.write_report(one_flight, tmp_path)
