"""Driving a run for the command line: checkpoints, signals, progress, MPI ensembles.

* Checkpoints: every ``checkpoint_every`` seconds of wall time and when the
  process receives SIGTERM or SIGINT, the full run state goes to
  ``OUTPUT.checkpoint`` (``OUTPUT.checkpoint.rankR`` in an ensemble), written
  atomically.  After a signal the run exits with :data:`EXIT_INTERRUPTED`
  (75, "try again later"); ``--resume`` continues it bit-identically.  The
  checkpoint is removed once the result file is written.
* Ensembles: under ``mpiexec -n R`` every rank runs an independent replica
  (its random streams spawned from the seed with the rank number), the sample
  sums of all ranks are added, and rank 0 writes one result file that equals,
  statistically, a single run with R times the samples.  The steady-state test
  and the target-error stop decide on the replica mean of their monitored
  values, so all ranks keep one schedule.
* Progress: a tqdm bar on a terminal; otherwise a log line every
  ``log_every`` seconds (batch jobs), on rank 0 only.
"""

from __future__ import annotations

import os
import signal
import sys
import time
from pathlib import Path

import numpy as np

from dsmc import resources
from dsmc.errors import UserError
from dsmc.io.checkpoint import read_checkpoint, write_checkpoint
from dsmc.io.results import write_results
from dsmc.io.xdmf import write_xdmf
from dsmc.simulation import Simulation, result_tree, set_threads

EXIT_INTERRUPTED = 75
_MPI_ENV = ("PMI_SIZE", "OMPI_COMM_WORLD_SIZE", "PMIX_RANK", "MPI_LOCALNRANKS")


def mpi_comm():
    """The MPI world communicator when launched by an MPI launcher with more than one rank."""
    if not any(k in os.environ for k in _MPI_ENV):
        return None
    try:
        from mpi4py import MPI
    except ImportError:
        raise UserError("started under an MPI launcher but mpi4py is not installed "
                        "(pip install 'dsmc[mpi]')") from None
    comm = MPI.COMM_WORLD
    return comm if comm.Get_size() > 1 else None


class _Signals:
    """Turns SIGTERM / SIGINT into a flag checked between steps."""

    def __init__(self):
        self.received = None
        self._old = {}

    def __enter__(self):
        for sig in (signal.SIGTERM, signal.SIGINT):
            self._old[sig] = signal.signal(sig, self._handle)
        return self

    def _handle(self, signum, _frame):
        self.received = signal.Signals(signum).name

    def __exit__(self, *exc):
        for sig, old in self._old.items():
            signal.signal(sig, old)


class Progress:
    """tqdm bar on a terminal, else a log line every ``every`` seconds."""

    def __init__(self, sim: Simulation, every: float, enabled: bool):
        self.sim = sim
        self.every = every
        self.enabled = enabled
        r = sim.case.run
        self.total = r.transient_steps + r.sample_steps
        self.bar = None
        self._t = self._t0 = time.perf_counter()
        if enabled and sys.stderr.isatty():
            from tqdm import tqdm

            self.bar = tqdm(total=self.total, initial=sim.step_count, unit="step",
                            dynamic_ncols=True, file=sys.stderr)

    def _fields(self) -> dict:
        sim = self.sim
        steps = sim._batch.steps if sim.phase == "sampling" else sim.phase_steps
        out = {"phase": sim.phase, "particles": sim.n_particles,
               "collisions/step": f"{sim._coll[:, 0].sum() / max(1, steps):.4g}"}
        if len(sim._target_history) >= 2:
            from dsmc.steady import relative_errors

            out["rel.error"] = f"{np.max(relative_errors(np.array(sim._target_history))):.2%}"
        return out

    def __call__(self, sim: Simulation):
        if not self.enabled:
            return
        now = time.perf_counter()
        if now - self._t < (0.5 if self.bar is not None else self.every):
            return
        self._t = now
        info = self._fields()
        if self.bar is not None:
            self.bar.n = sim.step_count
            self.bar.set_postfix(info, refresh=True)
        else:
            text = "  ".join(f"{k} {v}" for k, v in info.items())
            print(f"step {sim.step_count}/{self.total}  {text}  elapsed {now - self._t0:.0f} s",
                  file=sys.stderr, flush=True)

    def close(self):
        if self.bar is not None:
            self.bar.n = self.sim.step_count
            self.bar.close()


def checkpoint_path(output: Path, rank: int | None) -> Path:
    suffix = ".checkpoint" if rank is None else f".checkpoint.rank{rank}"
    return output.with_name(output.name + suffix)


