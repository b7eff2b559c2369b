"""Generator of valid heat-exchanger networks, as plain case dicts for ``case_from_mapping``.

Used by ``test_linear_crosscheck.py`` (fixed seeds through :class:`RandomChooser`) and by
``test_network_properties.py`` (hypothesis draws through :class:`DrawChooser`, so that failing
examples shrink). Every random decision goes through a *chooser*, so both drive the same code.

What a generated network contains
---------------------------------
* 1-3 cold supply streams (15-120 °C) and 1-4 hot supply streams (130-380 °C), 1-3 fluids with
  constant cp; optionally the first two cold streams join in a feed mixer.
* Along each stream a chain of blocks: exchanger sides in series; a splitter into 2-3 parallel
  branches (fractions >= 0.1 each before normalising) re-mixed in a mixer; a local recycle
  (mixer -> units -> splitter whose ``recycle`` branch, fraction 0.05-0.6 < 1, returns to that
  mixer). Blocks nest two levels deep; at most 6 split or recycle blocks per network.
* Optionally a feed-effluent "turnaround": the first cold stream is heated, then passes the hot
  sides of exchangers itself, and may recycle a fraction (0.05-0.5) from its end back to a
  mixer at its start (a true process recycle around both sides, like cases/feed_effluent.yaml).
* Exchangers pair the k-th cold-side slot (in cold flow order) with a hot-side slot chosen by a
  mode: ``reverse`` (countercurrent coupling: hot streams meet the cold train hottest exchanger
  first), ``forward`` or ``shuffle``. Every arrangement, 1-4 shells in series, TEMA E with 2-8
  tube passes and either shell side, crossflow with either/no side mixed, bypasses per side.
  UA is 0.1-4 times the smaller C estimate (given as ``ua``, or as ``u`` with ``area_per_shell``
  and sometimes 2-3 ``shells_in_parallel``).
* Air coolers (``air_coolers`` section, only when ``generate_case(..., air_coolers=kinds)`` asks
  for them): on the hot paths, a fixed air flow anywhere on a chain (also inside recycles and
  feed-effluent loops) and a fixed air flow or fan control at the end of a chain. The air
  enters over 55 K from -10 °C, or, where target coolers are, from 1 K above their target T_C
  (an air cooler's outlet then never falls below T_C, so a target cooler is never fed below its
  target); it may heat a process stream colder than itself. Its C is 0.3-5 times the
  stream's, U given as ``ua``, ``u`` with ``area`` or ``clean_u`` with ``area`` and ``fouling``,
  bundles by tube rows and passes (:data:`AIR_COOLER_SETTINGS`). An air cooler's outlet lies
  between its process inlet and its air temperature (fan control clips its target to what the
  two flows reach), so the envelope below holds with the air temperatures added to the levels.
* Heaters on the cold streams and coolers on the hot streams. Each network has a heater mode and
  a cooler mode, ``target`` or ``duty``:
    - ``target``: every heater has the same outlet temperature T_H above every supply temperature
      (every cooler the same T_C below every supply temperature); such units sit only at the end
      of a chain (before the product or the turnaround), so a target unit is never fed only by
      the outlet of another one (whose mixed temperature could round 1 ulp past the target).
    - ``duty``: fixed duties of 2-40 K times the C estimate at the unit; these may sit anywhere
      on a chain (also inside recycles). ``fixed_duty=False`` forbids this mode.
  Validity (no target heater fed above its target, no target cooler below its target): with
  constant cp and fixed UA every outlet is a non-negative combination of inlets (weights summing
  to 1) plus the fixed duties over C, so temperatures are monotone in the duties. A network
  with target heaters has no fixed-duty heaters (fixed-duty coolers only lower temperatures);
  likewise for coolers. Without any fixed duty every temperature lies in [T_C, T_H]
  (the envelope property in ``test_network_properties.py`` uses ``fixed_duty=False``).

Every port is used exactly once, every path ends at a product, mixer or splitter, and every
recycle leaves a way out (fraction < 1), so ``case_from_mapping`` and the flow balance accept
every generated case. Units per case: about 60 at most (``max_exchangers`` = 15 by default).
"""

from __future__ import annotations

import copy
import random
from dataclasses import dataclass, field

