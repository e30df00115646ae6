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

Internal energy (:func:`reemit_internal`, called right after :func:`reflect`
with the model that :func:`reflect` actually applied):

* specular: rotational energy and vibrational level kept;
* diffuse: both drawn from their equilibrium distributions at the wall
  temperature, independently of the velocity (internal and translational
  energy are independent in equilibrium, so the re-emitted flux carries the
  volume distribution, not a flux-weighted one): ``e_r`` gamma-distributed
  with shape ``zeta_r/2`` and scale ``k T_w``, sampled as a sum of
  ``-k T_w ln U`` terms (one per pair of rotational degrees of freedom) plus
  ``k T_w N^2 / 2`` for an odd one; level ``i`` geometric,
  ``P(i) = (1 - q) q^i`` with ``q = exp(-theta/T_w)``, sampled as
  ``floor(ln U / ln q)``;
* Maxwell: the same random choice as the velocity: a diffusely re-emitted
  molecule is diffuse in its internal modes too, a specular one keeps them;
* CLL, this program's model (an extension in the spirit of Lord 1991): the
  rotational energy is written as ``e_r = k T_w |w|^2`` with ``w`` a vector
  of ``zeta_r`` components of random direction, each component is
  re-emitted by the one-dimensional Cercignani-Lampis kernel
  ``w' = sqrt(1 - alpha_n) w + sqrt(alpha_n / 2) N`` with the *normal*
  accommodation ``alpha_n``, and ``e_r' = k T_w |w'|^2``.  For
  ``zeta_r = 2`` this is Lord's rotational kernel
  ``e_r'/kT_w = r^2 + s^2 + 2 r s cos th``, ``r^2 = -alpha_n ln U``,
  ``s^2 = (1-alpha_n) e_r/kT_w``.  The Gaussian update is reversible with
  respect to the equilibrium distribution at ``T_w``, so the kernel obeys
  reciprocity; ``alpha_n = 1`` is diffuse, 0 keeps the energy.  The
  vibrational level is re-sampled at the wall temperature with probability
  ``alpha_n`` and kept otherwise (a choice of this program).

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
    Returns the model applied (a Maxwell wall returns DIFFUSE or SPECULAR),
    for :func:`reemit_internal`.
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
    return model


@nb.njit(cache=True)
def reemit_internal(erot, vib, i, model, wall, rot_dof, theta_vib, state, s):
    """Re-emit the internal energy of particle ``i`` after :func:`reflect`.

    ``model`` is what :func:`reflect` returned, ``rot_dof`` the particle's
    rotational degrees of freedom, ``theta_vib`` its vibrational temperature
    (0: vibration off).  ``erot``/``vib`` are updated; returns the internal
    energy given to the wall (J).
    """
    if rot_dof == 0 and theta_vib == 0.0:
        return 0.0
    if model == SPECULAR:
        return 0.0
    kt = 1.380649e-23 * wall[W_T]
    e_in = erot[i] + vib[i] * 1.380649e-23 * theta_vib
    diffuse = model == DIFFUSE
    if model == CLL:
        an = wall[W_ALPHA_N]
        if rot_dof > 0:
            # w: rot_dof components of random direction with |w|^2 = e_r / kT_w
            # (rot_dof <= 3 is checked where the species tables are built)
            w0 = normal(state, s)
            w1 = normal(state, s) if rot_dof > 1 else 0.0
            w2 = normal(state, s) if rot_dof > 2 else 0.0
            norm2 = w0 * w0 + w1 * w1 + w2 * w2
            scale = math.sqrt(1.0 - an) * math.sqrt(erot[i] / (kt * norm2)) if norm2 > 0.0 else 0.0
            add = math.sqrt(0.5 * an)
            e = 0.0
            for k in range(rot_dof):
                wk = w0 if k == 0 else (w1 if k == 1 else w2)
                wk = scale * wk + add * normal(state, s)
                e += wk * wk
            erot[i] = kt * e
        if theta_vib > 0.0 and uniform(state, s) < an:
            vib[i] = _thermal_level(wall[W_T], theta_vib, state, s)
    elif diffuse:
        if rot_dof > 0:
            erot[i] = thermal_rotational(kt, rot_dof, state, s)
        if theta_vib > 0.0:
            vib[i] = _thermal_level(wall[W_T], theta_vib, state, s)
    return e_in - (erot[i] + vib[i] * 1.380649e-23 * theta_vib)


@nb.njit(inline="always")
def thermal_rotational(kt, rot_dof, state, s):
    """Equilibrium rotational energy at ``kT = kt``: gamma(rot_dof/2, kt)."""
    e = 0.0
    for _ in range(rot_dof // 2):
        e -= math.log(uniform_open0(state, s))
    if rot_dof % 2 == 1:
        z = normal(state, s)
        e += 0.5 * z * z
    return kt * e


@nb.njit(inline="always")
def _thermal_level(T, theta, state, s):
    """Equilibrium harmonic-oscillator level at ``T``: geometric in ``exp(-theta/T)``."""
    lnq = -theta / T
    return int(math.floor(math.log(uniform_open0(state, s)) / lnq))
