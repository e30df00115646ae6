"""Injection of molecules through an open side from a drifting Maxwellian reservoir.

A reservoir gas of number density ``n``, temperature ``T`` and drift ``u``
(lab frame) has the velocity distribution

    f(v) = n (beta / sqrt(pi))^3 exp(-beta^2 |v - u|^2),   beta = 1 / c_mp,  c_mp = sqrt(2kT/m).

Across a plane with unit normal ``e`` pointing into the domain, the
molecules entering per unit area and time are those with ``v_n = v.e > 0``,
weighted by ``v_n``.  With ``x = beta v_n`` and the speed ratio
``s = beta u.e`` the normal part is ``(beta/sqrt(pi)) exp(-(x - s)^2)``, and
the integrals ``M_k = int_0^inf x^k exp(-(x - s)^2) dx`` are (substitute
``y = x - s`` and integrate by parts)

    M_1 = exp(-s^2)/2 + (sqrt(pi)/2) s (1 + erf s)
    M_3 = (s^2 + 1) exp(-s^2)/2 + sqrt(pi) (s^3/2 + 3 s/4) (1 + erf s).

Number flux (Bird 1994, Molecular Gas Dynamics and the Direct Simulation of
Gas Flows, eq. 4.22):

    N' = n/(sqrt(pi) beta) M_1 = n c_mp/(2 sqrt(pi)) [exp(-s^2) + sqrt(pi) s (1 + erf s)].

Translational energy flux (Bird 1994 eq. 4.23 for ``u`` normal to the plane;
here with a tangential drift ``u_t`` as well, whose two components each add
``u_t^2`` and the thermal variance ``1/(2 beta^2)`` to ``<v_t^2>``):

    E' = (m/2) n/(sqrt(pi) beta^3) [M_3 + M_1 (1 + beta^2 |u_t|^2)].

Check: for ``s = 0, u_t = 0``, ``N' = n c_mean/4`` and ``E' = 2 k T N'``
(effusion, standard kinetic theory).

Sampling the normal velocity exactly, for any ``s``: the density of ``x`` is
``f(x) ~ x exp(-(x - s)^2)`` on ``x > 0``.  (Garcia and Wagner 2006, J.
Comput. Phys. 217, 693 -- citation from memory -- give an acceptance-rejection
scheme; the one below is derived here.)

* ``s <= 0``: propose ``x = sqrt(-ln U)`` (density ``2 x exp(-x^2)``); the
  ratio ``f/proposal ~ exp(2 x s) <= 1``, so accept with probability
  ``exp(2 x s)``.  Acceptance ``E[exp(2 x s)]`` falls like ``1/(2 s^2)`` for
  large negative ``s``, where the flux itself vanishes like ``exp(-s^2)``.
* ``s > 0``: with ``y = x - s``, ``x = s + y <= s + |y|``, so
  ``f <= (s + |y|) exp(-y^2)`` on the whole line.  That bound is a mixture of
  a normal ``y ~ N(0, 1/2)`` (weight ``sqrt(pi) s``) and a two-sided Rayleigh
  ``y = +-sqrt(-ln U)`` (weight 1).  Draw ``y`` from it, reject ``y <= -s``,
  and accept with probability ``(s + y)/(s + |y|)``.  Acceptance is
  ``M_1/(sqrt(pi) s + 1)``: 1/2 at ``s = 0``, tending to 1 for large ``s``.

Tangential components are normal with mean ``u_t`` and variance ``kT/m``
(:func:`entering_velocity`, the one sampler of 1-D and 2-D sides).
An injected molecule enters at a uniformly distributed time within the step,
so it flies ``U dt`` (``U`` uniform on (0, 1]) from the plane: the molecules
entering during a step are then spread as they would be in the real flow
(a molecule placed on the plane itself would leave a density deficit of
half a step's flight next to it).

* 1-D (:func:`inject_1d`): the flight is a straight line from the plane; a
  molecule whose flight would take it past the far side of the slab (only
  possible when ``v_n dt`` exceeds the slab length) is marked removed
  (``pos = -1``) and counted in row 1 of ``acc``.
* 2-D (:func:`dsmc.kernels.move.inject_2d`): the molecule starts at a
  uniformly distributed point of a cell face of the side and flies ``U dt``
  through the move kernel's flight routine, so walls, open sides and
  whatever else that routine honours act on it as on any other molecule.  It
  lives in ``dsmc/kernels/move.py``, beside that routine: numba's cache
  recompiles a function when its own file changes, not when a function it
  calls from another file does.
"""

