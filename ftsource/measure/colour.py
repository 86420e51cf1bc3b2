"""Colour of a measured source: CIE 1931 chromaticity and dominant wavelength.

Both quantities use the CIE 1931 2° standard colorimetric observer, whose colour-matching
functions ship with ftsource as ``reference_spectra/cie1931_2deg_cmf.csv`` (360 nm to 830 nm in
1 nm steps). Between table rows the functions are interpolated linearly; outside the table they
are taken as zero.

The spectrum must be a density **per unit wavelength** (power per nm). ftsource computes
spectra on a wavenumber axis; a density per unit wavenumber :math:`S_\\sigma` becomes one
per unit wavelength through :math:`S_\\lambda = S_\\sigma / \\lambda^2` (with
:math:`\\sigma = 1/\\lambda`), which shifts a broad band noticeably. Passing
:math:`S_\\sigma` unconverted gives a wrong colour.

References
----------
.. [1] CIE 015:2018, "Colorimetry", 4th edition, Commission Internationale de l'Éclairage,
   Vienna (2018). doi:10.25039/TR.015.2018
.. [2] ISO/CIE 11664-1:2019, "Colorimetry - Part 1: CIE standard colorimetric observers".
.. [3] CIE e-ILV (International Lighting Vocabulary), term 17-345, "dominant wavelength",
   https://cie.co.at/eilvterm/17-345
"""

from __future__ import annotations

import functools
import math

import numpy as np

from ftsource._checks import finite_pair
from ftsource._data import data_path
from ftsource.errors import FtsourceError, OptionError

__all__ = [
    "CMF_FILE",
    "EQUAL_ENERGY_WHITE",
    "VISIBLE_RANGE_NM",
    "MIN_VISIBLE_FRACTION",
    "cie1931_cmf",
    "chromaticity_xy",
    "dominant_wavelength_nm",
]

CMF_FILE = "cie1931_2deg_cmf.csv"
"""Name of the colour-matching-function table inside ``reference_spectra``."""

EQUAL_ENERGY_WHITE = (1.0 / 3.0, 1.0 / 3.0)
"""Chromaticity of the equal-energy stimulus E, the achromatic point used for LEDs."""

VISIBLE_RANGE_NM = (380.0, 780.0)
"""Wavelength range, nm, counted as visible by the power-fraction test."""

MIN_VISIBLE_FRACTION = 0.01
"""Below this fraction of its power in :data:`VISIBLE_RANGE_NM` a source gets no colour."""

_CMF_HEADER = ["wavelength_nm", "x_bar", "y_bar", "z_bar"]


@functools.lru_cache(maxsize=1)
def _load_cmf() -> tuple[np.ndarray, np.ndarray]:
    """Read the CMF table once; return read-only (wavelength_nm, [x_bar, y_bar, z_bar])."""
    path = data_path(CMF_FILE)
    rows = [
        line.strip()
        for line in path.read_text(encoding="utf-8").splitlines()
        if line.strip() and not line.lstrip().startswith("#")
    ]
    if not rows or [c.strip() for c in rows[0].split(",")] != _CMF_HEADER:
        raise FtsourceError(
            f"{path}: first data line must be the header {','.join(_CMF_HEADER)}; "
            "the shipped table is damaged, reinstall ftsource"
        )
    try:
        table = np.array([[float(v) for v in row.split(",")] for row in rows[1:]], dtype=float)
    except ValueError as exc:
        raise FtsourceError(f"{path}: unreadable number ({exc}); reinstall ftsource") from None
    if table.ndim != 2 or table.shape[1] != 4 or table.shape[0] < 2:
        raise FtsourceError(f"{path}: expected 4 columns and many rows, got {table.shape}")
    wavelength = table[:, 0].copy()
    cmf = np.ascontiguousarray(table[:, 1:].T)
    if not (np.all(np.diff(wavelength) > 0) and np.all(np.isfinite(cmf)) and np.all(cmf >= 0)):
        raise FtsourceError(
            f"{path}: wavelengths must increase and the functions be finite and non-negative"
        )
    wavelength.setflags(write=False)
    cmf.setflags(write=False)
    return wavelength, cmf


def cie1931_cmf() -> tuple[np.ndarray, np.ndarray]:
    """Return the CIE 1931 2° colour-matching functions shipped with ftsource.

    Returns
    -------
    wavelength_nm : numpy.ndarray
        Table wavelengths, 360 nm to 830 nm in 1 nm steps (read-only).
    cmf : numpy.ndarray
        Shape ``(3, n)``: rows x̄, ȳ, z̄ (dimensionless, ȳ = V(λ); read-only).

    Raises
    ------
    FtsourceError
        If the table file is missing or damaged.

    References
    ----------
    .. [1] CIE 015:2018, "Colorimetry", 4th edition, CIE, Vienna (2018).
    .. [2] ISO/CIE 11664-1:2019, "Colorimetry - Part 1: CIE standard colorimetric observers".
    """
    return _load_cmf()


