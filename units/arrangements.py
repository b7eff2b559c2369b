r"""The registry of flow arrangements: for each, its P–NTU relation of one unit (shell, plate
pack, crossflow core) and what the rating, the inverse and the case reader need to know about it.

:data:`ARRANGEMENTS` is a table, one line per arrangement (:class:`Arrangement`). An
arrangement's own options (a plate's passes, a J shell's inlets) travel with its name as an
:class:`Arranged` value (:func:`arranged` checks them); identical units are joined in series in
overall counterflow or, with ``shells_flow="parallel_flow"``, in overall parallel flow
(:func:`p_of_units`). Adding an arrangement is one relation and one line; the relations
themselves are in :mod:`.pntu`, :mod:`.pntu_shells` and :mod:`.pntu_plates`, each with its
published source.

Conventions are those of :mod:`.pntu`: side 1 is the basis, ``ntu1 = UA/C1``, ``r1 = C1/C2``,
``P1 = (T1_in - T1_out)/(T1_in - T2_in)``; :class:`Basis` says which fluid side 1 is.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property, lru_cache
from typing import Callable

import numpy as np

from . import pntu, pntu_air_cooler, pntu_plates, pntu_shells

__all__ = ["ARRANGEMENTS", "Arrangement", "Arranged", "Basis", "Options", "FLOWS", "PLATE_PASSES", "arranged",
           "setting_problem", "single_pass_aware", "p_one_unit", "p_of_units", "p_exchanger", "basic_equivalent"]

FLOWS = ("counterflow", "parallel_flow")


@dataclass(frozen=True)
class Basis:
    """Which fluid the basis side (side 1) is, elementwise: the shell fluid (``is_shell``; for a
    plate, the stream named as ``shell_side``) and the mixed fluid of crossflow with one fluid
    mixed (``is_mixed``). None where the arrangement does not ask."""

    is_shell: object = None
    is_mixed: object = None


def _by_shell(basis, relation):
    """``relation("shell")`` where side 1 is the shell fluid, ``relation("tube")`` elsewhere; one
    evaluation where every element is on the same side."""
    if basis.is_shell is None:
        raise ValueError("this arrangement is not symmetric in the sides: give basis_is_shell")
    flag = np.asarray(basis.is_shell, dtype=bool)
    if flag.all() or not flag.any():
        return relation("shell" if flag.all() else "tube")
    return np.where(flag, relation("shell"), relation("tube"))


def _counterflow(ntu, r, basis, passes, o):
    return pntu.p_counterflow(ntu, r)


def _parallel_flow(ntu, r, basis, passes, o):
    return pntu.p_parallel_flow(ntu, r)


def _tema_e(ntu, r, basis, passes, o):
    if passes == 1:
        return pntu_shells.p_tema_e_one_tube_pass(ntu, r, counterflow=o["tube_flow"] == "counterflow")
    if passes == 3:
        return _by_shell(basis, lambda side: pntu_shells.p_tema_e_three_tube_passes(ntu, r, side))
    if passes == 2:  # symmetric: both bases give the same P
        return pntu.p_tema_e(ntu, r, 2)
    return _by_shell(basis, lambda side: pntu.p_tema_e(ntu, r, passes, side1=side))


def _crossflow(ntu, r, basis, passes, o):
    if o["both_mixed"]:
        return pntu_shells.p_crossflow_both_mixed(ntu, r)
    if basis.is_mixed is None:
        return pntu.p_crossflow_unmixed(ntu, r)
    return np.where(basis.is_mixed, pntu.p_crossflow_one_mixed(ntu, r, side1_mixed=True),
                    pntu.p_crossflow_one_mixed(ntu, r, side1_mixed=False))


def _shell_relation(function, sided):
    """A registry relation from a :mod:`.pntu_shells` function of (ntu1, r1, tube_passes, side1);
    ``sided(tube_passes, options)`` says where the relation is not symmetric in the sides."""
    def relation(ntu, r, basis, passes, o):
        if not sided(passes, o):
            return function(ntu, r, passes, "shell")
        return _by_shell(basis, lambda side: function(ntu, r, passes, side))
    return relation


def _tema_x(ntu, r, basis, passes, o):
    if not o["shell_fluid_mixed"]:
        return pntu.p_crossflow_unmixed(ntu, r)
    return _by_shell(basis, lambda side: pntu_shells.p_tema_x(ntu, r, side, shell_mixed=True))


PLATE_PASSES = tuple((a, b) for a in range(1, 7) for b in range(1, 7)
                     if a == b or {a, b} in ({1, 2}, {1, 3}, {1, 4}, {2, 3}, {2, 4}))
"""Passes (one stream, the other) of the plate exchangers with a published relation [Kandlikar
& Shah 1989]: 1-1 to 1-4, 2-3, 2-4 and equal passes (here up to 6-6)."""


def _plate(ntu, r, basis, passes, o):
    n_shell, n_other = o["passes"]
    low, high = sorted((n_shell, n_other))
    overall, channels = o["overall_flow"] == "counterflow", o["channel_flow"] == "counterflow"
    if low == high:  # symmetric; 1-1 is a single unit in its channel flow
        return pntu_plates.p_plate_equal_passes(ntu, r, low, overall or low == 1, channels)
    function = {(1, 2): pntu_plates.p_plate_1_2, (1, 4): pntu_plates.p_plate_1_4,
                (1, 3): lambda n, rr, side1_passes: pntu_plates.p_plate_1_3(n, rr, side1_passes, channels),
                (2, 3): lambda n, rr, side1_passes: pntu_plates.p_plate_2_3(n, rr, side1_passes, overall),
                (2, 4): lambda n, rr, side1_passes: pntu_plates.p_plate_2_4(n, rr, side1_passes, overall)}[(low, high)]
    return _by_shell(basis, lambda side: function(ntu, r, side1_passes=n_shell if side == "shell" else n_other))


def _plate_check(passes, o):
    """(option, message) for a plate setting without a relation, or an option that does not
    change it; None when the setting is rated."""
    pair = o["passes"]
    if tuple(pair) not in PLATE_PASSES:
        return "passes", (f"no published relation for {pair[0]} and {pair[1]} passes: rated are 1 to 4 passes against "
                          "one, 2 against 3 or 4, and equal passes up to 6")
    low, high = sorted(pair)
    if o.given("overall_flow") and low == 1:
        return "overall_flow", "with one pass on a side the flow is set by 'channel_flow' (1-1) or by the passes alone"
    if o.given("channel_flow") and low != high and (low, high) != (1, 3):
        return "channel_flow", (f"the channel directions do not change a {low}-{high} plate exchanger "
                                "(Kandlikar & Shah 1989): leave 'channel_flow' out")
    return None


def _air_cooler(ntu, r, basis, passes, o):
    """The air is the fluid outside the tubes: the "shell" side."""
    rows = o["tube_rows"]
    return _by_shell(basis, lambda side: pntu_air_cooler.p_air_cooler(
        ntu, r, rows, passes, side1="air" if side == "shell" else "process"))


def _air_cooler_check(passes, o):
    if not pntu_air_cooler.supported(o["tube_rows"], passes):
        rated = "; ".join(f"{p} pass{'es' if p > 1 else ''}: {', '.join(map(str, rows))} rows"
                          for p, rows in pntu_air_cooler.AIR_COOLER_PASSES.items())
        return "tube_rows", f"no relation for {o['tube_rows']} tube rows with {passes} passes (rated: {rated})"
    return None


@dataclass(frozen=True)
class Arrangement:
    """One line of the registry.

    ``relation(ntu1, r1, basis, tube_passes, options) -> P1`` of one unit. ``tube_passes``: the
    tube passes it takes (the default first; ``(1,)`` for a single-pass relation, whose tube
    passes are not asked for). ``options``: its own options and their values (the default
    first). The rest are functions of (tube_passes, options): ``check`` gives (option, message)
    for a combination without a relation; ``sided`` whether P depends on which stream is in the
    shell; ``cross`` whether a temperature cross inside one unit (P_hot + P_cold > 1) means heat
    flowing back (a violated limit) rather than an ordinary counterflow approach; ``same_end``
    whether both fluids leave at one end (the approach is then their outlet difference);
    ``halves`` how many multipass units one unit is, joined in counterflow, where its outlets
    meet and a cross is judged (2 for a TEMA F shell with four or more tube passes: two 1-2N E
    halves; else 1);
    ``shape`` how P1 rises with NTU1: ``"rising"``, ``"peak"`` (a maximum at finite NTU1, then a
    fall to its limit) or ``"dip"`` (a maximum, a shallow minimum, then a rise)."""

    relation: Callable
    text: str
    tube_passes: tuple = (1,)
    options: dict = field(default_factory=dict)
    check: Callable = lambda passes, o: None
    sided: Callable = lambda passes, o: False
    cross: Callable = lambda passes, o: False
    same_end: Callable = lambda passes, o: False
    halves: Callable = lambda passes, o: 1
    shape: Callable = lambda passes, o: "rising"


def _always(passes, o):
    return True


def _f_sided(passes, o):
    return passes >= 8  # 2 passes: counterflow; 4: two 1-2 halves, symmetric


def _plate_shape(passes, o):
    return "peak" if o["overall_flow"] == "parallel_flow" and min(o["passes"]) > 1 else "rising"


_EVEN = tuple(range(2, 17, 2))

ARRANGEMENTS = {
    "counterflow": Arrangement(_counterflow, "pure counterflow"),
    "double_pipe": Arrangement(_counterflow, "hairpins piped in counterflow: rated as counterflow"),
    "parallel_flow": Arrangement(_parallel_flow, "parallel flow (co-current)", same_end=_always),
    "tema_e": Arrangement(
        _tema_e, "TEMA E, one shell pass, shell fluid mixed: 1-1 (counterflow or parallel), 1-3 (shell against the "
                 "first pass), 1-2N", tube_passes=(2, 1, 3, *_EVEN[1:]), options={"tube_flow": FLOWS},
        check=lambda n, o: ("tube_flow", "'tube_flow' applies to one tube pass only")
        if n != 1 and o.given("tube_flow") else None,
        sided=lambda n, o: n >= 3, cross=lambda n, o: n > 1,
        same_end=lambda n, o: n == 1 and o["tube_flow"] == "parallel_flow",
        shape=lambda n, o: "dip" if n == 3 else ("peak" if n >= 4 else "rising")),
    "crossflow": Arrangement(
        _crossflow, "single-pass crossflow: both fluids unmixed, one mixed or both mixed",
        options={"both_mixed": (False, True)}, shape=lambda n, o: "peak" if o["both_mixed"] else "rising"),
    "tema_f": Arrangement(
        _shell_relation(pntu_shells.p_tema_f, _f_sided), "TEMA F, two shell passes (ideal longitudinal baffle)",
        tube_passes=(4, 2, 8, 12, 16), sided=_f_sided, cross=lambda n, o: n >= 4,
        halves=lambda n, o: 2 if n >= 4 else 1,
        shape=lambda n, o: "peak" if n >= 8 else "rising"),
    "tema_g": Arrangement(_shell_relation(pntu_shells.p_tema_g, _always), "TEMA G split flow", tube_passes=(2, 1),
                          sided=_always, cross=_always),
    "tema_h": Arrangement(_shell_relation(pntu_shells.p_tema_h, _always), "TEMA H double split flow", tube_passes=(2, 1),
                          sided=_always, cross=_always),
    "tema_j": Arrangement(
        _shell_relation(pntu_shells.p_tema_j, _always), "TEMA J divided flow, one or two shell inlets (the same P)",
        tube_passes=(2, 1, 4), options={"shell_inlets": (1, 2)}, sided=_always, cross=_always,
        shape=lambda n, o: "rising" if n == 1 else "peak"),
    "tema_x": Arrangement(_tema_x, "TEMA X crossflow shell, one tube pass, tubes unmixed",
                          options={"shell_fluid_mixed": (False, True)}, sided=lambda n, o: o["shell_fluid_mixed"]),
    "plate": Arrangement(
        _plate, "plate exchanger by passes per side", options={"passes": ((1, 1),), "overall_flow": FLOWS,
                                                              "channel_flow": FLOWS},
        check=_plate_check, sided=lambda n, o: o["passes"][0] != o["passes"][1],
        cross=lambda n, o: not (o["overall_flow"] == o["channel_flow"] == "counterflow"
                                and o["passes"][0] == o["passes"][1]),
        same_end=lambda n, o: (o["passes"] == (1, 1) and o["channel_flow"] == "parallel_flow")
        or (min(o["passes"]) > 1 and o["overall_flow"] == "parallel_flow"),
        shape=_plate_shape),
    "air_cooler": Arrangement(
        _air_cooler, "air-cooled bundle: tube rows crossed by air (unmixed), process passes in counter-crossflow; "
                     "the air is the shell side", tube_passes=(2, 1, 3, 4, 5),
        options={"tube_rows": (4, *range(1, 4), *range(5, pntu_air_cooler.MAX_ROWS_ONE_PASS + 1))},
        check=_air_cooler_check, sided=_always),
}
"""Every flow arrangement, by the name a case file gives it (see :class:`Arrangement`)."""


class Options(dict):
    """An arrangement's options with the defaults filled in; :meth:`given` says which were set."""

    def __init__(self, values, given=()):
        super().__init__(values)
        self._given = frozenset(given)

    def given(self, key) -> bool:
        return key in self._given


