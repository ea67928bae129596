"""The Aircraft page's form: every profile key as a field with its unit, grouped.

The fields are made from the profile's one schema
(:data:`trimlog.input.profile.PROFILE_KEYS`), so a key added there appears
here too.  Values are typed in the package's units (shown in each label); the
form writes a profile text (:func:`trimlog.input.profile_writer.profile_from_values`)
and the profile reader checks it, exactly as it checks a TOML file, so the
form and the TOML box give the same profile.  A value out of its range is
refused beside its field; a rule across keys (the forward limit ahead of the
aft one, a station inside the MAC band) beside the field it names, or beside
the Apply button.  The logger's channel names stay as the profile gives them
(edit them in the TOML text).
"""

from __future__ import annotations

import hashlib
import math
from collections.abc import Callable, Mapping
from typing import Any

import pandas as pd
import streamlit as st

from trimlog.dashboard import common
from trimlog.errors import ProfileError, TrimlogError
from trimlog.input.profile import PROFILE_KEYS, AircraftProfile, parse_profile
from trimlog.input.profile_writer import profile_from_values
from trimlog.input.schema import Key, check_range, load_toml, read_key

#: The groups of the form, by profile section, in order.
GROUPS = {
    "aircraft": "Aircraft and wing",
    "tail": "Tail, elevator and stops",
    "limits": "Limits and policy",
    "cruise": "Cruise condition (for the shim)",
    "measurement": "Measurement errors (1 sigma, shared by every point of a flight)",
    "fuel": "Fuel",
    "trim": "Pitch trim (what the stick-force results mean; free return)",
}
#: Sections kept as the profile gives them (edited in the TOML text only).
KEPT = ("logger",)
#: Decimals a field shows, by unit (what a builder measures to).
DECIMALS = {"in": 2, "ft^2": 2, "deg": 2, "lb": 1, "kt": 1, "ft": 0, "lbf": 2,
            "lb/gal": 2, "%MAC": 1, "": 2}
#: Shorter labels where the schema's description is a sentence.
LABELS = {
    "tail.stabilizer_attach_spacing": "Stabilizer attach fittings, front to rear",
    "measurement.cg_uncertainty": "CG uncertainty per flight",
    "measurement.stick_force_zero_uncertainty": "Stick-force gauge zero per flight",
    "limits.min_static_margin": "Minimum static margin (policy)",
    "limits.cg_step_max": "Largest CG step beyond the most aft flown",
    "trim.system": "Trim system (tab, spring, stabilator, trimmable_stabilizer, none)",
    "trim.friction": "Stick-force friction band, half-width",
    "aircraft.clmax_clean": "Maximum lift coefficient, clean",
    "aircraft.clmax_landing": "Maximum lift coefficient, landing flaps",
}
#: Fields side by side in a group (two leave room for the value at 900 px wide).
COLUMNS = 2
UNIT_WORDS = {"ft^2": "ft²", "": ""}
PE_IAS, PE_CAS = "IAS [kt]", "CAS [kt]"


def fields() -> list[Key]:
    """The profile keys the form shows as fields (numbers, quantities and the name)."""
    return [k for k in PROFILE_KEYS if k.section in GROUPS
            and k.kind in ("quantity", "number", "text")]


def label(spec: Key) -> str:
    """A field's label: what it is, with its unit in brackets."""
    words = LABELS.get(spec.key) or spec.description.split(" (")[0]
    words = words[:1].upper() + words[1:]
    unit = UNIT_WORDS.get(spec.unit, spec.unit)
    return f"{words} [{unit}]" if unit else words


def decimals(spec: Key) -> int:
    """Decimals a field shows."""
    if spec.key == "measurement.cg_uncertainty":
        return 2
    return DECIMALS.get(spec.unit, 2)


def shown(spec: Key, value: float) -> str:
    """A value as its field shows it, with its unit: ``78.9 in`` (for messages)."""
    unit = UNIT_WORDS.get(spec.unit, spec.unit)
    return f"{value:.{decimals(spec)}f}" + (f" {unit}" if unit else "")


def _state_key(spec: Key) -> str:
    return f"form_{spec.key}"


