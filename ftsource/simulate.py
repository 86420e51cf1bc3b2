"""Forward model: records of a scanned-mirror Michelson interferometer from a known source.

The simulator is the oracle for many tests and the source of the bundled demo data, so it is
written from closed forms only and tested against them in ``tests/test_simulate.py``:

* a spectral line of integrated strength ``s``, vacuum wavenumber ``σ₀`` and a Voigt profile
  contributes ``s·[1 + γ(x)·cos(2πσ₀x + φ)]`` to the detector at optical path difference ``x``,
  where ``γ`` is the line's coherence function, the Fourier transform of its normalised profile:
  ``exp(-(πwx)²/(4 ln 2))`` for a Gaussian of FWHM ``w`` and ``exp(-πw|x|)`` for a Lorentzian
  (Wiener–Khinchin theorem; e.g. Goodman, *Statistical Optics*, 1985, ch. 5);
* a reference laser of vacuum wavelength ``λ_r`` gives fringes ``cos(2π n(λ_r) d/λ_r)`` for a
  geometric path difference ``d`` (mirror travel ``d/2``: one fringe per ``λ/2`` of mirror
  travel, common practice);
* in air every wavelength sees its own index ``n(λ)`` (Ciddor 1996) through
  :mod:`ftsource.physics.air`.

Everything is evaluated at the sample instants (point sampling), so content above the Nyquist
frequency aliases exactly as it would on an ADC without an anti-alias filter.

Kernel units: OPD in cm, wavenumber in cm⁻¹, time in s.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from ftsource.interferogram.scale import HENE_VACUUM_WAVELENGTH_NM, OpdKind
from ftsource.physics.instrument import OPD_PER_MIRROR_TRAVEL

__all__ = [
    "SpectralLine",
    "SourceModel",
    "Scan",
    "ReferenceChannel",
    "Detector",
    "Simulation",
    "laser",
    "gaussian_source",
    "led",
    "multimode",
    "simulate",
    "undersampling_message",
    "mirror_trajectory",
]

_LN2 = np.log(2.0)


@dataclass(frozen=True)
class SpectralLine:
    """One spectral component with a Voigt profile (either width may be zero).

    Parameters
    ----------
    wavenumber_per_cm : float
        Vacuum wavenumber of the line centre, cm⁻¹.
    strength : float
        Integrated intensity (area under the one-sided spectral density), arbitrary units.
    gauss_fwhm_per_cm, lorentz_fwhm_per_cm : float
        FWHM of the Gaussian and Lorentzian parts of the profile, cm⁻¹.
    phase_rad : float
        Phase of the line's fringes at zero path difference (dispersion), rad.
    """

    wavenumber_per_cm: float
    strength: float = 1.0
    gauss_fwhm_per_cm: float = 0.0
    lorentz_fwhm_per_cm: float = 0.0
    phase_rad: float = 0.0

    def coherence(self, x_cm: np.ndarray) -> np.ndarray:
        """Normalised coherence function γ(x) (the Fourier transform of the profile)."""
        x = np.abs(np.asarray(x_cm, dtype=float))
        g = np.ones_like(x)
        if self.gauss_fwhm_per_cm > 0:
            g = g * np.exp(-((np.pi * self.gauss_fwhm_per_cm * x) ** 2) / (4 * _LN2))
        if self.lorentz_fwhm_per_cm > 0:
            g = g * np.exp(-np.pi * self.lorentz_fwhm_per_cm * x)
        return g

    def density(self, sigma_per_cm: np.ndarray) -> np.ndarray:
        """Spectral density per cm⁻¹ (closed-form Voigt profile scaled by ``strength``)."""
        from scipy.special import voigt_profile

        s = np.asarray(sigma_per_cm, dtype=float) - self.wavenumber_per_cm
        sg = self.gauss_fwhm_per_cm / (2 * np.sqrt(2 * _LN2))
        hw = self.lorentz_fwhm_per_cm / 2
        if sg == 0 and hw == 0:
            raise ValueError("a line of zero width has no density function")
        return self.strength * voigt_profile(s, sg, hw)


@dataclass(frozen=True)
class SourceModel:
    """A source as a sum of spectral lines (the truth that records are made from)."""

    lines: tuple[SpectralLine, ...]
    label: str = "source"

    def density(self, sigma_per_cm: np.ndarray) -> np.ndarray:
        """Total spectral density per cm⁻¹ at vacuum wavenumbers ``sigma_per_cm``."""
        sigma = np.asarray(sigma_per_cm, dtype=float)
        return sum((ln.density(sigma) for ln in self.lines), np.zeros_like(sigma))

    @property
    def total_strength(self) -> float:
        return float(sum(ln.strength for ln in self.lines))

    def with_dispersion(self, centre_per_cm: float, coefficients: tuple[float, ...]) -> SourceModel:
        """Copy with a phase φ(σ) = Σ cₖ (σ − σc)ᵏ (rad, σ in cm⁻¹) added to every line."""
        new = []
        for ln in self.lines:
            d = ln.wavenumber_per_cm - centre_per_cm
            phi = sum(c * d**k for k, c in enumerate(coefficients))
            new.append(replace(ln, phase_rad=ln.phase_rad + phi))
        return replace(self, lines=tuple(new))


def laser(
    wavelength_nm: float,
    *,
    fwhm_nm: float = 0.0,
    profile: str = "gaussian",
    strength: float = 1.0,
) -> SourceModel:
    """A single line at a vacuum wavelength, optionally broadened (``gaussian``/``lorentzian``)."""
    sigma0 = 1e7 / wavelength_nm
    w = sigma0 * fwhm_nm / wavelength_nm  # Δσ = Δλ/λ² for a narrow line
    if profile == "gaussian":
        line = SpectralLine(sigma0, strength, gauss_fwhm_per_cm=w)
    elif profile == "lorentzian":
        line = SpectralLine(sigma0, strength, lorentz_fwhm_per_cm=w)
    else:
        raise ValueError(f"profile must be 'gaussian' or 'lorentzian', not {profile!r}")
    return SourceModel((line,), label=f"laser {wavelength_nm:g} nm")


def gaussian_source(centre_nm: float, fwhm_per_cm: float, strength: float = 1.0) -> SourceModel:
    """A source Gaussian in wavenumber, centred at a vacuum wavelength."""
    return SourceModel((SpectralLine(1e7 / centre_nm, strength, fwhm_per_cm),), label="gaussian")


def led(
    centre_nm: float,
    fwhm_nm: float,
    *,
    asymmetry: float = 0.0,
    strength: float = 1.0,
    components_per_fwhm: int = 24,
    density: str = "per-wavelength",
) -> SourceModel:
    """An LED-like broad source: a split-normal shape in wavelength.

    ``centre_nm`` and ``fwhm_nm`` describe the **density per unit wavelength** S_λ by default,
    the density on which ``analyze`` reports peak, FWHM and colour (CIE 127): a round trip
    gives back the peak and FWHM asked for. ``density="per-wavenumber"`` puts the shape on
    the density per unit wavenumber S_σ instead (as the transform sees it); then the S_λ
    peak lies shorter, by 0.57 nm for 590/30 nm (S_λ = S_σ·σ²/10⁷).

    The shape is approximated by a comb of narrow Gaussian components in wavenumber (spacing
    ``fwhm/components_per_fwhm``, each of FWHM 2.5× the spacing so the sum is smooth). The sum
    itself is the truth: :meth:`SourceModel.density` evaluates it in closed form, so metrics
    computed from it are exact for the simulated record.

    Parameters
    ----------
    centre_nm : float
        Peak of the split-normal shape, vacuum nm.
    fwhm_nm : float
        FWHM of the nominal shape, nm.
    asymmetry : float
        In (-1, 1): the long-wavelength side is ``(1 + asymmetry)`` times wider than the short side.
    density : {"per-wavelength", "per-wavenumber"}
        Which spectral density has the split-normal shape (see above).
    """
    if not -0.9 < asymmetry < 0.9:
        raise ValueError("asymmetry must lie in (-0.9, 0.9)")
    if density not in ("per-wavelength", "per-wavenumber"):
        raise ValueError(
            f"density must be 'per-wavelength' or 'per-wavenumber', got {density!r}"
        )
    w_long = fwhm_nm * (1 + asymmetry) / 2
    w_short = fwhm_nm * (1 - asymmetry) / 2
    lam_lo, lam_hi = centre_nm - 3 * w_short, centre_nm + 3 * w_long
    sig_hi, sig_lo = 1e7 / lam_lo, 1e7 / lam_hi
    step = (1e7 / centre_nm**2) * fwhm_nm / components_per_fwhm
    sig = np.arange(sig_lo, sig_hi + step, step)
    lam = 1e7 / sig
    width = 2.5 * step
    if density == "per-wavelength":
        # narrower components (still smooth: ripple ~1e-6) blur the split normal's kink less,
        # and each side's half width is shrunk by the components' own (Gaussians add in
        # quadrature) so that the sum has the FWHM asked for
        width = 2.0 * step
        g_nm = width * centre_nm**2 / 1e7
        w_long = np.sqrt(max(w_long**2 - g_nm**2 / 4, 0.25 * w_long**2))
        w_short = np.sqrt(max(w_short**2 - g_nm**2 / 4, 0.25 * w_short**2))
    half = np.where(lam > centre_nm, w_long, w_short)
    weight = np.exp(-_LN2 * ((lam - centre_nm) / half) ** 2)  # split normal, FWHM = w_s + w_l
    if density == "per-wavelength":
        # components equally spaced in σ carry S_σ·dσ = S_λ·λ²/10⁷·dσ
        weight = weight * lam**2
    weight *= strength / weight.sum()
    lines = tuple(
        SpectralLine(float(s), float(a), width) for s, a in zip(sig, weight, strict=True)
    )
    return SourceModel(lines, label=f"LED {centre_nm:g} nm")


def multimode(
    centre_nm: float,
    mode_spacing_nm: float,
    envelope_fwhm_nm: float,
    *,
    mode_fwhm_nm: float = 0.0,
    strength: float = 1.0,
    threshold: float = 1e-3,
) -> SourceModel:
    """A Fabry–Pérot-like multimode laser: equally spaced modes under a Gaussian envelope.

    Modes are equally spaced in wavenumber (Δσ = 1/(2 n_g L)); ``mode_spacing_nm`` is the spacing
    near ``centre_nm``. Modes weaker than ``threshold`` of the strongest are left out.
    """
    s0 = 1e7 / centre_nm
    ds = s0 * mode_spacing_nm / centre_nm
    env = s0 * envelope_fwhm_nm / centre_nm
    n = int(np.ceil(3 * env / ds)) + 1
    k = np.arange(-n, n + 1)
    sig = s0 + k * ds
    amp = np.exp(-4 * _LN2 * ((sig - s0) / env) ** 2)
    keep = amp >= threshold
    amp = amp[keep] / amp[keep].sum() * strength
    w = s0 * mode_fwhm_nm / centre_nm
    lines = tuple(SpectralLine(float(s), float(a), w) for s, a in zip(sig[keep], amp, strict=False))
    return SourceModel(lines, label=f"multimode {centre_nm:g} nm")


@dataclass(frozen=True)
class Scan:
    """Mirror motion and sampling.

    The geometric path difference is ``d(t) = centre + amplitude·T(θ(t)) + vibration``, where
    ``T(θ) = arcsin(k sin θ)/arcsin(k)`` is a triangle wave with rounded turnarounds
    (``shape = k`` in (0, 1); small k is sinusoidal) and θ advances at ``sweep_rate_hz`` full
    back-and-forth cycles per second with a smooth random wobble of relative size
    ``speed_jitter``. ``sweep_speed_factors`` (optional) scales the rate of θ sweep by sweep,
    in turn (the first, partial, sweep takes the first factor): a mirror run at several
    speeds, which changes speed only at the turnarounds, where it is at rest.
    """

    sample_rate_hz: float = 48_000.0
    duration_s: float = 2.0
    opd_centre_cm: float = 0.0
    opd_amplitude_cm: float = 0.05
    sweep_rate_hz: float = 1.0
    shape: float = 0.97
    speed_jitter: float = 0.05
    vibration_cm: float = 0.0
    vibration_hz: float = 120.0
    start_phase_rad: float = 0.3
    sweep_speed_factors: tuple[float, ...] = ()

    @property
    def n_samples(self) -> int:
        return int(round(self.duration_s * self.sample_rate_hz))

    @property
    def peak_opd_speed_cm_s(self) -> float:
        """Upper estimate of the fastest OPD speed (cm/s), without the wobble."""
        k = self.shape
        dT = k / np.arcsin(k)  # max of dT/dθ = k cos θ / (arcsin(k) √(1 − k² sin² θ)), at θ = 0
        return self.opd_amplitude_cm * dT * 2 * np.pi * self.sweep_rate_hz + (
            2 * np.pi * self.vibration_hz * self.vibration_cm
        )

    def reference_samples_per_fringe(self, reference_wavelength_nm: float) -> float:
        """Samples per reference fringe at the fastest OPD speed, the wobble's peak included
        (its relative size ``speed_jitter`` taken twice: a sum of sinusoids of unit RMS peaks
        near twice its RMS)."""
        v = self.peak_opd_speed_cm_s * (1 + 2 * self.speed_jitter)
        return self.sample_rate_hz * reference_wavelength_nm * 1e-7 / v if v > 0 else np.inf


def undersampling_message(scan: Scan, reference_wavelength_nm: float) -> str:
    """Why these settings undersample the reference, and what to change ('' when they do
    not): the analysis refuses below
    :data:`ftsource.interferogram.channels.MIN_SAMPLES_PER_FRINGE` samples per fringe."""
    from ftsource.interferogram.channels import MIN_SAMPLES_PER_FRINGE

    spf = scan.reference_samples_per_fringe(reference_wavelength_nm)
    if spf >= MIN_SAMPLES_PER_FRINGE:
        return ""
    fs_ok = scan.sample_rate_hz * MIN_SAMPLES_PER_FRINGE / spf
    rate_ok = scan.sweep_rate_hz * spf / MIN_SAMPLES_PER_FRINGE
    return (
        f"these settings give {spf:.2f} samples per reference fringe at the fastest mirror "
        f"speed, below the {MIN_SAMPLES_PER_FRINGE:g} the analysis needs: sample at "
        f"{fs_ok:.4g} Hz or more (--sample-rate), or sweep at {rate_ok:.3g} Hz or less "
        "(--sweep-rate), or scan a shorter OPD (--opd-amplitude)"
    )


@dataclass(frozen=True)
class ReferenceChannel:
    """The reference laser's detector(s).

    ``kind``: ``"quadrature"`` (two channels I and Q), ``"single"``, ``"encoder"`` (a mirror
    position column instead of a laser) or ``"none"``. Offsets, gains and the phase between
    I and Q model an imperfect quadrature detector (Heydemann 1981). ``dropouts`` are
    ``(start_s, length_s)`` intervals where the beam is blocked.
    """

    kind: str = "quadrature"
    wavelength_nm: float = HENE_VACUUM_WAVELENGTH_NM
    offsets: tuple[float, float] = (0.05, -0.03)
    gains: tuple[float, float] = (1.0, 0.9)
    quadrature_deg: float = 90.0
    noise_rms: float = 0.002
    level_drift: float = 0.0
    dropouts: tuple[tuple[float, float], ...] = ()
    encoder_resolution_m: float = 1e-9


@dataclass(frozen=True)
class Detector:
    """The detector on the source: gain, offset, noise, slow drift, delay and clipping."""

    gain: float = 1.0
    offset: float = 0.1
    noise_rms: float = 0.002
    drift: float = 0.0
    delay_s: float = 0.0
    clip_level: float | None = None


@dataclass(frozen=True)
class Simulation:
    """A simulated record with its truth."""

    record: object
    source: SourceModel
    scan: Scan
    reference: ReferenceChannel
    detector: Detector
    opd_cm: np.ndarray = field(repr=False)
    medium: str
    air: object | None


def _smooth_noise(rng: np.random.Generator, t: np.ndarray, n_terms: int = 6, f_max: float = 3.0):
    """Smooth random function of unit RMS made of a few low-frequency sinusoids."""
    f = rng.uniform(0.2, f_max, n_terms)
    ph = rng.uniform(0, 2 * np.pi, n_terms)
    a = rng.normal(size=n_terms)
    y = (a[:, None] * np.sin(2 * np.pi * f[:, None] * t[None, :] + ph[:, None])).sum(0)
    return y / np.sqrt(0.5 * np.sum(a**2))


def _sweep_phase(scan: Scan, tau: np.ndarray, w: float) -> np.ndarray:
    """θ(τ): rate ``w`` times the current sweep's speed factor; sweeps end at θ = π/2 + nπ."""
    factors = tuple(float(f) for f in scan.sweep_speed_factors)
    if not factors:
        return scan.start_phase_rad + w * tau
    if not all(np.isfinite(f) and f > 0 for f in factors):
        raise ValueError("Scan.sweep_speed_factors must all be positive")
    theta, time = scan.start_phase_rad, 0.0
    turn = np.pi / 2 + np.pi * (np.floor((theta - np.pi / 2) / np.pi) + 1)
    thetas, times = [theta], [time]
    end = float(np.max(tau)) if tau.size else 0.0
    j = 0
    while time <= end:
        time += (turn - theta) / (w * factors[j % len(factors)])
        theta = turn
        thetas.append(theta)
        times.append(time)
        turn += np.pi
        j += 1
    return np.interp(tau, times, thetas)