ARRANGEMENTS = ("counterflow", "parallel_flow", "tema_e", "crossflow", "double_pipe")
"""The arrangements of the fixed-seed networks (``test_linear_crosscheck.py`` assembles its own
linear system for these): the default, so that those seeds keep giving the same networks."""
EVERY_ARRANGEMENT = ARRANGEMENTS + ("tema_f", "tema_g", "tema_h", "tema_j", "tema_x", "plate", "air_cooler")
"""Every arrangement of the registry (``hxtrain.units.arrangements.ARRANGEMENTS``), with the
options each takes drawn by :func:`_extended_options` (``generate_case(..., arrangements=...)``)."""

SECTIONS = ("fluids", "streams", "exchangers", "heaters", "coolers", "air_coolers", "mixers", "splitters", "products")
AIR_COOLER_SETTINGS = ((1, 1), (3, 1), (6, 1), (2, 2), (4, 2), (3, 3), (4, 4), (5, 5))
"""(tube rows, tube passes) of air-cooled bundles with a relation."""
AIR_COOLER_KINDS = ("fixed", "fan")
"""Air coolers with a fixed air flow, and with fan control (``generate_case(..., air_coolers=...)``)."""

STATS = {"networks": {}, "max_iterations": 0, "max_iterations_case": None, "max_units": 0, "features": {}}
"""Counters filled by the property tests (networks simulated per test, slowest convergence);
printed by the terminal summary hook in conftest.py."""


def record(test_name, result=None, case=None):
    """Count one generated network checked by ``test_name``: its iteration count, size and
    features (for the terminal summary and ``--hypothesis-show-statistics``)."""
    STATS["networks"][test_name] = STATS["networks"].get(test_name, 0) + 1
    units = None
    if case is not None:
        units = unit_count(case)
        from hypothesis import event

        for name in features(case):
            STATS["features"][name] = STATS["features"].get(name, 0) + 1
            event(name)
    if result is not None and result.iterations > STATS["max_iterations"]:
        STATS["max_iterations"] = result.iterations
        STATS["max_iterations_case"] = f"{test_name}: {result.message}"
    if units is not None:
        STATS["max_units"] = max(STATS["max_units"], units)


# ------------------------------------------------------------------------------------------
# Choosers: the source of every random decision
# ------------------------------------------------------------------------------------------
class RandomChooser:
    """Decisions from ``random.Random(seed)`` (reproducible fixed-seed networks)."""

    def __init__(self, seed):
        self.rng = random.Random(seed)

    def integer(self, lo, hi):
        return self.rng.randint(lo, hi)

    def real(self, lo, hi):
        return self.rng.uniform(lo, hi)

    def choice(self, options):
        return options[self.rng.randrange(len(options))]

    def chance(self, p):
        return self.rng.random() < p

    def permutation(self, n):
        order = list(range(n))
        self.rng.shuffle(order)
        return order


class DrawChooser:
    """Decisions drawn from hypothesis strategies (``draw`` of ``st.composite`` or ``st.data()``)."""

    def __init__(self, draw):
        from hypothesis import strategies as st

        self.draw, self.st = draw, st

    def integer(self, lo, hi):
        return self.draw(self.st.integers(lo, hi))

    def real(self, lo, hi):
        return self.draw(self.st.floats(lo, hi, allow_nan=False, allow_infinity=False))

    def choice(self, options):
        return self.draw(self.st.sampled_from(list(options)))

    def chance(self, p):
        # shrinks towards False; resolution of 1 %
        return self.draw(self.st.integers(0, 99)) < round(100 * p)

    def permutation(self, n):
        return self.draw(self.st.permutations(list(range(n))))


# ------------------------------------------------------------------------------------------
# The generator
# ------------------------------------------------------------------------------------------
@dataclass
class Slot:
    """A place on a path, filled later by an exchanger side, a heater or a cooler."""

    kind: str  # "cold" / "hot" exchanger side, "heater", "cooler", "air" (an air cooler)
    c: float  # heat-capacity rate estimate at this place, kW/K (for UA and duty scaling)
    label: str = ""
    fan: bool = False  # an air cooler with fan control


