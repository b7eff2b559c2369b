"""Networks of any size in four shapes, for the size ladder of ``hxtrain benchmark --sizes``.

Each function returns a case as a mapping with the case-file keys (for ``case_from_mapping``)
of about ``units`` units in one shape that site-wide networks have:

* ``countercurrent``: one cold stream through every exchanger and one hot stream through the
  same exchangers in reverse order: a single strongly connected block as long as the network,
  every neighbouring pair of exchangers coupled both ways;
* ``side_by_side``: independent small trains, each two feeds of different fluids blended in a
  mixer, split over two parallel exchangers, re-mixed, a third exchanger and a furnace, heated
  by one hot stream that meets the crude countercurrently: many small blocks, many supplies,
  a blend on most segments;
* ``chained``: one cold stream through trains in series, each train heated countercurrently by
  its own hot stream, hotter train by train: a chain of blocks, each waiting for the last;
* ``interleaved``: one cold stream through every exchanger and several hot streams, each
  through every k-th exchanger in reverse order: one block whose cycles cross each other.

``properties="varying"`` gives each fluid a cp linear in temperature (every exchanger is then
iterated on its mean cp, as in service); ``"fixed"`` constant cp (the network is linear in
temperature). Every exchanger has a fixed UA. The numbers are invented but plausible for a
preheat train; they are not meant as a design, only as sizes and shapes to time.
"""

from __future__ import annotations

SHAPES = ("countercurrent", "side_by_side", "chained", "interleaved")
TRAIN_EXCHANGERS = 8
"""Exchangers per train of the chained shape."""
TOTAL_NTU = 3.0
"""Number of transfer units of a whole coupling (on the cold side): spread over its exchangers,
so that temperatures stay plausible at every size."""


def _fluids(properties):
    """Three fluids: the feed, a lighter feed blended into it, and the hot product."""
    cp = {"feed": (1.9, 0.0035), "light_feed": (2.1, 0.004), "product": (2.0, 0.003)}
    if properties == "fixed":
        return {name: {"cp": round(a + b * 180.0, 6)} for name, (a, b) in cp.items()}
    if properties != "varying":
        raise ValueError(f"properties must be 'varying' or 'fixed', not {properties!r}")
    return {name: {"cp": {"polynomial": [a, b]}} for name, (a, b) in cp.items()}


class _Builder:
    """Sections of a case filled in step by step."""

    def __init__(self, properties):
        self.case = {"title": "", "fluids": _fluids(properties), "streams": {}, "exchangers": {}, "heaters": {},
                     "coolers": {}, "mixers": {}, "splitters": {}, "products": {}}

    def supply(self, name, fluid, flow, temperature, path):
        self.case["streams"][name] = {"fluid": fluid, "flow": flow, "supply_temperature": temperature,
                                      "path": " -> ".join(path)}

    def exchanger(self, tag, ua):
        self.case["exchangers"][tag] = {"arrangement": "counterflow", "ua": round(ua, 9)}

    def product(self, name):
        self.case["products"][name] = {}
        return name

    def mapping(self, title):
        self.case["title"] = title
        return {k: v for k, v in self.case.items() if v != {}}


def _coupling(b: _Builder, prefix, cold_path, count, hot_passes, hot_temperature):
    """``count`` exchangers ``{prefix}{i}`` on the cold path; ``hot_passes`` lists each hot
    stream's exchanger numbers in the order that stream meets them."""
    ua = TOTAL_NTU * 100.0 * 2.3 / count
    tags = [f"{prefix}{i}" for i in range(count)]
    for tag in tags:
        b.exchanger(tag, ua)
        cold_path.append(f"{tag}.cold")
    for j, passes in enumerate(hot_passes):
        name = f"{prefix}hot{j}"
        b.supply(name, "product", round(80.0 / len(hot_passes), 6), hot_temperature,
                 [f"{tags[i]}.hot" for i in passes] + [b.product(f"{name}_out")])


def countercurrent(units, properties="varying"):
    """One long countercurrent coupling: ``units`` - 4 exchangers."""
    b = _Builder(properties)
    n = max(1, units - 4)
    cold = []
    _coupling(b, "E", cold, n, [list(reversed(range(n)))], 340.0)
    b.supply("crude", "feed", 100.0, 30.0, cold + [b.product("crude_out")])
    return b.mapping(f"one countercurrent coupling of {n} exchangers (size ladder)")


