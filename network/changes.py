"""Changes to a case addressed by key path, as a study's variants, sweeps and specifications
make them: applied to the case document, which is then checked like any case file.

A change is one mapping::

    {set: streams.crude.supply_temperature, to: 40}     # any value, any key path
    {scale: streams.crude.flow, by: 1.15}               # a numeric key; not a temperature
    {bypass: E-110.cold, fraction: 0.2}                 # open (or close) an exchanger bypass
    {add_shells: E-104, count: 1}                       # add (or, negative, remove) shells in series
                                                        # (identical ones: a total "ua" grows with them)
    {clean: E-112}                                      # every fouling resistance of E-112 (an exchanger
                                                        # or an air cooler) to zero

Every component of a key path except the last must exist in the case (a mapping of a numeric
key, such as ``bypass`` or ``fouling``, is made when missing); a wrong one is an error naming the
path and the nearest existing paths. Scaling, specifications and sweeps work on numeric keys:
the kind of quantity at a key path, and so the units its values may be written in, comes from
:data:`NUMERIC_KEYS`, one table for the whole case format. Errors carry the key path in the
study (``where``) of the change at fault; the study adds its file.
"""

from __future__ import annotations

import copy
import difflib
import itertools

from . import quantities as q
from .errors import CaseError
from .exchangers import SIDES
from .fields import describe
from .quantities import QuantityError, shorten, to_default_unit

VERBS = ("set", "scale", "bypass", "add_shells", "clean")
CLEANED_SECTIONS = ("exchangers", "air_coolers")
"""The sections whose units ``clean`` takes: those with fouling resistances."""
_VERB_KEYS = {"set": {"to"}, "scale": {"by"}, "bypass": {"fraction"}, "add_shells": {"count"}, "clean": set()}

WHOLE_NUMBER = q.Kind("a whole number", "dimensionless", "2")
"""The kind of the keys that count things: shells, tube passes, tubes, baffles, iterations."""

