"""Checks of dsmc.analysis.free_molecular: surface fluxes, bodies, channels.

Every reference names its source.  "derived" means derived in the docstring
of the function under test and checked here by a different route (scipy
quadrature, an ODE solver, a Monte Carlo count); "from memory" marks a
textbook form recalled and not verified.  Gas data are argon-like and
illustrative: m = 39.948 u; any positive values exercise the same code.
"""

import math

import numpy as np
import pytest
import scipy.special
import scipy.stats
from scipy.integrate import quad, solve_ivp

from dsmc.analysis import free_molecular as fm
from dsmc.analysis import limits
from dsmc.analysis.limits import K_B

M_AR = 39.948 * 1.66053906892e-27
SQRT_PI = math.sqrt(math.pi)


# The house rule (no numba, scipy or engine import) is checked for this
# module by tests/test_limits.py::test_module_is_pure_numpy.


def test_package_name_is_the_module_and_couette_solution_stays_in_limits():
    import dsmc.analysis
    assert dsmc.analysis.free_molecular is fm
    assert callable(limits.free_molecular)


# --- half-range moments and the surface element -----------------------------

@pytest.mark.parametrize("s", [-8.0, -4.0, -1.0, 0.0, 0.5, 2.0, 5.0])
def test_half_range_moments_against_quadrature(s):
    # Reference: the defining integrals by scipy quad (relative tolerance
    # 1e-13).  For s < 0 the closed forms cancel; the docstring's bound is
    # about (1 + s^2)^k 1e-16 (3e-11 for M3 at s = -8), tested with a
    # factor 10 margin.
    got = fm.half_range_moments(s)
    for k in range(4):
        ref = quad(lambda x: x**k * math.exp(-(x - s) ** 2), 0.0, max(0.0, s) + 12.0,
                   epsabs=0.0, epsrel=1e-13, limit=200)[0]
        assert got[k] == pytest.approx(ref, rel=1e-13 + 1e-15 * (1.0 + s * s) ** k)


def test_half_range_moments_broadcast_over_arrays():
    s = np.array([[-1.0, 0.0], [1.0, 3.0]])
    m = fm.half_range_moments(s)
    assert all(v.shape == (2, 2) for v in m)
    assert m[2][1, 1] == pytest.approx(fm.half_range_moments(3.0)[2], rel=1e-15)


@pytest.mark.parametrize("alpha", [0.0, 0.4, 1.0])
def test_equilibrium_element_gives_nkT_and_no_shear_or_heat(alpha):
    # Standard kinetic theory: a wall in equilibrium with a gas at rest
    # feels p = n k T, no shear, no net energy; the one-sided number flux is
    # n c_bar/4 = n sqrt(kT/(2 pi m)), with c_bar the mean of the Maxwell
    # speed distribution (scipy.stats.maxwell, scale sqrt(kT/m)).
    n, T = 3.0e20, 273.0
    e = fm.surface_element(n, T, M_AR, 0.0, 0.0, T, alpha)
    assert e.pressure == pytest.approx(n * K_B * T, rel=1e-14)
    assert e.shear_stress == 0.0
    assert abs(e.heat_flux) < 1e-14 * n * K_B * T * math.sqrt(K_B * T / M_AR)
    c_bar = scipy.stats.maxwell(scale=math.sqrt(K_B * T / M_AR)).mean()
    assert e.number_flux == pytest.approx(n * c_bar / 4.0, rel=1e-12)
    assert e.number_flux == pytest.approx(n * math.sqrt(K_B * T / (2 * math.pi * M_AR)),
                                          rel=1e-14)


def _incident_by_quadrature(n, T, m, un, ut):
    """Incident number, normal-momentum and energy fluxes by scipy quad.

    The drifting Maxwellian factorises: w (toward the wall) has the density
    n/(sqrt(pi) c) exp(-((w - un)/c)^2); the two tangential components carry
    the mean energy m ut^2/2 + kT per molecule (standard kinetic theory).
    """
    c = math.sqrt(2 * K_B * T / m)
    f = lambda w: n / (SQRT_PI * c) * math.exp(-((w - un) / c) ** 2)
    top = max(0.0, un) + 12 * c
    opts = dict(epsabs=0.0, epsrel=1e-13, limit=200)
    N = quad(lambda w: w * f(w), 0.0, top, **opts)[0]
    P = quad(lambda w: m * w * w * f(w), 0.0, top, **opts)[0]
    E = quad(lambda w: w * f(w) * (0.5 * m * w * w), 0.0, top, **opts)[0] \
        + N * (0.5 * m * ut * ut + K_B * T)
    return N, P, E


