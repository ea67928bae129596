"""Findings: typed warnings and verdicts, and the one catalogue that puts them into words.

The core (input, stability, incidence, pipeline, history) never builds a
sentence for the user.  It returns :class:`Finding` records: a stable dotted
``code``, a :class:`Severity`, a :class:`Subject` (which file, flight, point,
configuration or quantity it is about) and the ``values`` it rests on.  Every
view (terminal, JSON, report, dashboard) turns a finding into words through
:data:`CATALOGUE`, so the wording lives in one place and can be improved
without touching a computation or a test: tests assert on codes and numbers.

Severity levels follow the flight-manual convention pilots know, in
decreasing order (:attr:`Severity.rank`):

``warning``
    Safety: a number a pilot acts on is not supported by the data, or the
    data show something that matters before the next flight (a margin not
    met, an elevator at a stop, a neutral point that cannot be identified).
``caution``
    The result rests on an assumption or is weaker than it looks (ISA
    temperature assumed, an extrapolation, a configuration analysed apart).
``note``
    A reading note: how the input was understood (a sign inverted as
    declared, lines skipped before the header, missing values).  Shown last.

Adding a finding: add ``code: template`` to :data:`CATALOGUE` in its
section, then create it with :func:`finding`.  ``tests/test_findings.py``
fails if a code used anywhere in ``trimlog/`` has no template, or a
template names a field that the finding does not carry.

Examples
--------
>>> f = finding("pipeline.no_points_in_log", Severity.CAUTION,
...             Subject(source="flight3.csv"))
>>> f.message
'no stabilized point found in this log'
>>> f.line()
'flight3.csv: no stabilized point found in this log'
>>> f.severity.rank > Severity.NOTE.rank
True
"""

from __future__ import annotations

import enum
import string
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, field, replace
from types import MappingProxyType

from trimlog import cautions

Value = float | int | str | None


class Severity(enum.StrEnum):
    """How much a finding matters, in the flight-manual order warning > caution > note."""

    WARNING = "warning"
    CAUTION = "caution"
    NOTE = "note"

    @property
    def rank(self) -> int:
        """Larger is more severe (warning 3, caution 2, note 1), for sorting."""
        return {"warning": 3, "caution": 2, "note": 1}[self.value]


@dataclass(frozen=True)
class Subject:
    """What a finding is about; every field is optional.

    Attributes
    ----------
    source : str, optional
        The input file as the user named it.
    flight : str, optional
        Flight identifier.
    point : int, optional
        Point number within the flight.
    config : str, optional
        Configuration (flaps, gear) the finding belongs to.
    quantity : str, optional
        The result it concerns, e.g. ``"neutral_point.stick_free"``.
    """

    source: str | None = None
    flight: str | None = None
    point: int | None = None
    config: str | None = None
    quantity: str | None = None

    def as_dict(self) -> dict[str, str | int]:
        """The fields that are set, for JSON and for message templates."""
        return {k: v for k, v in (("source", self.source), ("flight", self.flight),
                                  ("point", self.point), ("config", self.config),
                                  ("quantity", self.quantity)) if v is not None}


# --------------------------------------------------------------------------- the catalogue
# Shared pieces of the shim's verdicts.
_MOVE = ("raise the {location} attach points by {thickness_in:.{decimals_in}f} in / "
         "{thickness_mm:.{decimals_mm}f} mm (or lower the {other} ones by the same)")
_CUT = ("Tilt the stabilizer leading edge {direction} by {change_abs_deg:.{decimals_deg}f} deg: "
        + _MOVE + ". Cut: ")
_CUT_END = (", total {stock_in:.3f} in / {stock_mm:.2f} mm (tilts {stock_change_abs_deg:.2f} "
            "deg).")

_SPEED = "{ias_kt:.1f} KIAS at {pressure_alt_ft:.0f} ft: "

