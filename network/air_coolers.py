"""Reading an air cooler from a case file (``air_coolers.TAG``): tube rows and passes, the air
(inlet temperature; a fixed flow or fan control), U, and the unit built from them. See README.md
("Air coolers") for the keys.
"""

from __future__ import annotations

from hxtrain.units.air_cooler import AIR_CP, AirCooler, FanControl
from hxtrain.units.arrangements import arranged, setting_problem

from . import quantities as q
from .fields import Fields

U_FORMS = ("ua", "u", "clean_u")


def read_air_cooler(f: Fields, reading) -> dict:
    rows = f.integer("tube_rows", None, 1, 100)
    passes = f.integer("tube_passes", None, 1, 100)
    problem = setting_problem(arranged("air_cooler", tube_rows=min(rows, 10)), passes)
    if problem or rows > 10:
        raise f.error("tube_rows" if problem is None or problem[0] == "tube_rows" else problem[0],
                      problem[1] if problem else f"no relation for {rows} tube rows: one pass takes up to 10")
    data = {"rows": rows, "passes": passes, **_read_air(f), **_read_u(f),
            "design_temperature": f.quantity("design_temperature", q.TEMPERATURE, required=False)}
    f.text("description")
    f.finish()
    return data


def _read_air(f: Fields) -> dict:
    air = f.mapping("air", required=True, what="a mapping with 'inlet_temperature' and 'flow' or 'fan_control'")
    data = {"air_temperature": air.quantity("inlet_temperature", q.TEMPERATURE),
            "air_cp": air.quantity("cp", q.SPECIFIC_HEAT, required=False, default=AIR_CP)}
    if air.has("flow") == air.has("fan_control"):
        raise air.one_of_error(("flow", "fan_control"), "give exactly one of 'flow' (kg/s, fixed) and 'fan_control' "
                                                        "(the flow set between a "
                              "minimum and a maximum to meet an outlet temperature)")
    data["air_flow"] = air.quantity("flow", q.MASS_FLOW, required=False)
    fan = air.mapping("fan_control", what="a mapping with 'outlet_temperature', 'minimum_flow' and 'maximum_flow'")
    if fan is not None:
        # the maximum first: a read stopped at a bad minimum has then asked for both (the schema
        # builder infers 'required' from the reads, solver/reporting/schema_build.py); the minimum
        # known beforehand, so that a missing maximum is not taken for a misspelt minimum
        fan.has("minimum_flow")
        high = fan.quantity("maximum_flow", q.MASS_FLOW)
        low = fan.quantity("minimum_flow", q.MASS_FLOW)
        if low >= high:
            raise fan.error("maximum_flow", f"{high:g} kg/s is not above the minimum flow of {low:g} kg/s")
        data["fan"] = FanControl(fan.quantity("outlet_temperature", q.TEMPERATURE), low, high)
        fan.finish()
    air.finish()
    return data


def _read_u(f: Fields) -> dict:
    forms = [k for k in U_FORMS if f.has(k)]
    if len(forms) != 1:
        what = "none" if not forms else " and ".join(forms)
        raise f.one_of_error(U_FORMS, "give exactly one way to find U: 'ua', 'u' with 'area', or 'clean_u' with "
                                      f"'area' (found {what})", forms)
    if forms == ["ua"]:
        if f.has("area"):
            raise f.error("area", "'area' goes with 'u' or 'clean_u'; 'ua' is already U times the area")
        data = {"ua": f.quantity("ua", q.CONDUCTANCE)}
    elif forms == ["u"]:
        data = {"u": f.quantity("u", q.HEAT_TRANSFER_COEFFICIENT), "area": f.quantity("area", q.AREA)}
    else:
        data = {"clean_u": f.quantity("clean_u", q.CLEAN_COEFFICIENT), "area": f.quantity("area", q.AREA),
                "fouling": f.quantity("fouling", q.FOULING, required=False, default=0.0)}
    if f.has("fouling") and "clean_u" not in data:
        raise f.error("fouling", "fouling needs 'clean_u': a plain 'u' or 'ua' is the service value")
    return data


def build_air_cooler(name, key, data, building):
    s = building.case.settings
    return AirCooler(name, key, **data, minimum_approach=s.minimum_approach, minimum_f=s.minimum_f)
