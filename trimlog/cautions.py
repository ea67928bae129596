"""Flight-test cautions shown by every view of a result.

The terminal summary, the JSON export, the PDF report and the dashboard all
take their caution texts from here, so they never disagree and none of them
can leave the cautions out.

References
----------
FAA Advisory Circular AC 90-89B (2015), *Amateur-Built Aircraft and Ultralight
Flight Testing Handbook*: Phase I flight testing, incremental expansion of the
weight and CG envelope, altitude for recovery.
"""

from __future__ import annotations

ESTIMATE_STATEMENT = (
    "trimlog's results are estimates computed from your own flight data. They are not "
    "an approval of the aircraft, its loading or any modification, and they do not "
    "replace the requirements of your aviation authority, the designer's or kit "
    "manufacturer's data, or review by a qualified flight-test engineer or inspector."
)

GENERAL = (
    "Expand the CG envelope in small steps, one flight at a time, and re-analyse after "
    "every flight before moving aft.",
    "Never load or fly beyond the published or approved weight and CG limits.",
    "Treat any number outside the CG range actually flown as an extrapolation, with "
    "less confidence than its interval shows.",
    "Fly test points with altitude for recovery, a planned recovery from stalls and "
    "spins, and the aircraft's stall and spin behaviour at that loading in mind.",
    "Follow your aviation authority's flight-test rules (for example FAA AC 90-89B for "
    "amateur-built aircraft in the US) and local rules, and have the programme "
    "reviewed by qualified people.",
)

CG_EXPANSION = (
    "The suggested next CG is the most aft point that the current data support with the "
    "chosen margin policy; it is an upper bound, not a target. A smaller step is always "
    "acceptable.",
    "Before the flight: verify the actual loading by weighing, brief the recovery "
    "(altitude, stall and spin recovery, abort criteria) and stay within the "
    "aircraft's approved limits.",
)

INCIDENCE = (
    "Check that the weight and CG were inside limits and correctly measured before "
    "blaming the stabilizer incidence.",
    "Change the incidence in small steps, then re-fly and re-check trim, stick forces "
    "and elevator authority after every change.",
    "A spring or bungee can hide the stick force but keeps the trim drag; it is not a "
    "substitute for the right incidence.",
    "Changes to stabilizer attach fittings follow the kit or designer's data and the "
    "aviation authority's rules, and are inspected by a qualified person before flight.",
)

AUTHORITY = (
    "Ground effect in the flare needs still more up elevator than free air at the same "
    "CL; keep a reserve beyond the figure shown.",
)

AIRSPEED_CALIBRATION = (
    "Fly calibration legs in smooth air, with altitude, lookout and airspace in mind; "
    "the legs are long and straight at speeds away from the usual cruise.",
    "The position error is an estimate from your GPS legs: confirm it with a second "
    "flight before relying on it, and never use it to fly nearer a stall speed or VNE "
    "than the aircraft's published limits allow.",
    "Any change to the pitot or static installation, the probes, or the airframe near "
    "them (fairings, antennas, doors) invalidates the table: calibrate again.",
)


def all_cautions() -> tuple[str, ...]:
    """Every caution, in the order the views show them."""
    return (ESTIMATE_STATEMENT, *GENERAL, *CG_EXPANSION, *INCIDENCE, *AUTHORITY)
