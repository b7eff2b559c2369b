"""hxtrain.units: the physics of single units on numbers and numpy arrays (no files, no graphs).

:mod:`.pntu` holds the P–NTU, LMTD and F relations; :mod:`.exchanger` rates one exchanger;
:mod:`.balances` the one-stream energy balances; :mod:`.models` wraps them behind the
:class:`~.models.UnitModel` protocol the solver uses.
"""

from .exchanger import ARRANGEMENTS, ExchangerRating, rate_exchanger
from .models import Exchanger, Finding, Heater, Mixer, Sink, Source, Splitter, UnitModel, UnitReport

__all__ = [
    "ARRANGEMENTS",
    "ExchangerRating",
    "rate_exchanger",
    "UnitModel",
    "UnitReport",
    "Finding",
    "Source",
    "Sink",
    "Mixer",
    "Splitter",
    "Heater",
    "Exchanger",
]
