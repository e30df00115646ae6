"""End of the transient, and when enough has been sampled.

Steady-state test (used when ``[run] steady_state = "auto"``): the run is cut
into windows of ``W`` steps and the window means of the monitored quantities
(per-step wall momentum and energy transfer, wall hit rate, gas kinetic
energy) are kept.  After ``k >= 8`` windows the last half of the run is split
into two quarters, ``A = windows [k/2, 3k/4)`` and ``B = [3k/4, k)``.  The
transient is over when, for every monitored quantity,

    |mean_B - mean_A| <= max(z * sqrt(se_A^2 + se_B^2), rtol * |mean_B|)

with the standard errors from the window-to-window scatter inside each
quarter (z = 2, rtol = 0.5 %).  Comparing quarters of the *elapsed* run makes
the test scale-free: a relaxation with time constant t_r leaves a difference
of order exp(-k W / (4 t_r)) between the quarters, which must sink below the
noise, whose standard error shrinks only as (k W)^(-1/2).  The first half of
the run is always discarded.

Stop at target error (``[run] target_error > 0``): after each closed batch,
sampling stops once every target quantity has a batch-means relative
standard error at or below the target (and at least ``MIN_BATCHES`` batches
are closed), or when the ``sample_steps`` budget is spent.
"""

from __future__ import annotations

import numpy as np

MIN_WINDOWS = 8
MIN_BATCHES = 8
Z = 2.0
RTOL = 0.005


def steady(windows: np.ndarray, z: float = Z, rtol: float = RTOL) -> bool:
    """The quarter-comparison test on window means (windows x quantities)."""
    w = np.asarray(windows, dtype=float)
    k = w.shape[0]
    if k < MIN_WINDOWS:
        return False
    a = w[k // 2: (3 * k) // 4]
    b = w[(3 * k) // 4:]
    ma, mb = a.mean(axis=0), b.mean(axis=0)
    se = np.sqrt(a.var(axis=0, ddof=1) / len(a) + b.var(axis=0, ddof=1) / len(b))
    return bool(np.all(np.abs(mb - ma) <= np.maximum(z * se, rtol * np.abs(mb))))


def relative_errors(batch_values: np.ndarray) -> np.ndarray:
    """Batch-means relative standard error of each column (batches x quantities)."""
    v = np.asarray(batch_values, dtype=float)
    if v.shape[0] < 2:
        return np.full(v.shape[1:], np.inf)
    mean = v.mean(axis=0)
    se = v.std(axis=0, ddof=1) / np.sqrt(v.shape[0])
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(mean != 0, se / np.abs(mean), np.inf)


def target_reached(batch_values: np.ndarray, target: float) -> bool:
    v = np.asarray(batch_values)
    return v.shape[0] >= MIN_BATCHES and bool(np.all(relative_errors(v) <= target))
