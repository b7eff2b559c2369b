"""Structure of linear (or linearized) balance constraints ``A x + B u = c``: the projection that
removes the unmeasured variables ``u``, which measurements of ``x`` are redundant and which
unmeasured variables are observable.

Every matrix is a stack: a leading axis of K constraint systems of one shape (K time windows,
or K patterns of missing measurements), factorized together with numpy's stacked SVD.

Rank decisions are made on the equilibrated matrix ``[A_s, B_s] = D_r [A, B] D_c`` (row and
column scale factors that are powers of two, so the scaling itself is exact; Curtis & Reid
[4]_, Ruiz [3]_), so that balances in kg/s, W and K, and variables of any unit, are judged
alike. A singular value counts
as zero when it is at most ``rank_tolerance`` (default ``1e-10``) times the Frobenius norm of the
equilibrated ``[A_s, B_s]``. The same bound decides a zero column of the projected ``A`` (a
non-redundant measurement); an unmeasured variable is observable when the squared length of
its unit vector's share in the null space of ``B_s`` is at most ``rank_tolerance``.

The projection ``P`` (``P B = 0``) is taken from the SVD of ``B_s`` (the left singular vectors
beyond its rank) rather than from a pivoted QR: numpy factorizes stacks of matrices by SVD but
has no stacked pivoted QR, and the SVD's rank decision is the more reliable of the two.

References
----------
.. [1] Crowe, C. M., Y. A. Garcia Campos and A. Hrymak. "Reconciliation of process flow rates by
       matrix projection. Part I: linear case." AIChE J. 29 (1983) 881-888 (page numbers from
       memory).
.. [2] Narasimhan, S., and C. Jordache. Data Reconciliation and Gross Error Detection. Gulf,
       2000, chapter 3 (observability and redundancy; from memory).
.. [3] Ruiz, D. "A scaling algorithm to equilibrate both rows and columns norms in matrices."
       Rutherford Appleton Laboratory report RAL-TR-2001-034 (2001) (from memory).
.. [4] Curtis, A. R., and J. K. Reid. "On the automatic scaling of matrices for Gaussian
       elimination." J. Inst. Maths Applics 10 (1972) 118-124 (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["DEFAULT_RANK_TOLERANCE", "ConstraintStructure", "classify_variables"]

DEFAULT_RANK_TOLERANCE = 1e-10
_EQUILIBRATION_SWEEPS = 4
_LOG_SWEEPS = 30


def _swap(m):
    return np.swapaxes(m, -1, -2)


def _equilibration(matrix):
    """Row and column scale factors (powers of two) for every matrix in the stack: first the
    logarithmic least-squares scaling (Curtis & Reid [4]_, by alternating row and column means
    of the logarithms of the nonzero entries), which makes every nonzero entry 1 when units alone
    spread them; then Ruiz's sweeps [3]_, which bring each row's and column's largest entry to 1.

    A stack of many matrices (windows of one network) shares one scaling, found on the largest
    magnitude of each entry over the stack: the scaling only conditions the rank decisions and
    the solves (any powers of two give the same answer), and finding one per matrix would cost
    more than the factorization itself."""
    if matrix.ndim > 2 and matrix.shape[0] > 1:
        typical = np.abs(matrix).reshape((-1,) + matrix.shape[-2:]).max(axis=0)
        rows, cols = _equilibration(typical)
        return (np.broadcast_to(rows, matrix.shape[:-1]).copy(),
                np.broadcast_to(cols, matrix.shape[:-2] + matrix.shape[-1:]).copy())
    nonzero = matrix != 0.0
    logs = np.where(nonzero, np.log2(np.where(nonzero, np.abs(matrix), 1.0)), 0.0)
    row_count = np.maximum(nonzero.sum(axis=-1), 1)
    col_count = np.maximum(nonzero.sum(axis=-2), 1)
    rows = np.zeros(matrix.shape[:-1])
    cols = np.zeros(matrix.shape[:-2] + matrix.shape[-1:])
    for _ in range(_LOG_SWEEPS):
        rows = -(np.where(nonzero, logs + cols[..., None, :], 0.0)).sum(axis=-1) / row_count
        cols = -(np.where(nonzero, logs + rows[..., :, None], 0.0)).sum(axis=-2) / col_count
    rows, cols = np.exp2(rows), np.exp2(cols)
    magnitude = np.abs(matrix)
    for _ in range(_EQUILIBRATION_SWEEPS):
        row_max = (magnitude * rows[..., :, None] * cols[..., None, :]).max(axis=-1)
        rows /= np.sqrt(np.where(row_max > 0.0, row_max, 1.0))
        col_max = (magnitude * rows[..., :, None] * cols[..., None, :]).max(axis=-2)
        cols /= np.sqrt(np.where(col_max > 0.0, col_max, 1.0))
    # powers of two: multiplying by them loses no digit, so the scaling cannot blur a zero
    return np.exp2(np.round(np.log2(rows))), np.exp2(np.round(np.log2(cols)))


@dataclass
class ConstraintStructure:
    r"""Factorization of a stack of linear constraints ``A x + B u = c``.

    With :math:`\Pi = I - U_r U_r^T` the projector onto the left null space of ``B`` (``U_r``:
    left singular vectors of its range), :math:`\Pi B = 0` and the measured variables obey the
    reduced constraints :math:`\Pi A x = \Pi c` (Crowe et al. [1]_). Of these, only the rows of
    ``reduced`` are independent: ``reduced = T A`` and the constants are ``T c``, where
    ``row_map`` is ``T`` (rows not kept are zero, so that stacks of different rank share one
    shape).

    Attributes (K systems, m constraints, n measured, q unmeasured variables)
    ----------
    a, b : (K, m, n), (K, m, q) the constraint matrices as given.
    row_map : (K, k, m) ``T``, with k = min(m, n); a zero row is a dependent reduced constraint.
    reduced : (K, k, n) ``T A``: the independent reduced constraints on ``x``.
    kept : (K, k) bool, the rows of ``reduced`` that are constraints.
    degrees_of_freedom : (K,) int, the rank of ``Pi A``: the redundancy, the global test's dof.
    redundant : (K, n) bool, measured variables whose column of ``Pi A`` is not zero.
    observable : (K, q) bool, unmeasured variables determined by ``x`` through ``B u = c - A x``.
    unmeasured_map : (K, q, m) the minimum-norm solution operator: ``du = unmeasured_map @ r``
        solves ``B du = r`` in the least-squares sense (correct in the observable entries).

    Built by ``ConstraintStructure.factor(a, b, rank_tolerance)``.
    """

    a: np.ndarray
    b: np.ndarray
    row_map: np.ndarray
    reduced: np.ndarray
    kept: np.ndarray
    degrees_of_freedom: np.ndarray
    redundant: np.ndarray
    observable: np.ndarray
    unmeasured_map: np.ndarray

    @classmethod
    def factor(cls, a, b, rank_tolerance=DEFAULT_RANK_TOLERANCE):
        """Factorize stacks ``a`` (K, m, n) and ``b`` (K, m, q): two stacked SVDs, of the scaled
        ``B`` (its range and null space) and of the projected scaled ``A`` (its rank)."""
        a = np.asarray(a, dtype=float)
        b = np.asarray(b, dtype=float)
        n = a.shape[-1]
        rows, cols = _equilibration(np.concatenate([a, b], axis=-1))
        x_scale, u_scale = cols[..., :n], cols[..., n:]
        a_s = a * rows[..., :, None] * x_scale[..., None, :]
        b_s = b * rows[..., :, None] * u_scale[..., None, :]
        tolerance = rank_tolerance * np.sqrt((a_s**2).sum(axis=(-2, -1)) + (b_s**2).sum(axis=(-2, -1)))
        zero = tolerance[..., None]

        u_b, s_b, vh_b = np.linalg.svd(b_s, full_matrices=False)
        in_range = s_b > zero
        range_basis = u_b * in_range[..., None, :]
        projector = np.eye(a.shape[-2]) - range_basis @ _swap(range_basis)
        # squared length of variable j's unit vector inside the null space of B_s: zero (to round-off)
        # exactly when no combination of the other columns can stand in for column j
        null_share = 1.0 - ((vh_b * in_range[..., :, None]) ** 2).sum(axis=-2)
        observable = null_share <= rank_tolerance
        inverse_s = np.where(in_range, 1.0 / np.where(in_range, s_b, 1.0), 0.0)
        b_s_pinv = (_swap(vh_b) * inverse_s[..., None, :]) @ _swap(u_b)
        unmeasured_map = u_scale[..., :, None] * b_s_pinv * rows[..., None, :]

        projected = projector @ a_s
        redundant = np.sqrt((projected**2).sum(axis=-2)) > zero
        u_g, s_g, vh_g = np.linalg.svd(projected, full_matrices=False)
        kept = s_g > zero
        row_map = _swap(u_g * kept[..., None, :]) @ projector * rows[..., None, :]
        # T A = U_k' (Pi A_s) D_x^-1 = S_k Vh_k D_x^-1: formed from the SVD, not by a product
        reduced = (np.where(kept, s_g, 0.0)[..., :, None] * vh_g) / x_scale[..., None, :]
        return cls(a=a, b=b, row_map=row_map, reduced=reduced, kept=kept,
                   degrees_of_freedom=kept.sum(axis=-1), redundant=redundant, observable=observable,
                   unmeasured_map=unmeasured_map)


def classify_variables(a, b=None, rank_tolerance=DEFAULT_RANK_TOLERANCE):
    r"""Classify the variables of linear constraints ``A x + B u = c`` (measured ``x``, unmeasured
    ``u``): redundant measurements, observable unmeasured variables and the degree of redundancy.

    A measurement ``x_i`` is redundant when column i of ``P A`` is not zero (``P B = 0``,
    Crowe et al. [1]_): it could still be estimated from the other measurements were its
    instrument lost. A non-redundant measurement gets zero adjustment from reconciliation (with
    independent measurement errors). An unmeasured ``u_j`` is observable when every ``u`` that
    solves ``B u = c - A x`` has the same ``u_j``, i.e. the unit vector ``e_j`` is orthogonal to
    the null space of ``B`` [2]_. The degree of redundancy is ``rank(P A)``.

    Parameters
    ----------
    a : array (m, n) or (K, m, n), coefficients of the measured variables.
    b : array (m, p) or (K, m, p), coefficients of the unmeasured variables; None for none.
    rank_tolerance : float, relative bound for a zero singular value (module docstring).

    Returns
    -------
    redundant : bool array (n,) or (K, n)
    observable : bool array (p,) or (K, p)
    degrees_of_freedom : int or int array (K,)

    Examples
    --------
    A splitter ``F1 = F2 + F3`` with F3 unmeasured, then ``F3 = F4 + F5`` with F4, F5 unmeasured:
    nothing is redundant, F3 is observable, F4 and F5 are not.

    >>> a = [[1.0, -1.0], [0.0, 0.0]]
    >>> b = [[-1.0, 0.0, 0.0], [1.0, -1.0, -1.0]]
    >>> classify_variables(a, b)
    (array([False, False]), array([ True, False, False]), 0)
    """
    a = np.asarray(a, dtype=float)
    single = a.ndim == 2
    b = np.zeros(a.shape[:-1] + (0,)) if b is None else np.asarray(b, dtype=float)
    structure = ConstraintStructure.factor(a[None] if single else a, b[None] if single else b,
                                           rank_tolerance)
    if single:
        return structure.redundant[0], structure.observable[0], int(structure.degrees_of_freedom[0])
    return structure.redundant, structure.observable, structure.degrees_of_freedom