#: Code -> message template (``str.format`` syntax).  A template may name any
#: key of the finding's ``values`` and any field of its subject that is set.
#: Keep one section per layer; add new codes at the end of your section.
_TEMPLATES: dict[str, str] = {
    # ---- input: reading the files (mostly reading notes)
    "input.profile.no_tau_source": (
        "neither tail.tau nor tail.elevator_chord_ratio is given; the shim needs a "
        "flight-calibrated tau (flights before and after an incidence change)"),
    "input.log.values_not_used": "{total} value(s) or line(s) not used: {reasons}",
    "input.log.no_oat": "no outside air temperature column: ISA temperature will be assumed",
    "input.log.no_stick_force": "no stick force column: no stick-free (force) result is possible",
    "input.log.duplicate_times": (
        "{count} duplicated time stamp(s) in '{header}' (lines {lines}); rows kept"),
    "input.log.time_gaps": (
        "{count} gap(s) in the time stamps, longest {longest_s:.3g} s after line {after_line}; "
        "gaps after lines {lines}"),
    "input.log.uneven_sampling": (
        "uneven sampling: {fraction:.0%} of intervals differ from the median {median_s:.3g} s "
        "by more than 25 % (range {min_s:.3g}-{max_s:.3g} s)"),
    "input.log.glitches_blanked": (
        "WARNING: {count} implausible sample(s) of {quantity} outside the plausible range "
        "{low:g}...{high:g} {unit} at line(s) {lines} were blanked as sensor glitches; check "
        "the logger"),
    "input.log.constant_column": (
        "column '{header}' ({quantity}) is constant at {value:g} over all {rows} rows: sensor "
        "unplugged or not logged?"),
    "input.log.cp1252": (
        "the file is not UTF-8; read it as Windows code page 1252 (check degree signs and "
        "accented letters in the headers)"),
    "input.log.preamble_skipped": (
        "skipped {count} line(s) before the header (metadata preamble, lines 1-{count})"),
    "input.log.columns_not_understood": (
        "columns not understood, kept out of the analysis: {headers} (map them in the "
        "profile's [logger] columns to use them)"),
    "input.log.columns_ignored": "columns ignored as the column map says: {headers}",
    "input.log.unit_assumed": "'{header}' has no unit; assumed {unit}",
    "input.log.sign_inverted": (
        "'{header}' ({quantity}) sign inverted, as the aircraft profile declares"),
    "input.log.not_inverted_standard_name": (
        "'{header}' ({quantity}) NOT sign inverted although the aircraft profile declares it "
        "inverted: the inversion applies only to logger columns named in the profile's "
        "[logger] columns map, and this header is a standard name, taken to follow the "
        "package's sign convention (map the header in [logger] columns if this is the "
        "logger's channel)"),
    "input.log.inverted_not_in_file": "'{quantity}' is declared inverted but is not in the file",
    # ---- physics
    "physics.airspeed.outside_table": (
        "{count} of {total} IAS values lie outside the position-error table "
        "({low_kt:g}-{high_kt:g} kt), the first {first_kt:g} kt{where}; their correction was "
        "held at the table's end value"),
    # ---- pipeline: the chain
    "pipeline.no_points_in_log": "no stabilized point found in this log",
    "pipeline.reduction.no_airspeed_calibration": (
        "no airspeed calibration in the profile: CAS = IAS assumed (position error ignored); "
        "add [airspeed_calibration] for calibrated results"),
    "pipeline.reduction.isa_assumed": (
        "outside air temperature not logged: ISA temperature assumed for TAS"),
    "pipeline.reduction.nz_assumed": "normal load factor not logged: n = 1 assumed for CL",
    "pipeline.reduction.no_fuel_burn": (
        "flight {flight}: no fuel quantity logged: takeoff weight and CG used for every point "
        "(fuel burn not applied)"),
    "pipeline.reduction.cg_outside_limits": (
        "flight {flight}: CG {min_pct_mac:.1f}..{max_pct_mac:.1f} %MAC lies outside the "
        "profile's limits ({forward_pct_mac:.1f}..{aft_pct_mac:.1f} %MAC)"),
    "pipeline.reduction.incidence_varies": (
        "flight {flight}: stab_incidence_deg varies within the flight ({min_deg:g}..{max_deg:g} "
        "deg); each point keeps its own value"),
    "pipeline.reduction.flaps_assumed_clean": (
        "flap setting not logged nor in a loading sheet for flight(s) {flights}: taken as clean "
        "(flaps up)"),
    "pipeline.plausibility.cl_all_tiny": (
        "every point's CL is below {limit_cl:g} (highest {max_cl:.3f}): the speeds may be read "
        "about 1.85x too high (km/h logged as kt) or the weight too low (kg given as lb); "
        "check the units in the header and the loading sheet"),
    "pipeline.at_stop.included": (
        "flight '{flight}' point {point}: elevator {elevator_deg:+.1f} deg is at a stop, so the "
        "trim there is not free: included because you chose so"),
    "pipeline.at_stop.left_out": (
        "flight '{flight}' point {point}: elevator {elevator_deg:+.1f} deg is at a stop, so the "
        "trim there is not free: left out of the fits (include it again if the stop was not "
        "reached)"),
    "pipeline.configurations_separate": (
        "points were flown in several configurations and are analysed separately: {counts}; "
        "the headline results are for '{primary}'"),
    "pipeline.order.undated": (
        "no date for flight(s) {flights} (neither a loading-sheet 'date' nor ISO 8601 date-time "
        "stamps in the log): {order}; add a 'date' to their loading sheets, because the "
        "stabilizer setting a shim corrects from is the latest flight's"),
    # ---- stability
    "stability.points_excluded": (
        "{count} point(s) marked not included were left out of every fit (they stay in the "
        "table)"),
    "stability.np_not_identifiable": "{kind} neutral point not identifiable: {reason}",
    "stability.no_stick_force": "no stick force logged: no stick-free neutral point",
    "stability.points_without_force": (
        "{count} included point(s) have no stick force and are left out of the stick-free fits"),
    "stability.np_methods_disagree": (
        "the pooled ({pooled_pct_mac:.1f} %MAC) and two-stage ({two_stage_pct_mac:.1f} %MAC) "
        "stick-fixed neutral points disagree beyond their intervals: look for a flight that does "
        "not fit"),
    "stability.margin_below_minimum": (
        "at the {where} ({cg_pct_mac:.1f} %MAC) the {kind} static margin may be below the "
        "minimum of {min_pct_mac:g} %MAC (95 % lower bound {lower95_pct_mac:.1f} %MAC)"),
    "stability.at_stop": (
        "flight '{flight}' point {point}: elevator {elevator_deg:.1f} deg is at the {stop} stop, "
        "so the trim there is not free; consider excluding it"),
    "stability.authority.up_stop_reached": (
        "elevator authority, {case} (CLmax {clmax:g}) at the forward CG limit "
        "{cg_pct_mac:.1f} %MAC: the up stop is reached before CLmax (elevator needed "
        "{elevator_deg:+.1f} deg, up stop {up_stop_deg:+.1f} deg; {basis}): the elevator may not "
        "hold CLmax there; check it with trim points near CLmax at a forward CG, with altitude "
        "for recovery, before relying on it"),
    "stability.authority.up_stop_may_be_reached": (
        "elevator authority, {case} (CLmax {clmax:g}) at the forward CG limit "
        "{cg_pct_mac:.1f} %MAC: the up stop may be reached before CLmax (elevator needed "
        "{elevator_deg:+.1f} deg, up stop {up_stop_deg:+.1f} deg, {margin_deg:+.1f} deg left at "
        "the conservative end of the 95 % prediction interval; {basis})"),
    "stability.authority.reserve_short": (
        "elevator authority, {case} (CLmax {clmax:g}) at the forward CG limit "
        "{cg_pct_mac:.1f} %MAC: only {margin_deg:.1f} deg of up elevator left at CLmax "
        "(conservative end), less than the {reserve_deg:g} deg reserve ({basis})"),
    "stability.fit.outlier": (
        "{kind_words}: flight '{flight}' point {point} is an outlier (studentized residual "
        "{studentized_residual:+.1f}); consider excluding it"),
    "stability.fit.robust_shift": (
        "{kind_words}: the robust fit moves the neutral point by {shift_pct_mac:+.1f} %MAC (more "
        "than two standard errors): look at the outliers"),
    "stability.fit.curvature": (
        "{kind_words}: the trim curve bends (CL^2 term p = {p:.2g}); the points are linear up "
        "to CL = {cl_max_linear:.2f}: consider excluding points above it"),
    "stability.fit.curvature.not_removed": (
        "{kind_words}: the trim curve bends (CL^2 term p = {p:.2g}) and leaving out the "
        "highest-CL points does not remove it: look at the points before trusting a linear "
        "fit"),
    "stability.fit.intercepts_differ": (
        "stick-fixed: the trim lines of flights with the same stabilizer setting do not meet at "
        "CL = 0 (F test p = {p:.2g}); the line of flight '{flight}' sits {offset_deg:+.2f} deg "
        "off the others of its setting: an elevator zero offset, a rigging change or a "
        "mislabelled setting biases the pooled neutral point (the two-stage one does not "
        "depend on it)"),
    "stability.fit.intercepts_differ.exact": (
        "stick-fixed: the trim lines of flights with the same stabilizer setting do not meet at "
        "CL = 0; the line of flight '{flight}' sits {offset_deg:+.2f} deg off the others of its "
        "setting: an elevator zero offset, a rigging change or a mislabelled setting biases "
        "the pooled neutral point (the two-stage one does not depend on it)"),
    "stability.authority.ground_effect": cautions.AUTHORITY[0],
    "stability.authority.stop_travel_unusual": (
        "elevator {stop} stop {stop_deg:g} deg is outside the typical light-aircraft "
        "{low_deg:g}-{high_deg:g} deg: check the profile and the rigging"),
    "stability.gradient.trim_speed_extrapolated": (
        "flight '{flight}': trim speed {trim_eas_kt:.0f} kt EAS lies outside the speeds flown "
        "({low_kt:.0f}-{high_kt:.0f} kt): dFs/dV there is an extrapolation"),
    "stability.maneuver.no_gradient": (
        "maneuvering: {n_points} point(s) of flight '{flight}' give no gradient per g: {reason}"),
    "stability.maneuver.lightening": (
        "maneuvering: flight '{flight}': the stick force per g lightens at higher load factor "
        "(at {nz_top_g:.2f} g it is {top_ratio_pct:.0f} % of the mean gradient): a light stick "
        "lets the pilot over-stress the aircraft (14 CFR 23.155(c))"),
    "stability.maneuver.light_force": (
        "maneuvering: flight '{flight}' at {cg_pct_mac:.1f} %MAC: stick force per g "
        "{per_g_lbf:.1f} lbf/g (95 % {lower95_lbf:.1f} to {upper95_lbf:.1f}) {verb} below the "
        "minimum {minimum_lbf:.1f} lbf/g ({basis})"),
    "stability.maneuver.aft_limit_light": (
        "maneuvering: stick force per g predicted at the aft limit {aft_cg_pct_mac:.1f} %MAC and "
        "{weight_lb:.0f} lb: {per_g_lbf:.1f} lbf/g (95 % {lower95_lbf:.1f} to "
        "{upper95_lbf:.1f}), below the minimum {minimum_lbf:.1f} lbf/g or not clearly above it"),
    "stability.maneuver.not_identifiable": (
        "maneuvering: {kind} maneuver point cannot be said yet: {reason}"),
    "stability.trim.assumed_tab": (
        "trim system not declared (trim.system in the profile): the stick-force results assume "
        "a trim tab, which trims the force to zero at the trim speed; declare the system if it "
        "is a spring, an all-moving tail, a trimmable stabilizer or none"),
    "stability.trim.spring": (
        "spring (bungee) trim: the spring adds a force that does not grow with speed, which in "
        "1 g trim points reads as part of each flight's Fs/q slope; the stick-free neutral point "
        "shown is the apparent one at the spring settings flown (a downspring's pull moves it "
        "aft), not the airframe's. Fly every CG with the spring at one recorded setting to "
        "compare flights; judge each flight by its gradient at the trim speed and free return"),
    "stability.trim.spring.np_free_not_identifiable": (
        "stick-free neutral point cannot be said with a spring trim from these flights: the "
        "spring's force at each flight's setting cannot be told apart from stick-free "
        "stability in 1 g trim points, and another CG would not separate them ({reason}). Fly "
        "the CGs with the spring at one recorded setting, and judge each flight by its "
        "stick-force gradient at the trim speed and its free return"),
    "stability.trim.stabilator": (
        "all-moving tail (stabilator): the logged elevator is the tail's angle and its tab trims "
        "the force as a trim tab does; there is no fixed stabilizer incidence, so no shim "
        "applies"),
    "stability.trim.trimmable_stabilizer": (
        "trimmable stabilizer: the trim moves the stabilizer incidence, so each point's "
        "stabilizer angle must be logged (stab_incidence_deg) for the trim lines to mean "
        "anything; the elevator at trim stays near neutral whatever the CG, and no shim "
        "applies"),
    "stability.trim.none": (
        "no pitch trim: the stick force is zero only at the one speed the aircraft trims itself "
        "(the trim speed shown) and the pilot holds a force everywhere else; nothing changes "
        "the stick-force intercept between flights"),
    "stability.free_return.no_friction": (
        "free return (14 CFR 23.173(b)) not checked: give the stick-force friction band as "
        "trim.friction in the profile (half-width, e.g. \"0.5 lbf\")"),
    "stability.free_return.cannot_say": (
        "flight '{flight}': free return cannot be said yet: the stick-force gradient at the "
        "trim speed {trim_eas_kt:.0f} kt EAS is not clearly stable, so with {friction_lbf:.2g} "
        "lbf of friction the stick may stay where it is left at any speed"),
    "stability.free_return.too_wide": (
        "flight '{flight}': with {friction_lbf:.2g} lbf of friction the stick stays where it is "
        "left between {band_lo_kt:.0f} and {band_hi_kt:.0f} kt EAS around the trim speed "
        "{trim_eas_kt:.0f} kt ({band_pct:.1f} %, on the shallowest gradient the data allow, "
        "{gradient_lbf_per_kt:+.3f} lbf/kt): wider than the {rule_pct:g} % free return of "
        "14 CFR 23.173(b) (before amendment 23-64, from memory)"),
    "stability.free_return.band": (
        "flight '{flight}': free return within {band_pct:.1f} % of the trim speed "
        "{trim_eas_kt:.0f} kt EAS ({band_lo_kt:.0f} to {band_hi_kt:.0f} kt with "
        "{friction_lbf:.2g} lbf of friction, on the shallowest gradient the data allow), inside "
        "the {rule_pct:g} % of 14 CFR 23.173(b) (before amendment 23-64, from memory)"),
    "stability.force_zero.not_separable": (
        "a stick-force gauge zero shared by every point of a flight cannot be told apart from "
        "stick-free stability in 1 g trim points (q CL is constant in a flight): about 1 %MAC "
        "of stick-free neutral point per lbf, and a zero common to every flight is not in the "
        "interval. Give each flight's trim speed (trim.speed in the loading sheet: where the "
        "force was trimmed to zero hands off) to fit the zero"),
    "stability.force_zero.trim_speed_outside": (
        "flight '{flight}': the declared trim speed {trim_kt:.0f} kt lies outside the speeds "
        "flown, so it does not anchor the stick-force zero of that flight"),
    "stability.force_zero.offset": (
        "flight '{flight}': the stick-force gauge reads {offset_lbf:+.2f} lbf "
        "[{lo:+.2f}, {hi:+.2f}] at zero force (fitted from the trim speed): check the gauge "
        "zero; the stick-free results already allow for it"),
    "incidence.not_applicable.trim_system": (
        "no shim: with {system} trim the stabilizer incidence is not fixed, so there is no "
        "incidence to correct"),
    # ---- incidence
    "incidence.no_recommendation": "no incidence recommendation: {reason}",
    "incidence.tau.profile_outside_calibrated": (
        "the profile's tau {profile_tau:g} lies outside the flight-calibrated interval "
        "[{lo:.2f}, {hi:.2f}]"),
    "incidence.tau.calibration_not_used": "flight calibration of tau not used: {reason}",
    "incidence.tau.chord_ratio_beyond_chart": (
        "elevator chord ratio {chord_ratio:g} is beyond the empirical correction chart "
        "(cf/c <= 0.5); its value at 0.5 was used"),
    "incidence.elevator_beyond_linear": (
        "the elevator at cruise ({elevator_deg:+.1f} deg) is beyond the ~{limit_deg:g} deg where "
        "tau is near its linear value; the change may be underestimated: make it in steps and "
        "re-fly"),
    "incidence.summary": (
        "Elevator at cruise (CL {cruise_cl:.2f}, CG {cruise_cg_pct_mac:.1f} %MAC): "
        "{elevator_words}. Incidence change {change_words} with tau {tau:.2f} ({tau_source})."),
    "incidence.shim.cut.inch_one": _CUT + "one {sheet_1_in:.3f} in sheet" + _CUT_END,
    "incidence.shim.cut.inch_two": (
        _CUT + "stack two sheets, {sheet_1_in:.3f} in and {sheet_2_in:.3f} in" + _CUT_END),
    "incidence.shim.cut.metric_one": _CUT + "one {sheet_1_mm:.1f} mm sheet" + _CUT_END,
    "incidence.shim.cut.metric_two": (
        _CUT + "stack two sheets, {sheet_1_mm:.1f} mm and {sheet_2_mm:.1f} mm" + _CUT_END),
    "incidence.shim.steps": (
        "One cut is too much: make the change in {steps} steps of about {step_in:.3f} in / "
        "{step_mm:.2f} mm; the cut above is step 1 of {steps}: fly it and measure the elevator "
        "at cruise again before the next."),
    "incidence.shim.residual": "Expected elevator at cruise after the shim: {residual_words}.",
    "incidence.shim.residual.step_one": (
        "Expected elevator at cruise after step 1: {residual_words}."),
    "incidence.shim.none.interval_has_zero": (
        "No change recommended: the computed change ({change_deg:+.2f} deg, " + _MOVE + ") has "
        "a 95 % interval that includes zero; fly more cruise trim points to narrow it."),
    "incidence.shim.none.interval_has_zero.no_shim": (
        "No change recommended: the computed change ({change_deg:+.2f} deg, no shim) has a "
        "95 % interval that includes zero; fly more cruise trim points to narrow it."),
    "incidence.shim.none.too_thin": (
        "No change recommended: the computed change ({change_deg:+.2f} deg, "
        "{thickness_in:.3f} in / {thickness_mm:.2f} mm) is thinner than half the thinnest "
        "practical shim."),
    "incidence.shim.none.step_too_thin": (
        "No cut yet: the first step that cannot overshoot ({change_deg:+.2f} deg, "
        "{thickness_in:.3f} in / {thickness_mm:.2f} mm) is thinner than the thinnest stock; "
        "calibrate tau in flight (cruise trim points before and after a known shim) first."),
    "incidence.shim.first_step": (
        "tau is not flight-calibrated ({tau_source}, range {tau_lo:.2f} to {tau_hi:.2f}), so "
        "the full change ({change_deg:+.2f} deg) may overshoot: cut a first step of "
        "{step_deg:+.2f} deg, the near end of its 95 % interval, rounded down to stock. Then "
        "re-fly cruise trim points to calibrate tau from the shift of the elevator, and cut "
        "the rest from that."),
    "incidence.shim.new_incidence": (
        "Stabilizer incidence {new_incidence_words} to the waterline."),
    "incidence.shim.unusual_incidence": (
        "the stabilizer incidence would be {new_incidence_words} to the waterline, "
        "outside the usual {low_deg:+g} to {high_deg:+g} deg (leading edge up positive) of a "
        "small airplane (common "
        "practice): re-check the rigging, the weight and CG, and the elevator calibration "
        "before cutting"),
    "incidence.shim.thicker_than_stock": (
        "the shim ({thickness_in:.3f} in) is thicker than two stacked sheets of the largest "
        "stock ({top_in:.3f} in): make the change in {steps} steps of about {step_in:.3f} in "
        "and re-fly between them"),
    # ---- pipeline: airspeed calibration from GPS legs
    "pipeline.calibration.too_few_legs": _SPEED + "not determinable: {reason}",
    "pipeline.calibration.headings_not_spread": _SPEED + "not determinable: {reason}",
    "pipeline.calibration.three_legs_exact": (
        _SPEED + "three legs give an exact solution with no measure of its error (no interval, "
        "no check of the wind); fly a fourth leg for both"),
    "pipeline.calibration.headings_poorly_spread": (
        _SPEED + "the legs' headings cover only {arc_deg:.0f} deg of the circle ({good_deg:g} "
        "deg or more recommended); TAS and wind are sensitive to small errors"),
    "pipeline.calibration.wind_changed": (
        _SPEED + "the legs disagree by {residual_sd_kt:.2f} kt (RMS), more than the data's "
        "noise explains (p = {p:.3f} > {level:g}); the wind probably changed between legs: "
        "re-fly this speed with the legs closer together in time"),
    "pipeline.calibration.no_oat": (
        "no outside air temperature logged: ISA temperature is assumed, and the CAS intervals "
        "allow ±{oat_uncertainty_c:g} degC for it"),
    "pipeline.calibration.no_legs": (
        "no steady leg found (constant IAS, altitude and track for at least the minimum leg "
        "time)"),
    "pipeline.calibration.legs_excluded": "{count} leg(s) left out: {legs}",
    "pipeline.calibration.altimeter_assumption": (
        "the altitude corrections assume the pitot (total pressure) has no error, so that all "
        "of the position error comes from the static source; GPS legs cannot tell the two "
        "apart"),
    "pipeline.calibration.one_speed": (
        "only one speed was solved: a position-error table needs at least two; fly the legs "
        "at more speeds across the range of the stability flights"),
    "pipeline.calibration.not_determinable": (
        "no speed had three or more steady legs on spread headings: the position error "
        "cannot be determined from these data"),
    "pipeline.stick_force.too_light": (
        "{flight} (CG {cg_pct_mac:.1f} %MAC): the stick force is stable but light, "
        "{gradient_lbf_per_kt:+.3f} lbf/kt [{lo:+.3f}, {hi:+.3f}], about 1 lbf per "
        "{kt_per_lbf:.0f} kt, below the {floor_lbf_per_kt:.2f} lbf/kt (1 lbf per 6 kt) that a "
        "pilot can be relied on to feel (common practice, from memory; 14 CFR 25.173(c) sets "
        "this figure for transport airplanes). The small-airplane rule, 14 CFR 23.173(c) "
        "before amendment 23-64, asks only that any substantial speed change give a stick "
        "force clearly perceptible to the pilot: judge it in flight, and do not load further "
        "aft on the strength of this gradient."),
    # ---- history
    "history.trend.one_configuration": "the trend uses configuration '{config}' only",
    "history.programme.no_saved_flights": (
        "no flight of '{aircraft}' is saved in {database} yet: only the new flights are analysed"),
    "history.programme.profile_differs": (
        "the profile given ({profile}) differs from the one saved for '{aircraft}': every "
        "flight is analysed with the one given"),
    "history.programme.already_saved": (
        "already saved as history flight id {history_id}; used once, with its saved choices"),
    "history.programme.points_differ": (
        "(history id {history_id}): the points found now differ from the {n_saved} saved with "
        "it (another minimum hold?): the saved points are used"),
}

