"""The optimized kernels give the same sampled fields as the engine before the optimizations.

``tests/data/pre_optimization.json`` holds, for each shipped case (with a
shortened sampling budget), the summaries below computed by the engine at
commit 758e0d3, the last one before the performance work (move kernel writing
the cell keys, scatter sort, scalar sampling sums, trig-free azimuth,
single-precision sigma*g), by running :func:`summaries` with that checkout
first on ``sys.path``::

    PYTHONPATH=<checkout of 758e0d3> python -c "from tests.test_optimized_path import \
        write_reference; write_reference()"

The move and sort are bit-identical to the old ones (the sort is a stable sort,
whose result is unique); the collisions draw their random numbers differently,
so the runs differ statistically.  Each summary must agree within four
combined standard errors (batch means), with a different seed than the
reference run, so the two samples are independent.

The cell moments are sampled inside the collision kernel; they must be
bit-identical to those of the separate sampling pass ``sample_cells`` run
before or after the collision phase.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from dsmc.case import load_case, parse_case
from dsmc.kernels.collide import SAMPLE_AFTER, SAMPLE_BEFORE, SAMPLE_NONE
from dsmc.kernels.sample import sample_cells
from dsmc.simulation import Simulation
from tests.conftest import CASES, ROOT, bulk_mean

DATA = ROOT / "tests" / "data" / "pre_optimization.json"
SHIPPED = ("shuttle-gap-couette-transitional", "shuttle-gap-couette-continuum",
           "plate-gauge-fourier-transitional", "sensor-gap-fourier-continuum")
SAMPLE_STEPS = {"transitional": 6000, "continuum": 36000}  # by the case name's ending


def summaries(name: str, seed: int) -> dict[str, tuple[float, float]]:
    """(mean, standard error) of wall shear and heat flux at both walls, the bulk
    shear stress and heat flux, and the mean temperature of a shortened run."""
    case = load_case(CASES / f"{name}.toml")
    case = case.with_run(seed=seed, sample_steps=SAMPLE_STEPS[name.rsplit("-", 1)[1]], batches=20, steady_state="fixed",
                         target_error=0.0)
    sim = Simulation(case)
    sim.run()
    walls = sim.wall_fields()
    out = {}
    for side in (0, 1):
        m, s = walls[side]["shear_stress"]
        out[f"wall{side}_shear"] = (float(m[1]), float(s[1]))
        m, s = walls[side]["heat_flux"]
        out[f"wall{side}_heat"] = (float(m), float(s))
    out["bulk_pxy"] = bulk_mean(sim, "pressure_tensor", lambda P: P[:, 0, 1])
    out["bulk_qx"] = bulk_mean(sim, "heat_flux", lambda q: q[:, 0])
    out["temperature"] = bulk_mean(sim, "temperature", lambda T: T)
    return out


def write_reference(seed: int = 11):
    DATA.write_text(json.dumps({n: summaries(n, seed) for n in SHIPPED}, indent=1) + "\n")


@pytest.mark.parametrize("name", SHIPPED)
def test_same_fields_as_before_the_optimizations(name):
    ref = json.loads(DATA.read_text())[name]
    new = summaries(name, seed=12)
    for key, (m0, s0) in ref.items():
        m1, s1 = new[key]
        se = math.hypot(s0, s1)
        assert se > 0, key
        assert abs(m1 - m0) < 4 * se, (key, m0, m1, se)
    # the comparison means something: the driven flux is resolved to a few percent
    driven = "wall1_shear" if "couette" in name else "wall1_heat"
    assert ref[driven][1] < 0.05 * abs(ref[driven][0])


def _sparse_nitrogen(text):
    """Nitrogen with vibration, Parker's Z_rot and a hot plate, so that every moment is used."""
    text = text.replace("# rotational_collision_number defaults",
                        'vibration = true\nvibrational_collision_number = 5.0\n'
                        'rotational_collision_number = "parker"\n#')
    return text.replace("temperature = 423.15", "temperature = 4000.0")


@pytest.mark.parametrize("name, edit", [
    ("helium-argon-couette-transitional", lambda t: t),  # two species
    ("nitrogen-gap-fourier-continuum", _sparse_nitrogen),  # internal energy
])
def test_sampling_inside_the_collisions_equals_the_separate_pass(name, edit):
    path = CASES / f"{name}.toml"
    # 1.5 particles per cell: many cells hold 0 or 1 particles and are sampled, not collided
    text = edit(path.read_text()).replace("particles_per_cell = ", "particles_per_cell = 1.5 #")
    sim = Simulation(parse_case(text, str(path)))
    sim.advance(30)
    p = sim.particles
    counts = np.diff(sim.cell_start)
    assert (counts < 2).any() and (counts >= 2).any()
    if "nitrogen" in name:
        assert p.erot[: p.n].any() and p.vib[: p.n].any()
    keep = [a.copy() for a in (p.v, p.erot, p.vib, sim.sgmax, sim.remainder, sim.coll_state,
                               sim._coll)]

    def rewind():
        for a, b in zip((p.v, p.erot, p.vib, sim.sgmax, sim.remainder, sim.coll_state,
                         sim._coll), keep):
            a[...] = b

    shape = sim._batch.moments.shape
    sep_before, sep_after = np.zeros(shape), np.zeros(shape)
    sample_cells(p.v, p.sp, p.erot, p.vib, sim.cell_start, sep_before)
    sim._collide(SAMPLE_NONE, np.full(shape, np.nan))  # not touched
    sample_cells(p.v, p.sp, p.erot, p.vib, sim.cell_start, sep_after)
    # only the live rows: the rows past p.n are uninitialised sort scratch and may hold NaN
    live = slice(0, p.n)
    after = [a[live].copy() for a in (p.v, p.erot, p.vib)]
    for when, sep in ((SAMPLE_BEFORE, sep_before), (SAMPLE_AFTER, sep_after)):
        rewind()
        fused = np.zeros(shape)
        sim._collide(when, fused)
        assert np.array_equal(fused, sep), when
        for a, b in zip((p.v, p.erot, p.vib), after):  # sampling does not change the collisions
            assert np.array_equal(a[live], b)
    assert sep_before[..., 0].sum() == p.n
    assert not np.array_equal(sep_before, sep_after)
