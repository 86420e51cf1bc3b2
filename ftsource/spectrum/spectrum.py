"""The measured spectrum: sweeps transformed, phase-corrected or not, and co-added.

Every sweep is transformed on one common wavenumber grid (same OPD step, same transform
length), so co-adding is a plain mean. A sweep that holds the centre burst (ZPD) is
phase-corrected (:mod:`ftsource.spectrum.phase`) and gives a real spectrum whose line shape is known
exactly; a sweep without ZPD — typical for a narrow laser line scanned away from equal arms —
gives the magnitude of the transform of the apodized sweep about its own centre, so its
resolution is set by half the transformed span, never more.

The spectrum carries its :class:`LineShape` (what a monochromatic line looks like in it, for
the line fits) and a noise estimate per point.

Kernel units: wavenumber in cm⁻¹, OPD in cm.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from ftsource.errors import AnalysisError, OptionError
from ftsource.interferogram.resample import Interferogram
from ftsource.spectrum.apodization import get_apodization

__all__ = ["LineShape", "Spectrum", "SweepSpectrum", "sweep_spectrum", "coadd", "reconvolve"]

_LN2 = np.log(2.0)


def _gauss_legendre_01(n: int, cache: dict):
    """Gauss–Legendre nodes and weights on [0, 1], memoised in ``cache`` (n rounded up to a
    multiple of 32 so a handful of rules serve every call)."""
    n = 32 * ((n + 31) // 32)
    rule = cache.get(n)
    if rule is None:
        from scipy.special import roots_legendre

        t, w = roots_legendre(n)
        rule = cache[n] = (0.5 * (t + 1.0), 0.5 * w)
    return rule


@dataclass(frozen=True)
class LineShape:
    """What a line looks like in the co-added spectrum.

    A line of Gaussian FWHM ``g`` and Lorentzian FWHM ``l`` (Voigt) seen through maximum OPD
    ``L`` and apodization ``A`` has the spectral shape

    ``K(δ) = 2 ∫₀ᴸ A(x/L) γ(x) cos(2πδx) dx``,  γ(x) = exp(−(πgx)²/(4 ln 2)) · exp(−πl|x|),

    of unit area (Fourier inversion at x = 0). The co-added spectrum mixes sweeps of different
    ``L``, so ``K`` is the weighted mean over them. ``kind="magnitude"`` takes ``|K|`` (a
    magnitude spectrum folds negative sidelobes up).
    """

    apodization: str
    L_cm: tuple[float, ...]
    weights: tuple[float, ...]
    kind: str = "real"
    _rules: dict = field(default_factory=dict, compare=False, repr=False)

    def kernel(
        self, delta_per_cm: np.ndarray, gauss_fwhm: float = 0.0, lorentz_fwhm: float = 0.0
    ) -> np.ndarray:
        """The line shape at offsets ``delta_per_cm`` from the centre (area 1 per cm⁻¹)."""
        return self._transform(delta_per_cm, gauss_fwhm**2, lorentz_fwhm, power=1)

    def kernel_signed(self, delta_per_cm: np.ndarray, q_gauss: float, l_lorentz: float):
        """:meth:`kernel` continued analytically to negative widths, for smooth fits.

        ``q_gauss`` is the *square* of the Gaussian FWHM and may be negative (an envelope that
        grows with OPD), ``l_lorentz`` the Lorentzian FWHM, also signed. Near zero width the
        shape then depends smoothly (linearly) on both parameters, so a least-squares fit of an
        unresolved line neither stalls at zero nor loses its uncertainty.
        """
        return self._transform(delta_per_cm, q_gauss, l_lorentz, power=1)

    def noise_correlation(self, delta_per_cm: np.ndarray) -> np.ndarray:
        """Correlation between spectral points ``delta`` apart for white interferogram noise:
        the transform of A², normalised to 1 at zero offset (Wiener–Khinchin)."""
        k = self._transform(delta_per_cm, 0.0, 0.0, power=2)
        k0 = self._transform(np.zeros(1), 0.0, 0.0, power=2)[0]
        return k / k0

    def _transform(self, delta, q_gauss, lorentz_fwhm, power):
        apo = get_apodization(self.apodization)
        d = np.abs(np.asarray(delta, dtype=float))
        out = np.zeros(d.shape)
        # sweeps of the same span share a kernel: add their weights first
        groups: dict[float, float] = {}
        for L, w in zip(self.L_cm, self.weights, strict=False):
            key = float(np.round(L, 9))
            groups[key] = groups.get(key, 0.0) + w
        for L, w in groups.items():
            # a decaying envelope ends the integrand long before L for a broad line
            x_end = L
            if q_gauss > 0:
                x_end = min(x_end, 3.0 / np.sqrt(q_gauss))  # exp(-(3π)²/4ln2) < 1e-13
            if lorentz_fwhm > 0:
                x_end = min(x_end, 10.0 / lorentz_fwhm)  # exp(-10π) < 1e-13
            u = 2 * x_end * (float(d.max()) if d.size else 0.0)
            xi, wq = _gauss_legendre_01(64 + int(2 * u), self._rules)
            x = xi * x_end
            a = apo(x / L)
            wq = wq * (x_end / L)
            env = np.ones_like(x)
            if q_gauss:
                env = env * np.exp(-(np.pi**2) * q_gauss * x**2 / (4 * _LN2))
            if lorentz_fwhm:
                env = env * np.exp(-np.pi * lorentz_fwhm * x)
            f = (a**power) * env * wq * (2 * L)
            k = (np.cos(2 * np.pi * np.outer(d.ravel(), x)) @ f).reshape(d.shape)
            # sweeps are co-added after taking the modulus, so fold each one's sidelobes
            out += w * (np.abs(k) if self.kind == "magnitude" and power == 1 else k)
        return out

    def sidelobe_envelope(self, delta_per_cm: np.ndarray) -> np.ndarray:
        """Upper envelope of |ILS(δ)|/ILS(0) (a monochromatic line's sidelobes).

        Computed on a fine grid of offsets out to 100 instrument widths, as the running maximum
        of |K| from far to near, and interpolated; 1 inside the main lobe; beyond, a 1/δ decay
        from the largest lobe of the last two widths.
        """
        d = np.abs(np.asarray(delta_per_cm, dtype=float))
        # the table depends on the shape only: computed once per LineShape (find_lines asks
        # for it after every line it finds)
        table = self._rules.get("sidelobe_envelope")
        if table is None:
            fw = self.fwhm_per_cm
            # numerically out to 100 instrument widths, beyond that a 1/δ decay (an upper
            # bound: the sidelobes of any apodization that is not smooth at the ends fall as
            # 1/δ or faster)
            top = 100 * fw
            # a uniform step of fw/12 (sidelobes repeat every 0.4–0.8 fw; a log grid of 400
            # points missed lobe tops by up to a quarter of their height), each local maximum
            # raised to the top of the parabola through it and its neighbours and spread to
            # them (the top lies within half a step)
            grid = np.linspace(0.0, top, 1201)
            k = np.abs(self.kernel(grid)) / self.kernel(np.zeros(1))[0]
            a, b, c = k[:-2], k[1:-1], k[2:]
            curv = 2 * b - a - c
            lobe = (b >= a) & (b >= c) & (curv > 0)
            tops = np.where(lobe, b + (c - a) ** 2 / (8 * np.where(lobe, curv, 1.0)), b)
            k = np.concatenate([k[:1], tops, k[-1:]])
            k[1:-1] = np.maximum(k[1:-1], np.maximum(k[:-2], k[2:]))
            env = np.maximum.accumulate(k[::-1])[::-1]
            env[grid <= fw] = 1.0
            # start the decay from the top of a lobe, not from the kernel at the last grid
            # point (which can sit on a null: u = 2L·top = 200 exactly for Hann)
            far0 = env[np.searchsorted(grid, top - 2 * fw)]
            table = self._rules["sidelobe_envelope"] = (top, grid, env, far0)
        top, grid, env, far0 = table
        far = far0 * top / np.maximum(d, top)
        return np.where(d <= top, np.interp(d, grid, env), far)

    @property
    def fwhm_per_cm(self) -> float:
        """FWHM of the instrument line shape itself (a monochromatic line), cm⁻¹."""
        return _kernel_fwhm(self, 0.0, 0.0)

    @property
    def max_opd_cm(self) -> float:
        """Weighted mean of the sweeps' maximum OPD (the L of ``fwhm_factor/(2L)``)."""
        return float(np.dot(self.L_cm, self.weights))


def _kernel_fwhm(shape: LineShape, g: float, lor: float) -> float:
    """FWHM of ``shape.kernel`` for the given widths (numerical, by bisection)."""
    from scipy.optimize import brentq

    L = min(shape.L_cm)
    guess = 2.0 / L + 1.5 * (g + lor)
    k0 = shape.kernel(np.zeros(1), g, lor)[0]
    f = lambda d: shape.kernel(np.array([d]), g, lor)[0] - 0.5 * k0  # noqa: E731
    hi = guess
    while f(hi) > 0:
        hi *= 2
    return 2 * brentq(f, 0.0, hi, xtol=1e-12 * hi)


@dataclass(frozen=True)
class SweepSpectrum:
    """One sweep's spectrum on the common grid."""

    values: np.ndarray
    imag_residual: np.ndarray
    L_cm: float
    method: str
    zpd_found: bool
    x_zpd_cm: float
    sweep_index: int
    #: Group-delay dispersion of the phase, cm², when the sweep needed the dispersion
    #: treatment (:func:`dispersed_mertz`); NaN otherwise.
    dispersion_cm2: float = float("nan")
    u_dispersion_cm2: float = float("nan")


@dataclass(frozen=True)
class Spectrum:
    """A co-added spectrum.

    Attributes
    ----------
    sigma_per_cm : ndarray
        Vacuum wavenumber, cm⁻¹ (after the medium correction when one was applied).
    density : ndarray
        Spectral density per unit wavenumber (arbitrary units × cm).
    noise : ndarray
        Standard uncertainty of ``density`` at each point.
    line_shape : LineShape
        How a monochromatic line appears (for fits and the resolution).
    phase_method : str
        ``mertz``, ``forman``, ``magnitude`` or ``mixed``.
    """

    sigma_per_cm: np.ndarray
    density: np.ndarray
    noise: np.ndarray
    line_shape: LineShape
    phase_method: str
    sweeps: tuple[SweepSpectrum, ...] = field(repr=False)

    @property
    def resolution_per_cm(self) -> float:
        """FWHM of the co-added instrument line shape, cm⁻¹: ``fwhm_factor / (2·max_opd)`` of
        the apodization used when all sweeps reach the same OPD. Sweeps of different span
        (partial sweeps at a record's ends) mix line shapes of different width, whose FWHM is
        not that of the mean OPD; line widths and their bounds use this same FWHM."""
        return self.line_shape.fwhm_per_cm

    @property
    def max_opd_cm(self) -> float:
        return self.line_shape.max_opd_cm

    @property
    def wavelength_nm(self) -> np.ndarray:
        """Vacuum wavelength, nm (inf at zero wavenumber)."""
        with np.errstate(divide="ignore"):
            return 1e7 / self.sigma_per_cm

    @property
    def density_per_nm(self) -> np.ndarray:
        """Density per unit wavelength, S_λ = S_σ·σ²/10⁷ (σ in cm⁻¹; CIE 127 works per nm)."""
        return self.density * self.sigma_per_cm**2 / 1e7

    @property
    def noise_per_nm(self) -> np.ndarray:
        return self.noise * self.sigma_per_cm**2 / 1e7

    def with_axis(self, sigma_per_cm: np.ndarray) -> Spectrum:
        """Copy on a corrected wavenumber axis (same values)."""
        return Spectrum(
            np.asarray(sigma_per_cm, float),
            self.density,
            self.noise,
            self.line_shape,
            self.phase_method,
            self.sweeps,
        )


def sweep_spectrum(
    ifg: Interferogram,
    n_fft: int,
    *,
    apodization: str = "happ-genzel",
    phase_correction: str = "auto",
    planner=None,
) -> SweepSpectrum:
    """Transform one resampled sweep.

    ``phase_correction``: ``auto`` uses Mertz when the sweep holds ZPD and the magnitude about
    the sweep's centre otherwise; ``mertz``/``forman`` require ZPD in the sweep (else the
    magnitude is used and the method says so); ``magnitude`` always uses the magnitude.
    """
    from ftsource.interferogram.zpd import ZpdInfo, find_zpd
    from ftsource.spectrum import phase

    x = ifg.x_cm
    zpd = find_zpd(x, ifg.y) if phase_correction != "magnitude" else None
    if zpd is not None and zpd.found:
        method = "mertz" if phase_correction in ("auto", "mertz") else phase_correction
        fn = phase.forman if method == "forman" else phase.mertz
        try:
            ps = fn(x, ifg.y, zpd, apodization=apodization, n_fft=n_fft, planner=planner)
            if phase_correction == "auto":
                ps = dispersed_mertz(x, ifg.y, zpd, ps, apodization=apodization, n_fft=n_fft,
                                     planner=planner)
        except AnalysisError:
            # a burst too close to the sweep's end for a double-sided phase segment: treat the
            # sweep as one without ZPD
            zpd = None
    if zpd is not None and zpd.found:
        return SweepSpectrum(
            ps.real, ps.imag_residual, ps.L_cm, ps.method, True, zpd.x_zpd_cm, ifg.sweep.index,
            ps.dispersion_cm2, ps.u_dispersion_cm2,
        )
    # no ZPD: magnitude about the sweep's centre, L = half the span
    half = (ifg.y.size - 1) // 2
    centre = ifg.x0_cm + half * ifg.dx_cm
    fake = ZpdInfo(True, centre, half, half * ifg.dx_cm, half * ifg.dx_cm, 1.0, "")
    ps = phase.magnitude(
        x[: 2 * half + 1], ifg.y[: 2 * half + 1], fake, apodization=apodization, n_fft=n_fft,
        planner=planner,
    )
    return SweepSpectrum(
        ps.real, ps.imag_residual, ps.L_cm, "magnitude", False, float("nan"), ifg.sweep.index
    )


def dispersed_mertz(x_cm, y, zpd, first, *, apodization="happ-genzel", n_fft=None,
                    planner=None):
    """A Mertz spectrum redone for a chirped burst (unequal glass in the arms), or ``first``.

    When ``first`` (a Mertz spectrum with the default phase segment) leaves more than
    :data:`ftsource.spectrum.dispersion.PHASE_ERROR_RATIO_MAX` of its energy in the imaginary
    residual, the burst is measured on its envelope
    (:func:`ftsource.spectrum.dispersion.burst_half_width_cm`, out to 5 % of the peak). If it
    lies within the short side, the phase is taken from the whole double-sided part (a
    shorter segment smears the curved phase of a chirped burst: with ±2 burst half-widths the
    residual of an 850/60 nm LED behind 6 mm of N-BK7 stayed at 6e-3, with the whole part it
    fell to 1e-4) and fitted by a weighted quartic in wavenumber. That
    spectrum is kept when it at least halves the residual; if its residual is still above the
    limit the phase cannot be trusted and the magnitude of the double-sided part is returned
    instead (noise-rectified, see :func:`ftsource.spectrum.phase.magnitude`). Records without
    the trouble come back unchanged.

    References
    ----------
    .. [1] L. Mertz, Infrared Phys. 7, 17-23 (1967); module :mod:`ftsource.spectrum.dispersion`.
    """
    from ftsource.spectrum import dispersion as disp
    from ftsource.spectrum import phase

    r0 = disp.phase_error_ratio(first.real, first.imag_residual)
    if first.method != "mertz" or r0 <= disp.PHASE_ERROR_RATIO_MAX:
        return first
    half = disp.burst_half_width_cm(x_cm, y, zpd.x_zpd_cm)
    if half >= zpd.short_side_cm:
        return first  # the burst runs off the short side: no double-sided phase can hold it
    if zpd.kind == "one-sided":
        # the Mertz ramp weights each component by ½ + Δx(σ)/2l, Δx its group delay from ZPD:
        # on a chirped burst that tilts the band (±5 % across an 850/60 nm LED behind 6 mm of
        # N-BK7 with l = 0.1 mm); only the double-sided part is used (lower resolution)
        x_cm, y, zpd = _double_sided_part(x_cm, y, zpd)
        if zpd is None:
            return first
    seg = zpd.short_side_cm * (1 - 1e-9)
    try:
        poly = phase.mertz(x_cm, y, zpd, apodization=apodization, n_fft=n_fft,
                           double_sided_cm=seg, planner=planner, phase_model="polynomial")
    except (AnalysisError, OptionError):
        return first
    r1 = disp.phase_error_ratio(poly.real, poly.imag_residual)
    if r1 <= disp.PHASE_ERROR_RATIO_MAX:
        return poly
    if zpd.kind == "double-sided" and min(r0, r1) > 10 * disp.PHASE_ERROR_RATIO_MAX:
        mag = phase.magnitude(x_cm, y, zpd, apodization=apodization, n_fft=n_fft,
                              planner=planner)
        return replace(mag, dispersion_cm2=poly.dispersion_cm2,
                       u_dispersion_cm2=poly.u_dispersion_cm2)
    return poly if r1 <= 0.5 * r0 else first


def _double_sided_part(x_cm, y, zpd):
    """The samples within the short side of ZPD on both sides, with their ZPD (or Nones)."""
    from ftsource.interferogram.zpd import find_zpd

    x = np.asarray(x_cm, dtype=float)
    keep = np.abs(x - zpd.x_zpd_cm) <= zpd.short_side_cm
    if keep.sum() < 16:
        return x_cm, y, None
    xs, ys = x[keep], np.asarray(y, dtype=float)[keep]
    z = find_zpd(xs, ys)
    return xs, ys, (z if z.found else None)


def coadd(
    sweep_spectra: list[SweepSpectrum],
    sigma_per_cm: np.ndarray,
    apodization: str,
) -> Spectrum:
    """Mean of sweep spectra on the same grid, with a noise estimate.

    The noise is each sweep's robust noise level (:func:`_noise_floor`: most of the grid lies
    outside the source's band and holds only noise) combined for the mean. Noise that grows
    with the signal is not in it; line fits scale their uncertainties by their residuals.
    """
    if not sweep_spectra:
        raise AnalysisError("no sweep could be transformed")
    vals = np.array([s.values for s in sweep_spectra])
    n = vals.shape[0]
    mean = vals.mean(axis=0)
    methods = {s.method for s in sweep_spectra}
    kind = "magnitude" if methods == {"magnitude"} else "real"
    # each sweep's own noise level (its spectrum is noise over most of the grid); sweeps of
    # different span have different line shapes, so their scatter at a line is not noise
    floors = np.array([_noise_floor(s) for s in sweep_spectra])
    noise = np.sqrt(np.sum(floors**2, axis=0)) / n
    L = tuple(float(s.L_cm) for s in sweep_spectra)
    w = tuple(1.0 / n for _ in sweep_spectra)
    shape = LineShape(apodization, L, w, kind)
    method = methods.pop() if len(methods) == 1 else "mixed"
    return Spectrum(np.asarray(sigma_per_cm, float), mean, noise, shape, method,
                    tuple(sweep_spectra))


def _noise_floor(s: SweepSpectrum, block: int = 1024) -> np.ndarray:
    """Noise standard deviation of one sweep's spectrum, from blocks of points.

    In each block of a phase-corrected spectrum the robust spread is 1.4826 × the median
    absolute deviation (Gaussian noise); a magnitude spectrum is Rayleigh distributed where
    there is no line, so the noise per component is its median / √(2 ln 2). Block medians ignore
    the few points a narrow line occupies, and the median over blocks ignores the blocks a broad
    source fills. (The imaginary residual of a one-sided record comes from its short
    double-sided part and has another noise level, so it is not used.)
    """
    v = np.abs(s.values)
    scale = 1.0 / np.sqrt(2 * np.log(2)) if s.method == "magnitude" else 1.4826
    nb = max(v.size // block, 1)
    edges = np.linspace(0, v.size, nb + 1).astype(int)
    if s.method != "magnitude":
        # deviations about each block's median (a broad source lifts a whole block)
        med = np.array([np.median(np.abs(s.values[a:b] - np.median(s.values[a:b])))
                        for a, b in zip(edges[:-1], edges[1:], strict=False)]) * scale
    else:
        med = np.array(
            [np.median(v[a:b]) for a, b in zip(edges[:-1], edges[1:], strict=True)]
        ) * scale
    # white interferogram noise is flat in wavenumber: the median over blocks is robust to the
    # blocks a source occupies
    level = float(np.median(med))
    return np.full(v.size, max(level, np.finfo(float).tiny))


def reconvolve(spectrum: Spectrum, band_per_cm: tuple[float, float], *,
               reach: float = 30.0) -> np.ndarray:
    """The density convolved once more with the spectrum's own line shape, over a band.

    Used to remove the first-order bias that the instrument line shape puts on a figure f of a
    broad band (peak, FWHM): f(S∗K) − f(S) ≈ f(S∗K∗K) − f(S∗K) when the band spans many
    resolution elements, so ``2 f(measured) − f(reconvolved)`` estimates f(S) with a
    second-order error (Richardson extrapolation in the line-shape width).

    Parameters
    ----------
    spectrum : Spectrum
        On a uniform wavenumber grid.
    band_per_cm : (float, float)
        Where the result is needed; the convolution reads ``reach`` resolution elements beyond.
    reach : float
        Half-width of the kernel, in resolution elements (the apodized line shapes have fallen
        to below 1e-3 of their peak there; the boxcar's sinc to about 1 %, whose area beyond
        is a few 1e-4).

    Returns
    -------
    ndarray
        Same shape as ``spectrum.density``; NaN outside the band.

    References
    ----------
    .. [1] L. F. Richardson, Phil. Trans. R. Soc. A 210, 307-357 (1911) (extrapolation in a
       small parameter).
    .. [2] P. H. van Cittert, Z. Phys. 69, 298-308 (1931) (the same first-order step applied
       to the data: S ≈ 2M − M∗K).
    """
    sig = spectrum.sigma_per_cm
    step = float(np.median(np.diff(sig)))
    n_half = int(np.ceil(reach * spectrum.resolution_per_cm / step))
    kern = spectrum.line_shape.kernel(np.arange(-n_half, n_half + 1) * step) * step
    kern = kern / kern.sum()  # the truncated kernel keeps the band's area
    lo, hi = band_per_cm
    inside = np.flatnonzero((sig >= lo) & (sig <= hi))
    out = np.full(sig.shape, np.nan)
    if inside.size == 0:
        return out
    a = max(int(inside[0]) - n_half, 0)
    b = min(int(inside[-1]) + n_half + 1, sig.size)
    conv = np.convolve(spectrum.density[a:b], kern, mode="same")
    out[inside] = conv[inside - a]
    return out
