"""Gas data layer: constants, species table, kinetic-theory formulas.

The outside reference for transport properties is CoolProp's dilute-gas
correlations (reference keys reported by CoolProp.get_BibTeXKey): argon and
nitrogen viscosity and conductivity by Lemmon & Jacobsen (2004), Int. J.
Thermophys. 25, 21; helium viscosity by Arp, McCarty & Friend (1998), NIST
Technical Note 1334; helium conductivity by Hands & Arp (1981), Cryogenics.
"""

import math

import numpy as np
import pytest
import CoolProp.CoolProp as CoolProp
import scipy.constants
from scipy.integrate import quad

from dsmc.errors import UnknownNameError, UserError
from dsmc.gas import (
    AMU,
    K_B,
    MODELS,
    SPECIES,
    collision_rate,
    conductivity,
    equivalent_free_path,
    gas_summary,
    get_species,
    knudsen,
    mean_collision_time,
    mean_free_path,
    mean_speed,
    most_probable_speed,
    number_density,
    pair_constants,
    pressure,
    rms_speed,
    vhs_cross_section,
    viscosity,
    viscosity_mean_free_path,
)

COOLPROP_NAME = {"Ar": "Argon", "N2": "Nitrogen", "He": "Helium"}
P_ATM = 101325.0  # Pa, standard atmosphere (definition)


# --- constants ---------------------------------------------------------------

def test_constants_match_codata():
    assert K_B == scipy.constants.k  # exact since the 2019 SI
    assert AMU == pytest.approx(
        scipy.constants.physical_constants["atomic mass constant"][0], rel=1e-10)


# --- species table -------------------------------------------------------------

# Viscosity coefficients at 273 K, 1e-5 Pa s, that the VHS diameters were fitted
# to: Bird (1994), App. A, Table A1, from memory.
BIRD_MU_REF = {"He": 1.865, "Ne": 2.975, "Ar": 2.117, "Kr": 2.328, "Xe": 2.107,
               "H2": 0.845, "N2": 1.656, "O2": 1.919, "air": 1.719,
               "CO2": 1.380, "CH4": 1.024}


def test_registry_has_required_gases():
    required = {"Ar", "He", "Ne", "Kr", "Xe", "N2", "O2", "air", "CO2", "H2", "CH4"}
    assert required <= set(SPECIES)
    for name, sp in SPECIES.items():
        assert sp.name == name
        assert sp.T_ref == 273.0  # Bird (1994) Table A1 reference, from memory
        assert "memory" in sp.source
        assert sp.rot_dof in (0, 2, 3)
        assert (sp.rot_dof == 0) == (sp.vib_dof_char_T == ()) == (sp.Z_rot == 0.0)


@pytest.mark.parametrize("name", sorted(BIRD_MU_REF))
def test_vhs_diameter_reproduces_table_viscosity(name):
    # Three-figure diameters give mu_ref to +-0.4 %; 0.8 % allows for the
    # IUPAC masses used instead of Bird's rounded ones.
    sp = SPECIES[name]
    assert viscosity(sp, sp.T_ref, "vhs") == pytest.approx(
        BIRD_MU_REF[name] * 1e-5, rel=8e-3)


@pytest.mark.parametrize("name", sorted(SPECIES))
def test_vss_and_vhs_rows_give_the_same_viscosity(name):
    # Both rows of Bird's table are fitted to one viscosity; 1 % covers
    # three-figure rounding of both diameters (common practice).
    sp = SPECIES[name]
    assert viscosity(sp, 300.0, "vss") == pytest.approx(
        viscosity(sp, 300.0, "vhs"), rel=1e-2)


def test_lookup_is_case_insensitive_and_accepts_descriptions():
    ar = SPECIES["Ar"]
    for spelling in ("Ar", "ar", "AR", "argon", "Argon", " ARGON "):
        assert get_species(spelling) is ar
    assert get_species("carbon dioxide") is SPECIES["CO2"]
    assert get_species("AIR") is SPECIES["air"]


def test_unknown_gas_suggests_canonical_name():
    with pytest.raises(UnknownNameError) as info:
        get_species("Argn")
    message = str(info.value)
    assert message.startswith("unknown gas 'Argn' (did you mean 'Ar'?); known: ")
    assert "He" in message and "CH4" in message
    assert isinstance(info.value, KeyError) and isinstance(info.value, UserError)


def test_unknown_model_is_rejected():
    with pytest.raises(UnknownNameError, match="unknown collision model 'vs'"):
        viscosity(SPECIES["Ar"], 300.0, "vs")
    assert SPECIES["Ar"].diameter("VSS") == SPECIES["Ar"].d_ref_vss


