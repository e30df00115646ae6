"""Command-line entry point ``dsmc``.

User errors (bad case file, unknown gas, missing file) print one line
``dsmc: error: ...`` and exit with status 2; anything else is a bug and keeps
its traceback.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from dsmc import __version__
from dsmc.errors import UserError

EXIT_USER_ERROR = 2


def _fmt(value) -> str:
    if isinstance(value, float):
        return f"{value:.4g}"
    return str(value)


def _print_adequacy(figures: dict, warnings: list[str], out=None):
    out = sys.stdout if out is None else out  # looked up now: stdout may be redirected
    print("numerical adequacy:", file=out)
    for k, v in figures.items():
        print(f"  {k:48s} {_fmt(float(v))}", file=out)
    for w in warnings:
        print(f"  warning: {w}", file=out)


def _check_seed(args):
    if args.seed is not None and not 0 <= args.seed < 2**63:
        raise UserError(f"--seed: must be a whole number from 0 to 2**63-1, got {args.seed}")


def cmd_run(args) -> int:
    from dsmc.case import load_case
    from dsmc.runner import run_case
    from dsmc.simulation import adequacy_warnings

    _check_seed(args)
    case = load_case(args.case)
    out = Path(args.output) if args.output else Path(Path(args.case).stem + ".h5")

    def on_start(sim):
        if args.quiet:
            return
        r = case.run
        print(f"case {case.path}: {case.title}")
        print(f"particles {sim.n_particles}, cells {sim.grid.cells}, time step {sim.dt:.4g} s, "
              f"steps {r.transient_steps} ({r.steady_state} transient) + {r.sample_steps}")
        figures = sim.adequacy()
        _print_adequacy(figures, adequacy_warnings(figures))

    def on_end(sim):
        if args.quiet:
            return
        figures = sim.adequacy(measured=True)
        print(f"done in {sim.wall_time:.1f} s "
              f"({sim.n_particles * sim.step_count / max(sim.wall_time, 1e-9) / 1e6:.1f} "
              f"M particle-steps/s); sampling from step {sim.transient_end_step}, "
              f"stopped by {sim.stop_reason}")
        _print_adequacy(figures, adequacy_warnings(figures))
        for side, w, fl in zip(sim.grid.sides, sim.wall_fields(), sim.open_side_fluxes()):
            if fl is not None:
                fin, fin_se = fl["inflow_number_flux"]
                fout, fout_se = fl["outflow_number_flux"]
                print(f"open side {side}: molecules entering {fin:.5g} +- {fin_se:.2g}, leaving "
                      f"{fout:.5g} +- {fout_se:.2g} 1/(m^2 s)")
                continue
            tau, tau_se = w["shear_stress"]
            q, q_se = w["heat_flux"]
            p, p_se = w["pressure"]
            k = 0 if side[0] == "y" else 1  # the in-plane tangential component
            print(f"wall {side}: pressure {p:.5g} +- {p_se:.2g} Pa, shear_{'xy'[k]} "
                  f"{tau[k]:.5g} +- {tau_se[k]:.2g} Pa, heat flux into wall {q:.5g} +- "
                  f"{q_se:.2g} W/m^2")
        if sim.shock is not None:
            s = sim.shock_profile()
            v, v_se = s["inverse_density_thickness"]
            print(f"shock M {sim.shock.mach1:g}: density thickness {s['thickness'][0]:.4g} +- "
                  f"{s['thickness'][1]:.2g} m, lambda1/delta {v:.4f} +- {v_se:.4f} "
                  f"(lambda1 {s['mean_free_path_upstream']:.4g} m), steepest slope at "
                  f"x = {s['x_shock']:.4g} m")
        print(f"wrote {out}")

    status, _ = run_case(case, out, seed=args.seed, threads=args.threads, force=args.force,
                         resume=args.resume, checkpoint_every=args.checkpoint_every,
                         quiet=args.quiet, log_every=args.log_every,
                         report=lambda m: print(m, file=sys.stderr), on_start=on_start, on_end=on_end)
    return status


def cmd_check(args) -> int:
    from dsmc import resources
    from dsmc.case import load_case
    from dsmc.simulation import Simulation, adequacy_warnings

    _check_seed(args)
    case = load_case(args.case)
    est = resources.guard(case)  # refuses a case too big for memory before allocating it
    sim = Simulation(case, seed=args.seed)
    ref = sim.reference_state()
    print(f"case {case.path}: {case.title}: valid")
    gas = case.gas
    names = (" + ".join(f"{x:g} {s.name}" for s, x in zip(gas.all_species, gas.mole_fractions))
             if gas.mixture else gas.species.name)
    print(f"gas {names} ({case.gas.collision_model}), T {case.gas.temperature:g} K, "
          f"p {case.gas.pressure:.5g} Pa, n {case.gas.number_density:.5g} 1/m^3")
    print(f"mean free path {ref['mean_free_path']:.4g} m, mean collision time "
          f"{ref['mean_collision_time']:.4g} s")
    print(f"particles {sim.n_particles}, cells {sim.grid.cells}, time step {sim.dt:.4g} s, "
          f"particle weight {sim.weight:.4g}")
    if sim.grid.dim == 2:
        g = sim.grid
        print(f"2-D box {g.lx:.4g} m x {g.ly:.4g} m (unit depth), {g.nx} x {g.ny} cells; sides "
              + ", ".join(f"{side} {w.model}" for side, w in zip(g.sides, case.walls)))
    figures = sim.adequacy()
    warnings = adequacy_warnings(figures)
    _print_adequacy(figures, warnings)
    print(resources.describe(est))
    if resources.long_run_warning(est):
        print(f"dsmc: {case.path}: {resources.long_run_warning(est)}", file=sys.stderr)
    return 0


def cmd_gas(args) -> int:
    from dsmc.gas.kinetic import gas_summary
    from dsmc.gas.species import get_species

    sp = get_species(args.name)
    summary = gas_summary(sp, args.T, args.p, args.length, args.model)
    for key, (val, unit) in summary.items():
        text = _fmt(val) if isinstance(val, float) else str(val)
        print(f"{key:26s} {text} {unit}".rstrip())
    return 0


def cmd_compare(args) -> int:
    from dsmc.analysis.report import compare, write_plots

    if args.exclude is not None and not args.exclude >= 0.0:
        raise UserError(f"--exclude must be a non-negative number of free paths, got {args.exclude}")
    c = compare(args.result, slip_model=args.model, exclude_ell=args.exclude)
    print(c.format())
    if args.plots:
        for path in write_plots(c, args.plots):
            print(f"wrote {path}")
    return 0


def _float_list(text: str, option: str) -> list[float]:
    try:
        values = [float(v) for v in text.split(",") if v.strip()]
    except ValueError:
        raise UserError(f"{option}: expected comma-separated numbers, got '{text}'") from None
    if not values:
        raise UserError(f"{option}: no values given")
    return values


def cmd_sweep(args) -> int:
    from dsmc.parallel import format_rows, format_verdict, run_sweep

    if args.machs:
        from dsmc.parallel import format_mach_rows, run_mach_sweep

        res = run_mach_sweep(args.base, _float_list(args.machs, "--machs"), jobs=args.jobs,
                             out_dir=args.out, force=args.force,
                             log=(lambda *a: None) if args.quiet else print)
        if res.get("rank", 0) not in (None, 0):
            return 0
        print(format_mach_rows(res["rows"]))
        for p in (*res["summary"], *res["plots"]):
            print(f"wrote {p}")
        print(f"Mach sweep of {len(res['rows'])} points done in {res['elapsed']:.1f} s "
              f"with {args.jobs} jobs")
        return 0
    pressures = _float_list(args.pressures, "--pressures") if args.pressures else None
    gaps = _float_list(args.gaps, "--gaps") if args.gaps else None
    res = run_sweep(args.base, pressures=pressures, gaps=gaps, jobs=args.jobs, out_dir=args.out,
                    tolerance=args.tolerance, force=args.force, slip_model=args.model,
                    max_cells=args.max_cells, log=(lambda *a: None) if args.quiet else print)
    if res.get("rank", 0) != 0:
        return 0  # under mpiexec rank 0 reports
    print(format_rows(res["rows"]))
    for r in res["rows"]:
        if r.warnings:
            print(f"warning: {r.path}: {r.warnings}")
    print(format_verdict(res["verdict"], args.tolerance))
    print(f"wrote {', '.join(str(p) for p in res['summary'] + tuple(res['plots']))}")
    print(f"sweep of {len(res['rows'])} points done in {res['elapsed']:.1f} s with {args.jobs} jobs")
    return 0


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="dsmc", description="Direct-simulation Monte Carlo for "
                                "rarefied planar gas flows.")
    p.add_argument("--version", action="version", version=f"dsmc {__version__}")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    r = sub.add_parser("run", help="run a case file and write an HDF5 result",
                       description="Run a case file; write fields and wall data to HDF5.")
    r.add_argument("case", help="case file (TOML)")
    r.add_argument("-o", "--output", help="result file (default: CASE-NAME.h5 here)")
    r.add_argument("--seed", type=int, help="random seed (overrides [run] seed)")
    r.add_argument("--threads", type=int, help="kernel threads (default: all cores)")
    r.add_argument("--force", action="store_true", help="replace an existing result file")
    r.add_argument("--quiet", action="store_true", help="print nothing but errors")
    r.add_argument("--log-every", type=float, default=10.0, metavar="S",
                   help="seconds between progress lines when not on a terminal (default 10)")
    r.add_argument("--resume", action="store_true",
                   help="continue from OUTPUT.checkpoint (written periodically and on SIGTERM/SIGINT)")
    r.add_argument("--checkpoint-every", type=float, default=900.0, metavar="S",
                   help="seconds of wall time between checkpoints (default 900; 0 = only on signals)")
    r.set_defaults(func=cmd_run)

    c = sub.add_parser("check", help="validate a case and report its numerical adequacy",
                       description="Validate a case file and print the adequacy figures "
                                   "(cell size, time step, particles per cell) without running.")
    c.add_argument("case", help="case file (TOML)")
    c.add_argument("--seed", type=int)
    c.set_defaults(func=cmd_check)

    g = sub.add_parser("gas", help="transport properties, mean free path and Knudsen number",
                       description="Equilibrium kinetic-theory properties of a gas from the "
                                   "species table.")
    g.add_argument("name", help="gas name, e.g. Ar, N2, air")
    g.add_argument("--T", type=float, default=273.15, help="temperature, K (default 273.15)")
    g.add_argument("--p", type=float, default=101325.0, help="pressure, Pa (default 101325)")
    g.add_argument("--length", type=float, help="characteristic length, m (gives Kn)")
    g.add_argument("--model", default="vhs", help="collision model: hs, vhs, vss (default vhs)")
    g.set_defaults(func=cmd_gas)

    cp = sub.add_parser("compare", help="compare a result file with the no-slip, slip/jump and "
                        "free-molecular limits",
                        description="Print DSMC shear stress and heat flux beside the continuum "
                                    "no-slip, slip/jump and free-molecular limits, and the slip "
                                    "velocity and temperature jump extracted at each wall; "
                                    "optionally plot the profiles.")
    cp.add_argument("result", help="result file (HDF5) of dsmc run or dsmc sweep")
    cp.add_argument("--plots", metavar="DIR", help="write velocity and temperature plots "
                    "(PNG and PDF) into DIR")
    cp.add_argument("--model", default="hard_sphere", choices=("hard_sphere", "s_model", "maxwell"),
                    help="slip/jump coefficients (default hard_sphere)")
    cp.add_argument("--exclude", type=float, default=2.0, metavar="ELL",
                    help="Knudsen-layer width left out of the bulk fit, in equivalent free paths "
                         "from each wall (default 2)")
    cp.set_defaults(func=cmd_compare)

    sw = sub.add_parser("sweep", help="run a base case over pressures or gaps and judge the "
                        "slip model, or a shock case over Mach numbers",
                        description="Build one case per pressure or gap from a base "
                        "case (cells kept below lambda/3, particles per cell kept), run them in "
                        "parallel, write one HDF5 per point, a summary (CSV, HDF5), a plot of "
                        "tau/tau_FM and q/q_FM against Kn, and print where the slip model departs "
                        "from DSMC by more than the tolerance. With --machs and a [shock] base "
                        "case: one run per Mach number, a summary and a plot of the inverse "
                        "density thickness lambda1/delta against M.")
    sw.add_argument("base", help="base case file (TOML)")
    grp = sw.add_mutually_exclusive_group(required=True)
    grp.add_argument("--pressures", metavar="P1,P2,...", help="gas pressures, Pa")
    grp.add_argument("--gaps", metavar="L1,L2,...", help="gap widths, m")
    grp.add_argument("--machs", metavar="M1,M2,...",
                     help="upstream Mach numbers of a [shock] base case: one run each, summary "
                          "and plot of the inverse density thickness")
    sw.add_argument("--jobs", type=int, default=2, help="parallel processes (default 2)")
    sw.add_argument("--out", default=".", metavar="DIR", help="output directory (default .)")
    sw.add_argument("--tolerance", type=float, default=0.05,
                    help="relative departure of the slip model that fails it (default 0.05)")
    sw.add_argument("--model", default="hard_sphere", choices=("hard_sphere", "s_model", "maxwell"),
                    help="slip/jump coefficients (default hard_sphere)")
    sw.add_argument("--max-cells", type=int, default=2000, help="upper bound on cells (default 2000)")
    sw.add_argument("--force", action="store_true", help="replace existing output files")
    sw.add_argument("--quiet", action="store_true", help="no progress lines")
    sw.set_defaults(func=cmd_sweep)
    return p


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return args.func(args)
    except UserError as err:
        print(f"dsmc: error: {err}", file=sys.stderr)
        return EXIT_USER_ERROR
    except KeyboardInterrupt:
        print("dsmc: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
