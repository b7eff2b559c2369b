r"""Gross-error detection on reconciled data: the global test, the measurement test and serial
elimination, for many windows at once.

The default significance level is ``alpha = 0.05`` (a 5 % false-alarm rate per window for the
global test and, through Šidák's adjustment, for the measurement test as a whole): a common
choice (common practice); lower it where a false alarm costs more than a missed bias.

References
----------
.. [1] Narasimhan, S., and C. Jordache. Data Reconciliation and Gross Error Detection. Gulf,
       2000, chapter 7 (global, measurement tests; serial elimination) (from memory).
.. [2] Reilly, P. M., and R. E. Carpani. "Application of statistical theory of adjustment to
       material balances." 13th Canadian Chemical Engineering Conference, Montreal, 1963: the
       global test (from memory).
.. [3] Mah, R. S. H., and A. C. Tamhane. "Detection of gross errors in process data." AIChE J.
       28 (1982) 828-830: the measurement test with a level adjusted for multiple tests (from
       memory).
.. [4] Šidák, Z. "Rectangular confidence regions for the means of multivariate normal
       distributions." J. Am. Stat. Assoc. 62 (1967) 626-633 (from memory).
.. [5] Ripps, D. L. "Adjustment of experimental data." Chem. Eng. Prog. Symp. Ser. 61(55)
       (1965) 8-13: serial elimination (from memory); Serth, R. W., and W. A. Heenan. "Gross
       error detection and data reconciliation in steam-metering systems." AIChE J. 32 (1986)
       733-742 (from memory).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from scipy.stats import chi2, norm

__all__ = ["DEFAULT_ALPHA", "GlobalTest", "MeasurementTest", "Elimination", "SerialElimination",
           "global_test", "sidak_critical_value", "sidak_level", "measurement_test", "serial_elimination"]

DEFAULT_ALPHA = 0.05
_TIE = 1e-6


class GlobalTest(NamedTuple):
    statistic: np.ndarray
    degrees_of_freedom: np.ndarray
    critical_value: np.ndarray
    p_value: np.ndarray
    rejected: np.ndarray


class MeasurementTest(NamedTuple):
    standardized_adjustments: np.ndarray
    critical_value: np.ndarray
    flagged: np.ndarray


class Elimination(NamedTuple):
    """One measurement removed by serial elimination: its index, its standardized adjustment when
    it was chosen, and its bias estimated from the others: ``y_i - x_hat_i`` once it no longer
    counts (measured minus estimated true value), with that estimate's standard deviation
    ``sqrt(sigma_i^2 + var(x_hat_i))``. ``indistinguishable_from`` lists the measurements whose
    ``|z|`` tied with it (to 1e-6 relative): their columns of the projected constraints are
    parallel, so the data cannot tell which of them is at fault (an equivalent set [1]_)."""
    measurement: int
    statistic: float
    bias: float
    bias_std: float
    indistinguishable_from: tuple = ()


class SerialElimination(NamedTuple):
    result: object
    eliminated: list


def global_test(result, alpha=DEFAULT_ALPHA):
    r"""Global (chi-square) test of the adjustments as a whole, per window.

    .. math:: \gamma = r^T (P A V A^T P^T)^{+} r \sim \chi^2_\nu, \qquad \nu = \mathrm{rank}(P A)

    under the hypothesis of no gross error (normal, independent measurement errors; Reilly &
    Carpani [2]_, [1]_); rejected when :math:`\gamma > \chi^2_{\nu, 1-\alpha}`. A window without
    redundancy (:math:`\nu = 0`) cannot be tested: p-value 1, critical value NaN, not rejected.

    Parameters
    ----------
    result : ReconciliationResult (``statistic``, ``degrees_of_freedom`` per window).
    alpha : significance level (false-alarm probability), default 0.05.

    Returns
    -------
    GlobalTest(statistic, degrees_of_freedom, critical_value, p_value, rejected), each (W,).

    Examples
    --------
    >>> from hxtrain.solver.monitoring.reconciliation import reconcile_linear
    >>> test = global_test(reconcile_linear([103.0, 60.0, 40.0], 1.0, [[1.0, -1.0, -1.0]]))
    >>> round(float(test.critical_value[0]), 4), bool(test.rejected[0])   # chi2(1) at 95 %: 3.8415
    (3.8415, False)
    """
    statistic = np.asarray(result["statistic"], dtype=float)
    dof = np.asarray(result["degrees_of_freedom"])
    testable = dof > 0
    critical = np.where(testable, chi2.isf(alpha, np.where(testable, dof, 1)), np.nan)
    p_value = np.where(testable, chi2.sf(statistic, np.where(testable, dof, 1)), 1.0)
    return GlobalTest(statistic, dof, critical, p_value, testable & (statistic > critical))


def sidak_critical_value(alpha, tests):
    r"""Two-sided critical value of a standard normal statistic for ``tests`` simultaneous tests
    at overall level ``alpha`` (Šidák [4]_):

    .. math:: \beta = 1 - (1 - \alpha)^{1/N}, \qquad z_c = \Phi^{-1}(1 - \beta / 2)

    Exact for independent tests and conservative for correlated ones. Inverse: ``sidak_level``.
    NaN where ``tests`` is 0.

    >>> round(float(sidak_critical_value(0.05, 1)), 6)   # the familiar 1.959964
    1.959964
    >>> round(float(sidak_critical_value(0.05, 10)), 4)   # just below Bonferroni's 2.8070
    2.7996
    """
    alpha, tests = np.broadcast_arrays(np.asarray(alpha, dtype=float), np.asarray(tests, dtype=float))
    safe = np.where(tests > 0, tests, 1.0)
    beta = -np.expm1(np.log1p(-alpha) / safe)  # 1 - (1 - alpha)^(1/N) without cancellation
    return np.where(tests > 0, norm.isf(beta / 2.0), np.nan)


def sidak_level(critical_value, tests):
    r"""Overall level of ``tests`` simultaneous two-sided tests at the critical value ``z_c``:
    :math:`\alpha = 1 - (1 - 2\,\bar\Phi(z_c))^N`; the inverse of ``sidak_critical_value``.

    >>> round(float(sidak_level(sidak_critical_value(0.05, 7), 7)), 12)
    0.05
    """
    critical_value, tests = np.broadcast_arrays(np.asarray(critical_value, dtype=float),
                                                np.asarray(tests, dtype=float))
    return -np.expm1(tests * np.log1p(-2.0 * norm.sf(critical_value)))


def measurement_test(result, alpha=DEFAULT_ALPHA):
    r"""Measurement test on the standardized adjustments, per window.

    .. math:: z_i = \frac{a_i}{\sqrt{W_{ii}}}, \qquad W = \mathrm{cov}(a) = V G^T (G V G^T)^{-1} G V

    (``a = y - x_hat``; with independent errors this equals the maximum-power statistic
    :math:`(V^{-1}a)_i / \sqrt{(V^{-1} W V^{-1})_{ii}}`). Measurement i is flagged when
    :math:`|z_i|` exceeds Šidák's critical value for the window's number of redundant
    measurements at overall level ``alpha`` (Mah & Tamhane [3]_, [1]_). Non-redundant and
    missing measurements have no statistic (NaN).

    Returns
    -------
    MeasurementTest(standardized_adjustments (W, n), critical_value (W,), flagged (W, n)).

    Examples
    --------
    >>> from hxtrain.solver.monitoring.reconciliation import reconcile_linear
    >>> test = measurement_test(reconcile_linear([110.0, 60.0, 40.0], 1.0, [[1.0, -1.0, -1.0]]))
    >>> test.standardized_adjustments.round(6)   # one balance: every |z| = |r| / sqrt(3)
    array([[ 5.773503, -5.773503, -5.773503]])
    """
    adjustment_variance = np.diagonal(result["adjustment_covariance"], axis1=-2, axis2=-1)
    testable = np.asarray(result["redundant"]) & (adjustment_variance > 0.0)
    z = np.where(testable, result["adjustments"] / np.sqrt(np.where(testable, adjustment_variance, 1.0)), np.nan)
    critical = sidak_critical_value(alpha, testable.sum(axis=-1))
    return MeasurementTest(z, critical, testable & (np.abs(np.nan_to_num(z)) > critical[..., None]))


def first_of_largest(values):
    """(per row, the first column whose value is within :data:`_TIE` of the row's largest; the
    other columns so tied, as a mask). A balance of two measurements gives both the same |z|, so
    round-off alone would pick between them, and the results would change with the last digits
    of the start values: the first of the tied is taken instead, and the others are reported as
    indistinguishable from it."""
    values = np.atleast_2d(values)
    largest = values.max(axis=-1, keepdims=True)
    ties = values >= largest - _TIE * np.abs(largest)
    chosen = np.argmax(ties, axis=-1)
    ties[np.arange(chosen.size), chosen] = False
    return chosen, ties


def serial_elimination(reconcile, measured, alpha=DEFAULT_ALPHA, max_eliminations=None):
    """Serial elimination of gross errors, all windows together (Ripps; Serth & Heenan [5]_).

    While a window's global test rejects and it has a redundant measurement left, the measurement
    with the largest ``|z_i|`` is made unmeasured (set to NaN) and the window is reconciled again.
    Each eliminated measurement is reported with its ``z`` and its bias estimated from the others.

    Parameters
    ----------
    reconcile : callable ``(measured (k, n), rows (k,)) -> ReconciliationResult`` reconciling the
        windows ``rows`` (indices into the original windows, to pick their per-window settings)
        with the given measurements; NaN marks an unmeasured value.
    measured : array (W, n), the measurements.
    alpha : significance level of the global and measurement tests (default 0.05).
    max_eliminations : at most this many per window (default: as long as redundancy lasts).

    Returns
    -------
    SerialElimination(result, eliminated): the final ReconciliationResult of every window and,
    per window, the list of ``Elimination`` records in the order of removal.

    Examples
    --------
    >>> from hxtrain.solver.monitoring.reconciliation import reconcile_linear
    >>> a = [[1.0, -1.0, -1.0, 0.0], [0.0, 1.0, 0.0, -1.0]]   # F1 = F2 + F3, F2 = F4
    >>> y = [[100.0, 60.0, 40.0, 70.0]]                        # F4 reads 10 high
    >>> out = serial_elimination(lambda m, rows: reconcile_linear(m, 1.0, a), y)
    >>> [(e.measurement, round(e.bias, 9), e.indistinguishable_from) for e in out.eliminated[0]]
    [(3, 10.0, ())]
    """
    original = np.atleast_2d(np.asarray(measured, dtype=float))
    y = original.copy()
    windows = y.shape[0]
    result = reconcile(y.copy(), np.arange(windows))
    eliminated = [[] for _ in range(windows)]
    rows, current = np.arange(windows), result
    limit = np.inf if max_eliminations is None else max_eliminations
    while rows.size:
        z = measurement_test(current, alpha).standardized_adjustments
        testable = np.isfinite(z).any(axis=-1)
        counts = np.array([len(eliminated[r]) for r in rows])
        go = global_test(current, alpha).rejected & testable & (counts < limit)
        if not go.any():
            break
        first, ties = first_of_largest(np.where(np.isfinite(z[go]), np.abs(z[go]), -np.inf))
        rows, statistics = rows[go], z[go, first]
        chosen, current = _removed(reconcile, original, y, rows, first, ties)
        y[rows, chosen] = np.nan
        k = np.arange(rows.size)
        bias = original[rows, chosen] - current["x"][k, chosen]
        bias_std = np.sqrt(current["sigma"][k, chosen] ** 2 + current["x_covariance"][k, chosen, chosen])
        ties[k, first] = True
        ties[k, chosen] = False
        for i, row in enumerate(rows):
            eliminated[row].append(Elimination(int(chosen[i]), float(statistics[i]), float(bias[i]),
                                               float(bias_std[i]), tuple(int(j) for j in np.flatnonzero(ties[i]))))
        result.put(rows, current)
    return SerialElimination(result, eliminated)


def _removed(reconcile, original, y, rows, first, ties):
    """(the measurement removed from each of windows ``rows``, their reconciliation without it).
    ``first`` unless others tie with it (``ties``): the data cannot tell those apart, so the one
    whose removal leaves the window reconciled with the smallest bias in units of its own sigma
    is taken (the least gross error that explains the data; on equal terms the first)."""

    def attempt(picked, columns):
        trial = y[rows[picked]].copy()
        trial[np.arange(picked.size), columns] = np.nan
        found = reconcile(trial, rows[picked])
        k = np.arange(picked.size)
        bias = original[rows[picked], columns] - found["x"][k, columns]
        with np.errstate(divide="ignore", invalid="ignore"):
            score = np.abs(bias) / found["sigma"][k, columns]
        return found, np.where(np.asarray(found["success"], bool) & np.isfinite(score), score, np.inf)

    everyone = np.arange(rows.size)
    chosen = np.array(first)
    current, score = attempt(everyone, chosen)
    untried = ties.copy()
    while untried.any():
        picked = np.flatnonzero(untried.any(axis=1))
        columns = np.argmax(untried[picked], axis=1)
        untried[picked, columns] = False
        other, other_score = attempt(picked, columns)
        better = other_score < (1.0 - _TIE) * score[picked]  # clearly smaller: round-off does not decide
        if better.any():
            chosen[picked[better]] = columns[better]
            score[picked[better]] = other_score[better]
            current.put(picked[better], _taken(other, np.flatnonzero(better)))
    return chosen, current


def _taken(result, where):
    """The windows ``where`` of a reconciliation result, as a result of its own."""
    return type(result)({key: [value[i] for i in where] if isinstance(value, list) else value[where]
                         for key, value in result.items()})