def initial_values(text: str, source: str) -> tuple[dict[str, Any], pd.DataFrame]:
    """The form's values from a profile text: the keys it gives (in the package's units).

    A key the profile leaves out stays empty (its default applies, as in the
    file); the position-error table in kt.
    """
    def fail(_key: str, message: str) -> ProfileError:
        return ProfileError(f"{source}: {message}")

    data = load_toml(text, source, fail)
    values: dict[str, Any] = {}
    for spec in fields():
        section = data.get(spec.section, {}) if spec.section else data
        present = isinstance(section, Mapping) and spec.name in section
        values[spec.key] = read_key(data, spec, fail) if present else None
    p = parse_profile(text, source=source)
    table = pd.DataFrame({PE_IAS: list(p.position_error_ias_kt or ()),
                          PE_CAS: list(p.position_error_cas_kt or ())}, dtype=float)
    return values, table


def _load_into_state(text: str, source: str, *, only_missing: bool) -> None:
    ss = st.session_state
    values, table = initial_values(text, source)
    for spec in fields():
        if not only_missing or _state_key(spec) not in ss:
            ss[_state_key(spec)] = values[spec.key]
    if not only_missing or "form_pe_table" not in ss:
        ss.form_pe_source = table
    if not only_missing:
        ss.form_errors, ss.form_error = {}, ""


def _kept_tables(text: str, source: str) -> dict[str, Any]:
    data = load_toml(text, source, lambda _k, m: ProfileError(f"{source}: {m}"))
    return {name: data[name] for name in KEPT if name in data}


def _position_error(table: pd.DataFrame | None) -> tuple[dict[str, Any] | None, str]:
    """The ``[airspeed_calibration]`` section from the form's table, or a message."""
    if table is None:
        return None, ""
    rows = table[[PE_IAS, PE_CAS]].apply(pd.to_numeric, errors="coerce")
    rows = rows.dropna(how="all")
    if not len(rows):
        return None, ""
    if rows.isna().any().any():
        bad = int(rows.index[rows.isna().any(axis=1)][0]) + 1
        return None, f"row {bad}: give both the IAS and the CAS [kt], or delete the row"
    rows = rows.sort_values(PE_IAS)
    return {"ias": [float(v) for v in rows[PE_IAS]], "cas": [float(v) for v in rows[PE_CAS]],
            "unit": "kt"}, ""


def check_fields(values: Mapping[str, Any]) -> dict[str, str]:
    """Each field's own error (a required value missing, a value out of its range)."""
    errors: dict[str, str] = {}

    def fail(_key: str, message: str) -> ProfileError:
        return ProfileError(message)

    for spec in fields():
        value = values.get(spec.key)
        if value is None or (isinstance(value, str) and not value.strip()):
            if spec.required:
                errors[spec.key] = f"required: {spec.description}"
            continue
        if spec.kind == "text":
            continue
        if not math.isfinite(float(value)):
            errors[spec.key] = "expected a finite number"
            continue
        try:
            check_range(spec, float(value), fail, shown=shown(spec, float(value)))
        except ProfileError as exc:
            errors[spec.key] = str(exc).split(": ", 1)[-1]
    return errors


def field_of(message: str) -> str:
    """The form field a profile message is about ("" when none): the key it names."""
    named = [k.key for k in fields() if k.key in message]
    return max(named, key=len) if named else ""


def build(values: Mapping[str, Any], pe_table: pd.DataFrame | None, current_text: str,
          source: str) -> tuple[str | None, dict[str, str], str]:
    """The profile text from the form, or the errors: (text, field errors, general error)."""
    errors = check_fields(values)
    pe, pe_error = _position_error(pe_table)
    if pe_error:
        errors["airspeed_calibration"] = pe_error
    if errors:
        return None, errors, "Not applied: correct the fields marked."
    tables = _kept_tables(current_text, source)
    if pe is not None:
        tables["airspeed_calibration"] = pe
    text = profile_from_values(
        {k: (v.strip() if isinstance(v, str) else v) for k, v in values.items()}, tables,
        comment="Aircraft profile written by trimlog's Aircraft form (values in the units "
                "of each key).")
    try:
        parse_profile(text, source="Aircraft form")
    except ProfileError as exc:
        message = str(exc).removeprefix("Aircraft form: ")
        key = field_of(message)
        if key:
            return None, {key: message.removeprefix(f"{key}: ")}, (
                "Not applied: correct the fields marked.")
        return None, {}, f"Not applied: {message}"
    return text, {}, ""