_SIDE = "hot|cold|shell|tube"
NUMERIC_KEYS = {
    "settings.minimum_approach": q.TEMPERATURE_DIFFERENCE,
    "settings.minimum_f": q.CORRECTION_FACTOR,
    "settings.tolerance": q.TOLERANCE,
    "settings.max_iterations": WHOLE_NUMBER,
    "fluids.*.cp": q.SPECIFIC_HEAT,
    "fluids.*.petroleum.api_gravity": q.API_GRAVITY,
    "fluids.*.petroleum.specific_gravity": q.SPECIFIC_GRAVITY,
    "fluids.*.petroleum.watson_k": q.WATSON_K,
    "fluids.*.viscosity": q.VISCOSITY,
    "fluids.*.conductivity": q.FLUID_CONDUCTIVITY,
    "fluids.*.density": q.DENSITY,
    "fluids.*.enthalpy_curve|water_steam.pressure": q.PRESSURE,
    "streams.*.flow": q.MASS_FLOW,
    "streams.*.supply_temperature": q.TEMPERATURE,
    "exchangers.*.shells|shells_in_parallel|tube_passes": WHOLE_NUMBER,
    "exchangers.*.ua": q.CONDUCTANCE,
    "exchangers.*.u|clean_u": q.HEAT_TRANSFER_COEFFICIENT,
    "exchangers.*.area_per_shell": q.AREA,
    "exchangers.*.clean_resistance_shell_share": q.SHELL_SHARE,
    "exchangers.*.film.shell|tube": q.FILM_COEFFICIENT,
    "exchangers.*.reference_flow.shell|tube": q.MASS_FLOW,
    "exchangers.*.reference_temperature.shell|tube": q.TEMPERATURE,
    "exchangers.*.reference_reynolds_tube": q.REYNOLDS,
    "exchangers.*.flow_exponent.shell|tube": q.FLOW_EXPONENT,
    "exchangers.*.fouling.shell|tube": q.FOULING,
    "exchangers.*.tubes.outer_diameter|inner_diameter": q.TUBE_DIAMETER,
    "exchangers.*.tubes.wall_conductivity": q.WALL_CONDUCTIVITY,
    "exchangers.*.geometry.tube_outer_diameter|tube_inner_diameter": q.TUBE_DIAMETER,
    "exchangers.*.geometry.tube_length": q.TUBE_LENGTH,
    "exchangers.*.geometry.tube_pitch|baffle_spacing": q.SPACING,
    "exchangers.*.geometry.shell_inner_diameter": q.SHELL_DIAMETER,
    "exchangers.*.geometry.tubes|baffles": WHOLE_NUMBER,
    "exchangers.*.geometry.wall_conductivity": q.WALL_CONDUCTIVITY,
    "exchangers.*.pressure_drop.shell|tube.reference|allowable": q.PRESSURE_DROP,
    f"exchangers.*.bypass.{_SIDE}": q.FRACTION,
    f"exchangers.*.maximum_flow.{_SIDE}": q.MASS_FLOW,
    f"exchangers.*.design_temperature.{_SIDE}": q.TEMPERATURE,
    "heaters|coolers.*.duty": q.DUTY,
    "heaters|coolers.*.outlet_temperature|design_temperature": q.TEMPERATURE,
    "splitters.*.branches.*.fraction": q.FRACTION,
    "splitters.*.branches.*.flow": q.MASS_FLOW,
    "steam_heaters.*.steam_pressure": q.STEAM_PRESSURE,
    "steam_heaters.*.outlet_temperature|design_temperature": q.TEMPERATURE,
    "steam_heaters.*.duty": q.DUTY,
    "steam_heaters.*.ua": q.CONDUCTANCE,
    "air_coolers.*.tube_rows|tube_passes": WHOLE_NUMBER,
    "air_coolers.*.air.inlet_temperature": q.TEMPERATURE,
    "air_coolers.*.air.flow": q.MASS_FLOW,
    "air_coolers.*.air.cp": q.SPECIFIC_HEAT,
    "air_coolers.*.air.fan_control.outlet_temperature": q.TEMPERATURE,
    "air_coolers.*.air.fan_control.minimum_flow|maximum_flow": q.MASS_FLOW,
    "air_coolers.*.ua": q.CONDUCTANCE,
    "air_coolers.*.u": q.HEAT_TRANSFER_COEFFICIENT,
    "air_coolers.*.clean_u": q.CLEAN_COEFFICIENT,
    "air_coolers.*.area": q.AREA,
    "air_coolers.*.fouling": q.FOULING,
    "air_coolers.*.design_temperature": q.TEMPERATURE,
    "desalters.*.carry_over": q.FRACTION,
    "desalters.*.heat_loss": q.DUTY,
    "products.*.target_temperature": q.TEMPERATURE,
}
"""Every numeric key of a case file (README.md, "Keys") and the kind of quantity it holds:
``*`` stands for any name or tag, ``a|b`` for either component."""

_PATTERNS = [tuple(None if c == "*" else tuple(c.split("|")) for c in p.split(".")) for p in NUMERIC_KEYS]


def split_path(path, where=()) -> list[str]:
    if not isinstance(path, str) or not path.strip():
        raise CaseError(f"a key path is text such as streams.crude.flow, got {describe(path)}", path=where)
    parts = [part.strip() for part in path.split(".")]
    if not all(parts):
        raise CaseError(f"key path {shorten(path)} has an empty part (two dots in a row, or a dot at an end)",
                        path=where)
    return parts


def _matches(pattern, parts) -> bool:
    return len(pattern) == len(parts) and all(o is None or p in o for o, p in zip(pattern, parts))


def key_kind(path, where=()) -> q.Kind:
    """The kind of quantity at a case-file key path; an error naming the path if it is not a
    numeric key (with the numeric keys closest to it)."""
    parts = split_path(path, where)
    for pattern, kind in zip(_PATTERNS, NUMERIC_KEYS.values()):
        if _matches(pattern, parts):
            return kind
    raise CaseError(f"'{path}' is not a numeric key of a case file{_closest_numeric_keys(parts)}", path=where)