#: The one catalogue (read-only view of the templates above).
CATALOGUE: Mapping[str, str] = MappingProxyType(_TEMPLATES)

_FORMATTER = string.Formatter()


def template_fields(template: str) -> set[str]:
    """Names a template refers to.

    >>> sorted(template_fields("elevator {elevator_deg:+.1f} deg at {flight}"))
    ['elevator_deg', 'flight']
    """
    return {name.split(".")[0].split("[")[0]
            for _, name, _, _ in _FORMATTER.parse(template) if name}


class _Render(string.Formatter):
    """``str.format`` for findings: None as 'unknown', and no sign on a rounded zero.

    A missing number prints 'unknown' whatever the spec; a negative number that
    rounds to zero prints as zero (``+0.00``, not ``-0.00``).
    """

    def format_field(self, value: object, format_spec: str) -> str:
        if value is None:
            return "unknown"
        text = super().format_field(value, format_spec)
        if isinstance(value, float) and text.lstrip().startswith("-") and not any(
                c in "123456789" for c in text.split("e")[0].split("E")[0]):
            return super().format_field(0.0, format_spec)
        return text


@dataclass(frozen=True)
class Finding:
    """One warning or verdict: a code, a severity, a subject and its numbers.

    Attributes
    ----------
    code : str
        Stable dotted code, a key of :data:`CATALOGUE`
        (``layer.topic[.detail]``).  Never renamed once released: users'
        scripts read it from the JSON.
    severity : Severity
    subject : Subject or None
    values : mapping of str to float, int, str or None
        The numbers (in the units their key names) and words the message
        shows.

    Raises
    ------
    ValueError
        The code has no template, or the template names a field that neither
        ``values`` nor ``subject`` carries (a programming error, caught by the
        tests).
    """

    code: str
    severity: Severity
    subject: Subject | None = None
    values: Mapping[str, Value] = field(default_factory=dict)

    def __post_init__(self) -> None:
        template = CATALOGUE.get(self.code)
        if template is None:
            raise ValueError(f"finding code {self.code!r} has no template in trimlog.findings")
        missing = template_fields(template) - set(self._fields())
        if missing:
            raise ValueError(
                f"finding {self.code!r} lacks the value(s) {sorted(missing)} its template names")
        object.__setattr__(self, "severity", Severity(self.severity))
        object.__setattr__(self, "values", MappingProxyType(dict(self.values)))

    def __reduce__(self) -> tuple[type[Finding], tuple[object, ...]]:
        # pickled (the report's writer process receives the analysis) as a plain dict
        return (type(self), (self.code, self.severity, self.subject, dict(self.values)))

    def _fields(self) -> dict[str, object]:
        subject = self.subject.as_dict() if self.subject is not None else {}
        return {**subject, **self.values}

    @property
    def message(self) -> str:
        """The finding in words, from the catalogue (without its file or configuration)."""
        return _Render().format(CATALOGUE[self.code], **self._fields())

    def line(self, *, show_config: bool = False) -> str:
        """The message as one line of the ``warnings`` list: ``[config] source: message``.

        Parameters
        ----------
        show_config : bool
            Prefix the configuration (done when several were analysed).
        """
        text = self.message
        s = self.subject
        if s is not None and s.source:
            text = f"{s.source}: {text}"
        if show_config and s is not None and s.config:
            text = f"[{s.config}] {text}"
        return text

    def about(self, **subject: str | int | None) -> Finding:
        """A copy with subject fields set (e.g. ``about(config="clean")`` by the chain).

        >>> f = finding("pipeline.no_points_in_log", Severity.NOTE).about(source="a.csv")
        >>> f.subject
        Subject(source='a.csv', flight=None, point=None, config=None, quantity=None)
        """
        base = self.subject if self.subject is not None else Subject()
        return replace(self, subject=replace(base, **subject))

    def to_dict(self) -> dict[str, object]:
        """JSON-ready: ``code``, ``severity``, ``subject``, ``message``, ``values``."""
        return {
            "code": self.code,
            "severity": self.severity.value,
            "subject": self.subject.as_dict() if self.subject is not None else None,
            "message": self.message,
            "values": dict(self.values),
        }