def _as_nm(values, name: str) -> np.ndarray:
    """Plain float array in nm from an array or an astropy length Quantity."""
    if hasattr(values, "unit") and hasattr(values, "to_value"):
        import astropy.units as u

        try:
            values = values.to_value(u.nm)
        except u.UnitConversionError:
            raise OptionError(
                f"{name} must be a length (wavelength), got unit {values.unit}"
            ) from None
    return np.asarray(values, dtype=float)


def _spectrum_arrays(wavelength_nm, spectral_density_per_nm) -> tuple[np.ndarray, np.ndarray]:
    """Validate a sampled spectrum; return new ascending (wavelength_nm, density) arrays."""
    lam = _as_nm(wavelength_nm, "wavelength_nm")
    dens = spectral_density_per_nm
    if hasattr(dens, "unit") and hasattr(dens, "value"):
        dens = dens.value  # only the shape matters: a constant unit factor cancels in x, y
    lam, dens = finite_pair(lam, dens, "wavelength_nm", "spectral_density_per_nm",
                            error=OptionError)
    if lam.size < 2:
        raise OptionError(f"a spectrum needs at least 2 samples, got {lam.size}")
    if np.any(lam <= 0):
        raise OptionError(f"wavelength_nm must be positive, got minimum {lam.min()!r} nm")
    step = np.diff(lam)
    if np.all(step < 0):
        lam, dens = lam[::-1], dens[::-1]
    elif not np.all(step > 0):
        raise OptionError(
            "wavelength_nm must be strictly increasing or strictly decreasing "
            "(no repeats, no unsorted samples)"
        )
    return lam.copy(), dens.copy()


def _trapezoid(y: np.ndarray, x: np.ndarray) -> float:
    """Trapezoid rule (numpy >= 1.24 has ``trapz``, >= 2.0 ``trapezoid``; this needs neither)."""
    return float(0.5 * np.sum((y[1:] + y[:-1]) * np.diff(x)))


def _integral_between(lam: np.ndarray, dens: np.ndarray, lo: float, hi: float) -> float:
    """Trapezoid integral of the piecewise-linear spectrum over [lo, hi] ∩ its range."""
    a, b = max(lo, lam[0]), min(hi, lam[-1])
    if a >= b:
        return 0.0
    inside = lam[(lam > a) & (lam < b)]
    grid = np.concatenate(([a], inside, [b]))
    return float(_trapezoid(np.interp(grid, lam, dens), grid))


def _on_table_scale(lam: np.ndarray, dens: np.ndarray, scale: str):
    """(wavelength, density) on the standard-air scale of the CIE tables."""
    if scale == "standard air":
        return lam, dens
    if scale != "vacuum":
        raise OptionError(f"scale must be 'standard air' or 'vacuum', got {scale!r}")
    from ftsource.physics.air import vacuum_to_standard_air_nm

    inside = (lam >= 200.0) & (lam <= 2000.0)  # the standard-air formula's range
    lam, dens = lam[inside], dens[inside]
    if lam.size < 2:
        raise OptionError("no sample of the spectrum lies within 200-2000 nm (vacuum)")
    air = np.asarray(vacuum_to_standard_air_nm(lam), dtype=float)
    # S per unit air wavelength = S per unit vacuum wavelength × dλ_vac/dλ_air
    slope = np.gradient(air, lam) if lam.size >= 3 else np.full(lam.size, (air[1] - air[0])
                                                                 / (lam[1] - lam[0]))
    return air, dens / slope