@pytest.mark.parametrize("un,ut", [(400.0, 250.0), (-300.0, 500.0), (0.0, 800.0),
                                   (3000.0, 100.0)])
def test_element_against_quadrature_with_maxwell_reemission(un, ut):
    # Reference: incident fluxes by quadrature (above) and Maxwell's wall
    # model written out directly: diffuse part returns a N at T_wall with
    # normal momentum m sqrt(pi) c_w/2 and energy 2 k T_wall per molecule
    # (flux-weighted half-Maxwellian), specular part reverses w.
    n, T, Tw, a = 1.0e20, 300.0, 500.0, 0.7
    N, P, E = _incident_by_quadrature(n, T, M_AR, un, ut)
    cw = math.sqrt(2 * K_B * Tw / M_AR)
    e = fm.surface_element(n, T, M_AR, un, ut, Tw, a)
    assert e.number_flux == pytest.approx(N, rel=1e-12)
    assert e.pressure == pytest.approx(P + (1 - a) * P + a * N * M_AR * SQRT_PI * cw / 2,
                                       rel=1e-12)
    assert e.shear_stress == pytest.approx(a * M_AR * ut * N, rel=1e-12)
    assert e.heat_flux == pytest.approx(a * (E - 2 * K_B * Tw * N), rel=1e-11)


def test_specular_element_doubles_normal_momentum_without_shear_or_heat():
    n, T, un, ut = 1.0e20, 300.0, 250.0, 400.0
    _, P, _ = _incident_by_quadrature(n, T, M_AR, un, ut)
    e = fm.surface_element(n, T, M_AR, un, ut, 900.0, accommodation=0.0)
    assert e.pressure == pytest.approx(2 * P, rel=1e-12)
    assert e.shear_stress == 0.0 and e.heat_flux == 0.0


def test_element_hypersonic_limit_is_newtonian():
    # Hand: for un >> c_mp every molecule moves at u toward the wall, so
    # N -> n un and the incident normal momentum flux -> n m un^2; a diffuse
    # wall absorbs it (re-emission ~ c_w/un) and the shear -> n m un ut.
    n, T = 1.0e20, 300.0
    c = math.sqrt(2 * K_B * T / M_AR)
    un, ut = 200 * c, 50 * c
    e = fm.surface_element(n, T, M_AR, un, ut, 1e-6, 1.0)
    assert e.number_flux == pytest.approx(n * un, rel=1e-4)
    assert e.pressure == pytest.approx(n * M_AR * un**2, rel=1e-4)
    assert e.shear_stress == pytest.approx(n * M_AR * un * ut, rel=1e-4)


def test_coefficients_match_textbook_forms():
    # Bird (1994) ch. 7 free-molecular element, from memory, with
    # S = s sin(theta), theta the angle between the drift and the surface:
    #   p/(rho U^2/2) = (1/s^2){[(2-a) S/sqrt(pi) + (a/2) sqrt(Tw/T)] e^{-S^2}
    #                 + [(2-a)(S^2 + 1/2) + (a/2) sqrt(pi Tw/T) S](1 + erf S)},
    #   tau/(rho U^2/2) = (a cos(theta)/(sqrt(pi) s)){e^{-S^2} + sqrt(pi) S (1 + erf S)}.
    # Our Cp subtracts p_inf: Cp = p/(rho U^2/2) - 1/s^2.
    n, T, Tw, a, s = 1.0e20, 300.0, 600.0, 0.8, 2.5
    c = math.sqrt(2 * K_B * T / M_AR)
    U = s * c
    for theta in (-0.7, 0.0, 0.4, 1.2, math.pi / 2):
        S = s * math.sin(theta)
        e = fm.surface_element(n, T, M_AR, U * math.sin(theta), U * math.cos(theta), Tw, a)
        co = fm.coefficients(e, n, T, M_AR, U)
        book_p = ((((2 - a) * S / SQRT_PI + 0.5 * a * math.sqrt(Tw / T)) * math.exp(-S * S)
                   + ((2 - a) * (S * S + 0.5) + 0.5 * a * math.sqrt(math.pi * Tw / T) * S)
                   * (1 + math.erf(S))) / s**2)
        book_t = a * math.cos(theta) / (SQRT_PI * s) * (
            math.exp(-S * S) + SQRT_PI * S * (1 + math.erf(S)))
        assert co.Cp + 1 / s**2 == pytest.approx(book_p, rel=1e-13)
        assert co.Cf == pytest.approx(book_t, rel=1e-13, abs=1e-16)
        assert co.number_flux_ratio == pytest.approx(e.number_flux / (n * U), rel=1e-15)
        assert co.Ch == pytest.approx(e.heat_flux / (0.5 * n * M_AR * U**3), rel=1e-14)


