"""Changes to a case addressed by key path, as a study's variants, sweeps and specifications
make them: applied to the case document, which is then checked like any case file.

A change is one mapping::

    {set: streams.crude.supply_temperature, to: 40}     # any value, any key path
    {scale: streams.crude.flow, by: 1.15}               # a number or a quantity with units
    {bypass: E-110.cold, fraction: 0.2}                 # open (or close) an exchanger bypass
    {add_shells: E-104, count: 1}                       # add (or, negative, remove) shells in series
    {clean: E-112}                                      # every fouling resistance of E-112 to zero

Every component of a key path except the last must exist in the case; a wrong one is an error
naming the path and the nearest existing paths.
"""

from __future__ import annotations

import copy
import difflib

from . import quantities as q
from .errors import CaseError
from .quantities import QuantityError, shorten, to_default_unit

VERBS = ("set", "scale", "bypass", "add_shells", "clean")
_KINDS_BY_KEY = {
    "flow": q.MASS_FLOW, "supply_temperature": q.TEMPERATURE, "ua": q.CONDUCTANCE, "u": q.HEAT_TRANSFER_COEFFICIENT,
    "clean_u": q.HEAT_TRANSFER_COEFFICIENT, "area_per_shell": q.AREA, "duty": q.DUTY,
    "outlet_temperature": q.TEMPERATURE, "fraction": q.FRACTION, "shell": None, "tube": None,
}


def split_path(path) -> list[str]:
    if not isinstance(path, str) or not path.strip():
        raise ValueError("a key path is text such as streams.crude.flow")
    return [part.strip() for part in path.split(".")]


def nearest_paths(data, parts, depth) -> list[str]:
    """Existing key paths at the level where ``parts`` stops matching, closest first."""
    node, prefix = data, []
    for part in parts[:depth]:
        node = node[part]
        prefix.append(part)
    options = [".".join(prefix + [str(k)]) for k in node] if isinstance(node, dict) else []
    wanted = ".".join(parts[: depth + 1])
    return difflib.get_close_matches(wanted, options, n=3, cutoff=0.5) or options[:5]


def locate(data, path, where, create_last=True):
    """The mapping holding the last component of ``path`` and that component's name."""
    parts = split_path(path)
    node = data
    for depth, part in enumerate(parts[:-1]):
        if not isinstance(node, dict) or part not in node:
            hint = ", ".join(nearest_paths(data, parts, depth)) if isinstance(node, dict) else ""
            raise CaseError(f"no key path '{path}' in the case: '{'.'.join(parts[:depth + 1])}' does not exist"
                            + (f"; nearest: {hint}" if hint else ""), path=where)
        if node[part] is None and depth < len(parts) - 2:
            node[part] = {}
        node = node[part]
    if not isinstance(node, dict):
        raise CaseError(f"no key path '{path}' in the case: '{'.'.join(parts[:-1])}' holds a value, not keys",
                        path=where)
    if parts[-1] not in node and not create_last:
        hint = ", ".join(nearest_paths(data, parts, len(parts) - 1))
        raise CaseError(f"no key path '{path}' in the case" + (f"; nearest: {hint}" if hint else ""), path=where)
    return node, parts[-1]


def _unit(data, tag, where, section="exchangers"):
    units = data.get(section) or {}
    if tag not in units:
        hint = ", ".join(difflib.get_close_matches(tag, list(units), n=3)) or ", ".join(list(units)[:5])
        raise CaseError(f"no {section[:-1]} '{tag}' in the case; nearest: {hint}", path=where)
    return units[tag]


def numeric_value(value, key, where) -> float:
    """A case value as a number in its default unit (for scaling)."""
    kind = _KINDS_BY_KEY.get(key) or q.NUMBER
    try:
        return to_default_unit(value, kind)
    except QuantityError as exc:
        raise CaseError(f"cannot scale {shorten(value)}: {exc}", path=where) from None