class Arranged(str):
    """An arrangement with its own options, as an exchanger is built: the registry name (the
    value itself is that name, so it compares equal to it), the options given (``given``:
    ``(key, value)`` pairs; the others take their defaults) and how identical units are joined in
    series (``shells_flow``). Made by :func:`arranged`; a plain name is the arrangement with its
    defaults. Plate ``passes`` are (passes of the ``shell_side`` stream, passes of the other)."""

    def __new__(cls, name, given=(), shells_flow="counterflow"):
        self = super().__new__(cls, name)
        self.given, self.shells_flow = tuple(given), shells_flow
        return self

    def __reduce__(self):
        return Arranged, (str(self), self.given, self.shells_flow)

    def __repr__(self):
        return f"Arranged({str(self)!r}, {self.given!r}, {self.shells_flow!r})"

    @property
    def name(self) -> str:
        return str(self)

    @property
    def identity(self) -> tuple:
        """Everything that tells two arrangements apart: the name, the options given and how
        shells are joined. (The value itself compares equal to its name alone, so that code
        asking "is this a TEMA E?" may compare with a name; a dictionary key or an equality
        that must tell two arrangements apart takes this instead.)"""
        return str(self), self.given, self.shells_flow

    @property
    def line(self) -> Arrangement:
        return ARRANGEMENTS[self.name]

    @cached_property
    def options(self) -> Options:
        """The options with their defaults (worked out once: the rating asks on every call)."""
        defaults = {key: values[0] for key, values in self.line.options.items()}
        return Options({**defaults, **dict(self.given)}, dict(self.given))

    def problem(self, tube_passes):
        """:func:`setting_problem` for these tube passes, worked out once per count."""
        known = self.__dict__.setdefault("_problems", {})
        if tube_passes not in known:
            known[tube_passes] = setting_problem(self, tube_passes)
        return known[tube_passes]


