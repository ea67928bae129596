"""Text bound for a terminal: no control characters from the user's files.

Names, labels, notes and file names come from files a user was given; an
escape sequence hidden in them could retitle the terminal, move the cursor,
hide text or worse.  Every line trimlog prints goes through
:func:`printable`, which removes control characters (C0, DEL, C1) and
escape sequences, keeping newlines and tabs and, when asked, only trimlog's
own colour codes.
"""

from __future__ import annotations

import re

__all__ = ["printable"]

# trimlog's own colours (views/terminal.py): reset, bold, dim and the eight basic colours.
_OWN_SGR = re.compile(r"\x1b\[(?:[0-2]|3[0-7])m")
# Escape sequences (CSI, OSC, and two-character ones) and every other control character.
_ESCAPE = re.compile(
    r"\x1b\[[0-?]*[ -/]*[@-~]"            # CSI ... final byte
    r"|\x1b\][^\x07\x1b]*(?:\x07|\x1b\\)?"  # OSC ... BEL or ST
    r"|\x1b[PX^_][^\x1b]*(?:\x1b\\)?"      # DCS, SOS, PM, APC strings
    r"|\x1b[ -~]?"                        # two-character escapes, a lone ESC
)
_CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f-\x9f]")


def printable(text: object, *, keep_colour: bool = False) -> str:
    r"""``text`` without control characters or escape sequences (newline and tab kept).

    Parameters
    ----------
    text : object
        Converted with ``str``.
    keep_colour : bool
        Keep trimlog's own colour codes (``ESC[<n>m``); everything else goes.

    Returns
    -------
    str

    Examples
    --------
    >>> printable("flight \x1b]0;owned\x07 3\x1b[2J done\r")
    'flight  3 done'
    >>> printable("\x1b[31mred\x1b[0m", keep_colour=True) == "\x1b[31mred\x1b[0m"
    True
    >>> printable("\x1b[31mred\x1b[0m")
    'red'
    """
    s = str(text)
    if "\x1b" not in s and not _CONTROL.search(s):
        return s
    if not keep_colour:
        return _CONTROL.sub("", _ESCAPE.sub("", s))
    parts = []
    last = 0
    for match in _OWN_SGR.finditer(s):
        parts.append(_CONTROL.sub("", _ESCAPE.sub("", s[last:match.start()])))
        parts.append(match.group(0))
        last = match.end()
    parts.append(_CONTROL.sub("", _ESCAPE.sub("", s[last:])))
    return "".join(parts)