def reduce_samples(sim: Simulation, comm) -> None:
    """Add the batch sums of all ranks into rank 0's simulation (in place)."""
    root = comm.Get_rank() == 0
    for b in sim.batches:
        for name in ("moments", "walls", "collisions", "inflow", "surfaces"):
            buf = np.ascontiguousarray(getattr(b, name))
            total = np.empty_like(buf) if root else None
            comm.Reduce(buf, total, root=0)
            if root:
                setattr(b, name, total)
        samples = comm.reduce(b.samples, root=0)
        steps = comm.reduce(b.steps, root=0)
        if root:
            b.samples, b.steps = samples, steps

def _checked_state(path: Path, state: dict, sim: Simulation) -> dict:
    """``state`` after checking it has every entry of a fresh state, with compatible shapes."""
    template = sim.state()
    for key, ref in template.items():
        if key not in state:
            raise UserError(f"{path}: damaged checkpoint: '{key}' is missing")
        got = np.shape(state[key])
        want = np.shape(ref)
        if len(got) != len(want) or got[1:] != want[1:] or (key not in _GROWING and got != want):
            raise UserError(f"{path}: damaged checkpoint: '{key}' has shape {got}, expected {want}")
    n = np.shape(state["pos"])[0]
    if np.shape(state["v"])[0] != n or np.shape(state["sp"])[0] != n:
        raise UserError(f"{path}: damaged checkpoint: particle arrays differ in length")
    return state


# state entries whose first dimension depends on the run's progress
_GROWING = {"pos", "v", "sp", "move_state", "windows", "targets", "batch_moments", "batch_walls",
            "batch_collisions", "batch_inflow", "batch_surfaces", "batch_samples", "batch_steps"}


def run_case(case, output: Path, *, seed=None, threads=None, force=False, resume=False,
             checkpoint_every=900.0, quiet=False, log_every=10.0, report=print,
             on_start=None, on_end=None) -> tuple[int, Simulation]:
    """Run ``case`` to ``output``; returns (exit status, simulation).

    ``on_start(sim)`` / ``on_end(sim)`` are called on rank 0 before the first
    step and after the result file is written.
    """
    comm = mpi_comm()
    rank = comm.Get_rank() if comm is not None else None
    ranks = comm.Get_size() if comm is not None else 1
    lead = rank in (None, 0)
    if output.exists() and not force and not resume:
        raise UserError(f"{output}: exists already (use --force to replace it)")
    if not (output.parent if str(output.parent) else Path(".")).is_dir():
        raise UserError(f"{output}: directory {output.parent} does not exist")
    warning = resources.long_run_warning(resources.guard(case, threads))  # before any allocation
    if warning and lead and not quiet:
        print(f"dsmc: {case.path}: {warning}", file=sys.stderr)
    set_threads(threads)
    sim = Simulation(case, seed=seed, replica=rank)
    if comm is not None:
        # schedule decisions from the replica mean of the monitored values: all ranks agree
        from mpi4py import MPI

        sim.combine = lambda v: comm.allreduce(np.ascontiguousarray(v), op=MPI.SUM) / ranks
    ckpt = checkpoint_path(output, rank)
    if resume:
        sim.restore(_checked_state(ckpt, read_checkpoint(ckpt, case.text, sim.seed, rank), sim))
        if lead and not quiet:
            report(f"resumed from {ckpt} at step {sim.step_count} ({sim.phase})")
    if lead and on_start is not None:
        on_start(sim)
    progress = Progress(sim, log_every, enabled=lead and not quiet)
    last = [time.perf_counter()]

    def save():
        write_checkpoint(ckpt, sim.state(), case.text, sim.seed, rank)
        last[0] = time.perf_counter()

    with _Signals() as signals:
        def stop():
            if signals.received:
                return True
            if checkpoint_every > 0 and time.perf_counter() - last[0] >= checkpoint_every:
                save()
            return False

        done = sim.run(callback=progress, stop=stop)
    progress.close()
    if not done:
        save()
        if lead and not quiet:
            report(f"{signals.received}: checkpoint written to {ckpt} at step {sim.step_count}; "
                   f"continue with --resume")
        return EXIT_INTERRUPTED, sim
    if comm is not None:
        reduce_samples(sim, comm)
    if lead:
        tree = result_tree(sim)
        tree["run"]["@attrs"]["ranks"] = ranks
        write_results(output, tree, overwrite=True)
        if sim.grid.dim == 2:  # viewer mesh of the 2-D fields beside the result file
            write_xdmf(output)
    ckpt.unlink(missing_ok=True)
    if lead and on_end is not None:
        on_end(sim)
    if comm is not None:
        comm.Barrier()
    return 0, sim
