"""Resource guards (dsmc/resources.py): the memory estimate counts the arrays the engine really
allocates and bounds the measured peak of real runs; a case that does not fit is refused with
one line naming the file and the key before anything is allocated; a very long run gets a
warning; an existing result file is never overwritten unless asked."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from dsmc import resources
from dsmc.case import parse_case
from dsmc.cli import main
from dsmc.errors import UserError
from dsmc.kernels import collide, sample, sort
from dsmc.simulation import BLOCK_SIZE, Simulation
from conftest import one_error_line

CASE = """
[gas]
species = "Ar"
temperature = 300.0
pressure = 10.0
[domain]
length = 1.0e-2
cells = {cells}
[boundary.xmin]
model = "diffuse"
[boundary.xmax]
model = "diffuse"
[numerics]
particles_per_cell = {ppc}
[run]
transient_steps = 0
sample_steps = {steps}
batches = {batches}
"""


def case(cells=5, ppc=10, steps=40, batches=2, path="sized.toml"):
    return parse_case(CASE.format(cells=cells, ppc=ppc, steps=steps, batches=batches), path)


# ----------------------------------------------------------------------------
# the byte counts are those of the live arrays


def test_constants_follow_the_engine():
    assert resources.MOMENTS == sample.N_MOMENTS
    assert resources.COLL_STATS == collide.N_COLL_STATS
    assert resources.SORT_CHUNKS == sort.SORT_CHUNKS
    assert resources.BLOCK_SIZE == BLOCK_SIZE


def test_bytes_per_particle_and_cell_match_the_simulation():
    c = case(cells=37, ppc=23.5)
    sim = Simulation(c)
    p = sim.particles
    est = resources.estimate(c)
    capacity = resources.CAPACITY_FACTOR * est.particles + resources.CAPACITY_EXTRA
    assert capacity - 2 <= p.capacity <= capacity  # est.particles is rounded up
    assert p.nbytes() == resources.PARTICLE_ARRAYS * p.capacity
    assert sim.n_particles == pytest.approx(est.particles, rel=0.05)
    state = sim.state()
    assert sum(state[k].nbytes for k in ("pos", "v", "sp", "erot", "vib")) == (
        resources.COPY_BYTES_PER_PARTICLE * sim.n_particles)
    per_cell = [sim.sgmax, sim.remainder, sim.cell_start[1:], sim.volume, sim.coll_state,
                sim._coll, sim._batch.moments, sim._batch.collisions,
                sim._hist[:, :-1]]  # the last histogram column is the removed-particle bin
    counted = sum(a.nbytes for a in per_cell)
    initial = 8 * 9  # initial profiles, freed after set-up
    assert counted == (resources.bytes_per_cell() - initial) * 37
    sim.advance(2, sample=True)
    sim.close_batch()
    b = sim.batches[0]
    assert b.moments.nbytes + b.collisions.nbytes <= resources.bytes_per_batch_cell() * 37


def test_estimate_grows_as_the_formula_says():
    a, b = resources.estimate(case(cells=100, ppc=10)), resources.estimate(case(cells=100, ppc=20))
    slope = (b.memory["particles"] - a.memory["particles"]) / (b.particles - a.particles)
    assert slope == pytest.approx(resources.CAPACITY_FACTOR * resources.BYTES_PER_PARTICLE
                                  + resources.COPY_BYTES_PER_PARTICLE)
    c = resources.estimate(case(cells=100, ppc=10, steps=400, batches=20))
    assert c.memory["batches"] == 10 * a.memory["batches"]
    assert c.particle_steps == 10 * a.particle_steps


def _peak_rss(tmp_path: Path, text: str) -> int:
    """Peak resident memory (bytes) of `dsmc run` of ``text`` in a fresh process, with a
    checkpoint at every step (its copies count too).

    Read as VmHWM of the child's own memory map: ``ru_maxrss`` would also count the pages of
    the (large) pytest process the child was forked from."""
    path = tmp_path / "m.toml"
    path.write_text(text, encoding="utf-8")
    code = ("from dsmc.cli import main; "
            f"assert main(['run', {str(path)!r}, '-o', {str(tmp_path / 'm.h5')!r}, '--force', "
            "'--quiet', '--threads', '1', '--checkpoint-every', '1e-9']) == 0; "
            "print([l.split()[1] for l in open('/proc/self/status') if l.startswith('VmHWM')][0])")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=300)
    assert proc.returncode == 0, proc.stderr
    return int(proc.stdout.split()[-1]) * 1024  # VmHWM is in kB


@pytest.mark.parametrize("cells, ppc, batches", [(500, 2000, 2), (40000, 2, 20)],
                         ids=["particle-bound", "cell-bound"])
def test_estimate_bounds_the_measured_peak(tmp_path, cells, ppc, batches):
    """Upper bound on the real peak, and not more than twice the memory above a tiny run."""
    tiny = CASE.format(cells=5, ppc=10, steps=2, batches=2)
    _peak_rss(tmp_path, tiny)  # on a cold kernel cache the first run compiles (~500 MiB peak)
    base = _peak_rss(tmp_path, tiny)
    text = CASE.format(cells=cells, ppc=ppc, steps=batches, batches=batches)
    peak = _peak_rss(tmp_path, text)
    est = resources.estimate(parse_case(text))
    assert peak <= est.memory_bytes, (peak, est.memory)
    assert base <= resources.BASE_BYTES
    variable = est.memory_bytes - resources.BASE_BYTES
    assert peak - base >= 0.5 * variable, (peak - base, variable)


# ----------------------------------------------------------------------------
# refusing what does not fit


def test_available_memory_reads_meminfo():
    text = Path("/proc/meminfo").read_text()
    kb = int(next(ln for ln in text.splitlines() if ln.startswith("MemAvailable:")).split()[1])
    assert resources.available_memory() == pytest.approx(kb * 1024, rel=0.2)


def test_available_memory_falls_back_to_sysconf(monkeypatch):
    def no_file(*a, **k):
        raise OSError("no /proc")

    monkeypatch.setattr("builtins.open", no_file)
    got = resources.available_memory()
    assert got is not None and got > 0


@pytest.mark.parametrize("cells, ppc, batches, key", [
    (1000, 1000, 2, "numerics.particles_per_cell"),
    (100000, 1, 1000, "domain.cells"),
])
def test_guard_names_the_dominant_key(cells, ppc, batches, key):
    c = case(cells=cells, ppc=ppc, steps=batches, batches=batches)
    est = resources.estimate(c)
    resources.guard(c, available=est.memory_bytes)  # exactly enough: accepted
    with pytest.raises(UserError) as info:
        resources.guard(c, available=est.memory_bytes - 1)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(f"sized.toml: {key}: the run needs about "), message
    assert "available" in message


@pytest.fixture
def little_memory(monkeypatch):
    """Pretend 2 GiB are available, and make building a Simulation an error."""
    monkeypatch.setattr(resources, "available_memory", lambda: 2 * 2**30)

    def no_simulation(*a, **k):
        raise AssertionError("a Simulation was built for a refused case")

    monkeypatch.setattr("dsmc.runner.Simulation", no_simulation)
    monkeypatch.setattr("dsmc.simulation.Simulation", no_simulation)


@pytest.mark.parametrize("command", ["run", "check"])
def test_cli_refuses_before_allocating(tmp_path, capsys, little_memory, command):
    path = tmp_path / "big.toml"
    path.write_text(CASE.format(cells=100000, ppc=1000, steps=20, batches=20), encoding="utf-8")
    argv = [command, str(path)] + (["-o", str(tmp_path / "big.h5")] if command == "run" else [])
    assert main(argv) == 2
    out, err = capsys.readouterr()
    assert out == ""
    line = one_error_line(err)
    assert line.startswith(f"dsmc: error: {path}: numerics.particles_per_cell: "), line
    assert sorted(p.name for p in tmp_path.iterdir()) == ["big.toml"]


def test_a_case_that_fits_still_runs(tmp_path, capsys, monkeypatch):
    monkeypatch.setattr(resources, "available_memory", lambda: 2 * 2**30)
    path = tmp_path / "small.toml"
    path.write_text(CASE.format(cells=5, ppc=10, steps=4, batches=2), encoding="utf-8")
    assert main(["run", str(path), "-o", str(tmp_path / "s.h5"), "--quiet", "--threads", "1"]) == 0
    assert (tmp_path / "s.h5").is_file()


# ----------------------------------------------------------------------------
# warning about very long runs


LONG = CASE.format(cells=1000, ppc=100, steps=10**9, batches=20)


def test_check_prints_the_estimate_and_warns_of_a_long_run(tmp_path, capsys):
    path = tmp_path / "long.toml"
    path.write_text(LONG, encoding="utf-8")
    assert main(["check", str(path)]) == 0
    out, err = capsys.readouterr()
    assert "estimated memory" in out and "estimated run time" in out and "assumed" in out
    lines = err.splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"dsmc: {path}: warning: estimated run time ")
    assert "an estimate" in lines[0]


def test_check_of_a_short_run_does_not_warn(tmp_path, capsys):
    path = tmp_path / "short.toml"
    path.write_text(CASE.format(cells=5, ppc=10, steps=40, batches=2), encoding="utf-8")
    assert main(["check", str(path)]) == 0
    out, err = capsys.readouterr()
    assert err == "" and "estimated run time" in out


class _Stop(Exception):
    pass


def test_run_warns_of_a_long_run_before_starting(tmp_path, capsys, monkeypatch):
    def stop(*a, **k):
        raise _Stop

    monkeypatch.setattr("dsmc.runner.Simulation", stop)  # do not actually run for years
    path = tmp_path / "long.toml"
    path.write_text(LONG, encoding="utf-8")
    with pytest.raises(_Stop):
        main(["run", str(path), "-o", str(tmp_path / "long.h5")])
    err = capsys.readouterr().err
    assert err.startswith(f"dsmc: {path}: warning: estimated run time ")
    with pytest.raises(_Stop):
        main(["run", str(path), "-o", str(tmp_path / "long.h5"), "--quiet"])
    assert capsys.readouterr().err == ""  # --quiet: nothing but errors


def test_long_run_estimate_counts_threads_and_wall_hits():
    c = parse_case(LONG)
    one, four = resources.estimate(c, threads=1), resources.estimate(c, threads=4)
    assert one.run_seconds == pytest.approx(4 * four.run_seconds)
    assert one.run_seconds == pytest.approx(one.particle_steps / resources.THROUGHPUT_PER_THREAD)
    hits = resources.estimate(parse_case(LONG.replace("[numerics]", "[numerics]\ntime_step = 1e-3")),
                              threads=1)
    # 1 ms at c_mp = 353 m/s (argon, 300 K) across 1 cm: 35 crossings per step, each a hit
    assert hits.crossings == pytest.approx(1e-3 * (2 * 1.380649e-23 * 300 / 6.63e-26) ** 0.5
                                           / 1e-2, rel=1e-2)
    assert hits.run_seconds == pytest.approx((1 + hits.crossings) * one.run_seconds)


# ----------------------------------------------------------------------------
# never overwriting a result by accident


def test_existing_result_is_not_overwritten(tmp_path, capsys):
    path = tmp_path / "c.toml"
    path.write_text(CASE.format(cells=5, ppc=10, steps=4, batches=2), encoding="utf-8")
    out = tmp_path / "c.h5"
    out.write_bytes(b"an earlier result")
    assert main(["run", str(path), "-o", str(out)]) == 2
    stdout, err = capsys.readouterr()
    assert one_error_line(err) == f"dsmc: error: {out}: exists already (use --force to replace it)"
    assert stdout == "" and out.read_bytes() == b"an earlier result"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.h5", "c.toml"]
    assert main(["run", str(path), "-o", str(out), "--force", "--quiet", "--threads", "1"]) == 0
    assert out.read_bytes()[:8] == b"\x89HDF\r\n\x1a\n"


def test_resources_module_does_not_import_numba():
    code = "import sys, dsmc.resources; assert 'numba' not in sys.modules, 'numba imported'"
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert proc.returncode == 0, proc.stderr


def test_guarantees_page_states_the_formula_of_the_code():
    doc = (Path(__file__).resolve().parents[1] / "docs" / "guarantees.md").read_text()
    formula = (f"memory ≈ {resources.BASE_BYTES // 2**20} MiB + (1.2 P + 16) × "
               f"{round(resources.BYTES_PER_PARTICLE)} B + P × "
               f"{resources.COPY_BYTES_PER_PARTICLE} B + N × {resources.bytes_per_cell()} B + "
               f"B × N × {resources.bytes_per_batch_cell()} B")
    assert formula in doc, formula