def arranged(name, shells_flow="counterflow", **options) -> Arranged:
    """The arrangement ``name`` of :data:`ARRANGEMENTS` with ``options`` (ValueError for an
    unknown name, option or value).

    >>> arranged("plate", passes=(2, 3), overall_flow="parallel_flow").options["passes"]
    (2, 3)
    """
    if not options and shells_flow == "counterflow":
        if isinstance(name, Arranged):
            return name
        if name in ARRANGEMENTS:
            return _plain(name)
    if name not in ARRANGEMENTS:
        raise ValueError(f"unknown arrangement {name!r}; expected one of {', '.join(ARRANGEMENTS)}")
    if shells_flow not in FLOWS:
        raise ValueError(f"shells_flow must be one of {FLOWS}, got {shells_flow!r}")
    allowed = ARRANGEMENTS[name].options
    for key, value in options.items():
        if key not in allowed:
            raise ValueError(f"{name} takes no option {key!r} (it takes: {', '.join(allowed) or 'none'})")
        if key != "passes" and value not in allowed[key]:
            raise ValueError(f"{name}: {key} must be one of {allowed[key]}, got {value!r}")
    if "passes" in options:
        options["passes"] = tuple(int(n) for n in options["passes"])
    return Arranged(name, tuple(sorted(options.items())), shells_flow)


