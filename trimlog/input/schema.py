r"""One declarative schema for trimlog's TOML inputs (aircraft profile, loading sheet).

Each input is described by a table of :class:`Key` rows: the dotted key, its
kind and unit, whether it is required, its default, its plausible range and a
one-line description.  The same few functions then do, for every key and every
file:

- reading the TOML safely (deep nesting and huge integers give a clear error,
  never ``RecursionError`` or ``OverflowError``);
- refusing unknown keys and sections, naming the key and the nearest valid one
  (``limits.min_static_margn`` -> ``limits.min_static_margin``);
- converting each value once to the package's declared unit, refusing values
  that are not finite or lie outside the plausible range, naming the key.

Adding a key to a file is one row in its table (see DEVELOPERS.md).  Rules
that tie several keys together (the forward CG limit ahead of the aft one, a
station inside a band around the MAC) stay in the module of the file.

Examples
--------
>>> keys = (Key("limits.min_static_margin", "number", low=0.0, high=40.0,
...             default=5.0, description="policy [%MAC]"),)
>>> data = load_toml("[limits]\nmin_static_margn = 12\n", "p.toml", _fail)
>>> check_keys(data, keys, _fail)  # doctest: +ELLIPSIS
Traceback (most recent call last):
...
trimlog.errors.TrimlogError: unknown key 'limits.min_static_margn'; did you mean ...?
"""

from __future__ import annotations

import datetime as dt
import difflib
import math
import tomllib
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from typing import Any

from trimlog.errors import TrimlogError
from trimlog.input.units import parse_quantity

__all__ = [
    "MAX_NESTING",
    "Key",
    "check_keys",
    "check_range",
    "finite_float",
    "load_toml",
    "read_key",
]

#: Deepest nesting of tables and arrays a trimlog TOML file may have.  The
#: formats need three levels (``[logger] columns = {...}``); anything deeper is
#: refused with a clear message before any recursive code can see it.
MAX_NESTING = 6

#: Kinds of value a key may hold.
KINDS = ("quantity", "number", "text", "date", "numbers", "texts", "mapping", "table")

#: Bracket depth refused before parsing (brackets inside strings count, hence the slack).
_PRESCAN_DEPTH = 64

Fail = Callable[[str, str], TrimlogError]


@dataclass(frozen=True)
class Key:
    """One key of a TOML input.

    Parameters
    ----------
    key : str
        Dotted key, ``"section.name"`` (or ``"name"`` at the top level).
    kind : str
        ``"quantity"`` (a string with a unit, converted to ``unit``),
        ``"number"`` (a plain number), ``"text"``, ``"date"`` (a TOML date),
        ``"numbers"`` / ``"texts"`` (lists), ``"mapping"`` (a table of
        text = text with free keys) or ``"table"`` (read by its own code;
        only its presence is checked here).
    unit : str
        Declared unit inside the package for a quantity (``"in"``, ``"ft^2"``).
    required : bool
        Whether the file must give it.
    default : float or str, optional
        Value used when the key is absent (None: absent stays None, or the
        file's module computes the default).
    low, high : float, optional
        Plausible range in ``unit`` (inclusive unless ``low_open``/``high_open``).
    low_open, high_open : bool
        Whether ``low``/``high`` themselves are excluded.
    absolute : bool
        Take the magnitude (elevator stops are accepted with either sign).
    attr : str
        Name of the attribute the value goes to (default: the key's last part).
    description : str
        One line for the documentation and the messages.
    choices : tuple of str
        For ``"text"``: the only values accepted (empty: any text).
    """

    key: str
    kind: str
    unit: str = ""
    required: bool = False
    default: float | str | None = None
    low: float | None = None
    high: float | None = None
    low_open: bool = False
    high_open: bool = False
    absolute: bool = False
    attr: str = ""
    description: str = ""
    choices: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise ValueError(f"{self.key}: unknown kind {self.kind!r}")

    @property
    def field(self) -> str:
        """The attribute the value goes to."""
        return self.attr or self.name

    @property
    def section(self) -> str:
        """The table the key lives in (``""`` for the top level)."""
        return self.key.rpartition(".")[0]

    @property
    def name(self) -> str:
        """The key's own name inside its table."""
        return self.key.rpartition(".")[2]

    def range_text(self) -> str:
        """The plausible range in words, e.g. ``"0..40 %MAC"``."""
        if self.choices:
            return "one of " + ", ".join(self.choices)
        if self.low is None and self.high is None:
            return ""
        unit = f" {self.unit}" if self.unit else ""
        if self.low is None:
            return f"{'below' if self.high_open else 'at most'} {self.high:g}{unit}"
        if self.high is None:
            return f"{'above' if self.low_open else 'at least'} {self.low:g}{unit}"
        if self.low_open or self.high_open:
            left = "(" if self.low_open else "["
            right = ")" if self.high_open else "]"
            return f"{left}{self.low:g}, {self.high:g}{right}{unit}"
        return f"{self.low:g}..{self.high:g}{unit}"


