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

Mixtures: one ``(sigma_T g)_max`` per cell covers every species pair, and
both partners are drawn uniformly from all particles of the cell.  A pair
(a, b) is then a candidate with probability ``N_a N_b / (N (N-1))`` per
ordered choice and is accepted with ``(sigma_T g)_ab / (sigma_T g)_max``,
so the expected number of a-b collisions per step is
``N_a N_b F_N <sigma_T g>_ab dt / V`` for unlike and
``N_a (N_a - 1) F_N <sigma_T g>_aa dt / (2 V)`` for like pairs: the NTC
rates of every pair with the single running maximum.

Internal energy: Larsen-Borgnakke (Borgnakke and Larsen 1975, J. Comput.
Phys. 18, 405; Bird 1994 sec. 5.4 and 11.3).  In an accepted collision one
particle at most exchanges energy with one internal mode ("prohibiting
double relaxation", Lumpkin, Haas and Boyd 1991, Phys. Fluids A 3, 2282,
from memory): a single uniform ``U`` picks vibration of the first particle
if ``U < Pv_i``, of the second if below ``Pv_i + Pv_j``, then rotation of
the first and of the second with ``Pr_i`` and ``Pr_j``, else an elastic
collision.  The events are exclusive, so each happens with exactly its
probability (the tables must give a sum <= 1; :mod:`dsmc.gas.kinetic`
checks it).

Rotation (continuous): the collision energy ``E_c = E_t + e_r`` (relative
translational energy ``E_t = m_r g^2 / 2`` plus the relaxing particle's
rotational energy) is redistributed.  In equilibrium the colliding pairs'
``E_t`` is distributed with ``zeta_t = 5 - 2 omega_ab`` effective squared
terms (density ~ ``E_t^(zeta_t/2 - 1) exp(-E_t/kT)``, the collision-weighted
VHS distribution, Bird 1994 sec. 5.4 from memory; it follows from weighting
the Maxwellian ``g^2 exp(-m_r g^2/2kT)`` by ``sigma_T g ~ g^(2 - 2 omega)``),
and ``e_r`` with ``zeta_r`` (density ~ ``e_r^(zeta_r/2 - 1) exp(-e_r/kT)``).
Given their sum ``E_c`` the fraction ``x = e_r / E_c`` of two independent
gamma variables of shapes ``A = zeta_r/2`` and ``B = zeta_t/2 = 5/2 - omega``
is Beta(A, B):

    f(x) ~ x^(A - 1) (1 - x)^(B - 1).

