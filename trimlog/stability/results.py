"""Result types of the stability analysis (frozen dataclasses).

Every number in these results is a finite float or ``None``; a ``None``
comes with a plain-words reason or verdict beside it.  Units are in the field
names (DEVELOPERS.md): ``_deg``, ``_pct_mac``, ``_ft2``, ``_lbf_per_kt``,
``_kt``, ``_in``, ``_per_rad``.  ``ci95`` fields are ``(lo, hi)`` 95 %
intervals.  See :mod:`trimlog.stability.neutral_points` for the theory.
"""

from __future__ import annotations

from collections.abc import Hashable
from dataclasses import dataclass

import pandas as pd

from trimlog.errors import NotIdentifiableError
from trimlog.findings import Finding
from trimlog.statistics.fits import LinearFit
from trimlog.statistics.flight_effects import FlightLevelFit


@dataclass(frozen=True)
class FlightGradient:
    """Trim-line fits of one flight (one loading).

    Attributes
    ----------
    flight : str
    cg_pct_mac : float
        Mean CG of the flight's included points [%MAC].
    h : float
        The same as a fraction of the MAC [-].
    n_points : int
        Included points of the flight.
    stab_settings : tuple of str
        Stabilizer settings flown (an intercept is fitted for each).
    cl_range : (float, float)
        Lowest and highest CL flown [-].
    delev_dcl_deg : float or None
        Elevator-to-trim gradient d(de)/dCL [deg per unit CL]; None with
        ``elevator_verdict`` saying why.
    delev_dcl_ci95_deg : (float, float) or None
        Its 95 % interval [deg].
    delev_dcl_se_deg : float or None
        Its standard error [deg] (the two-stage method weights by 1/se^2).
    delev0_deg : float or None
        Intercept at CL = 0 [deg] (single-setting flights only).
    elev_r_squared : float or None
    elev_residual_std_deg : float or None
        Residual standard deviation of the elevator fit [deg].
    elevator_verdict : str
        Plain words: stable / neutral within the scatter / unstable, or why
        no gradient was fitted.
    n_force_points : int
        Included points with a stick force.
    dfsq_dcl_ft2 : float or None
        Stick-free gradient d(Fs/q)/dCL [ft^2]; positive is stable.
    dfsq_dcl_ci95_ft2 : (float, float) or None
    fsq_r_squared : float or None
    fsq_residual_std_ft2 : float or None
    trim_eas_kt : float or None
        Speed where the fitted stick force is zero [kt EAS].
    dfs_dv_lbf_per_kt : float or None
        Stick-force gradient at the trim speed [lbf/kt]; negative is stable
        (a pull is needed to slow down).
    dfs_dv_ci95_lbf_per_kt : (float, float) or None
        Delta-method 95 % interval [lbf/kt].
    stick_force_verdict : str
    warnings : tuple of str
        ``findings`` in words.
    findings : tuple of Finding
        Coded (``stability.gradient.*``).
    """

    flight: str
    cg_pct_mac: float
    h: float
    n_points: int
    stab_settings: tuple[str, ...]
    cl_range: tuple[float, float]
    delev_dcl_deg: float | None
    delev_dcl_ci95_deg: tuple[float, float] | None
    delev_dcl_se_deg: float | None
    delev0_deg: float | None
    elev_r_squared: float | None
    elev_residual_std_deg: float | None
    elevator_verdict: str
    n_force_points: int
    dfsq_dcl_ft2: float | None
    dfsq_dcl_ci95_ft2: tuple[float, float] | None
    fsq_r_squared: float | None
    fsq_residual_std_ft2: float | None
    trim_eas_kt: float | None
    dfs_dv_lbf_per_kt: float | None
    dfs_dv_ci95_lbf_per_kt: tuple[float, float] | None
    stick_force_verdict: str
    warnings: tuple[str, ...] = ()
    findings: tuple[Finding, ...] = ()


