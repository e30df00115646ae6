"""Normal-shock jump conditions and shock-structure measures.

Rankine-Hugoniot relations for a calorically perfect gas of heat-capacity
ratio ``gamma`` (Anderson, Modern Compressible Flow, 3rd ed., 2003,
ch. 3, normal-shock relations; Landau and Lifshitz, Fluid Mechanics,
sec. 89 -- section and chapter numbers from memory), with upstream Mach number ``M1 = u1 / a1``, ``a1 = sqrt(gamma k T1/m)``:

    rho2/rho1 = u1/u2 = (gamma + 1) M1^2 / ((gamma - 1) M1^2 + 2)
    p2/p1     = 1 + 2 gamma (M1^2 - 1) / (gamma + 1)
    T2/T1     = (p2/p1) / (rho2/rho1)
    M2^2      = (1 + (gamma - 1) M1^2 / 2) / (gamma M1^2 - (gamma - 1)/2)

They express conservation of the mass flux ``rho u``, the momentum flux
``p + rho u^2`` and the energy flux ``rho u (h + u^2/2)`` with
``h = gamma/(gamma - 1) p/rho`` across a steady plane shock; a monatomic gas
(translational energy only) has ``gamma = 5/3``.

Shock thickness (the maximum-slope thickness, e.g. Bird 1994 ch. 12,
Alsmeyer 1976 J. Fluid Mech. 74, 497):  ``delta = (n2 - n1) / max(dn/dx)``,
reported as the inverse density thickness ``lambda1 / delta``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from dsmc.gas.kinetic import K_B

GAMMA_MONATOMIC = 5.0 / 3.0


@dataclass(frozen=True)
class ShockStates:
    """Upstream (1) and downstream (2) states of a normal shock, shock frame, SI."""

    mach1: float
    n1: float
    T1: float
    u1: float
    n2: float
    T2: float
    u2: float
    mach2: float

    @property
    def p1(self) -> float:
        return self.n1 * K_B * self.T1

    @property
    def p2(self) -> float:
        return self.n2 * K_B * self.T2


def jump_ratios(mach1: float, gamma: float = GAMMA_MONATOMIC) -> dict[str, float]:
    """Density, pressure and temperature ratios and M2 (module docstring relations)."""
    M2 = mach1 * mach1
    rho = (gamma + 1.0) * M2 / ((gamma - 1.0) * M2 + 2.0)
    p = 1.0 + 2.0 * gamma * (M2 - 1.0) / (gamma + 1.0)
    mach2 = math.sqrt((1.0 + 0.5 * (gamma - 1.0) * M2) / (gamma * M2 - 0.5 * (gamma - 1.0)))
    return {"density": rho, "pressure": p, "temperature": p / rho, "mach2": mach2}


def shock_states(mach1: float, n1: float, T1: float, mass: float,
                 gamma: float = GAMMA_MONATOMIC) -> ShockStates:
    """Both states for upstream ``n1`` (1/m^3), ``T1`` (K) and molecular ``mass`` (kg)."""
    if not mach1 > 1.0:
        raise ValueError(f"a normal shock needs an upstream Mach number above 1, got {mach1}")
    r = jump_ratios(mach1, gamma)
    u1 = mach1 * math.sqrt(gamma * K_B * T1 / mass)
    return ShockStates(mach1, n1, T1, u1, n1 * r["density"], T1 * r["temperature"],
                       u1 / r["density"], r["mach2"])


def fluxes(n, T, u, mass) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Mass, x-momentum and energy fluxes ``rho u``, ``p + rho u^2``, ``rho u (5kT/(2m) + u^2/2)``
    of a Maxwellian monatomic gas drifting at ``u`` along x (Euler fluxes, heat flux and
    viscous stress zero)."""
    n, T, u = (np.asarray(a, dtype=float) for a in (n, T, u))
    rho = n * mass
    p = n * K_B * T
    return rho * u, p + rho * u * u, rho * u * (2.5 * K_B * T / mass + 0.5 * u * u)


def slope_filter(half_width: int) -> np.ndarray:
    """Savitzky-Golay weights (Savitzky and Golay 1964, Anal. Chem. 36, 1627): the derivative at
    the centre of the least-squares cubic through ``2 half_width + 1`` equally spaced points, per
    unit spacing.  Exact for cubics, so a smooth profile is not flattened the way a noisy
    two-point difference is sharpened by its noise."""
    k = np.arange(-half_width, half_width + 1, dtype=float)
    vander = np.vander(k, 4, increasing=True)  # 1, k, k^2, k^3
    return np.linalg.pinv(vander)[1]


def max_slope_thickness(x: np.ndarray, n: np.ndarray, n1: float, n2: float,
                        half_width: int = 3) -> tuple[float, float]:
    """``(delta, x_max)``: ``(n2 - n1) / max dn/dx`` from a cell profile, and where the slope peaks.

    The slope at each cell is the derivative of the least-squares cubic through
    the ``2 half_width + 1`` cells around it (:func:`slope_filter`); the peak
    position is refined by a parabola through the largest slope and its
    neighbours.  Cells must be equally spaced.
    """
    x = np.asarray(x, dtype=float)
    n = np.asarray(n, dtype=float)
    k = int(half_width)
    dx = x[1] - x[0]
    w = slope_filter(k)
    slope = np.array([w @ n[i - k:i + k + 1] for i in range(k, n.size - k)]) / dx
    xs = x[k:n.size - k]
    i = int(np.nanargmax(slope))
    x_peak = xs[i]
    if 0 < i < slope.size - 1:
        a, b, c = slope[i - 1], slope[i], slope[i + 1]
        den = a - 2.0 * b + c
        if den < 0:
            x_peak = xs[i] + 0.5 * (a - c) / den * dx
    return float((n2 - n1) / slope[i]), float(x_peak)


def thickness_with_error(x, n_batches, samples, n1, n2, half_width: int = 3):
    """Max-slope thickness of the sample-weighted mean profile and its jackknife standard error.

    ``n_batches`` (B, N) are the batch density profiles, ``samples`` (B,) their
    sample counts.  Leave-one-batch-out profiles give ``delta_(b)``; the
    jackknife error is ``sqrt((B - 1)/B sum_b (delta_(b) - mean)^2)``
    (Efron and Tibshirani 1993, An Introduction to the Bootstrap, ch. 11).
    Returns ``(delta, delta_stderr, x_peak)``.
    """
    nb = np.asarray(n_batches, dtype=float)
    w = np.asarray(samples, dtype=float)
    total = (nb * w[:, None]).sum(0)
    mean = total / w.sum()
    delta, x_peak = max_slope_thickness(x, mean, n1, n2, half_width)
    b = nb.shape[0]
    loo = np.array([max_slope_thickness(x, (total - nb[i] * w[i]) / (w.sum() - w[i]), n1, n2,
                                        half_width)[0] for i in range(b)])
    err = math.sqrt((b - 1) / b * np.sum((loo - loo.mean()) ** 2)) if b > 1 else math.nan
    return delta, err, x_peak


def upstream_mean_free_path(mu1: float, n1: float, T1: float, mass: float) -> float:
    """``lambda1 = (16/5) mu1 / (rho1 sqrt(2 pi k T1 / m))``: the hard-sphere mean free path
    written with the viscosity, the convention of the argon shock-thickness data (Alsmeyer 1976;
    Bird 1994 ch. 12 -- from memory).  For a VHS gas it differs from the model's own
    equilibrium mean free path (Bird 1994 eq. 4.65)."""
    return 16.0 / 5.0 * mu1 / (n1 * mass * math.sqrt(2.0 * math.pi * K_B * T1 / mass))