def mirror_trajectory(scan: Scan, t: np.ndarray, rng: np.random.Generator) -> np.ndarray:
    """Geometric path difference d(t) in cm for a :class:`Scan` (see its docstring)."""
    k = scan.shape
    if not 0 < k < 1:
        raise ValueError("Scan.shape must lie in (0, 1)")
    w = 2 * np.pi * scan.sweep_rate_hz
    # Wobble: the phase rate varies by ±speed_jitter (relative), smoothly.
    wob = _smooth_noise(rng, t, f_max=max(3 * scan.sweep_rate_hz, 1.0))
    # integrate the rate perturbation analytically enough: cumulative sum on the sample grid
    dt = 1.0 / scan.sample_rate_hz
    tau = t + scan.speed_jitter * np.cumsum(wob) * dt  # time warped by the wobble
    theta = _sweep_phase(scan, tau, w)
    d = scan.opd_centre_cm + scan.opd_amplitude_cm * np.arcsin(k * np.sin(theta)) / np.arcsin(k)
    if scan.vibration_cm:
        d = d + scan.vibration_cm * np.sin(2 * np.pi * scan.vibration_hz * t + 0.7)
    return d


def _index(medium: str, air, wavelength_nm):
    if medium == "vacuum":
        return np.ones_like(np.asarray(wavelength_nm, dtype=float))
    from ftsource.physics.air import ciddor_index

    return ciddor_index(
        np.asarray(wavelength_nm, dtype=float),
        air.temperature_c,
        air.pressure_pa,
        air.humidity_percent,
        air.co2_ppm,
    )


