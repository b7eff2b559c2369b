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


def sum_last(x):
    """The sum over the last axis, a short one (a unit's inlets or outlets), added column by
    column: the numbers of ``x.sum(axis=-1)`` (numpy adds fewer than eight terms in order), but
    some 30 times faster on a C-ordered (20,000, 2) array, whose short inner axis numpy's
    reduction takes row by row.

    >>> sum_last(np.array([[1.0, 2.0, 3.0], [4.0, 5.0, 6.0]])).tolist()
    [6.0, 15.0]
    """
    return _fold_last(x, lambda column: column + 0.0, np.add)  # + 0.0: a new array, never a view of x


def mean_last(x):
    """The mean over the last axis, a short one (see :func:`sum_last`).

    >>> mean_last(np.array([[1.0, 2.0], [4.0, 8.0]])).tolist()
    [1.5, 6.0]
    """
    x = np.asarray(x, dtype=float)
    return sum_last(x) / x.shape[-1]


def abs_max_last(x):
    """The largest absolute value over the last axis, a short one (a block's tears), taken column
    by column as :func:`sum_last` adds (NaN where a row holds one, as ``np.max`` gives).

    >>> abs_max_last(np.array([[1.0, -3.0], [2.0, np.nan]])).tolist()
    [3.0, nan]
    """
    return _fold_last(x, np.abs, lambda largest, column: np.maximum(largest, np.abs(column)))


def _fold_last(x, first, combine):
    """``first`` of the last axis's first column, ``combine``d with each further column in turn
    (zeros where the axis is empty)."""
    x = np.asarray(x, dtype=float)
    if x.shape[-1] == 0:
        return np.zeros(x.shape[:-1])
    result = first(x[..., 0])
    for k in range(1, x.shape[-1]):
        result = combine(result, x[..., k])
    return result
