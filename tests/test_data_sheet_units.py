"""Units as data sheets print them, read as written, and the ambiguous M of the trade refused.

Reference values: 1 Btu/(h·ft²·°F) = 5.678263 W/(m²·K) and 1 ft² = 0.09290304 m² (exact, NIST
SP 811 conversion tables, from memory); 1 lb = 0.45359237 kg exactly."""

import pytest

from hxtrain.network import quantities as q

U_US = 5.678263337  # W/m²K per Btu/h·ft²·°F (International Table Btu)


@pytest.mark.parametrize("written", ["60 Btu/h/ft^2/degF", "60 Btu/h·ft²·°F", "60 BTU/hr-ft2-°F", "60 BTU/hr-ft2-degF",
                                     "60 BTU/hr/ft2/degF", "60 Btu/(h*ft^2*delta_degF)"])
def test_a_us_film_coefficient_in_each_data_sheet_spelling(written):
    assert q.to_default_unit(written, q.HEAT_TRANSFER_COEFFICIENT) == pytest.approx(60 * U_US, rel=1e-6)


def test_areas_and_si_coefficients_as_data_sheets_write_them():
    assert q.to_default_unit("900 ft2", q.AREA) == pytest.approx(900 * 0.09290304, rel=1e-12)
    assert q.to_default_unit("60 W/m2-K", q.HEAT_TRANSFER_COEFFICIENT) == pytest.approx(60.0, rel=1e-12)
    assert q.to_default_unit("2 s^-1 * kg", q.MASS_FLOW) == pytest.approx(2.0)  # a minus in an exponent stays one


def test_the_spelling_a_refusal_suggests_is_read():
    """A bare F is the farad to pint: the message suggests degF, and what it suggests is read (a
    trial found a suggestion that was refused in its turn)."""
    with pytest.raises(q.QuantityError, match="write '60 BTU/hr-ft2-degF'") as refused:
        q.to_default_unit("60 BTU/hr-ft2-F", q.HEAT_TRANSFER_COEFFICIENT)
    suggested = str(refused.value).split("write ")[-1].strip("')")
    assert q.to_default_unit(suggested, q.HEAT_TRANSFER_COEFFICIENT) == pytest.approx(60 * U_US, rel=1e-6)


@pytest.mark.parametrize("written, kind", [("150 Mlb/h", q.MASS_FLOW), ("10 MBtu/h", q.DUTY), ("10 mbtu/h", q.DUTY),
                                           ("5 Mlbs/h", q.MASS_FLOW)])
def test_the_trades_ambiguous_m_is_refused(written, kind):
    """'Mlb/h' is a thousand pounds an hour in the trade's older usage and a million to SI (and to
    pint): read silently it was 1,000 times off."""
    with pytest.raises(q.QuantityError, match="M means a thousand"):
        q.to_default_unit(written, kind)


def test_the_unambiguous_multiples_are_read():
    assert q.to_default_unit("10 MMBtu/h", q.DUTY) == pytest.approx(10e6 * 1055.05585262 / 3600 / 1000, rel=1e-12)
    assert q.to_default_unit("150 klb/h", q.MASS_FLOW) == pytest.approx(150e3 * 0.45359237 / 3600, rel=1e-12)
