"""Input handling shared by the physics modules.

Numbers, numpy arrays and pandas Series are all accepted; results come back
as the kind given (a Series in gives a Series out on the same index), and a
bad element is named by its index label in the error message.
"""

from __future__ import annotations

from typing import Any, TypeAlias

import numpy as np
import pandas as pd

from trimlog.errors import TrimlogError

#: What the physics functions accept and return.
Numeric: TypeAlias = float | np.ndarray | pd.Series



def as_float_array(value: Any, name: str) -> np.ndarray:
    """Return ``value`` as a float array, or raise naming the argument."""
    if isinstance(value, pd.Series):
        value = value.to_numpy(dtype=float, na_value=np.nan)
    try:
        return np.asarray(value, dtype=float)
    except (TypeError, ValueError) as exc:
        raise TrimlogError(
            f"{name}: expected a number, array or Series of numbers, found {value!r}"
        ) from exc


def series_template(*values: Any) -> pd.Series | None:
    """Return the first Series among ``values``; every other Series must share its index."""
    template = None
    for value in values:
        if isinstance(value, pd.Series):
            if template is None:
                template = value
            elif not value.index.equals(template.index):
                raise TrimlogError(
                    "Series arguments must share one index; found indexes of lengths "
                    f"{len(template.index)} and {len(value.index)} that differ"
                )
    return template


def like_input(result: np.ndarray, *inputs: Any, name: str | None = None) -> Any:
    """Give ``result`` the kind of the inputs: Series, array or float."""
    template = series_template(*inputs)
    if template is not None:
        return pd.Series(np.broadcast_to(result, template.shape).copy(),
                         index=template.index, name=name)
    if np.ndim(result) == 0:
        return float(result)
    return result


def check_shapes(**values: Any) -> None:
    """Raise unless the named inputs have matching lengths (single values always match)."""
    shapes = {name: np.shape(value) for name, value in values.items() if value is not None}
    try:
        np.broadcast_shapes(*shapes.values())
    except ValueError:
        found = ", ".join(f"{name} {shape[0] if shape else 1}" for name, shape in shapes.items())
        raise TrimlogError(
            f"expected inputs of one length (or single values), found lengths {found}"
        ) from None


def where(index: int, size: int, template: pd.Series | None) -> str:
    """Describe where element ``index`` sits, for error messages."""
    if template is not None:
        label = template.index[index]
        # numpy scalars print as np.int64(4); the user wrote 4
        if isinstance(label, np.generic):
            label = label.item()
        return f" at index {label!r}"
    if size > 1:
        return f" at position {index}"
    return ""


def check_range(
    values: np.ndarray,
    low: float,
    high: float,
    name: str,
    unit: str,
    template: pd.Series | None = None,
    *,
    low_inclusive: bool = True,
) -> None:
    """Raise a TrimlogError naming the first value outside ``[low, high]``.

    NaN is let through (it marks a missing sample and propagates); +-inf is not.
    """
    flat = np.atleast_1d(values).ravel()
    below = flat < low if low_inclusive else flat <= low
    bad = below | (flat > high) | np.isinf(flat)
    if not bad.any():
        return
    positions = np.flatnonzero(bad)
    first = int(positions[0])
    count = (
        f"; {positions.size} of {flat.size} values are outside" if flat.size > 1 else ""
    )
    bracket = "[" if low_inclusive else "("
    raise TrimlogError(
        f"{name}: expected a value in {bracket}{low:g}, {high:g}] {unit}, "
        f"found {flat[first]:g} {unit}{where(first, flat.size, template)}{count}"
    )
