"""Uniform Cartesian grids."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

UNIT_AREA = 1.0  # m^2: a 1-D slab is a column of unit cross-section


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
