"""Apodization functions, their instrument line shapes and the Mertz ramp.

An apodization function weights the interferogram before the transform. It is written here as
``A(xi)`` with ``xi = |x| / L``, where ``x`` is the optical path difference (OPD, cm) measured
from zero path difference (ZPD) and ``L`` the maximum OPD used (cm); ``A`` is zero for
``xi > 1`` and ``A(0) = 1``.

The instrument line shape (ILS) of a function is its continuous cosine transform

    ILS(sigma) = integral over -L <= x <= L of A(|x|/L) cos(2 pi sigma x) dx,

normalised here to a peak of 1. With ``u = 2 L sigma`` the shape depends on ``u`` only, so each
function carries its ILS full width at half maximum as a factor of ``1/(2L)`` (``fwhm_factor``)
and its largest sidelobe as a signed fraction of the peak (``largest_sidelobe``). These figures
are for the continuous transform; a finite, sampled window differs slightly.

Functions are looked up by name with :func:`get_apodization`; :func:`apodization_names` lists
them. :func:`apodize` returns the weights on an OPD grid and :func:`mertz_ramp` the weights that
keep the double-sided part of a one-sided interferogram from being counted twice.
"""

from __future__ import annotations

from dataclasses import dataclass
from math import factorial

import numpy as np

from ftsource.errors import OptionError

__all__ = [
    "Apodization",
    "apodization_names",
    "get_apodization",
    "apodize",
    "instrument_line_shape",
    "ils_fwhm_per_cm",
    "mertz_ramp",
]

_HARRIS = (
    "F. J. Harris, 'On the use of windows for harmonic analysis with the discrete Fourier "
    "transform', Proc. IEEE 66 (1978) 51-83."
)
_NUTTALL = (
    "A. H. Nuttall, 'Some windows with very good sidelobe behavior', IEEE Trans. Acoust. "
    "Speech Signal Process. 29 (1981) 84-91."
)
_NORTON_BEER = (
    "R. H. Norton and R. Beer, 'New apodizing functions for Fourier spectrometry', J. Opt. Soc. "
    "Am. 66 (1976) 259-264; erratum J. Opt. Soc. Am. 67 (1977) 419."
)
_NAYLOR = (
    "D. A. Naylor and M. K. Tahic, 'Apodizing functions for Fourier transform spectroscopy', "
    "J. Opt. Soc. Am. A 24 (2007) 3644-3648."
)
_GRIFFITHS = (
    "P. R. Griffiths and J. A. de Haseth, Fourier Transform Infrared Spectrometry, 2nd ed., "
    "Wiley (2007)."
)
_CONTINUOUS = (
    "FWHM and sidelobe: continuous transform on [-L, L], checked against closed forms in "
    "tests/test_apodization.py."
)