@dataclass(frozen=True)
class NeutralPoint:
    """A neutral point, or the plain reason why the data cannot give one.

    Attributes
    ----------
    kind : str
        ``"stick_fixed"`` or ``"stick_free"``.
    method : str
        ``"pooled"`` (one model over every point) or ``"two_stage"``
        (per-flight gradients against CG).
    identifiable : bool
        False whenever ``reason`` is not empty; then every number is None.
    pct_mac : float or None
        Estimate [%MAC].
    ci95_pct_mac : (float, float) or None
        Fieller 95 % interval [%MAC].
    delta_ci95_pct_mac : (float, float) or None
        Delta-method 95 % interval [%MAC], for comparison.
    se_pct_mac : float or None
        Delta-method standard error [%MAC].
    station_in : float or None
        Estimate as a station aft of the datum [in] (needs the profile).
    ci95_station_in : (float, float) or None
    reason : str
        Empty when identifiable; otherwise why not, in plain words.
    cg_spread_pct_mac : float
        Spread of the CGs that were fitted [%MAC].
    n_points, n_flights : int
    """

    kind: str
    method: str
    identifiable: bool
    pct_mac: float | None
    ci95_pct_mac: tuple[float, float] | None
    delta_ci95_pct_mac: tuple[float, float] | None
    se_pct_mac: float | None
    station_in: float | None
    ci95_station_in: tuple[float, float] | None
    reason: str
    cg_spread_pct_mac: float
    n_points: int
    n_flights: int


@dataclass(frozen=True)
class Outlier:
    """A point whose residual fails the outlier test (offered for exclusion, never dropped).

    Attributes
    ----------
    model : str
        ``"stick_fixed"`` or ``"stick_free"``.
    flight : str
    point : int
    row : Hashable
        Index label of the row in the reduced-points table.
    residual : float
        Observed minus fitted [deg or ft^2].
    studentized_residual : float
        Externally studentized residual [-].
    bonferroni_p : float
    """

    model: str
    flight: str
    point: int
    row: Hashable
    residual: float
    studentized_residual: float
    bonferroni_p: float


@dataclass(frozen=True)
class RobustCheck:
    """The pooled neutral point from a Huber M-estimate beside the least-squares one.

    Attributes
    ----------
    pct_mac : float or None
        Robust estimate of the neutral point [%MAC] (no interval: a check).
    shift_pct_mac : float or None
        Robust minus least-squares estimate [%MAC].
    note : str
    """

    pct_mac: float | None
    shift_pct_mac: float | None
    note: str


@dataclass(frozen=True)
class Curvature:
    """Test of a CL^2 term added to the pooled model.

    Attributes
    ----------
    tested : bool
    cl2_coef : float or None
        Coefficient of CL^2 [deg or ft^2].
    p_value : float or None
    significant : bool
        p < :data:`CURVATURE_P`.
    cl_max_linear : float or None
        When significant: the highest CL up to which the points show no
        significant curvature (found by leaving out the highest-CL points one
        by one, at most a third of them); fit up to this CL.
    restricted : NeutralPoint or None
        The neutral point refitted on CL <= ``cl_max_linear``.
    note : str
    """

    tested: bool
    cl2_coef: float | None
    p_value: float | None
    significant: bool
    cl_max_linear: float | None
    restricted: NeutralPoint | None
    note: str


@dataclass(frozen=True)
class InterceptCheck:
    """Test whether the trim lines of flights with one stabilizer setting meet at CL = 0.

    The pooled stick-fixed model assumes they do (one intercept per setting).
    An elevator zero offset between flights, an unlogged rigging change or a
    mislabelled setting breaks that and biases the pooled neutral point; the
    two-stage estimate does not depend on it.

    Attributes
    ----------
    tested : bool
        False when no setting was flown on two or more flights.
    f_statistic, p_value : float or None
        F test of one intercept per flight against one per setting.
    significant : bool
        p < 0.01.
    worst_flight : str or None
        The flight whose own intercept lies farthest from the median
        intercept of the flights of its setting.
    worst_offset_deg : float or None
        That distance [deg].
    note : str
    """

    tested: bool
    f_statistic: float | None
    p_value: float | None
    significant: bool
    worst_flight: str | None
    worst_offset_deg: float | None
    note: str