def chromaticity_xy(
    wavelength_nm,
    spectral_density_per_nm,
    *,
    min_visible_fraction: float = MIN_VISIBLE_FRACTION,
    scale: str = "standard air",
) -> tuple[float, float] | None:
    """CIE 1931 chromaticity (x, y) of a light source from its spectrum.

    Parameters
    ----------
    wavelength_nm : array_like or astropy Quantity
        Sample wavelengths, nm (a Quantity of length is converted), strictly increasing or
        strictly decreasing. Use the wavelength scale of the CIE table (see Notes).
    spectral_density_per_nm : array_like
        Spectral density **per unit wavelength** at those samples (e.g. W/nm or counts/nm; any
        constant factor cancels). A density per unit wavenumber must be converted first,
        :math:`S_\\lambda = S_\\sigma/\\lambda^2`. Small negative values from noise are kept as
        they are.
    min_visible_fraction : float, keyword-only
        If less than this fraction of the source's power (its integral over the samples) lies
        in 380-780 nm, the source is treated as outside the visible and ``None`` is returned.
        Default 0.01 (1 %).
    scale : {"standard air", "vacuum"}, keyword-only
        The wavelength scale of ``wavelength_nm``. ``"vacuum"`` (what ftsource measures)
        converts the samples to standard air with
        :func:`ftsource.physics.air.vacuum_to_standard_air_nm` before anything else, and the
        density to per unit standard-air wavelength (by the local slope of the conversion).
        Default ``"standard air"``, the scale of the CIE tables (Notes).

    Returns
    -------
    tuple of float or None
        ``(x, y)``, or ``None`` when the source is outside the visible (see above) or its
        tristimulus sum X + Y + Z is not positive.

    Raises
    ------
    OptionError
        If the arrays are not 1-D, of equal length (≥ 2), finite and monotonic in wavelength,
        or ``min_visible_fraction`` is not in [0, 1].

    Notes
    -----
    The tristimulus values are
    :math:`X = \\int S_\\lambda(\\lambda)\\,\\bar x(\\lambda)\\,d\\lambda` and likewise
    Y, Z [1]_; then :math:`x = X/(X+Y+Z)`, :math:`y = Y/(X+Y+Z)`. The spectrum and
    the colour-matching functions are both taken as piecewise linear between their own samples,
    brought onto the union of the two grids and integrated with the trapezoid rule over the
    part of 360-830 nm the spectrum covers. A spectrum that is a narrow triangle around one
    table wavelength therefore reproduces the table's chromaticity of that wavelength, and a
    coarse spectrum does not miss the structure of the functions.

    The CIE tables are indexed by wavelength in standard air, as is usual in photometry and
    colorimetry (from memory). A spectrum on vacuum wavelengths must therefore be converted
    (``scale="vacuum"``): left on the vacuum scale, every feature sits 0.13-0.17 nm too long
    against the table in the visible, which moves a dominant wavelength by as much.

    References
    ----------
    .. [1] CIE 015:2018, "Colorimetry", 4th edition, CIE, Vienna (2018), section on the
       calculation of tristimulus values.
    .. [2] ISO/CIE 11664-1:2019, "Colorimetry - Part 1: CIE standard colorimetric observers".
    """
    frac = float(min_visible_fraction)
    if not (0.0 <= frac <= 1.0):
        raise OptionError(f"min_visible_fraction must be in [0, 1], got {min_visible_fraction!r}")
    lam, dens = _spectrum_arrays(wavelength_nm, spectral_density_per_nm)
    lam, dens = _on_table_scale(lam, dens, scale)

    total = float(_trapezoid(dens, lam))
    if total <= 0.0:
        return None
    visible = _integral_between(lam, dens, *VISIBLE_RANGE_NM)
    if visible < frac * total:
        return None

    w_cmf, cmf = _load_cmf()
    lo, hi = max(lam[0], w_cmf[0]), min(lam[-1], w_cmf[-1])
    if lo >= hi:
        return None
    nodes = np.concatenate((lam, w_cmf, [lo, hi]))
    grid = np.unique(nodes[(nodes >= lo) & (nodes <= hi)])
    s = np.interp(grid, lam, dens)
    xyz = np.array([_trapezoid(s * np.interp(grid, w_cmf, c), grid) for c in cmf])
    total_xyz = float(xyz.sum())
    if not total_xyz > 0.0:
        return None
    return float(xyz[0] / total_xyz), float(xyz[1] / total_xyz)


def _point(value, name: str) -> tuple[float, float]:
    """Validate a chromaticity pair."""
    try:
        x, y = (float(v) for v in value)
    except (TypeError, ValueError):
        raise OptionError(f"{name} must be a pair of numbers (x, y), got {value!r}") from None
    if not (math.isfinite(x) and math.isfinite(y)):
        raise OptionError(f"{name} must be finite, got {value!r}")
    return x, y


def _inside_locus(px: float, py: float, lx: np.ndarray, ly: np.ndarray) -> bool:
    """Even-odd test: is (px, py) inside the polygon closed by the purple line?"""
    x0, y0 = lx, ly
    x1, y1 = np.roll(lx, -1), np.roll(ly, -1)
    straddles = (y0 > py) != (y1 > py)
    with np.errstate(divide="ignore", invalid="ignore"):
        x_cross = x0 + (py - y0) * (x1 - x0) / (y1 - y0)
    return bool(np.count_nonzero(straddles & (px < x_cross)) % 2)


