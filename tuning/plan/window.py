"""How far a candidate setting leaves the mixture from the proven one over a window of hours.

For a delivered area factor :math:`D` and the required factor :math:`f_h` of an hour, the
predicted mixture deviates from the reference by :math:`\\delta_h = f_h/D - 1` (positive =
lean). A candidate is *safe* when no hour is leaner than :data:`LEAN_GUARD`; among safe
candidates the cost is the lean-weighted root-mean-square deviation over the window
(:data:`LEAN_WEIGHT` for lean hours, :data:`RICH_WEIGHT` for rich ones: err rich).
"""

from __future__ import annotations

import numpy as np

__all__ = ["LEAN_GUARD", "GUARD_ROUND_OFF", "LEAN_WEIGHT", "RICH_WEIGHT", "WindowLoss", "lean_loss"]

#: The lean guard: no recommendation may leave any hour, opening or circuit leaner than the
#: proven mixture by more than this fraction (our choice, err rich: the lean edge of the target
#: band, about half a main-jet step). Where nothing at hand meets it, the plan says so (danger).
LEAN_GUARD = 0.02
#: Float round-off allowed when a candidate's leanest deviation is held against the lean guard
#: (a candidate exactly at the guard is safe) [1].
GUARD_ROUND_OFF = 1e-12
LEAN_WEIGHT = 4.0  #: weight of a lean deviation in the cost (our choice: err rich)
RICH_WEIGHT = 1.0  #: weight of a rich deviation


def lean_loss(required, delivered, valid, weights=1.0):
    """Sum over the last axis (hours) of the lean-weighted squared mixture deviation (direct),
    each sample times its ``weights`` [1]."""
    with np.errstate(invalid="ignore", divide="ignore"):
        deviation = required / delivered - 1.0
    weight = np.where(deviation > 0.0, LEAN_WEIGHT, RICH_WEIGHT) * weights
    return np.where(valid, weight * deviation * deviation, 0.0).sum(axis=-1)


class WindowLoss:
    r"""The window loss of many candidate delivered factors, by a sorted search.

    For each row the required factors :math:`f_h` of its valid hours are sorted once, with
    prefix sums of :math:`f` and :math:`f^2`. For a delivered factor :math:`D` the hours split
    into rich (:math:`f \le D`) and lean (:math:`f > D`) ones, and

    .. math::

        \sum_h (f_h/D - 1)^2 = S_2/D^2 - 2 S_1/D + n

    over each part, weighted :data:`RICH_WEIGHT` and :data:`LEAN_WEIGHT`. Identical to
    :func:`lean_loss` but costs O(log H) per candidate instead of O(H).

    With ``weights`` (a session ridden over several heights: each sample weighted by the share
    of its hour spent at its height) the sums are weighted and :math:`n` is the sum of the
    weights; the lean guard (:meth:`leanest`) still looks at every sample, whatever its weight,
    so the densest point reached governs.

    Parameters
    ----------
    required : numpy.ndarray, shape (R, H)
        Required area factors [1] (positive where valid).
    valid : numpy.ndarray of bool, shape (R, H)
    weights : numpy.ndarray, shape (R, H), optional
        Weight of each sample [1], >= 0; None: every sample counts 1.
    """

    _INVALID = 1.0e3  # stands in for padding hours; delivered factors must stay below it
    _ROW = 4.0e3  # row offset in the flattened search keys

    def __init__(self, required, valid, weights=None):
        required = np.asarray(required, float)
        valid = np.asarray(valid, bool)
        rows, hours = required.shape
        keyed = np.where(valid, required, self._INVALID)
        zero = np.zeros((rows, 1))
        if weights is None:
            f = np.sort(keyed, axis=1)
            self.count = valid.sum(axis=1)
            fz = np.where(f < self._INVALID, f, 0.0)
            wf, wff = fz, fz * fz
            self.weight = None
        else:
            order = np.argsort(keyed, axis=1, kind="stable")
            f = np.take_along_axis(keyed, order, axis=1)
            w = np.take_along_axis(np.where(valid, np.asarray(weights, float), 0.0), order, axis=1)
            fz = np.where(f < self._INVALID, f, 0.0)
            wf, wff = w * fz, w * fz * fz
            self.weight = np.concatenate([zero, np.cumsum(w, axis=1)], axis=1)
            self.count = self.weight[:, -1]
        self.sum1 = np.concatenate([zero, np.cumsum(wf, axis=1)], axis=1)
        self.sum2 = np.concatenate([zero, np.cumsum(wff, axis=1)], axis=1)
        self.n_valid = valid.sum(axis=1)
        self.offset = np.arange(rows) * self._ROW
        self.keys = (f + self.offset[:, None]).ravel()
        self.base = np.arange(rows) * hours
        self.rows = rows
        self.largest = np.where(valid, required, -np.inf).max(axis=1) if hours else np.zeros(rows)

    def __call__(self, delivered, rows=None):
        """Loss [1] for ``delivered`` of shape (R, ...) (or (len(rows), ...) for a subset)."""
        delivered = np.asarray(delivered, float)
        idx = np.arange(self.rows) if rows is None else np.asarray(rows)
        shape = delivered.shape
        d = delivered.reshape(len(idx), -1)
        if np.any(d >= self._INVALID) or np.any(d <= 0):
            raise ValueError("delivered area factors must lie in (0, 1000)")
        k = np.searchsorted(self.keys, d + self.offset[idx][:, None], side="right") - self.base[idx][:, None]
        n = self.n_valid[idx][:, None]
        k = np.minimum(k, n)
        r = idx[:, None]
        s1_lo, s2_lo = self.sum1[r, k], self.sum2[r, k]
        s1_hi, s2_hi = self.sum1[r, n] - s1_lo, self.sum2[r, n] - s2_lo
        inv = 1.0 / d
        if self.weight is None:
            w_lo, w_hi = k, n - k
        else:
            w_lo = self.weight[r, k]
            w_hi = self.weight[r, n] - w_lo
        rich = s2_lo * inv * inv - 2.0 * s1_lo * inv + w_lo
        lean = s2_hi * inv * inv - 2.0 * s1_hi * inv + w_hi
        return (RICH_WEIGHT * rich + LEAN_WEIGHT * lean).reshape(shape)

    def rms(self, delivered, rows=None):
        """Lean-weighted root-mean-square deviation [1] of ``delivered`` over each row's hours."""
        idx = np.arange(self.rows) if rows is None else np.asarray(rows)
        delivered = np.asarray(delivered, float)
        n = np.maximum(self.count[idx], 1).reshape((len(idx),) + (1,) * (delivered.ndim - 1))
        return np.sqrt(np.maximum(self(delivered, rows), 0.0) / n)

    def leanest(self, delivered, rows=None):
        """The largest lean deviation [1] of ``delivered`` over each row's hours (negative = rich)."""
        idx = np.arange(self.rows) if rows is None else np.asarray(rows)
        delivered = np.asarray(delivered, float)
        largest = self.largest[idx].reshape((len(idx),) + (1,) * (delivered.ndim - 1))
        return largest / delivered - 1.0
