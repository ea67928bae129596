"""What the user gave the dashboard, kept in Streamlit's session state.

Uploaded bytes live only here, in memory (and in the history store when the
user saves); they are never written to a file, and an uploaded file's name is
kept as text for messages and flight names, never used as a path.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import streamlit as st

from trimlog.demo import model as demo
from trimlog.files import file_stem
from trimlog.pipeline.chain import LOADING_SHEET_SUFFIX

DEMO_DIR = Path(__file__).resolve().parent.parent.parent / "sample_logs"
DEMO_SOURCE = demo.PROFILE_FILE


@dataclass(frozen=True)
class FileBytes:
    """One file as the user gave it: its name (text only) and its bytes."""

    name: str
    raw: bytes = field(repr=False)
    digest: str = ""

    @classmethod
    def of(cls, name: str, raw: bytes) -> FileBytes:
        """Wrap bytes with their SHA-256 (the cache key)."""
        return cls(name, bytes(raw), hashlib.sha256(raw).hexdigest())

    @property
    def stem(self) -> str:
        """The name up to its first dot (``flight2.loading.toml`` -> ``flight2``)."""
        return file_stem(self.name)


@dataclass(frozen=True)
class Inputs:
    """Everything an analysis depends on; ``key`` identifies it for the caches."""

    profile_text: str
    profile_source: str
    logs: tuple[tuple[FileBytes, FileBytes | None], ...]
    min_hold_s: float | None
    exclusions: tuple[tuple[str, int], ...]
    inclusions: tuple[tuple[str, int], ...] = ()
    #: The history database's state when the analysis is of the programme (saved flights
    #: plus these), None for these flights alone.
    programme: tuple | None = None
    #: Why the user left points out: (flight, point, reason), reasons in words.
    exclusion_reasons: tuple[tuple[str, int, str], ...] = ()

    @property
    def data_key(self) -> str:
        """Digest of the profile, the minimum hold and the files: not the choices of points."""
        h = hashlib.sha256()
        for part in (self.profile_text, self.profile_source, repr(self.min_hold_s)):
            h.update(part.encode("utf-8") + b"\0")
        for log, sheet in self.logs:
            h.update(f"{log.name}\0{log.digest}\0".encode())
            h.update(b"-" if sheet is None else f"{sheet.name}\0{sheet.digest}".encode())
        return h.hexdigest()

    @property
    def key(self) -> str:
        """Digest of every input."""
        h = hashlib.sha256(self.data_key.encode("ascii"))
        for part in (repr(self.exclusions), repr(self.inclusions), repr(self.programme),
                     repr(self.exclusion_reasons)):
            h.update(part.encode("utf-8") + b"\0")
        return h.hexdigest()


def is_loading_sheet(name: str) -> bool:
    """Whether an uploaded file is a loading sheet (a TOML file) rather than a log."""
    return name.lower().endswith(".toml")


@st.cache_resource(show_spinner="Writing the demo flights...")
def _generated_demo() -> dict[str, bytes]:
    """The demo files, written by :func:`trimlog.demo.files.write_demo`.

    Used where no ``sample_logs`` folder sits beside the package (an installed wheel).
    """
    import tempfile

    from trimlog.demo.files import write_demo

    with tempfile.TemporaryDirectory(prefix="trimlog-demo-") as tmp:
        return {p.name: p.read_bytes() for p in write_demo(Path(tmp)) if p.is_file()}


def _demo_files() -> tuple[dict[str, FileBytes], dict[str, FileBytes]]:
    logs, sheets = {}, {}
    if DEMO_DIR.is_dir():
        files = {p.name: p.read_bytes() for p in sorted(DEMO_DIR.iterdir()) if p.is_file()}
    else:
        files = _generated_demo()
    for name in sorted(files):
        if name.startswith("flight") and name.endswith(".csv"):
            logs[name] = FileBytes.of(name, files[name])
        elif name.endswith(LOADING_SHEET_SUFFIX):
            sheets[name] = FileBytes.of(name, files[name])
    return logs, sheets


_WIDGET_KEYS = ("use_demo", "min_hold_s", "points_flight", "want_maneuver_figures")


def _new_session_values() -> dict[str, Any]:
    """What a new session starts with: the demo aircraft with its flights."""
    demo_logs, demo_sheets = _demo_files()
    return {
        "profile_text": demo.PROFILE_TOML,
        "profile_source": DEMO_SOURCE,
        "demo_logs": demo_logs,
        "demo_sheets": demo_sheets,
        "use_demo": bool(demo_logs),
        "user_logs": {},
        "user_sheets": {},
        # Keyed by the log's SHA-256 (the flight itself), never by its file name.
        "sheet_for": {},
        "labels": {},
        "notes": {},
        # The user's choices where they differ from trimlog's own: points to leave out, and
        # points trimlog left out (a flag, an elevator at a stop) to fit all the same.
        "exclusions": set(),
        "inclusions": set(),
        # Why a point is left out, keyed like the exclusions: {(flight, point): reason}.
        "exclusion_reasons": {},
        "min_hold_s": None,
        "uploader_round": 0,
    }


class _State(dict):
    """Session values outside a session, read as ``st.session_state`` reads them."""

    def __getattr__(self, name: str) -> Any:
        try:
            return self[name]
        except KeyError:
            raise AttributeError(name) from None


def init() -> None:
    """Set the defaults on a new session: the demo aircraft with its flights."""
    ss = st.session_state
    if "profile_text" in ss:
        # Keep the values of widgets that are drawn on one page only.
        for key in _WIDGET_KEYS:
            if key in ss:
                ss[key] = ss[key]
        return
    for key, value in _new_session_values().items():
        ss[key] = value


def first_inputs() -> Inputs:
    """The inputs of a new session (the demo flights), computed with no session.

    The server's warm-up analyses them before the first visitor asks
    (:func:`trimlog.dashboard.results.precompute_first_page`).
    """
    return inputs(state=_State(_new_session_values()))


def add_uploads(files: list[tuple[str, bytes]]) -> list[str]:
    """Keep uploaded files (same name replaces); return the names added."""
    ss = st.session_state
    added = []
    for name, raw in files:
        item = FileBytes.of(name, raw)
        target = ss.user_sheets if is_loading_sheet(name) else ss.user_logs
        target[name] = item
        added.append(name)
    if any(not is_loading_sheet(n) for n in added) and ss.use_demo:
        # Your own flights replace the demo flights; the toggle brings them back.
        ss.use_demo = False
    return added


def remove_upload(name: str) -> None:
    """Forget an uploaded file and the choices tied to it."""
    ss = st.session_state
    log = ss.user_logs.pop(name, None)
    ss.user_sheets.pop(name, None)
    if log is not None:
        ss.sheet_for.pop(log.digest, None)


def logs(state: Any = None) -> dict[str, FileBytes]:
    """Logs in use: the user's, plus the demo flights when switched on (a user file wins)."""
    ss = st.session_state if state is None else state
    out = dict(ss.demo_logs) if ss.use_demo else {}
    out.update(ss.user_logs)
    return out


