"""Generated hostile inputs (issue 19): hypothesis, derandomized, a small budget.

Four properties over generated inputs, on top of the named cases of the other
``test_hostile*`` files (the figures are in DEVELOPERS.md):

* an export document edited anywhere (any value at any place replaced by any
  JSON value) is either refused by the restore check, naming where, or it
  restores, and then the history lists, reads every flight's points and
  exports again: a restore can no longer poison the history;
* the export file cut at any byte is refused by ``trimlog restore`` with exit 2
  and leaves no database behind;
* the demo point table edited at any cell, or with a line dropped or bytes
  spliced in, gives ``trimlog analyze`` exit 0, 1 or 2: never a traceback,
  never an internal error (3);
* a wide table with the needed columns at generated places is read with the
  right values (never shifted).

``derandomize=True`` and ``database=None``: the same examples on every run and
machine (CI time is fixed; a failure reproduces).  Data are invented.
"""

from __future__ import annotations

import copy
import json
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from trimlog.cli import EXIT_BAD_INPUT, EXIT_INTERNAL, main
from trimlog.errors import StoreError
from trimlog.history import store
from trimlog.history.restore_check import check_document
from trimlog.input.logs import read_log

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_logs"
PROFILE = SAMPLES / "tinkerfinch_tf2.toml"
_CHECKS = [HealthCheck.too_slow, HealthCheck.function_scoped_fixture, HealthCheck.data_too_large]


def hostile(n: int) -> settings:
    """Derandomized settings for ``n`` examples (no example database)."""
    return settings(derandomize=True, database=None, deadline=None, max_examples=n,
                    suppress_health_check=_CHECKS)
N_EXPORT_EDITS, N_CUTS, N_TABLE_EDITS, N_WIDE = 60, 30, 20, 12


@pytest.fixture(scope="module")
def exported(tmp_path_factory) -> dict:
    """The export of a one-flight demo history (the point table)."""
    folder = tmp_path_factory.mktemp("hyp")
    db = folder / "h.sqlite"
    assert main(["import", str(SAMPLES / "flight1_points.csv"), "--aircraft", str(PROFILE),
                 "--db", str(db)]) == 0
    assert main(["export", str(folder / "ex"), "--db", str(db)]) == 0
    return json.loads((folder / "ex" / "trimlog-history.json").read_text(encoding="utf-8"))


def places(value, path=()):
    """Every place in a JSON tree, as a path of keys and indexes."""
    yield path
    if isinstance(value, dict):
        for k, v in value.items():
            yield from places(v, (*path, k))
    elif isinstance(value, list):
        for i, v in enumerate(value):
            yield from places(v, (*path, i))


json_values = st.recursive(
    st.none() | st.booleans() | st.integers(-(2**70), 2**70)
    | st.floats(allow_nan=False, allow_infinity=False) | st.text(max_size=20),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=8), inner,
                                                                 max_size=3),
    max_leaves=6)


@hostile(N_EXPORT_EDITS)
@given(data=st.data())
def test_an_edited_export_is_refused_or_restores_into_a_usable_history(exported, data,
                                                                        tmp_path_factory):
    doc = copy.deepcopy(exported)
    all_places = [p for p in places(doc) if p and p[-1] != "raw_base64"]
    path = data.draw(st.sampled_from(all_places), label="place")
    value = data.draw(json_values, label="value")
    parent = doc
    for key in path[:-1]:
        parent = parent[key]
    parent[path[-1]] = value
    try:
        check_document(doc, "edited.json", store.SCHEMA_VERSION)
    except StoreError as exc:
        assert str(exc).startswith("edited.json: ") and str(exc).endswith("nothing was restored")
        return
    folder = tmp_path_factory.mktemp("ok")
    with store.open_store(folder / "h.sqlite") as st_:
        st_.restore_document(doc, "edited.json")
        for aircraft in st_.aircraft_list():
            for flight in st_.flights(aircraft.id):
                st_.flight_points(flight.id)
        st_.all_points(aircraft.id)
        st_.export(folder / "again")
        assert st_.check() == []


