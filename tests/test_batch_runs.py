"""Batch-run machinery: checkpoint/resume, signals, steady state, target error,
statistical errors (Hadjiconstantinou et al. 2003) and MPI ensembles."""

from __future__ import annotations

import math
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import h5py
import numpy as np
import pytest
from scipy import constants

from dsmc.case import parse_case
from dsmc.gas import kinetic
from dsmc.simulation import Simulation

GAP = """
[gas]
species = "Ar"
temperature = 300.0
pressure = {p}
[domain]
length = 2.0e-6
cells = {cells}
[boundary.xmin]
model = "diffuse"
velocity = [0.0, -100.0, 0.0]
[boundary.xmax]
model = "diffuse"
temperature = 340.0
velocity = [0.0, 100.0, 0.0]
[numerics]
particles_per_cell = {ppc}
[run]
seed = 5
transient_steps = {transient}
sample_steps = {samples}
batches = 20
{extra}
"""


def _cli(*args, **kw):
    return subprocess.run([sys.executable, "-m", "dsmc.cli", *map(str, args)],
                          capture_output=True, text=True, **kw)


def _datasets(path):
    """Every dataset of a result file but the wall-clock time, as bytes."""
    out = {}
    with h5py.File(path) as f:
        def visit(name, obj):
            if isinstance(obj, h5py.Dataset) and name != "run/wall_time":
                out[name] = obj[()].tobytes() if hasattr(obj[()], "tobytes") else obj[()]
        f.visititems(visit)
    return out


@pytest.fixture(scope="module")
def long_case(tmp_path_factory):
    """A case of several seconds (about 2e8 particle-steps: 4 s at 50 M/s), so it can be
    interrupted mid-run whatever the engine's speed on the machine."""
    d = tmp_path_factory.mktemp("long")
    case = d / "gap.toml"
    case.write_text(GAP.format(p=8000.0, cells=50, ppc=600, transient=500, samples=6000, extra=""))
    ref = d / "ref.h5"
    r = _cli("run", case, "-o", ref, "--quiet", "--threads", "1")
    assert r.returncode == 0, r.stderr
    return case, ref


def test_sigkill_then_resume_is_bit_identical(long_case, tmp_path):
    case, ref = long_case
    out = tmp_path / "killed.h5"
    ckpt = Path(str(out) + ".checkpoint")
    proc = subprocess.Popen([sys.executable, "-m", "dsmc.cli", "run", str(case), "-o", str(out),
                             "--quiet", "--threads", "1", "--checkpoint-every", "0.3"])
    t0 = time.time()
    while not ckpt.exists() and time.time() - t0 < 60:
        time.sleep(0.05)
    time.sleep(float(np.random.default_rng(2).uniform(0.1, 0.5)))  # a random later step
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    assert ckpt.exists() and not out.exists()
    with h5py.File(ckpt) as f:
        step = int(f["state/step_count"][()])
    assert 0 < step < 6500
    r = _cli("run", case, "-o", out, "--quiet", "--threads", "2", "--resume")
    assert r.returncode == 0, r.stderr
    assert not ckpt.exists()
    a, b = _datasets(ref), _datasets(out)
    assert a.keys() == b.keys()
    assert all(a[k] == b[k] for k in a), [k for k in a if a[k] != b[k]]


def test_sigterm_writes_a_checkpoint_that_resumes(long_case, tmp_path):
    case, ref = long_case
    out = tmp_path / "term.h5"
    ckpt = Path(str(out) + ".checkpoint")
    proc = subprocess.Popen([sys.executable, "-m", "dsmc.cli", "run", str(case), "-o", str(out),
                             "--threads", "1", "--checkpoint-every", "0", "--log-every", "0.2"],
                            stderr=subprocess.PIPE, text=True)
    line = proc.stderr.readline()  # the first progress line: the run is under way
    assert line.startswith("step ")
    proc.send_signal(signal.SIGTERM)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 75, err
    assert ckpt.exists() and not out.exists()
    assert "SIGTERM" in err and "--resume" in err
    r = _cli("run", case, "-o", out, "--quiet", "--resume")
    assert r.returncode == 0, r.stderr
    a, b = _datasets(ref), _datasets(out)
    assert all(a[k] == b[k] for k in a)


def test_resume_refuses_another_case(long_case, tmp_path):
    case, _ = long_case
    other = tmp_path / "other.toml"
    other.write_text(case.read_text().replace("seed = 5", "seed = 6"))
    out = tmp_path / "x.h5"
    sim = Simulation(parse_case(case.read_text(), str(case)))
    from dsmc.io.checkpoint import write_checkpoint

    write_checkpoint(str(out) + ".checkpoint", sim.state(), case.read_text(), sim.seed, None)
    r = _cli("run", other, "-o", out, "--resume")
    assert r.returncode == 2 and "different case" in r.stderr and "Traceback" not in r.stderr