def test_bad_arguments_raise():
    with pytest.raises(ValueError):
        fm.surface_element(-1.0, 300.0, M_AR, 0.0, 0.0, 300.0)
    with pytest.raises(ValueError):
        fm.surface_element(1e20, 300.0, M_AR, 0.0, 0.0, 300.0, accommodation=1.5)
    with pytest.raises(ValueError):
        fm.flat_plate(0.0, 0.1, 300.0, 300.0)
    with pytest.raises(ValueError):
        fm.channel_transmission(fm.MAX_LENGTH_OVER_HEIGHT * 2)
    with pytest.raises(ValueError):
        fm.scaled_bessel_i(0, -1.0)


# --- flat plate -------------------------------------------------------------

@pytest.mark.parametrize("s,A,a,tw", [(0.3, 0.2, 1.0, 1.0), (2.0, 0.5, 0.6, 3.0),
                                      (5.0, -0.4, 1.0, 0.5), (8.0, 1.3, 0.0, 1.0),
                                      (1.0, 0.0, 0.85, 2.0)])
def test_flat_plate_closed_form_equals_two_surface_elements(s, A, a, tw):
    # Reference: the two faces of surface_element (itself checked against
    # quadrature above) resolved into drag and lift by hand geometry:
    # windward normal force along (sin A, cos A), shears along (cos A, -sin A).
    n, T = 1.0e20, 300.0
    U = s * math.sqrt(2 * K_B * T / M_AR)
    wind = fm.surface_element(n, T, M_AR, U * math.sin(A), U * math.cos(A), tw * T, a)
    lee = fm.surface_element(n, T, M_AR, -U * math.sin(A), U * math.cos(A), tw * T, a)
    dyn = 0.5 * n * M_AR * U**2
    dp, tau = wind.pressure - lee.pressure, wind.shear_stress + lee.shear_stress
    plate = fm.flat_plate(s, A, T, tw * T, a)
    assert plate.CD == pytest.approx((dp * math.sin(A) + tau * math.cos(A)) / dyn, rel=1e-12)
    assert plate.CL == pytest.approx((dp * math.cos(A) - tau * math.sin(A)) / dyn,
                                     rel=1e-11, abs=1e-14)
    assert plate.Ch == pytest.approx((wind.heat_flux + lee.heat_flux) / (dyn * U),
                                     rel=1e-12, abs=1e-15)


@pytest.mark.parametrize("s,A,tw", [(0.5, 0.3, 1.0), (3.0, 0.7, 0.4), (10.0, 1.5, 2.0)])
def test_flat_plate_diffuse_matches_textbook_closed_form(s, A, tw):
    # Bird (1994) ch. 7 and Schaaf & Chambre (1958), diffuse plate, from memory:
    # CD = 2 e^{-S^2}/(sqrt(pi) s) + (sin A/s^2)(1 + 2 s^2) erf S
    #      + (sqrt(pi)/s) sin^2 A sqrt(Tw/T),
    # CL = (cos A/s^2) erf S + (sqrt(pi)/s) sin A cos A sqrt(Tw/T).
    S = s * math.sin(A)
    CD = (2 * math.exp(-S * S) / (SQRT_PI * s) + math.sin(A) / s**2 * (1 + 2 * s * s)
          * math.erf(S) + SQRT_PI / s * math.sin(A) ** 2 * math.sqrt(tw))
    CL = (math.cos(A) / s**2 * math.erf(S)
          + SQRT_PI / s * math.sin(A) * math.cos(A) * math.sqrt(tw))
    plate = fm.flat_plate(s, A, 300.0, tw * 300.0)
    assert plate.CD == pytest.approx(CD, rel=1e-13)
    assert plate.CL == pytest.approx(CL, rel=1e-12)