@lru_cache(maxsize=None)
def _plain(name) -> Arranged:
    """The arrangement ``name`` with its defaults, made once."""
    return Arranged(name)


def setting_problem(arrangement, tube_passes):
    """(option, message) where the arrangement has no relation for these tube passes and options
    (``"tube_passes"`` for the passes), None where it is rated."""
    a = arranged(arrangement)
    line = a.line
    if line.tube_passes != (1,) and tube_passes not in line.tube_passes:
        return "tube_passes", (f"{a.name} is rated with {', '.join(map(str, sorted(line.tube_passes)))} tube passes, "
                               f"not {tube_passes}")
    return line.check(tube_passes, a.options)


def single_pass_aware(a: Arranged, tube_passes):
    """The tube passes the relation sees: a single-pass relation ignores the argument."""
    return 1 if a.line.tube_passes == (1,) else tube_passes


def unit_halves(arrangement, tube_passes) -> int:
    """How many multipass parts one unit of ``arrangement`` is where a cross is judged
    (:attr:`Arrangement.halves`: 2 for an F shell of four or more tube passes, else 1)."""
    a = arranged(arrangement)
    return a.line.halves(single_pass_aware(a, tube_passes), a.options)


def p_one_unit(ntu, r, arrangement, *, basis_is_shell=None, basis_is_mixed=None, tube_passes=2):
    """P of one shell/unit of ``arrangement`` (a name of :data:`ARRANGEMENTS` or an
    :class:`Arranged`) on a basis side given by the flags.

    ``basis_is_shell`` and ``basis_is_mixed`` (crossflow with one fluid mixed) are boolean arrays
    saying whether the basis side is the shell fluid / the mixed fluid; ``basis_is_mixed=None``
    for crossflow means both fluids unmixed (or both mixed, by the option).
    """
    a = arranged(arrangement)
    passes = single_pass_aware(a, tube_passes)
    problem = a.problem(passes)
    if problem:
        raise ValueError(f"{a.name}: {problem[1]}")
    return a.line.relation(ntu, r, Basis(basis_is_shell, basis_is_mixed), passes, a.options)


