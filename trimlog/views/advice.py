"""Sentences every view shows the same way: units assumed, where to fly to tighten the estimate.

The numbers come from the typed results; nothing is computed here but the
choice of words (and whether a sentence adds anything).
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import TYPE_CHECKING

from trimlog.findings import Finding
from trimlog.views.formatting import number

if TYPE_CHECKING:
    from trimlog.stability.results import NextCg

#: A planned flight that shrinks the standard error of hn by less than this
#: fraction adds nothing worth a sentence (common practice, no source).
MIN_WORTHWHILE_GAIN = 0.10

ASSUMED_NOTE = ("a header without a unit is read as kt, lbf, degC or ft (the package's "
                "units); check these columns")


def assumed_units(log_findings: Iterable[Finding]) -> str:
    """The columns of one file whose unit was assumed, as ``'IAS' kt, 'FS' lbf``.

    Parameters
    ----------
    log_findings : iterable of Finding
        The findings of one file as read (``LogRead.findings``).

    Returns
    -------
    str
        Empty when every header carried its unit.

    Examples
    --------
    >>> from trimlog.findings import Severity, finding
    >>> assumed_units([finding("input.log.unit_assumed", Severity.CAUTION,
    ...                        header="IAS", unit="kt")])
    "'IAS' kt"
    >>> assumed_units([])
    ''
    """
    seen = dict.fromkeys(f"'{f.values['header']}' {f.values['unit']}"
                         for f in log_findings if f.code == "input.log.unit_assumed")
    return ", ".join(seen)


def precision_sentence(nxt: NextCg) -> str | None:
    """One sentence: where the next flight would tighten the neutral point, or None.

    None when there is no suggestion, or when the planned flight would shrink
    the standard error of the neutral point by less than
    :data:`MIN_WORTHWHILE_GAIN` (the sentence would add nothing).  The
    sentence says that the CG is chosen for precision, within the limits and
    the next-CG step, and is not itself a step aft.

    Parameters
    ----------
    nxt : NextCg
        ``StabilityResult.next_cg``.

    Returns
    -------
    str or None

    Examples
    --------
    >>> from trimlog.stability.results import NextCg
    >>> print(precision_sentence(NextCg(14.2, 65.5, "variance of hn", 0.49, 0.27,
    ...                                 (14.2, 30.3), "")))  # doctest: +NORMALIZE_WHITESPACE
    A flight near 14.2 %MAC (station 65.50 in), the forward CG limit, would narrow the
    stick-fixed neutral point most: its standard error from 0.49 to about 0.27 %MAC. This CG
    is chosen for precision within the CG limits and the next-CG step; it is not a step aft.
    >>> precision_sentence(NextCg(20.0, 68.0, "variance of hn", 0.30, 0.29, (14.2, 30.3), ""))
    """
    if nxt.cg_pct_mac is None:
        return None
    now, after = nxt.current_se_pct_mac, nxt.predicted_se_pct_mac
    if now is not None and after is not None and after > (1.0 - MIN_WORTHWHILE_GAIN) * now:
        return None
    where = ""
    rng = nxt.search_range_pct_mac
    if rng is not None and abs(nxt.cg_pct_mac - rng[0]) < 0.05:
        where = ", the forward CG limit,"
    elif rng is not None and abs(nxt.cg_pct_mac - rng[1]) < 0.05:
        where = ", the most aft CG the next-CG step allows,"
    station = ("" if nxt.station_in is None
               else f" (station {number(nxt.station_in, '.2f', 'in')})")
    text = f"A flight near {nxt.cg_pct_mac:.1f} %MAC{station}{where} would narrow the "
    if now is not None and after is not None:
        text += (f"stick-fixed neutral point most: its standard error from {now:.2f} to about "
                 f"{after:.2f} %MAC.")
    else:
        text += ("CG term of the trim lines most (the neutral point is not identifiable yet, "
                 "so no standard error can be given).")
    return (text + " This CG is chosen for precision within the CG limits and the next-CG "
            "step; it is not a step aft.")