from __future__ import annotations

import math

import numba as nb

from dsmc.kernels.rng import normal, uniform, uniform_open0

K_B = 1.380649e-23  # J/K, exact (SI 2019)
N_INJECT_ACC = 5  # injected count, momentum (3), kinetic energy


def flux_moments(s: float) -> tuple[float, float]:
    """``(M_1, M_3)`` of the module docstring."""
    s = float(s)
    e = math.exp(-s * s)
    one = 1.0 + math.erf(s)
    m1 = 0.5 * e + 0.5 * math.sqrt(math.pi) * s * one
    m3 = 0.5 * (s * s + 1.0) * e + math.sqrt(math.pi) * (0.5 * s**3 + 0.75 * s) * one
    return m1, m3


def number_flux(n, T, m, u_normal):
    """Molecules per m^2 and s entering through a plane from a reservoir (Bird 1994 eq. 4.22).

    ``u_normal`` is the reservoir drift along the normal into the domain.
    """
    c_mp = math.sqrt(2.0 * K_B * T / m)
    m1, _ = flux_moments(u_normal / c_mp)
    return float(n * c_mp / math.sqrt(math.pi) * m1)


def energy_flux(n, T, m, u_normal, u_tangential=0.0):
    """Translational energy per m^2 and s carried in (Bird 1994 eq. 4.23, tangential drift added).

    ``u_tangential`` is the magnitude of the drift in the plane.
    """
    c_mp = math.sqrt(2.0 * K_B * T / m)
    beta = 1.0 / c_mp
    m1, m3 = flux_moments(u_normal * beta)
    return float(0.5 * m * n / (math.sqrt(math.pi) * beta**3)
                 * (m3 + m1 * (1.0 + (beta * u_tangential) ** 2)))


def momentum_flux_normal(n, T, m, u_normal):
    """Normal momentum per m^2 and s carried in: ``m n/(sqrt(pi) beta^2) M_2``.

    ``M_2 = int_0^inf x^2 exp(-(x - s)^2) dx = s exp(-s^2)/2 + (sqrt(pi)/4)(1 + 2 s^2)(1 + erf s)``
    (same substitution as ``M_1``, ``M_3``).
    """
    c_mp = math.sqrt(2.0 * K_B * T / m)
    s = u_normal / c_mp
    m2 = 0.5 * s * math.exp(-s * s) + 0.25 * math.sqrt(math.pi) * (1.0 + 2.0 * s * s) * (1.0 + math.erf(s))
    return float(m * n * c_mp**2 / math.sqrt(math.pi) * m2)


@nb.njit(inline="always")
def flux_normal_ratio(s, state, k):
    """One ``x = v_n / c_mp > 0`` from the density ``~ x exp(-(x - s)^2)`` (stream ``k``)."""
    if s <= 0.0:
        while True:
            x = math.sqrt(-math.log(uniform_open0(state, k)))
            if uniform(state, k) < math.exp(2.0 * x * s):
                return x
    w_normal = math.sqrt(math.pi) * s
    p_normal = w_normal / (w_normal + 1.0)
    while True:
        if uniform(state, k) < p_normal:
            y = 0.7071067811865476 * normal(state, k)
        else:
            y = math.sqrt(-math.log(uniform_open0(state, k)))
            if uniform(state, k) < 0.5:
                y = -y
        if y <= -s:
            continue
        if uniform(state, k) * (s + abs(y)) < s + y:
            return s + y


@nb.njit(inline="always")
def add_injected(acc_row, mass, vx, vy, vz):
    """Count one molecule of velocity ``v`` in ``acc_row``: number, momentum, kinetic energy."""
    acc_row[0] += 1.0
    acc_row[1] += mass * vx
    acc_row[2] += mass * vy
    acc_row[3] += mass * vz
    acc_row[4] += 0.5 * mass * (vx * vx + vy * vy + vz * vz)


