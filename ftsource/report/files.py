"""The spectrum as standard files: a band-limited ECSV table and a FITS image with a spectral WCS.

Both hold the spectrum where the source is, inside the band the detector and the sampling
support, at the instrument's own sampling (every ``zero_fill``-th point of the zero-filled
grid, so no interpolated points are stored) unless the full spectrum is asked for.

The FITS file is a 1-D image linear in vacuum wavenumber: ``CTYPE1 = 'WAVN'``,
``CUNIT1 = 'cm-1'`` (Greisen et al. 2006, table 1). The spectrum's wavenumber axis is linear
in vacuum wavenumber only to within the dispersion of air, so the density is interpolated
(linearly, from the zero-filled grid, which over-samples it ``zero_fill`` times) onto an exactly
linear axis over the same band.

References
----------
.. [1] E. W. Greisen, M. R. Calabretta, F. G. Valdes and S. L. Allen, "Representations of
   spectral coordinates in FITS", Astron. Astrophys. 446, 747-771 (2006).
.. [2] W. D. Pence et al., "Definition of the Flexible Image Transport System (FITS), version
   3.0", Astron. Astrophys. 524, A42 (2010).
"""

from __future__ import annotations

import io
from dataclasses import dataclass

import numpy as np

from ftsource.analysis import SEARCH_BAND_NM

__all__ = ["SpectrumBand", "spectrum_band", "spectrum_fits", "spectrum_ecsv"]

#: Detector band (vacuum nm): the band the analysis searches for lines.
DETECTOR_BAND_NM = SEARCH_BAND_NM
#: Margin kept around the source's extent, in resolution elements (common practice: enough
#: to see the line shape's sidelobes and the baseline next to the line).
MARGIN_RESOLUTIONS = 40.0
#: The source is where the density exceeds this many times its noise (about 5 standard
#: uncertainties: a chance excursion of noise this large is rare over 10⁶ points) ...
SOURCE_THRESHOLD_NOISE = 5.0
#: ... and this fraction of the band's peak (a magnitude spectrum's noise has a positive
#: mean, which the noise estimate does not remove; 1e-3 keeps an LED's wings).
SOURCE_THRESHOLD_PEAK = 1e-3


@dataclass(frozen=True)
class SpectrumBand:
    """Which points of a spectrum are stored.

    ``index`` are indices into the spectrum's arrays (increasing), ``step`` the stride
    (``zero_fill`` for the instrument's sampling, 1 for the full spectrum) and
    ``limits_per_cm`` the lowest and highest stored wavenumber.
    """

    index: np.ndarray
    step: int
    limits_per_cm: tuple[float, float]
    full: bool


def spectrum_band(
    sigma_per_cm: np.ndarray,
    density: np.ndarray,
    noise: np.ndarray,
    resolution_per_cm: float,
    *,
    line_centres_per_cm=(),
    min_wavelength_nm: float | None = None,
    zero_fill: int = 1,
    full: bool = False,
) -> SpectrumBand:
    """The stored points: the source's extent (density above :data:`SOURCE_THRESHOLD_NOISE`
    times the noise and :data:`SOURCE_THRESHOLD_PEAK` times the peak, and every listed line)
    widened by :data:`MARGIN_RESOLUTIONS` resolution elements, inside the detector band and the
    alias-free limit, every ``zero_fill``-th point.

    ``full=True`` keeps every point of the detector band (the zero-filled grid).
    """
    sig = np.asarray(sigma_per_cm, float)
    lo = 1e7 / DETECTOR_BAND_NM[1]
    hi = 1e7 / max(DETECTOR_BAND_NM[0], min_wavelength_nm or 0.0)
    inside = (sig >= lo) & (sig <= hi)
    step = max(1, int(zero_fill))
    if full:
        idx = np.flatnonzero(inside)
        step = 1
    else:
        d = np.asarray(density, float)
        n = np.asarray(noise, float)
        floor = np.where(np.isfinite(n) & (n > 0), n, np.inf)
        peak = float(np.nanmax(np.where(inside, d, -np.inf))) if inside.any() else 0.0
        src = inside & np.isfinite(d) & (d > SOURCE_THRESHOLD_NOISE * floor) & (
            d > SOURCE_THRESHOLD_PEAK * peak)
        margin = MARGIN_RESOLUTIONS * float(resolution_per_cm)
        keep = np.zeros(sig.size, bool)
        centres = [float(c) for c in line_centres_per_cm if np.isfinite(c)]
        for c in centres:
            keep |= np.abs(sig - c) <= margin
        if src.any():
            # widen every run of source points by the margin (runs, not points: fast)
            edges = np.flatnonzero(np.diff(np.concatenate([[0], src.astype(np.int8), [0]])))
            for a, b in zip(edges[::2], edges[1::2], strict=True):
                keep |= (sig >= sig[a] - margin) & (sig <= sig[b - 1] + margin)
        keep &= inside
        if not keep.any():
            keep = inside
        idx = np.flatnonzero(keep)
        # the instrument's own sampling: every step-th point of the zero-filled grid
        idx = idx[idx % step == 0]
    if idx.size == 0:
        return SpectrumBand(idx, step, (float("nan"), float("nan")), full)
    return SpectrumBand(idx, step, (float(sig[idx[0]]), float(sig[idx[-1]])), full)