def test_flat_plate_limits_and_symmetry():
    # Zero incidence, derived: pure skin friction CD = 2a/(sqrt(pi) s), CL = 0.
    for a in (1.0, 0.5):
        p = fm.flat_plate(3.0, 0.0, 300.0, 300.0, a)
        assert p.CD == pytest.approx(2 * a / (SQRT_PI * 3.0), rel=1e-14)
        assert p.CL == 0.0
    # Symmetry: CD even, CL odd in the incidence.
    up = fm.flat_plate(2.0, 0.4, 300.0, 500.0, 0.7)
    down = fm.flat_plate(2.0, -0.4, 300.0, 500.0, 0.7)
    assert down.CD == pytest.approx(up.CD, rel=1e-14)
    assert down.CL == pytest.approx(-up.CL, rel=1e-14)
    # Hypersonic (Newtonian-like) limit, derived in flat_plate's docstring:
    # CD -> 2 sin A [(2 - a) sin^2 A + a cos^2 A], CL -> 4 (1 - a) sin^2 A cos A,
    # with O(1/s) corrections from the diffuse re-emission.
    A = 0.5
    for a in (0.0, 0.3, 1.0):
        p = fm.flat_plate(1.0e5, A, 300.0, 300.0, a)
        sA, cA = math.sin(A), math.cos(A)
        assert p.CD == pytest.approx(2 * sA * ((2 - a) * sA**2 + a * cA**2), rel=1e-4)
        assert p.CL == pytest.approx(4 * (1 - a) * sA**2 * cA, abs=1e-4)


# --- Bessel functions and the cylinder --------------------------------------

def test_scaled_bessel_against_scipy():
    # Reference: scipy.special.ive (exponentially scaled I_n).
    x = np.concatenate([np.logspace(-8, 6, 300), np.linspace(1.9, 2.1, 21), [0.0]])
    for order in (0, 1, 2, 5):
        got = fm.scaled_bessel_i(order, x)
        np.testing.assert_allclose(got, scipy.special.ive(order, x), rtol=1e-13, atol=0)
    assert isinstance(fm.scaled_bessel_i(1, 3.0), float)


@pytest.mark.parametrize("s", [0.1, 1.0, 3.0, 10.0, 40.0])
@pytest.mark.parametrize("a", [1.0, 0.3, 0.0])
def test_cylinder_closed_form_equals_quadrature_of_surface(s, a):
    # Reference: CD = int_0^pi [Cp cos(theta) + Cf sin(theta)] dtheta of
    # cylinder_surface (i.e. of surface_element) by scipy quad; the pressure
    # and friction parts separately.
    T, Tw = 300.0, 500.0
    cyl = fm.cylinder(s, T, Tw, a)
    opts = dict(epsabs=0.0, epsrel=1e-12, limit=200)
    P = quad(lambda t: fm.cylinder_surface(s, T, Tw, t, a).Cp * math.cos(t), 0, math.pi, **opts)[0]
    F = quad(lambda t: fm.cylinder_surface(s, T, Tw, t, a).Cf * math.sin(t), 0, math.pi, **opts)[0]
    assert cyl.CD == pytest.approx(P + F, rel=1e-8)
    assert cyl.CD_pressure == pytest.approx(P, rel=1e-8)
    assert cyl.CD_friction == pytest.approx(F, rel=1e-8, abs=1e-15)


@pytest.mark.parametrize("s,tw", [(0.2, 1.0), (1.0, 1.0), (2.0, 0.3), (6.0, 4.0)])
def test_cylinder_diffuse_matches_textbook_form_with_scipy_bessel(s, tw):
    # Bird (1994) ch. 7; Schaaf & Chambre (1958); from memory:
    # CD = (sqrt(pi)/s) e^{-s^2/2}[(s^2 + 3/2) I0(s^2/2) + (s^2 + 1/2) I1(s^2/2)]
    #      + (pi^{3/2}/(4 s)) sqrt(Tw/T), evaluated with scipy.special.ive.
    x = s * s / 2
    ref = (SQRT_PI / s * ((s * s + 1.5) * scipy.special.ive(0, x)
                          + (s * s + 0.5) * scipy.special.ive(1, x))
           + math.pi**1.5 / (4 * s) * math.sqrt(tw))
    assert fm.cylinder(s, 300.0, tw * 300.0).CD == pytest.approx(ref, rel=1e-13)