@dataclass(frozen=True)
class Apodization:
    """One apodization function and the figures of its continuous instrument line shape.

    Attributes
    ----------
    name : str
        Registry name, e.g. ``"happ-genzel"``.
    form : str
        ``"cosine-sum"``: ``A = sum_k c_k cos(k pi xi)``;
        ``"triangular"``: ``A = 1 - xi`` (``coefficients`` is empty);
        ``"norton-beer"``: ``A = sum_i c_i (1 - xi**2)**i``.
    coefficients : tuple of float
        The coefficients of ``form``; they sum to 1 so that ``A(0) = 1``.
    fwhm_factor : float
        FWHM of the continuous ILS in units of ``1/(2L)``.
    largest_sidelobe : float
        The sidelobe of largest magnitude, signed, as a fraction of the ILS peak.
    references : tuple of str
        Where the function and its figures come from.
    """

    name: str
    form: str
    coefficients: tuple[float, ...]
    fwhm_factor: float
    largest_sidelobe: float
    references: tuple[str, ...]

    @property
    def largest_sidelobe_db(self) -> float:
        """The largest sidelobe in dB relative to the peak, ``20 log10 |ratio|``."""
        return float(20.0 * np.log10(abs(self.largest_sidelobe)))

    def __call__(self, xi: np.ndarray | float) -> np.ndarray:
        """Evaluate ``A(xi)`` for ``xi = |x| / L``; zero where ``xi > 1``.

        Parameters
        ----------
        xi : array_like
            Non-negative normalised OPD.

        Returns
        -------
        numpy.ndarray
            The weights, clipped to ``[0, 1]`` against rounding.
        """
        xi = np.abs(np.asarray(xi, dtype=float))
        inside = xi <= 1.0
        t = np.where(inside, xi, 1.0)
        if self.form == "cosine-sum":
            a = np.zeros_like(t)
            for k, c in enumerate(self.coefficients):
                a = a + c * np.cos(k * np.pi * t)
        elif self.form == "triangular":
            a = 1.0 - t
        elif self.form == "norton-beer":
            q = 1.0 - t * t
            a = np.zeros_like(t)
            for c in reversed(self.coefficients):  # Horner in q
                a = a * q + c
        else:  # pragma: no cover - guarded by the registry
            raise OptionError(f"apodization form {self.form!r} is unknown")
        return np.clip(np.where(inside, a, 0.0), 0.0, 1.0)

    def integral(self) -> float:
        """Return ``integral_0^1 A(xi) dxi`` in closed form (the ILS peak over ``2L``)."""
        c = self.coefficients
        if self.form == "cosine-sum":
            return float(c[0])  # the cos(k pi xi), k >= 1, integrate to 0 on [0, 1]
        if self.form == "triangular":
            return 0.5
        # integral_0^1 (1 - xi^2)^i dxi = (2^i i!)^2 / (2i + 1)!
        return float(
            sum(ci * (2**i * factorial(i)) ** 2 / factorial(2 * i + 1) for i, ci in enumerate(c))
        )


def _cosine(name, coefficients, fwhm, sidelobe, references):
    return Apodization(name, "cosine-sum", tuple(coefficients), fwhm, sidelobe, references)


def _norton_beer(name, coefficients, fwhm, sidelobe):
    return Apodization(
        name,
        "norton-beer",
        tuple(coefficients),
        fwhm,
        sidelobe,
        (_NORTON_BEER, _NAYLOR, _CONTINUOUS),
    )


# FWHM factors and sidelobes of the continuous ILS, as tabulated in the project's check values
# (section 1); sidelobes carried to 6 figures from the closed forms in tests/test_apodization.py.
_REGISTRY: dict[str, Apodization] = {
    a.name: a
    for a in (
        _cosine("boxcar", (1.0,), 1.20671, -0.217234, (_HARRIS, _CONTINUOUS)),
        Apodization(
            "triangular", "triangular", (), 1.77179, +0.0471904, (_HARRIS, _GRIFFITHS, _CONTINUOUS)
        ),
        _cosine(
            "happ-genzel", (0.54, 0.46), 1.81522, +0.00734934, (_GRIFFITHS, _HARRIS, _CONTINUOUS)
        ),
        _cosine("hann", (0.5, 0.5), 2.00000, -0.0267076, (_HARRIS, _CONTINUOUS)),
        # Harris's "minimum 3-term, -67 dB" set; on the continuous ILS it reaches -70.8 dB
        # (the label does not match; Nuttall 1981 made the same remark).
        _cosine(
            "blackman-harris-3",
            (0.42323, 0.49755, 0.07922),
            2.27395,
            -0.000287539,
            (_HARRIS, _NUTTALL, _CONTINUOUS),
        ),
        # The 4-term "-92 dB" set, coefficients as in scipy.signal.windows.blackmanharris.
        _cosine(
            "blackman-harris-4",
            (0.35875, 0.48829, 0.14128, 0.01168),
            2.66643,
            +2.50907e-05,
            (_HARRIS, _CONTINUOUS),
        ),
        _norton_beer("norton-beer-weak", (0.384093, -0.087577, 0.703484), 1.44808, -0.0580388),
        _norton_beer("norton-beer-medium", (0.152442, -0.136176, 0.983734), 1.68939, -0.0141355),
        _norton_beer(
            "norton-beer-strong", (0.045335, 0.0, 0.554883, 0.0, 0.399782), 1.93073, +0.00373071
        ),
    )
}