def test_steady_state_detected_after_an_impulsive_start():
    # Impulsively started Couette: gas at rest, walls at +-100 m/s.  The slowest
    # viscous mode decays as exp(-t/t_r), t_r = L^2 / (pi^2 nu), nu = mu / rho
    # (the first Fourier mode of the diffusion equation; standard).
    text = GAP.format(p=24000.0, cells=40, ppc=40, transient=60000, samples=8000,
                      extra='steady_state = "auto"\nmonitor_window = 50')
    sim = Simulation(parse_case(text))
    sp = sim.species[0]
    rho = sim.case.gas.number_density * sp.mass
    t_r = sim.grid.length**2 / (math.pi**2 * kinetic.viscosity(sp, 300.0) / rho)
    sim.run()
    assert sim.steady_detected
    t_detect = sim.transient_end_step * sim.dt
    assert t_detect > 3.0 * t_r  # the start-up decayed below e^-3 before sampling
    assert sim.transient_end_step < 60000
    # the sampled shear stress equals that of a run with a transient of 12 t_r
    ref_text = GAP.format(p=24000.0, cells=40, ppc=40, transient=int(12 * t_r / sim.dt),
                          samples=8000, extra="")
    ref = Simulation(parse_case(ref_text))
    ref.run()
    a, sa = sim.wall_fields()[1]["shear_stress"]
    b, sb = ref.wall_fields()[1]["shear_stress"]
    assert abs(a[1] - b[1]) < 3 * math.hypot(sa[1], sb[1])


def test_sampling_stops_at_the_target_error():
    target = 0.02
    text = GAP.format(p=24000.0, cells=40, ppc=40, transient=2000, samples=200000,
                      extra=f"target_error = {target}\ntarget_quantities = ['bulk_shear_stress']")
    text = text.replace("batches = 20", "batches = 400")  # batches of 500 steps
    sim = Simulation(parse_case(text))
    sim.run()
    assert sim.stop_reason == "target_error"
    from dsmc.steady import relative_errors

    err = float(relative_errors(np.array(sim._target_history))[0])
    assert 0.8 * target <= err <= target
    assert sim.phase_steps < 200000


def test_statistical_errors_match_hadjiconstantinou_theory():
    # Hadjiconstantinou, Garcia, Bazant and He (2003), J. Comput. Phys. 187, 274
    # (from memory): in an equilibrium gas the standard deviation of one cell
    # sample with N particles is sqrt(kT/m)/sqrt(N) for a velocity component and
    # T sqrt(2/(3N)) for the temperature of a monatomic gas; M independent
    # samples divide it by sqrt(M).  Samples 60 steps apart are nearly independent
    # (at 20 steps the temperature scatter over cells came out 45 % above the
    # independent-sample value, a correlation longer than the batches).
    # 300 cells: the scatter over cells is then known to 1/sqrt(600) = 4 %.
    text = GAP.format(p=24000.0, cells=300, ppc=40, transient=200, samples=24000, extra="")
    text = text.replace("length = 2.0e-6", "length = 6.0e-6")
    text = text.replace('velocity = [0.0, -100.0, 0.0]', '').replace('velocity = [0.0, 100.0, 0.0]', '')
    text = text.replace('model = "diffuse"', 'model = "periodic"').replace("temperature = 340.0\n", "")
    text = text.replace("batches = 20", "batches = 20\nsample_interval = 60")
    sim = Simulation(parse_case(text))
    sim.run()
    f = sim.fields()
    n_mean = sim.n_particles / sim.grid.cells
    samples = sum(b.samples for b in sim.batches)
    T = float(np.mean(f["temperature"][0]))
    m = sim.mass[0]
    theory_u = math.sqrt(constants.k * T / m) / math.sqrt(n_mean * samples)
    theory_T = T * math.sqrt(2.0 / (3.0 * n_mean)) / math.sqrt(samples)
    # reported batch-means errors
    assert abs(np.mean(f["velocity"][1][:, 0]) / theory_u - 1) < 0.10
    assert abs(np.mean(f["temperature"][1]) / theory_T - 1) < 0.10
    # actual scatter of the cell means about the gas mean
    u_x = f["velocity"][0][:, 0]
    assert abs(np.std(u_x - sim.velocities[:, 0].mean()) / theory_u - 1) < 0.10
    assert abs(np.std(f["temperature"][0]) / theory_T - 1) < 0.10


