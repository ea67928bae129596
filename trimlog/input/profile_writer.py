"""Write a copy of an aircraft profile with its airspeed-calibration table replaced.

Only the ``[airspeed_calibration]`` table changes; every other byte of the
profile (comments, order, spacing, line endings) is kept.  The section is
replaced where it stands, or appended at the end when the profile has none.
Comment and blank lines at the end of the old section (which usually
introduce the next one) are kept.
"""

from __future__ import annotations

import re

from trimlog.errors import ProfileError
from trimlog.input.profile import parse_profile
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