def _fits_card_text(text: str) -> str:
    """FITS header values are printable ASCII (Pence et al. 2010 §4.2.1)."""
    return "".join(ch if " " <= ch <= "~" else "?" for ch in str(text))[:68]


def spectrum_fits(
    sigma_per_cm: np.ndarray,
    density: np.ndarray,
    noise: np.ndarray,
    band: SpectrumBand,
    *,
    header: dict | None = None,
) -> bytes:
    """The spectrum as FITS bytes: a primary 1-D image of the density per unit wavenumber on a
    linear vacuum-wavenumber axis (``WAVN``, ``cm-1``) over ``band``, and a ``NOISE`` image
    extension with the same axis.

    ``header`` adds keywords (8 characters at most; text values are made printable ASCII).
    """
    from astropy.io import fits

    sig = np.asarray(sigma_per_cm, float)
    if band.index.size < 2:
        grid = sig[band.index] if band.index.size else np.array([sig[0]])
        step = float(sig[1] - sig[0]) if sig.size > 1 else 1.0
    else:
        a, b = band.limits_per_cm
        native = float(np.median(np.diff(sig))) * band.step
        n = int(round((b - a) / native)) + 1
        step = (b - a) / (n - 1)
        grid = a + step * np.arange(n)
    order = np.argsort(sig)
    dens = np.interp(grid, sig[order], np.asarray(density, float)[order])
    nse = np.interp(grid, sig[order], np.asarray(noise, float)[order])
    primary = fits.PrimaryHDU(dens.astype(np.float64))
    wcs_cards = [
        ("WCSAXES", 1, "one spectral axis"),
        ("CTYPE1", "WAVN", "vacuum wavenumber, linear (Greisen et al. 2006)"),
        ("CUNIT1", "cm-1", "wavenumber unit"),
        ("CRPIX1", 1.0, "reference pixel"),
        ("CRVAL1", float(grid[0]), "vacuum wavenumber at the reference pixel"),
        ("CDELT1", float(step), "wavenumber step"),
        ("SPECSYS", "TOPOCENT", "laboratory source at rest with the instrument"),
    ]
    for hdu in (primary,):
        for k, v, c in wcs_cards:
            hdu.header[k] = (v, c)
    primary.header["BUNIT"] = ("", "arbitrary units x cm (density per cm-1)")
    primary.header["FULLSPEC"] = (bool(band.full), "T: full zero-filled band")
    for k, v in (header or {}).items():
        if isinstance(v, str):
            v = _fits_card_text(v)
        if v is None:
            continue
        primary.header[k[:8].upper()] = v
    primary.header["COMMENT"] = (
        "ftsource spectrum: spectral density per unit vacuum wavenumber, "
        "detector-weighted; the NOISE extension holds its standard uncertainty."
    )
    noise_hdu = fits.ImageHDU(nse.astype(np.float64), name="NOISE")
    for k, v, c in wcs_cards:
        noise_hdu.header[k] = (v, c)
    buf = io.BytesIO()
    fits.HDUList([primary, noise_hdu]).writeto(buf, output_verify="exception")
    return buf.getvalue()


def spectrum_ecsv(
    sigma_per_cm: np.ndarray,
    density: np.ndarray,
    noise: np.ndarray,
    band: SpectrumBand,
    *,
    meta: dict | None = None,
) -> bytes:
    """The spectrum's stored points as ECSV bytes: vacuum wavenumber and wavelength, density per
    unit wavenumber and per unit wavelength (``S_λ = S_σ·σ²/10⁷``), each with its noise."""
    from astropy.table import Table

    i = band.index
    sig = np.asarray(sigma_per_cm, float)[i]
    d = np.asarray(density, float)[i]
    n = np.asarray(noise, float)[i]
    t = Table()
    t["wavenumber"] = sig
    t["wavenumber"].unit = "1/cm"
    t["wavelength"] = 1e7 / sig
    t["wavelength"].unit = "nm"
    t["density_per_wavenumber"] = d
    t["noise_per_wavenumber"] = n
    t["density_per_wavelength"] = d * sig**2 / 1e7
    t["noise_per_wavelength"] = n * sig**2 / 1e7
    t.meta.update(meta or {})
    t.meta["sampling"] = (
        "every point of the zero-filled grid over the detector band (--full-spectrum)"
        if band.full else
        f"the instrument's own sampling (every {band.step}th point of the zero-filled grid) "
        "where the source is, with a margin of "
        f"{MARGIN_RESOLUTIONS:g} resolution elements"
    )
    buf = io.StringIO()
    with np.printoptions(legacy=False):
        t.write(buf, format="ascii.ecsv")
    return buf.getvalue().encode()