def _closest_numeric_keys(parts) -> str:
    options = set()
    for pattern in _PATTERNS:
        named = [((parts[i],) if o is None and i < len(parts) else o or ("NAME",)) for i, o in enumerate(pattern)]
        options.update(".".join(c) for c in itertools.product(*named))
    close = difflib.get_close_matches(".".join(parts), sorted(options), n=3, cutoff=0.75)
    if close:
        return f" (did you mean {' or '.join(close)}?)"
    section = sorted({".".join("|".join(c) if c else "NAME" for c in p) for p in _PATTERNS if parts[0] in p[0]})
    return f"; numeric keys there: {', '.join(s.split('.', 2)[-1] for s in section)}" if section else (
        "; numeric keys are under settings, fluids, streams, exchangers, heaters, coolers, steam_heaters, "
        "air_coolers, desalters, splitters and products")


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
    """The mapping holding the last component of ``path`` and that component's name. A missing
    mapping below a unit (``exchangers.E-109.bypass``), or a missing ``settings`` section, is made
    when ``path`` is a numeric key."""
    parts = split_path(path, where)
    pattern = next((p for p in _PATTERNS if _matches(p, parts)), None)
    node = data
    for depth, part in enumerate(parts[:-1]):
        if isinstance(node, dict) and node.get(part) is None:
            # a unit's missing mapping (bypass, fouling), or a case's missing settings section
            key_of_the_format = pattern is not None and (depth >= 2 and pattern[depth] is not None
                                                         or (depth, part) == (0, "settings"))
            if key_of_the_format or (part in node and depth < len(parts) - 2):
                node[part] = {}
        if not isinstance(node, dict) or part not in node:
            hint = ", ".join(nearest_paths(data, parts, depth)) if isinstance(node, dict) else ""
            raise CaseError(f"no key path '{path}' in the case: '{'.'.join(parts[:depth + 1])}' does not exist"
                            + (f"; nearest: {hint}" if hint else ""), path=where)
        node = node[part]
    if not isinstance(node, dict):
        raise CaseError(f"no key path '{path}' in the case: '{'.'.join(parts[:-1])}' holds {describe(node)}, "
                        "not keys", path=where)
    if parts[-1] not in node and not create_last:
        hint = ", ".join(nearest_paths(data, parts, len(parts) - 1))
        raise CaseError(f"no key path '{path}' in the case" + (f"; nearest: {hint}" if hint else ""), path=where)
    return node, parts[-1]


def study_number(value, kind: q.Kind, where):
    """A number a study writes (a multiplier, a range end, a target, a grid value) in ``kind``'s
    default unit: a bare number in that unit or text with units ("226 degF")."""
    try:
        return to_default_unit(value, kind)
    except QuantityError as exc:
        raise CaseError(str(exc), path=where) from None


def case_number(value, kind: q.Kind, path, where):
    """The value a case holds at ``path`` in ``kind``'s default unit; a whole-number key must
    hold an int, as the case reader requires."""
    if kind is WHOLE_NUMBER:
        if isinstance(value, bool) or not isinstance(value, int):
            raise CaseError(f"'{path}' holds {describe(value)}, not a whole number", path=where)
        return value
    try:
        return to_default_unit(value, kind)
    except QuantityError as exc:
        raise CaseError(f"'{path}' holds {shorten(value)}: {exc}", path=where) from None


def setting(value, kind: q.Kind, path, where):
    """``value`` (a number in the default unit) as the case takes it: an int for a whole-number
    key (an error if it is not whole), a float otherwise."""
    number = float(value)
    if kind is WHOLE_NUMBER:
        if not number.is_integer():
            raise CaseError(f"'{path}' takes a whole number; {number:g} is not one", path=where)
        return int(number)
    return number


