"""Binary collisions in cells: no-time-counter (NTC) selection, VHS/VSS dynamics.

NTC (Bird 1994, sec. 11.1): in a cell of volume ``V`` holding ``N`` simulated
particles of weight ``F_N``, the number of candidate pairs in a step ``dt`` is

    N_sel = N (N - 1) F_N (sigma_T g)_max dt / (2 V)

with the fractional part carried to the next step, and a candidate pair
collides with probability ``sigma_T g / (sigma_T g)_max``.  ``(sigma_T g)_max``
is kept per cell as a running maximum.

Cross-sections: for the variable-hard-sphere (VHS) and variable-soft-sphere
(VSS) models the total cross-section falls as ``g^(1 - 2 omega)``, so
``sigma_T g = C g^(2 - 2 omega) = C (g^2)^(1 - omega)`` with the pair constant
``C`` from :func:`dsmc.gas.kinetic.pair_constants` (Bird 1994, eqs. 4.63 and
4.73-4.74); hard spheres are ``omega = 1/2``.

Scattering: VHS and HS scatter isotropically in the centre-of-mass frame; VSS
has ``chi = 2 arccos(b/d)``, sampled as ``cos chi = 2 U^(1/alpha) - 1``
(Koura and Matsumoto 1991; Bird 1994 eq. 2.22 for the post-collision relative
velocity).  Momentum is conserved to round-off through the centre-of-mass
velocity and energy through ``|g'| = |g|``.

Partners: the partner is any other particle of the cell, uniformly.  The
cell-size error of this choice is second order, a relative excess of about
``0.1 (dx/lambda)^2`` in viscosity and conductivity (Alexander, Garcia and
Alder 1998, Phys. Fluids 10, 1540, from memory), so cells of lambda/3 cost
about 1 %; :mod:`dsmc.simulation` warns when cells are coarser.

Tried and dropped (measured on argon Couette and Fourier gaps): partners
from small subcells or the neighbour in sorted order.  Particles that stay
together in a subcell for several steps collide with each other again and
again; those repeats carry nothing between layers.  Even with the last
partner excluded, 8-particle subcells gave a conductivity 2.5 % low at
dt = 0.14 tau_c and 4.3 % low at dt = 0.07 tau_c (the error grows as the step
shrinks), and nearest neighbours in sorted order gave a viscosity 8 % high.
"""

from __future__ import annotations

import math

import numba as nb
import numpy as np

from dsmc.kernels.rng import uniform

N_COLL_STATS = 2  # accepted collisions, summed |x_i - x_j|
# bound on the relative error of (g^2)^e evaluated in single precision for
# 1e-30 <= g^2 <= 1e38 and 0 <= e <= 1: rounding g^2 (2^-24 e), rounding e (2^-24 e |ln g^2|,
# at most 5.3e-6) and the float pow (about 1 ulp, 2^-23); with a factor 10 to spare.
# tests/test_collisions.py checks the bound on random g^2 and e.
SG_FLOAT_MARGIN = 1e-4
SG_FLOAT_MIN = 1e-30  # below this g^2 (float denormals) the double formula is used


@nb.njit(inline="always")
def _scatter(gx, gy, gz, g, alpha, state, s):
    """Post-collision relative velocity of magnitude ``g``."""
    if alpha == 1.0:
        cos_chi = 2.0 * uniform(state, s) - 1.0
    else:
        cos_chi = 2.0 * uniform(state, s) ** (1.0 / alpha) - 1.0
    sin_chi = math.sqrt(max(0.0, 1.0 - cos_chi * cos_chi))
    # azimuth without trigonometry: the direction of a uniform point of the unit disc
    # (von Neumann 1951); it saved 3 of the 17 ns per particle of the collide phase
    while True:
        x1 = 2.0 * uniform(state, s) - 1.0
        x2 = 2.0 * uniform(state, s) - 1.0
        q = x1 * x1 + x2 * x2
        if 0.0 < q < 1.0:
            break
    r = 1.0 / math.sqrt(q)
    ce = x1 * r
    se = x2 * r
    if alpha == 1.0:
        # isotropic: the new direction does not depend on the old one
        return g * cos_chi, g * sin_chi * ce, g * sin_chi * se
    d = math.sqrt(gy * gy + gz * gz)
    if d < 1e-12 * g:
        return cos_chi * gx, g * sin_chi * ce, g * sin_chi * se
    ox = cos_chi * gx + sin_chi * se * d
    oy = cos_chi * gy + sin_chi * (g * gz * ce - gx * gy * se) / d
    oz = cos_chi * gz - sin_chi * (g * gy * ce + gx * gz * se) / d
    return ox, oy, oz


