"""Bracketed root finding without importing :mod:`scipy.optimize`.

``scipy.optimize`` costs about 0.3 s of every command's start-up (it pulls in
most of scipy), and the analysis needs one bracketed scalar root.  This is
Brent's method step for step as scipy's ``brentq`` does it (its C source,
``Zeros/brentq.c``), so the roots are bit-identical to ``scipy.optimize.brentq``
with the same tolerances (tested against it).

References
----------
.. [1] R. P. Brent, *Algorithms for Minimization Without Derivatives*,
   Prentice-Hall, 1973, ch. 4.
"""

from __future__ import annotations

import math
from collections.abc import Callable

#: scipy's defaults: relative tolerance 4 * machine epsilon, at most 100 iterations.
BRENT_RTOL = 4.0 * 2.220446049250313e-16
BRENT_MAXITER = 100


def brent_root(f: Callable[[float], float], xa: float, xb: float, *, xtol: float = 2e-12,
               rtol: float = BRENT_RTOL, maxiter: int = BRENT_MAXITER) -> float | None:
    """Root of ``f`` in ``[xa, xb]`` by Brent's method, None when it cannot be found.

    Parameters
    ----------
    f : callable
        Continuous function of one float; ``f(xa)`` and ``f(xb)`` of opposite signs.
    xa, xb : float
        The bracket.
    xtol, rtol : float
        Absolute and relative tolerance on the root (as scipy's ``brentq``).
    maxiter : int
        Iteration cap.

    Returns
    -------
    float or None
        The root; None when the bracket does not change sign, ``f`` returns
        NaN, or the iteration does not converge (where scipy would raise).

    Examples
    --------
    >>> round(brent_root(lambda x: x * x - 2.0, 0.0, 2.0), 12)
    1.414213562373
    >>> brent_root(lambda x: x * x + 1.0, 0.0, 2.0) is None
    True
    """
    # Variable names follow scipy's brentq.c: cur is the best estimate, pre the previous
    # one, blk the contrapoint; s* are step lengths.
    xpre, xcur = float(xa), float(xb)
    xblk = fblk = spre = scur = 0.0
    fpre, fcur = float(f(xpre)), float(f(xcur))
    if math.isnan(fpre) or math.isnan(fcur):
        return None
    if fpre == 0.0:
        return xpre
    if fcur == 0.0:
        return xcur
    if math.copysign(1.0, fpre) == math.copysign(1.0, fcur):
        return None
    for _ in range(maxiter):
        if fpre != 0.0 and fcur != 0.0 and math.copysign(1.0, fpre) != math.copysign(1.0, fcur):
            xblk, fblk = xpre, fpre
            spre = scur = xcur - xpre
        if abs(fblk) < abs(fcur):
            xpre, xcur, xblk = xcur, xblk, xcur
            fpre, fcur, fblk = fcur, fblk, fcur
        delta = (xtol + rtol * abs(xcur)) / 2
        sbis = (xblk - xcur) / 2
        if fcur == 0.0 or abs(sbis) < delta:
            return xcur
        if abs(spre) > delta and abs(fcur) < abs(fpre):
            if xpre == xblk:  # interpolate (secant)
                stry = -fcur * (xcur - xpre) / (fcur - fpre)
            else:  # extrapolate (inverse quadratic)
                dpre = (fpre - fcur) / (xpre - xcur)
                dblk = (fblk - fcur) / (xblk - xcur)
                stry = -fcur * (fblk * dblk - fpre * dpre) / (dblk * dpre * (fblk - fpre))
            if 2 * abs(stry) < min(abs(spre), 3 * abs(sbis) - delta):
                spre, scur = scur, stry  # good short step
            else:
                spre = scur = sbis  # bisect
        else:
            spre = scur = sbis  # bisect
        xpre, fpre = xcur, fcur
        xcur += scur if abs(scur) > delta else (delta if sbis > 0 else -delta)
        fcur = float(f(xcur))
        if math.isnan(fcur):
            return None
    return None