@dataclass(frozen=True, eq=False)
class PooledFit:
    """One linear model over every included point, and what follows from it.

    Stick-fixed: ``elevator_deg = a[setting] + b*cl + c*h*cl``; stick-free:
    ``fs_over_q_ft2 = a[flight] + b*cl + c*h*cl``.  ``params`` are named
    ``a[<group>]``, ``cl`` and ``h_cl``.

    Attributes
    ----------
    kind : str
        ``"stick_fixed"`` or ``"stick_free"``.
    intercept_by : str
        ``"stab_setting"`` or ``"flight"``.
    groups : tuple of str
        Intercept groups in order of first appearance.
    latest_group : str
        Group of the last included row (the latest setting flown).
    n_points : int
    cl_range : (float, float)
    cg_range_pct_mac : (float, float)
    has_cg_term : bool
        False when the CGs flown cannot separate the ``h*cl`` term (then the
        model is ``a + b*cl`` and valid at the CG flown only).
    linear : LinearFit or None
        The fit (params, cov, df_resid, residual_std); None when no model
        could be fitted (see ``neutral_point.reason``).
    neutral_point : NeutralPoint
    elevator_power_per_rad : float or None
        Cm_de [per rad] = -(180/pi)/c (stick-fixed only).
    elevator_power_ci95_per_rad : (float, float) or None
    robust : RobustCheck or None
    outliers : tuple of Outlier
    curvature : Curvature or None
    intercept_check : InterceptCheck or None
        Stick-fixed only.
    warnings : tuple of str
        ``findings`` in words.
    independent_neutral_point : NeutralPoint or None
        The neutral point of the ordinary pooled fit, which treats every
        point as independent (kept for comparison; its interval is too short
        when a flight's CG or force zero is off).  ``neutral_point`` is the
        headline: the flight-level model of
        :mod:`trimlog.statistics.flight_effects`.
    flight_level : FlightLevelFit or None
        That model's fit (None when it could not be fitted).
    force_zeros : tuple of ForceZero
        Stick-free only: the fitted gauge zero of each flight whose trim speed was
        declared (then ``Fs/q = F0/q + B (CL - CL_trim)``; see
        :mod:`trimlog.stability.stick_force`).
    trim_anchor : TrimAnchor or None
        Which flights were so anchored.
    """

    kind: str
    intercept_by: str
    groups: tuple[str, ...]
    latest_group: str | None
    n_points: int
    cl_range: tuple[float, float] | None
    cg_range_pct_mac: tuple[float, float] | None
    has_cg_term: bool
    linear: LinearFit | None
    neutral_point: NeutralPoint
    elevator_power_per_rad: float | None = None
    elevator_power_ci95_per_rad: tuple[float, float] | None = None
    robust: RobustCheck | None = None
    outliers: tuple[Outlier, ...] = ()
    curvature: Curvature | None = None
    intercept_check: InterceptCheck | None = None
    warnings: tuple[str, ...] = ()
    independent_neutral_point: NeutralPoint | None = None
    flight_level: FlightLevelFit | None = None
    #: Coded checks of the fit (``stability.fit.*``): outliers, robust shift, curvature,
    #: intercepts.
    findings: tuple[Finding, ...] = ()
    #: Stick-free only: fitted force-gauge zero of each flight trimmed at a declared speed
    #: (``trimlog.stability.stick_force.ForceZero``), and the anchor used.
    force_zeros: tuple = ()
    trim_anchor: object = None

    @property
    def params(self) -> pd.Series | None:
        """Coefficients by name (copy), None when no model was fitted."""
        return None if self.linear is None else self.linear.params.copy()

    @property
    def cov(self) -> pd.DataFrame | None:
        """Covariance of the coefficients (copy), None when no model was fitted."""
        return None if self.linear is None else self.linear.cov.copy()

    def intercepts(self) -> pd.Series:
        """Intercept at CL = 0 of each group [deg or ft^2], indexed by group label."""
        self._require()
        names = [f"a[{g}]" for g in self.groups]
        return pd.Series(self.linear.params[names].to_numpy(), index=list(self.groups))

    def intercept_cov(self) -> pd.DataFrame:
        """Covariance of the group intercepts, labelled by group."""
        self._require()
        names = [f"a[{g}]" for g in self.groups]
        block = self.linear.cov.loc[names, names].to_numpy()
        return pd.DataFrame(block, index=list(self.groups), columns=list(self.groups))

    def _require(self) -> None:
        if self.linear is None:
            raise NotIdentifiableError(
                f"{self.kind.replace('_', '-')} model: no fit available "
                f"({self.neutral_point.reason})"
            )


@dataclass(frozen=True, eq=False)
class TwoStageFit:
    """The classic two-stage neutral point: per-flight gradients against CG.

    Attributes
    ----------
    neutral_point : NeutralPoint
    elevator_power_per_rad : float or None
        -(180/pi) / slope of gradient against h.
    elevator_power_ci95_per_rad : (float, float) or None
    linear : LinearFit or None
        The weighted fit ``gradient = alpha + beta*h`` (params ``const``, ``h``).
    flights_used : tuple of str
    weighting : str
        ``"1/variance"`` or ``"equal"`` (when a gradient has zero variance).
    """

    neutral_point: NeutralPoint
    elevator_power_per_rad: float | None
    elevator_power_ci95_per_rad: tuple[float, float] | None
    linear: LinearFit | None
    flights_used: tuple[str, ...]
    weighting: str


