"""Scenarios of one topology: case values given one per scenario, set on the unit models.

A scenario value is addressed by the key path of the case file — ``streams.crude.flow``,
``exchangers.E-104.fouling.shell``, ``splitters.crude_split.branches.north.fraction`` — and is
set through the parameters the unit declares (:meth:`UnitModel.parameters`): which values may
vary, their kind of quantity and their bounds. Nothing here knows unit types. Values are numbers
in the case file's default units (kg/s, °C, kW/K, W/m²·K, m²·K/W, kW, fractions).

Only values that leave the topology and the calculation order alone can vary across scenarios;
every other change (shell counts, areas, geometry, ...) is a new case, simulated as a scenario
of its own by the studies.
"""

from __future__ import annotations

import difflib

import numpy as np

from .changes import key_kind
from .errors import CaseError
from .quantities import QuantityError, check_plausible


def scenario_count(values: dict) -> int:
    """The number of scenarios ``values`` describe (1 without values); CaseError when the
    arrays differ in length or are not one-dimensional arrays of numbers."""
    sizes = set()
    for path, array in values.items():
        try:
            array = np.asarray(array, dtype=float)
        except (TypeError, ValueError):
            raise CaseError(f"the values of '{path}' must be numbers, one per scenario") from None
        if array.ndim > 1:
            raise CaseError(f"the values of '{path}' must be a one-dimensional array, one value per scenario")
        sizes.add(array.size)
    if len(sizes) > 1:
        raise CaseError(f"every varied value needs the same number of scenarios; got {sorted(sizes)}")
    size = sizes.pop() if sizes else 1
    if size < 1:
        raise CaseError("a batch needs at least one scenario")
    return size


def unit_parameter(net, path: str):
    """(unit, parameter) addressed by a case-file key path; CaseError naming the path, and the
    nearest paths that may vary, where there is none."""
    parts = path.split(".") if isinstance(path, str) else []
    unit = net.units.get(parts[1]) if len(parts) >= 3 else None
    if unit is not None and tuple(net.case.keys.get(parts[1], ())[:1]) == (parts[0],):
        name = _side_name(unit, ".".join(parts[2:]))
        for parameter in unit.parameters():
            if parameter.name == name:
                return unit, parameter
    options = varied_paths(net)
    near = difflib.get_close_matches(str(path), options, n=3, cutoff=0.6)
    hint = f"; nearest: {', '.join(near)}" if near else ""
    raise CaseError(f"'{path}' is not a value a scenario can vary in this case{hint} (the values that can: flows and "
                    "supply temperatures, bypass fractions, UA or a fixed U, fouling resistances, heater and cooler "
                    "settings, splitter fractions and set branch flows, steam heater settings, desalter carry-over "
                    "and heat loss, an air cooler's air temperature, air flow or fan target; other changes are new "
                    "cases)")


def varied_paths(net) -> list[str]:
    """Every key path of the case that a scenario may vary."""
    return [f"{'.'.join(net.case.keys[name])}.{p.name}" for name, unit in net.units.items()
            if name in net.case.keys for p in unit.parameters()]


def _side_name(unit, name):
    """``bypass.shell`` / ``bypass.tube`` as the hot/cold side the case puts in the shell."""
    group, _, part = name.partition(".")
    shell_side = getattr(getattr(unit, "spec", None), "shell_side", None)
    if group == "bypass" and part in ("shell", "tube") and shell_side:
        other = "cold" if shell_side == "hot" else "hot"
        return f"bypass.{shell_side if part == 'shell' else other}"
    return name


def apply_values(net, values: dict):
    """Set each value on its unit; returns (scenarios, valid, message, key): a scenario with a
    value outside its parameter's bounds is not valid, and says which value (``key``, the key
    path as a tuple) and why (``message``)."""
    batch = scenario_count(values)
    valid = np.ones(batch, bool)
    message = np.full(batch, "", dtype=object)
    key = np.full(batch, None, dtype=object)
    for path, array in values.items():
        unit, parameter = unit_parameter(net, path)
        array = np.broadcast_to(np.asarray(array, dtype=float).reshape(-1), (batch,))
        # the case file's own message first (a flow of 0 is below the smallest plausible flow, as a
        # case file says: "it must be above 0" was not the bound)
        implausible = _implausible(path, array, valid, message, key)
        valid &= ~implausible
        outside = parameter.outside(array)
        for k in np.flatnonzero(outside & valid):
            message[k] = (f"{array[k]:g} is not a possible value (it must be {parameter.bounds_text()})"
                          if np.isfinite(array[k]) else f"{array[k]:g} is not a finite number")
            key[k] = tuple(path.split("."))
        valid &= ~outside
        outside |= implausible
        safe = np.where(outside, _inside(parameter), array)  # keep the arithmetic of bad rows finite
        unit.set_parameter(parameter.name, safe)
    return batch, valid, message, key


def _implausible(path, array, valid, message, key) -> np.ndarray:
    """Rows (among those still valid) whose value a case file would refuse: outside the
    plausibility range of the key path's kind (:mod:`.quantities`), or a share too small to mean
    anything. A batch takes only what a case file takes (a flow of 1e-300 kg/s, or a denormal,
    would otherwise reach the exchanger relations); the reason goes into ``message``."""
    try:
        kind = key_kind(path)
    except CaseError:
        return np.zeros(array.shape, bool)
    with np.errstate(invalid="ignore"):
        bad = (array < kind.low) | (array > kind.high) | ((array != 0.0) & (np.abs(array) < kind.least_nonzero))
    bad &= valid
    for k in np.flatnonzero(bad):
        try:
            check_plausible(float(array[k]), kind)
        except QuantityError as exc:
            message[k] = str(exc)
        key[k] = tuple(path.split("."))
    return bad


def _inside(parameter):
    low, high = parameter.low, parameter.high
    if np.isfinite(low) and np.isfinite(high):
        return 0.5 * (low + high)
    if np.isfinite(low):
        return low + 1.0 if parameter.low_open else low
    return high if np.isfinite(high) else 0.0
