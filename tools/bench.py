#!/usr/bin/env python3
"""Throughput benchmark: phases, bandwidth floor, scaling, memory, warm start; the 2-D cavity.

    python tools/bench.py [--particles 1e6] [--threads 1,2] [--steps N]
                          [--scaling] [--memory] [--startup] [--cavity] [--all] [--json out.json]

The bench case is a planar Couette flow of argon (VHS) between diffuse walls
sliding at -100 and +100 m/s, 40 particles per cell, cells of a third of a
mean free path and a time step of 0.2 mean collision times, so that a
particle collides about 0.2 times per step.  The domain grows with the
particle count (constant cell size and particles per cell), so the work per
particle and step is the same at every size.  Fields are sampled every step.

What it measures, all within one run so that the figures can be compared
with each other on a noisy machine:

* the phases of :meth:`dsmc.simulation.Simulation.step`, timed one by one by
  calling the same methods in the same order (move with cell keys and
  histogram, sort scatter, collide with the cell moments sampled inside it
  alternately before and after each cell's collisions, wall sums), and the
  whole ``step`` call; each as
  particle-steps per second (median over steps).  Thread counts take turns
  in chunks of about 0.2 s; a chunk during which other processes kept more
  than ``--max-others`` cores busy (from /proc/stat) is dropped and re-run;
* a triad ``a[:] = b + s c`` in a numba kernel on arrays of four times the
  last-level cache (at least 256 MiB each), per thread count: the
  memory-bandwidth floor.  It is timed once per round between the chunks of
  engine steps, and its median is used, so that it sees the same machine as
  the engine (the speed of a shared host drifts by tens of percent within
  minutes); a best of 7 taken before is printed too, and the triad on arrays
  the size of the engine's working set (which may fit in the cache);
* with ``--scaling``: time per particle-step from 1e4 to 1e7 particles, all
  sizes timed in turn in the same pass;
* with ``--memory``: peak memory of fresh subprocesses at two sizes
  (tracemalloc peak for numpy arrays, ``ru_maxrss`` for the whole process),
  and bytes per particle from the slope between the two;
* with ``--cavity``: the same phase timings for a 2-D square lid-driven
  argon cavity (:func:`cavity_text`: the bench case's cell size, particles
  per cell and time step, diffuse walls, the lid sliding at the wall speed)
  of about ``--particles`` particles, as particle-steps per second per core
  for each thread count (the 2-D target is 12 M per core);
* with ``--startup``: seconds from launching a fresh interpreter to the end
  of the first step of ``Simulation(parse_case(text))`` with the numba cache
  warm (a first launch warms it; median of the warm launches).

Bandwidth floor.  The fraction printed is ``rate * B / triad``: the
particle-step rate times the bytes ``B`` one particle-step must move, over
the triad bandwidth.  Both are counted the STREAM way: each array element
read or written counts its size once (the triad 24 B per element) and
write-allocate traffic is counted for neither.  ``B`` per phase
(:func:`bytes_per_particle_step`; pos 8 B, v 24 B, sp 1 B, key 4 B):

    move            45   read pos, v, sp; write pos and the cell key (the
                         per-chunk histogram stays in cache)
    sort            70   scatter: read key, pos, v, sp; write pos, v, sp
    collide_sample 25+32c  read v, sp once for the moments and the
                         collisions (a cell stays in cache between the two);
                         the fraction c of particles that collide writes v
                         and reads pos (separation statistic)

about 146 B per particle-step at c = 0.2 (per-cell arrays, 40 particles per
cell, are left out).

It asserts nothing: targets are printed next to the figures, and ``--json``
writes every figure.

Where the time went and what was done about it (one thread, 1e6 particles,
ns per particle-step): before, move 8.2, keys 1.3, counting sort 6.3, three
permutation gathers 12.5, sample 8.3, collide 17.3 (54 in all).  The move
kernel now writes each particle's cell key and the per-chunk histogram, and
takes a scalar path for particles that hit no wall; the sort scatters the
particle data straight to its sorted place (move + sort 28 -> 17); sampling
sums in scalars per cell (7.2 -> 4.3, measured alone); the scattering azimuth
comes from a point in the unit disc instead of cos/sin (-3); sigma*g is
evaluated in single precision with a double fallback near each decision (-2);
the cell moments are summed inside the collision kernel, before or after each
cell's collisions (five alternating runs against the separate pass, medians:
collide and sample 11.6 + 2.3 -> 9.4 at 1e6 particles, 14 + 2.3 -> 9 at 1e6
and 1e7 in the scaling pass, where the collisions alone had been 7.5 in the
cache; step 24.7 -> 18.9); the collision kernel prefetches the particle lines
of the cell two ahead (collisions alone 19.6 -> 8.3 at 1e6; with the sampling
inside, step 18.9 -> 17.2, and the time per particle-step from 1e4 to 1e7
within 17 % on one thread).
Tried and not kept: a per-chunk local moment array in sampling (8.4 ns against
6.9), ``exp(e log g^2)`` or ``math.pow`` for the cross-section (no gain);
chunks of two blocks instead of eight (two threads at 1e4 particles 14 -> 13
ns, but the per-chunk histograms of a sparse 2-D run with many cells grow
fourfold).
"""

from __future__ import annotations

import argparse
import json
import math
import os
import platform
import statistics
import subprocess
import sys
import time
from pathlib import Path

import numba as nb
import numpy as np

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:  # run from a checkout without installing
    sys.path.insert(0, str(ROOT))