@dataclass(frozen=True)
class CriticalNeutralPoint:
    """The neutral point that limits: the one whose lower 95 % bound is further forward.

    Attributes
    ----------
    kind : str
        ``"stick_fixed"`` or ``"stick_free"``.
    pct_mac : float
        Its estimate [%MAC].
    ci95_pct_mac : (float, float)
        Its 95 % interval [%MAC].
    station_in : float or None
        Its estimate as a station [in].
    reason : str
        Why this one limits, in plain words (and what is unknown).
    """

    kind: str
    pct_mac: float
    ci95_pct_mac: tuple[float, float]
    station_in: float | None
    reason: str


@dataclass(frozen=True)
class NextStep:
    """The most aft CG for the next flight, with the reasoning (the one next-CG rule).

    Attributes
    ----------
    max_cg_pct_mac, max_cg_station_in : float or None
        None when no step aft can be supported.
    min_static_margin_pct_mac : float
        The margin policy used [%MAC].
    step_max_pct_mac : float
        Largest step beyond the most aft CG flown [%MAC].
    most_aft_flown_pct_mac : float or None
    limited_by : str
        ``"stick_free_np"``, ``"stick_fixed_np"``, ``"policy_step"``,
        ``"aft_limit"`` or ``"none"``.
    reason : str
        The reasoning in plain words; names the limiting neutral point, and
        says when the stick-free margin is unknown.
    margin_bound_pct_mac : float or None
        The margin-policy bound: the CG at which the lower 95 % bound of the
        critical neutral point's margin equals the policy minimum,
        ``hn_lo - SM_min`` for the known neutral point with the most forward
        lower bound [%MAC]; None while neither neutral point is identifiable.
        It may lie forward of the CGs flown (then no step aft is supported).
    """

    max_cg_pct_mac: float | None
    max_cg_station_in: float | None
    min_static_margin_pct_mac: float
    step_max_pct_mac: float
    most_aft_flown_pct_mac: float | None
    limited_by: str
    reason: str
    margin_bound_pct_mac: float | None = None


@dataclass(frozen=True)
class StaticMargin:
    """Static margins hn - h at one CG [%MAC], with Fieller bounds shifted.

    Attributes
    ----------
    label : str
        Flight name, ``"forward CG limit"`` or ``"aft CG limit"``.
    flight : str or None
        The flight, None for a limit.
    cg_pct_mac : float
    stick_fixed_pct_mac, stick_free_pct_mac : float or None
    stick_fixed_ci95_pct_mac, stick_free_ci95_pct_mac : (float, float) or None
    meets_minimum : bool or None
        True only when every known lower 95 % bound (stick-fixed, stick-free)
        is at least the profile's minimum; None when no bound is known.
    stick_fixed_lower95_pct_mac, stick_free_lower95_pct_mac : float or None
        Lower 95 % bounds of the two margins [%MAC]; None when unknown.
    limited_by : str or None
        ``"stick_fixed_np"`` or ``"stick_free_np"``: the neutral point whose
        margin has the smaller lower bound (the one that limits); None when
        neither is known.
    """

    label: str
    flight: str | None
    cg_pct_mac: float
    stick_fixed_pct_mac: float | None
    stick_fixed_ci95_pct_mac: tuple[float, float] | None
    stick_free_pct_mac: float | None
    stick_free_ci95_pct_mac: tuple[float, float] | None
    meets_minimum: bool | None
    stick_fixed_lower95_pct_mac: float | None = None
    stick_free_lower95_pct_mac: float | None = None
    limited_by: str | None = None


@dataclass(frozen=True)
class ElevatorPrediction:
    """Elevator to trim predicted by the pooled stick-fixed model.

    Attributes
    ----------
    elevator_deg : float
        Predicted elevator [deg, trailing-edge down positive].
    ci95_deg : (float, float) or None
        95 % confidence interval of the trim line there [deg].
    pi95_deg : (float, float) or None
        95 % prediction interval of one new trim point [deg].
    cl, cg_pct_mac : float
    setting : str
    warnings : tuple of str
    """

    elevator_deg: float
    ci95_deg: tuple[float, float] | None
    pi95_deg: tuple[float, float] | None
    cl: float
    cg_pct_mac: float
    setting: str
    warnings: tuple[str, ...] = ()


