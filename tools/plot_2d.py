#!/usr/bin/env python3
"""Contour plot of a field of a 2-D result file, with the in-plane velocity as streamlines.

    python tools/plot_2d.py RESULT.h5 [--field temperature] [-o OUT.png]

Two panels on the box: the chosen scalar field of ``/fields`` (shape
``(ny, nx)``, filled contours at the cell centres) with the streamlines of
``(u_x, u_y)``, and the relative standard error of that field, so noise is
not read as structure; embedded bodies (``/bodies``) are drawn filled on both.
Like ``tools/plot_shock.py`` it uses only h5py and
matplotlib; the layout is in ``docs/output.md`` (``/grid``, ``/fields``).
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import h5py
import matplotlib
import numpy as np

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("result", help="result file of a 2-D case")
    ap.add_argument("--field", default="temperature", help="scalar field of /fields (default: "
                                                           "temperature)")
    ap.add_argument("-o", "--output", help="PNG to write (default: RESULT with .png)")
    args = ap.parse_args(argv)
    path = Path(args.result)
    out = Path(args.output) if args.output else path.with_suffix(".png")
    try:
        f = h5py.File(path, "r")
    except OSError as err:
        print(f"plot_2d: {path}: cannot open: {err}", file=sys.stderr)
        return 2
    with f:
        if int(f.attrs.get("dimension", 1)) != 2:
            print(f"plot_2d: {path}: not a 2-D result file", file=sys.stderr)
            return 2
        x, y = f["grid/x"][:], f["grid/y"][:]
        x_edges, y_edges = f["grid/x_edges"][:], f["grid/y_edges"][:]
        if args.field not in f["fields"] or f["fields"][args.field].shape != (y.size, x.size):
            names = [k for k in f["fields"] if f["fields"][k].shape == (y.size, x.size)
                     and not k.endswith("_stderr")]
            print(f"plot_2d: {path}: no scalar field '{args.field}'; one of {', '.join(names)}",
                  file=sys.stderr)
            return 2
        val = f["fields"][args.field][:]
        err = f["fields"][args.field + "_stderr"][:]
        units = f["fields"][args.field].attrs["units"]
        u = f["fields/velocity"][:]
        title = str(f.attrs.get("title", path.stem))
        outlines = []  # embedded bodies: closed outlines (k, 2), m
        for g in (f["bodies"].values() if "bodies" in f else ()):
            if "vertices" in g:
                v = g["vertices"][()]
                outlines.append(np.vstack([v, v[:1]]))
            else:
                a = np.linspace(0.0, 2.0 * np.pi, 181)
                outlines.append(g["center"][()] + g["radius"][()] * np.column_stack([np.cos(a), np.sin(a)]))
    size = max(x[-1] + x[0], y[-1] + y[0])  # the box extent (first centre is half a cell in)
    scale, unit = (1e6, "um") if size < 1e-3 else (1e3, "mm") if size < 1.0 else (1.0, "m")
    aspect = (x_edges[-1] - x_edges[0]) / (y_edges[-1] - y_edges[0])
    if aspect > 1.6:  # a wide box (a channel): the two panels one above the other
        fig, axes = plt.subplots(2, 1, figsize=(11, 1.0 + 2 * min(4.6, 10.0 / aspect + 0.8)),
                                 constrained_layout=True)
    else:
        fig, axes = plt.subplots(1, 2, figsize=(11, 4.6), constrained_layout=True)
    cs = axes[0].contourf(x * scale, y * scale, val, levels=20, cmap="viridis")
    fig.colorbar(cs, ax=axes[0], label=f"{args.field} ({units})")
    gas = np.isfinite(u[..., 0]) & np.isfinite(u[..., 1])
    axes[0].streamplot(x * scale, y * scale, np.where(gas, u[..., 0], 0.0),
                       np.where(gas, u[..., 1], 0.0), color="w", density=1.0, linewidth=0.7)
    rel = np.abs(err / np.where(val == 0, np.nan, val))
    cs = axes[1].contourf(x * scale, y * scale, rel, levels=20, cmap="magma")
    fig.colorbar(cs, ax=axes[1], label=f"relative standard error of {args.field}")
    for ax in axes:
        for xy in outlines:
            ax.fill(xy[:, 0] * scale, xy[:, 1] * scale, facecolor="0.6", edgecolor="k", lw=0.8)
        ax.set_xlim(x_edges[0] * scale, x_edges[-1] * scale)
        ax.set_ylim(y_edges[0] * scale, y_edges[-1] * scale)
        ax.set_aspect("equal")
        ax.set_xlabel(f"x ({unit})")
        ax.set_ylabel(f"y ({unit})")
    fig.suptitle(title)
    fig.savefig(out, dpi=120)
    print(f"wrote {out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
