"""Synthetic reduced points of known truth, for tests of the stability fits.

The points follow the linear trim theory exactly (Etkin & Reid, *Dynamics of
Flight*, sec. 2.5; Nelson, *Flight Stability and Automatic Control*, ch. 2):

* elevator to trim ``de = -[Cm0 + (h - hn) CL]/Cmde' - di_t/tau`` [deg], with
  ``Cmde'`` per degree and ``di_t`` the stabilizer incidence change of the
  flight's setting (``d(de0) = -di_t/tau``);
* stick force ``Fs/q = A_f + K (hn' - h) CL`` [ft^2], ``A_f`` set so that the
  stick force is zero at the flight's trim speed;
* ``q = K_q EAS^2`` and ``CL = n W/(q S)``;

plus Gaussian noise of known standard deviation, optional curvature and
outliers.  Every call with the same seed gives the same frame.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

#: q [psf] per EAS^2 [kt^2]: 0.5 * 0.0023769 slug/ft^3 * (1.687810 ft/s per kt)^2.
Q_PSF_PER_KT2 = 0.5 * 0.0023769 * 1.687810**2


@dataclass(frozen=True)
class Truth:
    """The aircraft behind the synthetic points.

    Attributes
    ----------
    hn : float
        Stick-fixed neutral point [fraction of MAC].
    cm0 : float
        Pitching moment at CL = 0 with zero elevator, reference setting [-].
    cmde_per_rad : float
        Elevator power [per rad] (negative).
    hn_free : float
        Stick-free neutral point [fraction of MAC].
    fsq_gain_ft2 : float
        ``K`` in ``d(Fs/q)/dCL = K (hn' - h)`` [ft^2].
    tau : float
        Elevator effectiveness [-], for the setting shift.
    """

    hn: float = 0.40
    cm0: float = 0.06
    cmde_per_rad: float = -1.3
    hn_free: float = 0.36
    fsq_gain_ft2: float = 15.0
    tau: float = 0.5

    @property
    def cmde_per_deg(self) -> float:
        """Elevator power per degree."""
        return self.cmde_per_rad * math.pi / 180.0

    def elevator_deg(self, cl, h, delta_incidence_deg=0.0):
        """Elevator to trim [deg]."""
        base = -(self.cm0 + (h - self.hn) * cl) / self.cmde_per_deg
        return base - delta_incidence_deg / self.tau

    def delev_dcl_deg(self, h):
        """Elevator-to-trim gradient (hn - h)/Cmde' [deg]."""
        return (self.hn - h) / self.cmde_per_deg

    def delev0_deg(self, delta_incidence_deg=0.0):
        """Intercept at CL = 0: -Cm0/Cmde' - di_t/tau [deg]."""
        return -self.cm0 / self.cmde_per_deg - delta_incidence_deg / self.tau

    def dfsq_dcl_ft2(self, h):
        """Stick-free gradient K (hn' - h) [ft^2]."""
        return self.fsq_gain_ft2 * (self.hn_free - h)


def make_points(
    truth: Truth = Truth(),
    *,
    cgs_pct_mac: Sequence[float] = (15.0, 22.0, 29.0),
    eas_kt: Sequence[float] = (65.0, 75.0, 85.0, 95.0, 110.0, 125.0),
    weight_lb: float = 1500.0,
    wing_area_ft2: float = 118.0,
    nz_g: float = 1.0,
    trim_eas_kt: float = 95.0,
    settings: Mapping[int, tuple[str, float]] | None = None,
    sigma_elev_deg: float = 0.0,
    sigma_force_lbf: float = 0.0,
    curvature_deg: float = 0.0,
    curvature_from_cl: float = 0.8,
    outliers: Mapping[tuple[int, int], float] | None = None,
    force: bool = True,
    seed: int | np.random.Generator = 0,
    lemac_in: float = 60.0,
    mac_in: float = 51.0,
) -> pd.DataFrame:
    """Reduced points (DEVELOPERS.md contract) of one flight per CG.

    Parameters
    ----------
    truth : Truth
    cgs_pct_mac : sequence of float
        CG of each flight [%MAC]; flights are named ``F1``, ``F2``, ...
    eas_kt : sequence of float
        Speeds of each flight's points [kt EAS].
    weight_lb, wing_area_ft2, nz_g : float
    trim_eas_kt : float
        Speed where the stick force is zero [kt].
    settings : mapping, optional
        ``flight index -> (label, incidence change [deg])``; default one
        setting ``"s0"`` with no change.
    sigma_elev_deg, sigma_force_lbf : float
        Noise standard deviations [deg], [lbf].
    curvature_deg : float
        Adds ``curvature_deg * max(CL - curvature_from_cl, 0)^2`` to the
        elevator (the trim curve bending at high CL).
    outliers : mapping, optional
        ``(flight index, point index) -> elevator offset [deg]``.
    force : bool
        Whether stick force is logged (else NaN).
    seed : int or numpy.random.Generator
    lemac_in, mac_in : float
        For the ``cg_in`` column [in].
    """
    rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(seed)
    settings = dict(settings or {})
    outliers = dict(outliers or {})
    rows = []
    for i, cg in enumerate(cgs_pct_mac):
        h = cg / 100.0
        label, d_inc = settings.get(i, ("s0", 0.0))
        cl_trim = nz_g * weight_lb / (Q_PSF_PER_KT2 * trim_eas_kt**2 * wing_area_ft2)
        a_f = -truth.dfsq_dcl_ft2(h) * cl_trim
        for j, v in enumerate(eas_kt):
            q = Q_PSF_PER_KT2 * v**2
            cl = nz_g * weight_lb / (q * wing_area_ft2)
            elev = truth.elevator_deg(cl, h, d_inc)
            elev += curvature_deg * max(cl - curvature_from_cl, 0.0) ** 2
            elev += sigma_elev_deg * rng.standard_normal() + outliers.get((i, j), 0.0)
            fs = q * (a_f + truth.dfsq_dcl_ft2(h) * cl) + sigma_force_lbf * rng.standard_normal()
            rows.append({
                "flight": f"F{i + 1}", "point": j + 1, "included": True, "cl": cl,
                "elevator_deg": elev,
                "stick_force_lbf": fs if force else np.nan,
                "fs_over_q_ft2": fs / q if force else np.nan,
                "eas_kt": v, "cas_kt": v, "tas_kt": v, "q_psf": q, "weight_lb": weight_lb,
                "nz_g": nz_g, "nz_logged": False, "h": h, "cg_pct_mac": cg,
                "cg_in": lemac_in + h * mac_in, "stab_setting": label,
                "stab_incidence_deg": d_inc, "config": "clean",
            })
    return pd.DataFrame(rows)