def test_cylinder_hypersonic_limits():
    # Derived in cylinder's docstring from e^-x I_n(x) ~ (1 - (4n^2-1)/(8x))
    # /sqrt(2 pi x) (Abramowitz & Stegun 9.7.1, from memory): diffuse
    # CD = 2 + pi^{3/2} sqrt(Tw/T)/(4s) + 3/(2 s^2) + O(s^-4); Newtonian
    # values 2 (absorbed momentum) and 8/3 (specular: int 2 cos^3 over the front).
    for s in (30.0, 100.0):
        c = fm.cylinder(s, 300.0, 300.0)
        rest = c.CD - 2.0 - math.pi**1.5 / (4 * s)
        assert rest * s * s == pytest.approx(1.5, abs=5.0 / s**2)
    assert fm.cylinder(1e4, 300.0, 300.0, 0.0).CD == pytest.approx(8 / 3, rel=1e-7)
    assert fm.cylinder(1e4, 300.0, 300.0, 0.5).CD == pytest.approx(7 / 3, rel=1e-3)


def test_cylinder_surface_stagnation_and_shadow():
    # Hand: at large s the stagnation element absorbs rho U^2 (diffuse):
    # Cp(0) -> 2; the number flux ratio -> cos(theta) on the front and 0
    # behind; a specular stagnation point has Cp -> 4.
    th = np.array([0.0, 0.5, 1.2, 2.5, math.pi])
    surf = fm.cylinder_surface(200.0, 300.0, 300.0, th)
    assert surf.Cp[0] == pytest.approx(2.0, rel=1e-2)
    np.testing.assert_allclose(surf.number_flux_ratio[:3], np.cos(th[:3]), rtol=1e-3)
    assert np.all(surf.number_flux_ratio[3:] < 1e-300 + 1e-12)
    assert fm.cylinder_surface(200.0, 300.0, 300.0, 0.0, 0.0).Cp == pytest.approx(4.0, rel=1e-3)
    # Symmetry: theta and -theta give the same distributions.
    a, b = fm.cylinder_surface(2.0, 300.0, 400.0, 0.7), fm.cylinder_surface(2.0, 300.0, 400.0, -0.7)
    assert (a.Cp, a.Cf, a.Ch) == (b.Cp, b.Cf, b.Ch)


# --- plane channel: free-molecular transmission -----------------------------

def test_strip_view_factor_is_the_cosine_law_integrated_over_z():
    # Reference: 3-D view factor cos b1 cos b2/(pi R^2) per area (cosine law)
    # integrated over z by quad; and the three strip view factors add to 1.
    H, L = 1.0, 3.0
    for d in (0.0, 0.4, 2.5):
        r2 = d * d + H * H
        ref = 2 * quad(lambda z: H * H / (math.pi * (r2 + z * z) ** 2), 0, np.inf,
                       epsabs=0, epsrel=1e-13)[0]
        assert ref == pytest.approx(H * H / (2 * r2**1.5), rel=1e-12)
    for x in (0.0, 0.7, 2.9):
        opposite = quad(lambda xp: H * H / (2 * ((x - xp) ** 2 + H * H) ** 1.5), 0, L,
                        epsabs=0, epsrel=1e-13)[0]
        f_in = 0.5 * (1 - x / math.hypot(x, H))
        f_out = 0.5 * (1 - (L - x) / math.hypot(L - x, H))
        assert f_in + f_out + opposite == pytest.approx(1.0, rel=1e-13)