def apodization_names() -> tuple[str, ...]:
    """Return the registry names of the apodization functions, in table order.

    Returns
    -------
    tuple of str
    """
    return tuple(_REGISTRY)


def get_apodization(name: str) -> Apodization:
    """Look up an apodization function by name (case-insensitive, ``_`` same as ``-``).

    Parameters
    ----------
    name : str
        One of :func:`apodization_names`.

    Returns
    -------
    Apodization

    Raises
    ------
    OptionError
        If ``name`` is not in the registry; the message lists the valid names.

    References
    ----------
    .. [1] F. J. Harris, Proc. IEEE 66 (1978) 51-83.
    .. [2] R. H. Norton and R. Beer, J. Opt. Soc. Am. 66 (1976) 259; 67 (1977) 419.
    """
    if isinstance(name, Apodization):
        return name
    key = str(name).strip().lower().replace("_", "-")
    try:
        return _REGISTRY[key]
    except KeyError:
        raise OptionError(
            f"apodization {name!r} is unknown; valid names are: {', '.join(_REGISTRY)}"
        ) from None


def _check_length(value: float, what: str) -> float:
    v = float(value)
    if not np.isfinite(v) or v <= 0.0:
        raise OptionError(f"{what} must be a finite length > 0 cm, got {value!r}")
    return v


def apodize(
    x_cm: np.ndarray, L_cm: float, name: str = "happ-genzel", *, centre_cm: float = 0.0
) -> np.ndarray:
    """Return the apodization weights ``A(|x - centre| / L)`` on an OPD grid.

    Parameters
    ----------
    x_cm : array_like
        OPD of the samples, cm.
    L_cm : float
        Maximum OPD from the centre, cm (``> 0``). Weights are zero beyond it.
    name : str, optional
        Apodization function, see :func:`apodization_names`.
    centre_cm : float, optional
        OPD of zero path difference, cm.

    Returns
    -------
    numpy.ndarray
        Weights in ``[0, 1]``, same shape as ``x_cm``.

    Raises
    ------
    OptionError
        Unknown ``name`` or ``L_cm`` not a positive length.

    References
    ----------
    .. [1] F. J. Harris, Proc. IEEE 66 (1978) 51-83.
    .. [2] R. H. Norton and R. Beer, J. Opt. Soc. Am. 66 (1976) 259; 67 (1977) 419.
    """
    apo = get_apodization(name)
    L = _check_length(L_cm, "L_cm")
    x = np.asarray(x_cm, dtype=float)
    return apo(np.abs(x - float(centre_cm)) / L)


def _gauss_legendre_01(n: int) -> tuple[np.ndarray, np.ndarray]:
    from scipy.special import roots_legendre

    t, w = roots_legendre(n)
    return 0.5 * (t + 1.0), 0.5 * w