from dsmc import simulation as simmod  # noqa: E402
from dsmc.case import parse_case  # noqa: E402
from dsmc.gas import kinetic  # noqa: E402
from dsmc.gas.species import get_species  # noqa: E402
from dsmc.kernels.move import n_blocks  # noqa: E402
from dsmc.kernels.collide import SAMPLE_AFTER, SAMPLE_BEFORE  # noqa: E402

# ----------------------------------------------------------------------------- the case

PPC = 40.0  # particles per cell
COLLISIONS_PER_STEP = 0.2  # dt / tau_c: collisions per particle per step
DX_OVER_MFP = 1.0 / 3.0
TEMPERATURE = 273.15  # K
PRESSURE = 1000.0  # Pa; only sets the length scale (the work does not depend on it)
WALL_SPEED = 100.0  # m/s

TARGETS = {
    "single_thread_particle_steps_per_s": 20e6,
    "bandwidth_fraction": 0.4,
    "two_thread_speedup": 1.8,
    "scaling_spread": 0.20,  # max/min time per particle-step - 1
    "bytes_per_particle": 120.0,
    "warm_start_s": 3.0,
    "cavity_particle_steps_per_s_per_core": 12e6,
}


def _numerics_and_run(seed: int) -> str:
    """The [numerics] and [run] tables of both bench cases: PPC particles per cell, a time step
    of COLLISIONS_PER_STEP collision times, sampling every step."""
    return f"""[numerics]
particles_per_cell = {PPC!r}
collision_time_fraction = {COLLISIONS_PER_STEP!r}
transit_fraction = 10.0   # let the collision time set the step
[run]
seed = {seed}
transient_steps = 0
sample_steps = 1000000
sample_interval = 1
batches = 2
"""


def _cell_size() -> float:
    """The bench cell: DX_OVER_MFP mean free paths of the argon gas (VHS)."""
    n = PRESSURE / (kinetic.K_B * TEMPERATURE)
    return DX_OVER_MFP * float(kinetic.mean_free_path(get_species("Ar"), TEMPERATURE, n, "vhs"))


_GAS = f"""[gas]
species = "Ar"
collision_model = "vhs"
temperature = {TEMPERATURE!r}
pressure = {PRESSURE!r}
"""


def case_text(particles: float, seed: int = 1) -> str:
    """Case-file text of the bench Couette flow with about ``particles`` particles."""
    cells = max(2, int(round(particles / PPC)))
    length = cells * _cell_size()
    return f"""\
title = "bench: argon Couette, {cells} cells"
{_GAS}[domain]
length = {length!r}
cells = {cells}
[boundary.xmin]
model = "diffuse"
temperature = {TEMPERATURE!r}
velocity = [0.0, {-WALL_SPEED!r}, 0.0]
[boundary.xmax]
model = "diffuse"
temperature = {TEMPERATURE!r}
velocity = [0.0, {WALL_SPEED!r}, 0.0]
[initial]
profile = "linear"
{_numerics_and_run(seed)}"""


def cavity_text(particles: float, seed: int = 1) -> str:
    """Case-file text of the 2-D bench: a square lid-driven argon cavity (diffuse walls, the
    ymax lid sliding at WALL_SPEED) of about ``particles`` particles, with the cells, particles
    per cell and time step of the 1-D bench case."""
    side = max(2, int(round(math.sqrt(particles / PPC))))
    length = side * _cell_size()
    walls = ""
    for name in ("xmin", "xmax", "ymin", "ymax"):
        lid = f"velocity = [{WALL_SPEED!r}, 0.0, 0.0]\n" if name == "ymax" else ""
        walls += f'[boundary.{name}]\nmodel = "diffuse"\ntemperature = {TEMPERATURE!r}\n{lid}'
    return f"""\
title = "bench: argon lid-driven cavity, {side} x {side} cells"
{_GAS}[domain]
length = [{length!r}, {length!r}]
cells = [{side}, {side}]
{walls}{_numerics_and_run(seed)}"""


def make_sim(particles: float, text=case_text):
    sim = simmod.Simulation(parse_case(text(particles), "<bench>"))
    sim.reset_samples(interval=1)
    return sim


# ----------------------------------------------------------------------------- bytes model

def bytes_per_particle_step(coll_per_particle: float = COLLISIONS_PER_STEP) -> dict[str, float]:
    """Bytes each phase must read and write per particle and step (STREAM convention).

    Particle arrays: pos 8 B, v 24 B, sp 1 B, key 4 B, perm 8 B.  Per-cell
    arrays (40 particles per cell) and the per-block wall accumulators are
    left out.  ``coll_per_particle`` is the fraction of particles that
    collide in a step (each writes its v and reads its pos for the
    separation statistic).
    """
    c = coll_per_particle
    return {
        "move": 8 + 24 + 1 + 8 + 4,  # read pos, v (one row), sp; write pos, key
        "sort": 4 + 2 * (8 + 24 + 1),  # scatter: read key, pos, v, sp; write pos, v, sp
        # read v, sp of the cell (for the moments and the partners); write v, read pos of colliders
        "collide_sample": 24 + 1 + c * (24 + 8),
        "walls": 0.0,
    }


# ----------------------------------------------------------------------------- triad

@nb.njit(parallel=True)
def _triad(a, b, c, s):
    for i in nb.prange(a.size):
        a[i] = b[i] + s * c[i]