@dataclass(frozen=True, eq=False)
class CruiseElevators:
    """Elevator to trim at one CL and CG under several stabilizer settings, jointly.

    The values share the slopes of one fit, and the intercept of a setting
    appears in each contrast that uses it, so their errors are correlated:
    ``cov`` keeps that, for the incidence change (elevator at cruise over the
    intercept shift) and the before/after comparison.

    Attributes
    ----------
    settings : tuple of str
        Stabilizer settings, in the order of ``elevator_deg``.
    cl : float
        Lift coefficient [-].
    cg_pct_mac : float
        CG [%MAC].
    elevator_deg : tuple of float
        Elevator to trim under each setting [deg, trailing-edge down positive].
    cov : numpy.ndarray
        Their covariance [deg^2].
    df : float
        Degrees of freedom of the t quantile.
    method : str
        ``"flight_level"`` (errors shared by a flight, the headline model) or
        ``"independent"`` (every point independent; used only when the
        flight-level model could not be fitted).
    """

    settings: tuple[str, ...]
    cl: float
    cg_pct_mac: float
    elevator_deg: tuple[float, ...]
    cov: object
    df: float
    method: str

    def ci95(self, setting: str) -> tuple[float, float]:
        """95 % t interval of the elevator under one setting [deg]."""
        from trimlog.statistics.fits import t_quantile
        i = self.settings.index(setting)
        half = t_quantile(self.df) * float(self.cov[i, i]) ** 0.5
        return (self.elevator_deg[i] - half, self.elevator_deg[i] + half)


@dataclass(frozen=True)
class StopFlag:
    """An included point whose elevator is at (within 0.5 deg of) a stop."""

    flight: str
    point: int
    row: Hashable
    elevator_deg: float
    stop: str


@dataclass(frozen=True)
class AuthorityCase:
    """Elevator predicted at one CLmax at the forward CG limit, against the up stop.

    Attributes
    ----------
    case : str
        ``"clean"`` or ``"landing"``.
    clmax : float
        Maximum lift coefficient of the profile [-].
    cg_pct_mac : float
        Forward CG limit [%MAC].
    setting : str
        Stabilizer setting of the prediction.
    elevator_deg : float
        Predicted elevator to trim [deg, trailing-edge down positive].
    ci95_deg, pi95_deg : (float, float) or None
        Confidence interval of the trim line and prediction interval of one trim [deg].
    up_stop_deg : float
        The up stop as an elevator angle [deg] (negative).
    margin_deg : float
        Predicted elevator minus the up stop [deg]: up elevator still in hand.
    margin_conservative_deg : float or None
        The same from the more-up end of the prediction interval [deg].
    extrapolated : bool
        CLmax lies beyond the CL flown, or the data are of another configuration.
    verdict : str
    notes : tuple of str
    verdict_code : str
        The verdict as a code for the findings: ``"up_stop_reached"``,
        ``"up_stop_may_be_reached"`` (within the prediction interval),
        ``"reserve_short"`` or ``"reserve_kept"``.
    """

    case: str
    clmax: float
    cg_pct_mac: float
    setting: str
    elevator_deg: float
    ci95_deg: tuple[float, float] | None
    pi95_deg: tuple[float, float] | None
    up_stop_deg: float
    margin_deg: float
    margin_conservative_deg: float | None
    extrapolated: bool
    verdict: str
    notes: tuple[str, ...] = ()
    verdict_code: str = ""


@dataclass(frozen=True)
class ElevatorAuthority:
    """Elevator authority at the forward CG limit.

    Attributes
    ----------
    cases : tuple of AuthorityCase
        One per CLmax that could be predicted.
    reserve_deg : float
        Up elevator to keep in hand at CLmax (profile) [deg].
    most_forward_cg_pct_mac : float or None
        Most forward CG at which the reserve remains at the first case's CLmax
        (point estimate) [%MAC].
    most_forward_cg_conservative_pct_mac : float or None
        The same with the prediction interval's more-up end [%MAC].
    most_forward_cg_station_in : float or None
        Conservative value as a station [in].
    reason : str
        Why something is missing (empty otherwise).
    warnings : tuple of str
        Always includes the ground-effect caution.
    """

    cases: tuple[AuthorityCase, ...]
    reserve_deg: float
    most_forward_cg_pct_mac: float | None
    most_forward_cg_conservative_pct_mac: float | None
    most_forward_cg_station_in: float | None
    reason: str
    warnings: tuple[str, ...]
    #: ``warnings`` coded (``stability.authority.*``).
    findings: tuple[Finding, ...] = ()


