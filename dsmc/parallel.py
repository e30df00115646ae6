"""Knudsen sweeps: one case per pressure or gap, run in parallel processes.

:func:`sweep_cases` builds the cases from the text of a base case;
:func:`run_sweep` runs them in a :class:`concurrent.futures.ProcessPoolExecutor`
(each worker with one numba thread), writes one result file per point, a
summary (CSV and HDF5), a plot and the slip-model verdict.

Per point, from the base case:

* ``[gas] pressure`` (pressure sweep) or ``[domain] length`` (gap sweep) is
  replaced;
* ``[domain] cells`` = ceil(3 L / lambda), so cells stay at most lambda/3
  (lambda the model mean free path at the initial gas state; common
  practice), bounded to [``min_cells``, ``max_cells``];
* particles per cell are kept, the time step is automatic (an explicit
  ``time_step`` of the base would no longer fit the cells and is dropped);
* ``transient_steps`` = max(base, 3 t_d / dt) with the viscous diffusion
  time t_d = L^2 rho / (pi^2 mu), the e-folding time of the slowest mode of
  the velocity profile (the temperature relaxes 1.5 times faster), so the
  start-up error is below exp(-3) = 5 % of its initial value (from the
  ``linear`` initial profile it is of the order of the slip, itself a few
  per cent or less of the wall difference where diffusion is slow);
* ``sample_steps`` and ``batches`` are kept.

Each result file (like every result file) has a ``batches`` group with the
per-batch profiles ``velocity_y``, ``temperature``, ``shear_stress`` (P_xy)
and ``heat_flux_x`` (shape (B, N)), so that :mod:`dsmc.analysis.report` can
give batch-means errors of bulk averages and jackknife errors of the slip fits.

Quantities of the sweep (signs of :mod:`dsmc.analysis.limits`): ``tau``,
the cell average of P_xy, and ``q``, the cell average of the gas heat flux
q_x, both with batch-means standard errors; the limits are averaged over the
same cell centres.  ``Kn`` = ell/L at the mean wall temperature and mean
density (the free path the slip coefficients refer to); ``Kn_lambda`` uses
the model mean free path.
"""

from __future__ import annotations

import csv
import math
import multiprocessing
import os
import time
import tomllib
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from dsmc.analysis import limits
from dsmc.errors import UserError
from dsmc.gas import kinetic

K_B = limits.K_B
TOLERANCE = 0.05


# ------------------------------------------------------------- case building

def _toml_value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return repr(v)
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(v, list):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    raise TypeError(f"cannot write {type(v).__name__} to TOML")


def dump_toml(data: dict, prefix: str = "") -> str:
    """Minimal TOML writer for case dictionaries (scalars, lists, nested tables)."""
    lines = [f"{k} = {_toml_value(v)}" for k, v in data.items() if not isinstance(v, dict)]
    out = "\n".join(lines)
    for k, v in data.items():
        if isinstance(v, dict):
            name = f"{prefix}.{k}" if prefix else k
            scalars = any(not isinstance(x, dict) for x in v.values())
            body = dump_toml(v, name)
            out += ("\n\n" if out else "") + (f"[{name}]\n" if scalars else "") + body
    return out.strip("\n")


@dataclass(frozen=True)
class SweepPoint:
    """One case of a sweep."""

    index: int
    label: str          #: e.g. "p=1000Pa" or "L=2e-06m"
    pressure: float     #: Pa, initial gas pressure
    length: float       #: m
    cells: int
    text: str           #: case file text
    kn_ell: float
    kn_lambda: float
    cells_limited: bool  #: max_cells reached: cells are larger than lambda/3


