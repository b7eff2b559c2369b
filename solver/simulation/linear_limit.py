"""The linear limit of a batch: a structured direct solve of a network that is affine in its
temperatures (constant cp, fixed UA), written apart from the engine as the benchmark's yardstick.

With constant cp and fixed UA every unit's outlets are affine in its inlet temperatures, so
once a feedback set is torn every segment temperature is an affine form of the torn ones:
``T = T0 + D (x - x0)``. One sweep in calculation order carries those forms: each unit is called
once, with its inlets' base values and one kelvin added to each inlet in turn stacked on the
batch axis, which gives its coefficients, and its outlets' forms are then combined from its
inlets' by plain arithmetic. The torn temperatures follow from one small dense solve per
scenario, ``(I - D_t)(x - x0) = T0_t - x0``, and every segment from its form: no iteration, no
tolerance, no second sweep. The units
are reached only through the unit protocol; the order and the torn segments are those of
:mod:`.sequencing` (what is independent here is the solution: no engine, no convergence).

Only the temperatures are produced (no reports, totals or checks): this is the least work a
batch can do, against which ``simulate_batch`` is timed (``hxtrain benchmark``). A unit that is
affine only piecewise (a heater idling past its target) is taken in the piece it is in at the
base point; the benchmark reports the largest difference from the engine's answer, which shows
if that was wrong.
"""

from __future__ import annotations

import numpy as np

from hxtrain.network import build_network
from hxtrain.units.protocol import Inlets

from hxtrain.solver.simulation.sequencing import plan_calculation


def feedback_order(net):
    """(units in calculation order, torn segments): the blocks of :mod:`.sequencing` one after
    the other, each block's tears torn (the fewest where the block is small enough: the least
    work for this solve too)."""
    plan = plan_calculation(net.graph)
    return [u for block in plan for u in block.units], sorted(s for block in plan for s in block.tears)


def direct_solve(case, values: dict | None = None, reference=None) -> np.ndarray:
    """Segment temperatures (batch, segments) of ``case`` (a checked Case) for the scenarios
    ``values``, by the structured direct solve above. ``reference`` (°C) is the base point of
    the torn temperatures (default: the mean supply temperature)."""
    net = build_network(case, values or {})
    order, torn = feedback_order(net)
    batch, n = net.batch, len(net.segments)
    if reference is None:
        nothing = Inlets(np.empty((batch, 0)), np.empty((batch, 0)), ())
        reference = np.mean([u.outlet_temperatures(nothing)[:, 0] for u in net.units.values() if not u.inlets], axis=0)
    x0 = np.broadcast_to(np.asarray(reference, float), (batch,))
    forms = np.zeros((n, batch, len(torn) + 1))  # T = forms[..., 0] + forms[..., 1:] @ (x - x0)
    forms[torn, :, 0] = x0
    forms[torn, :, 1 + np.arange(len(torn))] = 1.0
    computed = {}
    for name in order:
        outlets = net.outlets[name]
        if outlets:
            _carry(net, name, forms, computed, set(torn))
    produced = np.stack([computed[seg] for seg in torn]) if torn else np.zeros((0, batch, 1))
    slopes = np.moveaxis(produced[:, :, 1:], 0, 1)  # (batch, torn, torn): d(computed tear) / d(torn)
    shift = np.linalg.solve(np.eye(len(torn))[None] - slopes, (produced[:, :, 0].T - x0[:, None])[..., None])[..., 0]
    return (forms[..., 0] + np.einsum("sbj,bj->sb", forms[..., 1:], shift)).T


def _carry(net, name, forms, computed, torn):
    """The affine forms of a unit's outlets from those of its inlets: the unit is evaluated at
    its inlets' base values and at each inlet one kelvin above (k + 1 rows per scenario, whatever
    the number of torn segments), which gives its coefficients."""
    inlet = net.inlets[name]
    k, batch = len(inlet), forms.shape[1]
    base = forms[inlet, :, 0].T  # (batch, k)
    probes = np.concatenate([base] + [base + np.eye(k)[i] for i in range(k)]) if k else np.empty((batch, 0))
    flow = np.tile(np.broadcast_to(net.flow, (batch, forms.shape[0]))[:, inlet], (k + 1, 1))
    out = net.units[name].outlet_temperatures(Inlets(probes, flow, tuple(net.fluids[s] for s in inlet)))
    out = out.reshape(k + 1, batch, -1)
    slopes = out[1:] - out[:1]  # (k, batch, outlets)
    for j, seg in enumerate(net.outlets[name]):
        form = np.zeros(forms.shape[1:])
        form[:, 0] = out[0, :, j]
        for i, s in enumerate(inlet):
            varying = forms[s].copy()
            varying[:, 0] = 0.0  # the base value is in out[0]; the slopes carry the torn parts
            form += slopes[i, :, j, None] * varying
        if seg in torn:
            computed[seg] = form
        else:
            forms[seg] = form