@hostile(N_CUTS)
@given(fraction=st.floats(0.0, 0.999))
def test_an_export_cut_anywhere_is_refused_and_leaves_nothing(exported, fraction,
                                                              tmp_path_factory, capsys):
    text = json.dumps(exported, indent=1).encode()
    folder = tmp_path_factory.mktemp("cut")
    (folder / "ex").mkdir()
    (folder / "ex" / "trimlog-history.json").write_bytes(text[: int(fraction * len(text))])
    code = main(["restore", str(folder / "ex"), "--db", str(folder / "h.sqlite")])
    out, err = capsys.readouterr()
    assert code == EXIT_BAD_INPUT and "Traceback" not in out + err
    assert not (folder / "h.sqlite").exists()


TABLE = (SAMPLES / "flight1_points.csv").read_bytes()
_LINES = TABLE.split(b"\n")
cells = st.sampled_from([b"", b"nan", b"-", b"1e400", b"-0", b"0", b"1e-320", b"heavy",
                         b"\xff\xfe", b"\"", b"=1+2", b"9" * 400, b"12,5", b"\x00", b"inf",
                         b"-1e9", b"100 kt", b" 5 "])


@st.composite
def edited_tables(draw) -> bytes:
    lines = list(_LINES)
    kind = draw(st.sampled_from(["cell", "cell", "drop line", "splice"]))
    i = draw(st.integers(0, len(lines) - 1))
    if kind == "cell":
        fields = lines[i].split(b",")
        j = draw(st.integers(0, len(fields) - 1))
        fields[j] = draw(cells)
        lines[i] = b",".join(fields)
    elif kind == "drop line":
        del lines[i]
    else:
        at = draw(st.integers(0, len(lines[i])))
        lines[i] = lines[i][:at] + draw(st.binary(max_size=12)) + lines[i][at:]
    return b"\n".join(lines)


@pytest.mark.slow  # the whole analysis per example (found: a 400-digit airspeed gave exit 3)
@hostile(N_TABLE_EDITS)
@given(raw=edited_tables())
@example(raw=TABLE.replace(b"\nTP1,100,", b"\nTP1," + b"9" * 400 + b",", 1))  # found by it
def test_an_edited_point_table_never_gives_a_traceback(raw, tmp_path_factory, capsys):
    folder = tmp_path_factory.mktemp("tab")
    path = folder / "points.csv"
    path.write_bytes(raw)
    code = main(["analyze", str(path), "--aircraft", str(PROFILE), "--quiet"])
    out, err = capsys.readouterr()
    assert code in (0, 1, EXIT_BAD_INPUT), (code, err[-800:])
    assert code != EXIT_INTERNAL and "Traceback" not in out + err
    assert path.read_bytes() == raw


@hostile(N_WIDE)
@given(width=st.integers(6, 3000), at=st.data())
def test_needed_columns_anywhere_in_a_wide_table_are_never_shifted(width, at):
    names = ["ias_kt", "pressure_alt_ft", "oat_c", "elevator_deg", "stick_force_lbf"]
    slots = sorted(at.draw(st.lists(st.integers(0, width - 1), min_size=5, max_size=5,
                                    unique=True), label="slots"))
    heads = [f"ch_{i:04d}" for i in range(width)]
    rows = np.full((6, width), 0.25)
    truth = np.array([[100 + 5 * k, 5000, 10, -5 + 0.3 * k, 1 + 0.1 * k] for k in range(6)])
    for j, (slot, name) in enumerate(zip(slots, names, strict=True)):
        heads[slot] = name
        rows[:, slot] = truth[:, j]
    text = ",".join(heads) + "\n" + "\n".join(",".join(f"{v:g}" for v in r) for r in rows)
    log = read_log(text.encode() + b"\n", name="wide.csv")
    for j, name in enumerate(names):
        np.testing.assert_allclose(log.data[name].to_numpy(), truth[:, j], err_msg=name)
