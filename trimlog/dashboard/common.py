"""Pieces every page shows: cautions, errors, numbers with their intervals."""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from typing import Any

import streamlit as st

from trimlog import cautions
from trimlog.errors import TrimlogError

# The pages' number formatting is the views' one (re-exported here).
from trimlog.views.formatting import interval, with_interval  # noqa: F401
from trimlog.views.formatting import number as num  # noqa: F401

_MARKUP = re.compile(r"([\\`*_\[\]<>$~|#])")


def esc(text: object) -> str:
    """Text shown literally: file names and messages may hold markdown or LaTeX marks."""
    return _MARKUP.sub(r"\\\1", str(text))


def esc_label(text: object) -> str:
    """Text shown literally in a widget label: also no emoji or colour shortcodes (``:red[``)."""
    return esc(text).replace(":", "\\:")


def show_error(exc: TrimlogError | str, what: str = "") -> None:
    """A user's mistake, in the package's own words (never a traceback)."""
    st.error(esc(f"{what}{': ' if what else ''}{exc}"), icon=":material/error:")


def warn(text: str) -> None:
    """A warning of the package, shown literally."""
    st.warning(esc(text))


def estimate_note() -> None:
    """The estimate statement on its own, for the top of a results view."""
    with st.container(key="estimate"):
        st.warning(f"**Estimates, not an approval.** {cautions.ESTIMATE_STATEMENT}",
                   icon=":material/warning:")


def caution_box(extra: Sequence[str] = (), *, key: str = "", statement: bool = True) -> None:
    """The general flight-test cautions, always visible.

    The estimate statement leads the box unless the view shows it already
    (``statement=False`` after :func:`estimate_note`).
    """
    with st.container(border=True, key=f"cautions{key}"):
        st.markdown("**Flight-test cautions.**"
                    + (f" {cautions.ESTIMATE_STATEMENT}" if statement else ""))
        st.markdown("\n".join(f"- {c}" for c in (*cautions.GENERAL, *extra)))


def caution_list(texts: Iterable[str]) -> None:
    """Cautions that belong to one result, next to it."""
    st.caption("\n".join(f"- {c}" for c in texts))


def go_to(page: str) -> None:
    """Switch the router to another page (used as a button callback)."""
    st.session_state.page = page


def show_png(where: Any, png: bytes, caption: str) -> None:
    """Show a figure's PNG as it is (``where`` is ``st`` or a column).

    ``st.image`` left to choose re-encodes an opaque PNG as JPEG (slow, and blurs the
    lines and lettering of a plot); saying PNG sends the bytes unchanged.
    """
    where.image(png, caption=caption, output_format="PNG")