def sweep_cases(base_text: str, base_path: str = "<base>", pressures=None, gaps=None,
                min_cells: int = 20, max_cells: int = 2000) -> list[SweepPoint]:
    """Cases of a pressure or gap sweep built from ``base_text`` (validated)."""
    from dsmc.case import parse_case

    if (pressures is None) == (gaps is None):
        raise UserError("give exactly one of --pressures and --gaps")
    values = list(pressures if pressures is not None else gaps)
    if not values or any(not (v > 0 and math.isfinite(v)) for v in values):
        raise UserError("sweep values must be positive numbers")
    base = parse_case(base_text, base_path)
    if base.domain.dim == 2:
        raise UserError(f"{base_path}: a Knudsen sweep is of 1-D gaps (this case is a 2-D box)")
    if any(w.is_open for w in base.walls):
        raise UserError(f"{base_path}: a Knudsen sweep needs two walls (this case has an open "
                        "side); a [shock] case takes --machs")
    sp, model = base.gas.species, base.gas.collision_model
    T_gas = base.gas.temperature
    T_walls = [w.temperature for w in base.walls]
    T_mean = 0.5 * sum(T_walls)
    T_max = max([T_gas] + T_walls)
    points = []
    for i, v in enumerate(sorted(values)):
        d = tomllib.loads(base_text)
        gas, dom = d["gas"], d["domain"]
        if pressures is not None:
            gas.pop("number_density", None)
            gas["pressure"] = float(v)
            label = f"p={v:.6g}Pa"
        else:
            dom["length"] = float(v)
            label = f"L={v:.6g}m"
        p = float(gas["pressure"]) if "pressure" in gas else float(gas["number_density"]) * K_B * T_gas
        L = float(dom["length"])
        n = p / (K_B * T_gas)
        lam = float(kinetic.mean_free_path(sp, T_gas, n, model))
        want = math.ceil(3.0 * L / lam)
        cells = min(max(want, min_cells), max_cells)
        dom["cells"] = int(cells)
        num = d.setdefault("numerics", {})
        num.pop("time_step", None)
        # a point with fewer cells than the base keeps the base's particle count, so that the
        # rarefied points (few cells) are not sampled with a fraction of the particles
        base_particles = base.numerics.particles_per_cell * base.domain.cells
        num["particles_per_cell"] = float(max(base.numerics.particles_per_cell,
                                              base_particles / cells))
        dt = _auto_dt(base, sp, model, T_gas, T_max, n, L / cells)
        mu = float(kinetic.viscosity(sp, T_mean, model))
        rho = n * sp.mass
        t_d = L * L * rho / (math.pi**2 * mu)
        run = d.setdefault("run", {})
        run["transient_steps"] = int(max(base.run.transient_steps, math.ceil(3.0 * t_d / dt)))
        d["title"] = f"{base.title} [{label}]"
        text = (f"# sweep point {i} of {base_path}: {label}, cells {cells}, transient "
                f"{run['transient_steps']} steps (written by dsmc sweep)\n" + dump_toml(d) + "\n")
        parse_case(text, f"{base_path}[{label}]")  # validate
        n_avg = n
        ell = float(limits.equivalent_free_path(kinetic.viscosity(sp, T_mean, model),
                                                n_avg * K_B * T_mean, T_mean, sp.mass))
        lam_m = float(kinetic.mean_free_path(sp, T_mean, n_avg, model))
        points.append(SweepPoint(i, label, p, L, cells, text, ell / L, lam_m / L, want > max_cells))
    return points


def _auto_dt(base, sp, model, T_gas, T_max, n, dx):
    """The automatic time step of the engine (same rule as Simulation.auto_time_step)."""
    num = base.numerics
    tau_c = float(kinetic.mean_collision_time(sp, T_gas, n, model))
    c_mp = float(kinetic.most_probable_speed(T_max, sp.mass))
    return min(num.collision_time_fraction * tau_c, num.transit_fraction * dx / c_mp)


# ------------------------------------------------------------------- workers

def _init_worker():
    os.environ["NUMBA_NUM_THREADS"] = "1"


def run_point(text: str, path: str, out: str, seed: int | None = None, force: bool = False) -> dict:
    """Run one case text, write its result file (with batch profiles); return timing facts."""
    from dsmc.case import parse_case
    from dsmc.io.results import write_results
    from dsmc.simulation import Simulation, result_tree, set_threads

    set_threads(1)
    case = parse_case(text, path)
    sim = Simulation(case, seed=seed)
    t0 = time.perf_counter()
    sim.run()
    write_results(out, result_tree(sim), overwrite=force)
    return {"path": out, "wall_time": time.perf_counter() - t0, "particles": sim.n_particles,
            "steps": sim.step_count}


# ------------------------------------------------------------------- summary

@dataclass
class SweepRow:
    kn_ell: float
    kn_lambda: float
    pressure: float
    length: float
    cells: int
    tau: float
    tau_se: float
    tau_no_slip: float
    tau_slip: float
    tau_fm: float
    q: float
    q_se: float
    q_no_slip: float
    q_slip: float
    q_fm: float
    wall_time: float
    path: str
    warnings: str