def p_of_units(p_unit, r, units, shells_flow="counterflow"):
    """P1 of ``units`` identical units in series, each with P1 = ``p_unit`` at the same R1, in
    overall counterflow (:func:`.pntu.p_shells_in_series`) or overall parallel flow
    (:func:`.pntu_shells.p_shells_in_series_parallel_flow`)."""
    if shells_flow == "parallel_flow" and units > 1:
        return pntu_shells.p_shells_in_series_parallel_flow(p_unit, r, units)
    return pntu.p_shells_in_series(p_unit, r, units)


def p_exchanger(ntu, r, arrangement, units=1, **flags):
    """P1 of ``units`` units in series of ``arrangement`` at the NTU1 of all of them together,
    joined as the arrangement's ``shells_flow`` says (flags of :func:`p_one_unit`)."""
    a = arranged(arrangement)
    return p_of_units(p_one_unit(np.asarray(ntu, dtype=float) / units, r, a, **flags), r, units, a.shells_flow)


def basic_equivalent(arrangement, tube_passes):
    """"counterflow" or "parallel_flow" where one unit of the arrangement is exactly that (a 1-1
    E shell, a 1-1 plate, a plate with equal passes all one way, an F shell with two tube
    passes): its closed forms serve (the inverse) and its F is 1 by definition; None otherwise.

    >>> basic_equivalent(arranged("plate", passes=(3, 3)), 1), basic_equivalent("tema_g", 2)
    ('counterflow', None)
    """
    a = arranged(arrangement)
    o = a.options
    if a.line.relation in (_counterflow, _parallel_flow):
        return "counterflow" if a.line.relation is _counterflow else "parallel_flow"
    if a.name == "tema_e" and tube_passes == 1:
        return o["tube_flow"]
    if a.name == "tema_f" and tube_passes == 2:
        return "counterflow"
    if a.name == "plate" and o["passes"][0] == o["passes"][1]:
        if o["passes"][0] == 1 or o["overall_flow"] == o["channel_flow"]:
            return o["channel_flow"]
    return None
