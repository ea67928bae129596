"""The report's text, read from the typed result: golden copy, findings order, cautions once.

The demo data in sample_logs/ are invented flights of known truth (sample_logs/README.md).
``data/report_demo.txt`` is a regression copy (numbers the code produced, not published
values) of the demo report's blocks as text, without the time stamp.  When the report was
moved from the JSON dict to the typed result it was compared block for block with the
dict-based version on the demo's five flights, flights 1-2, 1-3 and flight 2 alone: all
identical.  If you change the report's wording on purpose, regenerate the copy with
``TRIMLOG_REGENERATE_GOLDEN=1 pytest tests/views/test_report_text.py`` and read the diff.
"""

from __future__ import annotations

import dataclasses
import difflib
import os
from pathlib import Path

import pytest

from trimlog import cautions, findings
from trimlog.findings import Severity
from trimlog.pipeline import chain as analysis
from trimlog.views import report
from trimlog.views.pdf_layout import Break, Heading, Para, Plot, Table

SAMPLES = Path(__file__).resolve().parents[2] / "sample_logs"
GOLDEN = Path(__file__).resolve().parent / "data" / "report_demo.txt"


def _as_text(blocks) -> list[str]:
    out = []
    for b in blocks:
        if isinstance(b, Heading):
            out.append(f"H{b.level} {b.text}")
        elif isinstance(b, Para):
            out.append(f"P[{b.kind}] {b.text}")
        elif isinstance(b, Table):
            out.append("T " + " | ".join(b.headers))
            out += ["  " + " | ".join(r) for r in b.rows]
        elif isinstance(b, Plot):
            out.append(f"F {b.title} :: {b.caption}")
        elif isinstance(b, Break):
            out.append("----")
    return out


@pytest.fixture(scope="module")
def demo():
    profile = analysis.load_profile(SAMPLES / "tinkerfinch_tf2.toml")
    flights = []
    for path in sorted(p for p in SAMPLES.glob("*.csv") if p.is_file()):
        flights += analysis.load_flight_file(path, profile)
    return analysis.analyze(flights, profile)


@pytest.fixture(scope="module")
def lines(demo):
    return _as_text(report.report_blocks(demo, None, "TIME"))


def test_the_report_text_matches_its_golden_copy(lines):
    # the sample files are named relative to the checkout: keep the copy independent of it
    text = "\n".join(lines).replace(str(SAMPLES), "sample_logs") + "\n"
    if os.environ.get("TRIMLOG_REGENERATE_GOLDEN"):
        GOLDEN.write_text(text, encoding="utf-8")
    golden = GOLDEN.read_text(encoding="utf-8")
    diff = "\n".join(difflib.unified_diff(golden.splitlines(), text.splitlines(),
                                          "golden", "now", lineterm=""))
    assert text == golden, "the report text changed (see the module docstring):\n" + diff[:4000]


def test_the_report_does_not_read_the_json_dict():
    source = Path(report.__file__).read_text(encoding="utf-8")
    assert "analysis_to_dict" not in source and "json_export" not in source


def test_findings_most_severe_first_then_reading_notes_in_the_appendix(demo, lines):
    start = lines.index("H1 Warnings and other findings (most severe first)")
    bullets = []
    for line in lines[start + 1:]:
        if not line.startswith("P[bullet] "):
            break
        bullets.append(line.removeprefix("P[bullet] "))
    labels = [b.split(":")[0] for b in bullets]
    rank = {"WARNING": 3, "Caution": 2, "Note": 1}
    assert labels and [rank[x] for x in labels] == sorted((rank[x] for x in labels),
                                                           reverse=True)
    assert any("up stop is reached before CLmax" in b for b in bullets if
               b.startswith("WARNING"))
    reading = [f for f in demo.findings if findings.is_reading_note(f)]
    assert reading
    appendix = lines.index("H1 Appendix: notes from reading the files")
    assert appendix > start and lines[appendix:] == lines[-len(lines[appendix:]):]
    for f in reading:
        assert not any(f.message in b for b in bullets)
        assert any(f.message in x for x in lines[appendix:])


