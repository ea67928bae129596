"""Tests of trimlog.views.pdf_layout: blocks flowed down letter pages."""

import pytest

from trimlog.views.pdf_layout import Break, Heading, Para, Table, render_pdf


def _texts(fig):
    return [t.get_text() for t in fig.texts]


def test_long_table_continues_on_new_pages_with_its_header():
    rows = tuple((str(i), f"value {i}") for i in range(200))
    pages = render_pdf([Heading("Points", 1), Table(("number", "what"), rows)], "foot")
    assert len(pages) >= 3
    for fig in pages:
        assert any(t.startswith("number") for t in _texts(fig)), "header on every page"
    body = [t for fig in pages for t in _texts(fig) if t.split()[:1] and t.split()[0].isdigit()]
    assert len(body) == 200  # every row drawn once


def test_pages_are_numbered_and_carry_the_footer():
    pages = render_pdf([Para("one"), Break(), Para("two")], "trimlog | demo")
    assert len(pages) == 2
    for i, fig in enumerate(pages, start=1):
        texts = _texts(fig)
        assert f"page {i} of 2" in texts and "trimlog | demo" in texts
        assert "Estimates from your own flight data, not an approval." in texts


def test_long_paragraph_wraps_within_the_page_width():
    words = " ".join(["stabilized"] * 300)
    (page, *_rest) = render_pdf([Para(words)], "")
    lines = [t for t in _texts(page) if t.startswith("stabilized")]
    assert len(lines) > 10
    assert max(len(line) for line in lines) < 120


def _pdf(blocks):
    import io

    from pypdf import PdfReader

    from trimlog.views.pdf_layout import save_pdf

    buf = io.BytesIO()
    save_pdf(render_pdf(blocks, "foot"), buf, "t")
    return buf.getvalue(), "\n".join(p.extract_text() for p in PdfReader(buf).pages)


def _negative_plot():
    from trimlog.views.pdf_layout import Plot

    def draw(fig, rect):
        ax = fig.add_axes(rect)
        ax.plot([-3.0, 1.0], [-2.0, 2.0], label="flight A")
        ax.legend()

    return Plot("Signs", draw, "negative ticks")


def test_plain_text_is_set_in_the_core_fonts_with_ascii_minus_signs():
    raw, text = _pdf([Heading("Report", 0), Para("elevator -1.2 deg"), _negative_plot()])
    assert b"/Helvetica" in raw and b"FontFile2" not in raw  # nothing embedded
    assert "-2" in text and "?" not in text  # a tick label's minus is not replaced


def test_characters_outside_the_core_fonts_keep_the_embedded_font():
    raw, text = _pdf([Heading("Żuraw, flight Ω", 0), Para("τ estimated"), _negative_plot()])
    assert b"FontFile2" in raw  # TrueType embedded
    assert "Żuraw" in text and "Ω" in text and "τ" in text


_TWO_PROCESS_SCRIPT = r'''
import io, json, os, sys
from pypdf import PdfReader
from trimlog.views import pdf_layout as p

def draw(fig, rect):
    ax = fig.add_axes(rect)
    ax.plot([0, 1, 2], [3, 1, 2], label="flight A")
    ax.legend()

blocks = []
for i in range(4):
    blocks += [p.Heading(f"Section {i}", 1), p.Para("text " * 200),
               p.Table(("n", "what"), tuple((str(k), f"row {i}.{k}") for k in range(40))),
               p.Plot(f"Figure {i}", draw, f"caption {i}")]
parent = os.getpid()
forks = []
real_fork = os.fork
def counting_fork():
    forks.append(1)
    return real_fork()
os.fork = counting_fork
if sys.argv[1] in ("child fails", "child hangs"):
    import time
    real_write = p._write_pages
    p.CHILD_WAIT_S = 0.2
    def failing(pages, fh, metadata):
        if os.getpid() != parent:
            if sys.argv[1] == "child hangs":
                time.sleep(3600)
            raise RuntimeError("child fails")
        return real_write(pages, fh, metadata)
    p._write_pages = failing

def texts(data):
    reader = PdfReader(io.BytesIO(data))
    return {"pages": [page.extract_text() for page in reader.pages],
            "title": reader.metadata.title, "creator": reader.metadata.creator}

out = {}
for mode in ("split", "alone"):
    p.MIN_PAGES_TO_SPLIT = 6 if mode == "split" else 10**9
    buf = io.BytesIO()
    p.save_pdf(p.render_pdf(blocks, "foot"), buf, "the title")
    out[mode] = texts(buf.getvalue())
out["forks"] = len(forks)
try:  # every child was reaped (a hanging one killed)
    os.waitpid(-1, os.WNOHANG)
    out["children left"] = True
except ChildProcessError:
    out["children left"] = False
print(json.dumps(out))
'''


def _two_process_run(mode):
    import json
    import os
    import subprocess
    import sys

    if not hasattr(os, "fork"):
        pytest.skip("no os.fork here: the PDF is always drawn in one process")
    if len(os.sched_getaffinity(0)) < 2:
        pytest.skip("one CPU: the PDF is always drawn in one process")
    done = subprocess.run([sys.executable, "-c", _TWO_PROCESS_SCRIPT, mode], check=True,
                          capture_output=True, text=True, timeout=300)
    return json.loads(done.stdout.strip().splitlines()[-1])


def test_pages_drawn_in_two_processes_are_the_pages_drawn_in_one():
    # In a fresh interpreter: the test session may run threads, and then no fork is made.
    out = _two_process_run("plain")
    assert out["forks"] == 1
    assert len(out["split"]["pages"]) >= 8
    assert out["split"] == out["alone"]
    assert out["split"]["title"] == "the title" and out["split"]["creator"] == "trimlog"
    assert not out["children left"]


@pytest.mark.parametrize("mode", ["child fails", "child hangs"])
def test_a_failing_second_process_leaves_the_whole_pdf_drawn_in_one(mode):
    out = _two_process_run(mode)
    assert out["forks"] == 1
    assert out["split"] == out["alone"]
    assert not out["children left"]
