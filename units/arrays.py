"""One helper for every relation: inputs as float arrays broadcast to a common shape."""

from __future__ import annotations

import numpy as np


def as_arrays(*values):
    """Float64 arrays of one common shape (numpy broadcasting). Inputs that already are float
    arrays of one shape are returned as they are: the common case inside the solver's loops,
    where a general broadcast would cost more than the arithmetic."""
    arrays = [v if isinstance(v, np.ndarray) and v.dtype == np.float64 else np.asarray(v, dtype=float) for v in values]
    shape = arrays[0].shape
    if all(a.shape == shape for a in arrays):
        return arrays
    shape = np.broadcast_shapes(*(a.shape for a in arrays))
    # filling from a scalar is several times cheaper than a general broadcast view
    return [a if a.shape == shape else (np.full(shape, a.item()) if a.ndim == 0 else np.broadcast_to(a, shape))
            for a in arrays]


def as_floats(*values):
    """Float64 arrays of the values, each keeping its own shape: for pure arithmetic, where numpy
    broadcasts anyway and filling scalars out to the batch shape would only cost time."""
    return [np.asarray(v, dtype=float) for v in values]


def select(condition, x, y):
    """``np.where(condition, x, y)`` at the cost of a check where the condition is the same
    everywhere, the usual case of a guard over a batch (flow on both sides, temperatures
    apart): then ``x`` (or ``y``) itself as a float array of the result's shape, not a copy.
    Callers must not write into the result.

    >>> select(np.array([True, True]), np.array([1.0, 2.0]), 0.0).tolist(), select([True, False], 1.0, 2.0).tolist()
    ([1.0, 2.0], [1.0, 2.0])
    """
    condition = np.asarray(condition)
    true = np.count_nonzero(condition)  # one pass, and on a small batch several times cheaper than all() and any()
    if true == condition.size:
        chosen, other = x, y
    elif true == 0:
        chosen, other = y, x
    else:
        return np.where(condition, x, y)
    if (type(chosen) is np.ndarray and chosen.dtype == np.float64 and chosen.shape == condition.shape
            and (type(other) is float or np.shape(other) in ((), condition.shape))):
        return chosen  # the usual case, without the general broadcast's cost
    shape = np.broadcast_shapes(condition.shape, np.shape(x), np.shape(y))
    chosen = np.asarray(chosen, dtype=np.result_type(x, y))
    return chosen if chosen.shape == shape else np.broadcast_to(chosen, shape)
