"""NTC collisions: equilibrium collision rate (Bird 1994), conservation, VSS scattering."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants

from dsmc.case import parse_case
from dsmc.gas import kinetic
from dsmc.kernels.collide import _scatter
from dsmc.kernels.rng import new_streams
from dsmc.simulation import Simulation

BOX = """
[gas]
species = "{gas}"
collision_model = "{model}"
temperature = 300.0
pressure = 50.0e3
[domain]
length = 4.0e-6
cells = 200
[boundary.xmin]
model = "periodic"
[boundary.xmax]
model = "periodic"
[numerics]
particles_per_cell = 40
[run]
seed = {seed}
"""


def _temperature(sim):
    v = sim.velocities
    m = sim.mass[0]
    return m * ((v - v.mean(axis=0)) ** 2).sum() / (3 * constants.k * len(v))


@pytest.mark.parametrize("gas,model", [("Ar", "hs"), ("Ar", "vhs"), ("Ar", "vss"), ("He", "vss"), ("Xe", "vhs")])
def test_equilibrium_collision_rate_matches_vhs_theory(gas, model):
    # Bird (1994) eq. 4.64: nu = 4 d^2 n sqrt(pi k T_ref / m) (T/T_ref)^(1-omega), within 1 %
    sim = Simulation(parse_case(BOX.format(gas=gas, model=model, seed=3)))
    sim.advance(100)  # let cell occupations relax from the stratified start
    sim.reset_samples()
    sim.advance(1000, sample=True)
    sim.close_batch()
    c = sim.collision_summary()
    n = sim.n_particles * sim.weight / sim.grid.length
    theory = kinetic.collision_rate(sim.species[0], _temperature(sim), n, model)
    rel_se = 1.0 / math.sqrt(c["collisions"])  # Poisson count of collisions
    assert rel_se < 0.003
    assert abs(c["collision_rate"] / theory - 1.0) < 0.01


@pytest.mark.parametrize("model", ["hs", "vhs", "vss"])
def test_momentum_and_energy_conserved_to_round_off(model):
    sim = Simulation(parse_case(BOX.format(gas="Ar", model=model, seed=5)))
    v0 = sim.velocities.copy()
    p0 = v0.sum(axis=0)
    e0 = (v0**2).sum()
    sim.advance(20)
    v1 = sim.velocities
    scale = np.abs(v0).sum(axis=0)
    assert np.all(np.abs(v1.sum(axis=0) - p0) < 1e-12 * scale)
    assert abs((v1**2).sum() - e0) < 1e-12 * e0
    assert not np.array_equal(np.sort(v1[:, 0]), np.sort(v0[:, 0]))  # collisions happened
    assert sim.n_particles == len(v0)


@pytest.mark.parametrize("alpha", [1.0, 1.4, 1.6])
def test_vss_deflection_law(alpha):
    # VSS: cos chi = 2 U^(1/alpha) - 1, so <cos chi> = (alpha - 1)/(alpha + 1)
    # (Koura and Matsumoto 1991; from memory); |g'| = |g|; azimuth uniform.
    state = new_streams(np.random.SeedSequence(11), 1)
    rng = np.random.default_rng(4)
    n = 40_000
    g = rng.normal(size=(n, 3)) * 500.0
    cos = np.empty(n)
    perp = np.empty((n, 3))
    for k in range(n):
        gx, gy, gz = g[k]
        gm = math.sqrt(gx * gx + gy * gy + gz * gz)
        o = np.array(_scatter(gx, gy, gz, gm, alpha, state, 0))
        assert abs(np.linalg.norm(o) - gm) < 1e-9 * gm
        cos[k] = o @ g[k] / gm**2
        perp[k] = o / gm - cos[k] * g[k] / gm
    expected = (alpha - 1) / (alpha + 1)
    se = cos.std() / math.sqrt(n)
    assert abs(cos.mean() - expected) < 4 * se
    assert np.all(np.abs(perp.mean(axis=0)) < 4 / math.sqrt(n))  # no preferred azimuth


def test_single_precision_cross_section_stays_within_its_margin():
    """The NTC kernel evaluates (g^2)^e in single precision and falls back to double
    precision within SG_FLOAT_MARGIN of a decision; the margin must bound the float error."""
    import numba as nb

    from dsmc.kernels.collide import SG_FLOAT_MARGIN, SG_FLOAT_MIN

    @nb.njit
    def single(g2, e):  # the kernel's expression
        out = np.empty(g2.size)
        for k in range(g2.size):
            out[k] = float(np.float32(g2[k]) ** np.float32(e[k]))
        return out

    rng = np.random.default_rng(5)
    g2 = 10 ** rng.uniform(np.log10(SG_FLOAT_MIN), 38, 10**6)
    e = rng.uniform(0.0, 1.0, 10**6)
    assert np.max(np.abs(single(g2, e) / g2 ** e - 1.0)) < SG_FLOAT_MARGIN / 5