@nb.njit(inline="always")
def _other(lo, m, i, state, s):
    """A uniformly chosen position of ``lo .. lo+m-1`` other than ``i`` (m >= 2)."""
    j = lo + min(int(uniform(state, s) * (m - 1)), m - 2)
    return j + 1 if j >= i else j


@nb.njit(parallel=True, cache=True)
def collide_ntc(pos, v, sp, cell_start, volume, weight, dt, sgmax, remainder,
                pair_c, pair_exp, pair_alpha, mass, state, stream0, stats):
    """Collide the particles of every cell for one step.

    ``pos`` (n, d) positions (only used for the collision-separation
    statistic), ``v`` (n, 3) velocities, ``sp`` species indices,
    ``cell_start`` (n_cells + 1) sorted cell ranges, ``volume`` cell volumes,
    ``weight`` real molecules per particle, ``sgmax`` / ``remainder`` per-cell
    NTC state (updated), ``pair_c[a, b]``, ``pair_exp[a, b] = 1 - omega_ab``,
    ``pair_alpha[a, b]`` pair tables, ``mass[a]`` masses.  ``stats[c]`` gains
    the accepted collisions and the summed pair separations.
    """
    n_cells = cell_start.size - 1
    dim = pos.shape[1]
    for c in nb.prange(n_cells):
        s0 = cell_start[c]
        nc = cell_start[c + 1] - s0
        if nc < 2 or volume[c] <= 0.0:
            continue
        st = stream0 + c
        sgm = sgmax[c]
        expected = 0.5 * nc * (nc - 1) * weight * sgm * dt / volume[c] + remainder[c]
        n_sel = int(expected)
        remainder[c] = expected - n_sel
        n_col = 0
        sep = 0.0
        for _ in range(n_sel):
            i = s0 + min(int(uniform(state, st) * nc), nc - 1)
            j = _other(s0, nc, i, state, st)
            a = sp[i]
            b = sp[j]
            gx = v[i, 0] - v[j, 0]
            gy = v[i, 1] - v[j, 1]
            gz = v[i, 2] - v[j, 2]
            g2 = gx * gx + gy * gy + gz * gz
            # sigma g = C (g^2)^e, first in single precision (a double pow cost 5.8 of
            # the 17 ns per particle of this kernel, a float one 4); the double value is
            # computed where the float could decide differently, so the accept/reject
            # decisions and (sigma g)_max are those of the double-precision formula
            ca = pair_c[a, b]
            ea = pair_exp[a, b]
            sg = ca * float(np.float32(g2) ** np.float32(ea))
            if sg > sgm * (1.0 - SG_FLOAT_MARGIN) or g2 < SG_FLOAT_MIN:
                sg = ca * g2 ** ea
                if sg > sgm:
                    sgm = sg
            u = uniform(state, st) * sgm
            if abs(u - sg) <= SG_FLOAT_MARGIN * sg:
                sg = ca * g2 ** ea
            if u >= sg:
                continue
            mi = mass[a]
            mj = mass[b]
            fi = mi / (mi + mj)
            fj = mj / (mi + mj)
            cx = fi * v[i, 0] + fj * v[j, 0]
            cy = fi * v[i, 1] + fj * v[j, 1]
            cz = fi * v[i, 2] + fj * v[j, 2]
            g = math.sqrt(g2)
            ox, oy, oz = _scatter(gx, gy, gz, g, pair_alpha[a, b], state, st)
            v[i, 0] = cx + fj * ox
            v[i, 1] = cy + fj * oy
            v[i, 2] = cz + fj * oz
            v[j, 0] = cx - fi * ox
            v[j, 1] = cy - fi * oy
            v[j, 2] = cz - fi * oz
            n_col += 1
            d2 = 0.0
            for k in range(dim):
                d = pos[i, k] - pos[j, k]
                d2 += d * d
            sep += math.sqrt(d2)
        sgmax[c] = sgm
        stats[c, 0] += n_col
        stats[c, 1] += sep