def interferogram(source: SourceModel, opd_cm: np.ndarray, index=None) -> np.ndarray:
    """Detector signal Σ s·[1 + γ(n x)·cos(2πσ n x + φ)] for geometric path difference ``opd_cm``.

    ``index`` gives n for each line (1 in vacuum).
    """
    x = np.asarray(opd_cm, dtype=float)
    out = np.zeros_like(x)
    n_lines = len(source.lines)
    idx = np.ones(n_lines) if index is None else np.asarray(index, dtype=float)
    chunk = 1 << 16
    for start in range(0, x.size, chunk):
        xs = x[start : start + chunk]
        acc = np.zeros_like(xs)
        for ln, n in zip(source.lines, idx, strict=False):
            xo = n * xs
            acc += ln.strength * (
                1.0
                + ln.coherence(xo) * np.cos(2 * np.pi * ln.wavenumber_per_cm * xo + ln.phase_rad)
            )
        out[start : start + chunk] = acc
    return out


def simulate(
    source: SourceModel,
    scan: Scan | None = None,
    reference: ReferenceChannel | None = None,
    detector: Detector | None = None,
    *,
    medium: str = "vacuum",
    air=None,
    rng: np.random.Generator | int | None = 0,
    wav_channels: bool = False,
) -> Simulation:
    """Make a record of ``source`` seen through a scanned Michelson interferometer.

    Parameters
    ----------
    source : SourceModel
        The truth.
    scan, reference, detector : optional
        Mirror motion and sampling; reference detector; source detector.
    medium : {"vacuum", "air"}
        In air, ``air`` (an :class:`ftsource.physics.air.AirConditions`) sets the index at every
        wavelength (Ciddor 1996).
    rng : numpy Generator or seed
        Source of all randomness (noise, wobble).

    Returns
    -------
    Simulation
        ``record`` is a :class:`ftsource.io.records.Record` with columns ``time``, ``signal`` and
        ``ref_i``/``ref_q``, ``ref`` or ``position`` per ``reference.kind``.
    """
    from ftsource.io.records import Record

    scan = scan or Scan()
    reference = reference or ReferenceChannel()
    detector = detector or Detector()
    rng = np.random.default_rng(rng)
    if medium not in ("vacuum", "air"):
        raise ValueError("medium must be 'vacuum' or 'air'")
    if medium == "air" and air is None:
        from ftsource.physics.air import AirConditions

        air = AirConditions()

    if reference.kind in ("quadrature", "single"):
        msg = undersampling_message(scan, reference.wavelength_nm)
        if msg:
            import warnings

            from ftsource.errors import FtsourceWarning

            warnings.warn(msg, FtsourceWarning, stacklevel=2)
    n = scan.n_samples
    t = np.arange(n) / scan.sample_rate_hz
    d = mirror_trajectory(scan, t, rng)

    # source detector, possibly sampled late by delay_s relative to the reference
    if detector.delay_s:
        d_sig = np.interp(t - detector.delay_s, t, d)
    else:
        d_sig = d
    line_wl = np.array([1e7 / ln.wavenumber_per_cm for ln in source.lines])
    sig = interferogram(source, d_sig, _index(medium, air, line_wl))
    sig = detector.gain * sig / max(source.total_strength, 1e-300)
    if detector.drift:
        sig = sig + detector.drift * _smooth_noise(rng, t, f_max=0.5)
    sig = sig + detector.offset + rng.normal(0, detector.noise_rms, n)
    if detector.clip_level is not None:
        sig = np.minimum(sig, detector.clip_level)

    cols: dict[str, np.ndarray] = {"time": t, "signal": sig}
    ref = reference
    if ref.kind != "none" and ref.kind not in set(OpdKind) - {OpdKind.CONSTANT_SPEED}:
        raise ValueError("reference.kind must be quadrature, single, encoder or none")
    kind = None if ref.kind == "none" else OpdKind(ref.kind)
    if kind is not None and kind.uses_reference_laser:
        n_ref = float(_index(medium, air, ref.wavelength_nm))
        phase = 2 * np.pi * n_ref * d / (ref.wavelength_nm * 1e-7)
        amp = np.ones(n)
        for start, length in ref.dropouts:
            amp[(t >= start) & (t < start + length)] = 0.0
        drift = 1.0 + ref.level_drift * _smooth_noise(rng, t, f_max=0.5)
        if kind is OpdKind.QUADRATURE:
            q = np.deg2rad(ref.quadrature_deg)
            cols["ref_i"] = ref.offsets[0] * drift + ref.gains[0] * amp * np.cos(phase)
            cols["ref_q"] = (
                ref.offsets[1] * drift + ref.gains[1] * amp * np.sin(phase + q - np.pi / 2)
            )
            cols["ref_i"] = cols["ref_i"] + rng.normal(0, ref.noise_rms, n)
            cols["ref_q"] = cols["ref_q"] + rng.normal(0, ref.noise_rms, n)
        else:
            level = 1.0 + ref.level_drift * _smooth_noise(rng, t, f_max=0.5)
            gain = ref.gains[0] * (1.0 + 0.5 * ref.level_drift * _smooth_noise(rng, t, f_max=0.5))
            cols["ref"] = level + gain * amp * np.cos(phase) + rng.normal(0, ref.noise_rms, n)
    elif kind is OpdKind.ENCODER:
        pos_m = d / OPD_PER_MIRROR_TRAVEL * 1e-2
        q = ref.encoder_resolution_m
        cols["position"] = np.round(pos_m / q) * q if q > 0 else pos_m

    if wav_channels:
        cols.pop("time")
    meta = {
        "sample_rate": f"{scan.sample_rate_hz:g} Hz",
        "description": f"simulated record of {source.label} (invented, made by ftsource.simulate)",
    }
    if kind is not None and kind.uses_reference_laser:
        meta["reference_wavelength"] = f"{ref.wavelength_nm:.6f} nm"
    if kind is OpdKind.ENCODER:
        meta["position_unit"] = "m"
    ro = {k: _readonly(np.asarray(v, dtype=float)) for k, v in cols.items()}
    record = Record(
        columns=ro,
        sample_rate_hz=scan.sample_rate_hz,
        metadata=meta,
        path="<simulated>",
        source_format="memory",
    )
    return Simulation(record, source, scan, reference, detector, d, medium, air)


def _readonly(a: np.ndarray) -> np.ndarray:
    a = np.array(a, dtype=float)
    a.setflags(write=False)
    return a
