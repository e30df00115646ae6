"""Free-molecular surface fluxes, bodies and channels: references for 2-D runs.

Pure numpy + math: no engine import, no numba, no scipy, so the references
run on any laptop.  SI units; quantities of 2-D bodies and channels are per
unit depth in z.

Conventions (used by every function here)
-----------------------------------------
* The gas is a drifting Maxwellian: number density ``n``, temperature ``T``,
  molecular mass ``m``, most probable thermal speed c_mp = sqrt(2kT/m).  A
  speed ratio is a speed divided by c_mp (``s = U / c_mp``).
* A surface element is at rest.  ``u_normal`` is the drift component directed
  INTO the wall (positive: gas moving toward it; negative on a leeward face);
  ``u_tangential`` the drift component along the surface.
* On the wall (as in the engine's wall fields): ``pressure`` is the normal
  force per area the gas exerts on it (pushing into the wall),
  ``shear_stress`` the tangential force per area along the tangential drift,
  ``heat_flux`` the net energy per area and time into the wall (in the wall's
  frame, which is the lab frame: walls are at rest).
* Maxwell walls: a fraction ``accommodation`` of the incident molecules is
  re-emitted diffusely (half-Maxwellian at ``T_wall``), the rest specularly.
* Aerodynamic coefficients, U the freestream speed, rho = n m:
  Cp = (p - p_inf) / (rho U^2 / 2) with p_inf = n k T (the freestream static
  pressure is SUBTRACTED), Cf = tau / (rho U^2 / 2), Ch = q / (rho U^3 / 2).
  The textbook free-molecular pressure coefficient (Bird 1994, ch. 7, from
  memory) is p / (rho U^2 / 2) = Cp + 1/s^2.  Drag and lift coefficients of
  a 2-D body are force per unit depth / (rho U^2 / 2 * reference length);
  p_inf cancels in them because the bodies are closed.

Contents
--------
* :func:`half_range_moments`: M_k(s) = int_0^inf x^k exp(-(x - s)^2) dx,
  k = 0..3, the moments every flux here is built from.
* :func:`surface_element`, :class:`SurfaceElement`: number, momentum and
  energy fluxes on a flat element; :func:`coefficients` turns them into
  Cp, Cf, Ch.
* :func:`flat_plate`: drag and lift of a thin two-sided plate at incidence.
* :func:`scaled_bessel_i`: exp(-x) I_n(x) without scipy.
* :func:`cylinder`, :func:`cylinder_surface`: drag of a circular cylinder and
  its surface distributions.
* :func:`clausing_channel`, :func:`channel_transmission`,
  :func:`free_molecular_channel_mass_flow`: transmission probability of a
  plane slit channel between two reservoirs (Clausing's integral equation).
* :func:`slip_channel_mass_flow`, :func:`no_slip_channel_mass_flow`,
  :func:`slip_channel_pressure`: long plane channel, isothermal compressible
  Poiseuille flow with first-order slip.

Why free-molecular surface fluxes are exact on convex bodies: without
collisions, a molecule reaching a point of a convex body comes straight from
the undisturbed freestream (a convex body cannot send its own re-emitted
molecules back to itself), so each element sees the freestream Maxwellian
restricted to velocities toward it, whatever happens elsewhere.

Sources (citations from memory unless a check is stated)
--------------------------------------------------------
* Bird G.A. (1994) Molecular Gas Dynamics and the Direct Simulation of Gas
  Flows, Clarendon, Oxford: ch. 4 (fluxes across a surface element in a
  drifting Maxwellian, eqs. 4.22-4.23 for the number and momentum fluxes;
  equation numbers from memory) and ch. 7 (free-molecular flows: flat plate
  and cylinder coefficients).  Every formula here is derived in its
  docstring; the textbook forms are quoted only for comparison.
* Schaaf S.A., Chambre P.L. (1958) Flow of Rarefied Gases, Princeton Univ.
  Press (free-molecular plate and cylinder; from memory).
* Clausing P. (1932) Ann. Phys. 12, 961 (integral equation of free-molecular
  transmission; from memory).
* Hottel H.C., Sarofim A.F. (1967) Radiative Transfer, McGraw-Hill
  (crossed-strings rule for 2-D view factors; from memory).
* Cercignani C. (1975) Theory and Application of the Boltzmann Equation,
  Scottish Academic Press (logarithmic growth of the free-molecular flow
  rate of a long plane channel; from memory).  No published table of the
  slit-channel transmission probability could be checked (searched for
  Berman 1965 J. Appl. Phys. 36, 3356 and the review of Sharipov &
  Seleznev 1998 J. Phys. Chem. Ref. Data 27, 657 without finding their
  tables), so the tests use an independent Monte Carlo count instead.
* Arkilic E.B., Schmidt M.A., Breuer K.S. (1997) J. Microelectromech.
  Syst. 6, 167 (slip-flow mass flow in a long microchannel; from memory).
* Abramowitz M., Stegun I.A. (1964) Handbook of Mathematical Functions,
  9.6.19 (integral form of I_n), 9.6.10 (its series; equation numbers from
  memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from dsmc.analysis import limits as _limits
from dsmc.analysis.limits import K_B

_SQRT_PI = math.sqrt(math.pi)

_erf = np.vectorize(math.erf, otypes=[float])
_erfc = np.vectorize(math.erfc, otypes=[float])


def _require_positive(**values):
    for name, value in values.items():
        v = np.asarray(value, dtype=float)
        if not np.all(v > 0.0):
            raise ValueError(f"{name} must be positive, got {value}")


def _require_finite(**values):
    for name, value in values.items():
        if not np.all(np.isfinite(np.asarray(value, dtype=float))):
            raise ValueError(f"{name} must be finite, got {value}")


def _require_accommodation(value):
    if not 0.0 <= float(value) <= 1.0:
        raise ValueError(f"accommodation must lie in [0, 1], got {value}")


def _scalar(x):
    """A 0-d result as a Python float, arrays unchanged."""
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x


# --- Half-range moments -----------------------------------------------------

def half_range_moments(s):
    """M_k(s) = int_0^inf x^k exp(-(x - s)^2) dx for k = 0, 1, 2, 3.

    Returns the tuple (M0, M1, M2, M3) (floats for scalar ``s``, arrays
    otherwise).  Derivation: with y = x - s,

      M0 = int_{-s}^inf exp(-y^2) dy = (sqrt(pi)/2) (1 + erf s),
      M1 = int (y + s) exp(-y^2) dy = exp(-s^2)/2 + s M0,

    and for k >= 1, integrating x^k (x - s) exp(-(x - s)^2) by parts (the
    boundary term x^k exp(-(x - s)^2)/2 vanishes at 0 and infinity) gives
    M_{k+1} = s M_k + (k/2) M_{k-1}.  Hence

      M2 = s exp(-s^2)/2 + (sqrt(pi)/4)(1 + 2 s^2)(1 + erf s),
      M3 = (s^2 + 1) exp(-s^2)/2 + sqrt(pi)(s^3/2 + 3 s/4)(1 + erf s).

    1 + erf s is evaluated as erfc(-s), so nothing underflows to a
    difference of equal numbers for negative s.  Accuracy: rounding level
    relative to M_k(0) for every s; for s < 0, where M_k decays like
    exp(-s^2) |s|^-(k+1), the two terms cancel and the relative error grows
    to about (1 + s^2)^k x 1e-16 (1e-10 for M3 at s = -10).  Leeward fluxes
    that small are far below anything a particle simulation resolves.
    """
    s = np.asarray(s, dtype=float)
    _require_finite(s=s)
    g = np.exp(-s * s)
    m0 = 0.5 * _SQRT_PI * _erfc(-s)
    m1 = 0.5 * g + s * m0
    m2 = s * m1 + 0.5 * m0
    m3 = s * m2 + m1
    return tuple(_scalar(v) for v in (m0, m1, m2, m3))


# --- Surface element --------------------------------------------------------

@dataclass(frozen=True)
class SurfaceElement:
    """Fluxes on a flat wall element facing a drifting Maxwellian (SI).

    See :func:`surface_element` for the sign conventions.  Fields are floats
    or arrays (broadcast from the arguments).
    """

    number_flux: object   #: incident = re-emitted molecules, 1/(m^2 s)
    pressure: object      #: normal force per area on the wall, Pa
    shear_stress: object  #: tangential force per area along the drift, Pa
    heat_flux: object     #: net energy into the wall, W/m^2


def _element(s_n, s_t, t_ratio, alpha):
    """Dimensionless element fluxes in units of n c_mp, n m c_mp^2, n m c_mp^3.

    ``t_ratio`` = T_wall / T.  Returns (number flux, pressure, shear, heat
    flux); see :func:`surface_element` for the derivation.
    """
    _, m1, m2, m3 = half_range_moments(s_n)
    flux = m1 / _SQRT_PI
    p_in = m2 / _SQRT_PI
    e_in = 0.5 * m3 / _SQRT_PI + flux * 0.5 * (np.square(s_t) + 1.0)
    pressure = (2.0 - alpha) * p_in + alpha * flux * 0.5 * _SQRT_PI * np.sqrt(t_ratio)
    shear = alpha * flux * s_t
    heat = alpha * (e_in - flux * t_ratio)
    return flux, pressure, shear, heat


def surface_element(n, T, m, u_normal, u_tangential, T_wall, accommodation=1.0):
    """Exact fluxes on a flat element at rest in a drifting Maxwellian gas.

    Arguments: gas number density ``n`` (m^-3), temperature ``T`` (K),
    molecular mass ``m`` (kg), drift component ``u_normal`` (m/s) directed
    INTO the wall (any sign), drift component ``u_tangential`` along the
    surface (m/s; its magnitude, though a signed value is accepted and gives
    a shear stress of the same sign along the same axis), wall temperature
    ``T_wall`` (K), Maxwell accommodation coefficient in [0, 1].  Arrays
    broadcast.  Returns :class:`SurfaceElement`.

    Derivation.  Let w be the molecular velocity component toward the wall
    and c_mp = sqrt(2kT/m), s_n = u_normal / c_mp.  The Maxwellian gives w the
    density (n / (sqrt(pi) c_mp)) exp(-((w - u_normal)/c_mp)^2), independent
    of the two tangential components (drift u_tangential along one of them).
    With x = w / c_mp, the incident fluxes are moments over w > 0 (Bird 1994
    ch. 4, eqs. 4.22-4.23 for the number and normal-momentum fluxes, from
    memory):

      number        N    = n c_mp M1(s_n) / sqrt(pi),
      normal mom.   p_i  = n m c_mp^2 M2(s_n) / sqrt(pi),
      tangent. mom. t_i  = m u_tangential N,
      energy        E_i  = (m/2) n c_mp^3 M3(s_n)/sqrt(pi)
                           + N (m u_tangential^2 / 2 + k T),

    the last term being the mean tangential energy (m/2)<c_t1^2 + c_t2^2> =
    m u_tangential^2/2 + kT carried by each incident molecule.  At rest
    (s_n = 0: M1 = 1/2, M2 = sqrt(pi)/4, M3 = 1/2) these reduce to
    N = n sqrt(kT/(2 pi m)), p_i = n k T / 2, E_i = 2 k T N.

    Re-emission.  The wall returns all N molecules.  The specular fraction
    (1 - a) reverses the normal velocity: it adds (1 - a) p_i to the normal
    force, keeps the tangential momentum and the energy.  The diffuse
    fraction a leaves as a flux-weighted half-Maxwellian at T_wall (c_w =
    sqrt(2 k T_wall / m)): mean normal speed int w^2 exp(-w^2/c_w^2) dw /
    int w exp(-w^2/c_w^2) dw = sqrt(pi) c_w / 2, no tangential momentum, mean
    energy 2 k T_wall per molecule.  Therefore

      pressure     p   = (2 - a) p_i + a m N sqrt(pi) c_w / 2,
      shear stress tau = a m u_tangential N,
      heat flux    q   = a (E_i - 2 k T_wall N).

    Checks (tests): equilibrium (u = 0, T_wall = T) gives p = n k T, zero
    shear and heat flux for any a; specular walls give p = 2 p_i, tau = 0,
    q = 0.
    """
    _require_positive(n=n, T=T, m=m, T_wall=T_wall)
    _require_finite(u_normal=u_normal, u_tangential=u_tangential)
    _require_accommodation(accommodation)
    n = np.asarray(n, dtype=float)
    T = np.asarray(T, dtype=float)
    c_mp = np.sqrt(2.0 * K_B * T / m)
    flux, pressure, shear, heat = _element(
        np.asarray(u_normal, dtype=float) / c_mp,
        np.asarray(u_tangential, dtype=float) / c_mp,
        np.asarray(T_wall, dtype=float) / T, float(accommodation))
    return SurfaceElement(
        number_flux=_scalar(n * c_mp * flux),
        pressure=_scalar(n * m * c_mp**2 * pressure),
        shear_stress=_scalar(n * m * c_mp**2 * shear),
        heat_flux=_scalar(n * m * c_mp**3 * heat),
    )


@dataclass(frozen=True)
class SurfaceCoefficients:
    """Dimensionless surface distributions (see the module conventions)."""

    Cp: object                 #: (p - n k T) / (rho U^2 / 2)
    Cf: object                 #: tau / (rho U^2 / 2)
    Ch: object                 #: q / (rho U^3 / 2)
    number_flux_ratio: object  #: N / (n U)


def coefficients(element, n, T, m, speed):
    """Cp, Cf, Ch and N/(nU) of a :class:`SurfaceElement` (SI arguments).

    ``n``, ``T``, ``m`` are the freestream gas of the element and ``speed``
    the freestream speed U > 0 (the magnitude of the drift, not its normal
    component).  Cp = (p - n k T)/(rho U^2/2) subtracts the freestream
    static pressure (aerodynamic convention); Cf = tau/(rho U^2/2);
    Ch = q/(rho U^3/2); number_flux_ratio = N/(n U), which tends to the
    cosine of the angle between the drift and the inward normal on a
    windward element as s -> infinity.
    """
    _require_positive(n=n, T=T, m=m, speed=speed)
    rho = np.asarray(n, dtype=float) * m
    dyn = 0.5 * rho * np.square(speed)
    return SurfaceCoefficients(
        Cp=_scalar((element.pressure - np.asarray(n) * K_B * np.asarray(T)) / dyn),
        Cf=_scalar(element.shear_stress / dyn),
        Ch=_scalar(element.heat_flux / (dyn * speed)),
        number_flux_ratio=_scalar(element.number_flux / (np.asarray(n) * speed)),
    )


# --- Flat plate -------------------------------------------------------------

@dataclass(frozen=True)
class FlatPlate:
    """Thin two-sided plate in free-molecular flow; per unit span, chord c."""

    CD: float  #: drag / (rho U^2 c / 2)
    CL: float  #: lift / (rho U^2 c / 2), positive for positive incidence
    Ch: float  #: heat into both faces / (rho U^3 c / 2)


def flat_plate(speed_ratio, incidence, T_inf, T_wall, accommodation=1.0):
    """Drag, lift and heat transfer of a thin flat plate, both faces summed.

    ``speed_ratio`` s = U / sqrt(2 k T_inf / m) > 0, ``incidence`` the angle
    of attack (radians, any sign), ``T_inf``, ``T_wall`` in K, Maxwell
    ``accommodation`` a in [0, 1], the same on both faces.  Returns
    :class:`FlatPlate`.

    Derivation from :func:`surface_element`.  Freestream along +x, lift along
    +y; the plate runs along t = (cos A, -sin A) (A the incidence).  The
    windward face sees s_n = s sin A, the leeward face s_n = -s sin A, both
    the tangential speed ratio s cos A along t.  The windward pressure pushes
    along (sin A, cos A), the leeward one opposite, and both shear stresses
    act along t, so per unit chord

      D = (p_w - p_l) sin A + (tau_w + tau_l) cos A,
      L = (p_w - p_l) cos A - (tau_w + tau_l) sin A

    (p_inf cancels between the faces).  With M_k(s) - M_k(-s) and M_k(s) +
    M_k(-s) from :func:`half_range_moments`, writing S = s sin A and E =
    exp(-S^2), in units of n m c_mp^2:

      p_w - p_l   = (2 - a)[S E/sqrt(pi) + (1/2 + S^2) erf S]
                    + a (sqrt(pi)/2) sqrt(T_wall/T_inf) S,
      tau_w + tau_l = a s cos A [E/sqrt(pi) + S erf S],

    and dividing by s^2/2:

      CD = (2/s^2){(2 - a)[S E/sqrt(pi) + (1/2 + S^2) erf S] sin A
                   + a (sqrt(pi)/2) sqrt(Tw/T) S sin A
                   + a s cos^2 A [E/sqrt(pi) + S erf S]},
      CL = (2/s^2){(2 - a)[S E/sqrt(pi) + (1/2 + S^2) erf S] cos A
                   + a (sqrt(pi)/2) sqrt(Tw/T) S cos A
                   - a s sin A cos A [E/sqrt(pi) + S erf S]}.

    For diffuse walls (a = 1) these collapse to the textbook forms (Bird
    1994 ch. 7; Schaaf & Chambre 1958; both from memory):

      CD = 2 exp(-S^2)/(sqrt(pi) s) + (sin A/s^2)(1 + 2 s^2) erf S
           + (sqrt(pi)/s) sin^2 A sqrt(Tw/T),
      CL = (cos A/s^2) erf S + (sqrt(pi)/s) sin A cos A sqrt(Tw/T).

    Hypersonic limit (s -> infinity, A != 0): the windward face takes the
    whole incident momentum flux rho U^2 sin A per unit area (normal part
    rho U^2 sin^2 A, tangential rho U^2 sin A cos A), the specular part
    doubles the normal part, the diffuse re-emission (~ 1/s) and the leeward
    face (~ exp(-S^2)) vanish; so p = (2 - a) rho U^2 sin^2 A, tau = a rho
    U^2 sin A cos A and CD -> 2 |sin A| [(2 - a) sin^2 A + a cos^2 A],
    CL -> 4 (1 - a) sin A |sin A| cos A.  At zero incidence CD = 2 a /
    (sqrt(pi) s) exactly (pure skin friction).

    ``Ch`` is the sum of the two faces' heat fluxes from
    :func:`surface_element`, divided by rho U^3 / 2.
    """
    _require_positive(speed_ratio=speed_ratio, T_inf=T_inf, T_wall=T_wall)
    _require_finite(incidence=incidence)
    _require_accommodation(accommodation)
    s, a = float(speed_ratio), float(accommodation)
    sin_a, cos_a = math.sin(incidence), math.cos(incidence)
    S = s * sin_a
    E = math.exp(-S * S)
    erf_S = math.erf(S)
    tw = T_wall / T_inf
    dp = ((2.0 - a) * (S * E / _SQRT_PI + (0.5 + S * S) * erf_S)
          + a * 0.5 * _SQRT_PI * math.sqrt(tw) * S)
    shear = a * s * cos_a * (E / _SQRT_PI + S * erf_S)
    heat = sum(_element(sign * S, s * cos_a, tw, a)[3] for sign in (1.0, -1.0))
    return FlatPlate(
        CD=2.0 / s**2 * (dp * sin_a + shear * cos_a),
        CL=2.0 / s**2 * (dp * cos_a - shear * sin_a),
        Ch=float(2.0 / s**3 * heat),
    )


# --- Modified Bessel functions ----------------------------------------------

def scaled_bessel_i(order, x):
    """exp(-x) I_n(x) for integer order n >= 0 and x >= 0 (no scipy).

    For x < 2 the power series I_n(x) = sum_k (x/2)^(2k+n) / (k! (k+n)!)
    (Abramowitz & Stegun 9.6.10, from memory), 30 terms.  For x >= 2 the
    integral (A&S 9.6.19, from memory)

      exp(-x) I_n(x) = (1/pi) int_0^pi exp(x (cos t - 1)) cos(n t) dt

    by the trapezoid rule with M intervals on [0, pi].  The integrand is
    even and 2 pi-periodic, so this is the trapezoid rule with 2M points on
    the whole period, whose error is pure aliasing: from exp(x cos t) =
    I_0 + 2 sum_j I_j cos(j t), the rule returns I_n + sum_{l >= 1}
    (I_{2lM-n} + I_{2lM+n}), a relative error of about 2 I_{2M-n}/I_n.  For
    large x, I_nu/I_0 ~ exp(-nu^2/(2x)), so 2M - n >= sqrt(80 x) + 25 makes
    it below exp(-40) ~ 4e-18 (the +25 covers small x, where I_nu decays
    like (x/2)^nu/nu!).  The cost grows like sqrt(x): 4,500 nodes at
    x = 1e6.  cos t - 1 is evaluated as -2 sin^2(t/2): near t = 0, where the
    integrand lives for large x, the difference would lose digits.  The test
    compares with scipy.special.ive.
    """
    order = int(order)
    if order < 0:
        raise ValueError(f"order must be a non-negative integer, got {order}")
    x = np.asarray(x, dtype=float)
    if not np.all(np.isfinite(x) & (x >= 0.0)):
        raise ValueError("x must be finite and non-negative")
    out = np.empty_like(x)
    small = x < 2.0
    if np.any(small):
        xs = x[small]
        half2 = 0.25 * xs * xs
        term = (0.5 * xs) ** order / math.factorial(order)
        total = term.copy()
        for k in range(1, 30):
            term = term * half2 / (k * (k + order))
            total += term
        out[small] = np.exp(-xs) * total
    if np.any(~small):
        xl = x[~small]
        M = int(math.ceil(0.5 * (math.sqrt(80.0 * float(xl.max())) + 25.0 + order)))
        t = np.linspace(0.0, math.pi, M + 1)
        w = np.full(M + 1, 1.0 / M)
        w[0] = w[-1] = 0.5 / M
        # cos t - 1 = -2 sin^2(t/2), without the cancellation near t = 0
        drop = -2.0 * np.sin(0.5 * t) ** 2
        out[~small] = np.exp(np.multiply.outer(xl, drop)) @ (w * np.cos(order * t))
    return _scalar(out)


# --- Circular cylinder ------------------------------------------------------

@dataclass(frozen=True)
class Cylinder:
    """Circular cylinder in free-molecular flow; per unit length, diameter d."""

    CD: float           #: drag / (rho U^2 d / 2)
    CD_pressure: float  #: part from the normal stress, int Cp cos(theta)
    CD_friction: float  #: part from the shear stress, int Cf sin(theta)


def _cylinder_D(s):
    """(sqrt(pi)/(2s)) exp(-s^2/2) [(2 s^2 + 3) I0(s^2/2) + (2 s^2 + 1) I1(s^2/2)]."""
    a = 0.5 * s * s
    return 0.5 * _SQRT_PI / s * ((2.0 * s * s + 3.0) * scaled_bessel_i(0, a)
                                 + (2.0 * s * s + 1.0) * scaled_bessel_i(1, a))


def cylinder(speed_ratio, T_inf, T_wall, accommodation=1.0):
    """Drag coefficient of a circular cylinder in free-molecular flow.

    ``speed_ratio`` s = U / sqrt(2 k T_inf / m) > 0; ``T_inf``, ``T_wall``
    in K; Maxwell ``accommodation`` a in [0, 1] (default 1: diffuse walls).
    Returns :class:`Cylinder`.  With D(s) = (sqrt(pi)/(2s)) exp(-s^2/2)
    [(2 s^2 + 3) I0(s^2/2) + (2 s^2 + 1) I1(s^2/2)]:

      CD_pressure = (2 - a)(2/3) D + a pi^(3/2) sqrt(T_wall/T_inf) / (4 s),
      CD_friction = a D / 3,
      CD = CD_pressure + CD_friction.

    For a = 1, CD = (sqrt(pi)/s) exp(-s^2/2)[(s^2 + 3/2) I0(s^2/2) + (s^2 +
    1/2) I1(s^2/2)] + pi^(3/2) sqrt(T_wall/T_inf)/(4 s), the textbook form
    (Bird 1994 ch. 7; Schaaf & Chambre 1958; from memory; derived here and
    checked against the quadrature of :func:`cylinder_surface`).

    Derivation.  At polar angle theta from the stagnation point the element
    sees s_n = s cos(theta) and the tangential speed ratio s |sin theta|, and
    CD = int_0^pi [Cp cos(theta) + Cf sin(theta)] dtheta (both halves; p_inf
    drops out since int cos = 0).  In units of n m c_mp^2, with x = s cos(theta):

      p = (2 - a) M2(x)/sqrt(pi) + a sqrt(Tw/T) M1(x)/2,
      tau = a s sin(theta) M1(x)/sqrt(pi).

    Under theta -> pi - theta, x -> -x: only the odd part of M2 and of M1
    survives against cos(theta), the even part of M1 against sin^2(theta):
    odd M1 = sqrt(pi) x/2, odd M2 = x exp(-x^2)/2 + (sqrt(pi)/4)(1 + 2x^2)
    erf x, even M1 = exp(-x^2)/2 + (sqrt(pi)/2) x erf x.  The needed integrals,
    with E_j = int_0^pi cos^j exp(-s^2 cos^2) dtheta and a = s^2/2:

      E0 = pi e^-a I0(a) (cos^2 = (1 + cos 2 theta)/2, A&S 9.6.19),
      E2 = -dE0/d(s^2) = (pi/2) e^-a (I0 - I1),
      E4 = -dE2/d(s^2) = (pi/4) e^-a (2 I0 - 2 I1 - I1/a)
           (I0' = I1, I1' = I0 - I1/a),
      F1 = int erf(x) cos = (2s/sqrt(pi)) (E0 - E2),
      F3 = int erf(x) cos^3 = (2s/sqrt(pi)) (2 E0 - E2 - E4)/3
           (by parts, cos^3 = d/dtheta (sin - sin^3/3)).

    The wall term: (a sqrt(Tw/T)/s^2) int M1 cos = (a sqrt(Tw/T)/s^2)
    (sqrt(pi)/2) s (pi/2) = a pi^(3/2) sqrt(Tw/T)/(4s).  The incident normal
    momentum: P = int M2 cos = (s/2) E2 + (sqrt(pi)/4) F1 + (sqrt(pi)/2) s^2
    F3 = pi e^-a [(s/2) I0 + (s^3/3)(I0 + I1) + (s/6) I1], and the shear
    part B = int s sin^2 (even M1) = (s/2)(E0 - E2) + (sqrt(pi)/2) s^2 (F1 -
    F3) = pi e^-a [(s/4 + s^3/6) I0 + (s/12 + s^3/6) I1].  So P = 2B and
    (2/(sqrt(pi) s^2)) (P + B) = D: the incident normal momentum gives 2D/3,
    the shear D/3, and the pressure term carries the factor (2 - a).

    Limits.  Specular (a = 0): CD = 4D/3, diffuse cold wall: CD -> D.  As
    s -> infinity, e^-a I_n(a) = (1 - (4n^2 - 1)/(8a) + ...)/sqrt(2 pi a)
    (A&S 9.7.1, from memory) gives D = 2 + 3/(2 s^2) + O(s^-4), so
    CD -> 2 (2 - a)(2/3) + 2a/3 = (8 - 2a)/3: 2 for diffuse walls (the
    whole incident momentum rho U^2 through the frontal width d is
    absorbed, Newtonian-like), 8/3 for specular walls (int 2 cos^3 over
    the front, the Newtonian value with full reflection).
    """
    _require_positive(speed_ratio=speed_ratio, T_inf=T_inf, T_wall=T_wall)
    _require_accommodation(accommodation)
    s, a = float(speed_ratio), float(accommodation)
    D = _cylinder_D(s)
    wall = a * math.pi**1.5 * math.sqrt(T_wall / T_inf) / (4.0 * s)
    pressure = (2.0 - a) * 2.0 / 3.0 * D + wall
    friction = a * D / 3.0
    return Cylinder(CD=pressure + friction, CD_pressure=pressure, CD_friction=friction)


@dataclass(frozen=True)
class CylinderSurface:
    """Surface distributions on a cylinder (see the module conventions)."""

    theta: object              #: polar angle from the stagnation point, rad
    Cp: object                 #: (p - p_inf) / (rho U^2 / 2)
    Cf: object                 #: tau / (rho U^2 / 2), along the local drift
    Ch: object                 #: q / (rho U^3 / 2)
    number_flux_ratio: object  #: N / (n U)


def cylinder_surface(speed_ratio, T_inf, T_wall, theta, accommodation=1.0):
    """Cp, Cf, Ch and N/(nU) around a cylinder at polar angles ``theta``.

    ``theta`` (radians, scalar or array) is measured from the stagnation
    point, so the element there sees s_n = s cos(theta) and the tangential
    speed ratio s |sin theta|; the shear acts along the surface toward the
    rear on both halves.  Exact because a convex body in free-molecular flow
    receives only undisturbed freestream molecules (module docstring); the
    distributions are :func:`surface_element` divided as in
    :func:`coefficients`: Cp = 2 (p/(n m c_mp^2) - 1/2)/s^2, Cf = 2 tau/(n m
    c_mp^2 s^2), Ch = 2 q/(n m c_mp^3 s^3), N/(nU) = N/(n c_mp s).  The
    integrals over theta give :func:`cylinder` (tested).
    """
    _require_positive(speed_ratio=speed_ratio, T_inf=T_inf, T_wall=T_wall)
    _require_finite(theta=theta)
    _require_accommodation(accommodation)
    s = float(speed_ratio)
    theta = np.asarray(theta, dtype=float)
    flux, p, tau, q = _element(s * np.cos(theta), s * np.abs(np.sin(theta)),
                               T_wall / T_inf, float(accommodation))
    return CylinderSurface(
        theta=_scalar(theta),
        Cp=_scalar(2.0 * (p - 0.5) / s**2),
        Cf=_scalar(2.0 * tau / s**2),
        Ch=_scalar(2.0 * q / s**3),
        number_flux_ratio=_scalar(flux / s),
    )


# --- Plane channel: free-molecular transmission -----------------------------

#: Longest channel (L/H) the dense Nystrom solve accepts: 12 nodes per unit
#: length give a 3,600 x 3,600 matrix (100 MB, twice that while solving).
MAX_LENGTH_OVER_HEIGHT = 300.0

_GL12_T, _GL12_W = np.polynomial.legendre.leggauss(12)


@dataclass(frozen=True)
class ChannelSolution:
    """Solution of Clausing's equation for a plane slit channel.

    Lengths in units of the height H.  The inlet reservoir (x < 0) sends the
    one-sided flux Phi = n c_bar / 4 per unit area into the channel, the
    outlet (x > L/H) is a vacuum.  ``wall_flux`` is the number flux hitting
    (and re-emitted by) each plate at the nodes ``x``, divided by Phi.  With
    both reservoirs filled (fluxes Phi_in, Phi_out) the wall flux is, by
    linearity and the mirror symmetry, Phi_in nu(x) + Phi_out nu(L/H - x).
    """

    length_over_height: float
    transmission: float  #: W: fraction of the entering molecules leaving at the outlet
    backscatter: float   #: fraction returning to the inlet reservoir
    x: np.ndarray        #: Gauss-Legendre nodes along the channel, units of H
    weights: np.ndarray  #: their weights
    wall_flux: np.ndarray  #: nu(x), wall flux / Phi


def clausing_channel(length_over_height):
    """Free-molecular transmission of a plane channel by Clausing's equation.

    Geometry: two infinite parallel plates a distance H apart (y = 0, H),
    of length L (0 < x < L), infinite in z, diffusely reflecting, joining
    two reservoirs.  Returns :class:`ChannelSolution`.

    View factors (cosine law, Lambert/Knudsen).  Between area elements the
    3-D view factor is dF = cos(b1) cos(b2) dA2 / (pi R^2).  For two strips
    on opposite plates, at x and x' (r^2 = (x - x')^2 + H^2) and z' running
    over R^2 = r^2 + z'^2, cos(b1) = cos(b2) = H/R, so per unit length dx'
    of the receiving strip

      dF = dx' int H^2 dz' / (pi (r^2 + z'^2)^2) = H^2 dx' / (2 r^3),

    using int dz/(r^2 + z^2)^2 = pi/(2 r^3).  Integrating it over x' gives
    the strip-to-opening view factors: from a wall strip at x to the inlet
    opening F_in(x) = (1 - x/sqrt(x^2 + H^2))/2, to the outlet F_out(x) =
    (1 - (L - x)/sqrt((L - x)^2 + H^2))/2 (F_in + F_out + int dF = 1: a flat
    strip does not see its own plate).  Opening to opening (Hottel's crossed
    strings): F_io = (sqrt(L^2 + H^2) - L)/H.

    Clausing's integral equation.  Let Phi nu(x) be the flux hitting (and,
    in steady state, re-emitted diffusely from) the wall per unit area at
    x; it is the same on both plates by symmetry.  The inlet opening
    radiates like a diffuse surface of flux Phi (an isotropic reservoir), so
    by reciprocity (A1 F12 = A2 F21) the flux arriving at x from it is
    Phi F_in(x), and from the opposite plate int Phi nu(x') dF(x -> x'):

      nu(x) = F_in(x) + int_0^L nu(x') H^2 / (2 ((x - x')^2 + H^2)^(3/2)) dx'.

    The fraction of the entering flux Phi H leaving through the outlet is

      W = F_io + (2/H) int_0^L nu(x) F_out(x) dx,

    and through the inlet B = (2/H) int_0^L nu(x) F_in(x) dx; W + B = 1 is a
    check of the discretisation (the equation itself conserves molecules).

    Numerics: Nystrom on composite 12-point Gauss-Legendre panels no longer
    than H.  The kernel and F_in, F_out are analytic with their nearest
    complex singularities at distance H from the real axis, so on a panel of
    half-length h <= H/2 the rule converges like rho^-24 with rho =
    H/h + sqrt(H^2/h^2 + 1) >= 4.24, i.e. to rounding level.  The dense
    solve limits L/H to :data:`MAX_LENGTH_OVER_HEIGHT`.

    Limits: W(0) = 1; for short channels W = 1 - L/(2H) + O(L^2/H^2)
    (F_io = 1 - L/H + ..., nu ~ 1/2, F_out ~ 1/2); for long channels the wall
    flux becomes linear in x and W ~ (H/L) ln(L/H) (derived: a linear nu with
    slope -1/L carries the net flux (4/L) int_0^L d F_beyond(d) dd across a
    section, F_beyond(d) ~ H^2/(4 d^2) the view factor past distance d,
    which grows like ln(L/H); the same logarithm makes the free-molecular
    flow rate of an infinitely long plane channel diverge, Cercignani 1975,
    from memory).  No published table of W for the slit channel could be
    checked; the tests compare with an independent Monte Carlo count.
    """
    ell = float(length_over_height)
    if not (0.0 <= ell <= MAX_LENGTH_OVER_HEIGHT):
        raise ValueError(f"length_over_height must lie in [0, {MAX_LENGTH_OVER_HEIGHT}], "
                         f"got {length_over_height}")
    if ell == 0.0:
        empty = np.empty(0)
        return ChannelSolution(0.0, 1.0, 0.0, empty, empty, empty)
    panels = max(1, math.ceil(ell))
    edges = np.linspace(0.0, ell, panels + 1)
    half = 0.5 * np.diff(edges)
    mid = 0.5 * (edges[:-1] + edges[1:])
    x = (mid[:, None] + half[:, None] * _GL12_T).ravel()
    w = (half[:, None] * _GL12_W).ravel()
    # I - K W built in place: one N x N array besides the solver's copy
    a = np.subtract.outer(x, x)
    a *= a
    a += 1.0
    a **= -1.5
    a *= -0.5 * w
    a[np.diag_indices_from(a)] += 1.0
    f_in = 0.5 * (1.0 - x / np.sqrt(x * x + 1.0))
    f_out = 0.5 * (1.0 - (ell - x) / np.sqrt((ell - x) ** 2 + 1.0))
    nu = np.linalg.solve(a, f_in)
    f_io = math.sqrt(ell * ell + 1.0) - ell
    transmission = f_io + 2.0 * float(np.dot(w, nu * f_out))
    backscatter = 2.0 * float(np.dot(w, nu * f_in))
    return ChannelSolution(ell, transmission, backscatter, x, w, nu)


def channel_transmission(length_over_height):
    """Transmission probability W(L/H) of a plane slit channel (float).

    See :func:`clausing_channel`.
    """
    return clausing_channel(length_over_height).transmission


def free_molecular_channel_mass_flow(p_in, p_out, T, m, H, L):
    """Free-molecular mass flow through a plane channel, kg/(m s) per depth.

    mdot = W(L/H) H (p_in - p_out) sqrt(m / (2 pi k T)).  Each reservoir
    sends the one-sided flux n c_bar/4 = p/sqrt(2 pi m k T) molecules per
    unit area (standard kinetic theory); the fraction W of what enters
    through the opening of height H leaves at the other end, the same from
    either end (the channel is mirror-symmetric), and without collisions the
    two streams superpose.  Both reservoirs at temperature ``T`` (K).
    """
    _require_positive(p_in=p_in, p_out=p_out, T=T, m=m, H=H)
    if not L >= 0.0:
        raise ValueError(f"L must be non-negative, got {L}")
    W = channel_transmission(L / H)
    return W * H * (p_in - p_out) * math.sqrt(m / (2.0 * math.pi * K_B * T))


# --- Plane channel: slip flow -----------------------------------------------

def _slip_channel_constants(p_in, p_out, T, m, H, L, viscosity, slip_coefficient):
    _require_positive(p_in=p_in, p_out=p_out, T=T, m=m, H=H, L=L, viscosity=viscosity)
    sigma = (_limits.slip_coefficient(1.0, "hard_sphere")
             if slip_coefficient is None else float(slip_coefficient))
    if sigma < 0.0:
        raise ValueError(f"slip_coefficient must be non-negative, got {slip_coefficient}")
    v0 = math.sqrt(2.0 * K_B * T / m)
    b = 6.0 * sigma * viscosity * v0 / H
    c = m * H**3 / (12.0 * viscosity * K_B * T)
    return b, c


def slip_channel_mass_flow(p_in, p_out, T, m, H, L, viscosity, slip_coefficient=None):
    """Mass flow per unit depth (kg/(m s)) of slip flow in a long plane channel.

    Isothermal (``T``, K), compressible, pressure-driven flow between
    parallel plates a distance ``H`` apart, length ``L`` >> H, gas viscosity
    ``viscosity`` (Pa s) at T, molecular mass ``m``.  ``slip_coefficient``
    sigma_P refers to the equivalent free path ell = mu sqrt(2kT/m)/p
    (:func:`dsmc.analysis.limits.equivalent_free_path`); the default None
    takes the diffuse hard-sphere value of
    :func:`dsmc.analysis.limits.slip_coefficient` (0.98737); 0 gives the
    no-slip result.

    Derivation.  Locally (lubrication approximation: H/L << 1, low Reynolds
    number, inertia neglected) the profile is plane Poiseuille flow with
    G = -dp/dx: u(y) = G y (H - y)/(2 mu) + u_s.  The slip condition at
    each wall, u_s = sigma_P ell du/dn with n into the gas, gives u_s =
    sigma_P ell G H/(2 mu).  The volume flow per depth is

      Q = G H^3/(12 mu) + u_s H = (G H^3/(12 mu)) (1 + 6 sigma_P ell/H),

    and with rho = p m/(kT), ell = mu v0/p, v0 = sqrt(2kT/m):

      mdot = rho Q = -(m H^3/(12 mu k T)) (p + b) dp/dx,  b = 6 sigma_P mu v0/H.

    mdot is the same at every x (steady), so (p + b)^2 falls linearly in x
    and integrating from p_in at x = 0 to p_out at x = L:

      mdot = (m H^3/(24 mu k T L)) [(p_in^2 - p_out^2) + 2 b (p_in - p_out)]
           = (H^3 m (p_in^2 - p_out^2)/(24 mu k T L))
             [1 + 12 sigma_P mu v0 / (H (p_in + p_out))].

    The slip term is 12 sigma_P Kn_out/(P + 1) with Kn_out = ell(p_out)/H
    and P = p_in/p_out, which is the form usually attributed to Arkilic,
    Schmidt & Breuer (1997) (from memory; they write it with Maxwell's free
    path, (2 - alpha)/alpha lambda = sigma_P ell for Maxwell's slip).
    """
    b, c = _slip_channel_constants(p_in, p_out, T, m, H, L, viscosity, slip_coefficient)
    return c / (2.0 * L) * ((p_in - p_out) * (p_in + p_out + 2.0 * b))


def no_slip_channel_mass_flow(p_in, p_out, T, m, H, L, viscosity):
    """No-slip limit of :func:`slip_channel_mass_flow`:
    mdot = H^3 m (p_in^2 - p_out^2)/(24 mu k T L), kg/(m s)."""
    return slip_channel_mass_flow(p_in, p_out, T, m, H, L, viscosity, slip_coefficient=0.0)


def slip_channel_pressure(p_in, p_out, T, m, H, L, viscosity, x, slip_coefficient=None):
    """Pressure p(x) along the channel of :func:`slip_channel_mass_flow`, Pa.

    From the same derivation, (p + b)^2 is linear in x:
    p(x) = -b + sqrt((p_in + b)^2 - ((p_in + b)^2 - (p_out + b)^2) x/L),
    b = 6 sigma_P mu sqrt(2kT/m)/H (b = 0: no slip).  ``x`` in [0, L].
    """
    b, _ = _slip_channel_constants(p_in, p_out, T, m, H, L, viscosity, slip_coefficient)
    x = np.asarray(x, dtype=float)
    if np.any((x < 0.0) | (x > L)):
        raise ValueError("x must lie in [0, L]")
    a_in, a_out = (p_in + b) ** 2, (p_out + b) ** 2
    return _scalar(np.sqrt(a_in - (a_in - a_out) * x / L) - b)