def test_channel_limits_conservation_and_symmetry():
    assert fm.channel_transmission(0.0) == 1.0
    # Short channels, derived: W = 1 - (L/H)/2 + O((L/H)^2).
    for ell in (1e-3, 1e-2):
        assert (1 - fm.channel_transmission(ell)) / ell == pytest.approx(0.5, abs=ell)
    Ws = [fm.channel_transmission(ell) for ell in (0.1, 0.5, 1, 2, 5, 10, 20)]
    assert all(a > b for a, b in zip(Ws, Ws[1:]))
    for ell in (0.3, 1.0, 7.5, 40.0):
        sol = fm.clausing_channel(ell)
        # Conservation: every entering molecule leaves at one end.
        assert sol.transmission + sol.backscatter == pytest.approx(1.0, abs=1e-13)
        # Equilibrium by superposition: both reservoirs equal -> uniform wall flux.
        np.testing.assert_allclose(sol.wall_flux + sol.wall_flux[::-1], 1.0, atol=1e-13)
    # Long channels, derived: W ~ (H/L) ln(L/H); W L/H - ln(L/H) stays O(0.1).
    for ell in (20.0, 50.0, 100.0):
        excess = fm.channel_transmission(ell) * ell - math.log(ell)
        assert 0.0 < excess < 0.2


def _monte_carlo_transmission(ell, count, seed):
    """Count molecules through a slit channel of length ell (units of H).

    Independent of the integral equation: molecules enter at x = 0 with
    uniform y and a 3-D cosine-law direction about +x, fly straight to a
    plate (only the in-plane components matter) and are re-emitted there
    with a cosine-law direction about the plate normal, until they leave.
    """
    rng = np.random.default_rng(seed)
    y = rng.random(count)
    x = np.zeros(count)
    cos_t = np.sqrt(rng.random(count))
    dx = cos_t
    dy = np.sqrt(1 - cos_t**2) * np.cos(2 * np.pi * rng.random(count))
    through = back = 0
    while x.size:
        wall = np.where(dy > 0, 1.0, 0.0)
        xn = x + (wall - y) / dy * dx
        out_f, out_b = xn >= ell, xn <= 0.0
        through += int(out_f.sum())
        back += int(out_b.sum())
        keep = ~(out_f | out_b)
        x, y = xn[keep], wall[keep]
        cos_t = np.sqrt(rng.random(x.size))
        dx = np.sqrt(1 - cos_t**2) * np.cos(2 * np.pi * rng.random(x.size))
        dy = np.where(y == 1.0, -cos_t, cos_t)
    assert through + back == count
    return through / count


@pytest.mark.parametrize("ell,seed", [(1.0, 11), (5.0, 12)])
def test_channel_transmission_against_monte_carlo(ell, seed):
    # Reference: the direct simulation above, 2e5 molecules, fixed seed;
    # tolerance 4 binomial standard errors (about 0.4 %).
    count = 200_000
    W = fm.channel_transmission(ell)
    se = math.sqrt(W * (1 - W) / count)
    assert se < 1.2e-3
    assert abs(_monte_carlo_transmission(ell, count, seed) - W) < 4 * se


def test_free_molecular_channel_mass_flow():
    # Reference: effusion flux n c_bar/4 per unit area from each reservoir
    # (standard kinetic theory; c_bar from scipy.stats.maxwell), times m, the
    # opening H and the transmission W.
    T, H, L, p1, p2 = 300.0, 1e-3, 4e-3, 2.0, 0.5
    c_bar = scipy.stats.maxwell(scale=math.sqrt(K_B * T / M_AR)).mean()
    W = fm.channel_transmission(L / H)
    ref = W * H * M_AR * c_bar / 4 * (p1 - p2) / (K_B * T)
    got = fm.free_molecular_channel_mass_flow(p1, p2, T, M_AR, H, L)
    assert got == pytest.approx(ref, rel=1e-12)
    assert fm.free_molecular_channel_mass_flow(p1, p1, T, M_AR, H, L) == 0.0


# --- plane channel: slip flow -----------------------------------------------

MU_AR = 2.2e-5   # Pa s, illustrative (argon near 300 K, from memory)