def _ray_hits(
    white: tuple[float, float], direction: tuple[float, float], w_cmf: np.ndarray, cmf: np.ndarray
) -> list[float]:
    """Wavelengths where the ray from ``white`` along ``direction`` meets the spectrum locus.

    The locus between table rows is the chromaticity of the linearly interpolated functions,
    c(t) = (1 - t) c_i + t c_{i+1}. The condition "c(t) lies on the line" is linear in t after
    multiplying by the (positive) sum X + Y + Z, so each crossing is found exactly.
    """
    xw, yw = white
    dx, dy = direction
    big_x, big_y = cmf[0], cmf[1]
    total = cmf.sum(axis=0)
    f = (big_x - xw * total) * dy - (big_y - yw * total) * dx
    f0, f1 = f[:-1], f[1:]
    idx = np.nonzero((f0 == 0) | (np.sign(f0) != np.sign(f1)))[0]
    hits = []
    for i in idx:
        denom = f0[i] - f1[i]
        t = 0.0 if denom == 0 else f0[i] / denom
        c = (1 - t) * cmf[:, i] + t * cmf[:, i + 1]
        s = c.sum()
        px, py = c[0] / s, c[1] / s
        if (px - xw) * dx + (py - yw) * dy > 0:
            hits.append(float(w_cmf[i] + t * (w_cmf[i + 1] - w_cmf[i])))
    return hits


_LOCUS_MIDDLE_NM = 555.0


def dominant_wavelength_nm(
    xy: tuple[float, float] | None,
    white: tuple[float, float] = EQUAL_ENERGY_WHITE,
) -> float | None:
    """Dominant wavelength of a chromaticity, or the complementary wavelength for purples.

    Parameters
    ----------
    xy : pair of float or None
        CIE 1931 chromaticity of the stimulus, e.g. from :func:`chromaticity_xy`. ``None``
        (a source outside the visible) gives ``None``.
    white : pair of float, optional
        Chromaticity of the achromatic stimulus. Default: the equal-energy point E,
        (1/3, 1/3), the usual choice for LEDs. Must lie inside the spectrum locus.

    Returns
    -------
    float or None
        The dominant wavelength in nm (positive), or, for a stimulus on the purple side of
        ``white``, minus its complementary wavelength (e.g. ``-509.0`` means "complementary
        wavelength 509 nm"). ``None`` if ``xy`` is ``None`` or coincides with ``white``
        (within 1e-9), where no direction, and so no wavelength, is defined.

    Raises
    ------
    OptionError
        If ``xy`` or ``white`` is not a pair of finite numbers, or ``white`` is not inside the
        spectrum locus.

    Notes
    -----
    The dominant wavelength is the wavelength of the monochromatic stimulus which, mixed
    additively with the achromatic stimulus in suitable proportion, matches the stimulus's
    chromaticity [2]_. Geometrically: draw the half-line from ``white`` through ``xy`` and
    find where it meets the spectrum locus [1]_. When it meets the purple line instead (the
    straight line joining the ends of the locus), the stimulus has no dominant wavelength;
    the half-line is then extended backwards through ``white`` and the wavelength it meets is
    the complementary wavelength, returned here with a negative sign.

    The locus is not sampled at the table's 1 nm steps: between rows the colour-matching
    functions are interpolated linearly and the crossing is solved in closed form inside the
    row interval, so the result is continuous in ``xy`` and not rounded to whole nanometres.

    From about 699 nm to 830 nm the tabulated chromaticities are the same point to within
    the table's rounding (z̄ = 0 and x̄/ȳ constant), so the locus folds over itself there and a
    half-line can meet it many times. The crossing closest to the middle of the spectrum
    (555 nm) is reported, so every deep red gives about 699 nm; the dominant wavelength of
    such stimuli is not defined by chromaticity, whatever rule is used. (With the default
    white E, every wavelength from 360 nm to 699 nm is recovered from its own chromaticity.)

    References
    ----------
    .. [1] CIE 015:2018, "Colorimetry", 4th edition, CIE, Vienna (2018), section on dominant
       and complementary wavelength.
    .. [2] CIE e-ILV, term 17-345, "dominant wavelength", https://cie.co.at/eilvterm/17-345
    """
    if xy is None:
        return None
    px, py = _point(xy, "xy")
    xw, yw = _point(white, "white")
    w_cmf, cmf = _load_cmf()
    total = cmf.sum(axis=0)
    lx, ly = cmf[0] / total, cmf[1] / total
    if not _inside_locus(xw, yw, lx, ly):
        raise OptionError(
            f"white must be a chromaticity inside the spectrum locus, got ({xw!r}, {yw!r})"
        )
    dx, dy = px - xw, py - yw
    if math.hypot(dx, dy) < 1e-9:
        return None

    def nearest_middle(hits: list[float]) -> float:
        return min(hits, key=lambda w: abs(w - _LOCUS_MIDDLE_NM))

    forward = _ray_hits((xw, yw), (dx, dy), w_cmf, cmf)
    if forward:
        return nearest_middle(forward)
    backward = _ray_hits((xw, yw), (-dx, -dy), w_cmf, cmf)
    if backward:
        return -nearest_middle(backward)
    return None  # pragma: no cover - a white point inside the locus always has a crossing