def test_hs_is_vhs_with_omega_half():
    sp = SPECIES["Ar"]
    assert sp.diameter("hs") == sp.diameter("vhs") == sp.d_ref_vhs
    d = sp.d_ref_vhs
    # Hard-sphere first approximation 5/(16 d^2) sqrt(m k T / pi):
    # Chapman & Cowling (1970), from memory.
    T = np.array([100.0, 273.0, 1000.0])
    expected = 5.0 / (16.0 * d**2) * np.sqrt(sp.mass * K_B * T / math.pi)
    np.testing.assert_allclose(viscosity(sp, T, "hs"), expected, rtol=1e-13)
    C, exponent = pair_constants(sp, "hs")
    assert exponent == 1.0 and C == pytest.approx(math.pi * d**2, rel=1e-14)


# --- transport coefficients vs CoolProp -----------------------------------------

@pytest.mark.parametrize("model", ["vhs", "vss"])
@pytest.mark.parametrize("T", [273.15, 300.0])
@pytest.mark.parametrize("name", ["Ar", "N2", "He"])
def test_viscosity_against_coolprop(name, T, model):
    reference = CoolProp.PropsSI("V", "T", T, "P", P_ATM, COOLPROP_NAME[name])
    # 3 %: the accuracy asked of a power-law fit near T_ref (common practice).
    assert viscosity(SPECIES[name], T, model) == pytest.approx(reference, rel=0.03)


@pytest.mark.parametrize("model", ["vhs", "vss"])
@pytest.mark.parametrize("T", [273.15, 300.0])
@pytest.mark.parametrize("name", ["Ar", "He"])
def test_monatomic_conductivity_against_coolprop(name, T, model):
    reference = CoolProp.PropsSI("L", "T", T, "P", P_ATM, COOLPROP_NAME[name])
    # 5 %: power-law viscosity error plus the ~1 % first-approximation
    # error of K = 15/4 (k/m) mu (common practice).
    assert conductivity(SPECIES[name], T, model) == pytest.approx(reference, rel=0.05)


def test_eucken_factor():
    # Eucken (1913): K m / (k mu) = 15/4 + rot_dof/2 (Chapman & Cowling 1970,
    # from memory).
    for name, factor in (("Ar", 3.75), ("N2", 4.75), ("CH4", 5.25)):
        sp = SPECIES[name]
        ratio = conductivity(sp, 300.0) * sp.mass / (K_B * viscosity(sp, 300.0))
        assert ratio == pytest.approx(factor, rel=1e-14)


def test_viscosity_power_law_and_broadcasting():
    sp = SPECIES["N2"]
    T = np.array([100.0, 273.0, 546.0])
    mu = viscosity(sp, T)
    assert mu.shape == (3,)
    np.testing.assert_allclose(mu / mu[1], (T / 273.0) ** sp.omega, rtol=1e-14)


# --- Maxwell-Boltzmann speeds, ideal gas -------------------------------------------

def test_speed_ratios():
    # mean/mp = 2/sqrt(pi), rms/mp = sqrt(3/2): Bird (1994) ch. 4, from memory.
    m, T = SPECIES["Ar"].mass, np.array([10.0, 300.0, 5000.0])
    c_mp = most_probable_speed(T, m)
    np.testing.assert_allclose(mean_speed(T, m) / c_mp, 2.0 / math.sqrt(math.pi), rtol=1e-14)
    np.testing.assert_allclose(rms_speed(T, m) / c_mp, math.sqrt(1.5), rtol=1e-14)


def test_ideal_gas_round_trip():
    # Loschmidt constant at 273.15 K, 101.325 kPa: CODATA via scipy.constants.
    n0 = scipy.constants.physical_constants["Loschmidt constant (273.15 K, 101.325 kPa)"][0]
    assert number_density(P_ATM, 273.15) == pytest.approx(n0, rel=1e-12)
    assert pressure(n0, 273.15) == pytest.approx(P_ATM, rel=1e-12)


# --- collision rate, cross-section, free paths --------------------------------------

def _rate_by_quadrature(sp, T, n, model):
    """n <sigma_T g> over the Maxwellian relative-speed distribution, m_r = m/2."""
    m_r = 0.5 * sp.mass
    scale = math.sqrt(2.0 * K_B * T / m_r)  # integrate in x = g/scale

    def integrand(x):
        g = x * scale
        density = 4.0 / math.sqrt(math.pi) * x**2 * math.exp(-x * x)
        return float(vhs_cross_section(sp, g, model)) * g * density

    value, _ = quad(integrand, 0.0, np.inf, epsabs=0.0, epsrel=1e-12)
    return n * value


