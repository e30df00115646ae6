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

Partners: ``nearest`` pairs a random particle with its neighbour in the sorted
order (sorting is by subcell, so the neighbour is close in space), but never
with the partner of its own last collision (each particle carries an identity
``pid`` and the identity ``last`` of its last partner); if both neighbours are
excluded, or with ``nearest`` off, the partner is any other particle of the
cell.  Without the exclusion, pairs that have just collided and drift apart
slowly are picked again and again; those repeats move no momentum between
layers, and the measured viscosity came out 8 % high at 20 subcells per cell
(Kn 0.2 argon Couette).  Bird (1994, sec. 11.1) excludes repeated collisions
for the same reason.  Cell ``c`` uses random stream
``stream0 + c``, so the result does not depend on the thread count.
"""

from __future__ import annotations

import math

import numba as nb

from dsmc.kernels.rng import uniform

N_COLL_STATS = 2  # accepted collisions, summed |x_i - x_j|


@nb.njit(inline="always")
def _scatter(gx, gy, gz, g, alpha, state, s):
    """Post-collision relative velocity of magnitude ``g``."""
    if alpha == 1.0:
        cos_chi = 2.0 * uniform(state, s) - 1.0
    else:
        cos_chi = 2.0 * uniform(state, s) ** (1.0 / alpha) - 1.0
    sin_chi = math.sqrt(max(0.0, 1.0 - cos_chi * cos_chi))
    eps = 2.0 * math.pi * uniform(state, s)
    ce = math.cos(eps)
    se = math.sin(eps)
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
def _subcell_of(sub_start, first, end, i):
    """Range ``[lo, hi)`` of the subcell (keys ``first .. end-1``) holding position ``i``."""
    a = first
    b = end - 1
    while a < b:  # last key whose start is <= i
        mid = (a + b + 1) // 2
        if sub_start[mid] <= i:
            a = mid
        else:
            b = mid - 1
    return sub_start[a], sub_start[a + 1]


@nb.njit(inline="always")
def _other(lo, m, i, state, s):
    """A uniformly chosen position of ``lo .. lo+m-1`` other than ``i`` (m >= 2)."""
    j = lo + min(int(uniform(state, s) * (m - 1)), m - 2)
    return j + 1 if j >= i else j


@nb.njit(parallel=True, cache=True)
def collide_ntc(pos, v, sp, pid, last, cell_start, sub_start, n_sub, volume, weight, dt, sgmax, remainder,
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
            j = -1
            if n_sub > 1:
                # another particle of i's subcell, never i's last partner
                lo, hi = _subcell_of(sub_start, c * n_sub, (c + 1) * n_sub, i)
                if hi - lo >= 2:
                    j = _other(lo, hi - lo, i, state, st)
                    if last[i] == pid[j] and hi - lo > 2:
                        j = _other(lo, hi - lo, i, state, st)
                    if last[i] == pid[j]:
                        j = -1
            if j < 0:
                j = _other(s0, nc, i, state, st)
            a = sp[i]
            b = sp[j]
            gx = v[i, 0] - v[j, 0]
            gy = v[i, 1] - v[j, 1]
            gz = v[i, 2] - v[j, 2]
            g2 = gx * gx + gy * gy + gz * gz
            sg = pair_c[a, b] * g2 ** pair_exp[a, b]
            if sg > sgm:
                sgm = sg
            if uniform(state, st) * sgm >= sg:
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
            last[i] = pid[j]
            last[j] = pid[i]
            n_col += 1
            d2 = 0.0
            for k in range(dim):
                d = pos[i, k] - pos[j, k]
                d2 += d * d
            sep += math.sqrt(d2)
        sgmax[c] = sgm
        stats[c, 0] += n_col
        stats[c, 1] += sep