def apply_change(data: dict, change: dict, where=()) -> None:
    """Apply one change (see the module notes) to a case document in place."""
    if not isinstance(change, dict):
        raise CaseError(f"a change is a mapping such as {{set: PATH, to: VALUE}}, got {shorten(change)}", path=where)
    verbs = [v for v in VERBS if v in change]
    if len(verbs) != 1:
        raise CaseError(f"a change names exactly one of {', '.join(VERBS)}; got keys {', '.join(map(str, change))}",
                        path=where)
    verb = verbs[0]
    allowed = {"set": {"to"}, "scale": {"by"}, "bypass": {"fraction"}, "add_shells": {"count"}, "clean": set()}[verb]
    extra = set(change) - allowed - {verb, "description"}
    missing = allowed - set(change)
    if extra or missing:
        raise CaseError(f"'{verb}' takes {', '.join(sorted(allowed)) or 'nothing else'}"
                        + (f"; unknown: {', '.join(map(str, sorted(extra, key=str)))}" if extra else "")
                        + (f"; missing: {', '.join(sorted(missing))}" if missing else ""), path=where)
    target = change[verb]
    if verb == "set":
        node, key = locate(data, target, where)
        node[key] = copy.deepcopy(change["to"])
    elif verb == "scale":
        node, key = locate(data, target, where, create_last=False)
        factor = numeric_value(change["by"], None, where + ("by",))
        node[key] = numeric_value(node[key], key, where) * factor
    elif verb == "bypass":
        tag, _, side = str(target).partition(".")
        if side not in ("hot", "cold"):
            raise CaseError(f"'bypass' names an exchanger side, e.g. E-110.cold; got {shorten(target)}", path=where)
        exchanger = _unit(data, tag, where)
        exchanger.setdefault("bypass", {})
        exchanger["bypass"] = dict(exchanger["bypass"] or {}, **{side: change["fraction"]})
    elif verb == "add_shells":
        exchanger = _unit(data, str(target), where)
        count = change["count"]
        if isinstance(count, bool) or not isinstance(count, int):
            raise CaseError(f"'count' is a whole number of shells, got {shorten(count)}", path=where)
        exchanger["shells"] = int(exchanger.get("shells", 1) or 1) + count
    else:
        exchanger = _unit(data, str(target), where)
        if "fouling" not in exchanger:
            raise CaseError(f"exchanger '{target}' has no fouling resistances to clean (it needs 'fouling' with "
                            "'clean_u', 'film' or 'geometry')", path=where)
        exchanger["fouling"] = {side: 0.0 for side in (exchanger["fouling"] or {})}


def apply_changes(data: dict, changes, where=()) -> dict:
    """A changed deep copy of a case document."""
    changed = copy.deepcopy(data)
    if not isinstance(changes, list):
        raise CaseError(f"'changes' is a list of changes, got {shorten(changes)}", path=where)
    for i, change in enumerate(changes):
        apply_change(changed, change, tuple(where) + (i,))
    return changed


def rescaled_branches(fractions: dict, branch, value) -> dict:
    """A splitter's branch fractions with ``branch`` set to ``value`` (a number or an array) and
    the other branches rescaled in proportion, so that the fractions still sum to one."""
    others = {b: f for b, f in fractions.items() if b != branch}
    rest = sum(others.values())
    result = {branch: value}
    for b, fraction in others.items():
        result[b] = (1.0 - value) * (fraction / rest if rest > 0 else 1.0 / len(others))
    return result


def value_changes(data: dict, path, value, where=()) -> list:
    """The changes that set ``path`` to ``value``: a splitter branch fraction also rescales the
    splitter's other branches (see :func:`rescaled_branches`)."""
    parts = split_path(path)
    if len(parts) == 5 and parts[0] == "splitters" and parts[2] == "branches" and parts[4] == "fraction":
        branches = ((data.get("splitters") or {}).get(parts[1]) or {}).get("branches") or {}
        if parts[3] not in branches:
            raise CaseError(f"no branch '{parts[3]}' of splitter '{parts[1]}'", path=where)
        base = {b: numeric_value((branches[b] or {}).get("fraction"), "fraction", where) for b in branches}
        shares = rescaled_branches(base, parts[3], value)
        return [{"set": f"splitters.{parts[1]}.branches.{b}.fraction", "to": float(v)} for b, v in shares.items()]
    return [{"set": path, "to": float(value)}]