def _mpiexec():
    exe = Path(sys.executable).parent / "mpiexec"
    return str(exe) if exe.exists() else shutil.which("mpiexec")


@pytest.mark.skipif(_mpiexec() is None, reason="no mpiexec (pip install mpi4py mpich)")
def test_two_rank_ensemble_matches_a_single_run(tmp_path):
    case = tmp_path / "gap.toml"
    case.write_text(GAP.format(p=8000.0, cells=40, ppc=60, transient=500, samples=6000, extra=""))
    single, ens = tmp_path / "one.h5", tmp_path / "two.h5"
    assert _cli("run", case, "-o", single, "--quiet", "--threads", "1").returncode == 0
    env = dict(os.environ, OMP_NUM_THREADS="1")
    r = subprocess.run([_mpiexec(), "-n", "2", sys.executable, "-m", "dsmc.cli", "run", str(case),
                        "-o", str(ens), "--quiet", "--threads", "1"],
                       capture_output=True, text=True, env=env, timeout=300)
    assert r.returncode == 0, r.stderr
    with h5py.File(single) as a, h5py.File(ens) as b:
        assert b["run"].attrs["ranks"] == 2
        assert b["run/samples"][()] == 2 * a["run/samples"][()]
        for name, comp in (("temperature", None), ("velocity", 1), ("number_density", None)):
            ma, sa = a[f"fields/{name}"][()], a[f"fields/{name}_stderr"][()]
            mb, sb = b[f"fields/{name}"][()], b[f"fields/{name}_stderr"][()]
            if comp is not None:
                ma, sa, mb, sb = ma[:, comp], sa[:, comp], mb[:, comp], sb[:, comp]
            # same means within statistical error (cell by cell, 4 sigma)
            assert np.all(np.abs(ma - mb) < 4 * np.hypot(sa, sb)), name
            # errors smaller by sqrt(2): mean over 40 cells of a 20-batch estimate
            assert abs(np.mean(sa) / np.mean(sb) / math.sqrt(2) - 1) < 0.15, name


@pytest.mark.skipif(_mpiexec() is None, reason="no mpiexec (pip install mpi4py mpich)")
def test_ensemble_keeps_one_schedule_with_auto_transient_and_target(tmp_path):
    # every rank decides on the replica mean of the monitored values: if they
    # disagreed, the final reduction would hang (timeout) or the batch counts differ
    case = tmp_path / "gap.toml"
    case.write_text(GAP.format(p=24000.0, cells=40, ppc=40, transient=20000, samples=100000,
                               extra='steady_state = "auto"\ntarget_error = 0.03\n'
                                     "target_quantities = ['bulk_shear_stress']")
                    .replace("batches = 20", "batches = 200"))
    out = tmp_path / "ens.h5"
    r = subprocess.run([_mpiexec(), "-n", "2", sys.executable, "-m", "dsmc.cli", "run", str(case),
                        "-o", str(out), "--quiet", "--threads", "1"],
                       capture_output=True, text=True, timeout=300)
    assert r.returncode == 0, r.stderr
    with h5py.File(out) as f:
        assert f["run"].attrs["ranks"] == 2
        assert f["run"].attrs["steady_detected"] == 1
        assert f["run"].attrs["stop_reason"] == "target_error"
        assert f["run/target_relative_error"][0] <= 0.03 * 1.2


@pytest.mark.skipif(_mpiexec() is None, reason="no mpiexec (pip install mpi4py mpich)")
def test_sweep_points_dealt_to_ranks(tmp_path):
    case = tmp_path / "base.toml"
    case.write_text(GAP.format(p=1000.0, cells=20, ppc=20, transient=200, samples=400, extra="")
                    .replace("batches = 20", "batches = 4").replace("length = 2.0e-6", "length = 1.0e-5"))
    r = subprocess.run([_mpiexec(), "-n", "2", sys.executable, "-m", "dsmc.cli", "sweep", str(case),
                        "--pressures", "300,1000,3000", "--out", str(tmp_path / "sw"), "--quiet"],
                       capture_output=True, text=True, timeout=300)
    assert r.returncode == 0, r.stderr
    files = sorted(p.name for p in (tmp_path / "sw").iterdir())
    assert files[:3] == ["base-00.h5", "base-01.h5", "base-02.h5"]
    assert "base-summary.csv" in files
    assert r.stdout.count("verdict") >= 1 and r.stdout.count("sweep of 3 points") == 1
