"""Gas-surface models: re-emission statistics against their defining kernels."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants

from dsmc.gas.species import get_species
from dsmc.kernels.rng import new_streams
from dsmc.kernels.surfaces import reflect
from dsmc.models import wall_row

M = get_species("Ar").mass
TW = 400.0
N = 40_000


def _emit(row, v_in, normal=(1.0, 0.0), n=N, seed=1):
    state = new_streams(np.random.SeedSequence(seed), 1)
    out = np.empty((n, 3))
    v = np.empty(3)
    for k in range(n):
        v[:] = v_in
        reflect(v, normal[0], normal[1], row, M, state, 0)
        out[k] = v
    return out


def _close(sample, expected, factor=4.0):
    se = sample.std() / math.sqrt(sample.size)
    assert abs(sample.mean() - expected) < factor * se + 1e-12 * abs(expected)


def test_specular_mirrors_the_normal_component():
    row = wall_row("specular", TW, (0.0, 30.0, 0.0))
    out = _emit(row, np.array([-120.0, 45.0, -7.0]), n=3)
    assert np.allclose(out, [120.0, 45.0, -7.0], rtol=0, atol=1e-12)


def test_maxwell_with_zero_accommodation_is_specular():
    row = wall_row("maxwell", TW, (0.0, 80.0, 0.0), accommodation=0.0)
    out = _emit(row, np.array([-300.0, 10.0, 5.0]), n=1000)
    assert np.allclose(out, [300.0, 10.0, 5.0], rtol=0, atol=1e-12)


@pytest.mark.parametrize("normal", [(1.0, 0.0), (-1.0, 0.0), (0.6, 0.8)])
def test_diffuse_emits_flux_weighted_half_maxwellian(normal):
    # Re-emitted flux of a wall at rest-frame temperature T_w: the normal speed has
    # density (m/kT) c exp(-m c^2 / 2kT), so <c_n> = sqrt(pi kT / 2m) and
    # <c_n^2> = 2kT/m; tangential components are normal with variance kT/m
    # about the wall velocity (standard kinetic theory, e.g. Bird 1994 sec. 4.1).
    uw = np.array([-normal[1], normal[0], 0.0]) * 50.0  # tangential wall velocity
    row = wall_row("diffuse", TW, uw)
    nvec = np.array([normal[0], normal[1], 0.0])
    v_in = -nvec * 500.0 + np.array([0.0, 0.0, 20.0])
    out = _emit(row, v_in, normal=normal)
    c = out - uw
    cn = c @ nvec
    assert np.all(cn >= 0.0)
    kT_m = constants.k * TW / M
    _close(cn, math.sqrt(math.pi * kT_m / 2))
    _close(cn**2, 2 * kT_m)
    t1 = np.array([-normal[1], normal[0], 0.0])
    for t in (t1, np.array([0.0, 0.0, 1.0])):
        ct = c @ t
        _close(ct, 0.0)
        _close(ct**2, kT_m)


def test_maxwell_mixes_diffuse_and_specular_in_proportion():
    alpha = 0.3
    row = wall_row("maxwell", TW, (0.0, 0.0, 0.0), accommodation=alpha)
    v_in = np.array([-400.0, 100.0, 0.0])
    out = _emit(row, v_in)
    specular = np.all(np.isclose(out, [400.0, 100.0, 0.0], rtol=0, atol=1e-9), axis=1)
    frac = 1 - specular.mean()
    assert abs(frac - alpha) < 4 * math.sqrt(alpha * (1 - alpha) / N)


@pytest.mark.parametrize("an,at", [(1.0, 1.0), (0.5, 0.3), (0.2, 0.8)])
def test_cll_energy_and_momentum_accommodation(an, at):
    # Cercignani-Lampis kernel sampled by Lord's (1991) method:
    #   <c_n'^2> = alpha_n (2kT_w/m) + (1 - alpha_n) c_n^2            (normal energy)
    #   <c_t'>   = sqrt(1 - alpha_t) c_t                                (tangential momentum)
    #   <c_t'^2> = (1 - alpha_t) c_t^2 + alpha_t kT_w/m                 (tangential energy)
    row = wall_row("cll", TW, (0.0, 0.0, 0.0), normal_accommodation=an, tangential_accommodation=at)
    v_in = np.array([-450.0, 250.0, -100.0])
    out = _emit(row, v_in)
    kT_m = constants.k * TW / M
    assert np.all(out[:, 0] >= 0)
    _close(out[:, 0] ** 2, an * 2 * kT_m + (1 - an) * v_in[0] ** 2)
    for k in (1, 2):
        _close(out[:, k], math.sqrt(1 - at) * v_in[k])
        _close(out[:, k] ** 2, (1 - at) * v_in[k] ** 2 + at * kT_m)


def test_cll_with_zero_coefficients_is_specular():
    row = wall_row("cll", TW, (0.0, 0.0, 0.0), normal_accommodation=0.0, tangential_accommodation=0.0)
    out = _emit(row, np.array([-450.0, 250.0, -100.0]), n=100)
    assert np.allclose(out, [450.0, 250.0, -100.0], rtol=0, atol=1e-9)