def _fail(key: str, message: str) -> TrimlogError:
    return TrimlogError(message)


def load_toml(text: str, source: str, fail: Fail, what: str = "valid TOML") -> dict[str, Any]:
    """Parse TOML text, refusing what would crash recursive or numeric code.

    Parameters
    ----------
    text : str
        The document.
    source : str
        File name for messages.
    fail : callable
        ``fail(key, message)`` returns the exception to raise (the file's own
        error type, which adds the file name).
    what : str
        What the file should be, for the message ("not {what}: ...").

    Returns
    -------
    dict

    Raises
    ------
    TrimlogError
        Not TOML, nested deeper than :data:`MAX_NESTING`, or an integer too
        long to read.
    """
    depth = _bracket_depth(text)
    if depth > _PRESCAN_DEPTH:
        raise fail("", f"tables or arrays nested {depth} deep; trimlog's files need at most "
                       f"{MAX_NESTING} levels")
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise fail("", f"not {what}: {exc}") from None
    except RecursionError:
        raise fail("", f"tables or arrays nested too deep (at most {MAX_NESTING} levels)") from None
    except ValueError as exc:  # an integer of thousands of digits
        raise fail("", f"a number is too long to read ({str(exc).split(':')[0]})") from None
    _check_depth(data, fail)
    return data


def _bracket_depth(text: str) -> int:
    """Deepest nesting of ``[``/``{`` in ``text``, counted without parsing (linear time).

    Brackets inside strings count too, so this can over-estimate; it only
    refuses absurd depths (over :data:`_PRESCAN_DEPTH`) before the recursive
    parser sees them.  The exact depth is checked again on the parsed data.
    """
    depth = deepest = 0
    for char in text:
        if char in "[{":
            depth += 1
            deepest = max(deepest, depth)
        elif char in "]}":
            depth = max(depth - 1, 0)
    return deepest


def _check_depth(data: Any, fail: Fail) -> None:
    stack: list[tuple[Any, int, str]] = [(data, 0, "")]
    while stack:
        value, depth, where = stack.pop()
        if depth > MAX_NESTING:
            raise fail(where, f"'{where}' is nested {depth} levels deep; trimlog's files need "
                              f"at most {MAX_NESTING}")
        if isinstance(value, Mapping):
            for name, item in value.items():
                stack.append((item, depth + 1, f"{where}.{name}" if where else str(name)))
        elif isinstance(value, list):
            for item in value:
                stack.append((item, depth + 1, where))