def instrument_line_shape(
    sigma_offsets_per_cm: np.ndarray, L_cm: float, name: str = "happ-genzel"
) -> np.ndarray:
    """Continuous instrument line shape of an apodization, normalised to a peak of 1.

    ``ILS(s) = integral_0^1 A(xi) cos(pi u xi) dxi / integral_0^1 A(xi) dxi`` with
    ``u = 2 L s``, evaluated by Gauss-Legendre quadrature on ``[0, 1]`` (the integrands are
    smooth there, so the rule converges quickly once it has a few nodes per oscillation).

    Parameters
    ----------
    sigma_offsets_per_cm : array_like
        Wavenumber offsets from the line centre, cm^-1.
    L_cm : float
        Maximum OPD, cm.
    name : str, optional
        Apodization function.

    Returns
    -------
    numpy.ndarray
        The ILS at the offsets, same shape, peak 1 at offset 0.

    References
    ----------
    .. [1] R. H. Norton and R. Beer, J. Opt. Soc. Am. 66 (1976) 259 (ILS of apodized
       interferograms).
    .. [2] S. P. Davis, M. C. Abrams and J. W. Brault, Fourier Transform Spectrometry,
       Academic Press (2001), ch. on the instrument line shape.
    """
    apo = get_apodization(name)
    L = _check_length(L_cm, "L_cm")
    s = np.asarray(sigma_offsets_per_cm, dtype=float)
    u = np.abs(2.0 * L * s).ravel()
    if u.size == 0:
        return np.zeros(s.shape)
    if not np.all(np.isfinite(u)):
        raise OptionError("sigma_offsets_per_cm must be finite")
    n_nodes = 64 + int(2.0 * float(u.max()))
    xi, w = _gauss_legendre_01(n_nodes)
    wa = w * apo(xi)
    norm = float(wa.sum())
    out = np.empty_like(u)
    chunk = max(1, 4_000_000 // n_nodes)
    for i in range(0, u.size, chunk):
        uu = u[i : i + chunk]
        out[i : i + chunk] = np.cos(np.pi * np.outer(uu, xi)) @ wa
    return (out / norm).reshape(s.shape)


def ils_fwhm_per_cm(L_cm: float, name: str = "happ-genzel") -> float:
    """Full width at half maximum of the continuous ILS, cm^-1: ``fwhm_factor / (2 L)``.

    Parameters
    ----------
    L_cm : float
        Maximum OPD, cm.
    name : str, optional
        Apodization function.

    Returns
    -------
    float

    References
    ----------
    .. [1] R. H. Norton and R. Beer, J. Opt. Soc. Am. 66 (1976) 259.
    """
    apo = get_apodization(name)
    return apo.fwhm_factor / (2.0 * _check_length(L_cm, "L_cm"))


def mertz_ramp(x_cm: np.ndarray, short_side_cm: float, *, centre_cm: float = 0.0) -> np.ndarray:
    """Weights for a one-sided interferogram: the Mertz ramp.

    The weight rises linearly from 0 at ``centre - l`` to 1 at ``centre + l`` across the
    double-sided part (``l = short_side_cm``), is 1 beyond ``centre + l`` and 0 before
    ``centre - l``. Then ``w(d) + w(-d) = 1`` for every offset ``d`` from the centre, so the
    double-sided part is not counted twice and the even part of ``w`` is 1/2 everywhere. The
    long side is taken to be at positive ``x - centre``; mirror the data otherwise.

    Parameters
    ----------
    x_cm : array_like
        OPD of the samples, cm.
    short_side_cm : float
        Extent ``l`` of the short side, cm (``>= 0``; 0 gives a step with 1/2 at the centre).
    centre_cm : float, optional
        OPD of zero path difference, cm.

    Returns
    -------
    numpy.ndarray
        Weights in ``[0, 1]``.

    References
    ----------
    .. [1] L. Mertz, 'Auxiliary computation for Fourier spectrometry', Infrared Phys. 7 (1967)
       17-23.
    .. [2] L. Mertz, Transformations in Optics, Wiley (1965).
    """
    l = float(short_side_cm)  # noqa: E741 - the usual symbol
    if not np.isfinite(l) or l < 0.0:
        raise OptionError(f"short_side_cm must be a finite length >= 0 cm, got {short_side_cm!r}")
    d = np.asarray(x_cm, dtype=float) - float(centre_cm)
    # d / l only where |d| <= l, so a tiny l cannot overflow; l = 0 gives 1/2 at d = 0.
    q = np.divide(d, l, out=np.zeros_like(d), where=np.abs(d) <= l) if l > 0 else np.zeros_like(d)
    return np.where(d > l, 1.0, np.where(d < -l, 0.0, 0.5 * (1.0 + q)))
