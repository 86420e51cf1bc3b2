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


#: First line of a wisdom file written by :meth:`FFTPlanner.save_wisdom`.
WISDOM_FORMAT = "ftsource-fftw-wisdom 1"


class FFTPlanner:
    """A cache of real-to-complex FFT plans, one per transform length and thread count.

    Parameters
    ----------
    effort : {"estimate", "measure", "patient"}
        FFTW planning effort.
    threads : int
        FFTW threads used when a call does not say (1 by default: results are then
        reproducible bit for bit, and two threads were often not faster on the 2-core
        reference machine).
    wisdom : tuple of bytes, optional
        FFTW wisdom to import before planning (:meth:`export_wisdom`).
    backend : {"auto", "pyfftw", "numpy"}
        ``auto`` uses pyfftw when it can be imported and numpy's FFT otherwise;
        :attr:`backend` then names the one in use.
    """

    def __init__(self, *, effort: str = "estimate", threads: int = 1, wisdom=None,
                 backend: str = "auto"):
        if effort not in _EFFORTS:
            raise OptionError(
                f"fft planning effort {effort!r} is not known; use one of {', '.join(_EFFORTS)}"
            )
        if backend not in ("auto", "pyfftw", "numpy"):
            raise OptionError(f"fft backend {backend!r} is not known; use auto, pyfftw or numpy")
        self.threads = _check_threads(threads)
        self.effort = effort
        self._plans: dict[tuple[int, int], object] = {}
        self._pyfftw = None
        self.backend = "numpy"
        if backend != "numpy":
            try:
                import pyfftw
            except ImportError:
                if backend == "pyfftw":
                    raise OptionError("fft backend 'pyfftw' asked for, but pyfftw cannot be "
                                      "imported; install pyfftw or use the numpy backend") from None
            else:
                self._pyfftw = pyfftw
                self.backend = "pyfftw"
        if wisdom is not None and self._pyfftw is not None:
            self._pyfftw.import_wisdom(tuple(wisdom))

    def _plan(self, n: int, threads: int):
        plan = self._plans.get((n, threads))
        if plan is None:
            pf = self._pyfftw
            a = pf.empty_aligned(n, dtype="float64")
            b = pf.empty_aligned(n // 2 + 1, dtype="complex128")
            plan = pf.FFTW(a, b, flags=(_EFFORTS[self.effort],), threads=threads)
            self._plans[(n, threads)] = plan
        return plan

    def rfft(self, a: np.ndarray, n: int | None = None, *, threads: int | None = None
             ) -> np.ndarray:
        """Real FFT of ``a`` zero-filled (or cut) to length ``n``; returns a new array.

        ``threads`` overrides the planner's thread count for this call (its plan is cached
        separately)."""
        a = np.asarray(a, dtype=float)
        n = a.size if n is None else int(n)
        if self._pyfftw is None:
            return np.fft.rfft(a, n)
        plan = self._plan(n, self.threads if threads is None else _check_threads(threads))
        inp = plan.input_array
        m = min(n, a.size)
        inp[:m] = a[:m]
        inp[m:] = 0.0
        plan.execute()
        return plan.output_array.copy()

    def export_wisdom(self):
        """FFTW wisdom accumulated so far (to save and pass back as ``wisdom=``)."""
        return None if self._pyfftw is None else self._pyfftw.export_wisdom()

    def save_wisdom(self, path) -> None:
        """Write the accumulated FFTW wisdom to ``path`` (text; replaced atomically).

        Nothing is written with the numpy backend (it has no plans)."""
        wisdom = self.export_wisdom()
        if wisdom is None:
            return
        from ftsource.io.records import atomic_write

        text = "\n".join([WISDOM_FORMAT] + [w.decode("ascii").replace("\n", "\\n")
                                             for w in wisdom]) + "\n"
        atomic_write(path, lambda fh: fh.write(text.encode("ascii")), overwrite=True)

    @staticmethod
    def load_wisdom(path) -> tuple[bytes, ...]:
        """Read a wisdom file written by :meth:`save_wisdom` (pass it as ``wisdom=``).

        Raises
        ------
        OptionError
            When the file is not such a wisdom file.
        """
        from ftsource.errors import RecordError

        try:
            with open(path, "rb") as fh:
                lines = fh.read().decode("ascii").split("\n")
        except UnicodeDecodeError:
            lines = []
        except OSError as exc:
            raise RecordError(f"--fft-wisdom {path}: cannot be read ({exc.strerror})") from None
        if not lines or lines[0] != WISDOM_FORMAT or len(lines) < 4:
            raise OptionError(
                f"--fft-wisdom {path}: is not an FFTW wisdom file written by ftsource (its "
                f"first line must be {WISDOM_FORMAT!r}); delete it to start afresh"
            )
        return tuple(w.replace("\\n", "\n").encode("ascii") for w in lines[1:4])

    @property
    def cached_lengths(self) -> tuple[int, ...]:
        return tuple(sorted({n for n, _ in self._plans}))


def _check_threads(threads) -> int:
    if isinstance(threads, bool) or not isinstance(threads, (int, np.integer)) or threads < 1:
        raise OptionError(f"fft threads must be an integer ≥ 1, not {threads!r}")
    return int(threads)
