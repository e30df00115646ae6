"""Equilibrium kinetic theory for the HS, VHS and VSS collision models.

All quantities are SI.  Functions taking a temperature accept a scalar or a
numpy array and broadcast.  ``model`` is one of "hs", "vhs", "vss"; "hs" is
VHS with omega = 0.5 and the VHS diameter (see
:meth:`dsmc.gas.species.Species.parameters`).  Equation numbers refer to
Bird (1994), *Molecular Gas Dynamics and the Direct Simulation of Gas
Flows*, chapter 4; the numbering is from memory, and each formula is
re-derived or cross-checked in ``tests/test_gas.py``.

Notation: k Boltzmann constant, m molecular mass, m_r reduced mass of a
collision pair (m/2 in a simple gas), g relative speed, n number density,
d_ref the model diameter at temperature T_ref, omega the viscosity index,
alpha the VSS scattering exponent.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from dsmc.errors import UserError

if TYPE_CHECKING:
    from dsmc.gas.species import Species

#: Boltzmann constant, J/K (exact in the 2019 SI).
K_B = 1.380649e-23
#: Atomic mass constant, kg (CODATA 2022).
AMU = 1.66053906892e-27


# --- Maxwell-Boltzmann speeds and the ideal-gas law -------------------------

def most_probable_speed(T, m):
    """Most probable Maxwellian speed c_mp = sqrt(2kT/m) (Bird 1994 ch. 4)."""
    return np.sqrt(2.0 * K_B * np.asarray(T, dtype=float) / m)


def mean_speed(T, m):
    """Mean Maxwellian speed c_bar = sqrt(8kT/(pi m)) (Bird 1994 ch. 4)."""
    return np.sqrt(8.0 * K_B * np.asarray(T, dtype=float) / (math.pi * m))


def rms_speed(T, m):
    """Root-mean-square Maxwellian speed sqrt(3kT/m) (Bird 1994 ch. 4)."""
    return np.sqrt(3.0 * K_B * np.asarray(T, dtype=float) / m)


def number_density(p, T):
    """Ideal-gas number density n = p/(kT), m^-3."""
    return np.asarray(p, dtype=float) / (K_B * np.asarray(T, dtype=float))


def pressure(n, T):
    """Ideal-gas pressure p = n k T, Pa."""
    return np.asarray(n, dtype=float) * K_B * np.asarray(T, dtype=float)


# --- Transport coefficients --------------------------------------------------

def viscosity(sp: Species, T, model: str = "vhs"):
    """Chapman-Enskog first-approximation viscosity, Pa s.

    mu = mu_ref (T/T_ref)^omega with

        mu_ref = 5 (alpha+1)(alpha+2) sqrt(m k T_ref / pi)
                 / (4 alpha (5 - 2 omega)(7 - 2 omega) d_ref^2).

    alpha = 1 gives the VHS result 15 sqrt(pi m k T_ref) /
    (2 pi d_ref^2 (5-2 omega)(7-2 omega)) (Bird 1994 eq. 4.62); omega = 0.5
    as well gives the hard-sphere 5/(16 d^2) sqrt(m k T/pi).  The VSS factor
    (alpha+1)(alpha+2)/(6 alpha) is the ratio of the VHS viscosity
    cross-section (2/3) sigma_T to the VSS one 4 alpha sigma_T /
    ((alpha+1)(alpha+2)) (Koura & Matsumoto 1991; Bird 1994 ch. 4, from
    memory).
    """
    d, omega, alpha = sp.parameters(model)
    mu_ref = (5.0 * (alpha + 1.0) * (alpha + 2.0)
              * math.sqrt(sp.mass * K_B * sp.T_ref / math.pi)
              / (4.0 * alpha * (5.0 - 2.0 * omega) * (7.0 - 2.0 * omega) * d**2))
    return mu_ref * (np.asarray(T, dtype=float) / sp.T_ref) ** omega


def conductivity(sp: Species, T, model: str = "vhs"):
    """Thermal conductivity, W/(m K): K = mu (k/m) (15/4 + rot_dof/2).

    Monatomic (rot_dof = 0): K = (15/4)(k/m) mu, the Chapman-Enskog first
    approximation, which holds for every intermolecular force law because
    both coefficients then depend on the same collision integral
    Omega(2,2) (Chapman & Cowling 1970, ch. 10, from memory); it therefore
    applies unchanged to HS, VHS and VSS, whose scattering law enters only
    through mu.  Higher approximations raise K m/(k mu) by about 1 %.

    Polyatomic: the Eucken (1913) relation K = mu (5/2 c_v,tr + c_v,int)
    with c_v,tr = (3/2) k/m and c_v,int = (rot_dof/2) k/m (Chapman &
    Cowling 1970, ch. 11, from memory).  Vibration is treated as frozen and
    left out.
    """
    mu = viscosity(sp, T, model)
    return mu * (K_B / sp.mass) * (15.0 / 4.0 + sp.rot_dof / 2.0)


# --- Free paths, collision rates --------------------------------------------

def mean_free_path(sp: Species, T, n, model: str = "vhs"):
    """Equilibrium mean free path of the model gas, m.

    lambda = 1 / (sqrt(2) pi d_ref^2 n (T_ref/T)^(omega - 1/2))
    (Bird 1994 eq. 4.65 for VHS; VSS has the same total cross-section law
    with its own d_ref).  It equals mean_speed / collision_rate.
    """
    d, omega, _ = sp.parameters(model)
    T = np.asarray(T, dtype=float)
    return 1.0 / (math.sqrt(2.0) * math.pi * d**2 * np.asarray(n, dtype=float)
                  * (sp.T_ref / T) ** (omega - 0.5))


def viscosity_mean_free_path(mu, T, n, m):
    """Viscosity-based mean free path, m.

    lambda = mu / (n m) * sqrt(pi m / (2 k T)), i.e. the elementary
    mean-free-path relation mu = rho c_bar lambda / 2 solved for lambda
    (Maxwell; e.g. Cercignani 1988, The Boltzmann Equation and Its
    Applications, from memory).  It is a definition, independent of the
    collision model; for hard spheres it is (5 pi/16) times
    :func:`mean_free_path`.
    """
    T = np.asarray(T, dtype=float)
    return (np.asarray(mu, dtype=float) / (np.asarray(n, dtype=float) * m)
            * np.sqrt(math.pi * m / (2.0 * K_B * T)))


def equivalent_free_path(mu, p, T, m):
    """Equivalent free path ell = mu v0 / p with v0 = sqrt(2kT/m), m.

    Definition used by Sharipov & Seleznev (1998), J. Phys. Chem. Ref. Data
    27, 657 (from memory); the rarefaction parameter is delta = L / ell.
    """
    return (np.asarray(mu, dtype=float) * most_probable_speed(T, m)
            / np.asarray(p, dtype=float))


def collision_rate(sp: Species, T, n, model: str = "vhs"):
    """Equilibrium collision frequency per molecule in a simple gas, 1/s.

    nu = 4 d_ref^2 n sqrt(pi k T_ref / m) (T/T_ref)^(1 - omega)
    (Bird 1994 eq. 4.64).  It is n <sigma_T g> with sigma_T of
    :func:`vhs_cross_section` averaged over the Maxwellian relative-speed
    distribution of reduced mass m/2, which uses
    <g^(2-2 omega)> = (2/sqrt(pi)) Gamma(5/2 - omega) (2kT/m_r)^(1-omega).
    """
    d, omega, _ = sp.parameters(model)
    T = np.asarray(T, dtype=float)
    return (4.0 * d**2 * np.asarray(n, dtype=float)
            * math.sqrt(math.pi * K_B * sp.T_ref / sp.mass)
            * (T / sp.T_ref) ** (1.0 - omega))


def mean_collision_time(sp: Species, T, n, model: str = "vhs"):
    """Mean time between collisions of one molecule, 1/nu, s."""
    return 1.0 / collision_rate(sp, T, n, model)


# --- Cross-sections for the collision kernel ---------------------------------

def total_cross_section(g, m_r, d_ref, omega, T_ref):
    """VHS/VSS total cross-section of a pair with reduced mass m_r, m^2.

    sigma_T(g) = pi d_ref^2 (2 k T_ref / (m_r g^2))^(omega - 1/2)
                 / Gamma(5/2 - omega)        (Bird 1994 eq. 4.63).

    For a mixture pair pass the pair's m_r, d_ref, omega and T_ref.
    """
    g = np.asarray(g, dtype=float)
    return (math.pi * d_ref**2
            * (2.0 * K_B * T_ref / (m_r * g**2)) ** (omega - 0.5)
            / math.gamma(2.5 - omega))


def vhs_cross_section(sp: Species, g, model: str = "vhs"):
    """:func:`total_cross_section` for a like pair of ``sp`` (m_r = m/2)."""
    d, omega, _ = sp.parameters(model)
    return total_cross_section(g, 0.5 * sp.mass, d, omega, sp.T_ref)


def pair_constants_for(m_r, d_ref, omega, T_ref):
    """``(C, exponent)`` with sigma_T(g) g = C g**exponent.

    From :func:`total_cross_section`,

        sigma_T g = pi d_ref^2 (2kT_ref/m_r)^(omega-1/2) (g^-2)^(omega-1/2) g
                  / Gamma(5/2 - omega)
                  = [pi d_ref^2 (2kT_ref/m_r)^(omega-1/2) / Gamma(5/2-omega)]
                    * g^(1 - 2 omega + 1),

    so C = pi d_ref^2 (2kT_ref/m_r)^(omega-1/2) / Gamma(5/2-omega) (units
    m^(1+2 omega) s^(2 omega-2)) and exponent = 2 - 2 omega, which lies in
    [0, 1] for omega in [0.5, 1]; hard spheres give (pi d^2, 1).
    """
    C = (math.pi * d_ref**2 * (2.0 * K_B * T_ref / m_r) ** (omega - 0.5)
         / math.gamma(2.5 - omega))
    return C, 2.0 - 2.0 * omega


def pair_constants(sp: Species, model: str = "vhs"):
    """:func:`pair_constants_for` for a like pair of ``sp`` (m_r = m/2)."""
    d, omega, _ = sp.parameters(model)
    return pair_constants_for(0.5 * sp.mass, d, omega, sp.T_ref)


def knudsen(mfp, length):
    """Knudsen number Kn = mean free path / characteristic length."""
    return np.asarray(mfp, dtype=float) / length


# --- Summary for the ``dsmc gas`` command -----------------------------------

def gas_summary(sp: Species, T: float, p: float, length: float | None = None,
                model: str = "vhs") -> dict[str, tuple[object, str]]:
    """Equilibrium properties of ``sp`` at (T, p) as ``{key: (value, unit)}``.

    Keys, in print order: gas, model, T, p, n, rho, c_mp, c_mean, c_rms,
    viscosity, conductivity, mean_free_path, viscosity_mean_free_path,
    equivalent_free_path, collision_rate, mean_collision_time, and, when
    ``length`` is given, length and Kn (from the model mean free path).
    Raises :class:`UserError` for a non-positive T, p or length.
    """
    for label, value in (("temperature", T), ("pressure", p), ("length", length)):
        if value is not None and not float(value) > 0.0:
            raise UserError(f"{label} must be positive, got {value}")
    T, p = float(T), float(p)
    n = float(number_density(p, T))
    mu = float(viscosity(sp, T, model))
    mfp = float(mean_free_path(sp, T, n, model))
    out: dict[str, tuple[object, str]] = {
        "gas": (f"{sp.name} ({sp.description})", ""),
        "model": (model.lower(), ""),
        "T": (T, "K"),
        "p": (p, "Pa"),
        "n": (n, "m^-3"),
        "rho": (n * sp.mass, "kg/m^3"),
        "c_mp": (float(most_probable_speed(T, sp.mass)), "m/s"),
        "c_mean": (float(mean_speed(T, sp.mass)), "m/s"),
        "c_rms": (float(rms_speed(T, sp.mass)), "m/s"),
        "viscosity": (mu, "Pa s"),
        "conductivity": (float(conductivity(sp, T, model)), "W/(m K)"),
        "mean_free_path": (mfp, "m"),
        "viscosity_mean_free_path": (
            float(viscosity_mean_free_path(mu, T, n, sp.mass)), "m"),
        "equivalent_free_path": (
            float(equivalent_free_path(mu, p, T, sp.mass)), "m"),
        "collision_rate": (float(collision_rate(sp, T, n, model)), "1/s"),
        "mean_collision_time": (
            float(mean_collision_time(sp, T, n, model)), "s"),
    }
    if length is not None:
        out["length"] = (float(length), "m")
        out["Kn"] = (float(knudsen(mfp, length)), "")
    return out


# --- Mixtures: unlike-pair parameters, collision rates, viscosity ------------

def pair_parameters(a: Species, b: Species, model: str = "vhs"):
    """``(m_r, d_ref, omega, alpha, T_ref)`` of the pair (a, b).

    Combining rules of the VHS/VSS models (Bird 1994 sec. 4.3, eqs.
    4.76-4.80, from memory): arithmetic means ``d_ab = (d_a + d_b)/2``,
    ``omega_ab = (omega_a + omega_b)/2``, ``alpha_ab = (alpha_a + alpha_b)/2``,
    with the reduced mass ``m_r = m_a m_b / (m_a + m_b)``.  The species table
    has one T_ref (273 K) for all species; the pair takes their mean.  A like
    pair gives the species' own values and ``m_r = m/2``.
    """
    da, wa, aa = a.parameters(model)
    db, wb, ab = b.parameters(model)
    m_r = a.mass * b.mass / (a.mass + b.mass)
    return m_r, 0.5 * (da + db), 0.5 * (wa + wb), 0.5 * (aa + ab), 0.5 * (a.T_ref + b.T_ref)


def viscosity_for(m, d_ref, omega, alpha, T_ref, T):
    """Chapman-Enskog viscosity of a VSS gas of molecular mass ``m`` (see :func:`viscosity`)."""
    mu_ref = (5.0 * (alpha + 1.0) * (alpha + 2.0) * math.sqrt(m * K_B * T_ref / math.pi)
              / (4.0 * alpha * (5.0 - 2.0 * omega) * (7.0 - 2.0 * omega) * d_ref**2))
    return mu_ref * (np.asarray(T, dtype=float) / T_ref) ** omega


def pair_collision_rate(a: Species, b: Species, T, n_b, model: str = "vhs"):
    """Collisions per second of one molecule of ``a`` with molecules of ``b`` (density n_b).

    nu_ab = n_b <sigma_T g>_ab = 2 sqrt(pi) d_ab^2 n_b (T/T_ref)^(1-omega_ab)
    sqrt(2 k T_ref / m_r) (Bird 1994 eq. 4.76, from memory), from the
    Maxwellian average of :func:`total_cross_section` with the pair's reduced
    mass; with ``m_r = m/2`` it is :func:`collision_rate`.
    """
    m_r, d, omega, _, T_ref = pair_parameters(a, b, model)
    T = np.asarray(T, dtype=float)
    return (2.0 * math.sqrt(math.pi) * d**2 * np.asarray(n_b, dtype=float)
            * (T / T_ref) ** (1.0 - omega) * math.sqrt(2.0 * K_B * T_ref / m_r))


def mixture_collision_rates(species, fractions, T, n, model: str = "vhs") -> np.ndarray:
    """Collision rate of a molecule of each species in the mixture, 1/s (sum over partners)."""
    return np.array([sum(float(pair_collision_rate(a, b, T, x * n, model))
                         for b, x in zip(species, fractions)) for a in species])


def mixture_viscosity(species, fractions, T: float, model: str = "vhs") -> float:
    """Chapman-Enskog first-approximation viscosity of a mixture, Pa s.

    Hirschfelder, Curtiss and Bird (1954), eqs. 8.2-21 to 8.2-24 (Chapman and
    Cowling 1970, sec. 12.3), from memory:

        mu = - det [[H, x], [x^T, 0]] / det H,
        H_ii = x_i^2/mu_i + sum_{k != i} 2 x_i x_k / mu_ik * m_i m_k/(m_i + m_k)^2
               * (5/(3 A*_ik) + m_k/m_i),
        H_ij = - 2 x_i x_j / mu_ij * m_i m_j/(m_i + m_j)^2 * (5/(3 A*_ij) - 1),

    where ``mu_ij`` is the viscosity of a fictitious pure gas of molecular
    mass ``2 m_r`` with the i-j interaction (:func:`pair_parameters`,
    :func:`viscosity_for`; ``mu_ii`` is the pure-gas viscosity) and
    ``A*_ij = Omega(2,2)* / Omega(1,1)*``.  For the VSS model (VHS: alpha = 1)
    the transport cross-sections are ``sigma_mu = 4 alpha sigma_T /
    ((alpha+1)(alpha+2))`` and ``sigma_M = 2 sigma_T / (alpha + 1)``; with
    ``sigma_T ~ g^(1-2 omega)`` the collision integrals give
    ``Omega(2,2)/Omega(1,1) = (sigma_mu/sigma_M)(7/2 - omega)``, and divided
    by the hard-sphere ratio 2, ``A* = alpha (7 - 2 omega) / (2 (alpha + 2))``
    (1 for hard spheres).  ``T`` is a scalar.  One species gives its own
    viscosity; the binary case equals HCB's explicit eq. 8.2-22 (tested).
    """
    x = np.asarray(fractions, dtype=float)
    ns = len(species)
    m = np.array([s.mass for s in species])
    mu = np.empty((ns, ns))
    A = np.empty((ns, ns))
    for i, a in enumerate(species):
        for j, b in enumerate(species):
            m_r, d, omega, alpha, T_ref = pair_parameters(a, b, model)
            if model == "hs":
                omega = 0.5
            mu[i, j] = viscosity_for(2.0 * m_r, d, omega, alpha, T_ref, float(T))
            A[i, j] = alpha * (7.0 - 2.0 * omega) / (2.0 * (alpha + 2.0))
    H = np.zeros((ns, ns))
    for i in range(ns):
        H[i, i] = x[i] ** 2 / mu[i, i]
        for k in range(ns):
            if k == i:
                continue
            f = 2.0 * x[i] * x[k] / mu[i, k] * m[i] * m[k] / (m[i] + m[k]) ** 2
            H[i, i] += f * (5.0 / (3.0 * A[i, k]) + m[k] / m[i])
            H[i, k] = -f * (5.0 / (3.0 * A[i, k]) - 1.0)
    B = np.zeros((ns + 1, ns + 1))
    B[:ns, :ns] = H
    B[:ns, ns] = x
    B[ns, :ns] = x
    return float(-np.linalg.det(B) / np.linalg.det(H))


def wilke_viscosity(species, fractions, T, model: str = "vhs"):
    """Wilke's (1950) mixing rule, J. Chem. Phys. 18, 517 (from memory), as a cross-check:

    mu = sum_i x_i mu_i / sum_j x_j phi_ij,
    phi_ij = [1 + (mu_i/mu_j)^(1/2) (m_j/m_i)^(1/4)]^2 / [8 (1 + m_i/m_j)]^(1/2).
    """
    mus = [viscosity(s, T, model) for s in species]
    total = 0.0
    for si, xi, mi in zip(species, fractions, mus):
        den = 0.0
        for sj, xj, mj in zip(species, fractions, mus):
            phi = ((1.0 + (mi / mj) ** 0.5 * (sj.mass / si.mass) ** 0.25) ** 2
                   / (8.0 * (1.0 + si.mass / sj.mass)) ** 0.5)
            den = den + xj * phi
        total = total + xi * mi / den
    return total


# --- Internal energy ---------------------------------------------------------

def translational_collision_dof(omega: float) -> float:
    """zeta_t = 5 - 2 omega: squared terms of the relative translational energy of
    colliding VHS pairs (Bird 1994 sec. 5.4, from memory; see dsmc.kernels.collide)."""
    return 5.0 - 2.0 * omega


def rotational_probability(Z_rot: float, rot_dof: int, omega_pair: float) -> float:
    """Per-collision relaxation probability P that gives the continuum collision number
    ``Z_rot`` with this program's Larsen-Borgnakke scheme:

        P = (1 + zeta_r / zeta_t) / Z_rot,   zeta_t = 5 - 2 omega_pair

    (derived in :mod:`dsmc.kernels.collide`; the same correction as Lumpkin,
    Haas and Boyd 1991, Phys. Fluids A 3, 2282, from memory).  0 for atoms.
    """
    if rot_dof == 0 or Z_rot <= 0.0:
        return 0.0
    return (1.0 + rot_dof / translational_collision_dof(omega_pair)) / Z_rot


#: Parker (1959) constants ``(Z_inf, T*)``: N2 values as commonly used with the formula
#: (Parker 1959, Phys. Fluids 2, 449; Lumpkin, Haas and Boyd 1991), from memory.  Other
#: species have none here.
PARKER = {"N2": (18.1, 91.5)}


def parker_rotational_number(T, Z_inf: float, T_star: float):
    """Parker's (1959) continuum rotational collision number,

    Z_rot(T) = Z_inf / (1 + (pi^(3/2)/2) sqrt(T*/T) + (pi + pi^2/4) T*/T)

    (from memory).  For N2 (:data:`PARKER`) it gives about 4.3 at 300 K and
    5.1 at 500 K.
    """
    r = T_star / np.asarray(T, dtype=float)
    return Z_inf / (1.0 + 0.5 * math.pi**1.5 * np.sqrt(r) + (math.pi + 0.25 * math.pi**2) * r)


def relaxation_tables(species, model: str, Z_rot=None, vibrating=(), Z_vib: float = 50.0):
    """Per-species and per-pair tables of the internal-energy exchange.

    Returns ``(rot_dof, theta_vib, p_rot, p_vib, rot_tstar)``: ``rot_dof[a]`` (int),
    ``theta_vib[a]`` (K, 0 where vibration is off), and the probabilities
    ``p_rot[a, b]`` / ``p_vib[a, b]`` that the molecule of species ``a``
    relaxes in a collision with one of ``b`` (:func:`rotational_probability`
    with the pair's omega; ``1/Z_vib`` for vibration).  ``Z_rot`` replaces the
    species-table value of every molecular species when given; ``"parker"``
    selects Parker's temperature-dependent number for every molecular species
    (constants in :data:`PARKER`): ``p_rot`` then holds the value at ``Z_inf``
    and ``rot_tstar[a] = T*`` (0 for constant ``Z_rot``), and the kernel scales it
    with the cell temperature (the sum check below cannot cover every
    temperature: the kernel caps it, see :mod:`dsmc.kernels.collide`); ``vibrating``
    names the species whose single vibrational mode is active.  Raises
    ``ValueError`` (one line) when a pair's probabilities add up to more
    than 1, which the one-relaxation-per-collision scheme cannot represent.
    """
    ns = len(species)
    rot_dof = np.array([s.rot_dof for s in species], dtype=np.int64)
    theta = np.zeros(ns)
    for k, s in enumerate(species):
        if s.name in vibrating:
            if len(s.vib_dof_char_T) != 1:
                raise ValueError(f"vibration of '{s.name}' ({len(s.vib_dof_char_T)} modes) is not "
                                 "supported: only molecules with one vibrational mode")
            theta[k] = s.vib_dof_char_T[0]
    if np.any(rot_dof > 3):
        raise ValueError("more than 3 rotational degrees of freedom")
    rot_tstar = np.zeros(ns)
    parker = isinstance(Z_rot, str)
    if parker:
        for k, s in enumerate(species):
            if s.rot_dof:
                if s.name not in PARKER:
                    raise ValueError(f"no Parker constants for '{s.name}' (known: "
                                     f"{', '.join(PARKER)})")
                rot_tstar[k] = PARKER[s.name][1]
    p_rot = np.zeros((ns, ns))
    p_vib = np.zeros((ns, ns))
    for i, a in enumerate(species):
        if parker:
            Z = PARKER[a.name][0] if a.rot_dof else 0.0
        else:
            Z = a.Z_rot if Z_rot is None else float(Z_rot)
        for j, b in enumerate(species):
            omega = pair_parameters(a, b, model)[2] if model != "hs" else 0.5
            p_rot[i, j] = rotational_probability(Z, a.rot_dof, omega)
            p_vib[i, j] = 1.0 / Z_vib if theta[i] > 0.0 else 0.0
    for i, a in enumerate(species):
        for j, b in enumerate(species):
            total = p_rot[i, j] + p_rot[j, i] + p_vib[i, j] + p_vib[j, i]
            if total > 1.0 + 1e-12:
                raise ValueError(
                    f"relaxation probabilities of the pair {a.name}-{b.name} add up to {total:.3g} > 1 "
                    f"(P_rot = (1 + zeta_r/zeta_t)/Z_rot per molecule): use a larger "
                    f"rotational_collision_number (Z_rot of '{a.name}' is "
                    f"{a.Z_rot if Z_rot is None else Z_rot:g})")
    return rot_dof, theta, p_rot, p_vib, rot_tstar
