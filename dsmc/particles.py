"""Structure-of-arrays particle store with a scratch copy for physical reordering."""

from __future__ import annotations

import numpy as np

from dsmc.kernels.sort import histogram, scatter_sorted

SPECIES_DTYPE = np.uint8
KEY_DTYPE = np.int32
VIB_DTYPE = np.int32


class Particles:
    """Positions ``pos`` (n, dim), velocities ``v`` (n, 3), species ``sp`` (n,),
    and, when ``internal``, rotational energies ``erot`` (n,) in J and
    vibrational quantum levels ``vib`` (n,) (one harmonic mode per molecule; 0
    for atoms or when vibration is off).  Without ``internal`` (monatomic
    gases) ``erot`` and ``vib`` are empty arrays, which the kernels test
    for, so a monatomic run carries no internal-energy memory.

    Arrays have room for ``capacity`` particles; the first ``n`` are live.
    ``key`` holds each particle's cell after a move.  :meth:`sort` scatters
    the particles into cell order through scratch arrays of the same size and
    swaps them in, so no allocation happens in the time loop.
    """

    def __init__(self, capacity: int, dim: int, internal: bool = False):
        self.n = 0
        self.dim = dim
        self.internal = bool(internal)
        self._alloc(max(int(capacity), 1))

    def _alloc(self, cap: int):
        ci = cap if self.internal else 0
        self.pos = np.zeros((cap, self.dim))
        self.v = np.zeros((cap, 3))
        self.sp = np.zeros(cap, dtype=SPECIES_DTYPE)
        self.key = np.zeros(cap, dtype=KEY_DTYPE)
        self.erot = np.zeros(ci)
        self.vib = np.zeros(ci, dtype=VIB_DTYPE)
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
            a[: b.shape[0]] = b

    def _live(self):
        return self.pos, self.v, self.sp, self.erot, self.vib

    def sort(self, n_keys: int, hist: np.ndarray, start: np.ndarray, block_size: int,
             counted: bool = False):
        """Stable sort of the live particles by ``key`` into cell order.

        ``hist`` (``SORT_CHUNKS`` x ``n_keys``) holds the per-chunk key
        histogram when ``counted`` (the move kernel fills it); otherwise it is
        computed here.  ``start`` receives the first position of each key.
        """
        n = self.n
        if not counted:
            histogram(self.key, n, n_keys, block_size, hist)
        scatter_sorted(self.key, n, n_keys, block_size, hist, start, self.pos, self.v, self.sp,
                       self.erot, self.vib, self._pos, self._v, self._sp, self._erot, self._vib)
        self.pos, self._pos = self._pos, self.pos
        self.v, self._v = self._v, self.v
        self.sp, self._sp = self._sp, self.sp
        self.erot, self._erot = self._erot, self.erot
        self.vib, self._vib = self._vib, self.vib

    def nbytes(self) -> int:
        scratch = (self._pos, self._v, self._sp, self._erot, self._vib)
        return sum(a.nbytes for a in (*self._live(), self.key, *scratch))