def finding(code: str, severity: Severity, subject: Subject | None = None,
            **values: Value) -> Finding:
    """Shorthand for ``Finding(code, severity, subject, values)``.

    >>> finding("incidence.no_recommendation", Severity.CAUTION,
    ...         reason="no trim model could be fitted").message
    'no incidence recommendation: no trim model could be fitted'
    """
    return Finding(code, severity, subject, values)


def lines(findings: Iterable[Finding], *, show_config: bool = False) -> tuple[str, ...]:
    """The findings as ``warnings`` lines, in order, each text once."""
    return tuple(dict.fromkeys(f.line(show_config=show_config) for f in findings))


def by_severity(findings: Iterable[Finding]) -> list[Finding]:
    """Most severe first, keeping the order within a level (views show safety first).

    >>> fs = [finding("pipeline.no_points_in_log", Severity.NOTE),
    ...       finding("incidence.no_recommendation", Severity.WARNING, reason="x")]
    >>> [f.severity.value for f in by_severity(fs)]
    ['warning', 'note']
    """
    return sorted(findings, key=lambda f: -f.severity.rank)


#: Routine reading notes: how a file was read, as declared or harmless.  Views list
#: them apart from (after, or collapsed below) the findings that matter to flight
#: safety.  A reading finding that can hide a mistake (a sign NOT inverted, a unit
#: assumed, a constant column, glitches blanked, columns not understood) is not here.
READING_NOTE_CODES: frozenset[str] = frozenset({
    "input.log.values_not_used",
    "input.log.preamble_skipped",
    "input.log.sign_inverted",
    "input.log.columns_ignored",
    "input.log.cp1252",
    "input.log.duplicate_times",
    "input.log.uneven_sampling",
})

