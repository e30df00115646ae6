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
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from dsmc.case import load_case
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
