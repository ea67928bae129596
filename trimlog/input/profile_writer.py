"""Write aircraft profiles: a copy with a new airspeed-calibration table, or one from values.

:func:`profile_from_values` writes a profile from values in the package's
units (the dashboard's Aircraft form).  In :func:`replace_calibration` only
the ``[airspeed_calibration]`` table changes; every other byte of the profile
(comments, order, spacing, line endings) is kept.  The section is replaced
where it stands, or appended at the end when the profile has none.  Comment
and blank lines at the end of the old section (which usually introduce the
next one) are kept.
"""

from __future__ import annotations

import json
import re
from collections.abc import Mapping
from typing import Any

from trimlog.errors import ProfileError
from trimlog.input.profile import PROFILE_KEYS, parse_profile
from trimlog.input.schema import load_toml

_HEADER = re.compile(r"^[ \t]*\[[ \t]*airspeed_calibration[ \t]*\][ \t]*(#.*)?$")
_ANY_HEADER = re.compile(r"^[ \t]*\[")
_KEEP = re.compile(r"^[ \t]*(#.*)?$")


def calibration_block(ias_kt: tuple[float, ...] | list[float],
                      cas_kt: tuple[float, ...] | list[float], comment: str,
                      newline: str = "\n") -> str:
    """The TOML text of an ``[airspeed_calibration]`` section.

    Examples
    --------
    >>> print(calibration_block([60, 80], [62.5, 81.0], "from GPS legs"), end="")
    [airspeed_calibration]
    # from GPS legs
    ias = [60, 80]
    cas = [62.5, 81]
    unit = "kt"
    """
    lines = ["[airspeed_calibration]"]
    lines += [f"# {c}" for c in comment.splitlines() if c.strip()]
    lines += ["ias = [" + ", ".join(f"{v:g}" for v in ias_kt) + "]",
              "cas = [" + ", ".join(f"{v:g}" for v in cas_kt) + "]",
              'unit = "kt"']
    return newline.join(lines) + newline


def replace_calibration(text: str, ias_kt: tuple[float, ...] | list[float],
                        cas_kt: tuple[float, ...] | list[float], *, comment: str = "",
                        source: str = "<profile>") -> str:
    """Return ``text`` with its airspeed-calibration table replaced by the one given.

    Parameters
    ----------
    text : str
        The profile TOML as read.
    ias_kt, cas_kt : sequence of float
        The new table [kt], IAS strictly increasing, at least two rows.
    comment : str
        Comment lines to put under the section header (e.g. where it came from).
    source : str
        File name for messages.

    Returns
    -------
    str
        The new profile text; it parses, and its table is the one given.

    Raises
    ------
    ProfileError
        The table is held in a form this cannot rewrite in place (an inline
        table or dotted keys), or the result does not parse back to the table.
    """
    newline = "\r\n" if "\r\n" in text else "\n"
    lines = text.splitlines(keepends=True)
    block = calibration_block(ias_kt, cas_kt, comment, newline)
    starts = [i for i, line in enumerate(lines) if _HEADER.match(line.rstrip("\r\n"))]
    if len(starts) > 1:
        raise ProfileError(f"{source}: [airspeed_calibration] appears {len(starts)} times")
    if not starts:
        has_table = "airspeed_calibration" in load_toml(
            text, source, lambda key, message: ProfileError(f"{source}: {message}"))
        if has_table:
            raise ProfileError(
                f"{source}: [airspeed_calibration] is written as an inline table or dotted "
                "keys; write it as its own [airspeed_calibration] section to have it replaced")
        head = "".join(lines)
        if head and not head.endswith(("\n", "\r")):
            head += newline
        new = head + (newline if head.strip() else "") + block
    else:
        start = starts[0]
        end = next((i for i in range(start + 1, len(lines))
                    if _ANY_HEADER.match(lines[i])), len(lines))
        keep_from = end
        while keep_from > start + 1 and _KEEP.match(lines[keep_from - 1].rstrip("\r\n")):
            keep_from -= 1
        tail = lines[keep_from:end]
        if end < len(lines) and not any(not line.strip() for line in tail):
            tail = [newline, *tail]
        new = "".join(lines[:start]) + block + "".join(tail) + "".join(lines[end:])
    parsed = parse_profile(new, source=source)
    if (parsed.position_error_ias_kt is None
            or [round(v, 6) for v in parsed.position_error_ias_kt]
            != [round(float(v), 6) for v in ias_kt]):
        raise ProfileError(f"{source}: the rewritten profile does not hold the new table")
    return new


def _toml_value(value: Any) -> str:
    """One TOML value: text, number, list or inline table (json's escapes are TOML's)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int | float):
        return format(float(value), ".10g") if isinstance(value, float) else str(value)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)
    if isinstance(value, Mapping):
        return "{ " + ", ".join(f"{json.dumps(str(k))} = {_toml_value(v)}"
                                for k, v in value.items()) + " }"
    if isinstance(value, list | tuple):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    raise ProfileError(f"cannot write {value!r} ({type(value).__name__}) into a profile")


def profile_from_values(values: Mapping[str, Any],
                        tables: Mapping[str, Mapping[str, Any]] | None = None,
                        *, comment: str = "") -> str:
    """The TOML text of a profile from values in the package's units (a form's values).

    Parameters
    ----------
    values : mapping of str to value
        Dotted profile key (``"aircraft.mac"``) to its value: a quantity as a
        number in the key's declared unit (``PROFILE_KEYS``' ``unit``), a plain
        number, or text.  None or a missing key leaves the key out (its
        default then applies).
    tables : mapping of str to mapping, optional
        Whole sections written as given (keys and values as TOML reads them),
        e.g. ``{"logger": {"inverted": ["elevator_deg"]}}``: the parts of a
        profile a form does not show.
    comment : str
        A comment line for the top of the file.

    Returns
    -------
    str
        The profile text, sections in the schema's order; read it with
        :func:`trimlog.input.profile.parse_profile`, which checks every value.

    Raises
    ------
    ProfileError
        A key the schema does not know, or a value that cannot be written.

    Examples
    --------
    >>> print(profile_from_values({"aircraft.name": "Test", "aircraft.mac": 53.0,
    ...                            "limits.min_static_margin": 5.0}), end="")
    [aircraft]
    name = "Test"
    mac = "53 in"
    <BLANKLINE>
    [limits]
    min_static_margin = 5
    """
    known = {k.key: k for k in PROFILE_KEYS}
    sections: dict[str, list[str]] = {}
    for key in values:
        if key not in known:
            raise ProfileError(f"unknown profile key {key!r}")
    for spec in PROFILE_KEYS:
        value = values.get(spec.key)
        if value is None or spec.section in (tables or {}):
            continue
        if spec.kind == "quantity":
            text = json.dumps(f"{float(value):.10g} {spec.unit}")
        else:
            text = _toml_value(value)
        sections.setdefault(spec.section, []).append(f"{spec.name} = {text}")
    for section, table in (tables or {}).items():
        lines = sections.setdefault(section, [])
        lines += [f"{name} = {_toml_value(v)}" for name, v in table.items()]
    order = list(dict.fromkeys(k.section for k in PROFILE_KEYS))
    out = [f"# {c}" for c in comment.splitlines() if c.strip()]
    for section in sorted(sections, key=lambda s: order.index(s) if s in order else len(order)):
        if not sections[section]:
            continue
        if out:
            out.append("")
        out.append(f"[{section}]")
        out += sections[section]
    return "\n".join(out) + "\n"
