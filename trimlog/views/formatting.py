"""Number, interval and sign formatting for every view (terminal, report, dashboard).

One style everywhere:

- a missing number is ``-``;
- a value that rounds to zero prints without a sign (never ``-0.0``);
- a 95 % interval is ``[lo, hi]``, after its value: ``37.6 [36.9, 38.2]``;
- a unit follows after a space: ``21.4 %MAC``;
- a control deflection in words says which way the surface moves:
  ``1.05 deg trailing edge up`` (elevator, trailing-edge down positive) and
  ``0.60 deg leading edge down`` (stabilizer incidence, leading-edge up
  positive).
"""

from __future__ import annotations

from collections.abc import Sequence

MISSING = "-"


def number(value: float | None, spec: str = ".1f", unit: str = "", *,
           missing: str = MISSING) -> str:
    """A number in ``spec``, never ``-0``, with its unit; ``missing`` for None.

    Parameters
    ----------
    value : float or None
    spec : str
        A format spec (``".1f"``, ``"+.2f"``, ``"g"``).
    unit : str
        Appended after a space when given.
    missing : str
        Text for None.

    Examples
    --------
    >>> number(-0.04), number(-0.04, "+.1f"), number(2.345, ".2f", "deg"), number(None)
    ('0.0', '+0.0', '2.35 deg', '-')
    """
    if value is None:
        return missing
    text = format(value, spec)
    try:
        if float(text.rstrip("%")) == 0.0:
            text = format(0.0, spec)
    except ValueError:  # a spec that does not give a plain number (e.g. "e" with text)
        pass
    return text + (f" {unit}" if unit else "")


def interval(pair: Sequence[float] | None, spec: str = ".1f", unit: str = "", *,
             missing: str = MISSING) -> str:
    """A 95 % interval as ``[lo, hi]`` (each end never ``-0``), with its unit.

    Examples
    --------
    >>> interval((36.94, 38.23)), interval((-0.001, 0.5), ".2f", "deg"), interval(None)
    ('[36.9, 38.2]', '[0.00, 0.50] deg', '-')
    """
    if pair is None:
        return missing
    text = f"[{number(pair[0], spec)}, {number(pair[1], spec)}]"
    return text + (f" {unit}" if unit else "")


def with_interval(value: float | None, pair: Sequence[float] | None, spec: str = ".1f",
                  unit: str = "", *, missing: str = MISSING) -> str:
    """A value followed by its interval: ``37.6 [36.9, 38.2] %MAC``.

    Examples
    --------
    >>> with_interval(37.57, (36.94, 38.23), unit="%MAC"), with_interval(1.0, None)
    ('37.6 [36.9, 38.2] %MAC', '1.0')
    """
    if value is None:
        return missing
    if pair is None:
        return number(value, spec, unit)
    return f"{number(value, spec)} {interval(pair, spec)}" + (f" {unit}" if unit else "")


def elevator_words(deg: float | None, spec: str = ".2f") -> str:
    """An elevator deflection in words (trailing-edge down positive).

    Examples
    --------
    >>> elevator_words(-1.05), elevator_words(0.5), elevator_words(-0.001)
    ('1.05 deg trailing edge up', '0.50 deg trailing edge down', '0.00 deg (neutral)')
    """
    return _words(deg, spec, "trailing edge down", "trailing edge up")


def incidence_words(deg: float | None, spec: str = ".2f") -> str:
    """A stabilizer incidence change in words (leading-edge up positive).

    Examples
    --------
    >>> incidence_words(-0.6)
    '0.60 deg leading edge down'
    """
    return _words(deg, spec, "leading edge up", "leading edge down")


def _words(deg: float | None, spec: str, positive: str, negative: str) -> str:
    if deg is None:
        return MISSING
    size = number(abs(deg), spec)
    if float(size) == 0.0:
        return f"{size} deg (neutral)"
    return f"{size} deg {positive if deg > 0 else negative}"


def rounded(values, decimals: int):
    """Numbers rounded to ``decimals`` for a table, a rounded zero without its sign.

    The numeric twin of :func:`number` for tables that stay numeric (a sortable
    column): ``-0.004`` to two decimals is ``0.0``, never ``-0.0`` (which a
    table would print as ``-0.00``).  Missing values stay missing.

    Parameters
    ----------
    values : float, array or Series
    decimals : int
        Decimal places kept.

    Returns
    -------
    float, array or Series
        Same kind as ``values``.

    Examples
    --------
    >>> import numpy as np
    >>> rounded(np.array([-0.004, 1.23456, np.nan]), 2)
    array([0.  , 1.23,  nan])
    >>> str(rounded(-0.04, 1))
    '0.0'
    """
    import numpy as np

    # Adding +0.0 turns IEEE -0.0 into +0.0 and leaves every other value unchanged.
    return np.round(values, decimals) + 0.0


#: Display unit systems: the package computes in US units (see DEVELOPERS.md); a view may
#: show SI instead.  Factors are exact by definition (NIST SP 811, 2008, appendix B):
#: 1 lb = 0.45359237 kg, 1 kt = 1852/3600 m/s, 1 lbf = 4.4482216152605 N.
DISPLAY_SYSTEMS = ("US", "SI")
_SI: dict[str, tuple[str, float]] = {
    "lb": ("kg", 0.45359237),
    "kt": ("m/s", 1852.0 / 3600.0),
    "lbf": ("N", 4.4482216152605),
    "lbf/kt": ("N per m/s", 4.4482216152605 / (1852.0 / 3600.0)),
    "lbf/g": ("N/g", 4.4482216152605),
}


def display_unit(unit: str, system: str = "US") -> tuple[str, float]:
    """The unit a view shows for a package unit, and the factor to it.

    Only weights, speeds and forces change (kg, m/s, N in SI); every other
    unit, and the computation itself, stays as it is.

    Parameters
    ----------
    unit : str
        The package's unit (``"lb"``, ``"kt"``, ``"lbf"``, ``"lbf/kt"``, ``"lbf/g"``, ...).
    system : {"US", "SI"}

    Returns
    -------
    (str, float)
        The unit shown and the factor: shown value = factor x package value.

    Examples
    --------
    >>> display_unit("lbf", "SI")
    ('N', 4.4482216152605)
    >>> display_unit("in", "SI"), display_unit("kt", "US")
    (('in', 1.0), ('kt', 1.0))
    """
    if system not in DISPLAY_SYSTEMS:
        raise ValueError(f"display units: expected one of {DISPLAY_SYSTEMS}, found {system!r}")
    if system == "SI" and unit in _SI:
        return _SI[unit]
    return unit, 1.0
