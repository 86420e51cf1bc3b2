"""Fast Fourier transforms with explicitly cached FFTW plans.

Plans are kept in an :class:`FFTPlanner` object that the caller owns (no global state). The
default planning effort is ``FFTW_ESTIMATE`` (about 10 ms a plan on the project's reference
machine); ``FFTW_MEASURE`` plans take tens of seconds for 10⁶ points but run about twice as fast,
and are worth it only with saved wisdom (:meth:`FFTPlanner.export_wisdom`). When pyfftw cannot
be loaded, numpy's FFT is used and :attr:`FFTPlanner.backend` says so.

References
----------
.. [1] M. Frigo and S. G. Johnson, "The design and implementation of FFTW3", Proc. IEEE 93,
   216–231 (2005).
"""

from __future__ import annotations

import numpy as np

from ftsource.errors import OptionError

__all__ = ["FFTPlanner", "next_fft_length"]

_EFFORTS = {"estimate": "FFTW_ESTIMATE", "measure": "FFTW_MEASURE", "patient": "FFTW_PATIENT"}


def next_fft_length(n: int) -> int:
    """Smallest power of two ≥ n (FFTW is fastest and plans cheapest for these)."""
    return 1 << max(int(n) - 1, 0).bit_length()


class FFTPlanner:
    """A cache of real-to-complex FFT plans, one per transform length.

    Parameters
    ----------
    effort : {"estimate", "measure", "patient"}
        FFTW planning effort.
    threads : int
        FFTW threads (1 by default: results are then reproducible bit for bit, and two threads
        were often not faster on the 2-core reference machine).
    wisdom : tuple of bytes, optional
        FFTW wisdom to import before planning.
    """

    def __init__(self, *, effort: str = "estimate", threads: int = 1, wisdom=None):
        if effort not in _EFFORTS:
            raise OptionError(
                f"fft planning effort {effort!r} is not known; use one of {', '.join(_EFFORTS)}"
            )
        self.effort = effort
        self.threads = int(threads)
        self._plans: dict[int, object] = {}
        try:
            import pyfftw

            self._pyfftw = pyfftw
            self.backend = "pyfftw"
            if wisdom is not None:
                pyfftw.import_wisdom(wisdom)
        except ImportError:  # pragma: no cover - pyfftw is a hard dependency
            self._pyfftw = None
            self.backend = "numpy"

    def _plan(self, n: int):
        plan = self._plans.get(n)
        if plan is None:
            pf = self._pyfftw
            a = pf.empty_aligned(n, dtype="float64")
            b = pf.empty_aligned(n // 2 + 1, dtype="complex128")
            plan = pf.FFTW(a, b, flags=(_EFFORTS[self.effort],), threads=self.threads)
            self._plans[n] = plan
        return plan

    def rfft(self, a: np.ndarray, n: int | None = None) -> np.ndarray:
        """Real FFT of ``a`` zero-filled (or cut) to length ``n``; returns a new array."""
        a = np.asarray(a, dtype=float)
        n = a.size if n is None else int(n)
        if self._pyfftw is None:
            return np.fft.rfft(a, n)
        plan = self._plan(n)
        inp = plan.input_array
        m = min(n, a.size)
        inp[:m] = a[:m]
        inp[m:] = 0.0
        plan.execute()
        return plan.output_array.copy()

    def export_wisdom(self):
        """FFTW wisdom accumulated so far (to save and pass back as ``wisdom=``)."""
        return None if self._pyfftw is None else self._pyfftw.export_wisdom()

    @property
    def cached_lengths(self) -> tuple[int, ...]:
        return tuple(sorted(self._plans))