def existing_number(data, path, where):
    """(holder mapping, key, kind, value in the default unit) of a numeric key the case gives."""
    node, key = locate(data, path, where)
    kind = key_kind(path, where)
    if node.get(key) is None:
        raise CaseError(f"the case gives no value at '{path}' (its default applies), so there is nothing to "
                        "multiply: give the values themselves (set, or a sweep without scale)", path=where)
    return node, key, kind, case_number(node[key], kind, path, where)


def refuse_temperature_multiple(path, kind: q.Kind, where, advice=None):
    """Scaling a temperature level is refused: the number depends on the unit's arbitrary zero."""
    if kind.level_temperature:
        raise CaseError(f"'{path}' is a temperature, and a temperature has no meaningful multiple (its zero is "
                        "arbitrary: 90 °F × 1.2 is 108 °F, yet 32.2 °C × 1.2 is 38.7 °C); "
                        + (advice or f"use set instead: {{set: {path}, to: VALUE}}"), path=where)


def _exchanger(data, tag, where) -> dict:
    coolers = data.get("air_coolers")
    if isinstance(coolers, dict) and isinstance(tag, str) and tag in coolers:
        raise CaseError(f"'{tag}' is an air cooler: bypasses and shells are changed on exchangers (an air cooler's "
                        "keys can be set, scaled and swept)", path=where)
    return _unit_entry(data, tag, where)[1]


_WHAT = {"exchangers": ("exchanger", "exchangers"), "air_coolers": ("air cooler", "air coolers")}
"""A unit section's unit, singular and plural, for messages."""


def _unit_entry(data, tag, where, sections=("exchangers",)) -> tuple[str, dict]:
    """(section, entry) of the unit ``tag`` in the first of ``sections`` that has it; an error
    naming the nearest tags of those sections where none has."""
    what = " or ".join(_WHAT[s][0] for s in sections)
    if not isinstance(tag, str) or not tag.strip():
        raise CaseError(f"expected an {what} tag such as E-104, got {describe(tag)}", path=where)
    tables = {s: data.get(s) for s in sections if isinstance(data.get(s), dict) and data.get(s)}
    if not tables:
        raise CaseError(f"the case has no {' or '.join(_WHAT[s][1] for s in sections)} "
                        f"('{sections[0]}' holds {describe(data.get(sections[0]))})", path=where)
    section = next((s for s, units in tables.items() if tag in units), None)
    if section is None:
        names = [name for units in tables.values() for name in units]
        hint = ", ".join(difflib.get_close_matches(tag, names, n=3)) or ", ".join(names[:5])
        raise CaseError(f"no {what} '{tag}' in the case; nearest: {hint}", path=where)
    if not isinstance(tables[section][tag], dict):
        raise CaseError(f"'{section}.{tag}' holds {describe(tables[section][tag])}, not an {_WHAT[section][0]}'s keys",
                        path=where)
    return section, tables[section][tag]


def _side_mapping(exchanger, tag, key, where) -> dict:
    """The exchanger's mapping at ``key`` (a copy; empty when not given)."""
    value = exchanger.get(key)
    if value is None:
        return {}
    if not isinstance(value, dict):
        raise CaseError(f"'exchangers.{tag}.{key}' holds {describe(value)}, not a mapping of sides", path=where)
    return dict(value)


