#!/usr/bin/env python3
"""Plot the cell profiles of a result file: an example for writing your own plots.

    python tools/plot_profiles.py RESULT.h5 [-o OUT.png | -o OUT.pdf]

Draws the y velocity, temperature, number density and x heat flux against x,
each with error bars of one batch-means standard error (the ``*_stderr``
datasets), the wall values as open markers, axes labelled with the units the
file stores.  Writes a PNG (default: RESULT with ``.png``); if OUT ends in
``.pdf`` it writes that PDF as well as the PNG next to it.

It deliberately uses only h5py and matplotlib (h5py hands back numpy
arrays), not the ``dsmc`` package, so it can be copied and changed freely.  The file layout it relies on
is described in ``docs/output.md`` (schema ``dsmc-results``, version 1).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import h5py
import matplotlib.pyplot as plt  # without a display matplotlib falls back to Agg

SCHEMA = "dsmc-results"
VERSIONS = (1,)  # schema versions this script understands

# (dataset under /fields, vector component or None, axis label)
PANELS = (
    ("velocity", 1, "velocity $u_y$"),
    ("temperature", None, "temperature $T$"),
    ("number_density", None, "number density $n$"),
    ("heat_flux", 0, "heat flux $q_x$"),
)
# wall dataset drawn as a marker on a panel: (field, wall dataset, component)
WALL_MARKS = {"velocity": ("velocity", 1), "temperature": ("temperature", None)}


def text(value) -> str:
    return value.decode() if isinstance(value, bytes) else str(value)


def length_scale(length: float) -> tuple[float, str]:
    """A factor and prefix that make ``length`` (m) read as 1 to 1000."""
    for factor, prefix in ((1.0, ""), (1e3, "m"), (1e6, "\u00b5"), (1e9, "n")):
        if length * factor >= 1.0:
            return factor, prefix
    return 1e9, "n"


def read(path: Path) -> dict:
    """The arrays and labels the plot needs, read with plain h5py."""
    with h5py.File(path, "r") as f:
        schema = text(f.attrs.get("schema", ""))
        version = int(f.attrs.get("schema_version", -1))
        if schema != SCHEMA or version not in VERSIONS:
            raise ValueError(f"not a {SCHEMA} file of version {VERSIONS} "
                             f"(schema '{schema}', version {version})")
        if int(f.attrs.get("dimension", 1)) != 1:
            raise ValueError("a 2-D result file: plot it with tools/plot_2d.py")
        out = {"title": text(f.attrs.get("title", path.stem)),
               "x": f["grid/x"][()], "x_units": text(f["grid/x"].attrs["units"]),
               "length": float(f["grid/x_edges"][-1]), "walls": {}}
        for name, comp, _ in PANELS:
            mean, err = f[f"fields/{name}"][()], f[f"fields/{name}_stderr"][()]
            if comp is not None:
                mean, err = mean[:, comp], err[:, comp]
            out[name] = (mean, err, text(f[f"fields/{name}"].attrs["units"]))
        for side in ("xmin", "xmax"):
            wall = f[f"walls/{side}"]
            if text(wall.attrs.get("model", "")) == "periodic":
                continue  # no wall there: its temperature and velocity mean nothing
            values = {}
            for field, (dataset, comp) in WALL_MARKS.items():
                v = wall[dataset][()]
                values[field] = float(v if comp is None else v[comp])
            out["walls"][side] = values
    return out


def plot(data: dict):
    unit = data["x_units"]
    factor, prefix = length_scale(data["length"]) if unit == "m" else (1.0, "")
    x = data["x"] * factor
    fig, axes = plt.subplots(2, 2, figsize=(10, 7), sharex=True, constrained_layout=True)
    for ax, (name, _comp, label) in zip(axes.flat, PANELS):
        mean, err, units = data[name]
        ax.errorbar(x, mean, yerr=err, fmt="o-", ms=3, lw=1, capsize=2, label="gas (cell mean)")
        if name in WALL_MARKS:
            for side, xw in (("xmin", 0.0), ("xmax", data["length"] * factor)):
                if side in data["walls"]:
                    ax.plot([xw], [data["walls"][side][name]], "s", mfc="none", color="k",
                            label="wall" if side == "xmin" else None)
            if data["walls"]:
                ax.legend(fontsize="small")
        ax.set_ylabel(f"{label} [{units}]")
        ax.grid(alpha=0.3)
    for ax in axes[-1]:
        ax.set_xlabel(f"x [{prefix}{unit}]")
    fig.suptitle(f"{data['title']}\n(error bars: one batch-means standard error)", fontsize="medium")
    return fig


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("result", type=Path, help="HDF5 result file")
    ap.add_argument("-o", "--output", type=Path, help="output .png or .pdf (default: RESULT.png)")
    args = ap.parse_args(argv)
    if not args.result.is_file():
        print(f"{args.result}: no such file", file=sys.stderr)
        return 2
    try:
        data = read(args.result)
    except (OSError, KeyError, ValueError) as err:
        print(f"{args.result}: cannot plot: {err}", file=sys.stderr)
        return 2
    out = args.output or args.result.with_suffix(".png")
    fig = plot(data)
    written = [out.with_suffix(".png")]
    if out.suffix.lower() == ".pdf":
        written.append(out)
    for path in written:
        fig.savefig(path, dpi=150)
        print(f"wrote {path}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
