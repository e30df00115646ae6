"""Gas-surface interaction: re-emitted velocity for one particle hitting a wall.

One implementation serves every wall of every geometry.  A wall is described by
a row of floats (see the ``W_*`` column indices) holding its model code, its
temperature, its velocity and its accommodation coefficients, and the caller
passes the unit normal ``(nx, ny)`` pointing *into the gas* (in 1-D it is
``(+1, 0)`` at x = 0 and ``(-1, 0)`` at x = L).  The tangent frame is
``t1 = (-ny, nx, 0)``, ``t2 = (0, 0, 1)``.

Velocities relative to the wall, ``c = v - u_wall``, are re-emitted by:

* specular: ``c_n -> -c_n``, tangential components kept;
* diffuse: full accommodation, the flux-weighted half-Maxwellian at the wall
  temperature: ``c_n = v_w sqrt(-ln U)`` (density ~ c_n exp(-c_n^2/v_w^2)),
  tangential components normal with variance ``kT_w/m``; ``v_w = sqrt(2kT_w/m)``;
* Maxwell: diffuse with probability ``alpha``, otherwise specular
  (Maxwell 1879);
* Cercignani-Lampis (1971) kernel with normal energy accommodation ``alpha_n``
  and tangential energy accommodation ``alpha_t``, sampled exactly by Lord's
  (1991) method: normal speed ``c_n' = v_w sqrt(r^2 + b^2 + 2 r b cos th)`` with
  ``r = sqrt(-alpha_n ln U1)``, ``th = 2 pi U2``, ``b = sqrt(1-alpha_n) |c_n|/v_w``;
  tangential ``c_t' = sqrt(1-alpha_t) c_t + v_w sqrt(-alpha_t ln U3) (cos, sin)(2 pi U4)``.
  ``alpha_t = sigma_t (2 - sigma_t)`` relates it to the tangential momentum
  accommodation ``sigma_t``.  ``alpha_n = alpha_t = 1`` is diffuse, 0 is specular.

Adding a model: a new code here, its branch in :func:`reflect`, and its row
builder in :mod:`dsmc.models`.
"""

from __future__ import annotations

import math

import numba as nb

from dsmc.kernels.rng import normal, uniform, uniform_open0

# model codes (the registry in dsmc.models maps names to these)
SPECULAR = 0
DIFFUSE = 1
MAXWELL = 2
CLL = 3
PERIODIC = 4  # not a reflection: the move kernel wraps the particle
OPEN = 5  # particle leaves the domain (removed by the caller)

# columns of a wall row
W_MODEL = 0
W_T = 1
W_UX = 2
W_UY = 3
W_UZ = 4
W_ALPHA = 5  # Maxwell accommodation
W_ALPHA_N = 6  # CLL normal energy accommodation
W_ALPHA_T = 7  # CLL tangential energy accommodation
W_NCOL = 8


@nb.njit(inline="always")
def _diffuse(vw, state, s):
    cn = vw * math.sqrt(-math.log(uniform_open0(state, s)))
    sig = vw * 0.7071067811865476
    return cn, sig * normal(state, s), sig * normal(state, s)


@nb.njit(cache=True)
def reflect(v, nx, ny, wall, mass, state, s):
    """Replace ``v`` (length-3 array, lab frame) by the re-emitted velocity.

    ``wall`` is one wall row, ``(nx, ny)`` the unit normal into the gas,
    ``mass`` the molecular mass (kg), ``state``/``s`` the random stream.
    """
    model = int(wall[W_MODEL])
    ux = wall[W_UX]
    uy = wall[W_UY]
    uz = wall[W_UZ]
    cx = v[0] - ux
    cy = v[1] - uy
    cz = v[2] - uz
    # components in the wall frame (n, t1, t2)
    cn = cx * nx + cy * ny
    c1 = -cx * ny + cy * nx
    c2 = cz
    if model == MAXWELL:
        model = DIFFUSE if uniform(state, s) < wall[W_ALPHA] else SPECULAR
    if model == SPECULAR:
        cn = -cn
    elif model == DIFFUSE:
        vw = math.sqrt(2.0 * 1.380649e-23 * wall[W_T] / mass)
        cn, c1, c2 = _diffuse(vw, state, s)
    elif model == CLL:
        vw = math.sqrt(2.0 * 1.380649e-23 * wall[W_T] / mass)
        an = wall[W_ALPHA_N]
        at = wall[W_ALPHA_T]
        r = math.sqrt(-an * math.log(uniform_open0(state, s)))
        th = 2.0 * math.pi * uniform(state, s)
        b = math.sqrt(1.0 - an) * abs(cn) / vw
        cn = vw * math.sqrt(r * r + b * b + 2.0 * r * b * math.cos(th))
        r = vw * math.sqrt(-at * math.log(uniform_open0(state, s)))
        th = 2.0 * math.pi * uniform(state, s)
        keep = math.sqrt(1.0 - at)
        c1 = keep * c1 + r * math.cos(th)
        c2 = keep * c2 + r * math.sin(th)
    # back to the lab frame
    v[0] = ux + cn * nx - c1 * ny
    v[1] = uy + cn * ny + c1 * nx
    v[2] = uz + c2
