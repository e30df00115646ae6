"""Analytic limits for planar Couette-Fourier flow, the checks for DSMC runs.

Pure numpy + math: no engine import, no numba, no scipy, so the checks run
on any laptop.

Geometry and sign conventions (used by every function here)
-----------------------------------------------------------
Wall 1 lies at x = 0, wall 2 at x = L, the gas fills 0 < x < L.  Wall i has
temperature ``T_i`` (K), tangential velocity ``u_i`` (m/s, along y) and a
Maxwell accommodation coefficient ``alpha_i`` in (0, 1]: a fraction alpha_i of
the molecules hitting it is re-emitted diffusely (half-Maxwellian at T_i,
drifting at u_i), the rest is reflected specularly.  The molecular mass is
``m`` (kg) and the amount of gas is the mean number density ``n_avg`` (m^-3)
over the gap, which is what a closed-gap DSMC run conserves; the pressure is
an output.

* ``tau`` = P_xy, the flux of y-momentum in the +x direction (Pa).  For
  u2 > u1 it is negative: tau = -mu du/dx.
* ``energy_flux`` E: total energy flux in the +x direction in the lab frame
  (W/m^2).  In a steady planar flow with zero net mass flux it is uniform in
  x, and E = q_x + u_y P_xy wherever the local mean velocity is u_y.
* Heat fluxes are positive along +x (for T1 > T2 they are positive):
  ``q_wall1`` = E - tau u1, the heat leaving wall 1 into the gas, i.e. the
  energy flux seen in the frame of wall 1; ``q_wall2`` = E - tau u2, the heat
  entering wall 2.  Their difference q_wall2 - q_wall1 = -tau (u2 - u1) >= 0
  is the power the walls put into the gas, dissipated as heat.  The gas heat
  flux (relative to the local mean velocity) is q_x(x) = E - tau u_y(x).

Contents
--------
* :func:`kn_from`, :func:`equivalent_free_path`, :func:`maxwell_free_path`:
  Knudsen-number conventions.  All slip and jump coefficients here refer to
  the equivalent free path ell = mu(T) sqrt(2kT/m) / p.
* :func:`maxwell_slip_coefficient`, :func:`smoluchowski_jump_coefficient`,
  :func:`slip_coefficient`, :func:`jump_coefficient`: first-order boundary
  condition coefficients.
* :func:`free_molecular`: exact collisionless solution, any wall
  temperatures, speeds and accommodation coefficients.
* :class:`PowerLawTransport`, :func:`navier_stokes_fourier`, :func:`slip`,
  :func:`no_slip`: the full nonlinear Navier-Stokes-Fourier solution with
  or without first-order velocity slip and temperature jump.
* :func:`linear_limits`: closed forms for small wall differences.

Sources (citations from memory unless a check is stated)
--------------------------------------------------------
* Maxwell J.C. (1879) Phil. Trans. R. Soc. 170, 231 (velocity slip);
  Smoluchowski M. (1898) Ann. Phys. 64, 101 (temperature jump).
* Ohwada T., Sone Y., Aoki K. (1989) Phys. Fluids A 1, 1588: hard-sphere
  viscous slip coefficient k0 = -1.2540 (Sone's normalisation).
* Sone Y., Ohwada T., Aoki K. (1989) Phys. Fluids A 1, 363: hard-sphere
  temperature jump coefficient d1 = 2.4001.
* Sone Y. (2007) Molecular Gas Dynamics, Birkhaeuser: hard-sphere transport
  constants gamma1 = 1.270042, gamma2 = 1.922284 used for the conversion.
* Sharipov F. (2011) J. Phys. Chem. Ref. Data 40, 023101, review of slip
  and jump coefficients in the ell convention.  This citation is from memory
  and was NOT verified; only a 2004 conference version by the same author,
  "Data on the Velocity Slip and Temperature Jump Coefficients" (EuroSimE
  2004), was found, without its tables.  The S-model values sigma_P = 1.0162
  and zeta_T = 1.954 are from memory.  Checked: the COMSOL Multiphysics 6.1
  CFD Module manual ("External Slip Wall") gives defaults 1 and 1.95 for the
  viscous slip and jump coefficients in this convention (1.1 and 2.2 with
  Maxwell's lambda_M), consistent with the values used here.
* Free-molecular Couette flow, -rho (c_bar/4) (u2 - u1) for diffuse walls:
  Bird G.A. (1994) Molecular Gas Dynamics and the Direct Simulation of Gas
  Flows, ch. 7, and Kogan M.N. (1969) Rarefied Gas Dynamics (from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: Boltzmann constant, J/K (exact in the 2019 SI).
K_B = 1.380649e-23

_SQRT_PI = math.sqrt(math.pi)


def _check_positive(**values):
    for name, value in values.items():
        if not float(value) > 0.0:
            raise ValueError(f"{name} must be positive, got {value}")


def _check_alpha(**values):
    for name, value in values.items():
        if not 0.0 < float(value) <= 1.0:
            raise ValueError(f"{name} must lie in (0, 1], got {value}")


# --- Knudsen-number conventions ---------------------------------------------

def kn_from(mean_free_path, L):
    """Knudsen number Kn = mean_free_path / L.

    The slip and jump coefficients of this module refer to the equivalent
    free path ell of :func:`equivalent_free_path`; with another free path
    convert first (ell = 2 lambda_M / sqrt(pi) for Maxwell's, see
    :func:`maxwell_free_path`).  Sharipov's rarefaction parameter is
    delta = L / ell = 1 / Kn.
    """
    _check_positive(L=L)
    return np.asarray(mean_free_path, dtype=float) / L


def equivalent_free_path(mu, p, T, m):
    """Equivalent free path ell = mu sqrt(2kT/m) / p, m.

    This is the length the slip coefficient sigma_P and the jump coefficient
    zeta_T of this module multiply (Sharipov's convention, from memory).
    Same definition and argument order as
    ``dsmc.gas.kinetic.equivalent_free_path``.
    """
    T = np.asarray(T, dtype=float)
    return np.asarray(mu, dtype=float) * np.sqrt(2.0 * K_B * T / m) / p


def maxwell_free_path(mu, p, T, m):
    """Maxwell's viscosity free path lambda_M = 2 mu / (rho c_bar), m.

    From mu = rho c_bar lambda_M / 2 with c_bar = sqrt(8kT/(pi m)) and
    rho = p m / (kT): lambda_M = (mu/p) sqrt(pi k T / (2 m)) = (sqrt(pi)/2)
    ell.  Maxwell's slip coefficient is (2 - alpha)/alpha in units of
    lambda_M, i.e. (2 - alpha)/alpha sqrt(pi)/2 in units of ell.
    """
    return 0.5 * _SQRT_PI * equivalent_free_path(mu, p, T, m)


# --- Slip and jump coefficients ---------------------------------------------

# Hard-sphere constants in Sone's normalisation (see module docstring, from
# memory).  Sone's slip condition reads u - u_w = -k0 (sqrt(pi)/2) l0 du/dn
# with l0 = 1/(sqrt(2) pi d^2 n), and mu = (sqrt(pi)/2) gamma1 p l0 / v0, so
# ell = (sqrt(pi)/2) gamma1 l0 and sigma_P = -k0 / gamma1; likewise
# zeta_T = d1 / gamma1.  K m / (k mu) = (5/2) gamma2 / gamma1.
_HS_K0 = -1.2540
_HS_D1 = 2.4001
_HS_GAMMA1 = 1.270042
_HS_GAMMA2 = 1.922284

#: Diffuse-wall (alpha = 1) coefficients in the ell convention, with the
#: conductivity ratio K m / (k mu) of the model the values belong to.
DIFFUSE_COEFFICIENTS = {
    "hard_sphere": {
        "sigma_P": -_HS_K0 / _HS_GAMMA1,          # 0.98737
        "zeta_T": _HS_D1 / _HS_GAMMA1,            # 1.88978
        "conductivity_ratio": 2.5 * _HS_GAMMA2 / _HS_GAMMA1,   # 3.78390
    },
    "s_model": {
        "sigma_P": 1.0162,
        "zeta_T": 1.954,
        "conductivity_ratio": 3.75,
    },
}

MODELS = ("hard_sphere", "s_model", "maxwell")


def maxwell_slip_coefficient(alpha=1.0):
    """Plain first-order Maxwell slip coefficient in the ell convention.

    sigma = (2 - alpha)/alpha * sqrt(pi)/2.  Derivation (Maxwell 1879): at a
    wall at rest with normal into the gas, take the Chapman-Enskog
    distribution f0 (1 + phi) of the gas at the wall, with shear perturbation
    phi even in c_x.  The incident half carries the y-momentum flux
    -m Gamma u_s + P_xy/2 (Gamma = n sqrt(kT/(2 pi m)), u_s the slip); the
    specular fraction returns it with the sign of c_x flipped, the diffuse
    fraction returns none, so P_xy = alpha (-m Gamma u_s + P_xy/2).  With
    P_xy = -mu du/dn this gives u_s = (2 - alpha)/alpha mu/(2 m Gamma) du/dn
    = (2 - alpha)/alpha (sqrt(pi)/2) ell du/dn.  The argument ignores the
    Knudsen layer, an O(1) correction to sigma, so it gives the exact
    leading term (2/alpha) sqrt(pi)/2 as alpha -> 0.
    """
    _check_alpha(alpha=alpha)
    return (2.0 - alpha) / alpha * 0.5 * _SQRT_PI


def smoluchowski_jump_coefficient(alpha=1.0, conductivity_ratio=3.75):
    """Plain first-order Smoluchowski jump coefficient in the ell convention.

    zeta = (2 - alpha)/alpha * (sqrt(pi)/4) * K m / (k mu) for a monatomic
    gas; with K m/(k mu) = 15/4 (Prandtl number 2/3) it is
    (2 - alpha)/alpha * 1.6617.  Derivation, as for the slip: the incident
    half of the Chapman-Enskog distribution carries the number flux Gamma
    (the heat-conduction perturbation adds none) and the energy flux
    -2kT_g Gamma + q/2; the specular part returns it reversed, the diffuse
    part returns alpha Gamma 2kT_w, so q = alpha q/2 - 2 alpha k Gamma
    (T_g - T_w).  With q = -K dT/dn: T_g - T_w = (2 - alpha)/alpha
    K/(4 k Gamma) dT/dn, and K/(4 k Gamma) = (sqrt(pi)/4) (K m/(k mu)) ell.
    This equals the textbook (2-alpha)/alpha 2 gamma/((gamma+1) Pr) lambda_M
    with gamma = 5/3.  Like the slip, it gives the exact leading term as
    alpha -> 0.
    """
    _check_alpha(alpha=alpha)
    _check_positive(conductivity_ratio=conductivity_ratio)
    return (2.0 - alpha) / alpha * 0.25 * _SQRT_PI * conductivity_ratio


def _interpolated(alpha, value_diffuse, value_small_alpha):
    """(2 - a)/a [c0 + (c1 - c0) a]: exact at a = 1 and as a -> 0."""
    return (2.0 - alpha) / alpha * (
        value_small_alpha + (value_diffuse - value_small_alpha) * alpha)


def slip_coefficient(alpha=1.0, model="hard_sphere"):
    """Viscous slip coefficient sigma_P(alpha), ell convention.

    u_gas - u_wall = sigma_P ell du/dn, n the normal into the gas.

    ``model``:

    * "hard_sphere": sigma_P(1) = 1.2540/1.270042 = 0.98737 from the
      linearized-Boltzmann result of Ohwada, Sone & Aoki (1989) converted
      with Sone's gamma1 (values from memory; the conversion is in this
      module's source).  It equals 1.1141 in units of lambda_M.
    * "s_model": sigma_P(1) = 1.0162 (BGK/S-model, Loyalka / Sharipov,
      from memory).
    * "maxwell": :func:`maxwell_slip_coefficient`.

    Accommodation: for the kinetic models we use
    sigma_P(alpha) = (2 - alpha)/alpha [c0 + (sigma_P(1) - c0) alpha],
    c0 = sqrt(pi)/2.  It is exact at alpha = 1 and has the exact leading
    term as alpha -> 0 (Maxwell's argument, see
    :func:`maxwell_slip_coefficient`); in between it is an interpolation of
    ours, linear in the bracket like the published BGK fit
    (2 - alpha)/alpha [1.016 - 0.1211 (1 - alpha)] (from memory), which it
    matches within 1 % for alpha >= 0.1 (our bracket slope is 0.130, not
    0.121).
    """
    _check_alpha(alpha=alpha)
    if model == "maxwell":
        return maxwell_slip_coefficient(alpha)
    data = _model_data(model)
    return _interpolated(alpha, data["sigma_P"], 0.5 * _SQRT_PI)


def jump_coefficient(alpha=1.0, model="hard_sphere", conductivity_ratio=3.75):
    """Temperature jump coefficient zeta_T(alpha), ell convention.

    T_gas - T_wall = zeta_T ell dT/dn, n the normal into the gas.

    ``model``:

    * "hard_sphere": zeta_T(1) = 2.4001/1.270042 = 1.88978 from Sone,
      Ohwada & Aoki (1989) converted with Sone's gamma1 (from memory).
    * "s_model": zeta_T(1) = 1.954 (Sharipov, from memory; it is 3/2 of the
      BGK value 1.30272, as the Prandtl-number scaling predicts).
    * "maxwell": :func:`smoluchowski_jump_coefficient` with the given
      ``conductivity_ratio`` K m/(k mu) (ignored by the kinetic models, which
      carry their own).

    Accommodation, as in :func:`slip_coefficient`: zeta_T(alpha) =
    (2 - alpha)/alpha [c0 + (zeta_T(1) - c0) alpha] with the exact small-alpha
    value c0 = (sqrt(pi)/4) K m/(k mu) of the model (hard spheres 1.6767).
    The interpolation in between is ours.
    """
    _check_alpha(alpha=alpha)
    if model == "maxwell":
        return smoluchowski_jump_coefficient(alpha, conductivity_ratio)
    data = _model_data(model)
    c0 = 0.25 * _SQRT_PI * data["conductivity_ratio"]
    return _interpolated(alpha, data["zeta_T"], c0)


def _model_data(model):
    try:
        return DIFFUSE_COEFFICIENTS[model]
    except KeyError:
        raise ValueError(f"unknown slip model {model!r}; choose from {MODELS}") from None


# --- Free-molecular flow ----------------------------------------------------

@dataclass(frozen=True)
class FreeMolecular:
    """Exact free-molecular state between the plates (SI units).

    Every macroscopic quantity is uniform in 0 < x < L, so the scalars below
    are also the profiles.  Stream densities: ``n_plus_j`` is the number
    density of molecules moving in +x whose last diffuse emission was at
    wall j (a half-Maxwellian at T_j, u_j), ``n_minus_j`` likewise for -x.
    """

    n: float            #: number density, m^-3 (= n_avg)
    flux: float         #: one-way number flux, hitting each wall, m^-2 s^-1
    n_plus_1: float
    n_plus_2: float
    n_minus_1: float
    n_minus_2: float
    u: float            #: mean velocity u_y, m/s
    T_xx: float         #: temperature components, K
    T_yy: float
    T_zz: float
    T: float            #: translational temperature (T_xx + T_yy + T_zz)/3, K
    p: float            #: scalar pressure n k T, Pa
    p_xx: float         #: normal stress P_xx = pressure on the walls, Pa
    tau: float          #: shear stress P_xy, Pa
    energy_flux: float  #: lab-frame energy flux E in +x, W/m^2
    q_x: float          #: gas heat flux E - u tau (relative to u), W/m^2
    q_y: float          #: tangential heat flux, W/m^2
    q_wall1: float      #: heat from wall 1 into the gas, E - tau u1, W/m^2
    q_wall2: float      #: heat from the gas into wall 2, E - tau u2, W/m^2


def free_molecular(m, n_avg, T1, T2, u1=0.0, u2=0.0, alpha1=1.0, alpha2=1.0):
    """Exact collisionless Couette-Fourier solution between parallel plates.

    Finite (not linearised) temperature and velocity differences, Maxwell
    walls.  Returns :class:`FreeMolecular`.

    Derivation.  Without collisions the distribution is independent of x.
    A molecule diffusely emitted by wall 1 belongs to the half-Maxwellian
    M_1 (T1, drift u1, c_x > 0); specular reflection only flips c_x, so it
    stays in the family M_1 (c_x > 0 or < 0) until it is re-emitted
    diffusely.  Hence f = sum over the four half-Maxwellians M_j^(+-) with
    densities n_plus_j, n_minus_j.  The mean |c_x| of a half-Maxwellian is
    v_j = sqrt(2kT_j/(pi m)), so its one-way flux is F = n v_j.  Flux balance:

      wall 1: F_plus_1 = alpha1 (F_minus_1 + F_minus_2) + (1-alpha1) F_minus_1,
              F_plus_2 = (1 - alpha1) F_minus_2,
      wall 2: F_minus_2 = alpha2 (F_plus_1 + F_plus_2) + (1-alpha2) F_plus_2,
              F_minus_1 = (1 - alpha2) F_plus_1.

    Each wall returns what it receives, so the net number flux is zero and
    the one-way flux Gamma = F_plus_1 + F_plus_2 is common.  Inserting the
    specular relations into the totals gives alpha2 F_plus_1 = alpha1
    F_minus_2, and then, with D = alpha1 + alpha2 - alpha1 alpha2,

      F_plus_1 = alpha1 Gamma/D,            F_minus_2 = alpha2 Gamma/D,
      F_minus_1 = (1-alpha2) alpha1 Gamma/D, F_plus_2 = (1-alpha1) alpha2 Gamma/D.

    The densities n = F / v_j must add up to n_avg, which fixes
    Gamma = n_avg D / [alpha1 (2 - alpha2)/v1 + alpha2 (2 - alpha1)/v2].
    Moments of a half-Maxwellian (T, u, density N): <c_x^2> = kT/m,
    <c_y> = u, <c_y^2> = kT/m + u^2, <c_z^2> = kT/m, y-momentum flux
    +-m N v u, energy flux +-N v (2kT + m u^2/2).  Summing with signs:

      tau = -m Gamma (alpha1 alpha2/D) (u2 - u1),
      E   = Gamma (alpha1 alpha2/D) [2k (T1 - T2) + m (u1^2 - u2^2)/2],
      n_j = n_plus_j + n_minus_j,  u = (n_1 u1 + n_2 u2)/n,
      P_xx = k (n_1 T1 + n_2 T2) = n k T_xx,  T_zz = T_xx,
      T_yy = T_xx + m n_1 n_2 (u1 - u2)^2 / (n^2 k),
      q_y = sum_j n_j d_j (5kT_j/2 + m d_j^2/2), d_j = u_j - u
      (the c_x-restriction of each half does not affect these y, z moments).

    Checks: diffuse walls at one temperature give tau = -rho sqrt(kT/(2 pi
    m)) (u2 - u1) = -(rho c_bar/4)(u2 - u1), and equal accommodation alpha
    multiplies it by alpha/(2 - alpha); diffuse walls at rest give
    E = 2 k n (T1 - T2) v1 v2/(v1 + v2) -> n k sqrt(2kT/(pi m)) (T1 - T2)
    for small differences.
    """
    _check_positive(m=m, n_avg=n_avg, T1=T1, T2=T2)
    _check_alpha(alpha1=alpha1, alpha2=alpha2)
    k = K_B
    v1 = math.sqrt(2.0 * k * T1 / (math.pi * m))
    v2 = math.sqrt(2.0 * k * T2 / (math.pi * m))
    D = alpha1 + alpha2 - alpha1 * alpha2
    gamma = n_avg * D / (alpha1 * (2.0 - alpha2) / v1 + alpha2 * (2.0 - alpha1) / v2)
    g = gamma / D
    n_plus_1 = alpha1 * g / v1
    n_minus_1 = (1.0 - alpha2) * alpha1 * g / v1
    n_minus_2 = alpha2 * g / v2
    n_plus_2 = (1.0 - alpha1) * alpha2 * g / v2
    n1 = n_plus_1 + n_minus_1
    n2 = n_plus_2 + n_minus_2
    n = n1 + n2
    u = (n1 * u1 + n2 * u2) / n
    T_xx = (n1 * T1 + n2 * T2) / n
    T_yy = T_xx + m * n1 * n2 * (u1 - u2) ** 2 / (n * n * k)
    T = (2.0 * T_xx + T_yy) / 3.0
    weight = gamma * alpha1 * alpha2 / D
    tau = -m * weight * (u2 - u1)
    energy = weight * (2.0 * k * (T1 - T2) + 0.5 * m * (u1 * u1 - u2 * u2))
    d1, d2 = u1 - u, u2 - u
    q_y = (n1 * d1 * (2.5 * k * T1 + 0.5 * m * d1 * d1)
           + n2 * d2 * (2.5 * k * T2 + 0.5 * m * d2 * d2))
    return FreeMolecular(
        n=n, flux=gamma,
        n_plus_1=n_plus_1, n_plus_2=n_plus_2,
        n_minus_1=n_minus_1, n_minus_2=n_minus_2,
        u=u, T_xx=T_xx, T_yy=T_yy, T_zz=T_xx, T=T,
        p=n * k * T, p_xx=n * k * T_xx, tau=tau,
        energy_flux=energy, q_x=energy - u * tau, q_y=q_y,
        q_wall1=energy - tau * u1, q_wall2=energy - tau * u2,
    )


# --- Navier-Stokes-Fourier with slip and jump -------------------------------


@dataclass(frozen=True)
class PowerLawTransport:
    """mu = mu_ref (T/T_ref)^omega and K = K_ref (T/T_ref)^omega (SI).

    One exponent for both, as for the VHS model; the caller computes mu_ref
    and K_ref (Chapman-Enskog).  K/mu is then constant, which the solver
    uses.
    """

    mu_ref: float   #: viscosity at T_ref, Pa s
    K_ref: float    #: thermal conductivity at T_ref, W/(m K)
    T_ref: float    #: reference temperature, K
    omega: float    #: temperature exponent

    def __post_init__(self):
        _check_positive(mu_ref=self.mu_ref, K_ref=self.K_ref, T_ref=self.T_ref)

    def mu(self, T):
        """Viscosity at T, Pa s."""
        return self.mu_ref * (np.asarray(T, dtype=float) / self.T_ref) ** self.omega

    def K(self, T):
        """Thermal conductivity at T, W/(m K)."""
        return self.K_ref * (np.asarray(T, dtype=float) / self.T_ref) ** self.omega

    def conduction_integral(self, Ta, Tb):
        """Integral of K dT from Ta to Tb in closed form, W/m.

        K_ref T_ref/(omega + 1) [(Tb/T_ref)^(omega+1) - (Ta/T_ref)^(omega+1)],
        or K_ref T_ref ln(Tb/Ta) for omega = -1.  For pure conduction
        (Fourier's law with this K) q L = integral from T_gas2 to T_gas1.
        """
        a = np.asarray(Ta, dtype=float) / self.T_ref
        b = np.asarray(Tb, dtype=float) / self.T_ref
        if self.omega == -1.0:
            return self.K_ref * self.T_ref * np.log(b / a)
        e = self.omega + 1.0
        return self.K_ref * self.T_ref / e * (b**e - a**e)


@dataclass(frozen=True)
class NSFSolution:
    """Navier-Stokes-Fourier planar Couette-Fourier solution (SI units).

    ``u_gas_i`` / ``T_gas_i`` are the gas values at x = 0 (i = 1) and x = L
    (i = 2); ``slip_i`` = u_gas_i - u_i and ``jump_i`` = T_gas_i - T_i.
    ``q_gas_i`` is the conductive flux -K dT/dx of the gas at the wall; it
    differs from the wall heat ``q_wall_i`` by tau * slip_i, the work of the
    shear stress over the slip velocity.  Profiles are sampled at ``x``.
    """

    tau: float          #: shear stress P_xy, Pa
    energy_flux: float  #: lab-frame energy flux E, W/m^2
    q_wall1: float      #: heat from wall 1 into the gas, E - tau u1, W/m^2
    q_wall2: float      #: heat from the gas into wall 2, E - tau u2, W/m^2
    q_gas1: float       #: -K dT/dx at x = 0, W/m^2
    q_gas2: float       #: -K dT/dx at x = L, W/m^2
    q_mid: float        #: -K dT/dx at x = L/2, W/m^2
    p: float            #: uniform pressure (= P_xx on the walls), Pa
    u_gas1: float
    u_gas2: float
    T_gas1: float
    T_gas2: float
    slip1: float
    slip2: float
    jump1: float
    jump2: float
    ell1: float         #: equivalent free path of the gas at wall 1, m
    ell2: float         #: equivalent free path of the gas at wall 2, m
    sigma: tuple        #: (sigma1, sigma2) used
    zeta: tuple         #: (zeta1, zeta2) used
    x: np.ndarray       #: sample points, m
    u: np.ndarray       #: u_y(x), m/s
    T: np.ndarray       #: T(x), K
    n: np.ndarray       #: n(x) = p/(k T), m^-3
    q: np.ndarray       #: gas heat flux -K dT/dx = E - tau u(x), W/m^2


# Gauss-Legendre rule on [0, 1].  The integrands are analytic in xi with the
# nearest singularity where T(xi) = 0, outside [0, 1]; 128 points give
# rounding-level accuracy while T_max/T_min stays below about 100.
_GL_T, _GL_W = np.polynomial.legendre.leggauss(128)
_XI = 0.5 * (_GL_T + 1.0)
_WXI = 0.5 * _GL_W


def _temperature(xi, T0, TL, h):
    return T0 + (TL - T0) * xi + h * xi * (1.0 - xi)


def _xi_of_x(xfrac, T0, TL, h, mu, M1):
    """Invert x/L = int_0^xi mu(T) dxi' / M1 by Newton's method (monotone)."""
    xi = np.array(xfrac, dtype=float)
    for _ in range(100):
        inner = mu(_temperature(xi[:, None] * _XI, T0, TL, h)) @ _WXI
        step = (xi * inner / M1 - xfrac) / (mu(_temperature(xi, T0, TL, h)) / M1)
        xi = np.clip(xi - step, 0.0, 1.0)
        if np.max(np.abs(step), initial=0.0) < 1e-12:
            return xi
    raise RuntimeError("x -> xi inversion did not converge")


def navier_stokes_fourier(m, n_avg, L, T1, T2, u1, u2, transport,
                          sigma=(0.0, 0.0), zeta=(0.0, 0.0), x=None):
    """Steady 1-D NSF Couette-Fourier flow with first-order slip and jump.

    ``transport`` is a :class:`PowerLawTransport`; ``sigma`` = (sigma1,
    sigma2) and ``zeta`` = (zeta1, zeta2) are the slip and jump coefficients
    at the two walls in the ell convention (zeros: no slip, no jump);
    ``x`` (default 101 uniform points on [0, L]) is where the profiles are
    returned.  Returns :class:`NSFSolution`.

    Equations.  With u = u_y(x), u_x = 0 and the NSF closure
    P_xy = -mu du/dx, q_x = -K dT/dx, P_xx = p (the normal viscous stress
    vanishes because du_x/dx = 0):

      y-momentum  dP_xy/dx = 0            ->  tau = -mu du/dx = const,
      x-momentum  dP_xx/dx = 0            ->  p = n k T uniform,
      energy      d(q_x + u P_xy)/dx = 0  ->  -K dT/dx + tau u = E = const,

    so d/dx(K dT/dx) = tau du/dx = -mu (du/dx)^2 (viscous heating).  The
    closed gap fixes the particle count, integral of n dx = n_avg L, hence
    p = n_avg k L / integral of dx/T.

    Boundary conditions, with d/dn the derivative along the normal into the
    gas (+x at wall 1, -x at wall 2) and ell_i = mu(T_gas_i)
    sqrt(2kT_gas_i/m)/p evaluated with the gas temperature at the wall:

      u_gas_i - u_i = sigma_i ell_i du/dn,   T_gas_i - T_i = zeta_i ell_i dT/dn.

    Exact reduction.  Let s(x) = int_0^x dx'/mu.  Then u = u_gas1 - tau s,
    and because K = mu/eps with eps = mu_ref/K_ref constant,
    dT/ds = eps (tau u - E): T is a quadratic in s.  In the normalised
    viscous coordinate xi = s/s(L) in [0, 1], with du_g = u_gas2 - u_gas1,
    dT_g = T_gas2 - T_gas1 and h = eps du_g^2 / 2:

      u(xi) = u_gas1 + du_g xi,    T(xi) = T_gas1 + dT_g xi + h xi (1 - xi),
      x(xi) = L int_0^xi mu dxi' / M1,   M1 = int_0^1 mu(T(xi)) dxi,
      tau = -M1 du_g / L,    -K dT/dx = -(M1/(eps L)) (dT_g + h (1 - 2 xi)),
      p = n_avg k M1 / M2,   M2 = int_0^1 mu(T(xi)) / T(xi) dxi.

    With kappa_i = ell_i M1 / (mu(T_gas_i) L) = M2 sqrt(2kT_gas_i/m) /
    (n_avg k L) the boundary conditions read

      du_g (1 + sigma1 kappa1 + sigma2 kappa2) = u2 - u1,
      u_gas1 = u1 + sigma1 kappa1 du_g,    u_gas2 = u2 - sigma2 kappa2 du_g,
      dT_g (1 + zeta1 kappa1 + zeta2 kappa2) = T2 - T1 + h (zeta2 kappa2 - zeta1 kappa1),
      T_gas1 = T1 + zeta1 kappa1 (dT_g + h),  T_gas2 = T2 - zeta2 kappa2 (dT_g - h),

    which are explicit for given kappa.  kappa depends only weakly on the gas
    temperatures, so kappa -> state -> kappa is iterated until the state
    changes by less than 1e-13 (relative; without slip and jump the first
    pass is exact).  M1 and M2
    use a 128-point Gauss-Legendre rule in xi, and x(xi) is inverted
    pointwise by Newton's method; the result is exact to rounding.
    """
    _check_positive(m=m, n_avg=n_avg, L=L, T1=T1, T2=T2)
    s1, s2 = (float(v) for v in sigma)
    z1, z2 = (float(v) for v in zeta)
    if min(s1, s2, z1, z2) < 0.0:
        raise ValueError("slip and jump coefficients must be non-negative")
    x = np.linspace(0.0, L, 101) if x is None else np.asarray(x, dtype=float)
    if x.ndim != 1 or (x.size and (x.min() < 0.0 or x.max() > L)):
        raise ValueError("x must be a 1-D array inside [0, L]")
    k, mu = K_B, transport.mu
    eps = transport.mu_ref / transport.K_ref

    def kappas(T0, TL, h):
        Tq = _temperature(_XI, T0, TL, h)
        c = float(_WXI @ (mu(Tq) / Tq)) / (n_avg * k * L)
        return c * math.sqrt(2.0 * k * T0 / m), c * math.sqrt(2.0 * k * TL / m)

    def state(k1, k2):
        du = (u2 - u1) / (1.0 + s1 * k1 + s2 * k2)
        h = 0.5 * eps * du * du
        dT = (T2 - T1 + h * (z2 * k2 - z1 * k1)) / (1.0 + z1 * k1 + z2 * k2)
        return du, h, T1 + z1 * k1 * (dT + h), T2 - z2 * k2 * (dT - h)

    k1, k2 = kappas(T1, T2, 0.5 * eps * (u2 - u1) ** 2)
    du, h, T0, TL = state(k1, k2)
    for _ in range(200):
        k1, k2 = kappas(T0, TL, h)
        new = state(k1, k2)
        change = max(abs(new[0] - du) / (abs(u2 - u1) or 1.0),
                     abs(new[2] - T0) / T0, abs(new[3] - TL) / TL)
        du, h, T0, TL = new
        if change < 1e-13:
            break
    else:
        raise RuntimeError("slip/jump iteration did not converge")

    Tq = _temperature(_XI, T0, TL, h)
    M1 = float(_WXI @ mu(Tq))
    M2 = float(_WXI @ (mu(Tq) / Tq))
    p = n_avg * k * M1 / M2
    tau = -M1 * du / L
    u0, uL = u1 + s1 * k1 * du, u2 - s2 * k2 * du
    dT = TL - T0
    q0 = -(M1 / (eps * L)) * (dT + h)
    energy = q0 + tau * u0
    xi = _xi_of_x(np.append(x, 0.5 * L) / L, T0, TL, h, mu, M1)
    u = u0 + du * xi
    T = _temperature(xi, T0, TL, h)
    q = energy - tau * u
    return NSFSolution(
        tau=tau, energy_flux=energy,
        q_wall1=energy - tau * u1, q_wall2=energy - tau * u2,
        q_gas1=q0, q_gas2=-(M1 / (eps * L)) * (dT - h), q_mid=float(q[-1]),
        p=p, u_gas1=u0, u_gas2=uL, T_gas1=T0, T_gas2=TL,
        slip1=u0 - u1, slip2=uL - u2, jump1=T0 - T1, jump2=TL - T2,
        ell1=float(equivalent_free_path(mu(T0), p, T0, m)),
        ell2=float(equivalent_free_path(mu(TL), p, TL, m)),
        sigma=(s1, s2), zeta=(z1, z2),
        x=x, u=u[:-1], T=T[:-1], n=p / (k * T[:-1]), q=q[:-1],
    )


def slip(m, n_avg, L, T1, T2, u1, u2, transport, alpha1=1.0, alpha2=1.0,
         model="hard_sphere", x=None):
    """NSF solution with first-order slip and jump for Maxwell walls.

    Coefficients from :func:`slip_coefficient` and :func:`jump_coefficient`
    for ``model`` ("hard_sphere", "s_model" or "maxwell"; "maxwell" uses the
    conductivity ratio K m/(k mu) of ``transport``).  See
    :func:`navier_stokes_fourier`.
    """
    ratio = transport.K_ref * m / (K_B * transport.mu_ref)
    sigma = (slip_coefficient(alpha1, model), slip_coefficient(alpha2, model))
    zeta = (jump_coefficient(alpha1, model, ratio),
            jump_coefficient(alpha2, model, ratio))
    return navier_stokes_fourier(m, n_avg, L, T1, T2, u1, u2, transport,
                                 sigma=sigma, zeta=zeta, x=x)


def no_slip(m, n_avg, L, T1, T2, u1, u2, transport, x=None):
    """Continuum NSF solution: gas velocity and temperature equal the walls'."""
    return navier_stokes_fourier(m, n_avg, L, T1, T2, u1, u2, transport, x=x)


@dataclass(frozen=True)
class LinearLimits:
    """Small-difference closed forms (SI units), see :func:`linear_limits`."""

    tau: float   #: shear stress, Pa
    q: float     #: heat flux, W/m^2
    p: float     #: pressure n_avg k T_m, Pa
    ell: float   #: equivalent free path at T_m, m
    kn: float    #: ell / L


def linear_limits(m, n_avg, L, T1, T2, u1, u2, transport,
                  sigma=(0.0, 0.0), zeta=(0.0, 0.0)):
    """Linearised slip-flow shear stress and heat flux.

    tau = -mu (u2 - u1) / (L + (sigma1 + sigma2) ell),
    q   =  K (T1 - T2) / (L + (zeta1 + zeta2) ell),

    with mu, K, p = n_avg k T_m and ell at T_m = (T1 + T2)/2.  Derivation:
    for small differences the properties are uniform and the profiles
    linear with slope G; the slip conditions give u_gas1 = u1 + sigma1 ell
    G and u_gas2 = u2 - sigma2 ell G, and G L = u_gas2 - u_gas1, so
    G (L + (sigma1 + sigma2) ell) = u2 - u1; the same for T with zeta.
    Viscous heating is second order in u2 - u1 and is dropped.
    """
    _check_positive(m=m, n_avg=n_avg, L=L, T1=T1, T2=T2)
    Tm = 0.5 * (T1 + T2)
    p = n_avg * K_B * Tm
    mu, K = float(transport.mu(Tm)), float(transport.K(Tm))
    ell = float(equivalent_free_path(mu, p, Tm, m))
    return LinearLimits(
        tau=-mu * (u2 - u1) / (L + (sigma[0] + sigma[1]) * ell),
        q=K * (T1 - T2) / (L + (zeta[0] + zeta[1]) * ell),
        p=p, ell=ell, kn=ell / L,
    )
