"""Uniform Cartesian grids.

Both grids offer the interface the simulation uses: ``cells`` (total number
of cells), ``volumes``, ``volume`` (of the domain), ``centers`` (``(cells,)``
in 1-D, ``(cells, 2)`` in 2-D, in flat cell order), ``dim``, ``sides`` (side
names in wall-row order), ``normals`` (unit normal into the gas of each side,
as ``(nx, ny)``), ``side_areas`` (m^2 of each side), ``face_cells`` (per
side, the cells along it in order along the side: each side is cut into the
faces of these cells; one face per side in 1-D), ``face_areas`` (m^2 of one
face of each side), ``extent`` (domain size per axis) and ``cell_size``
(smallest cell edge).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from dsmc import geometry

UNIT_AREA = 1.0  # m^2: a 1-D slab is a column of unit cross-section
UNIT_DEPTH = 1.0  # m: a 2-D planar domain is a prism of unit depth in z

SIDES_1D = ("xmin", "xmax")
SIDES_2D = ("xmin", "xmax", "ymin", "ymax")
_NORMALS = {"xmin": (1.0, 0.0), "xmax": (-1.0, 0.0), "ymin": (0.0, 1.0), "ymax": (0.0, -1.0)}


@dataclass(frozen=True)
class Grid1D:
    """``cells`` equal cells on ``0 <= x <= length``, each of unit cross-section."""

    length: float
    cells: int

    @property
    def dx(self) -> float:
        return self.length / self.cells

    @property
    def edges(self) -> np.ndarray:
        return np.linspace(0.0, self.length, self.cells + 1)

    @property
    def centers(self) -> np.ndarray:
        return (np.arange(self.cells) + 0.5) * self.dx

    @property
    def volumes(self) -> np.ndarray:
        return np.full(self.cells, self.dx * UNIT_AREA)

    @property
    def dim(self) -> int:
        return 1

    @property
    def extent(self) -> tuple[float]:
        return (self.length,)

    @property
    def volume(self) -> float:
        return self.length * UNIT_AREA

    @property
    def sides(self) -> tuple[str, ...]:
        return SIDES_1D

    @property
    def normals(self) -> tuple[np.ndarray, ...]:
        return tuple(np.array(_NORMALS[s]) for s in SIDES_1D)

    @property
    def side_areas(self) -> tuple[float, ...]:
        return (UNIT_AREA, UNIT_AREA)

    @property
    def face_cells(self) -> tuple[np.ndarray, ...]:
        return (np.array([0]), np.array([self.cells - 1]))

    @property
    def face_areas(self) -> tuple[float, ...]:
        return self.side_areas

    @property
    def cell_size(self) -> float:
        return self.dx

@dataclass(frozen=True)
class Grid2D:
    """``nx`` x ``ny`` equal cells on ``[0, lx] x [0, ly]``, of unit depth in z.

    Cell ``(ix, iy)`` has the flat index ``c = ix + nx * iy``, so a field of
    ``cells`` values reshaped (C order) to ``(ny, nx)`` is indexed ``[iy, ix]``.

    ``shapes`` are the embedded bodies (:mod:`dsmc.geometry`): a cell's
    volume is its gas area (cell area minus the body area inside it, exact)
    times the unit depth, 0 for a cell a body covers; ``volume`` is the gas
    volume of the domain.
    """

    lx: float
    ly: float
    nx: int
    ny: int
    shapes: tuple = ()

    @property
    def cells(self) -> int:
        return self.nx * self.ny

    @property
    def extent(self) -> tuple[float, float]:
        return (self.lx, self.ly)

    @property
    def dx(self) -> float:
        return self.lx / self.nx

    @property
    def dy(self) -> float:
        return self.ly / self.ny

    @property
    def x_edges(self) -> np.ndarray:
        return np.linspace(0.0, self.lx, self.nx + 1)

    @property
    def y_edges(self) -> np.ndarray:
        return np.linspace(0.0, self.ly, self.ny + 1)

    @property
    def x_centers(self) -> np.ndarray:
        return (np.arange(self.nx) + 0.5) * self.dx

    @property
    def y_centers(self) -> np.ndarray:
        return (np.arange(self.ny) + 0.5) * self.dy

    @property
    def centers(self) -> np.ndarray:
        """``(cells, 2)`` cell centres in flat cell order."""
        xc, yc = np.meshgrid(self.x_centers, self.y_centers)  # (ny, nx)
        return np.column_stack([xc.ravel(), yc.ravel()])

    @cached_property
    def volumes(self) -> np.ndarray:
        if self.shapes:
            return geometry.cut_volumes(self.shapes, self.x_edges, self.y_edges, UNIT_DEPTH)
        return np.full(self.cells, self.dx * self.dy * UNIT_DEPTH)

    @property
    def volume(self) -> float:
        if self.shapes:
            return (self.lx * self.ly - sum(s.area for s in self.shapes)) * UNIT_DEPTH
        return self.lx * self.ly * UNIT_DEPTH

    @property
    def dim(self) -> int:
        return 2

    @property
    def sides(self) -> tuple[str, ...]:
        return SIDES_2D

    @property
    def normals(self) -> tuple[np.ndarray, ...]:
        return tuple(np.array(_NORMALS[s]) for s in SIDES_2D)

    @property
    def side_areas(self) -> tuple[float, ...]:
        return (self.ly * UNIT_DEPTH, self.ly * UNIT_DEPTH, self.lx * UNIT_DEPTH,
                self.lx * UNIT_DEPTH)

    @property
    def face_cells(self) -> tuple[np.ndarray, ...]:
        """Cells along xmin, xmax (by increasing y), ymin, ymax (by increasing x)."""
        ix = np.arange(self.nx)
        iy = np.arange(self.ny)
        return (self.nx * iy, self.nx - 1 + self.nx * iy, ix, ix + self.nx * (self.ny - 1))

    @property
    def face_areas(self) -> tuple[float, ...]:
        return (self.dy * UNIT_DEPTH, self.dy * UNIT_DEPTH, self.dx * UNIT_DEPTH,
                self.dx * UNIT_DEPTH)

    @property
    def cell_size(self) -> float:
        return min(self.dx, self.dy)
