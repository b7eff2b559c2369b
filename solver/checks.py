"""Checks shared by the one-case and the batch paths: the overall enthalpy balance and fluids
used outside their data range, both on arrays over the batch."""

from __future__ import annotations

import numpy as np


def enthalpy_balance(net, temperature, flow, heat_added):
    """Overall balance (reference 0 °C), each entry an array over the batch: enthalpy in with the
    supplies, heat added from outside (heaters + / coolers -), enthalpy out with the products,
    the imbalance and the imbalance relative to the sum of the magnitudes."""
    def enthalpy(seg):
        return flow[:, seg] * net.fluids[seg].enthalpy(temperature[:, seg])

    supplied = sum(enthalpy(net.outlets[n][0]) for n, u in net.units.items() if not u.inlets)
    delivered = sum(enthalpy(net.inlets[n][0]) for n, u in net.units.items() if not u.outlets)
    imbalance = supplied + heat_added - delivered
    scale = np.abs(supplied) + np.abs(heat_added) + np.abs(delivered)
    relative = np.abs(imbalance) / np.where(scale > 0, scale, 1.0)
    return {"enthalpy_in_supplies_kw": supplied, "heat_added_net_kw": heat_added + 0.0 * supplied,
            "enthalpy_out_products_kw": delivered, "imbalance_kw": imbalance, "relative_imbalance": relative}


def out_of_range(net, temperature, flow):
    """(segment, fluid, where) for every flowing segment whose temperature leaves the data range
    of one of its fluids; ``where`` is a boolean array over the batch."""
    for seg, fluid in zip(net.segments, net.fluids):
        for member in fluid.members():
            where = member.outside_range(temperature[:, seg.index]) & (flow[:, seg.index] > 0.0)
            if np.any(where):
                yield seg, member, where
