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

import numpy as np

from ftsource.measure.plotdata import MARGIN_RESOLUTIONS, SpectrumBand, spectrum_band

__all__ = ["SpectrumBand", "spectrum_band", "spectrum_fits", "spectrum_ecsv"]  # band re-exported

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