def check_keys(data: Mapping[str, Any], keys: Iterable[Key], fail: Fail) -> None:
    """Refuse unknown keys and sections, naming the nearest valid key.

    Raises
    ------
    TrimlogError
        From ``fail``, for the first unknown key in file order, or a section
        that is not a table.
    """
    keys = tuple(keys)
    known = {k.key: k for k in keys}
    sections = {k.section for k in keys} | {k.key for k in keys if k.kind == "table"}
    free = {k.key for k in keys if k.kind in ("mapping", "table")}
    stack: list[tuple[str, Mapping[str, Any]]] = [("", data)]
    while stack:
        prefix, table = stack.pop(0)
        for name, value in table.items():
            full = f"{prefix}.{name}" if prefix else str(name)
            if full in free:
                continue
            if full in known:
                continue
            if full in sections:
                if not isinstance(value, Mapping):
                    raise fail(full, f"'{full}' must be a table ([{full}]), found "
                                     f"{_kind_of(value)}")
                stack.append((full, value))
                continue
            raise fail(full, _unknown_message(full, known, sections))


def _unknown_message(full: str, known: Mapping[str, Key], sections: set[str]) -> str:
    candidates = list(known) + [s for s in sections if s]
    near = difflib.get_close_matches(full, candidates, n=1, cutoff=0.6)
    if not near:
        # A known name under the wrong section ("cruise.min_static_margin").
        name = full.rpartition(".")[2]
        near = [k for k in known if k.rpartition(".")[2] == name][:1]
    if not near:
        section = full.rpartition(".")[0]
        names = [k for k in known if k.rpartition(".")[0] == section]
        near = difflib.get_close_matches(full, names, n=1, cutoff=0.4)
    kind = "section" if "." not in full and full not in known else "key"
    hint = f"; did you mean '{near[0]}'?" if near else ""
    where = full.rpartition(".")[0]
    listing = sorted(k.rpartition(".")[2] for k in known if k.rpartition(".")[0] == where)
    if not near and listing:
        hint = f"; expected one of {', '.join(listing)}"
    return f"unknown {kind} '{full}'{hint}"


def _kind_of(value: Any) -> str:
    if isinstance(value, bool):
        return f"the boolean {str(value).lower()}"
    if isinstance(value, Mapping):
        return "a table"
    if isinstance(value, list):
        return "a list"
    return f"{type(value).__name__} {_short(value)}"


def _short(value: Any) -> str:
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def finite_float(value: Any, key: str, fail: Fail) -> float:
    """A plain TOML number as a finite float, however large the integer.

    Examples
    --------
    >>> finite_float(3, "tail.tau", _fail)
    3.0
    >>> finite_float(10**400, "aircraft.clmax_clean", _fail)  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    trimlog.errors.TrimlogError: ...: expected a plain finite number, found an integer of ...digits
    """
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise fail(key, f"{key}: expected a plain finite number, found {_kind_of(value)}")
    try:
        number = float(value)
    except OverflowError:
        raise fail(key, f"{key}: expected a plain finite number, found an integer of about "
                        f"{int(value.bit_length() * math.log10(2)) + 1} digits") from None
    if not math.isfinite(number):
        raise fail(key, f"{key}: expected a plain finite number, found {value!r}")
    return number


def check_range(spec: Key, value: float, fail: Fail, shown: Any = None) -> float:
    """Refuse ``value`` [spec.unit] outside the key's plausible range, naming the key.

    Parameters
    ----------
    spec : Key
    value : float
        In ``spec.unit``.
    fail : callable
    shown : object, optional
        What the user typed, for the message (default: ``value``).

    Returns
    -------
    float
        ``value`` unchanged.
    """
    low_bad = spec.low is not None and (value <= spec.low if spec.low_open else value < spec.low)
    high_bad = spec.high is not None and (
        value >= spec.high if spec.high_open else value > spec.high
    )
    if not math.isfinite(value) or low_bad or high_bad:
        typed = f"{value:g}" if shown is None else _short(shown)
        what = f" ({spec.description})" if spec.description else ""
        raise fail(spec.key, f"{spec.key}: {typed} is outside the plausible range "
                             f"{spec.range_text()}{what}")
    return value