#: Short words for reading notes (the terminal's secondary list); the full message
#: stays in the JSON and the report.
_SHORT: dict[str, str] = {
    "input.log.values_not_used": "{total} value(s) or line(s) not used",
    "input.log.preamble_skipped": "{count} line(s) skipped before the header",
    "input.log.sign_inverted": "'{header}' sign inverted as declared",
    "input.log.columns_ignored": "columns ignored as mapped: {headers}",
    "input.log.cp1252": "read as Windows code page 1252",
    "input.log.duplicate_times": "{count} duplicated time stamp(s)",
}


def is_reading_note(f: Finding) -> bool:
    """Whether a finding is a routine reading note (by its code).

    >>> is_reading_note(finding("input.log.preamble_skipped", Severity.NOTE, count=2))
    True
    >>> is_reading_note(finding("incidence.no_recommendation", Severity.CAUTION, reason="r"))
    False
    """
    return f.code in READING_NOTE_CODES


def for_display(findings: Iterable[Finding], *, show_config: bool = False,
                drop: Iterable[str] = ()) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """Lines to show, split as views show them: (findings that matter, reading notes).

    The first group is most severe first (warnings, then cautions, then
    notes, in order within each); routine reading notes
    (:data:`READING_NOTE_CODES`) come apart so a view shows safety findings
    first.  Each text appears once.

    Parameters
    ----------
    findings : iterable of Finding
    show_config : bool
        Prefix the configuration (when several were analysed).
    drop : iterable of str
        Messages the view shows elsewhere (its cautions), left out so each
        text appears once per view.

    >>> fs = [finding("input.log.preamble_skipped", Severity.NOTE, Subject(source="a.csv"),
    ...               count=1),
    ...       finding("stability.points_excluded", Severity.NOTE, count=2),
    ...       finding("incidence.no_recommendation", Severity.WARNING, reason="r")]
    >>> shown, reading = for_display(fs)
    >>> shown[0]
    'no incidence recommendation: r'
    >>> reading
    ('a.csv: skipped 1 line(s) before the header (metadata preamble, lines 1-1)',)
    """
    shown, notes = split_for_display(findings, drop=drop)
    return lines(shown, show_config=show_config), lines(notes, show_config=show_config)