def apply_change(data: dict, change: dict, where=()) -> None:
    """Apply one change (see the module notes) to a case document in place."""
    where = tuple(where)
    if not isinstance(change, dict):
        raise CaseError(f"a change is a mapping such as {{set: PATH, to: VALUE}}, got {describe(change)}", path=where)
    verbs = [v for v in VERBS if v in change]
    if len(verbs) != 1:
        raise CaseError(f"a change names exactly one of {', '.join(VERBS)}; got keys {', '.join(map(str, change))}",
                        path=where)
    verb = verbs[0]
    allowed = _VERB_KEYS[verb]
    extra = set(change) - allowed - {verb, "description"}
    missing = {k for k in allowed if k not in change or (change[k] is None and k != "to")}  # set to null: unset
    if extra or missing:
        raise CaseError(f"'{verb}' takes {', '.join(sorted(allowed)) or 'nothing else'}"
                        + (f"; unknown: {', '.join(map(str, sorted(extra, key=str)))}" if extra else "")
                        + (f"; missing: {', '.join(sorted(missing))}" if missing else ""), path=where)
    if not isinstance(change.get("description", ""), str):
        raise CaseError(f"expected text, got {describe(change['description'])}", path=where + ("description",))
    target, at = change[verb], where + (verb,)
    if verb == "set":
        node, key = locate(data, target, at)
        shells = _shell_count(data, target)
        node[key] = copy.deepcopy(change["to"])
        if shells is not None:  # node is the exchanger: its new count, checked in _keep_drop_per_shell
            _keep_drop_per_shell(node, target.split(".")[1], shells, node[key], at)
    elif verb == "scale":
        node, key, kind, value = existing_number(data, target, at)
        refuse_temperature_multiple(target, kind, at)
        product = value * study_number(change["by"], q.NUMBER, where + ("by",))
        node[key] = setting(product, kind, target, where + ("by",))
    elif verb == "bypass":
        tag, _, side = target.partition(".") if isinstance(target, str) else ("", "", "")
        if side not in SIDES:
            raise CaseError(f"'bypass' names an exchanger side, e.g. E-110.cold; got {shorten(target)}", path=at)
        exchanger = _exchanger(data, tag, at)
        bypass = _side_mapping(exchanger, tag, "bypass", at)
        if exchanger.get("shell_side") in SIDES:  # the side may be written as its shell/tube name
            bypass.pop("shell" if side == exchanger["shell_side"] else "tube", None)
        exchanger["bypass"] = dict(bypass, **{side: change["fraction"]})
    elif verb == "add_shells":
        exchanger = _exchanger(data, target, at)
        count = change["count"]
        if isinstance(count, bool) or not isinstance(count, int):
            raise CaseError(f"'count' is a whole number of shells, got {describe(count)}", path=where + ("count",))
        shells = exchanger.get("shells")
        shells = 1 if shells is None else case_number(shells, WHOLE_NUMBER, f"exchangers.{target}.shells", at)
        exchanger["shells"] = shells + count
        if "ua" in exchanger and shells + count > 0:  # a total UA: each shell added brings its share
            ua = case_number(exchanger["ua"], q.CONDUCTANCE, f"exchangers.{target}.ua", at)
            exchanger["ua"] = ua * (shells + count) / shells
        _keep_drop_per_shell(exchanger, target, shells, shells + count, at)
    else:
        section, unit = _unit_entry(data, target, at, CLEANED_SECTIONS)
        if section == "air_coolers":
            if "fouling" not in unit:
                raise CaseError(f"air cooler '{target}' has no fouling resistance to clean (it needs 'fouling' with "
                                "'clean_u')", path=at)
            unit["fouling"] = 0.0
            return
        if "fouling" not in unit:
            raise CaseError(f"exchanger '{target}' has no fouling resistances to clean (it needs 'fouling' with "
                            "'clean_u', 'film' or 'geometry')", path=at)
        unit["fouling"] = {side: 0.0 for side in _side_mapping(unit, target, "fouling", at)}


def written_path(change, data=None) -> tuple:
    """The case-file key path a (valid) change writes, e.g. ('exchangers', 'E-104', 'shells');
    ``data``, the case document it applies to, tells an air cooler's ``clean`` from an
    exchanger's."""
    verb = next(v for v in VERBS if v in change)
    target = str(change[verb])
    if verb in ("set", "scale"):
        return tuple(part.strip() for part in target.split("."))
    tag, _, side = target.partition(".")
    section = "air_coolers" if verb == "clean" and tag in ((data or {}).get("air_coolers") or {}) else "exchangers"
    return (section, tag) + {"bypass": ("bypass", side), "add_shells": ("shells",), "clean": ("fouling",)}[verb]