def sheets(state: Any = None) -> dict[str, FileBytes]:
    """Loading sheets available: the user's, plus the demo ones when the demo is on."""
    ss = st.session_state if state is None else state
    out = dict(ss.demo_sheets) if ss.use_demo else {}
    out.update(ss.user_sheets)
    return out


def sheet_choice(log_name: str, state: Any = None) -> str | None:
    """The loading sheet chosen for a log: the user's pick, else the one named like it."""
    ss = st.session_state if state is None else state
    available = sheets(ss)
    log = logs(ss).get(log_name)
    if log is not None and log.digest in ss.sheet_for:
        chosen = ss.sheet_for[log.digest]
        return chosen if chosen in available else None
    stem = file_stem(log_name)
    matches = [n for n, f in available.items() if f.stem == stem]
    return matches[0] if matches else None


def inputs(readable: list[str] | None = None, state: Any = None) -> Inputs:
    """The analysis inputs now, limited to ``readable`` logs when given.

    ``state``: the session values to read (default this session's).
    """
    ss = st.session_state if state is None else state
    available = sheets(ss)
    pairs = []
    for name, log in logs(ss).items():
        if readable is not None and name not in readable:
            continue
        sheet = sheet_choice(name, ss)
        pairs.append((log, available.get(sheet) if sheet else None))
    return Inputs(
        profile_text=ss.profile_text,
        profile_source=ss.profile_source,
        logs=tuple(pairs),
        min_hold_s=ss.min_hold_s,
        exclusions=tuple(sorted(ss.exclusions)),
        inclusions=tuple(sorted(ss.inclusions)),
        exclusion_reasons=tuple(sorted(
            (f, p, r) for (f, p), r in ss.get("exclusion_reasons", {}).items()
            if r and (f, p) in ss.exclusions)),
    )