@dataclass
class _Builder:
    ch: object
    fixed_duty: bool
    heater_mode: str = "target"
    cooler_mode: str = "target"
    t_heat: float = 0.0
    t_cool: float = 0.0
    case: dict = field(default_factory=dict)
    paths: list = field(default_factory=list)  # (owner dict, list of items) to render
    slots: dict = field(default_factory=lambda: {"cold": [], "hot": [], "heater": [], "cooler": [], "air": []})
    counter: dict = field(default_factory=dict)
    max_blocks: int = 6
    blocks: int = 0
    arrangements: tuple = ARRANGEMENTS
    air_kinds: tuple = ()
    air_settings: tuple = AIR_COOLER_SETTINGS

    def name(self, prefix):
        self.counter[prefix] = self.counter.get(prefix, 0) + 1
        return f"{prefix}{self.counter[prefix]}"

    def new_path(self, owner):
        items = []
        self.paths.append((owner, items))
        return items

    def slot(self, kind, c):
        s = Slot(kind, c)
        self.slots[kind].append(s)
        return s

    # -- blocks ------------------------------------------------------------------------------
    def chain(self, path, budget, c, side, depth=0):
        """Append blocks consuming ``budget`` exchanger sides of ``side`` to ``path``; return the
        open path at the end of the chain (still without a terminal) and its C."""
        while budget > 0:
            kinds = ["series"]
            if depth < 2 and self.blocks < self.max_blocks:
                kinds += ["split", "recycle"]
            kind = self.ch.choice(kinds)
            if kind != "series":
                self.blocks += 1
            if kind == "series":
                k = self.ch.integer(1, min(budget, 4))
                for _ in range(k):
                    path.append(self.slot(side, c))
                    self.maybe_duty_unit(path, side, c)
                    self.maybe_air_cooler(path, side, c, 0.1, anywhere=True)
                budget -= k
            elif kind == "split":
                use = self.ch.integer(1, min(budget, 6))
                budget -= use
                path, c = self.split(path, use, c, side, depth)
            else:
                use = self.ch.integer(1, min(budget, 4))
                budget -= use
                path, c = self.recycle(path, use, c, side, depth)
        return path, c

    def maybe_duty_unit(self, path, side, c):
        """In duty mode, now and then a fixed-duty heater (cold side) or cooler (hot side)."""
        kind, mode = ("heater", self.heater_mode) if side == "cold" else ("cooler", self.cooler_mode)
        if mode == "duty" and self.ch.chance(0.15):
            path.append(self.slot(kind, c))

    def maybe_air_cooler(self, path, side, c, probability, anywhere=False):
        """Now and then an air cooler on a hot path (when asked for): anywhere on a chain one with
        a fixed air flow, at the end of a chain one of the kinds asked for. No decision is drawn
        when none is asked for (the fixed-seed networks stay as they were)."""
        kinds = tuple(k for k in self.air_kinds if k == "fixed" or not anywhere)
        if side == "hot" and kinds and self.ch.chance(probability):
            s = Slot("air", c, fan=self.ch.choice(kinds) == "fan")
            self.slots["air"].append(s)
            path.append(s)

    def split(self, path, use, c, side, depth):
        splitter, mixer = self.name("split"), self.name("mix")
        n = self.ch.integer(2, 3)
        weights = [self.ch.real(0.1, 1.0) for _ in range(n)]
        total = sum(weights)
        fractions = [w / total for w in weights]
        budgets = [0] * n
        for _ in range(use):
            budgets[self.ch.integer(0, n - 1)] += 1
        path.append(splitter)
        branches = {}
        self.case["splitters"][splitter] = {"branches": branches}
        self.case["mixers"][mixer] = {}
        for i, (f, b) in enumerate(zip(fractions, budgets)):
            branch = {"fraction": f}
            branches[f"b{i + 1}"] = branch
            end, _ = self.chain(self.new_path(branch), b, c * f, side, depth + 1)
            end.append(mixer)
        return self.new_path(self.case["mixers"][mixer]), c

    def recycle(self, path, use, c, side, depth):
        mixer, splitter = self.name("loopmix"), self.name("loopsplit")
        back = self.ch.real(0.05, 0.6)
        c_loop = c / (1.0 - back)
        path.append(mixer)
        self.case["mixers"][mixer] = {}
        body_budget = use
        back_budget = 0
        if use >= 2 and self.ch.chance(0.3):
            body_budget, back_budget = use - 1, 1
        end, _ = self.chain(self.new_path(self.case["mixers"][mixer]), body_budget, c_loop, side, depth + 1)
        end.append(splitter)
        recycle_branch = {"fraction": back}
        onward_branch = {"fraction": 1.0 - back}
        self.case["splitters"][splitter] = {"branches": {"recycle": recycle_branch, "onward": onward_branch}}
        back_path = self.new_path(recycle_branch)
        for _ in range(back_budget):
            back_path.append(self.slot(side, c_loop * back))
        back_path.append(mixer)
        return self.new_path(onward_branch), c

    def end_units(self, path, kind, c, probability):
        """Optionally a heater/cooler at the end of a chain (target or duty, per the mode)."""
        if self.ch.chance(probability):
            path.append(self.slot(kind, c))

    def product(self, path):
        name = self.name("P")
        self.case["products"][name] = {}
        path.append(name)