def render(p: AircraftProfile, use: Callable[[str, str], None]) -> None:
    """Draw the form for the profile in use; ``use(text, source)`` takes a new profile."""
    ss = st.session_state
    digest = hashlib.sha256(ss.profile_text.encode("utf-8")).hexdigest()
    try:
        _load_into_state(ss.profile_text, ss.profile_source,
                         only_missing=ss.get("form_src") == digest)
    except TrimlogError as exc:  # the profile in use always parses; keep the page up anyway
        common.show_error(exc, "The form cannot show this profile")
        return
    ss.form_src = digest
    errors: dict[str, str] = ss.get("form_errors", {})

    def apply() -> None:
        values = {spec.key: ss.get(_state_key(spec)) for spec in fields()}
        table = _edited_table(ss.form_pe_source, ss.get("form_pe_table"))
        text, ss.form_errors, ss.form_error = build(values, table, ss.profile_text,
                                                    ss.profile_source)
        if text is not None:
            use(text, "Aircraft form")
            ss.form_applied = not ss.get("form_error")

    with st.form("aircraft_form", border=True):
        st.caption("Values in the units shown; an empty field takes the profile's default "
                   "(said below the form once applied).")
        for section, title in GROUPS.items():
            specs = [k for k in fields() if k.section == section]
            st.markdown(f"**{title}**")
            # a text field (the aircraft's name) takes a whole row, so a long name is not
            # cut short in a narrow window; the numbers go two to a row below it
            for spec in (k for k in specs if k.kind == "text"):
                _field(st, spec, errors)
            cols = st.columns(COLUMNS)
            for i, spec in enumerate(k for k in specs if k.kind != "text"):
                _field(cols[i % COLUMNS], spec, errors)
        st.markdown("**Position-error table (IAS to CAS, kt)**")
        st.data_editor(ss.form_pe_source, key="form_pe_table", num_rows="dynamic",
                       hide_index=True, width="content",
                       column_config={c: st.column_config.NumberColumn(c, format="%.1f")
                                      for c in (PE_IAS, PE_CAS)})
        if "airspeed_calibration" in errors:
            st.error(common.esc(errors["airspeed_calibration"]), icon=":material/error:")
        kept = [name for name in KEPT if name in _kept_tables(ss.profile_text,
                                                              ss.profile_source)]
        if kept:
            st.caption("Kept as the profile gives them: the logger's channel names and "
                       "inverted columns (edit them in the TOML text below).")
        st.form_submit_button("Apply the form", type="primary", on_click=apply)
        if ss.get("form_error"):
            st.error(common.esc(ss.form_error), icon=":material/error:")
        elif ss.pop("form_applied", False):
            st.success("Applied: the profile in use is the form's (kept in the history).")


def _field(col: Any, spec: Key, errors: Mapping[str, str]) -> None:
    """One key's input in ``col`` (``st`` or a column), with its error below it if any."""
    _input(col, spec)
    if spec.key in errors:
        col.error(common.esc(errors[spec.key]), icon=":material/error:")


def _input(col: Any, spec: Key) -> None:
    help_text = spec.description + (f"; plausible {spec.range_text()}" if spec.range_text()
                                    else "")
    if spec.default is not None and not spec.required:
        help_text += f"; empty: {spec.default:g} {spec.unit}".rstrip()
    elif not spec.required:
        help_text += "; optional"
    if spec.kind == "text":
        col.text_input(label(spec), key=_state_key(spec), help=help_text, max_chars=200)
        return
    d = decimals(spec)
    col.number_input(label(spec), value=None, key=_state_key(spec), format=f"%.{d}f",
                     step=10.0 ** -d if d else 1.0, help=help_text,
                     placeholder="required" if spec.required else "optional")


def _edited_table(source: pd.DataFrame, state: Any) -> pd.DataFrame:
    """The position-error table after the user's edits in the data editor."""
    table = source.copy()
    if not isinstance(state, Mapping):
        return table
    for row, change in (state.get("edited_rows") or {}).items():
        for column, value in change.items():
            table.loc[int(row), column] = value
    added = pd.DataFrame(list(state.get("added_rows") or []), columns=[PE_IAS, PE_CAS])
    table = pd.concat([table, added], ignore_index=True) if len(added) else table
    deleted = [int(r) for r in state.get("deleted_rows") or []]
    return table.drop(index=[r for r in deleted if r in table.index]).reset_index(drop=True)