def summarize(paths, points, timings, slip_model="hard_sphere") -> list[SweepRow]:
    """One row per result file: bulk tau and q with batch errors, and the three limits."""
    from dsmc.analysis.report import compare

    rows = []
    for path, pt, tm in zip(paths, points, timings):
        c = compare(path, slip_model=slip_model, exclude_ell=None)
        tau = c.row("tau bulk mean") if abs(c.free_molecular.tau) > 0 else None
        q = c.row("q_x bulk mean")
        nan = math.nan
        rows.append(SweepRow(
            c.kn_ell, c.kn_lambda, pt.pressure, pt.length, pt.cells,
            tau.dsmc if tau else nan, tau.stderr if tau else nan,
            tau.no_slip if tau else nan, tau.slip if tau else nan, tau.free_molecular if tau else nan,
            q.dsmc, q.stderr, q.no_slip, q.slip, q.free_molecular, tm["wall_time"], str(path),
            c.data.warnings.replace("\n", "; ")))
    return rows


_COLUMNS = ("kn_ell", "kn_lambda", "pressure", "length", "cells", "tau", "tau_se", "tau_no_slip",
            "tau_slip", "tau_fm", "q", "q_se", "q_no_slip", "q_slip", "q_fm", "wall_time")
_UNITS = ("1", "1", "Pa", "m", "1", "Pa", "Pa", "Pa", "Pa", "Pa", "W/m^2", "W/m^2", "W/m^2",
          "W/m^2", "W/m^2", "s")