def read_key(data: Mapping[str, Any], spec: Key, fail: Fail) -> Any:
    """The value of one key, converted and checked (None or the default when absent).

    Raises
    ------
    TrimlogError
        From ``fail``: a required key missing, a value of the wrong kind or
        unit, not finite, or outside the plausible range.
    """
    table: Any = data
    for part in spec.section.split(".") if spec.section else ():
        table = table.get(part, {}) if isinstance(table, Mapping) else {}
    if not isinstance(table, Mapping) or spec.name not in table:
        if spec.required:
            section = f" in [{spec.section}]" if spec.section else ""
            raise fail(spec.key, f"missing key '{spec.key}'{section} (required: "
                                 f"{spec.description or spec.key})")
        return spec.default
    raw = table[spec.name]
    return _convert(spec, raw, fail)


def _convert(spec: Key, raw: Any, fail: Fail) -> Any:  # noqa: PLR0911 - one branch per kind
    key = spec.key
    if spec.kind == "quantity":
        if isinstance(raw, int) and not isinstance(raw, bool):
            raw = finite_float(raw, key, fail)
        try:
            value = parse_quantity(raw, spec.unit, key=key)
        except TrimlogError as exc:
            raise fail(key, str(exc)) from None
        if spec.absolute:
            value = abs(value)
        return check_range(spec, value, fail, shown=raw)
    if spec.kind == "number":
        value = finite_float(raw, key, fail)
        return check_range(spec, abs(value) if spec.absolute else value, fail)
    if spec.kind == "text":
        if not isinstance(raw, str):
            raise fail(key, f"{key}: expected text, found {_kind_of(raw)}")
        if spec.required and not raw.strip():
            raise fail(key, f"{key}: expected a non-empty text, found {raw!r}")
        if spec.choices and not raw.strip() and not spec.required:
            return None  # an empty choice (a cleared form field) is not a declaration
        if spec.choices and raw.strip() not in spec.choices:
            near = difflib.get_close_matches(raw.strip().lower(), spec.choices, n=1, cutoff=0.5)
            hint = f"; did you mean {near[0]!r}?" if near else ""
            raise fail(key, f"{key}: expected one of " + ", ".join(
                repr(c) for c in spec.choices) + f", found {_short(raw)}{hint}")
        return raw.strip()
    if spec.kind == "date":
        if not isinstance(raw, dt.date):
            raise fail(key, f"{key}: expected a TOML date such as 2026-06-14, found "
                            f"{_kind_of(raw)}")
        return raw.date() if isinstance(raw, dt.datetime) else raw
    if spec.kind == "numbers":
        if not isinstance(raw, list):
            raise fail(key, f"{key}: expected a list of finite numbers, found {_kind_of(raw)}")
        return tuple(finite_float(v, key, fail) for v in raw)
    if spec.kind == "texts":
        if not isinstance(raw, list) or not all(isinstance(v, str) for v in raw):
            raise fail(key, f"{key}: expected a list of texts, found {_short(raw)}")
        return tuple(raw)
    if spec.kind == "mapping":
        if not isinstance(raw, Mapping) or not all(
            isinstance(k, str) and isinstance(v, str) for k, v in raw.items()
        ):
            raise fail(key, f"{key}: expected a table of text = text, found {_short(raw)}")
        return dict(raw)
    return raw


def describe(keys: Iterable[Key]) -> str:
    """A markdown table of the keys (for the documentation).

    Examples
    --------
    >>> print(describe([Key("fuel.density", "quantity", unit="lb/gal", low=3, high=10,
    ...                     default=6.0, description="fuel density")]))
    | key | kind | unit | required / default | plausible range | description |
    |---|---|---|---|---|---|
    | `fuel.density` | quantity | lb/gal | 6 | 3..10 lb/gal | fuel density |
    """
    lines = [
        "| key | kind | unit | required / default | plausible range | description |",
        "|---|---|---|---|---|---|",
    ]
    for k in keys:
        need = "required" if k.required else ("" if k.default is None else f"{k.default:g}"
                                               if isinstance(k.default, float | int)
                                               else str(k.default))
        lines.append(f"| `{k.key}` | {k.kind} | {k.unit} | {need} | {k.range_text()} | "
                     f"{k.description} |")
    return "\n".join(lines)