def llc_bytes() -> int:
    """Size of the largest CPU cache (sysfs), or 32 MiB if unknown."""
    best = 0
    base = Path("/sys/devices/system/cpu/cpu0/cache")
    for d in base.glob("index*"):
        try:
            text = (d / "size").read_text().strip()
        except OSError:
            continue
        mult = {"K": 1024, "M": 1024**2, "G": 1024**3}.get(text[-1:], 1)
        try:
            best = max(best, int(text.rstrip("KMG")) * mult)
        except ValueError:
            pass
    return best or 32 * 1024**2


class Triad:
    """Triad arrays kept allocated, so the triad can be timed between chunks of engine steps."""

    def __init__(self, array_bytes: int):
        self.n = max(1024, array_bytes // 8)
        self.a = np.zeros(self.n)
        self.b = np.full(self.n, 1.0)
        self.c = np.full(self.n, 2.0)
        _triad(self.a, self.b, self.c, 3.0)  # compile / warm

    def seconds(self) -> float:
        t0 = time.perf_counter()
        _triad(self.a, self.b, self.c, 3.0)
        return time.perf_counter() - t0

    def bandwidth(self, seconds: float) -> float:
        return 24.0 * self.n / seconds


def triad_bandwidth(threads: list[int], array_bytes: int, repeats: int = 7) -> dict[int, float]:
    """Best-of-``repeats`` triad bandwidth in B/s (24 B per element) per thread count."""
    n = max(1024, array_bytes // 8)
    a = np.empty(n)
    b = np.full(n, 1.0)
    c = np.full(n, 2.0)
    a[:] = 0.0  # first touch
    out = {}
    for t in threads:
        nb.set_num_threads(t)
        _triad(a, b, c, 3.0)  # compile / warm
    times = {t: [] for t in threads}
    for _ in range(repeats):  # interleave thread counts against drift
        for t in threads:
            nb.set_num_threads(t)
            t0 = time.perf_counter()
            _triad(a, b, c, 3.0)
            times[t].append(time.perf_counter() - t0)
    for t in threads:
        out[t] = 24.0 * n / min(times[t])
    del a, b, c
    return out


# ----------------------------------------------------------------------------- machine load

class Load:
    """CPU time used on the whole machine, and by this process, between start and stop.

    On a shared machine other processes take cores away from a parallel
    kernel; ``others`` (cores busy with other work, averaged over the
    interval) says how much a figure may have suffered.
    """

    def __init__(self):
        self.t0 = time.perf_counter()
        self.m0 = self._machine()
        self.p0 = time.process_time()

    @staticmethod
    def _machine():
        try:
            with open("/proc/stat") as f:
                v = [int(x) for x in f.readline().split()[1:]]
        except (OSError, ValueError):
            return None
        idle = v[3] + (v[4] if len(v) > 4 else 0)
        steal = v[7] if len(v) > 7 else 0
        return sum(v[:8]) - idle - steal, steal

    def stop(self) -> dict:
        wall = time.perf_counter() - self.t0
        own = time.process_time() - self.p0
        out = {"wall_s": wall, "own_cores": own / wall if wall > 0 else float("nan")}
        m1 = self._machine()
        if self.m0 is not None and m1 is not None and wall > 0:
            tick = os.sysconf("SC_CLK_TCK")
            busy = (m1[0] - self.m0[0]) / tick
            out["others_cores"] = max(0.0, busy - own) / wall
            out["steal_cores"] = (m1[1] - self.m0[1]) / tick / wall
        try:
            out["loadavg_1min"] = os.getloadavg()[0]
        except OSError:
            pass
        return out


# ----------------------------------------------------------------------------- phases

PHASES = ("move", "sort", "collide_sample", "walls")
PHASE_LABELS = {"move": "move", "sort": "sort", "collide_sample": "coll+s", "walls": "walls"}


def step_phases(sim, moments, walls, times):
    """One step, as Simulation.step(sample=True) does it, with each phase timed; the moments
    go to ``moments``, before the collisions on every other call (counted by ``times``)."""
    p = sim.particles
    when = SAMPLE_BEFORE if len(times["move"]) % 2 == 0 else SAMPLE_AFTER
    bs = simmod.BLOCK_SIZE
    pc = time.perf_counter
    t0 = pc()
    sim._move()
    t1 = pc()
    sim._sort(counted=True)
    t2 = pc()
    sim._collide(when, moments)
    t3 = pc()
    walls += sim._wall_acc[: n_blocks(p.n, bs)].sum(axis=0)
    t4 = pc()
    sim.step_count += 1
    for name, dt in zip(PHASES, (t1 - t0, t2 - t1, t3 - t2, t4 - t3)):
        times[name].append(dt)


MAX_OTHERS = 0.25  # cores used by other processes above which a chunk of timed steps is dropped
CHUNK_SECONDS = 0.2  # timed steps are run in chunks of about this length (/proc/stat ticks are 10 ms)


def measure(sim, threads: list[int], steps: int, max_others: float = MAX_OTHERS,
            patience: float = 4.0, triad: Triad | None = None) -> dict:
    """Per-thread-count phase and whole-step timings of one simulation (see :func:`measure_many`)."""
    return measure_many([sim], threads, [steps], max_others, patience, triad)[0]


def measure_many(sims: list, threads: list[int], steps: list[int], max_others: float = MAX_OTHERS,
                 patience: float = 4.0, triad: Triad | None = None) -> list[dict]:
    """Phase and whole-step timings (medians over steps) per simulation and thread count.

    Every (simulation, thread count) pair runs in turn in chunks of about
    CHUNK_SECONDS, so that all of them see the same machine; in each chunk
    phase-timed steps and whole ``step`` calls alternate, after one untimed
    step that brings the simulation's arrays back into the caches.  A chunk during
    which other processes kept more than ``max_others`` cores busy is
    dropped, and chunks are run until every pair has its ``steps`` kept
    steps of each kind or ``patience`` times the expected time has passed
    (then the dropped chunks count as well, and the result says so).

    With ``triad``, the triad is timed once per round and thread count, in
    the same time windows as the engine; the result of the first simulation
    then holds its median bandwidth per thread count (quiet rounds only).
    """
    jobs = [(j, t) for j in range(len(sims)) for t in threads]
    moments = [np.zeros_like(sim._batch.moments) for sim in sims]
    walls = [np.zeros((sim.n_sides, simmod.N_WALL_ACC)) for sim in sims]
    scratch = {k: [] for k in PHASES}
    est = {}
    for j, t in jobs:  # warm-up (compilation, caches, first touch of scratch arrays)
        nb.set_num_threads(t)
        sim = sims[j]
        for _ in range(2):
            step_phases(sim, moments[j], walls[j], scratch)
            sim.step(sample=True)
        t0 = time.perf_counter()
        sim.step(sample=True)
        est[j, t] = max(time.perf_counter() - t0, 1e-6)
    chunk = {jt: max(1, min(steps[jt[0]], int(round(CHUNK_SECONDS / (2 * est[jt]))))) for jt in jobs}
    expected = sum(2 * steps[j] * est[j, t] for j, t in jobs)
    deadline = time.perf_counter() + patience * expected + 2.0

    def fresh():
        return {jt: {"phases": {k: [] for k in PHASES}, "step": []} for jt in jobs}

    kept, every = fresh(), fresh()
    n_kept = {j: 0 for j in range(len(sims))}
    n_dropped = {j: 0 for j in range(len(sims))}
    others_kept = {j: [] for j in range(len(sims))}
    coll0 = [sim._coll[:, 0].sum() for sim in sims]
    n_sum = [0] * len(sims)
    loads = [Load() for _ in sims]
    triad_kept = {t: [] for t in threads}
    triad_every = {t: [] for t in threads}
    while True:
        todo = [jt for jt in jobs if len(kept[jt]["step"]) < steps[jt[0]]]
        if not todo:
            break
        if time.perf_counter() > deadline:
            todo = [jt for jt in jobs if len(every[jt]["step"]) < steps[jt[0]]]
            if not todo:
                break
        if triad is not None:
            for t in threads:
                nb.set_num_threads(t)
                ld = Load()
                sec = triad.seconds()
                triad_every[t].append(sec)
                if ld.stop().get("others_cores", 0.0) <= max_others:
                    triad_kept[t].append(sec)
        for j, t in todo:
            sim = sims[j]
            nb.set_num_threads(t)
            ph = {k: [] for k in PHASES}
            st = []
            ld = Load()
            sim.step(sample=True)  # untimed: refills the caches after the other jobs' chunks
            n_sum[j] += sim.n_particles
            for _ in range(chunk[j, t]):
                step_phases(sim, moments[j], walls[j], ph)
                t0 = time.perf_counter()
                sim.step(sample=True)
                st.append(time.perf_counter() - t0)
                n_sum[j] += 2 * sim.n_particles
            others = ld.stop().get("others_cores", 0.0)
            targets = [every[j, t]]
            if others <= max_others:
                targets.append(kept[j, t])
                n_kept[j] += 1
                others_kept[j].append(others)
            else:
                n_dropped[j] += 1
            for r in targets:
                for k in PHASES:
                    r["phases"][k].extend(ph[k])
                r["step"].extend(st)
    outs = []
    for j, sim in enumerate(sims):
        clean = all(len(kept[j, t]["step"]) >= max(1, steps[j] // 2) for t in threads)
        res = kept if clean else every
        coll = sim._coll[:, 0].sum() - coll0[j]
        n = sim.n_particles
        counts = np.diff(sim.cell_start).astype(float)
        cand = float(np.sum(0.5 * counts * (counts - 1) * sim.weight * sim.sgmax * sim.dt / sim.volume))
        ld = loads[j].stop()
        ld.update({"kept_chunks": n_kept[j], "dropped_chunks": n_dropped[j],
                   "max_others_cores": max_others, "clean": clean,
                   "others_cores_kept_mean": float(np.mean(others_kept[j])) if others_kept[j]
                   else float("nan")})
        out = {"particles": n, "cells": sim.grid.cells,
               "steps_per_thread_count": min(len(res[j, t]["step"]) for t in threads),
               "chunk_steps": {t: chunk[j, t] for t in threads}, "load": ld,
               "collisions_per_particle_per_step": 2.0 * coll / n_sum[j] if n_sum[j] else float("nan"),
               "candidate_pairs_per_particle_per_step": cand / n,
               "threads": {}}
        for t in threads:
            r = res[j, t]
            ph = {k: statistics.median(v) for k, v in r["phases"].items()}
            step = statistics.median(r["step"])
            out["threads"][t] = {
                "phase_seconds": ph,
                "phase_particle_steps_per_s": {k: (n / v if v > 0 else float("inf"))
                                               for k, v in ph.items()},
                "sum_of_phases_seconds": sum(ph.values()),
                "step_seconds": step,
                "step_seconds_min": min(r["step"]),
                "particle_steps_per_s": n / step,
                "step_overhead_seconds": step - sum(ph.values()),
            }
        if triad is not None and j == 0:
            tk = triad_kept if all(triad_kept[t] for t in threads) else triad_every
            out["triad_interleaved_Bps"] = {t: triad.bandwidth(statistics.median(tk[t])) for t in threads}
            out["triad_interleaved_best_Bps"] = {t: triad.bandwidth(min(tk[t])) for t in threads}
            out["triad_interleaved_rounds"] = {t: len(tk[t]) for t in threads}
        outs.append(out)
    return outs


# ----------------------------------------------------------------------------- scaling

def scaling(sizes: list[float], threads: list[int], budget: float, min_steps: int = 8,
            max_others: float = MAX_OTHERS) -> list[dict]:
    """Time per particle-step at each size; all sizes are timed interleaved, in one pass."""
    sims = [make_sim(size) for size in sizes]
    steps = [max(min_steps, int(budget / sim.n_particles)) for sim in sims]
    ms = measure_many(sims, threads, steps, max_others)
    rows = []
    for sim, st, m in zip(sims, steps, ms):
        n = sim.n_particles
        row = {"particles": n, "cells": sim.grid.cells, "steps": m["steps_per_thread_count"],
               "load": m["load"],
               "collisions_per_particle_per_step": m["collisions_per_particle_per_step"],
               "threads": {}}
        for t in threads:
            r = m["threads"][t]
            row["threads"][t] = {
                "ns_per_particle_step": 1e9 * r["step_seconds"] / n,
                "particle_steps_per_s": r["particle_steps_per_s"],
                "phase_ns_per_particle_step": {k: 1e9 * v / n for k, v in r["phase_seconds"].items()},
            }
        rows.append(row)
    return rows


# ----------------------------------------------------------------------------- subprocesses

_MEMORY_CHILD = r"""
import json, resource, sys, time, tracemalloc
sys.path.insert(0, {root!r})
from dsmc.case import parse_case
from dsmc.simulation import Simulation
rss0 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
tracemalloc.start()
sim = Simulation(parse_case({text!r}, "<bench>"))
sim.reset_samples(interval=1)
for _ in range({steps}):
    sim.step(sample=True)
cur, peak = tracemalloc.get_traced_memory()
rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
print(json.dumps({{"particles": sim.n_particles, "tracemalloc_peak": peak,
                  "tracemalloc_current": cur, "maxrss": rss, "maxrss_after_imports": rss0,
                  "particle_arrays": sim.particles.nbytes()}}))
"""

_STARTUP_CHILD = r"""
import time
t_start = time.time()
import json, sys
sys.path.insert(0, {root!r})
from dsmc.case import parse_case
from dsmc.simulation import Simulation
t_import = time.time()
sim = Simulation(parse_case({text!r}, "<bench>"))
t_init = time.time()
sim.step(sample=True)
t_step = time.time()
print(json.dumps({{"t_start": t_start, "t_import": t_import, "t_init": t_init,
                  "t_step": t_step, "particles": sim.n_particles}}))
"""


def _child(code: str, env_threads: int | None = None) -> tuple[dict, float]:
    env = dict(os.environ)
    if env_threads:
        env["NUMBA_NUM_THREADS"] = str(env_threads)
    t0 = time.time()
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env,
                         check=False)
    if out.returncode != 0:
        raise RuntimeError(f"benchmark subprocess failed:\n{out.stderr}")
    return json.loads(out.stdout.strip().splitlines()[-1]), t0


def memory(sizes: list[float], steps: int = 3) -> dict:
    rows = []
    for size in sizes:
        code = _MEMORY_CHILD.format(root=str(ROOT), text=case_text(size), steps=steps)
        rows.append(_child(code)[0])
    (a, b) = rows[0], rows[-1]
    dn = b["particles"] - a["particles"]
    out = {"runs": rows}
    for key in ("tracemalloc_peak", "maxrss"):
        slope = (b[key] - a[key]) / dn if dn else float("nan")
        out[key + "_bytes_per_particle"] = slope
        out[key + "_fixed_bytes"] = a[key] - slope * a["particles"]
    return out


def startup(particles: float, repeats: int = 3) -> dict:
    code = _STARTUP_CHILD.format(root=str(ROOT), text=case_text(particles))
    runs = []
    for i in range(repeats + 1):  # the first launch warms the numba cache
        r, t0 = _child(code)
        runs.append({"import_s": r["t_import"] - t0, "init_s": r["t_init"] - r["t_import"],
                     "first_step_s": r["t_step"] - r["t_init"], "total_s": r["t_step"] - t0,
                     "particles": r["particles"]})
    warm = runs[1:]
    med = statistics.median(x["total_s"] for x in warm)
    best = min(warm, key=lambda x: abs(x["total_s"] - med))
    return {"first_launch": runs[0], "warm_runs": warm, "warm_start_s": med, "warm_median_run": best}


# ----------------------------------------------------------------------------- report

def _fmt_rate(x: float) -> str:
    return f"{x / 1e6:9.2f} M/s" if math.isfinite(x) else "      inf"


def _load_line(load: dict) -> str:
    text = (f"machine load while timing: other processes {load.get('others_cores', float('nan')):.2f} "
            f"cores on average ({load.get('others_cores_kept_mean', float('nan')):.2f} in the "
            f"{load.get('kept_chunks', 0)} chunks kept, {load.get('dropped_chunks', 0)} dropped above "
            f"{load.get('max_others_cores', MAX_OTHERS):.2f}), steal {load.get('steal_cores', float('nan')):.2f}")
    if not load.get("clean", True):
        text += "\n  WARNING: shared machine too busy: busy chunks were used, thread figures unreliable"
    return text


def _ok(value: float, target: float, larger: bool = True) -> str:
    if not math.isfinite(value):
        return "  ?"
    return " ok" if (value >= target if larger else value <= target) else " MISS"


def report(res: dict) -> str:
    lines = []
    m = res["main"]
    n = m["particles"]
    threads = sorted(m["threads"])
    bpp = res["bytes_per_particle_step"]
    lines.append(f"bench case: argon Couette, {n} particles, {res['cells']} cells, "
                 f"dt/tau_c = {res['dt_over_tau_c']:.3f}, "
                 f"collisions per particle per step = {m['collisions_per_particle_per_step']:.3f} "
                 f"(candidate pairs per particle {m['candidate_pairs_per_particle_per_step']:.3f})")
    lines.append(f"threads available {res['machine']['threads_available']}, layer "
                 f"{res['machine']['threading_layer']}, LLC {res['machine']['llc_bytes'] / 2**20:.0f} MiB, "
                 f"{m['steps_per_thread_count']} timed steps per thread count (medians)")
    lines.append(_load_line(m["load"]))
    lines.append("")
    head = f"{'phase':15s} {'B/p-step':>8s}" + "".join(f" {f'{t} thr rate':>13s} {'ns/p':>6s} {'GB/s':>6s}"
                                                    for t in threads)
    lines.append(head)
    for k in PHASES + ("sum", "step"):
        row = f"{k:15s} {bpp.get(k, bpp['total'] if k in ('sum', 'step') else 0):8.1f}"
        for t in threads:
            r = m["threads"][t]
            if k == "sum":
                sec = r["sum_of_phases_seconds"]
            elif k == "step":
                sec = r["step_seconds"]
            else:
                sec = r["phase_seconds"][k]
            rate = n / sec if sec > 0 else float("inf")
            b = bpp.get(k, bpp["total"] if k in ("sum", "step") else 0.0)
            row += f" {_fmt_rate(rate):>13s} {1e9 * sec / n:6.2f} {rate * b / 1e9:6.2f}"
        lines.append(row)
    lines.append("")
    tri = m["triad_interleaved_Bps"]
    for t in threads:
        lines.append(f"triad {t} thr, {res['triad_array_bytes'] / 2**20:.0f} MiB arrays: "
                     f"{tri[t] / 1e9:.2f} GB/s (median of {m['triad_interleaved_rounds'][t]}, timed "
                     f"between the chunks above; best {m['triad_interleaved_best_Bps'][t] / 1e9:.2f}; "
                     f"best of 7 before {res['triad_Bps'][t] / 1e9:.2f}); at the engine's working-set "
                     f"size ({res['triad_ws_array_bytes'] / 2**20:.0f} MiB arrays): "
                     f"{res['triad_ws_Bps'][t] / 1e9:.2f} GB/s")
    lines.append(f"bytes per particle-step assumed: {bpp['total']:.1f} (STREAM convention; "
                 "see bytes_per_particle_step)")
    lines.append("")
    s = res["summary"]
    lines.append("targets:")
    lines.append(f"  1-thread particle-steps/s   {s['single_thread_particle_steps_per_s'] / 1e6:8.2f} M   "
                 f">= 20 M{_ok(s['single_thread_particle_steps_per_s'], 20e6)}")
    lines.append(f"  bandwidth-floor fraction    {s['bandwidth_fraction']:8.3f}     >= 0.4"
                 f"{_ok(s['bandwidth_fraction'], 0.4)}   (floor {s['floor_particle_steps_per_s'] / 1e6:.1f} M/s "
                 f"from the interleaved triad; {s['bandwidth_fraction_vs_best_triad']:.3f} against the best of 7)")
    if "two_thread_speedup" in s:
        lines.append(f"  2 threads / 1 thread        {s['two_thread_speedup']:8.3f}     >= 1.8"
                     f"{_ok(s['two_thread_speedup'], 1.8)}")
    if "cavity" in res:
        c = res["cavity"]
        lines.append("")
        lines.append(f"2-D lid-driven cavity: {c['particles']} particles, {c['grid'][0]} x {c['grid'][1]} "
                     f"cells, collisions per particle per step = "
                     f"{c['collisions_per_particle_per_step']:.3f}; {_load_line(c['load'])}")
        for t in threads:
            r = c["threads"][t]
            ph = r["phase_seconds"]
            lines.append(f"  {t} thr: {_fmt_rate(r['particle_steps_per_s'])} particle-steps/s, "
                         f"{_fmt_rate(r['particle_steps_per_s'] / t)} per core; ns/p: "
                         + " ".join(f"{k} {1e9 * ph[k] / c['particles']:.2f}" for k in PHASES))
        worst = s["cavity_particle_steps_per_s_per_core"]
        lines.append(f"  per core (worst thread count) {worst / 1e6:8.2f} M   >= 12 M{_ok(worst, 12e6)}")
    if "scaling" in res:
        lines.append("")
        lines.append("scaling (ns per particle-step, whole step):")
        lines.append(f"{'particles':>10s} {'cells':>7s} {'steps':>5s} {'coll/p':>6s}"
                     + "".join(f" {f'{t} thr':>7s}" for t in threads)
                     + "   phases at 1 thr: " + " ".join(f"{PHASE_LABELS[k]:>6s}" for k in PHASES))
        for row in res["scaling"]:
            line = (f"{row['particles']:10d} {row['cells']:7d} {row['steps']:5d} "
                    f"{row['collisions_per_particle_per_step']:6.3f}")
            for t in threads:
                line += f" {row['threads'][t]['ns_per_particle_step']:7.2f}"
            ph = row["threads"][threads[0]]["phase_ns_per_particle_step"]
            line += "                    " + " ".join(f"{ph[k]:6.2f}" for k in PHASES)
            ld = row["load"]
            line += (f"   others {ld.get('others_cores_kept_mean', float('nan')):.2f} cores, "
                     f"{ld.get('dropped_chunks', 0)} chunks dropped" + ("" if ld.get("clean", True) else " UNRELIABLE"))
            lines.append(line)
        for t in threads:
            lines.append(f"  spread max/min - 1 at {t} thr: {s[f'scaling_spread_{t}'] * 100:6.1f} %   "
                         f"<= 20 %{_ok(s[f'scaling_spread_{t}'], 0.2, larger=False)}")
    if "memory" in res:
        mem = res["memory"]
        lines.append("")
        lines.append("memory (fresh subprocess per size):")
        for r in mem["runs"]:
            lines.append(f"  {r['particles']:10d} particles: tracemalloc peak {r['tracemalloc_peak'] / 2**20:8.1f} MiB, "
                         f"maxrss {r['maxrss'] / 2**20:8.1f} MiB (after imports {r['maxrss_after_imports'] / 2**20:.1f}), "
                         f"particle arrays {r['particle_arrays'] / 2**20:.1f} MiB")
        worst = max(mem["tracemalloc_peak_bytes_per_particle"], mem["maxrss_bytes_per_particle"])
        lines.append(f"  bytes/particle (slope between the two sizes): tracemalloc peak "
                     f"{mem['tracemalloc_peak_bytes_per_particle']:.1f}, maxrss {mem['maxrss_bytes_per_particle']:.1f} "
                     f"(fixed {mem['maxrss_fixed_bytes'] / 2**20:.0f} MiB); larger {worst:.1f}"
                     f"   <= 120{_ok(worst, 120, larger=False)}")
    if "startup" in res:
        st = res["startup"]
        w = st["warm_median_run"]
        lines.append("")
        lines.append(f"warm start ({w['particles']} particles): {st['warm_start_s']:.2f} s to the end of the "
                     f"first step (imports {w['import_s']:.2f}, set-up {w['init_s']:.2f}, first step "
                     f"{w['first_step_s']:.2f}); first launch {st['first_launch']['total_s']:.2f} s"
                     f"   < 3 s{_ok(st['warm_start_s'], 3.0, larger=False)}")
    return "\n".join(lines)


def _sizes(text: str) -> list[float]:
    return [float(x) for x in text.split(",") if x.strip()]


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0],
                                 formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--particles", type=float, default=1e6, help="particles of the main run (1e6)")
    ap.add_argument("--threads", default=None, help="thread counts, e.g. 1,2 (default 1 and all)")
    ap.add_argument("--steps", type=int, default=None,
                    help="timed steps per thread count (default: about 3e7 particle-steps, 8..60)")
    ap.add_argument("--scaling", action="store_true", help="time per particle-step from 1e4 to 1e7")
    ap.add_argument("--scaling-sizes", default="1e4,1e5,1e6,1e7")
    ap.add_argument("--scaling-budget", type=float, default=3e7,
                    help="particle-steps per size and thread count in the scaling run")
    ap.add_argument("--memory", action="store_true", help="peak memory at two sizes (subprocesses)")
    ap.add_argument("--memory-sizes", default=None, help="two sizes (default particles/10, particles)")
    ap.add_argument("--startup", action="store_true", help="warm-start time (subprocesses)")
    ap.add_argument("--startup-particles", type=float, default=None, help="(default: --particles)")
    ap.add_argument("--startup-repeats", type=int, default=3, help="warm launches timed (median)")
    ap.add_argument("--cavity", action="store_true",
                    help="also the 2-D lid-driven cavity at --particles (per-core rate)")
    ap.add_argument("--all", action="store_true", help="--scaling --memory --startup --cavity")
    ap.add_argument("--triad-mb", type=float, default=None,
                    help="MiB per triad array (default: 4 x the largest cache, at least 256)")
    ap.add_argument("--max-others", type=float, default=MAX_OTHERS,
                    help="drop chunks of timed steps while other processes use more cores than this")
    ap.add_argument("--json", default=None, help="write all figures to this file")
    args = ap.parse_args(argv)
    if args.all:
        args.scaling = args.memory = args.startup = args.cavity = True

    nmax = nb.config.NUMBA_NUM_THREADS
    threads = sorted({int(t) for t in args.threads.split(",")}) if args.threads else sorted({1, nmax})
    threads = [t for t in threads if 1 <= t <= nmax] or [1]

    llc = llc_bytes()
    triad_bytes = int(args.triad_mb * 2**20) if args.triad_mb else max(256 * 2**20, 4 * llc)
    res: dict = {"machine": {"python": sys.version.split()[0], "numba": nb.__version__,
                             "numpy": np.__version__, "platform": platform.platform(),
                             "processor": platform.processor(), "threads_available": nmax,
                             "llc_bytes": llc},
                 "case": {"particles_per_cell": PPC, "dx_over_mean_free_path": DX_OVER_MFP,
                          "collision_time_fraction": COLLISIONS_PER_STEP, "temperature": TEMPERATURE,
                          "pressure": PRESSURE, "wall_speed": WALL_SPEED},
                 "targets": TARGETS}

    # the memory and startup subprocesses first: the parent holds little memory then
    if args.startup:
        res["startup"] = startup(args.startup_particles or args.particles, args.startup_repeats)
    if args.memory:
        sizes = _sizes(args.memory_sizes) if args.memory_sizes else [args.particles / 10, args.particles]
        res["memory"] = memory(sizes)

    res["triad_array_bytes"] = triad_bytes
    ld = Load()
    res["triad_Bps"] = triad_bandwidth(threads, triad_bytes)
    res["triad_load"] = ld.stop()

    sim = make_sim(args.particles)
    res["machine"]["threading_layer"] = _threading_layer(sim)
    n = sim.n_particles
    res["cells"] = sim.grid.cells
    res["dt"] = sim.dt
    res["dt_over_tau_c"] = sim.adequacy()["time_step_over_collision_time"]
    steps = args.steps or int(min(60, max(8, 3e7 / n)))
    # engine working set: particle arrays + scratch + key + perm
    ws = sim.particles.nbytes()
    res["triad_ws_array_bytes"] = max(1 << 20, ws // 3)
    res["triad_ws_Bps"] = triad_bandwidth(threads, res["triad_ws_array_bytes"])
    triad = Triad(triad_bytes)
    res["main"] = measure(sim, threads, steps, args.max_others, triad=triad)
    del sim, triad
    cpp = res["main"]["collisions_per_particle_per_step"]
    bpp = bytes_per_particle_step(cpp)
    bpp["total"] = sum(bpp.values())
    res["bytes_per_particle_step"] = bpp

    t1 = threads[0]
    rate1 = res["main"]["threads"][t1]["particle_steps_per_s"]
    tri = res["main"]["triad_interleaved_Bps"]
    floor1 = tri[t1] / bpp["total"]
    summary = {"particles": n, "threads_measured": threads,
               "single_thread_particle_steps_per_s": rate1,
               "floor_particle_steps_per_s": floor1,
               "bandwidth_fraction": rate1 / floor1,
               "bandwidth_fraction_vs_best_triad": rate1 * bpp["total"] / res["triad_Bps"][t1],
               "triad_GBps": {t: v / 1e9 for t, v in tri.items()},
               "triad_best_of_7_GBps": {t: v / 1e9 for t, v in res["triad_Bps"].items()},
               "bytes_per_particle_step": bpp["total"],
               "collisions_per_particle_per_step": cpp}
    if len(threads) > 1:
        tn = threads[-1]
        summary["two_thread_speedup" if tn == 2 else f"speedup_{tn}_threads"] = (
            res["main"]["threads"][tn]["particle_steps_per_s"] / rate1)
        summary["triad_thread_speedup"] = tri[tn] / tri[t1]
    if args.cavity:
        cav = make_sim(args.particles, cavity_text)
        res["cavity"] = measure(cav, threads, args.steps or int(min(60, max(8, 3e7 / cav.n_particles))),
                                args.max_others)
        res["cavity"]["grid"] = [cav.grid.nx, cav.grid.ny]
        del cav
        for t in threads:
            summary[f"cavity_particle_steps_per_s_per_core_{t}"] = (
                res["cavity"]["threads"][t]["particle_steps_per_s"] / t)
        summary["cavity_particle_steps_per_s_per_core"] = min(
            summary[f"cavity_particle_steps_per_s_per_core_{t}"] for t in threads)
    if args.scaling:
        res["scaling"] = scaling(_sizes(args.scaling_sizes), threads, args.scaling_budget,
                                 max_others=args.max_others)
        for t in threads:
            ns = [r["threads"][t]["ns_per_particle_step"] for r in res["scaling"]]
            summary[f"scaling_spread_{t}"] = max(ns) / min(ns) - 1.0
    if args.memory:
        summary["bytes_per_particle"] = max(res["memory"]["maxrss_bytes_per_particle"],
                                            res["memory"]["tracemalloc_peak_bytes_per_particle"])
        summary["bytes_per_particle_maxrss"] = res["memory"]["maxrss_bytes_per_particle"]
        summary["bytes_per_particle_tracemalloc"] = res["memory"]["tracemalloc_peak_bytes_per_particle"]
    if args.startup:
        summary["warm_start_s"] = res["startup"]["warm_start_s"]
    res["summary"] = summary

    print(report(res))
    if args.json:
        Path(args.json).write_text(json.dumps(_jsonable(res), indent=1, sort_keys=True) + "\n")
    return 0


def _threading_layer(sim) -> str:
    try:
        return nb.threading_layer()
    except ValueError:  # no parallel kernel has run yet
        sim.step(sample=True)
        return nb.threading_layer()


def _jsonable(x):
    if isinstance(x, dict):
        return {str(k): _jsonable(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_jsonable(v) for v in x]
    if isinstance(x, (np.floating, float)):
        return float(x) if math.isfinite(x) else None
    if isinstance(x, np.integer):
        return int(x)
    return x


if __name__ == "__main__":
    sys.exit(main())
