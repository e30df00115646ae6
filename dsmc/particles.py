"""Structure-of-arrays particle store with a scratch copy for physical reordering."""

from __future__ import annotations

import numpy as np

from dsmc.kernels.sort import gather, gather_rows

SPECIES_DTYPE = np.uint8
VIB_DTYPE = np.int32


class Particles:
    """Positions ``pos`` (n, dim), velocities ``v`` (n, 3), species ``sp`` (n,),
    rotational energies ``erot`` (n,) in J and vibrational quantum levels
    ``vib`` (n,) (one harmonic mode per molecule; 0 for atoms or when
    vibration is off).

    Arrays have room for ``capacity`` particles; the first ``n`` are live.
    :meth:`reorder` applies a permutation through scratch arrays of the same
    size and swaps them in, so no allocation happens in the time loop.
    """

    def __init__(self, capacity: int, dim: int):
        self.n = 0
        self.dim = dim
        self._alloc(max(int(capacity), 1))

    def _alloc(self, cap: int):
        self.pos = np.zeros((cap, self.dim))
        self.v = np.zeros((cap, 3))
        self.sp = np.zeros(cap, dtype=SPECIES_DTYPE)
        self.erot = np.zeros(cap)
        self.vib = np.zeros(cap, dtype=VIB_DTYPE)
        self._pos = np.empty_like(self.pos)
        self._v = np.empty_like(self.v)
        self._sp = np.empty_like(self.sp)
        self._erot = np.empty_like(self.erot)
        self._vib = np.empty_like(self.vib)

    @property
    def capacity(self) -> int:
        return self.sp.size

    def reserve(self, cap: int):
        """Grow (keeping the live particles) to hold at least ``cap``."""
        if cap <= self.capacity:
            return
        n = self.n
        old = [a[:n].copy() for a in self._live()]
        self._alloc(max(cap, int(1.5 * self.capacity)))
        for a, b in zip(self._live(), old):
            a[:n] = b

    def _live(self):
        return self.pos, self.v, self.sp, self.erot, self.vib

    def reorder(self, perm: np.ndarray):
        n = self.n
        gather_rows(self.pos, self._pos, perm, n)
        gather_rows(self.v, self._v, perm, n)
        gather(self.sp, self._sp, perm, n)
        gather(self.erot, self._erot, perm, n)
        gather(self.vib, self._vib, perm, n)
        self.pos, self._pos = self._pos, self.pos
        self.v, self._v = self._v, self.v
        self.sp, self._sp = self._sp, self.sp
        self.erot, self._erot = self._erot, self.erot
        self.vib, self._vib = self._vib, self.vib

    def nbytes(self) -> int:
        scratch = (self._pos, self._v, self._sp, self._erot, self._vib)
        return sum(a.nbytes for a in (*self._live(), *scratch))
