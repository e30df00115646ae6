"""Resource guards: memory and run-time estimates from a case, before anything is allocated.

A case whose arrays cannot fit in memory is refused with a one-line
:class:`~dsmc.errors.UserError` naming the case file and the key to change,
instead of failing later with an out-of-memory kill.  A run expected to take
very long gets a warning line.  Nothing here imports numba or the engine: the
estimate is arithmetic on the case values.

Memory model (bytes; ``P`` = particles at the start, ``N`` = cells, ``B`` =
batches, ``S`` = species; the byte counts are those of the arrays
:class:`~dsmc.simulation.Simulation` allocates, checked against the live
objects by ``tests/test_resources.py``)::

    capacity = 1.2 P + 16                   particle arrays are allocated with 20 % headroom
    memory   = BASE
             + capacity * BYTES_PER_PARTICLE    positions, velocities, species, their sort
                                                scratch copies and the cell keys
                                                (Particles.nbytes = 70 per slot, 86 in a
                                                2-D box); plus the move streams and wall
                                                accumulators per block
             + P * COPY_BYTES_PER_PARTICLE      copy of the live particles taken by a checkpoint
                                                (or read back on --resume)
             + N * BYTES_PER_CELL               per-cell state, collision streams, the current
                                                batch, sort histograms, initial profiles
             + B * N * BYTES_PER_BATCH_CELL     closed-batch accumulators, plus the per-batch
                                                fields formed when the result file is written

The estimate is meant to be an upper bound on the peak resident memory of a
run; ``tests/test_resources.py`` measures the peak of real runs against it.

Run time: particle-steps (``P * (transient_steps + sample_steps)``, times ``1 + crossings``
per step with an explicit time step: every wall hit costs about a particle-step) at an
assumed, conservative throughput of :data:`THROUGHPUT_PER_THREAD`
particle-steps per second per thread.  It is labelled an estimate wherever it
is shown: real throughput depends on the machine and the collision rate.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass

from dsmc.errors import UserError

# --- per-array byte counts (float64 = 8, int64 = 8, int32 = 4, uint8 = 1)
CAPACITY_FACTOR = 1.2  # Simulation allocates int(1.2 * particles) + 16 slots
CAPACITY_EXTRA = 16
BLOCK_SIZE = 1024  # particles per move stream (dsmc.simulation.BLOCK_SIZE)
# pos (n, 1), v (n, 3), sp (n,) and their scratch copies, int32 cell key: 70
PARTICLE_ARRAYS = 2 * (8 * 1 + 8 * 3 + 1) + 4
INTERNAL_ARRAYS = 2 * (8 + 4)  # erot (float64), vib (int32) and scratch: gases with internal modes
BLOCK_BYTES = 4 * 8 + 2 * 5 * 8  # per block: xoshiro state (4 uint64), wall accumulators (2 x 5)
BYTES_PER_PARTICLE = PARTICLE_ARRAYS + BLOCK_BYTES / BLOCK_SIZE
COPY_BYTES_PER_PARTICLE = 8 * 1 + 8 * 3 + 1  # state(): copies of pos, v, sp
# a 2-D box: the y coordinate and its scratch copy per slot, two more sides of wall
# accumulators per block, and the y coordinate in the checkpoint copy
PLANAR_EXTRA_BYTES = 2 * 8 + 2 * 5 * 8 / BLOCK_SIZE
PLANAR_EXTRA_COPY_BYTES = 8
INTERNAL_COPY_BYTES = 8 + 4  # state(): copies of erot, vib
MOMENTS = 15  # sampled moments per cell and species (dsmc.kernels.sample.N_MOMENTS)
COLL_STATS = 2  # per-cell collision statistics (dsmc.kernels.collide.N_COLL_STATS)
SORT_CHUNKS = 16  # histogram rows of the counting sort (int32 each; dsmc.kernels.sort)


def bytes_per_cell(species: int = 1) -> int:
    persistent = (8 + 8 + 8 + 8  # sgmax, remainder, cell_start, volume
                  + 4 * 8  # collision stream state
                  + COLL_STATS * 8)  # collision counters
    batch = MOMENTS * 8 * species + COLL_STATS * 8  # the open batch
    sort = 4 * SORT_CHUNKS  # per-chunk sort histograms
    initial = 8 * (1 + 3 + 1 + 1 + 1 + 1 + 1)  # T, u, rel, expected, counts, start, uniforms
    return persistent + batch + sort + initial


def bytes_per_batch_cell(species: int = 1) -> int:
    accumulators = MOMENTS * 8 * species + COLL_STATS * 8  # one closed batch
    fields = 23 * 8  # every cell field of one batch (1+1+3+1+3+1+9+3+1 doubles)
    error_temporaries = 3 * 9 * 8  # stacking one field over batches and its deviations
    return accumulators + fields + error_temporaries


BASE_BYTES = 768 * 2**20  # interpreter, numpy, numba, h5py, kernels: 170 MiB warm, 500 MiB compiling on a cold cache (measured)

THROUGHPUT_PER_THREAD = 5e6  # particle-steps per second and thread: an assumed, conservative value
LONG_RUN_SECONDS = 24 * 3600.0  # warn above this estimated run time
MAX_CROSSINGS = 1e6  # slab crossings per molecule and step above which a time step is refused
K_B = 1.380649e-23  # J/K, exact (SI 2019)


@dataclass(frozen=True)
class Estimate:
    particles: int  # simulated particles at the start (mean)
    cells: int
    batches: int
    memory: dict  # bytes by part: base, particles, cells, batches
    particle_steps: float
    threads: int
    crossings: float = 0.0  # slab crossings per molecule and step at the most probable speed


    @property
    def memory_bytes(self) -> int:
        return int(sum(self.memory.values()))

    @property
    def run_seconds(self) -> float:
        """Estimated wall time at the assumed throughput (an estimate, not a measurement)."""
        work = self.particle_steps * (1.0 + self.crossings)  # a wall hit costs about a step
        return work / (THROUGHPUT_PER_THREAD * max(1, self.threads))

    @property
    def key(self) -> str:
        """The case key that dominates the memory: what to change to need less."""
        m = self.memory
        return "numerics.particles_per_cell" if m["particles"] >= m["cells"] + m["batches"] \
            else "domain.cells"


def default_threads() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def estimate(case, threads: int | None = None) -> Estimate:
    """Memory and run-time estimate of ``case`` (a :class:`dsmc.case.Case`)."""
    cells = int(case.domain.n_cells)
    particles = int(math.ceil(case.numerics.particles_per_cell * cells))
    capacity = CAPACITY_FACTOR * particles + CAPACITY_EXTRA
    batches = int(case.run.batches)
    species = len(case.gas.all_species)
    rot_dof, theta_vib = case.gas.relaxation_tables()[:2]
    internal = bool(rot_dof.any() or theta_vib.any())
    per_slot = BYTES_PER_PARTICLE + (INTERNAL_ARRAYS if internal else 0)
    per_copy = COPY_BYTES_PER_PARTICLE + (INTERNAL_COPY_BYTES if internal else 0)
    if case.domain.dim == 2:
        per_slot += PLANAR_EXTRA_BYTES
        per_copy += PLANAR_EXTRA_COPY_BYTES
    memory = {
        "base": BASE_BYTES,
        "particles": capacity * per_slot + particles * per_copy,
        "cells": cells * bytes_per_cell(species),
        "batches": batches * cells * bytes_per_batch_cell(species),
    }
    steps = case.run.transient_steps + case.run.sample_steps
    return Estimate(particles, cells, batches, memory, float(particles) * steps,
                    int(threads) if threads else default_threads(), crossings(case))


def crossings(case) -> float:
    """Slab crossings per molecule and step with an explicit time step, at the most probable
    speed of the hottest temperature plus the gas drift across the slab (0 for "auto", whose
    step is at most ``transit_fraction`` of a cell transit)."""
    dt = case.numerics.time_step
    if dt is None:
        return 0.0
    t_max = max([case.gas.temperature] + [w.temperature for w in case.walls])
    speed = math.sqrt(2.0 * K_B * t_max / case.gas.species.mass) + abs(case.gas.velocity[0])
    return dt * speed / case.domain.length


def available_memory() -> int | None:
    """Bytes of memory available to a new allocation: MemAvailable from /proc/meminfo,
    else free physical pages from ``os.sysconf``; None when neither can be read."""
    try:
        with open("/proc/meminfo", encoding="ascii") as f:
            for line in f:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024  # kB
    except (OSError, ValueError, IndexError):
        pass
    try:
        return int(os.sysconf("SC_AVPHYS_PAGES")) * int(os.sysconf("SC_PAGE_SIZE"))
    except (AttributeError, ValueError, OSError):
        return None


def size(n: float) -> str:
    """Bytes in binary units, e.g. ``1.5 GiB``."""
    for unit in ("B", "KiB", "MiB", "GiB", "TiB", "PiB"):
        if abs(n) < 1024 or unit == "PiB":
            return f"{n:.3g} {unit}" if unit != "B" else f"{int(n)} B"
        n /= 1024
    raise AssertionError  # unreachable


def duration(seconds: float) -> str:
    if seconds < 120:
        return f"{seconds:.2g} s"
    if seconds < 7200:
        return f"{seconds / 60:.3g} min"
    if seconds < 2 * 86400:
        return f"{seconds / 3600:.3g} h"
    return f"{seconds / 86400:.3g} days"


def check_memory(case, est: Estimate, available: int | None = None) -> None:
    """Raise a one-line UserError when ``est`` needs more memory than is available."""
    avail = available_memory() if available is None else available
    if avail is None or est.memory_bytes <= avail:
        return
    raise UserError(
        f"{case.path}: {est.key}: the run needs about {size(est.memory_bytes)} of memory "
        f"({est.particles:.4g} particles, {est.cells} cells, {est.batches} batches), more than "
        f"the {size(avail)} available; use fewer particles per cell or fewer cells")


def long_run_warning(est: Estimate) -> str | None:
    """A warning line when the estimated run time exceeds :data:`LONG_RUN_SECONDS`."""
    if est.run_seconds <= LONG_RUN_SECONDS:
        return None
    return (f"warning: estimated run time {duration(est.run_seconds)} on {est.threads} threads "
            f"({est.particle_steps:.3g} particle-steps at an assumed "
            f"{THROUGHPUT_PER_THREAD:.0e} per second per thread; an estimate)")


def check_time_step(case, est: Estimate) -> None:
    """Refuse a time step so long that molecules would bounce between the walls
    millions of times per step (the move would practically never end)."""
    if est.crossings > MAX_CROSSINGS:
        raise UserError(
            f"{case.path}: numerics.time_step: a molecule would cross the slab about "
            f"{est.crossings:.3g} times per step (at most {MAX_CROSSINGS:.0e}); use a smaller "
            "time step or \"auto\"")


def guard(case, threads: int | None = None, available: int | None = None) -> Estimate:
    """Estimate ``case`` and refuse it if it cannot fit in memory or its time step would
    make a step endless; returns the estimate."""
    est = estimate(case, threads)
    check_time_step(case, est)
    check_memory(case, est, available)
    return est


def describe(est: Estimate) -> str:
    """One line for ``dsmc check``: the memory and run-time estimates."""
    m = est.memory
    return (f"estimated memory {size(est.memory_bytes)} (particle arrays {size(m['particles'])}, "
            f"cell and batch arrays {size(m['cells'] + m['batches'])}); estimated run time "
            f"{duration(est.run_seconds)} on {est.threads} threads ({est.particle_steps:.3g} "
            f"particle-steps at an assumed {THROUGHPUT_PER_THREAD:.0e}/s per thread)")