def interleaved(units, properties="varying"):
    """Interleaved couplings: hot stream j passes exchangers j, j + k, j + 2k, ... (k hot streams)
    in reverse order; k grows as the square root of the size."""
    b = _Builder(properties)
    k = max(2, int(round((units / 16.0) ** 0.5)))
    n = max(k, units - 2 - 2 * k)
    cold = []
    _coupling(b, "E", cold, n, [list(reversed(range(j, n, k))) for j in range(k)], 340.0)
    b.supply("crude", "feed", 100.0, 30.0, cold + [b.product("crude_out")])
    return b.mapping(f"{k} interleaved countercurrent couplings over {n} exchangers (size ladder)")


def chained(units, properties="varying"):
    """Trains of :data:`TRAIN_EXCHANGERS` exchangers in series on one cold stream, each heated
    by its own hot stream (supply and product: 2 units), hotter from train to train."""
    b = _Builder(properties)
    trains = max(1, (units - 3) // (TRAIN_EXCHANGERS + 2))
    cold = []
    for t in range(trains):
        reverse = list(reversed(range(TRAIN_EXCHANGERS)))
        _coupling(b, f"T{t}E", cold, TRAIN_EXCHANGERS, [reverse], round(150.0 + 200.0 * (t + 1) / trains, 6))
    b.case["heaters"]["furnace"] = {"outlet_temperature": 380.0}
    b.supply("crude", "feed", 100.0, 30.0, cold + ["furnace", b.product("crude_out")])
    return b.mapping(f"{trains} trains of {TRAIN_EXCHANGERS} exchangers chained on one cold stream (size ladder)")


def side_by_side(units, properties="varying"):
    """Independent trains of 14 units: two feeds blended, split over two parallel exchangers,
    re-mixed, a third exchanger, a furnace; one hot stream through the exchangers in reverse."""
    b = _Builder(properties)
    trains = max(1, units // 14)
    for t in range(trains):
        p = f"T{t}"
        for i in range(3):
            b.exchanger(f"{p}E{i}", 90.0)
        b.case["mixers"][f"{p}blend"] = {"path": f"{p}split"}
        b.case["splitters"][f"{p}split"] = {"branches": {
            "a": {"fraction": 0.6, "path": f"{p}E0.cold -> {p}join"},
            "b": {"fraction": 0.4, "path": f"{p}E1.cold -> {p}join"}}}
        b.case["mixers"][f"{p}join"] = {"path": f"{p}E2.cold -> {p}furnace -> {p}feed_out"}
        b.product(f"{p}feed_out")
        b.case["heaters"][f"{p}furnace"] = {"outlet_temperature": 360.0}
        b.supply(f"{p}heavy", "feed", 70.0, 30.0, [f"{p}blend"])
        b.supply(f"{p}light", "light_feed", 30.0, 45.0, [f"{p}blend"])
        b.case["coolers"][f"{p}trim"] = {"outlet_temperature": 90.0}
        b.supply(f"{p}hot", "product", 80.0, 330.0,
                 [f"{p}E2.hot", f"{p}E1.hot", f"{p}E0.hot", f"{p}trim", b.product(f"{p}hot_out")])
    return b.mapping(f"{trains} trains side by side (size ladder)")


BUILDERS = {"countercurrent": countercurrent, "side_by_side": side_by_side, "chained": chained,
            "interleaved": interleaved}


def ladder_case(shape, units, properties="varying"):
    """The case mapping of ``shape`` (one of :data:`SHAPES`) with about ``units`` units."""
    if shape not in BUILDERS:
        raise ValueError(f"unknown shape {shape!r}; choose from {', '.join(SHAPES)}")
    return BUILDERS[shape](int(units), properties)


def unit_count(mapping) -> int:
    """Units of a case mapping: supplies, exchangers, heaters, coolers, mixers, splitters, products."""
    return sum(len(mapping.get(s, {})) for s in ("streams", "exchangers", "heaters", "coolers", "mixers",
                                                  "splitters", "products"))


__all__ = ["SHAPES", "ladder_case", "unit_count", "countercurrent", "side_by_side", "chained", "interleaved"]
