"""Scenarios of one topology as arrays: numeric case values set per scenario on one network.

Only values that leave the topology and the calculation order alone can vary across a batch:

* ``streams.NAME.flow`` (kg/s), ``streams.NAME.supply_temperature`` (°C)
* ``exchangers.TAG.ua`` (kW/K, where given), ``exchangers.TAG.u`` (W/m²·K, a fixed U),
  ``exchangers.TAG.fouling.shell`` / ``.tube`` (m²·K/W), ``exchangers.TAG.bypass.hot`` / ``.cold``
* ``heaters.TAG.outlet_temperature`` / ``.duty`` and the same for ``coolers``
* ``splitters.NAME.branches.BRANCH.fraction`` (the other branches rescale to sum to one) and
  ``splitters.NAME.branches.BRANCH.flow`` (a branch set by flow)
* ``steam_heaters.TAG.outlet_temperature`` / ``.duty`` / ``.ua``
* ``desalters.TAG.carry_over`` / ``.heat_loss``
* ``air_coolers.TAG.air.inlet_temperature`` / ``.air.flow`` / ``.air.fan_control.outlet_temperature``
  and ``.ua`` / ``.u`` / ``.fouling`` (whichever the cooler's U is given by)

Values are numbers in the default units. Each path's smallest and largest values are checked
like case-file values before anything runs (the checks are ranges, so the rest pass too).
"""

from __future__ import annotations

import copy

import numpy as np

from .case import case_from_document
from .changes import apply_change, value_changes
from .errors import CaseError
from .reading import Document

BATCHABLE = (
    "streams.NAME.flow", "streams.NAME.supply_temperature", "exchangers.TAG.ua", "exchangers.TAG.u",
    "exchangers.TAG.fouling.shell", "exchangers.TAG.fouling.tube", "exchangers.TAG.bypass.hot",
    "exchangers.TAG.bypass.cold", "heaters.TAG.outlet_temperature", "heaters.TAG.duty",
    "coolers.TAG.outlet_temperature", "coolers.TAG.duty", "splitters.NAME.branches.BRANCH.fraction",
    "splitters.NAME.branches.BRANCH.flow", "steam_heaters.TAG.outlet_temperature", "steam_heaters.TAG.duty",
    "steam_heaters.TAG.ua", "desalters.TAG.carry_over", "desalters.TAG.heat_loss",
    "air_coolers.TAG.air.inlet_temperature", "air_coolers.TAG.air.flow",
    "air_coolers.TAG.air.fan_control.outlet_temperature", "air_coolers.TAG.ua",
    "air_coolers.TAG.u", "air_coolers.TAG.fouling",
)


def is_batchable(path: str) -> bool:
    parts = path.split(".")
    if len(parts) < 3:
        return False
    pattern = [parts[0], "NAME" if parts[0] in ("streams", "splitters") else "TAG", *parts[2:]]
    if parts[0] == "splitters" and len(parts) == 5:
        pattern[3] = "BRANCH"
    return ".".join(pattern) in BATCHABLE


def check_values(document: Document, values: dict, where=(), what="the range of values"):
    """Check each path's extreme values as case-file values (the rules are ranges). Given
    ``where`` (the key path the values come from, in a study), a value the case refuses is
    blamed there, ``what`` reaching it, with the case's complaint beside it."""
    for path, array in values.items():
        if not is_batchable(path):
            raise CaseError(f"'{path}' cannot vary within a batch (it is not one of: {', '.join(BATCHABLE)})",
                            path=where)
        array = np.asarray(array, dtype=float)
        if array.ndim != 1 or not np.all(np.isfinite(array)):
            raise CaseError(f"the values of '{path}' must be a one-dimensional array of finite numbers", path=where)
        for extreme in (array.min(), array.max()):
            data = copy.deepcopy(document.data)
            for change in value_changes(data, path, float(extreme), where):
                apply_change(data, change, where)
            try:
                case_from_document(Document(data, document.file, document.lines))
            except CaseError as exc:
                if not where:
                    raise
                # named where the values come from (a study's input), the case's complaint beside it
                raise CaseError(f"{what} reaches {float(extreme):g}, where the case is not valid: "
                                f"{exc.describe()}", path=where) from None