@pytest.mark.parametrize("model", MODELS)
@pytest.mark.parametrize("name,T", [("Ar", 300.0), ("He", 50.0), ("CO2", 1500.0)])
def test_collision_rate_matches_cross_section_average(name, T, model):
    # Cross-checks Bird (1994) eq. 4.64 against eq. 4.63.
    sp, n = SPECIES[name], 1e20
    assert collision_rate(sp, T, n, model) == pytest.approx(
        _rate_by_quadrature(sp, T, n, model), rel=1e-6)


@pytest.mark.parametrize("model", MODELS)
def test_pair_constants_reproduce_sigma_g(model):
    sp = SPECIES["N2"]
    C, exponent = pair_constants(sp, model)
    _, omega, _ = sp.parameters(model)
    assert exponent == pytest.approx(2.0 - 2.0 * omega, rel=1e-15)
    g = np.array([10.0, 300.0, 1234.5, 1e4])
    np.testing.assert_allclose(vhs_cross_section(sp, g, model) * g, C * g**exponent, rtol=1e-13)


def test_cross_section_at_reference_speed():
    # At m_r g^2 / 2 = k T_ref the VHS cross-section is pi d^2 / Gamma(5/2 - omega)
    # (Bird 1994 eq. 4.63, by substitution).
    sp = SPECIES["Ar"]
    g_ref = math.sqrt(2.0 * K_B * sp.T_ref / (0.5 * sp.mass))
    assert vhs_cross_section(sp, g_ref) == pytest.approx(
        math.pi * sp.d_ref_vhs**2 / math.gamma(2.5 - sp.omega), rel=1e-14)


@pytest.mark.parametrize("model", MODELS)
def test_mean_free_path_is_mean_speed_over_collision_rate(model):
    # lambda = c_bar / nu: Bird (1994) ch. 4, from memory.
    sp = SPECIES["O2"]
    T, n = np.array([80.0, 300.0, 3000.0]), 3e21
    np.testing.assert_allclose(
        mean_free_path(sp, T, n, model),
        mean_speed(T, sp.mass) / collision_rate(sp, T, n, model), rtol=1e-12)
    np.testing.assert_allclose(
        mean_collision_time(sp, T, n, model) * collision_rate(sp, T, n, model), 1.0, rtol=1e-15)


def test_hard_sphere_free_paths():
    # HS: lambda = 1/(sqrt(2) pi d^2 n) and the viscosity-based free path is
    # 5 pi/16 times it (follows from mu_HS = 5/(16 d^2) sqrt(m k T/pi);
    # Chapman & Cowling 1970, from memory).
    sp, T, n = SPECIES["Ar"], 500.0, 1e22
    d = sp.d_ref_vhs
    lam = mean_free_path(sp, T, n, "hs")
    assert lam == pytest.approx(1.0 / (math.sqrt(2.0) * math.pi * d**2 * n), rel=1e-14)
    lam_mu = viscosity_mean_free_path(viscosity(sp, T, "hs"), T, n, sp.mass)
    assert lam_mu / lam == pytest.approx(5.0 * math.pi / 16.0, rel=1e-13)


def test_equivalent_free_path_relation():
    # ell = mu v0 / p and the viscosity-based lambda = mu/(n m) sqrt(pi m/(2kT))
    # give ell / lambda = 2/sqrt(pi): algebra from the two definitions
    # (Sharipov & Seleznev 1998 write lambda = (sqrt(pi)/2) ell, from memory).
    sp, T, p = SPECIES["He"], 300.0, 10.0
    mu, n = viscosity(sp, T), number_density(p, T)
    ratio = equivalent_free_path(mu, p, T, sp.mass) / viscosity_mean_free_path(mu, T, n, sp.mass)
    assert ratio == pytest.approx(2.0 / math.sqrt(math.pi), rel=1e-14)
    assert knudsen(2e-3, 0.1) == pytest.approx(0.02, rel=1e-15)


# --- summary -------------------------------------------------------------------------

def test_gas_summary():
    sp = get_species("argon")
    summary = gas_summary(sp, 300.0, P_ATM, length=1e-3, model="vss")
    assert summary["model"] == ("vss", "")
    assert summary["viscosity"] == (pytest.approx(viscosity(sp, 300.0, "vss"), rel=1e-15), "Pa s")
    assert summary["Kn"][0] == pytest.approx(summary["mean_free_path"][0] / 1e-3, rel=1e-15)
    assert all(isinstance(unit, str) for _, unit in summary.values())
    assert "Kn" not in gas_summary(sp, 300.0, P_ATM)
    with pytest.raises(UserError, match="temperature must be positive"):
        gas_summary(sp, -1.0, P_ATM)
    with pytest.raises(UnknownNameError):
        gas_summary(sp, 300.0, P_ATM, model="bogus")
