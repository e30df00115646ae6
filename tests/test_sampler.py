"""Maxwell-Boltzmann sampler and random streams against standard kinetic theory."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants, special, stats

from dsmc.gas import kinetic
from dsmc.gas.species import get_species
from dsmc.kernels.rng import fill_cells_1d, fill_uniform, new_streams

N = 400_000
T = 300.0
M = get_species("Ar").mass


@pytest.fixture(scope="module")
def speeds():
    state = new_streams(np.random.SeedSequence(12345), 1)
    pos = np.empty((N, 1))
    v = np.empty((N, 3))
    sigma = math.sqrt(constants.k * T / M)
    fill_cells_1d(state, 0, np.array([0, N]), 1.0, np.array([sigma]), np.zeros((1, 3)), pos, v)
    return np.linalg.norm(v, axis=1), v


def test_speed_distribution_ks_against_scipy_maxwell(speeds):
    c, _ = speeds
    scale = math.sqrt(constants.k * T / M)  # scipy.stats.maxwell scale a = sqrt(kT/m)
    result = stats.kstest(c, stats.maxwell(scale=scale).cdf)
    assert result.pvalue > 0.01


def test_mean_and_rms_speed_and_energy(speeds):
    c, _ = speeds
    # standard kinetic theory: mean sqrt(8kT/(pi m)), rms sqrt(3kT/m), <E> = 3/2 kT
    mean = kinetic.mean_speed(T, M)
    se = c.std() / math.sqrt(N)
    assert abs(c.mean() - mean) < 4 * se
    c2 = c**2
    rms2 = kinetic.rms_speed(T, M) ** 2
    assert abs(c2.mean() - rms2) < 4 * c2.std() / math.sqrt(N)
    e = 0.5 * M * c2
    assert abs(e.mean() - 1.5 * constants.k * T) < 4 * e.std() / math.sqrt(N)


def test_most_probable_speed_splits_the_distribution(speeds):
    # P(c < c_mp) = erf(1) - 2/sqrt(pi) exp(-1) for the Maxwell speed distribution
    c, _ = speeds
    p = special.erf(1.0) - 2.0 / math.sqrt(math.pi) * math.exp(-1.0)
    frac = np.mean(c < kinetic.most_probable_speed(T, M))
    assert abs(frac - p) < 4 * math.sqrt(p * (1 - p) / N)
    assert kinetic.most_probable_speed(T, M) == pytest.approx(math.sqrt(2 * constants.k * T / M))


def test_components_are_independent_normals(speeds):
    _, v = speeds
    sigma = math.sqrt(constants.k * T / M)
    for k in range(3):
        assert stats.kstest(v[:, k] / sigma, "norm").pvalue > 0.01
    corr = np.corrcoef(v.T)
    assert np.all(np.abs(corr[np.triu_indices(3, 1)]) < 4 / math.sqrt(N))


def test_uniform_stream_chi_square_and_independent_streams():
    state = new_streams(np.random.SeedSequence(7), 2)
    a = np.empty(200_000)
    b = np.empty(200_000)
    fill_uniform(state, 0, a)
    fill_uniform(state, 1, b)
    counts = np.histogram(a, bins=100, range=(0, 1))[0]
    assert stats.chisquare(counts).pvalue > 0.01
    assert 0.0 <= a.min() and a.max() < 1.0
    assert abs(np.corrcoef(a, b)[0, 1]) < 4 / math.sqrt(a.size)


def test_streams_reproducible_from_seed():
    a = new_streams(np.random.SeedSequence(99), 3)
    b = new_streams(np.random.SeedSequence(99), 3)
    assert np.array_equal(a, b)
    assert not np.array_equal(a[0], a[1])