def write_summary(rows: list[SweepRow], out_dir: Path, stem: str, force: bool = False):
    """``STEM-summary.csv`` and ``STEM-summary.h5`` (one dataset per column)."""
    from dsmc.io.results import Data, write_results

    csv_path = out_dir / f"{stem}-summary.csv"
    if csv_path.exists() and not force:
        raise UserError(f"{csv_path}: exists already (use --force to replace it)")
    with open(csv_path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow([f"{c} [{u}]" for c, u in zip(_COLUMNS, _UNITS)] + ["result_file", "warnings"])
        for r in rows:
            w.writerow([repr(float(getattr(r, c))) if c != "cells" else r.cells for c in _COLUMNS]
                       + [r.path, r.warnings])
    tree = {"@attrs": {"description": "Knudsen sweep summary: tau = cell average of P_xy, q = cell "
                                      "average of q_x, batch-means standard errors; limits averaged "
                                      "over the same cells; kn_ell = ell/L"},
            "sweep": {c: Data(np.array([getattr(r, c) for r in rows]), u)
                      for c, u in zip(_COLUMNS, _UNITS)}}
    tree["sweep"]["result_file"] = Data(np.array([r.path for r in rows], dtype=object), "1")
    h5_path = write_results(out_dir / f"{stem}-summary.h5", tree, overwrite=force)
    return csv_path, h5_path


def verdict(rows: list[SweepRow], tolerance: float = TOLERANCE) -> dict:
    """Where the slip model departs from DSMC by more than ``tolerance``.

    For each quantity (tau, q) the relative departure |slip - DSMC|/|DSMC|
    is taken point by point in increasing Kn.  ``kn_departs`` is the Kn,
    interpolated linearly in log Kn between the last point inside the
    tolerance and the first point outside it, where the departure crosses
    the tolerance; None if it never does.  A departure counts only if it
    exceeds the tolerance by more than 2 standard errors of the DSMC value
    (``uncertain`` lists the points within 2 standard errors of the line).
    """
    out = {}
    rows = sorted(rows, key=lambda r: r.kn_ell)
    for name in ("tau", "q"):
        kn, dev, rel_se = [], [], []
        for r in rows:
            v, se, s = getattr(r, name), getattr(r, name + "_se"), getattr(r, name + "_slip")
            if not (np.isfinite(v) and v != 0):
                continue
            kn.append(r.kn_ell)
            dev.append(abs(s - v) / abs(v))
            rel_se.append(se / abs(v))
        if not kn:
            continue
        first = None
        for i, (d, e) in enumerate(zip(dev, rel_se)):
            if d - 2 * e > tolerance:
                first = i
                break
        uncertain = [kn[i] for i in range(len(kn)) if abs(dev[i] - tolerance) <= 2 * rel_se[i]]
        if first is None:
            cross = None
        elif first == 0:
            cross = kn[0]
        else:
            a, b = first - 1, first
            t = (tolerance - dev[a]) / (dev[b] - dev[a]) if dev[b] != dev[a] else 0.0
            t = min(max(t, 0.0), 1.0)
            cross = math.exp(math.log(kn[a]) + t * (math.log(kn[b]) - math.log(kn[a])))
        out[name] = {"kn": kn, "departure": dev, "rel_se": rel_se, "kn_departs": cross,
                     "first_outside": None if first is None else kn[first],
                     "below_range": first == 0, "uncertain": uncertain}
    return out


def format_verdict(v: dict, tolerance: float) -> str:
    lines = []
    names = {"tau": "shear stress", "q": "heat flux"}
    for name, d in v.items():
        pts = ", ".join(f"Kn {k:.3g}: {100 * x:.1f} %" for k, x in zip(d["kn"], d["departure"]))
        lines.append(f"{names[name]}: slip model vs DSMC departure {pts}")
        if d["kn_departs"] is None:
            lines.append(f"  verdict: the slip model stays within {100 * tolerance:g} % of DSMC over "
                         f"the whole sweep (Kn {d['kn'][0]:.3g} to {d['kn'][-1]:.3g})")
        elif d["below_range"]:
            lines.append(f"  verdict: the slip model departs by more than {100 * tolerance:g} % "
                         f"already at the smallest Kn of the sweep ({d['kn'][0]:.3g})")
        else:
            lines.append(f"  verdict: the slip model departs from DSMC by more than "
                         f"{100 * tolerance:g} % above Kn = ell/L = {d['kn_departs']:.3g} "
                         f"(log-interpolated; first point outside: Kn {d['first_outside']:.3g})")
        if d["uncertain"]:
            lines.append("  caution: within 2 standard errors of the tolerance at Kn "
                         + ", ".join(f"{k:.3g}" for k in d["uncertain"]))
    return "\n".join(lines)


def plot_sweep(rows: list[SweepRow], base_text: str, points, out_dir: Path, stem: str,
               title: str, slip_model="hard_sphere", pressure_sweep=True) -> list[Path]:
    """tau/tau_FM and q/q_FM against Kn (log x): DSMC with error bars and the limit curves."""
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from dsmc.analysis.report import transport_for
    from dsmc.case import parse_case

    base = parse_case(base_text)
    sp, model = base.gas.species, base.gas.collision_model
    w1, w2 = base.walls
    tr = transport_for(sp.name, model)
    al = [1.0 if w.model == "diffuse" else (w.accommodation if w.model == "maxwell"
                                             else w.tangential_accommodation) for w in (w1, w2)]
    # limit curves on a dense grid of the swept parameter (Kn ~ 1/p or 1/L)
    r0 = rows[0]
    kns = np.geomspace(min(r.kn_ell for r in rows) / 2, max(r.kn_ell for r in rows) * 2, 60)
    curves = {k: [] for k in ("tau_ns", "tau_sl", "q_ns", "q_sl")}
    for kn in kns:
        scale = r0.kn_ell / kn
        n_avg = r0.pressure / (K_B * base.gas.temperature)
        L = r0.length
        if pressure_sweep:
            n_avg *= scale
        else:
            L *= scale
        x = np.linspace(0.5, 39.5, 40) * L / 40
        a = (sp.mass, n_avg, L, w1.temperature, w2.temperature, w1.velocity[1], w2.velocity[1], tr)
        ns = limits.no_slip(*a, x=x)
        sl = limits.slip(*a, alpha1=al[0], alpha2=al[1], model=slip_model, x=x)
        fm = limits.free_molecular(sp.mass, n_avg, w1.temperature, w2.temperature,
                                   w1.velocity[1], w2.velocity[1], al[0], al[1])
        if fm.tau != 0:
            curves["tau_ns"].append(ns.tau / fm.tau)
            curves["tau_sl"].append(sl.tau / fm.tau)
        curves["q_ns"].append(np.mean(ns.q) / fm.q_x if fm.q_x else math.nan)
        curves["q_sl"].append(np.mean(sl.q) / fm.q_x if fm.q_x else math.nan)
    panels = [("tau", r"shear stress $\tau/\tau_{FM}$", "tau_ns", "tau_sl"),
              ("q", r"heat flux $q/q_{FM}$", "q_ns", "q_sl")]
    panels = [p for p in panels if len(curves[p[2]]) and np.all(np.isfinite(curves[p[2]]))]
    fig, axes = plt.subplots(1, len(panels), figsize=(6.0 * len(panels), 4.6), dpi=120, squeeze=False)
    for ax, (name, ylabel, kns_key, ksl_key) in zip(axes[0], panels):
        kn = np.array([r.kn_ell for r in rows])
        v = np.array([getattr(r, name) for r in rows])
        se = np.array([getattr(r, name + "_se") for r in rows])
        fmv = np.array([getattr(r, name + "_fm") for r in rows])
        ax.plot(kns, np.ones_like(kns), ":", color="tab:green", label="free-molecular")
        ax.plot(kns, curves[kns_key], "-", color="tab:blue", label="Navier-Stokes-Fourier, no slip")
        ax.plot(kns, curves[ksl_key], "--", color="tab:red", label="NSF with slip and jump")
        ax.errorbar(kn, v / fmv, yerr=se / np.abs(fmv), fmt="o", color="k", capsize=3,
                    label="DSMC (±1 standard error)", zorder=3)
        ax.set_xscale("log")
        ax.set_ylim(0.0, 1.25)
        ax.set_xlabel(r"Knudsen number Kn = $\ell/L$, $\ell = \mu\sqrt{2kT/m}/p$")
        ax.set_ylabel(ylabel + " (1)")
        ax.grid(alpha=0.3, which="both")
        ax.legend(fontsize=8, loc="best")
    fig.suptitle(f"{title}: Knudsen sweep", fontsize=11)
    fig.tight_layout()
    paths = []
    for ext in ("png", "pdf"):
        p = out_dir / f"{stem}-sweep.{ext}"
        fig.savefig(p)
        paths.append(p)
    plt.close(fig)
    return paths


# -------------------------------------------------------------------- driver

def _read_base(base_path: Path) -> str:
    try:
        return base_path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise UserError(f"{base_path}: no such case file") from None
    except (OSError, UnicodeDecodeError) as err:
        raise UserError(f"{base_path}: cannot read: {err}") from None


def _run_points(texts, labels, outs, order, jobs, force, log):
    """Run case texts to result files: under mpiexec dealt to the ranks, else in a process pool.

    ``order`` lists the point indices, most expensive first.  Returns the
    per-point timings (on every rank) and the MPI rank (None without MPI).
    """
    from dsmc.runner import mpi_comm

    timings = [None] * len(texts)
    comm = mpi_comm()
    if comm is not None:
        # under mpiexec: the points are dealt to the ranks (most expensive first, round
        # robin), each rank runs its own with one thread, and rank 0 summarizes
        rank, size = comm.Get_rank(), comm.Get_size()
        mine = {}
        for i in order[rank::size]:
            mine[i] = run_point(texts[i], labels[i], outs[i], None, force)
            log(f"rank {rank}: point {i} done in {mine[i]['wall_time']:.1f} s -> {outs[i]}")
        for part in comm.allgather(mine):
            for i, tm in part.items():
                timings[i] = tm
        return timings, rank
    # spawn, not fork: a forked child of a process whose numba threads are running can hang
    ctx = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(max_workers=jobs, mp_context=ctx, initializer=_init_worker) as pool:
        futs = {pool.submit(run_point, texts[i], labels[i], outs[i], None, force): i
                for i in order}
        for fut in futs:
            i = futs[fut]
            timings[i] = fut.result()
            log(f"point {i} done in {timings[i]['wall_time']:.1f} s -> {outs[i]}")
    return timings, None


def run_sweep(base_path, pressures=None, gaps=None, jobs: int = 2, out_dir=".",
              tolerance: float = TOLERANCE, force: bool = False, slip_model="hard_sphere",
              min_cells: int = 20, max_cells: int = 2000, log=print) -> dict:
    """Build, run (in parallel), summarize, plot and judge a sweep; return the pieces."""
    base_path = Path(base_path)
    base_text = _read_base(base_path)
    if not 0.0 < tolerance < 1.0:
        raise UserError(f"--tolerance must lie between 0 and 1, got {tolerance}")
    if jobs < 1:
        raise UserError(f"--jobs must be at least 1, got {jobs}")
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    stem = base_path.stem
    points = sweep_cases(base_text, str(base_path), pressures, gaps, min_cells, max_cells)
    outs = [str(out_dir / f"{stem}-{i:02d}.h5") for i in range(len(points))]
    if not force:
        for o in outs:
            if Path(o).exists():
                raise UserError(f"{o}: exists already (use --force to replace it)")
    for pt in points:
        log(f"point {pt.index}: {pt.label}  Kn = ell/L {pt.kn_ell:.4g} (lambda/L {pt.kn_lambda:.4g})"
            f"  cells {pt.cells}" + ("  WARNING: max cells reached, cells > lambda/3"
                                     if pt.cells_limited else ""))
    t0 = time.perf_counter()
    # the most expensive (most cells) first, so the pool ends evenly
    order = sorted(range(len(points)), key=lambda i: -points[i].cells)
    labels = [f"{base_path}[{pt.label}]" for pt in points]
    timings, rank = _run_points([pt.text for pt in points], labels, outs, order, jobs, force, log)
    if rank not in (None, 0):
        return {"points": points, "rows": [], "files": outs, "summary": (), "plots": [],
                "verdict": None, "elapsed": time.perf_counter() - t0, "rank": rank}
    elapsed = time.perf_counter() - t0
    rows = summarize(outs, points, timings, slip_model)
    csv_path, h5_path = write_summary(rows, out_dir, stem, force)
    plots = plot_sweep(rows, base_text, points, out_dir, stem,
                       title=tomllib.loads(base_text).get("title", stem), slip_model=slip_model,
                       pressure_sweep=pressures is not None)
    v = verdict(rows, tolerance)
    return {"points": points, "rows": rows, "files": outs, "summary": (csv_path, h5_path),
            "plots": plots, "verdict": v, "elapsed": elapsed}


def format_rows(rows: list[SweepRow]) -> str:
    head = (f"{'Kn(ell)':>9s} {'Kn(lam)':>9s} {'tau DSMC':>11s} {'+-':>8s} {'no-slip':>11s} "
            f"{'slip':>11s} {'free-mol':>11s} {'q DSMC':>11s} {'+-':>8s} {'no-slip':>11s} "
            f"{'slip':>11s} {'free-mol':>11s} {'time s':>7s}")
    out = ["signs: tau = P_xy (Pa), q = gas heat flux q_x along +x (W/m^2), cell averages", head]
    for r in rows:
        out.append(f"{r.kn_ell:9.4g} {r.kn_lambda:9.4g} {r.tau:11.5g} {r.tau_se:8.2g} "
                   f"{r.tau_no_slip:11.5g} {r.tau_slip:11.5g} {r.tau_fm:11.5g} {r.q:11.5g} "
                   f"{r.q_se:8.2g} {r.q_no_slip:11.5g} {r.q_slip:11.5g} {r.q_fm:11.5g} "
                   f"{r.wall_time:7.1f}")
    return "\n".join(out)


# ---------------------------------------------------------------- Mach sweep

def mach_sweep_cases(base_text: str, base_path: str, machs) -> list[tuple[str, str]]:
    """``(label, case text)`` per Mach number, from a base case with a ``[shock]`` section.

    Only ``[shock] mach`` changes; an explicit ``[numerics] time_step`` is
    dropped (the automatic step follows the faster, hotter flow).  Length and
    cells are kept: the base must hold the weakest shock of the sweep (about
    7 lambda1 thick at Mach 1.5) with uniform gas on both sides.
    """
    from dsmc.case import parse_case

    values = sorted(float(m) for m in machs)
    if not values or any(not (m > 1.0 and math.isfinite(m)) for m in values):
        raise UserError("--machs: Mach numbers must be above 1")
    base = parse_case(base_text, base_path)
    if base.shock is None:
        raise UserError(f"{base_path}: --machs needs a base case with a [shock] section")
    out = []
    for i, m in enumerate(values):
        d = tomllib.loads(base_text)
        d["shock"]["mach"] = m
        d.get("numerics", {}).pop("time_step", None)
        label = f"M={m:.6g}"
        d["title"] = f"{base.title} [{label}]"
        text = (f"# sweep point {i} of {base_path}: {label} (written by dsmc sweep)\n"
                + dump_toml(d) + "\n")
        parse_case(text, f"{base_path}[{label}]")  # validate
        out.append((label, text))
    return out


MACH_COLUMNS = ("mach", "inverse_density_thickness", "inverse_density_thickness_stderr",
                "thickness", "thickness_stderr", "mean_free_path_upstream", "wall_time")
MACH_UNITS = ("1", "1", "1", "m", "m", "m", "s")


def run_mach_sweep(base_path, machs, jobs: int = 2, out_dir=".", force: bool = False,
                   log=print) -> dict:
    """Run a ``[shock]`` base case at each Mach number; summary of the shock thickness.

    Writes ``STEM-NN.h5`` per point, ``STEM-mach-summary.csv``/``.h5`` (columns
    ``MACH_COLUMNS``) and ``STEM-mach-sweep.png``: lambda1/delta against M with
    jackknife error bars.
    """
    import h5py

    from dsmc.io.results import Data, write_results

    base_path = Path(base_path)
    base_text = _read_base(base_path)
    if jobs < 1:
        raise UserError(f"--jobs must be at least 1, got {jobs}")
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    stem = base_path.stem
    points = mach_sweep_cases(base_text, str(base_path), machs)
    outs = [str(out_dir / f"{stem}-{i:02d}.h5") for i in range(len(points))]
    csv_path = out_dir / f"{stem}-mach-summary.csv"
    if not force:
        for o in outs + [str(csv_path)]:
            if Path(o).exists():
                raise UserError(f"{o}: exists already (use --force to replace it)")
    for i, (label, _) in enumerate(points):
        log(f"point {i}: {label}")
    t0 = time.perf_counter()
    order = list(range(len(points)))[::-1]  # strongest shocks (most steps per flow time) first
    timings, rank = _run_points([tx for _, tx in points],
                                [f"{base_path}[{lb}]" for lb, _ in points], outs, order, jobs,
                                force, log)
    elapsed = time.perf_counter() - t0
    if rank not in (None, 0):
        return {"rows": [], "files": outs, "elapsed": elapsed, "rank": rank}
    rows = []
    for path, tm in zip(outs, timings):
        with h5py.File(path, "r") as f:
            s = f["shock"]
            rows.append({c: float(s[c][()]) for c in MACH_COLUMNS if c != "wall_time"}
                        | {"wall_time": float(tm["wall_time"]), "path": path})
    with open(csv_path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow([f"{c} [{u}]" for c, u in zip(MACH_COLUMNS, MACH_UNITS)] + ["result_file"])
        for r in rows:
            w.writerow([repr(r[c]) for c in MACH_COLUMNS] + [r["path"]])
    tree = {"@attrs": {"description": "Mach sweep summary: max-slope density thickness of the "
                                      "shock, jackknife errors; lambda1 = (16/5) mu1 / (rho1 "
                                      "sqrt(2 pi k T1/m))"},
            "sweep": {c: Data(np.array([r[c] for r in rows]), u)
                      for c, u in zip(MACH_COLUMNS, MACH_UNITS)}}
    tree["sweep"]["result_file"] = Data(np.array([r["path"] for r in rows], dtype=object), "1")
    h5_path = write_results(out_dir / f"{stem}-mach-summary.h5", tree, overwrite=force)
    plot = _plot_mach_sweep(rows, out_dir / f"{stem}-mach-sweep.png",
                            tomllib.loads(base_text).get("title", stem))
    return {"rows": rows, "files": outs, "summary": (csv_path, h5_path), "plots": [plot],
            "elapsed": elapsed}


def _plot_mach_sweep(rows, path: Path, title: str) -> Path:
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(6.0, 4.4), dpi=120)
    ax.errorbar([r["mach"] for r in rows], [r["inverse_density_thickness"] for r in rows],
                yerr=[r["inverse_density_thickness_stderr"] for r in rows], fmt="o-", capsize=3,
                color="k", label="DSMC (±1 jackknife standard error)")
    ax.set_xlabel("upstream Mach number M (1)")
    ax.set_ylabel(r"inverse density thickness $\lambda_1/\delta$ (1)")
    ax.set_ylim(bottom=0.0)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    ax.set_title(f"{title}: Mach sweep", fontsize=10)
    fig.tight_layout()
    fig.savefig(path)
    plt.close(fig)
    return path


def format_mach_rows(rows) -> str:
    out = [f"{'M':>6s} {'lambda1/delta':>14s} {'+-':>8s} {'delta m':>11s} {'+-':>9s} {'time s':>7s}"]
    for r in rows:
        out.append(f"{r['mach']:6.3g} {r['inverse_density_thickness']:14.4f} "
                   f"{r['inverse_density_thickness_stderr']:8.4f} {r['thickness']:11.4g} "
                   f"{r['thickness_stderr']:9.2g} {r['wall_time']:7.1f}")
    return "\n".join(out)