def split_for_display(findings: Iterable[Finding], *, drop: Iterable[str] = ()
                      ) -> tuple[list[Finding], list[Finding]]:
    """The findings as :func:`for_display` splits them, kept as findings (for labels).

    >>> fs = [finding("input.log.cp1252", Severity.NOTE),
    ...       finding("incidence.no_recommendation", Severity.CAUTION, reason="r")]
    >>> [[f.code for f in group] for group in split_for_display(fs)]
    [['incidence.no_recommendation'], ['input.log.cp1252']]
    """
    skip = set(drop)
    ordered = [f for f in by_severity(findings) if f.message not in skip]
    return ([f for f in ordered if not is_reading_note(f)],
            [f for f in ordered if is_reading_note(f)])


def reading_summary(findings: Iterable[Finding]) -> tuple[str, ...]:
    """The reading notes shortened: one line per file, its notes in short words.

    >>> fs = [finding("input.log.preamble_skipped", Severity.NOTE, Subject(source="a.csv"),
    ...               count=2),
    ...       finding("input.log.sign_inverted", Severity.NOTE, Subject(source="a.csv"),
    ...               header="ELEV", quantity="elevator_deg")]
    >>> reading_summary(fs)
    ("a.csv: 2 line(s) skipped before the header; 'ELEV' sign inverted as declared",)
    """
    per_source: dict[str, list[str]] = {}
    for f in findings:
        if not is_reading_note(f):
            continue
        short = _SHORT.get(f.code)
        text = (_Render().format(short, **f._fields()) if short is not None else f.message)
        source = f.subject.source if f.subject is not None and f.subject.source else ""
        per_source.setdefault(source, [])
        if text not in per_source[source]:
            per_source[source].append(text)
    return tuple((f"{src}: " if src else "") + "; ".join(texts)
                 for src, texts in per_source.items())