Drawing the post-collision ``x`` from it makes the collision satisfy detailed
balance with the equilibrium state.  For diatomics (``A = 1``) it is
inverted exactly, ``x = 1 - U^(1/B)``; otherwise it is sampled by
acceptance-rejection with the ratio ``f(x)/f(x*)`` to its maximum at
``x* = (A - 1)/(A + B - 2)`` (Bird's ratio method), accepted with
probability ``(x/x*)^(A-1) ((1-x)/(1-x*))^(B-1)`` for uniform ``x``.

Vibration (quantized harmonic oscillator, one mode of temperature
``theta`` per molecule): ``E_c = E_t + i k theta``; a level ``i'`` is drawn
uniformly from ``0 .. floor(E_c / k theta)`` and accepted with
``(1 - i' k theta / E_c)^(B - 1)``, the ratio of the equilibrium
probability ``~ (E_c - i' k theta)^(zeta_t/2 - 1)`` of the level given
``E_c`` to its value at ``i' = 0`` (the discrete form of the same
detailed-balance argument; Bergemann and Boyd 1994, from memory).

The new relative speed is ``g' = sqrt(2 E_t' / m_r)`` and its direction is
scattered as in an elastic collision (for VSS about the pre-collision
direction), so momentum is conserved through the centre-of-mass velocity
and total (translational + internal) energy through ``E_t' + e' = E_c``, both
to round-off.

Relaxation probability and the continuum collision number: with this
scheme a molecule of rotational ``zeta_r`` that relaxes in a fraction ``P``
of its collisions changes its mean rotational energy per collision by
``P A B / (A + B) k (T_tr - T_rot)`` (from the means ``<E_t> = B k T_tr``
and ``<e_r> = A k T_rot`` and ``<x> = A/(A+B)``), i.e.

    dT_rot / d(collisions) = P B / (A + B) (T_tr - T_rot),

the Jeans equation with ``Z_rot = (A + B) / (P B) = (1/P)(1 + zeta_r/zeta_t)``.
The tables therefore hold ``P = (1 + zeta_r / zeta_t) / Z_rot`` for the
continuum ``Z_rot`` of the species table or case file: the correction of
Lumpkin, Haas and Boyd (1991) for this scheme, rederived here and checked by
``tests/test_internal_energy.py``.  Vibration uses ``P = 1/Z_vib`` without a
correction (the factor for the quantized mode depends on temperature).

Temperature-dependent ``Z_rot`` (Parker 1959): the probability is
re-evaluated in every cell and step from the cell's translational
temperature, ``P = (1 + zeta_r/zeta_t) / Z_rot(T_cell)``.  Within a step it
is constant, so each collision still satisfies detailed balance.

Sampling: on sampling steps the kernel also adds each cell's raw moments
for the fields (:func:`dsmc.kernels.sample.add_cell_moments`) just before or
just after that cell's collisions (alternately, see :mod:`dsmc.simulation`),
so a cell's particles are read from memory once for both; this replaced a
separate sampling pass over all particles.

Prefetch: the partners are picked in random order within a cell, which the
hardware prefetchers do not follow, so once the particle arrays outgrow the
cache every first touch of a cache line waited on main memory.  The kernel
asks for the lines of the cell ``PREFETCH_CELLS`` ahead
(:mod:`dsmc.kernels.prefetch`) while it works on the current one.  Measured
on the bench case (tools/bench.py, one thread, 1e6 particles, ns per
particle-step): collisions alone 19.6 -> 8.3; the in-order read of a
sampling step had hidden part of the wait (collisions with sampling 13.6-15.3
-> 8.6-9.9 before the prefetch), the prefetch removes it on every step.

Fused multiply-add: the kernel compiles with numba's ``fastmath={"contract"}``,
which lets LLVM fuse a product and a sum into one rounding (no reordering of
sums, no other relaxed IEEE rule).  The moment sums of sampling are mostly such
products (``m += vx * vy``), and the sampling pass ``sample_cells`` compiles with
the same flag, so the two paths stay bit-identical.  Measured in one process,
alternating the two builds on the same state (1e6 particles, bench case, 30
calls each): collisions with sampling 0.923 and 0.946 of the time without the
flag on one thread, 0.954 on two.
"""

from __future__ import annotations

import math

import numba as nb
import numpy as np

from dsmc.kernels.prefetch import prefetch
from dsmc.kernels.rng import uniform, uniform_open0
from dsmc.kernels.sample import add_cell_moments

N_COLL_STATS = 2  # accepted collisions, summed |x_i - x_j|
# collide_ntc's ``sample``: no sampling, moments before / after each cell's collisions
SAMPLE_NONE, SAMPLE_BEFORE, SAMPLE_AFTER = 0, 1, 2
# bound on the relative error of (g^2)^e evaluated in single precision for
# 1e-30 <= g^2 <= 1e38 and 0 <= e <= 1: rounding g^2 (2^-24 e), rounding e (2^-24 e |ln g^2|,
# at most 5.3e-6) and the float pow (about 1 ulp, 2^-23); with a factor 10 to spare.
# tests/test_collisions.py checks the bound on random g^2 and e.
SG_FLOAT_MARGIN = 1e-4
SG_FLOAT_MIN = 1e-30  # below this g^2 (float denormals) the double formula is used
K_B = 1.380649e-23  # J/K, exact (SI 2019)


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
def beta_fraction(A, B, state, s):
    """A Beta(A, B) deviate, ``A >= 1``, ``B >= 1`` (see the module docstring)."""
    if A == 1.0:
        return 1.0 - uniform_open0(state, s) ** (1.0 / B)
    xm = (A - 1.0) / (A + B - 2.0)
    while True:
        x = uniform(state, s)
        ratio = (x / xm) ** (A - 1.0) * ((1.0 - x) / (1.0 - xm)) ** (B - 1.0)
        if uniform(state, s) < ratio:
            return x


@nb.njit(inline="always")
def vib_level(E_c, e_quantum, B, state, s):
    """Post-collision level of a harmonic mode of quantum ``e_quantum`` (J)."""
    i_max = int(E_c / e_quantum)
    while True:
        i = min(int(uniform(state, s) * (i_max + 1)), i_max)
        if uniform(state, s) < (1.0 - i * e_quantum / E_c) ** (B - 1.0):
            return i


@nb.njit(inline="always")
def parker_factor(T, T_star):
    """``Z_inf / Z_rot(T)`` of Parker's (1959) formula (see :func:`dsmc.gas.kinetic.parker_rotational_number`)."""
    r = T_star / max(T, 1e-300)
    return 1.0 + 0.5 * math.pi**1.5 * math.sqrt(r) + (math.pi + 0.25 * math.pi**2) * r


@nb.njit(inline="always")
def cell_temperature(v, sp, mass, lo, hi):
    """Translational temperature of particles ``lo .. hi-1`` about their mass-average velocity."""
    m_sum = 0.0
    px = 0.0
    py = 0.0
    pz = 0.0
    e2 = 0.0
    for i in range(lo, hi):
        m = mass[sp[i]]
        m_sum += m
        px += m * v[i, 0]
        py += m * v[i, 1]
        pz += m * v[i, 2]
        e2 += m * (v[i, 0] * v[i, 0] + v[i, 1] * v[i, 1] + v[i, 2] * v[i, 2])
    return (e2 - (px * px + py * py + pz * pz) / m_sum) / (3.0 * K_B * (hi - lo))


@nb.njit(inline="always")
def _other(lo, m, i, state, s):
    """A uniformly chosen position of ``lo .. lo+m-1`` other than ``i`` (m >= 2)."""
    j = lo + min(int(uniform(state, s) * (m - 1)), m - 2)
    return j + 1 if j >= i else j


# cells ahead of the one being collided whose particle data is prefetched: far enough for the
# lines to arrive (a cell takes a few hundred ns), near enough to stay in the cache
PREFETCH_CELLS = 2


@nb.njit(inline="always")
def _prefetch_cell(pos, v, sp, erot, vib, lo, hi):
    """Ask for the cache lines of particles ``lo .. hi-1`` (velocities, positions, species and,
    for molecular gases, internal energies)."""
    for k in range(3 * lo, 3 * hi, 8):
        prefetch(v, k)
    d = pos.shape[1]
    for k in range(d * lo, d * hi, 8):
        prefetch(pos, k)
    for k in range(lo, hi, 64):
        prefetch(sp, k)
    if erot.size > 0:
        for k in range(lo, hi, 8):
            prefetch(erot, k)
        for k in range(lo, hi, 16):
            prefetch(vib, k)


@nb.njit(parallel=True, cache=True, fastmath={"contract"})
def collide_ntc(pos, v, sp, erot, vib, cell_start, volume, weight, dt, sgmax, remainder,
                pair_c, pair_exp, pair_alpha, mass, rot_half, theta_vib, pair_prot, pair_pvib,
                rot_tstar, state, stream0, stats, moments, sample):
    """Collide the particles of every cell for one step; sample each cell's moments
    just before or just after its collisions.

    ``pos`` (n, d) positions (only used for the collision-separation
    statistic), ``v`` (n, 3) velocities, ``sp`` species indices, ``erot``
    rotational energies (J) and ``vib`` vibrational levels (updated),
    ``cell_start`` (n_cells + 1) sorted cell ranges, ``volume`` cell volumes,
    ``weight`` real molecules per particle, ``sgmax`` / ``remainder`` per-cell
    NTC state (updated), ``pair_c[a, b]``, ``pair_exp[a, b] = 1 - omega_ab``,
    ``pair_alpha[a, b]`` pair tables, ``mass[a]`` masses.  Per species:
    ``rot_half[a] = zeta_r / 2``, ``theta_vib[a]`` the vibrational temperature
    (K).  ``pair_prot[a, b]`` / ``pair_pvib[a, b]``: probability that the
    particle of species ``a`` relaxes its rotation / vibration in a collision
    with one of species ``b`` (0 switches the mode off).  ``rot_tstar[a] > 0``
    makes species ``a``'s rotational probability temperature-dependent
    (Parker): ``pair_prot[a, b]`` is then the value at ``Z_inf`` and is
    multiplied by ``Z_inf / Z(T)`` at the cell's translational temperature
    (:func:`parker_factor`); where the pair's probabilities would exceed 1 in
    sum, the rotational ones are scaled down to fill the remainder.
    ``stats[c]`` gains the accepted collisions and the summed pair separations.

    ``sample``: ``SAMPLE_BEFORE`` / ``SAMPLE_AFTER`` add every cell's raw
    moments to ``moments`` (n_cells, n_species, 15) before / after its
    collisions, with :func:`dsmc.kernels.sample.add_cell_moments`, while the
    cell's particles are in the cache; ``SAMPLE_NONE`` leaves ``moments``
    alone and costs one test per cell.  Cells are independent, so sampling a
    cell after its collisions is sampling the whole gas after the collision
    phase: the moments are bit-identical to :func:`dsmc.kernels.sample.sample_cells`
    called before or after this kernel.
    """
    n_cells = cell_start.size - 1
    dim = pos.shape[1]
    ns = mass.size
    variable = False
    for a in range(ns):
        if rot_tstar[a] > 0.0:
            variable = True
    for c in nb.prange(n_cells):
        if c + PREFETCH_CELLS < n_cells:
            _prefetch_cell(pos, v, sp, erot, vib, cell_start[c + PREFETCH_CELLS],
                           cell_start[c + PREFETCH_CELLS + 1])
        s0 = cell_start[c]
        nc = cell_start[c + 1] - s0
        if sample == SAMPLE_BEFORE:
            add_cell_moments(v, sp, erot, vib, s0, s0 + nc, moments, c)
        if nc < 2 or volume[c] <= 0.0:  # nothing collides
            if sample == SAMPLE_AFTER:
                add_cell_moments(v, sp, erot, vib, s0, s0 + nc, moments, c)
            continue
        T = 0.0
        if variable:
            T = cell_temperature(v, sp, mass, s0, s0 + nc)
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
            pvi = pair_pvib[a, b]
            pvj = pair_pvib[b, a]
            pri = pair_prot[a, b]
            prj = pair_prot[b, a]
            if variable:
                # Z_inf / Z(T_cell) of each species with a temperature-dependent Z_rot
                if rot_tstar[a] > 0.0:
                    pri *= parker_factor(T, rot_tstar[a])
                if rot_tstar[b] > 0.0:
                    prj *= parker_factor(T, rot_tstar[b])
            if pvi + pvj + pri + prj > 1.0:
                cut = max(0.0, 1.0 - pvi - pvj) / (pri + prj)
                pri *= cut
                prj *= cut
            if pvi + pvj + pri + prj > 0.0:
                u = uniform(state, st)
                if u < pvi + pvj + pri + prj:
                    m_r = mi * fj
                    et = 0.5 * m_r * g2
                    B = 1.5 + pair_exp[a, b]
                    if u < pvi + pvj:
                        k = i if u < pvi else j
                        eq = K_B * theta_vib[sp[k]]
                        ec = et + vib[k] * eq
                        lev = vib_level(ec, eq, B, state, st)
                        vib[k] = lev
                        et = ec - lev * eq
                    else:
                        k = i if u < pvi + pvj + pri else j
                        ec = et + erot[k]
                        er = ec * beta_fraction(rot_half[sp[k]], B, state, st)
                        erot[k] = er
                        et = ec - er
                    if g > 0.0:
                        scale = math.sqrt(max(et, 0.0) / (0.5 * m_r)) / g
                        ox *= scale
                        oy *= scale
                        oz *= scale
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
        if sample == SAMPLE_AFTER:
            add_cell_moments(v, sp, erot, vib, s0, s0 + nc, moments, c)
