"""hxtrain.units: the physics of single units on numbers and numpy arrays (no files, no graphs).

:mod:`.pntu` holds the P–NTU, LMTD and F relations; :mod:`.exchanger` rates one exchanger;
:mod:`.balances` the one-stream energy balances; :mod:`.properties` fluid models (cp(T),
enthalpy, viscosity); :mod:`.films`, :mod:`.resistances`, :mod:`.hydraulics` and :mod:`.thermal`
how U and pressure drop follow the operating point; :mod:`.service` rates an exchanger in
service; :mod:`.models` and :mod:`.exchanger_unit` wrap them behind the
:class:`~.models.UnitModel` protocol the solver uses.
"""

from .exchanger import ARRANGEMENTS, ExchangerRating, rate_exchanger
from .exchanger_unit import Exchanger
from .models import Finding, Heater, Inlets, Mixer, Sink, Source, Splitter, UnitModel, UnitReport
from .service import ExchangerSpec, rate_in_service

__all__ = [
    "ARRANGEMENTS",
    "ExchangerRating",
    "rate_exchanger",
    "UnitModel",
    "Inlets",
    "ExchangerSpec",
    "rate_in_service",
    "UnitReport",
    "Finding",
    "Source",
    "Sink",
    "Mixer",
    "Splitter",
    "Heater",
    "Exchanger",
]
