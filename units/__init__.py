"""hxtrain.units: the physics of single units on numbers and numpy arrays (no files, no graphs).

- :mod:`.pntu`: the P–NTU, LMTD and F relations of each flow arrangement;
- :mod:`.pntu_rating`: one exchanger rated from its inlets, heat-capacity rates and UA;
- :mod:`.service_rating`: an exchanger rated in service, with cp(T) and U following flow and
  temperature (iterated to its own enthalpy balance);
- :mod:`.u_models`: how U is found (fixed, from reference films, from geometry);
- :mod:`.films`, :mod:`.resistances`, :mod:`.hydraulics`: film coefficients, resistances in
  series, pressure drop;
- :mod:`.properties`: fluid models (cp(T), enthalpy and its inverse, transport properties);
- :mod:`.enthalpy_curves`, :mod:`.water_steam`: fluids as tables of T, h and vapour fraction at
  one pressure (water and steam from IAPWS-IF97);
- :mod:`.zone_rating`: an exchanger rated zone by zone along both streams' enthalpy curves;
- :mod:`.balances`: one-stream energy balances;
- :mod:`.protocol`: the :class:`~.protocol.UnitModel` protocol the solver uses, with its
  reports, findings and parameters;
- :mod:`.exchanger_model` and :mod:`.stream_units`: the units behind that protocol;
  :mod:`.zone_exchanger`: an exchanger with a fluid on an enthalpy curve, rated by zones.

The names below are imported on first use (PEP 562), so that importing one module of the
package (the fluid models, say) does not load every relation and its special functions.
"""

from importlib import import_module

_EXPORTS = {
    "Exchanger": ".exchanger_model", "ARRANGEMENTS": ".pntu_rating", "ExchangerRating": ".pntu_rating",
    "rate_exchanger": ".pntu_rating", "Finding": ".protocol", "Inlets": ".protocol", "UnitModel": ".protocol",
    "UnitReport": ".protocol", "ExchangerSpec": ".service_rating", "rate_in_service": ".service_rating",
    "Heater": ".stream_units", "Mixer": ".stream_units", "Sink": ".stream_units", "Source": ".stream_units",
    "Splitter": ".stream_units",
}

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


def lazy_exports(module: str, exports: dict):
    """``__getattr__`` and ``__dir__`` for a package whose names (``exports``: name -> submodule,
    relative to ``module``) are imported on first use (PEP 562); the value is then cached in the
    package. Shared by hxtrain.units, hxtrain.network and hxtrain.solver."""
    import sys

    def __getattr__(name):
        if name not in exports:
            raise AttributeError(f"module {module!r} has no attribute {name!r}")
        value = getattr(import_module(exports[name], module), name)
        setattr(sys.modules[module], name, value)
        return value

    def __dir__():
        return sorted({*vars(sys.modules[module]), *exports})

    return __getattr__, __dir__


__getattr__, __dir__ = lazy_exports(__name__, _EXPORTS)