@nb.njit(inline="always")
def entering_velocity(axis, direction, s, c_mp, sig, u, state, k):
    """Velocity ``(v_x, v_y, v_z)`` of one molecule entering through a plane normal to ``axis``
    (0: x, 1: y) with the inward normal ``direction`` (+1 or -1) along it, from the reservoir
    of drift ``u`` (3,), most probable speed ``c_mp`` and ``sig = sqrt(kT/m)``; ``s`` is the
    inward speed ratio ``direction * u[axis] / c_mp``.  The normal speed is drawn by
    :func:`flux_normal_ratio`, then the in-plane tangential component, then z (stream ``k``).
    """
    cn = c_mp * flux_normal_ratio(s, state, k)
    vn = direction * cn
    t1 = sig * normal(state, k)
    t2 = sig * normal(state, k)
    if axis == 0:
        return vn, u[1] + t1, u[2] + t2
    return u[0] + t1, vn, u[2] + t2


@nb.njit(cache=True)
def inject_1d(pos, v, sp, start, count, x0, direction, length, dt, u, temperature, mass,
              species, state, k, acc):
    """Write ``count`` molecules entering through the plane ``x = x0`` at ``start..``.

    ``direction`` is +1 (plane at x = 0, normal +x) or -1 (plane at x =
    length); ``u`` (3,) the reservoir drift, ``temperature`` its temperature,
    ``mass`` the molecular mass of ``species``; ``state``/``k`` the side's
    random stream.  Each molecule flies a uniform fraction of ``dt`` from the
    plane.  ``acc`` (2, N_INJECT_ACC) gets, in row 0, the count, momentum and
    kinetic energy of the molecules that entered, in row 1 those of the
    molecules lost past the far side within their partial flight.
    """
    c_mp = math.sqrt(2.0 * K_B * temperature / mass)
    sig = c_mp * 0.7071067811865476
    s = direction * u[0] / c_mp
    for i in range(start, start + count):
        vx, vy, vz = entering_velocity(0, direction, s, c_mp, sig, u, state, k)
        x = x0 + vx * dt * uniform_open0(state, k)
        v[i, 0] = vx
        v[i, 1] = vy
        v[i, 2] = vz
        sp[i] = species
        row = 0
        if x < 0.0 or x > length:
            row = 1
            x = -1.0
        pos[i, 0] = x
        add_injected(acc[row], mass, vx, vy, vz)


@nb.njit(cache=True)
def relax_face_drift(v, cell_start, cells, n_ref, drift, relax_steps):
    """Relax the reservoir drift ``drift[f]`` (3,) of each face ``f`` of a side toward the mean
    velocity of the gas in its adjacent cell ``cells[f]`` (cell-sorted particles, ``cell_start``).

    Each step adds ``sum_i (v_i - drift) / (relax_steps * n_ref[f])`` over the cell's
    particles, ``n_ref[f]`` the expected particle count of the cell (0: a cell without volume,
    left alone): the drift tends to ``E[sum v] / E[N]``, the cell's momentum over its mass,
    averaged over about ``relax_steps`` steps.  Averaging the per-step cell mean ``sum v / N``
    instead is biased toward the inside: the numbers entering per step are fixed while those
    leaving fluctuate, so a step with few molecules in the cell is one in which few left and
    the entering ones weigh more (measured in a 1-D argon slab at 40 particles per cell between
    a relaxing and a resting reservoir at one state: a 3.6 m/s drift into the slab, 1.1 %
    excess density and a 2 m/s through-flow).  Should a cell hold more than
    ``relax_steps * n_ref`` particles, the drift is set to their mean.
    """
    for f in range(cells.size):
        a = cell_start[cells[f]]
        b = cell_start[cells[f] + 1]
        if b <= a or n_ref[f] <= 0.0:
            continue
        scale = max(relax_steps * n_ref[f], float(b - a))
        for c in range(3):
            d = drift[f, c]
            total = 0.0
            for i in range(a, b):
                total += v[i, c] - d
            drift[f, c] = d + total / scale


@nb.njit(cache=True)
def fill_slab_1d(pos, v, sp, start, count, x_lo, x_hi, u, temperature, mass, species, state, k):
    """Write ``count`` molecules at ``start..``, uniform on ``[x_lo, x_hi)``, with velocities of
    the Maxwellian of drift ``u`` (3,) and ``temperature`` (each component normal, variance
    ``kT/m``: standard kinetic theory).  Used to fill the strip a shock re-centring shift uncovers.
    """
    sig = math.sqrt(K_B * temperature / mass)
    for i in range(start, start + count):
        pos[i, 0] = x_lo + (x_hi - x_lo) * uniform(state, k)
        for c in range(3):
            v[i, c] = u[c] + sig * normal(state, k)
        sp[i] = species
