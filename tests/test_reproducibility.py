"""Bit-reproducibility: a seed fixes a run, whatever the thread count."""

from __future__ import annotations

import numba
import numpy as np
import pytest

from dsmc.case import parse_case
from dsmc.simulation import Simulation

CASE = """
[gas]
species = "Ar"
temperature = 300.0
pressure = 2000.0
[domain]
length = 1.0e-4
cells = 64
[boundary.xmin]
model = "cll"
normal_accommodation = 0.7
tangential_accommodation = 0.4
temperature = 350.0
velocity = [0.0, -80.0, 0.0]
[boundary.xmax]
model = "maxwell"
accommodation = 0.9
temperature = 280.0
velocity = [0.0, 60.0, 0.0]
[numerics]
particles_per_cell = 200   # 12 800 particles: several random-stream blocks
[run]
seed = {seed}
transient_steps = 30
sample_steps = 60
batches = 3
"""


def _run(seed, threads):
    old = numba.get_num_threads()
    numba.set_num_threads(threads)
    try:
        sim = Simulation(parse_case(CASE.format(seed=seed)))
        sim.run()
    finally:
        numba.set_num_threads(old)
    return sim


def _same(a, b):
    assert np.array_equal(a.velocities, b.velocities)
    assert np.array_equal(a.positions, b.positions)
    fa, fb = a.fields(), b.fields()
    for k in fa:
        assert np.array_equal(fa[k][0], fb[k][0], equal_nan=True), k
    wa, wb = a.wall_fields(), b.wall_fields()
    for side in (0, 1):
        for k in wa[side]:
            assert np.array_equal(wa[side][k][0], wb[side][k][0]), k


def test_same_seed_same_run():
    _same(_run(17, 1), _run(17, 1))


@pytest.mark.skipif(numba.config.NUMBA_NUM_THREADS < 2, reason="needs two threads")
def test_thread_count_does_not_change_the_result():
    _same(_run(17, 1), _run(17, 2))


def test_other_seed_other_run():
    a, b = _run(17, 1), _run(18, 1)
    assert not np.array_equal(a.velocities, b.velocities)