def test_every_caution_once(demo, lines):
    text = "\n".join(lines)
    for c in (*demo.cautions, cautions.ESTIMATE_STATEMENT):
        assert text.count(c) == 1, c


def test_units_assumed_are_shown_in_the_flight_table(demo):
    f = demo.flights[2]
    assumed = findings.finding("input.log.unit_assumed", Severity.CAUTION,
                               findings.Subject(source=f.source), header="FS", unit="lbf")
    changed = dataclasses.replace(demo, flights=tuple(
        dataclasses.replace(g, log=dataclasses.replace(g.log, findings=(*g.log.findings,
                                                                        assumed)))
        if g is f else g for g in demo.flights))
    text = _as_text(report.report_blocks(changed, None, "TIME"))
    loading = text.index("H1 Loading and flights")
    note = next(x for x in text[loading:] if x.startswith("P[box] Units assumed"))
    assert f"{f.flight}: 'FS' lbf" in note and "kt, lbf, degC or ft" in note


def test_tighten_the_estimate_is_one_sentence(demo, lines):
    nxt = demo.primary.stability.next_cg
    i = lines.index("H2 To tighten the estimate")
    para = lines[i + 1]
    assert para.startswith("P[body] A flight near ")
    assert f"{nxt.current_se_pct_mac:.2f} to about {nxt.predicted_se_pct_mac:.2f} %MAC" in para
    assert "not a step aft" in para and " - " not in para


def test_trend_figure_gets_the_margin_policy_bound(demo):
    step = demo.primary.stability.next_step
    fixed, free = (demo.primary.stability.stick_fixed.neutral_point,
                   demo.primary.stability.stick_free.neutral_point)
    # the bound is the most forward lower 95 % bound less the policy minimum (the core's rule)
    low = min(fixed.ci95_pct_mac[0], free.ci95_pct_mac[0])
    assert step.margin_bound_pct_mac == pytest.approx(low - step.min_static_margin_pct_mac)
    assert report._trend_lines(demo)["next_step"]["margin_bound_pct_mac"] == (
        step.margin_bound_pct_mac)


def test_trend_plot_draws_the_margin_policy_bound(demo):
    import matplotlib

    matplotlib.use("Agg")
    from trimlog.views import plots

    records = [{"n_flights": 1, "label": "f1", "stick_fixed_pct_mac": 38.0,
                "ci95_pct_mac": [36.0, 40.0], "stick_free_pct_mac": None,
                "stick_free_ci95_pct_mac": None, "cg_pct_mac": 20.0}]  # synthetic record
    ax = plots.neutral_point_trend(records, **report._trend_lines(demo))
    labels = ax.get_legend_handles_labels()[1]
    bound = demo.primary.stability.next_step.margin_bound_pct_mac
    assert any(x.startswith(f"margin policy: {bound:.1f} %MAC") for x in labels), labels
    assert any(x.startswith("aft CG limit") for x in labels)


def test_a_point_left_out_shows_its_reason(demo):
    profile = demo.profile
    flights = [f for f in demo.flights if f.flight in ("flight2", "flight3")]
    a = analysis.analyze(flights, profile, exclusions={("flight2", 3)},
                         exclusion_reasons={("flight2", 3): "turbulence"})
    rows = [x for x in _as_text(report.report_blocks(a, None, "TIME"))
            if x.startswith("  flight2 | 3 |")]
    assert len(rows) == 1 and " | NO (turbulence) | " in rows[0]


def test_before_and_after_the_change_is_in_the_shim_section(demo, lines):
    from trimlog.views.shim_text import before_after_text

    start = lines.index("H2 Stabilizer incidence and shim")
    end = next(i for i in range(start + 1, len(lines)) if lines[i].startswith("H"))
    assert "P[body] " + before_after_text(demo.primary.before_after) in lines[start:end]