def apply_changes(data: dict, changes, where=()) -> dict:
    """A changed deep copy of a case document."""
    changed = copy.deepcopy(data)
    if not isinstance(changes, list):
        raise CaseError(f"'changes' is a list of changes, got {describe(changes)}", path=where)
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


def is_branch_fraction(path) -> bool:
    parts = path.split(".") if isinstance(path, str) else []
    return len(parts) == 5 and parts[0] == "splitters" and parts[2] == "branches" and parts[4] == "fraction"


def _shell_count(data, path):
    """The shells in series of the exchanger whose ``shells`` key ``path`` is (1 where unwritten);
    None where ``path`` is another key or the count is not a whole number yet (the case's own
    check names it)."""
    parts = path.split(".") if isinstance(path, str) else []
    if len(parts) != 3 or parts[0] != "exchangers" or parts[2] != "shells":
        return None
    exchanger = (data.get("exchangers") or {}).get(parts[1]) if isinstance(data.get("exchangers"), dict) else None
    shells = exchanger.get("shells", 1) if isinstance(exchanger, dict) else None
    return shells if isinstance(shells, int) and not isinstance(shells, bool) and shells > 0 else None


def _keep_drop_per_shell(exchanger, tag, before, after, at):
    """Each side's reference pressure drop (the whole exchanger's, at its reference flow) scaled
    from ``before`` to ``after`` shells in series: a shell added adds its drop (a third shell on a
    two-shell exchanger, 1.5 times the drop). A geometry's drop is per shell already."""
    section = exchanger.get("pressure_drop") if isinstance(exchanger, dict) else None
    if not isinstance(section, dict) or isinstance(after, bool) or not isinstance(after, int) or after <= 0 \
            or after == before:
        return
    for side, entry in section.items():
        if isinstance(entry, dict) and entry.get("reference") is not None:
            reference = case_number(entry["reference"], q.PRESSURE_DROP,
                                    f"exchangers.{tag}.pressure_drop.{side}.reference", at)
            section[side] = dict(entry, reference=reference * after / before)


def value_changes(data: dict, path, value, where=()) -> list:
    """The changes that set the numeric key ``path`` to ``value`` (a number in its default unit;
    whole for a whole-number key): a splitter branch fraction also rescales the splitter's other
    branches (see :func:`rescaled_branches`)."""
    kind = key_kind(path, where)
    value = setting(value, kind, path, where)
    if is_branch_fraction(path):
        splitter, branch = path.split(".")[1], path.split(".")[3]
        found = (data.get("splitters") or {}).get(splitter) if isinstance(data.get("splitters"), dict) else None
        branches = found.get("branches") if isinstance(found, dict) else None
        if not isinstance(branches, dict) or branch not in branches:
            raise CaseError(f"no branch '{branch}' of splitter '{splitter}'", path=where)
        if isinstance(branches[branch], dict) and "flow" in branches[branch]:
            raise CaseError(f"branch '{branch}' of splitter '{splitter}' is set by flow: vary its "
                            f"splitters.{splitter}.branches.{branch}.flow instead", path=where)
        sharing = {b: v for b, v in branches.items() if not (isinstance(v, dict) and "flow" in v)}
        lone = len(sharing) == 1 and len(sharing) < len(branches)  # the one branch taking the rest
        base = {b: 1.0 if lone and (v or {}).get("fraction") is None else
                case_number((v if isinstance(v, dict) else {}).get("fraction"), q.FRACTION,
                            f"splitters.{splitter}.branches.{b}.fraction", where) for b, v in sharing.items()}
        shares = rescaled_branches(base, branch, value)
        return [{"set": f"splitters.{splitter}.branches.{b}.fraction", "to": float(v)} for b, v in shares.items()]
    return [{"set": path, "to": value}]
