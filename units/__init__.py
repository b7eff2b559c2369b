"""hxtrain.units: the physics of single units on numbers and numpy arrays (no files, no graphs).

- :mod:`.pntu`: the P–NTU, LMTD and F relations of each flow arrangement;
- :mod:`.pntu_rating`: one exchanger rated from its inlets, heat-capacity rates and UA;
- :mod:`.service_rating`: an exchanger rated in service, with cp(T) and U following flow and
  temperature (iterated to its own enthalpy balance);
- :mod:`.u_models`: how U is found (fixed, from reference films, from geometry);
- :mod:`.films`, :mod:`.resistances`, :mod:`.hydraulics`: film coefficients, resistances in
  series, pressure drop;
- :mod:`.properties`: fluid models (cp(T), enthalpy and its inverse, transport properties);
- :mod:`.balances`: one-stream energy balances;
- :mod:`.protocol`: the :class:`~.protocol.UnitModel` protocol the solver uses, with its
  reports, findings and parameters;
- :mod:`.exchanger_model` and :mod:`.stream_units`: the units behind that protocol.
"""

from .exchanger_model import Exchanger
from .pntu_rating import ARRANGEMENTS, ExchangerRating, rate_exchanger
from .protocol import Finding, Inlets, UnitModel, UnitReport
from .service_rating import ExchangerSpec, rate_in_service
from .stream_units import Heater, Mixer, Sink, Source, Splitter

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
