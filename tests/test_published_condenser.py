"""A published condenser worked example through a case file: the condensing steam heater.

Source (from memory, values recalled, not looked up here): Çengel, Y. A., and A. J. Ghajar, Heat
and Mass Transfer: Fundamentals and Applications (McGraw-Hill), chapter "Heat Exchangers", the
worked example on the condensation of steam in a power-plant condenser: steam condenses at 30 °C
on tubes of 45 m² with U = 2100 W/m²·K; cooling water (cp 4.18 kJ/kg·K) enters at 14 °C and
leaves at 22 °C. The book finds ΔT_lm = 11.5 °C, Q ≈ 1.09 MW, a cooling-water flow of about
32.5 kg/s and about 0.45 kg/s of steam condensed (h_fg = 2431 kJ/kg at 30 °C from its table).

Here the example runs the other way, as a rating: the water flow the book found goes in, and the
outlet temperature, the duty and the steam condensed must come out as the book's, within its
rounding (the flow is given to three figures, so the outlet to about ±0.05 K). The steam side is
IAPWS-IF97 at the saturation pressure of 30 °C (4.2470 kPa).
"""

from hxtrain.network import case_from_mapping
from hxtrain.solver import simulate


def test_the_published_condenser_example():
    case = case_from_mapping({
        "title": "power-plant condenser (published example, from memory)",
        "fluids": {"lake_water": {"cp": 4.18}},
        "streams": {"cooling_water": {"fluid": "lake_water", "flow": 32.5, "supply_temperature": 14.0,
                                      "path": "C-1 -> lake"}},
        "steam_heaters": {"C-1": {"steam_pressure": "4.2470 kPa", "ua": 2100.0 * 45.0 / 1000.0}},
        "products": {"lake": {}},
    })
    result = simulate(case)
    unit = result.units.loc["C-1"]
    assert abs(unit["steam_saturation_c"] - 30.0) < 0.005
    assert abs(unit["cold_out_c"] - 22.0) < 0.05                   # the water leaves at 22 °C
    assert abs(unit["duty_kw"] - 1090.0) / 1090.0 < 0.005          # Q ≈ 1.09 MW
    assert abs(unit["steam_kg_s"] - 0.45) < 0.005                  # ≈ 0.45 kg/s condensed
    assert unit["condensate_kg_s"] == unit["steam_kg_s"]
    assert result.balance["relative_imbalance"] < 1e-12
