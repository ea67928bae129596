"""Pieces every page shows (trimlog.dashboard.common)."""

from __future__ import annotations

import io

from PIL import Image

from trimlog.dashboard import common


class _Recorder:
    def __init__(self) -> None:
        self.calls: list[tuple[bytes, dict]] = []

    def image(self, data: bytes, **kwargs) -> None:
        self.calls.append((data, kwargs))


def test_a_figure_is_sent_as_png_not_re_encoded():
    """An opaque PNG (the Points page's log canvas is RGB) left to Streamlit's "auto"
    would go out as JPEG at quality 90; the helper says PNG, so the bytes go unchanged."""
    buf = io.BytesIO()
    Image.new("RGB", (40, 20), "white").save(buf, format="png")
    where = _Recorder()
    common.show_png(where, buf.getvalue(), "a caption")
    (data, kwargs), = where.calls
    assert data == buf.getvalue()
    assert kwargs == {"caption": "a caption", "output_format": "PNG"}