def _split_budget(ch, total, parts, first_at_least_one=False):
    budgets = [0] * parts
    start = 0
    if first_at_least_one and total > 0:
        budgets[0], start = 1, 1
    for _ in range(start, total):
        budgets[ch.integer(0, parts - 1)] += 1
    return budgets


def generate_case(ch, *, max_exchangers=15, fixed_duty=True, title="generated network", arrangements=ARRANGEMENTS,
                  air_coolers=(), air_cooler_settings=AIR_COOLER_SETTINGS):
    """A valid case dict (keys as in a case file) built from the decisions of chooser ``ch``;
    exchangers take an arrangement of ``arrangements`` (beyond :data:`ARRANGEMENTS`, with the
    options of :func:`_extended_options`); air coolers of the kinds ``air_coolers`` (of
    :data:`AIR_COOLER_KINDS`; none by default) with bundles of ``air_cooler_settings``."""
    b = _Builder(ch, fixed_duty, air_kinds=tuple(air_coolers), air_settings=tuple(air_cooler_settings))
    b.arrangements = tuple(arrangements)
    b.case = {"title": title, "fluids": {}, "streams": {}, "exchangers": {}, "heaters": {}, "coolers": {},
              "air_coolers": {}, "mixers": {}, "splitters": {}, "products": {}}
    n_fluids = ch.integer(1, 3)
    cps = []
    for i in range(n_fluids):
        cps.append(ch.real(1.0, 4.5))
        b.case["fluids"][f"fluid{i + 1}"] = {"cp": cps[-1]}
    n_cold, n_hot = ch.integer(1, 3), ch.integer(1, 4)
    n_x = ch.integer(1, max_exchangers)
    if fixed_duty:
        b.heater_mode = ch.choice(["target", "duty"])
        b.cooler_mode = ch.choice(["target", "duty"])
    cold, hot = [], []
    for i in range(n_cold):
        fluid = ch.integer(0, n_fluids - 1)
        cold.append({"fluid": fluid, "flow": ch.real(5.0, 100.0), "t": ch.real(15.0, 120.0)})
    for i in range(n_hot):
        fluid = ch.integer(0, n_fluids - 1)
        hot.append({"fluid": fluid, "flow": ch.real(5.0, 100.0), "t": ch.real(130.0, 380.0)})
    supplies = [s["t"] for s in cold + hot]
    b.t_heat = max(supplies) + ch.real(10.0, 60.0)
    b.t_cool = min(supplies) - ch.real(3.0, 12.0)

    turnaround = ch.chance(0.35)
    join = n_cold >= 2 and ch.chance(0.3)
    cold_budget = n_x  # cold exchanger sides in all; as many hot sides
    turn_hot_budget = ch.integer(0, n_x) if turnaround else 0
    hot_budgets = _split_budget(ch, n_x - turn_hot_budget, n_hot)

    # cold streams (the first, or the joined first two, may turn around and run the hot side too)
    cold_budgets = _split_budget(ch, cold_budget, n_cold, first_at_least_one=True)
    heads = []  # (open path, C, budget) of each cold chain after the optional feed mixer
    for i, s in enumerate(cold):
        c = s["flow"] * cps[s["fluid"]]
        entry = {"fluid": f"fluid{s['fluid'] + 1}", "flow": s["flow"], "supply_temperature": s["t"]}
        b.case["streams"][f"cold{i + 1}"] = entry
        heads.append((b.new_path(entry), c, cold_budgets[i]))
    if join:
        # the first two cold streams each pass a short chain, then join in a feed mixer
        feed = b.name("feedmix")
        b.case["mixers"][feed] = {}
        remaining, c_total = 0, 0.0
        for path, c, budget in heads[:2]:
            pre = ch.integer(0, min(1, budget))
            end, _ = b.chain(path, pre, c, "cold")
            end.append(feed)
            remaining += budget - pre
            c_total += c
        heads[:2] = [(b.new_path(b.case["mixers"][feed]), c_total, remaining)]
    for i, (path, c, budget) in enumerate(heads):
        if i == 0 and turnaround:
            _turnaround(b, path, c, budget, turn_hot_budget)
            continue
        path, c = b.chain(path, budget, c, "cold")
        b.end_units(path, "heater", c, 0.6)
        b.product(path)

    for i, s in enumerate(hot):
        name = f"hot{i + 1}"
        c = s["flow"] * cps[s["fluid"]]
        entry = {"fluid": f"fluid{s['fluid'] + 1}", "flow": s["flow"], "supply_temperature": s["t"]}
        b.case["streams"][name] = entry
        path, c = b.chain(b.new_path(entry), hot_budgets[i], c, "hot")
        b.maybe_air_cooler(path, "hot", c, 0.5)
        b.end_units(path, "cooler", c, 0.6)
        b.product(path)

    _pair_exchangers(b)
    _fill_heaters(b)
    _fill_air_coolers(b)
    for owner, items in b.paths:
        owner["path"] = " -> ".join(item.label if isinstance(item, Slot) else item for item in items)
    for section in ("heaters", "coolers", "air_coolers", "mixers", "splitters"):
        if not b.case[section]:
            del b.case[section]
    return b.case