def test_slip_mass_flow_against_ode_integration_of_the_local_law():
    # Reference: solve_ivp of dp/dx = -mdot / [(m H^3/(12 mu k T))(p + 6 sigma
    # mu v0/H)], the local slip-Poiseuille law with the volume flow
    # Q = int_0^H u dy computed by quad from u = G y (H - y)/(2 mu) + u_s;
    # the closed-form mdot must carry p_in at x = 0 to p_out at x = L.
    T, H, L, p1, p2, sigma = 300.0, 2e-6, 2e-4, 3.0e5, 1.0e5, 1.1
    v0 = math.sqrt(2 * K_B * T / M_AR)
    mdot = fm.slip_channel_mass_flow(p1, p2, T, M_AR, H, L, MU_AR, sigma)

    def local_mdot(p, G):
        ell = MU_AR * v0 / p
        u_s = sigma * ell * G * H / (2 * MU_AR)
        Q = quad(lambda y: G * y * (H - y) / (2 * MU_AR) + u_s, 0, H, epsabs=0, epsrel=1e-13)[0]
        return p * M_AR / (K_B * T) * Q

    # the local law is linear in G: G = mdot / local_mdot(p, 1)
    x = np.linspace(0, L, 5)
    sol = solve_ivp(lambda _, p: [-mdot / local_mdot(p[0], 1.0)], (0, L), [p1],
                    t_eval=x, rtol=1e-12, atol=1e-6)
    assert sol.y[0, -1] == pytest.approx(p2, rel=1e-9)
    np.testing.assert_allclose(fm.slip_channel_pressure(p1, p2, T, M_AR, H, L, MU_AR, x, sigma),
                               sol.y[0], rtol=1e-9)


def test_slip_mass_flow_forms_and_limits():
    T, H, L, p2 = 300.0, 2e-6, 2e-4, 1.0e5
    P = 2.5
    p1 = P * p2
    v0 = math.sqrt(2 * K_B * T / M_AR)
    # No slip, derived: H^3 m (p1^2 - p2^2)/(24 mu k T L).
    ns = H**3 * M_AR * (p1**2 - p2**2) / (24 * MU_AR * K_B * T * L)
    got = fm.no_slip_channel_mass_flow(p1, p2, T, M_AR, H, L, MU_AR)
    assert got == pytest.approx(ns, rel=1e-14)
    # Arkilic, Schmidt & Breuer (1997), from memory:
    # mdot = H^3 p_o^2/(24 mu R T L) [(P^2 - 1) + 12 (2 - a)/a Kn_o (P - 1)],
    # Kn_o = lambda_o/H with Maxwell's lambda = (mu/p) sqrt(pi R T/2), R = k/m;
    # here in kg/(m s) per unit depth with the matching sigma_P (limits).
    for a in (1.0, 0.8):
        R = K_B / M_AR
        kn_o = MU_AR / p2 * math.sqrt(math.pi * R * T / 2) / H
        ref = H**3 * p2**2 / (24 * MU_AR * R * T * L) * (
            (P**2 - 1) + 12 * (2 - a) / a * kn_o * (P - 1))
        got = fm.slip_channel_mass_flow(p1, p2, T, M_AR, H, L, MU_AR,
                                        limits.maxwell_slip_coefficient(a))
        assert got == pytest.approx(ref, rel=1e-13)
    # Default slip coefficient: the diffuse hard-sphere sigma_P of limits.
    assert fm.slip_channel_mass_flow(p1, p2, T, M_AR, H, L, MU_AR) == pytest.approx(
        fm.slip_channel_mass_flow(p1, p2, T, M_AR, H, L, MU_AR, limits.slip_coefficient(1.0)),
        rel=1e-15)
    # Small pressure drop: incompressible plane Poiseuille with slip,
    # rho H^3 dp/(12 mu L)(1 + 6 sigma ell/H) (plane Poiseuille flow, e.g.
    # White, Viscous Fluid Flow, from memory; slip term derived).
    pm, dp, sigma = 1.0e5, 1.0, 1.0
    ell = MU_AR * v0 / pm
    ref = pm * M_AR / (K_B * T) * H**3 * dp / (12 * MU_AR * L) * (1 + 6 * sigma * ell / H)
    got = fm.slip_channel_mass_flow(pm + dp / 2, pm - dp / 2, T, M_AR, H, L, MU_AR, sigma)
    assert got == pytest.approx(ref, rel=1e-12)
    # Reversed pressures reverse the flow.
    assert fm.slip_channel_mass_flow(p2, p1, T, M_AR, H, L, MU_AR) == pytest.approx(
        -fm.slip_channel_mass_flow(p1, p2, T, M_AR, H, L, MU_AR), rel=1e-15)