@dataclass(frozen=True)
class NextCg:
    """The CG the next flight should be flown at to tighten the neutral point.

    Attributes
    ----------
    cg_pct_mac, station_in : float or None
        Recommended CG [%MAC] and station [in]; None with ``reason``.
    criterion : str
        ``"variance of hn"`` (delta method) or ``"variance of the CG term"``
        (when hn is not yet identifiable).
    current_se_pct_mac, predicted_se_pct_mac : float or None
        Standard error of hn now and after the planned flight [%MAC]
        (``"variance of hn"`` only).
    search_range_pct_mac : (float, float) or None
        CGs considered: forward limit to the most aft allowed (aft limit, the
        step beyond the most aft CG flown, and the minimum margin ahead of the
        neutral point's forward bound).
    reason : str
    """

    cg_pct_mac: float | None
    station_in: float | None
    criterion: str
    current_se_pct_mac: float | None
    predicted_se_pct_mac: float | None
    search_range_pct_mac: tuple[float, float] | None
    reason: str


@dataclass(frozen=True, eq=False)
class StabilityResult:
    """Everything the stability analysis of one configuration found.

    Attributes
    ----------
    config : str or None
        Configuration label of the points.
    n_points, n_included, n_excluded : int
        Rows given, fitted, and kept out (``included`` False; never deleted).
    n_without_force : int
        Included points without a stick force (left out of the stick-free fits).
    gradients : tuple of FlightGradient
    stick_fixed : PooledFit
        Pooled stick-fixed model (primary neutral point, elevator power,
        :func:`trimlog.stability.neutral_points.predict_elevator`).
    stick_fixed_two_stage : TwoStageFit
    stick_free : PooledFit or None
        None when no stick force was logged.
    margins : tuple of StaticMargin
        At each flight's CG, then the forward and aft limits (with a profile).
    authority : ElevatorAuthority or None
        None without a profile.
    next_cg : NextCg
    stop_flags : tuple of StopFlag
    findings : tuple of Finding
        Coded (``stability.*``); ``warnings`` gives them in words.
    critical : CriticalNeutralPoint or None
        The limiting neutral point; None when neither is identifiable.
    next_step : NextStep or None
        The most aft CG for the next flight (the same rule as ``trimlog
        plan``); None without a profile.
    """

    config: str | None
    n_points: int
    n_included: int
    n_excluded: int
    n_without_force: int
    gradients: tuple[FlightGradient, ...]
    stick_fixed: PooledFit
    stick_fixed_two_stage: TwoStageFit
    stick_free: PooledFit | None
    margins: tuple[StaticMargin, ...]
    authority: ElevatorAuthority | None
    next_cg: NextCg
    stop_flags: tuple[StopFlag, ...]
    findings: tuple[Finding, ...]
    critical: CriticalNeutralPoint | None = None
    next_step: NextStep | None = None

    @property
    def warnings(self) -> tuple[str, ...]:
        """The findings in words (from the catalogue), each once."""
        return tuple(dict.fromkeys(f.line() for f in self.findings))


#: ``limited_by`` codes of the maneuvering limits on the next CG, and their words.
MANEUVER_LIMIT_WORDS = {
    "stick_fixed_mp": "stick-fixed maneuver margin",
    "stick_free_mp": "stick-free maneuver margin",
    "min_stick_force_per_g": "minimum stick force per g",
}
#: Words for the ``next_step.limited_by`` codes of the static rule (every view uses these;
#: the maneuvering codes are in :data:`MANEUVER_LIMIT_WORDS`).
STEP_LIMIT_WORDS = {"stick_free_np": "stick-free neutral point",
                    "stick_fixed_np": "stick-fixed neutral point",
                    "policy_step": "profile's policy step", "aft_limit": "aft CG limit",
                    "none": "lack of an identifiable neutral point"}


def step_limit_words(code: str | None) -> str:
    """Words for a ``next_step.limited_by`` code, for every view.

    Parameters
    ----------
    code : str or None
        A static code (:data:`STEP_LIMIT_WORDS`) or a maneuvering one
        (:data:`MANEUVER_LIMIT_WORDS`).

    Returns
    -------
    str
        The words, or the code itself when unknown ("" for None).

    Examples
    --------
    >>> step_limit_words("stick_free_np")
    'stick-free neutral point'
    >>> step_limit_words("min_stick_force_per_g")
    'minimum stick force per g'
    """
    if code is None:
        return ""
    return STEP_LIMIT_WORDS.get(code) or MANEUVER_LIMIT_WORDS.get(code, code)