def _turnaround(b, path, c, cold_budget, hot_budget):
    """Feed-effluent loop: cold chain -> heater(s) -> hot chain [-> recycle to the start]."""
    ch = b.ch
    back = ch.real(0.05, 0.5) if ch.chance(0.5) else None
    if back is not None:
        mixer = b.name("feedloop")
        b.case["mixers"][mixer] = {}
        path.append(mixer)
        c = c / (1.0 - back)
        path = b.new_path(b.case["mixers"][mixer])
    path, c = b.chain(path, cold_budget, c, "cold")
    path.append(b.slot("heater", c))
    if b.heater_mode == "duty" and ch.chance(0.5):
        path.append(b.slot("heater", c))  # a reactor: heat of reaction as a fixed duty
    path, c = b.chain(path, hot_budget, c, "hot")
    if back is not None:
        splitter = b.name("feedsplit")
        path.append(splitter)
        recycle_branch, onward_branch = {"fraction": back}, {"fraction": 1.0 - back}
        b.case["splitters"][splitter] = {"branches": {"recycle": recycle_branch, "onward": onward_branch}}
        b.new_path(recycle_branch).append(mixer)
        path = b.new_path(onward_branch)
        c = c * (1.0 - back)
    b.maybe_air_cooler(path, "hot", c, 0.5)
    b.end_units(path, "cooler", c, 0.6)
    b.product(path)


def _pair_exchangers(b):
    ch = b.ch
    cold, hot = b.slots["cold"], b.slots["hot"]
    assert len(cold) == len(hot), (len(cold), len(hot))
    n = len(cold)
    mode = ch.choice(["reverse", "forward", "shuffle"])
    if mode == "reverse":
        order = list(range(n - 1, -1, -1))
    elif mode == "forward":
        order = list(range(n))
    else:
        order = ch.permutation(n)
    for i in range(n):
        tag = f"E-{101 + i}"
        cs, hs = cold[i], hot[order[i]]
        cs.label, hs.label = f"{tag}.cold", f"{tag}.hot"
        b.case["exchangers"][tag] = _exchanger_data(ch, min(cs.c, hs.c), b.arrangements)


