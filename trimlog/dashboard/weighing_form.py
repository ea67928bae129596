"""Weight and CG from scale readings, on the Flights page beside the loading-sheet form.

The usual weight-and-balance computation: each wheel's scale reading less its tare at
the wheel's arm gives the weight and CG as weighed; the items loaded for the flight
(pilot, passenger, baggage, ballast, fuel) are added with their arms
(:func:`trimlog.physics.mass_balance.weighed_loading`).  The result can be put into
the flight's loading sheet with one click; it is an estimate from the numbers typed,
to be checked against the aircraft's own weight-and-balance record.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import streamlit as st

from trimlog.dashboard import common, session
from trimlog.errors import TrimlogError
from trimlog.input.profile import AircraftProfile
from trimlog.physics.mass_balance import Weighing, weighed_loading

#: The scales: (key, label).  A tailwheel aircraft puts its tail wheel on the first.
WHEELS: tuple[tuple[str, str], ...] = (
    ("nose", "Nose or tail wheel"), ("left", "Left main wheel"), ("right", "Right main wheel"))
#: The items loaded after weighing: (key, label).
ITEMS: tuple[tuple[str, str], ...] = (
    ("pilot", "Pilot"), ("passenger", "Passenger"), ("baggage", "Baggage"),
    ("ballast", "Ballast"))


@dataclass(frozen=True)
class WeighingResult:
    """What the form computed: the weighing, the fuel on board and its weight."""

    weighing: Weighing
    fuel_gal: float
    fuel_lb: float


def weigh(
    wheels: Mapping[str, tuple[float | None, float | None, float | None]],
    items: Mapping[str, tuple[float | None, float | None]],
    fuel: tuple[float | None, float | None],
    fuel_density_lb_per_gal: float,
) -> tuple[WeighingResult | None, dict[str, str]]:
    """Check the form's entries and compute the weight and CG; errors by field.

    Parameters
    ----------
    wheels : mapping of str to (reading_lb, tare_lb, arm_in)
        One per scale of :data:`WHEELS` [lb, lb, in aft of datum]; None where
        left blank (a blank tare is 0).
    items : mapping of str to (weight_lb, arm_in)
        Items loaded after weighing [lb, in aft of datum]; both blank for none.
    fuel : (gallons, arm_in)
        Fuel on board at takeoff [US gal] and the tank's arm [in aft of datum].
    fuel_density_lb_per_gal : float
        Fuel weight per US gallon [lb/gal] (the profile's ``fuel.density``).

    Returns
    -------
    (WeighingResult or None, dict)
        The result when every entry is usable, else None; the errors keyed by
        field (``"nose.reading"``, ``"pilot.arm"``, ``"fuel.arm"``, ...).

    References
    ----------
    FAA-H-8083-1B, *Aircraft Weight and Balance Handbook* (2016), ch. 3 (weighing:
    net weight = reading - tare; CG = total moment / total weight).

    Examples
    --------
    >>> result, errors = weigh({"nose": (340.0, 0.0, -78.0), "left": (833.0, 0.0, 0.0),
    ...                         "right": (833.0, 0.0, 0.0)}, {}, (None, None), 6.0)
    >>> errors, round(result.weighing.empty.cg_in, 1)
    ({}, -13.2)
    """
    errors: dict[str, str] = {}
    net = []
    for key, label in WHEELS:
        reading, tare, arm = wheels.get(key, (None, None, None))
        tare = 0.0 if tare is None else tare
        if reading is None or reading <= 0.0:
            errors[f"{key}.reading"] = f"{label}: give the scale reading (more than 0 lb)"
        elif tare < 0.0 or tare > reading:
            errors[f"{key}.tare"] = (f"{label}: the tare ({tare:g} lb) must lie between 0 and "
                                     f"the reading ({reading:g} lb)")
        if arm is None:
            errors[f"{key}.arm"] = f"{label}: give the weighing point's arm (in aft of datum)"
        if not any(k.startswith(f"{key}.") for k in errors):
            net.append((reading, tare, arm))
    loaded = []
    for key, label in (*ITEMS, ("fuel", "Fuel")):
        amount, arm = fuel if key == "fuel" else items.get(key, (None, None))
        if amount is None and arm is None:
            continue
        if amount is None:
            errors[f"{key}.weight"] = (f"{label}: give the {'fuel' if key == 'fuel' else 'weight'}"
                                       " or clear the arm")
        elif amount < 0.0:
            errors[f"{key}.weight"] = f"{label}: expected 0 or more, found {amount:g}"
        elif arm is None:
            errors[f"{key}.arm"] = f"{label}: give its arm (in aft of datum)"
        else:
            weight = amount * fuel_density_lb_per_gal if key == "fuel" else amount
            loaded.append((weight, arm))
    if errors:
        return None, errors
    try:
        weighing = weighed_loading(net, loaded)
    except TrimlogError as exc:  # a total that is not positive, for instance
        return None, {"total": str(exc)}
    gallons = fuel[0] or 0.0
    return WeighingResult(weighing, gallons, gallons * fuel_density_lb_per_gal), {}


def _use(digest: str, result: WeighingResult) -> None:
    """Put the computed takeoff weight, CG and fuel into the flight's loading-sheet form."""
    ss = st.session_state
    ss[f"sf_w_{digest}"] = round(result.weighing.loaded.weight_lb, 1)
    ss[f"sf_cg_{digest}"] = f"{result.weighing.loaded.cg_in:.2f} in"
    ss[f"sf_f_{digest}"] = round(result.fuel_gal, 1)


def render(log: session.FileBytes, profile: AircraftProfile) -> None:
    """An expander with the scale-readings form for one log's flight."""
    d = log.digest
    with st.expander("Weight and CG from scale readings"):
        st.caption("Readings and tares in lb, arms in inches aft of the datum (negative "
                   "ahead of it). Add what was not on board when weighed.")
        slots = {}
        values: dict[str, tuple] = {}
        with st.form(key=f"weigh_form_{d}"):
            for col, (key, label) in zip(st.columns(len(WHEELS)), WHEELS, strict=True):
                col.markdown(f"**{label}**")
                values[key] = (
                    col.number_input("Reading [lb]", value=None, key=f"wf_{key}_r_{d}"),
                    col.number_input("Tare [lb]", value=None, key=f"wf_{key}_t_{d}"),
                    col.number_input("Arm [in]", value=None, key=f"wf_{key}_a_{d}"))
                slots[key] = col.empty()
            cols = st.columns(len(ITEMS) + 1)
            for col, (key, label) in zip(cols, ITEMS, strict=False):
                values[key] = (col.number_input(f"{label} [lb]", value=None,
                                                key=f"wf_{key}_w_{d}"),
                               col.number_input(f"{label} arm [in]", value=None,
                                                key=f"wf_{key}_a_{d}"))
                slots[key] = col.empty()
            fuel_arm = profile.fuel_arm_in
            values["fuel"] = (
                cols[-1].number_input("Fuel [US gal]", value=None, key=f"wf_fuel_w_{d}"),
                cols[-1].number_input("Fuel arm [in]", key=f"wf_fuel_a_{d}",
                                      **({} if f"wf_fuel_a_{d}" in st.session_state
                                         else {"value": fuel_arm})))
            slots["fuel"] = cols[-1].empty()
            slots["total"] = st.empty()
            made = st.form_submit_button("Compute weight and CG")
        if made:
            result, errors = weigh({k: values[k] for k, _ in WHEELS},
                                   {k: values[k] for k, _ in ITEMS}, values["fuel"],
                                   profile.fuel_density_lb_per_gal)
            for key, slot in slots.items():
                mine = [text for field, text in errors.items() if field.split(".")[0] == key]
                if mine:
                    slot.error(common.esc("; ".join(mine)), icon=":material/error:")
            st.session_state[f"wf_result_{d}"] = result
        _show(d, st.session_state.get(f"wf_result_{d}"), profile)


def _show(digest: str, result: WeighingResult | None, profile: AircraftProfile) -> None:
    """The computed weight and CG, checked against the profile's limits."""
    if result is None:
        return
    empty, loaded = result.weighing.empty, result.weighing.loaded
    c1, c2 = st.columns(2)
    c1.metric("As weighed", f"{empty.weight_lb:,.1f} lb",
              help=f"CG {empty.cg_in:.2f} in ({profile.pct_mac(empty.cg_in):.1f} %MAC)")
    c1.caption(f"CG {empty.cg_in:.2f} in aft of datum, {profile.pct_mac(empty.cg_in):.1f} %MAC")
    c2.metric("Takeoff, with the items", f"{loaded.weight_lb:,.1f} lb")
    c2.caption(f"CG {loaded.cg_in:.2f} in aft of datum, "
               f"{profile.pct_mac(loaded.cg_in):.1f} %MAC; fuel {result.fuel_gal:g} US gal "
               f"({result.fuel_lb:.1f} lb)")
    if not profile.cg_forward_in <= loaded.cg_in <= profile.cg_aft_in:
        st.warning(f"The takeoff CG {loaded.cg_in:.2f} in lies outside the profile's CG "
                   f"limits ({profile.cg_forward_in:g} to {profile.cg_aft_in:g} in). Check the "
                   "readings and arms; do not fly this loading unless your test plan and its "
                   "review allow it.", icon=":material/warning:")
    if loaded.weight_lb > profile.max_weight_lb:
        st.warning(f"The takeoff weight {loaded.weight_lb:,.1f} lb exceeds the profile's "
                   f"maximum weight ({profile.max_weight_lb:g} lb).", icon=":material/warning:")
    st.caption("An estimate from the numbers typed: check it against the aircraft's own "
               "weight-and-balance record before flight.")
    st.button("Use in this flight's loading sheet", key=f"wf_use_{digest}",
              on_click=_use, args=(digest, result))