def _exchanger_data(ch, c_min, arrangements=ARRANGEMENTS):
    arrangement = ch.choice(list(arrangements))
    shells = ch.integer(1, 4)
    ua = ch.real(0.1, 4.0) * c_min
    data = {"arrangement": arrangement, "shells": shells}
    if ch.chance(0.3):
        u = ch.real(100.0, 800.0)
        parallel = ch.integer(1, 3) if ch.chance(0.3) else 1
        data["u"] = u
        data["area_per_shell"] = ua * 1000.0 / (u * shells * parallel)
        if parallel > 1:
            data["shells_in_parallel"] = parallel
    else:
        data["ua"] = ua
    if arrangements != ARRANGEMENTS:
        data.update(_extended_options(ch, arrangement))
    elif arrangement == "tema_e":
        passes = ch.choice([2, 4, 6, 8])
        if passes != 2 or ch.chance(0.3):
            data["tube_passes"] = passes
            data["shell_side"] = ch.choice(["hot", "cold"])
    if arrangement == "crossflow" and "mixed_side" not in data:
        data["mixed_side"] = ch.choice(["none", "hot", "cold"])
    bypass = {}
    for side in ("hot", "cold"):
        if ch.chance(0.2):
            bypass[side] = round(ch.real(0.0, 0.5), 6)  # a case writes a fraction, not a denormal
    if bypass:
        data["bypass"] = bypass
    return data


PLATE_PAIRS = ((1, 1), (1, 2), (2, 1), (1, 3), (3, 1), (1, 4), (4, 1), (2, 2), (3, 3), (4, 4), (2, 3), (3, 2),
               (2, 4), (4, 2))


def _extended_options(ch, arrangement):
    """The keys of one arrangement of :data:`EVERY_ARRANGEMENT`, drawn over every option it takes
    (tube passes, the shell side, a J shell's inlets, an X shell's mixing, plate passes and flow
    directions, air-cooler rows) and, now and then, shells joined in parallel flow."""
    data = {"shell_side": ch.choice(["hot", "cold"])}
    if ch.chance(0.25):
        data["shells_flow"] = "parallel_flow"
    if arrangement == "tema_e":
        data["tube_passes"] = ch.choice([1, 2, 3, 4, 6, 8])
        if data["tube_passes"] == 1:
            data["tube_flow"] = ch.choice(["counterflow", "parallel_flow"])
    elif arrangement == "tema_f":
        data["tube_passes"] = ch.choice([2, 4, 8])
    elif arrangement in ("tema_g", "tema_h"):
        data["tube_passes"] = ch.choice([1, 2])
    elif arrangement == "tema_j":
        data["tube_passes"] = ch.choice([1, 2, 4])
        data["shell_inlets"] = ch.choice([1, 2])
    elif arrangement == "tema_x":
        data["shell_fluid_mixed"] = ch.chance(0.5)
    elif arrangement == "crossflow":
        data["mixed_side"] = ch.choice(["none", "hot", "cold", "both"])
    elif arrangement == "plate":
        hot, cold = ch.choice(list(PLATE_PAIRS))
        data["passes"] = {"hot": hot, "cold": cold}
        low, high = sorted((hot, cold))
        if low > 1 and (low == high or high in (3, 4)):
            data["overall_flow"] = ch.choice(["counterflow", "parallel_flow"])
        if low == high or (low, high) == (1, 3):
            data["channel_flow"] = ch.choice(["counterflow", "parallel_flow"])
    elif arrangement == "air_cooler":
        data["tube_rows"], data["tube_passes"] = ch.choice(list(AIR_COOLER_SETTINGS))
    return data


def _fill_heaters(b):
    ch = b.ch
    for kind, section, mode, target in (("heater", "heaters", b.heater_mode, b.t_heat),
                                        ("cooler", "coolers", b.cooler_mode, b.t_cool)):
        for i, s in enumerate(b.slots[kind]):
            tag = f"{'H' if kind == 'heater' else 'C'}-{201 + i}"
            s.label = tag
            if mode == "target":
                b.case[section][tag] = {"outlet_temperature": target}
            else:
                b.case[section][tag] = {"duty": ch.real(2.0, 40.0) * s.c}


def _fill_air_coolers(b):
    """Each air-cooler slot's entry: bundle, air (a fixed flow or fan control) and one way to U."""
    ch = b.ch
    for i, s in enumerate(b.slots["air"]):
        s.label = f"A-{301 + i}"
        rows, passes = ch.choice(list(b.air_settings))
        low = b.t_cool + 1.0 if b.cooler_mode == "target" else -10.0
        air = {"inlet_temperature": ch.real(low, low + 55.0)}
        cp = 1.006
        if ch.chance(0.2):
            air["cp"] = cp = ch.real(1.0, 1.03)
        c_air = ch.real(0.3, 5.0) * s.c
        flow = c_air / cp
        if s.fan:
            low = flow * ch.real(0.1, 1.0)
            air["fan_control"] = {"outlet_temperature": air["inlet_temperature"] + ch.real(2.0, 80.0),
                                  "minimum_flow": low, "maximum_flow": low * ch.real(1.5, 20.0)}
        else:
            air["flow"] = flow
        ua = ch.real(0.1, 4.0) * min(s.c, c_air)
        data = {"tube_rows": rows, "tube_passes": passes, "air": air}
        form = ch.choice(["ua", "u", "clean_u"])
        if form == "ua":
            data["ua"] = ua
        elif form == "u":
            data["u"] = ch.real(300.0, 800.0)  # on the bare-tube area (keeps the area plausible)
            data["area"] = ua * 1000.0 / data["u"]
        else:
            data["clean_u"], data["fouling"] = ch.real(400.0, 900.0), ch.real(0.0, 0.0005)
            data["area"] = ua * 1000.0 * (1.0 / data["clean_u"] + data["fouling"])
        b.case["air_coolers"][s.label] = data


def air_temperatures(case):
    """The air inlet temperatures of a case dict's air coolers (°C)."""
    return [d["air"]["inlet_temperature"] for d in case.get("air_coolers", {}).values()]


# ------------------------------------------------------------------------------------------
# Helpers for the tests
# ------------------------------------------------------------------------------------------
def shuffled(case, rng):
    """A deep copy of ``case`` with every section's entries, every splitter's branches and the
    top-level keys in another order (``rng``: a random.Random)."""
    case = copy.deepcopy(case)

    def reorder(mapping):
        keys = list(mapping)
        rng.shuffle(keys)
        return {k: mapping[k] for k in keys}

    for section in SECTIONS:
        if section in case:
            case[section] = reorder(case[section])
    for data in case.get("splitters", {}).values():
        data["branches"] = reorder(data["branches"])
    return reorder(case)


def unit_count(case):
    return sum(len(case.get(section, {})) for section in SECTIONS if section != "fluids")


def has_fixed_duty(case):
    return any("duty" in d for section in ("heaters", "coolers") for d in case.get(section, {}).values())


def _steps(path):
    return [item.strip() for item in path.split("->")]


def features(case):
    """Names of the features a generated case dict contains."""
    found = set()
    for data in case.get("splitters", {}).values():
        found.add("recycle" if "recycle" in data["branches"] else "split")
    exchangers = case.get("exchangers", {})
    for data in exchangers.values():
        found.add(data["arrangement"])
        if data.get("shells_flow") == "parallel_flow" and data.get("shells", 1) > 1:
            found.add("shells in parallel flow")
        if data.get("bypass"):
            found.add("bypass")
        if data.get("shells", 1) > 1:
            found.add("shells in series")
        if data.get("shells_in_parallel", 1) > 1:
            found.add("shells in parallel")
    for section in ("heaters", "coolers"):
        for data in case.get(section, {}).values():
            found.add(f"{section[:-1]} {'fixed duty' if 'duty' in data else 'target'}")
    for data in case.get("air_coolers", {}).values():
        found.add(f"air cooler {'fan control' if 'fan_control' in data['air'] else 'fixed air flow'}")
    paths = [d["path"] for section in ("streams", "mixers") for d in case.get(section, {}).values()]
    paths += [b["path"] for d in case.get("splitters", {}).values() for b in d["branches"].values()]
    order = {"hot": set(), "cold": set()}
    for path in paths:
        steps = _steps(path)
        sides = {s.rpartition(".")[2] for s in steps if "." in s}
        if {"hot", "cold"} <= sides:
            found.add("one path through hot and cold sides")
        for side in ("hot", "cold"):
            seq = [s.rpartition(".")[0] for s in steps if s.endswith("." + side)]
            order[side] |= {(a, b) for i, a in enumerate(seq) for b in seq[i + 1:]}
    if any((b, a) in order["cold"] for a, b in order["hot"]):
        found.add("countercurrent coupling")
    if len(case.get("streams", {})) > 1 and any(len(_steps(d["path"])) == 1 and _steps(d["path"])[0] in case.get("mixers", {})
                                                 for d in case["streams"].values()):
        found.add("supply into a mixer")
    return sorted(found)
