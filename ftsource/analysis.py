"""The whole job as one call: a record in, a :class:`~ftsource.result.Result` out.

record → optical path from the reference → sweeps on a uniform OPD grid → phase correction
and apodization → FFT → co-added spectrum (corrected for the air between the beams) → lines,
broadband figures, modes, coherence → uncertainty budget → result with warnings.

Every stage is a pure function in its own module; this module only wires them together and
collects what each stage says the data could not support.
"""

from __future__ import annotations

import warnings as _warnings
from dataclasses import dataclass, replace

import numpy as np

from ftsource.errors import AnalysisError, AnalysisWarning, OptionError
from ftsource.interferogram.scale import REFERENCE_WAVELENGTH_RANGE_NM
from ftsource.lines.fitting import SEARCH_BAND_NM
from ftsource.measure.classify import BROADBAND_FWHM_NM
from ftsource.measure.facts import CLIPPED_FRACTION_LIMIT, clipped_fraction

__all__ = ["AnalysisOptions", "analyze", "opd_scale", "SEARCH_BAND_NM"]

#: Peaks down to this fraction of each sweep's strongest enter the speed-diversity alias check
#: (weaker ones are reported as not checked).
ALIAS_CHECK_REL_MIN = 0.02
#: Largest signal-to-reference delay corrected (s); acquisition delays are µs to a few
#: hundred µs (multiplexed ADCs, amplifier bandwidths, sound-card coupling: common practice).
MAX_CHANNEL_DELAY_S = 2e-3


@dataclass(frozen=True)
class AnalysisOptions:
    """Everything the analysis needs besides the record.

    Wavelengths are vacuum values in nm; ratios (uncertainty, allowance) in ppm.
    ``air`` is an :class:`ftsource.physics.air.AirConditions` (default: an unmeasured lab, with its
    wide default uncertainties). ``air_given`` names the conditions the caller stated
    (``"temperature"``, ``"pressure"``, ``"humidity"``); a condition not named there and left
    at its nominal value is taken from the record's ``air_temperature``, ``air_pressure`` or
    ``air_humidity`` metadata when present (stated values win). ``air_uncertainty_given``
    names the conditions whose uncertainty the caller stated (kept for metadata values too).
    ``air_model`` is the equation for the index of air, ``"ciddor"`` (Ciddor 1996, default) or
    ``"edlen"`` (Birch & Downs); it serves the dispersion correction and the budget.
    ``encoder_scale_uncertainty_ppm`` is the relative standard uncertainty of a position
    encoder's scale (``None``: not known, and not in the budget).

    References
    ----------
    .. [1] P. E. Ciddor, Appl. Opt. 35, 1566-1573 (1996).
    .. [2] K. P. Birch and M. J. Downs, Metrologia 30, 155-162 (1993); 31, 315-316 (1994).
    """

    reference_wavelength_nm: float | None = None
    #: The reference's relative standard uncertainty (ppm), or ``reference_uncertainty_nm`` as
    #: a length; with neither, the default of
    #: :func:`ftsource.interferogram.scale.reference_uncertainty` (1.5 ppm for a He-Ne's
    #: vacuum wavelength, a bundled standard's own; else an error).
    reference_uncertainty_ppm: float | None = None
    reference_uncertainty_nm: float | None = None
    alignment_allowance_ppm: float = 0.0
    medium: str = "air"
    air: object | None = None
    air_given: tuple[str, ...] = ()
    air_uncertainty_given: tuple[str, ...] = ()
    air_model: str = "ciddor"
    sample_rate_hz: float | None = None
    mirror_speed_m_s: float | None = None
    apodization: str = "happ-genzel"
    phase_correction: str = "auto"
    fft_planning: str = "estimate"
    zero_fill: int = 4
    bandwidth_fraction: float | None = None
    encoder_scale_uncertainty_ppm: float | None = None
    mirror_speed_uncertainty_ppm: float = 5e4
    calibration: object | None = None
    response: object | None = None
    aperture_diameter_m: float | None = None
    focal_length_m: float | None = None

    def __post_init__(self):
        if self.medium not in ("air", "vacuum"):
            raise OptionError(f"medium must be 'air' or 'vacuum', not {self.medium!r}")
        if self.phase_correction not in ("auto", "mertz", "forman", "magnitude"):
            raise OptionError(
                f"phase_correction {self.phase_correction!r} is not known; use auto, mertz, "
                "forman or magnitude"
            )
        for ref_u in (self.reference_uncertainty_ppm, self.reference_uncertainty_nm):
            if ref_u is not None and not (np.isfinite(ref_u) and ref_u >= 0):
                raise OptionError("reference_uncertainty must be a finite value ≥ 0")
        if not np.isfinite(self.alignment_allowance_ppm):
            raise OptionError("alignment_allowance must be finite")
        if self.air_model not in ("ciddor", "edlen"):
            raise OptionError(
                f"air_model {self.air_model!r} is not known; use ciddor or edlen"
            )
        esu = self.encoder_scale_uncertainty_ppm
        if esu is not None and not (np.isfinite(esu) and esu >= 0):
            raise OptionError("encoder_scale_uncertainty must be a finite value ≥ 0")
        if self.zero_fill < 1:
            raise OptionError("zero_fill must be at least 1")
        from ftsource.spectrum.apodization import get_apodization

        get_apodization(self.apodization)


def _reference_wavelength(record, options: AnalysisOptions) -> float | None:
    if options.reference_wavelength_nm is not None:
        return float(options.reference_wavelength_nm)
    meta = record.metadata.get("reference_wavelength")
    if meta is None:
        return None
    from ftsource.quantity import to_float

    return to_float(meta, "nm", name="reference_wavelength (metadata)")


def opd_scale(record, options: AnalysisOptions):
    """The OPD scale of ``record`` under ``options``
    (:class:`ftsource.interferogram.scale.OpdScale`): its kind, the reference's vacuum
    wavelength (option, else the record's metadata) with its uncertainty, and the rig
    calibration.

    Raises
    ------
    AnalysisError
        When the record has no reference, no position and no mirror speed is given.
    OptionError
        When a reference laser's wavelength or uncertainty is unknown or out of range, or the
        calibration was made with another kind of scale.
    """
    from ftsource.interferogram.scale import (
        HENE_VACUUM_WAVELENGTH_NM,
        OpdKind,
        OpdScale,
        reference_uncertainty,
    )

    src = record.opd_source()
    if src is None and options.mirror_speed_m_s is None:
        raise AnalysisError(
            "the record has no reference channel (ref, or ref_i and ref_q) and no position "
            "column; map one with columns='...', or give mirror_speed to assume a constant speed"
        )
    kind = OpdKind(src or OpdKind.CONSTANT_SPEED)
    lam_ref = _reference_wavelength(record, options)
    if kind.uses_reference_laser and lam_ref is None:
        raise OptionError(
            "the reference wavelength is unknown: give reference_wavelength (vacuum), e.g. "
            f"{HENE_VACUUM_WAVELENGTH_NM}nm for a He-Ne laser"
        )
    lo, hi = REFERENCE_WAVELENGTH_RANGE_NM
    if lam_ref is not None and not lo <= lam_ref <= hi:
        raise OptionError(f"reference_wavelength {lam_ref:g} nm is outside {lo:g}–{hi:g} nm")
    u_rel = 0.0
    if kind.uses_reference_laser:
        ppm = options.reference_uncertainty_ppm
        u_rel, _source = reference_uncertainty(
            lam_ref, relative=None if ppm is None else ppm * 1e-6,
            length_nm=options.reference_uncertainty_nm,
        )
    return OpdScale(kind, lam_ref if kind.uses_reference_laser else None, u_rel,
                    options.calibration)


def _scale_notes(scale, options):
    """What the OPD scale changed or doubts, for the result's warnings, and ``options`` with
    the calibrated mirror speed and the reference's resolved uncertainty: ``(options, notes)``."""
    from ftsource.interferogram.scale import OpdKind, air_wavelength_warning

    notes = []
    if scale.uses_reference_laser:
        air = air_wavelength_warning(scale.reference_wavelength_nm)
        if air:
            notes.append(air + ": give the reference's vacuum wavelength")
    # the one resolved value (0 without a reference laser) for the stages after this one
    options = replace(options, reference_uncertainty_ppm=scale.u_reference_rel * 1e6,
                      reference_uncertainty_nm=None)
    cal = scale.calibration
    if cal is None:
        return options, tuple(notes)
    if scale.uses_reference_laser:
        notes.append(
            "the reference wavelength was replaced by the rig calibration's effective value "
            f"{scale.wavelength_nm:.6f} nm"
        )
    elif scale.kind is OpdKind.ENCODER:
        notes.append(f"the encoder's scale was multiplied by the rig calibration's {cal.scale:.9f}")
    else:
        speed = options.mirror_speed_m_s * scale.factor
        notes.append(
            f"the assumed mirror speed was replaced by the rig calibration's {speed:.6g} m/s "
            f"({cal.scale:.6f} × the stated one)"
        )
        options = replace(options, mirror_speed_m_s=speed)
    return options, tuple(notes)


def _optical_path(record, options, fs, scale):
    from ftsource.interferogram import opd
    from ftsource.interferogram.scale import OpdKind

    cols = record.columns
    if scale.kind is OpdKind.QUADRATURE:
        return opd.opd_from_quadrature(cols["ref_i"], cols["ref_q"], fs, scale.wavelength_nm)
    if scale.kind is OpdKind.SINGLE:
        return opd.opd_from_single(cols["ref"], fs, scale.wavelength_nm)
    if scale.kind is OpdKind.ENCODER:
        return opd.opd_from_position(record.position_m * scale.factor, fs)
    return opd.opd_from_constant_speed(record.n_samples, fs, options.mirror_speed_m_s)


def _encoder_notes(options) -> tuple[str, ...]:
    """Say which of an encoder's scale uncertainty and cosine/Abbe allowance the budget lacks
    (a rig calibration covers both: it measured the scale with the alignment in place)."""
    if options.calibration is not None:
        return ()
    scale = options.encoder_scale_uncertainty_ppm is None
    abbe = options.alignment_allowance_ppm == 0
    if scale and abbe:
        return (
            "the OPD scale comes from a position encoder: its scale uncertainty and any "
            "cosine/Abbe error are not known to ftsource and are not in the budget; give "
            "encoder_scale_uncertainty and alignment_allowance",
        )
    if scale:
        return (
            "the OPD scale comes from a position encoder: its scale uncertainty is not known "
            "to ftsource and is not in the budget, which is then too small; give "
            "encoder_scale_uncertainty",
        )
    if abbe:
        return (
            "the OPD scale comes from a position encoder: any cosine/Abbe error is not in the "
            "budget; give alignment_allowance",
        )
    return ()


_AIR_KEYS = (  # condition, metadata key, physical type, AirConditions field
    ("temperature", "air_temperature", "temperature", "temperature_c"),
    ("pressure", "air_pressure", "pressure", "pressure_pa"),
    ("humidity", "air_humidity", "dimensionless", "humidity_percent"),
)


def _air_conditions(record, options):
    """``options`` with the air of the analysis: the caller's stated conditions, else the
    record's ``air_*`` metadata, else the nominal laboratory
    (:class:`ftsource.physics.air.AirConditions`).

    A value from metadata gets the caller's stated uncertainty for it, or else
    :data:`ftsource.physics.air.MEASURED_UNCERTAINTY`; it then counts as given (``air_given``).
    Returns ``(options, notes)``.
    """
    if options.medium != "air":
        return options, ()
    import astropy.units as u

    from ftsource.errors import RecordError
    from ftsource.physics.air import MEASURED_UNCERTAINTY, UNMEASURED_UNCERTAINTY, AirConditions

    air = options.air or AirConditions()
    nominal = AirConditions()
    values, taken = {}, []
    for cond, key, ptype, fld in _AIR_KEYS:
        if cond in options.air_given or getattr(air, fld) != getattr(nominal, fld):
            continue  # stated by the caller: it wins
        if cond == "humidity":
            q = _metadata_humidity(record, key)
        else:
            q = record.metadata_quantity(key, ptype)
        if q is None:
            continue
        try:
            if ptype == "temperature":
                v = float(q.to_value(u.deg_C, equivalencies=u.temperature()))
            else:
                v = float(q.to_value(u.Pa if ptype == "pressure" else u.percent))
        except u.UnitsError:
            raise RecordError(f"{record.path}: metadata {key} = {q} is not usable") from None
        values[fld] = v
        stated = cond in options.air_uncertainty_given or (
            getattr(air, "u_" + fld) != UNMEASURED_UNCERTAINTY[fld]
        )
        values["u_" + fld] = getattr(air, "u_" + fld) if stated else MEASURED_UNCERTAINTY[fld]
        taken.append(f"{key} = {record.metadata[key]}")
    given = set(options.air_given) | {c for c, _, _, f in _AIR_KEYS if f in values}
    missing = [c for c in options.air_uncertainty_given
               if c in ("temperature", "pressure", "humidity") and c not in given]
    if missing:
        raise OptionError(
            f"air_{missing[0]}_uncertainty was given without air_{missing[0]}, and the "
            f"record's metadata has no 'air_{missing[0]}': give the value it belongs to"
        )
    notes = ()
    if values:
        try:
            air = replace(air, **values)
        except OptionError as exc:
            raise RecordError(f"{record.path}: the air conditions of its metadata: {exc}") from None
        notes = ("air conditions from the record's metadata: " + ", ".join(taken)
                 + " (command-line values win)",)
    return replace(options, air=air, air_given=tuple(sorted(given))), notes


def _index_factor(sigma, scale, options):
    """σ_vac/σ_apparent = n_scale/n(σ) for the medium (1 in vacuum), by ``options.air_model``;
    n_scale is the index at the reference laser's wavelength (1 for a geometric scale).

    The air equations hold for 300–1700 nm (:data:`ftsource.physics.air.WAVELENGTH_RANGE_NM`);
    beyond, the index at the nearer end is used. The axis covers far more than the lines, so
    this is silent here: :func:`ftsource.measure.budget.air_range_notes` warns for each
    reported line outside the range.
    """
    if options.medium == "vacuum":
        return np.ones_like(sigma)
    from ftsource.physics.air import WAVELENGTH_RANGE_NM, air_index

    model = options.air_model
    wl = np.clip(1e7 / np.maximum(sigma, 1.0), *WAVELENGTH_RANGE_NM)
    uniq = np.geomspace(wl.min(), wl.max(), 256) if wl.size > 256 else wl
    n_at = air_index(uniq, options.air, model=model)
    n = np.interp(wl, uniq, n_at) if wl.size > 256 else n_at
    n_scale = (
        float(air_index(scale.wavelength_nm, options.air, model=model))
        if scale.uses_reference_laser else 1.0
    )
    return n_scale / n


def analyze(record, options: AnalysisOptions | None = None, *, planner=None, **parameters):
    """Characterize the source in ``record``.

    Every stage returns its notes (what the data could not support, and what to change) with
    its result; they are gathered in order, issued once each as
    :class:`~ftsource.errors.AnalysisWarning` (a :class:`~ftsource.errors.FtsourceWarning`)
    and kept in ``Result.warnings``.

    Parameters
    ----------
    record : ftsource.io.records.Record, str or path-like
        The samples, or a record file (``.csv``/``.tsv``/``.txt``/``.dat``, ``.npz``,
        ``.wav``) read with :func:`ftsource.io.records.read_record`. They hold ``signal`` and
        a reference (``ref_i``/``ref_q``, ``ref`` or ``position``).
    options : AnalysisOptions, optional
        All options as one object (plain floats in the units of its field names); or give
        them as keyword ``parameters`` instead.
    planner : ftsource.spectrum.transform.FFTPlanner, optional
        Reuse FFT plans across calls (e.g. over several records).
    **parameters
        The options as keywords with units (:data:`ftsource.parameters.PARAMETERS`):
        astropy Quantities or text such as ``reference_wavelength=632.991 * u.nm``,
        ``air_temperature="21 degC"``, ``air_pressure=1013 * u.hPa``, ``air_humidity="45%"``,
        ``reference_uncertainty="1.5 ppm"``, ``medium="vacuum"``; ``columns`` maps the
        columns of a record file.

    Returns
    -------
    ftsource.result.Result
        Its figures are also astropy Quantities (``result.centre_wavelength``, ...);
        ``result.to_dict()`` is the JSON.

    Raises
    ------
    AnalysisError
        When the record cannot support any spectrum (no fringes, no sweep, no reference).
    OptionError
        For missing, inconsistent or badly written options (e.g. no reference wavelength, a
        value without its unit), naming the parameter.
    RecordError
        When a record file cannot be read.

    Examples
    --------
    >>> import astropy.units as u
    >>> import ftsource
    >>> result = ftsource.analyze("scan.csv", reference_wavelength=632.991 * u.nm,
    ...                           medium="air", air_temperature=21 * u.deg_C)  # doctest: +SKIP
    >>> result.centre_wavelength  # doctest: +SKIP
    <Quantity 532.18 nm>
    """
    options, record = _inputs(record, options, parameters)
    setup = _setup(record, options)
    sampling = _sampling(record, setup)
    sweeps = _sweeps(record, setup, sampling)
    spectra = _spectra(setup, sampling, sweeps, planner)
    lines = _lines(record, setup, sampling, spectra)
    del spectra  # lines.spectra supersedes it (outlier sweeps removed): let it go
    result = _result(record, setup, sampling, lines.spectra, lines)
    for msg in result.warnings:
        _warnings.warn(msg, AnalysisWarning, stacklevel=2)
    return result


def _inputs(record, options, parameters):
    """The options (from ``options`` or keyword ``parameters``) and the record (read from a
    file when a path is given)."""
    import os

    from ftsource.io.records import Record, read_record

    columns = parameters.pop("columns", None)
    if parameters:
        if options is not None:
            raise OptionError(
                "give the options either as options=AnalysisOptions(...) or as keyword "
                f"parameters, not both (got options and {', '.join(sorted(parameters))})"
            )
        from ftsource.parameters import option_fields

        options = AnalysisOptions(**option_fields(**parameters))
    options = options if options is not None else AnalysisOptions()
    if not isinstance(options, AnalysisOptions):
        raise OptionError(f"options must be an AnalysisOptions, not {type(options).__name__}")
    if isinstance(record, (str, os.PathLike)):
        record = read_record(record, columns=columns, sample_rate=options.sample_rate_hz)
    elif not isinstance(record, Record):
        raise OptionError(
            f"record must be a Record or the path of a record file, not {type(record).__name__}"
        )
    elif columns is not None:
        raise OptionError("columns applies to a record file; this record is read already")
    return options, record


@dataclass(frozen=True)
class _Setup:
    """The options as the analysis uses them (air and calibration applied), the sample rate,
    the OPD scale's kind and the reference wavelength."""

    options: AnalysisOptions
    sample_rate_hz: float
    scale: object  # ftsource.interferogram.scale.OpdScale
    notes: tuple[str, ...]

    @property
    def opd_kind(self):
        """The OPD scale's :class:`~ftsource.interferogram.scale.OpdKind`."""
        return self.scale.kind

    @property
    def reference_wavelength_nm(self) -> float | None:
        """The reference laser's vacuum wavelength in use (calibrated), None without one."""
        return self.scale.wavelength_nm


@dataclass(frozen=True)
class _Sampling:
    """The optical path, the sampling limits and the bandwidth fraction they assume."""

    path: object
    limits: object
    bandwidth_fraction: float
    notes: tuple[str, ...]


@dataclass(frozen=True)
class _Sweeps:
    """The resampled sweeps kept for the spectrum, the channel delay corrected (or None) and
    the sweeps left out with why."""

    interferograms: tuple
    channel_delay: object | None
    rejected: tuple[tuple[int, str], ...]
    notes: tuple[str, ...]


@dataclass(frozen=True)
class _Spectra:
    """The sweeps' spectra, their co-added spectrum (vacuum axis) and the axes behind it."""

    sweep_spectra: tuple
    interferograms: tuple
    spectrum: object
    sigma_apparent: np.ndarray
    index_factor: np.ndarray
    rejected: tuple[tuple[int, str], ...]
    channel_delay: object | None
    notes: tuple[str, ...]


@dataclass(frozen=True)
class _Lines:
    """Lines found, why each is not a source line (None when it is), their aliasing verdicts,
    and the spectrum and sweeps they were found in (outlier sweeps removed, field of view
    corrected)."""

    found: tuple
    flags: tuple
    aliasing: tuple
    alias_band: object
    source_lines: tuple
    field_of_view_factor: float
    spectra: _Spectra
    sweep_fits: dict
    notes: tuple[str, ...]
    #: how much the fringe envelope changes across a sweep when no sweep holds ZPD
    #: (:func:`ftsource.measure.width.decay_without_zpd`; None when one does)
    envelope_decay: float | None = None

    @staticmethod
    def decays(decay: float | None) -> bool:
        """Whether an envelope change ``decay`` means the envelope decays across sweeps without
        ZPD: the lines' magnitude shapes are then not the instrument's, so their widths are not
        reported (docs/measurements.md, "Width bounds without ZPD")."""
        from ftsource.measure.coherence import ENVELOPE_DECAY_LIMIT

        return decay is not None and decay > ENVELOPE_DECAY_LIMIT

    @property
    def envelope_decays(self) -> bool:
        """:meth:`decays` of this result's sweeps."""
        return self.decays(self.envelope_decay)


def _setup(record, options) -> _Setup:
    """Air conditions, sample rate, the OPD scale's kind, the reference wavelength and the
    rig calibration, checked."""
    options, notes = _air_conditions(record, options)
    fs = options.sample_rate_hz or record.sample_rate_hz
    if not fs:
        raise OptionError(
            "the sample rate is unknown: the record has no time column and no sample_rate "
            "metadata; give sample_rate"
        )
    scale = opd_scale(record, options)
    options, scale_notes = _scale_notes(scale, options)
    return _Setup(options, fs, scale, notes + scale_notes)


def _sampling(record, setup: _Setup) -> _Sampling:
    """The optical path from the reference and the limits of the time sampling."""
    from ftsource.interferogram import channels, resample
    from ftsource.interferogram.scale import OpdKind

    options, fs, scale = setup.options, setup.sample_rate_hz, setup.scale
    # refuse at once what cannot give a spectrum (a dead source channel, an undersampled
    # reference) rather than after the whole chain
    channels.check_signal_channel(record.columns["signal"])
    if scale.uses_reference_laser:
        channels.check_reference_sampling(
            record.columns, scale.kind.value, fs, scale.fringe_wavelength_nm
        )
    path = _optical_path(record, options, fs, scale)
    notes = tuple(path.warnings)
    if scale.kind is OpdKind.ENCODER:
        notes += _encoder_notes(options)
    if record.source_format == "wav":
        beta = options.bandwidth_fraction or resample.BANDWIDTH_FRACTION_SOUND_CARD
    else:
        beta = options.bandwidth_fraction or resample.BANDWIDTH_FRACTION_ADC
    limits = resample.sampling_limits(path, fs, scale.fringe_wavelength_nm,
                                      bandwidth_fraction=beta)
    return _Sampling(path, limits, beta, notes)


def _sweeps(record, setup: _Setup, sampling: _Sampling) -> _Sweeps:
    """The signal resampled on the uniform OPD grid, sweep by sweep, after the channel delay
    (when significant) is corrected; partial sweeps left out."""
    from ftsource.interferogram import resample

    path, dx, fs = sampling.path, sampling.limits.dx_cm, setup.sample_rate_hz
    signal = record.columns["signal"]
    ifgs = resample.resample_sweeps(signal, path, dx)
    delay, notes = _channel_delay(ifgs, path, fs, setup.opd_kind)
    if delay is not None:
        from ftsource.interferogram.delay import shift_time_for_delay

        ifgs = resample.resample_sweeps(shift_time_for_delay(signal, delay.delay_s, fs), path, dx)
    rejected = []
    # partial sweeps (the record's first and last) would loosen the resolution of the co-add
    spans = np.array([ig.span_cm for ig in ifgs])
    if len(ifgs) >= 3:
        med = float(np.median(spans))
        keep = spans >= 0.5 * med
        for ig, k in zip(ifgs, keep, strict=False):
            if not k:
                rejected.append((ig.sweep.index, f"partial sweep: {ig.span_cm * 10:.3f} mm of OPD, "
                                 f"less than half the median {med * 10:.3f} mm"))
        ifgs = tuple(ig for ig, k in zip(ifgs, keep, strict=False) if k)
    return _Sweeps(tuple(ifgs), delay, tuple(rejected), notes)


def _spectra(setup: _Setup, sampling: _Sampling, sweeps: _Sweeps, planner) -> _Spectra:
    """Each sweep's phase-corrected, apodized spectrum and their co-added spectrum on the
    vacuum wavenumber axis (the medium's index removed)."""
    from ftsource.spectrum import spectrum
    from ftsource.spectrum.transform import FFTPlanner, next_fft_length

    options, ifgs = setup.options, sweeps.interferograms
    planner = planner or FFTPlanner(effort=options.fft_planning)
    n_fft = next_fft_length(options.zero_fill * max(ig.y.size for ig in ifgs))
    sweep_specs = [
        spectrum.sweep_spectrum(ig, n_fft, apodization=options.apodization,
                                phase_correction=options.phase_correction, planner=planner)
        for ig in ifgs
    ]
    sweep_specs, revivals = _check_zpd_across_sweeps(sweep_specs, ifgs)
    rejected, notes = sweeps.rejected, ()
    if revivals:
        # a burst another sweep over the same path shows to be weaker than one elsewhere
        # is a revival, not ZPD: such sweeps are left out (the others' ZPD is measured)
        sweep_specs = [s for s in sweep_specs if s.sweep_index not in revivals]
        ifgs = tuple(ig for ig in ifgs if ig.sweep.index not in revivals)
        rejected += tuple(
            (i, "its strongest burst is a coherence revival, not zero path difference (a "
                "sweep over the same path sees a stronger burst elsewhere)")
            for i in sorted(revivals))
        notes += (
            f"{len(revivals)} sweep(s) hold a coherence revival but not zero path difference "
            "(another sweep over the same path sees a stronger burst elsewhere): they were "
            "left out, so that the maximum path difference and the resolution count from "
            "zero path difference",
        )
    if any(s.zpd_found for s in sweep_specs) and not all(s.zpd_found for s in sweep_specs):
        # a magnitude spectrum of a sweep that misses ZPD does not mix with phase-corrected
        # ones (different line shapes and noise): keep the sweeps through ZPD
        dropped = [s.sweep_index for s in sweep_specs if not s.zpd_found]
        rejected += tuple((i, "does not reach zero path difference (other sweeps do)")
                          for i in dropped)
        sweep_specs = [s for s in sweep_specs if s.zpd_found]
        ifgs = tuple(ig for ig in ifgs if ig.sweep.index not in dropped)
        notes += (
            f"{len(dropped)} sweep(s) that do not reach zero path difference were left out "
            "(the others do, and give phase-corrected spectra)",
        )
    sweep_specs, ifgs, dropped_glass = _dispersion_sweeps(sweep_specs, ifgs)
    rejected += dropped_glass
    notes += _burst_notes(sweep_specs)
    sigma_app = np.arange(n_fft // 2 + 1) / (n_fft * sampling.limits.dx_cm)
    factor = _index_factor(sigma_app, setup.scale, options)
    spec = spectrum.coadd(sweep_specs, sigma_app, options.apodization).with_axis(
        sigma_app * factor)
    if not any(s.zpd_found for s in sweep_specs):
        notes += (
            "zero path difference could not be located in any sweep (no centre burst: a "
            "narrow line keeps its fringe contrast over the whole scan, so its centre burst "
            "cannot be seen even when the scan crosses equal arms, and a broad source shows "
            "none when the scan misses it): magnitude spectra were used, so line shapes are "
            "only approximate and the maximum path difference (and resolution) is that of half "
            "of each sweep's span",
        )
    return _Spectra(tuple(sweep_specs), ifgs, spec, sigma_app, factor, rejected,
                    sweeps.channel_delay, sweeps.notes + notes)


def _dispersion_sweeps(sweep_specs, ifgs):
    """Leave out the sweeps through ZPD whose phase missed the dispersion treatment when
    others got it (:func:`ftsource.spectrum.spectrum.dispersed_mertz`): with unequal glass,
    such a sweep's chirped burst runs off its short side (a partial sweep), and its Mertz
    spectrum is distorted though its short double-sided part shows no residual. Returns the
    sweeps kept, their interferograms and the ``(index, reason)`` of those left out."""
    treated = [np.isfinite(s.dispersion_cm2) for s in sweep_specs]
    drop = {s.sweep_index for s, t in zip(sweep_specs, treated, strict=True)
            if s.zpd_found and not t}
    if not any(treated) or not drop:
        return sweep_specs, ifgs, ()
    rejected = tuple((i, "the chirped centre burst (unequal glass in the arms) runs off this "
                      "sweep's short side: its phase cannot be corrected") for i in sorted(drop))
    return ([s for s in sweep_specs if s.sweep_index not in drop],
            tuple(ig for ig in ifgs if ig.sweep.index not in drop), rejected)


def _metadata_humidity(record, key):
    """The record's humidity metadata in percent (bare numbers above 1 are percent,
    :func:`ftsource.quantity.parse_humidity`), or None when absent."""
    from ftsource.errors import RecordError
    from ftsource.quantity import parse_humidity

    if key not in record.metadata:
        return None
    try:
        return parse_humidity(record.metadata[key], name=f"{record.path}: metadata {key}")
    except OptionError as exc:
        raise RecordError(str(exc)) from None


def _lines(record, setup: _Setup, sampling: _Sampling, spectra: _Spectra) -> _Lines:
    """Lines of the spectrum (outlier sweeps removed and the spectrum co-added again), each
    flagged when it is not the source's (ghost, alias), and the field-of-view correction."""
    from ftsource.lines import fitting
    from ftsource.measure.width import decay_without_zpd
    from ftsource.spectrum import spectrum

    limits, options = sampling.limits, setup.options
    spec, sigma_app, factor = spectra.spectrum, spectra.sigma_apparent, spectra.index_factor
    band = (1e7 / SEARCH_BAND_NM[1],
            min(1e7 / SEARCH_BAND_NM[0], 0.98 * limits.grid_nyquist_per_cm))
    # a resolved line whose coherence ends inside sweeps without ZPD has 1/δ magnitude wings
    decay = decay_without_zpd(spectra.interferograms, spectra.sweep_spectra)
    found = fitting.find_lines(spec, band_per_cm=band,
                               envelope_decays=_Lines.decays(decay))
    sweep_fits: dict = {}  # per-sweep fits of the main line, shared with the sweep check
    outliers, notes = _sweep_outliers(spec, spectra.sweep_spectra, found, sweep_fits)
    if outliers:
        bad = {i for i, _ in outliers}
        sweep_specs = tuple(s for s in spectra.sweep_spectra if s.sweep_index not in bad)
        spec = spectrum.coadd(sweep_specs, sigma_app, options.apodization).with_axis(
            sigma_app * factor)
        spectra = replace(
            spectra, sweep_spectra=sweep_specs, spectrum=spec,
            interferograms=tuple(ig for ig in spectra.interferograms
                                 if ig.sweep.index not in bad),
            rejected=spectra.rejected + tuple(outliers),
        )
        decay = decay_without_zpd(spectra.interferograms, spectra.sweep_spectra)
        found = fitting.find_lines(spec, band_per_cm=band,
                                   envelope_decays=_Lines.decays(decay))
    sigma_alias = 1e7 / limits.min_wavelength_nm
    flags, flag_notes = _flag_lines(found, setup.reference_wavelength_nm, sigma_alias,
                                    setup.opd_kind, record,
                                    _wobble_spread(sampling.path, setup.sample_rate_hz))
    alias_band, aliasing = _aliasing(
        found, spec, spectra.sweep_spectra, spectra.interferograms, sampling.path,
        setup.sample_rate_hz, sampling.bandwidth_fraction, sigma_app, factor, sigma_alias,
    )
    flags = [
        "alias" if fl is None and a.verdict == "alias" else fl
        for fl, a in zip(flags, aliasing, strict=True)
    ]
    source_lines = [f for f, fl in zip(found, flags, strict=True) if fl is None]
    notes += _wobble_notes(source_lines, sampling.path, setup.sample_rate_hz,
                           spec.resolution_per_cm)
    fov = _field_of_view_factor(source_lines, options)
    if fov != 1.0:
        spectra = replace(spectra, spectrum=spec.with_axis(spec.sigma_per_cm * fov))
        found = [_rescale_line(f, fov) for f in found]
        source_lines = [f for f, fl in zip(found, flags, strict=True) if fl is None]
    notes += _pair_notes(source_lines)
    return _Lines(tuple(found), tuple(flags), tuple(aliasing), alias_band, tuple(source_lines),
                  fov, spectra, sweep_fits, notes + flag_notes, decay)


def _result(record, setup: _Setup, sampling: _Sampling, spectra: _Spectra, lines: _Lines):
    """Measure the source from its lines and gather every stage's figures and notes."""
    from ftsource.lines.aliasing import alias_notes
    from ftsource.measure import facts
    from ftsource.measure.budget import reference_uncertainty_ppm
    from ftsource.measure.figures import source_figures
    from ftsource.result import Result

    options, path, limits = setup.options, sampling.path, sampling.limits
    spectra = lines.spectra
    spec, sweep_specs = spectra.spectrum, spectra.sweep_spectra
    ref_u_ppm = reference_uncertainty_ppm(options)
    main = max(lines.source_lines, key=lambda f: f.area) if lines.source_lines else None
    inp, input_notes = facts.input_facts(
        record, options, opd_kind=path.kind, reference_wavelength_nm=setup.reference_wavelength_nm,
        reference_uncertainty_ppm=ref_u_ppm,
    )
    health, health_notes = facts.health_facts(record, path, sweep_specs)
    from functools import partial

    from ftsource.measure.budget import line_budget

    # weak lines off a multimode laser's comb are artefacts, not source lines
    from ftsource.measure.classify import classify_source

    flags, source_lines, comb_notes = list(lines.flags), list(lines.source_lines), ()
    comb = classify_source(source_lines).comb
    off = comb.off_comb_per_cm if comb is not None else ()
    if off:
        flags = ["off-comb" if fl is None and f.centre_per_cm in off else fl
                 for f, fl in zip(lines.found, flags, strict=True)]
        source_lines = [f for f in source_lines if f.centre_per_cm not in off]
        comb_notes = (
            f"{len(off)} weak line(s) lie off the laser's mode comb: they are flagged "
            "'off-comb' and not counted as source lines (scan artefacts, ghosts or a weak "
            "second source; check the setup if they persist)",
        )
    reports, line_notes = facts.line_reports(
        lines.found, flags, lines.aliasing, options=options,
        reference_uncertainty_ppm=ref_u_ppm, main=main, widths=not lines.envelope_decays,
        budget=partial(line_budget, opd_kind=path.kind, options=options,
                       reference_wavelength_nm=setup.reference_wavelength_nm,
                       field_of_view_factor=lines.field_of_view_factor),
    )
    line_notes = tuple(line_notes) + comb_notes
    figures = source_figures(
        spec, source_lines, sweep_specs, spectra.interferograms, options=options,
        opd_kind=path.kind, reference_wavelength_nm=setup.reference_wavelength_nm,
        field_of_view_factor=lines.field_of_view_factor, sweep_fit_cache=lines.sweep_fits,
        envelope_decay=lines.envelope_decay,
    )
    scan = _scan_health(record, setup, sampling, spectra, figures.kind, source_lines)
    glass, glass_notes = facts.glass_facts(sweep_specs, main)
    notes = (setup.notes + sampling.notes + spectra.notes + lines.notes + input_notes
             + health_notes + glass_notes + line_notes + figures.notes
             + alias_notes(main, limits.min_wavelength_nm, lines.alias_band)
             + _safety_notes(lines.source_lines))
    return Result(
        input=inp,
        processing=facts.processing_facts(options, path, limits, sweep_specs, spectra.rejected,
                                          spectra.channel_delay, glass),
        instrument=facts.instrument_facts(spec, limits, main, options.apodization),
        figures=figures,
        lines=reports,
        health=health,
        scan_health=scan,
        warnings=tuple(dict.fromkeys(n for n in notes if n)),
        spectrum=spec,
        interferograms=tuple(spectra.interferograms),
        plot=_plot_data(record, setup, sampling, lines, flags, source_lines, figures),
    )


def _scan_health(record, setup: _Setup, sampling: _Sampling, spectra: _Spectra, kind: str,
                 source_lines):
    """The scan-health stage (:func:`ftsource.measure.health.scan_health`)."""
    from ftsource.measure.health import scan_health

    path, limits = sampling.path, sampling.limits
    signal = record.columns["signal"]
    main = max(source_lines, key=lambda f: f.area) if source_lines else None
    return scan_health(
        signal, _reference_channels(record, setup), path.opd_cm, path.sweeps,
        spectra.interferograms, setup.sample_rate_hz,
        opd_kind=path.kind.value, used_sweeps={s.sweep_index for s in spectra.sweep_spectra},
        dropouts=path.dropouts,
        samples_per_reference_fringe=limits.samples_per_reference_fringe,
        min_wavelength_nm=limits.min_wavelength_nm, source_kind=kind,
        main_snr=None if main is None else main.snr,
        shortest_line_nm=min((f.wavelength_nm for f in source_lines), default=None),
        clipped_fraction=clipped_fraction(signal),
    )


def _reference_channels(record, setup: _Setup) -> list:
    """The reference laser's detector columns (none for an encoder or an assumed speed)."""
    if not setup.scale.uses_reference_laser:
        return []
    return [record.columns[c] for c in ("ref_i", "ref_q", "ref") if c in record.columns]


def _plot_data(record, setup: _Setup, sampling: _Sampling, lines: _Lines, flags, source_lines,
               figures):
    """What the figures need (:func:`ftsource.measure.plotdata.plot_data`)."""
    from ftsource.lines.sweeps import sweep_line_centres
    from ftsource.measure.plotdata import plot_data, spectrum_band

    path, limits, spectra = sampling.path, sampling.limits, lines.spectra
    spec, sweep_specs, ifgs = spectra.spectrum, spectra.sweep_spectra, spectra.interferograms
    main = max(source_lines, key=lambda f: f.area) if source_lines else None
    band = spectrum_band(
        spec.sigma_per_cm, spec.density, spec.noise, spec.resolution_per_cm,
        line_centres_per_cm=[f.centre_per_cm for f in lines.found],
        min_wavelength_nm=limits.min_wavelength_nm, zero_fill=1,  # every point: peaks drawn whole
    )
    centres = []
    if main is not None and len(sweep_specs) >= 2:
        try:
            fits = sweep_line_centres(spec, sweep_specs, main.centre_per_cm,
                                      cache=lines.sweep_fits)
        except (AnalysisError, ValueError):
            fits = []
        centres = [(i, 1e7 / c, 1e7 * u / c**2) for i, c, u in fits
                   if np.isfinite(c) and c > 0]
    zpd = [(ig, s.x_zpd_cm) for ig, s in zip(ifgs, sweep_specs, strict=False) if s.zpd_found]
    zpd_ig, zpd_x = zpd[0] if zpd else (ifgs[0] if ifgs else None, None)
    budget = figures.budget
    refs = _reference_channels(record, setup)
    return plot_data(
        signal=record.columns["signal"], sample_rate_hz=setup.sample_rate_hz,
        reference=refs[0] if refs else None, opd_cm=path.opd_cm, sweeps=path.sweeps,
        used={s.sweep_index for s in sweep_specs}, interferogram=zpd_ig, zpd_x_cm=zpd_x,
        spectrum=spec, band_index=band.index,
        lines=[(f.wavelength_nm, fl is not None) for f, fl in zip(lines.found, flags,
                                                                   strict=True)],
        main_centre_per_cm=None if main is None else main.centre_per_cm,
        sweep_centres=centres,
        mean_nm=None if main is None else main.wavelength_nm,
        u_mean_nm=None if main is None else 1e7 * main.u_centre_per_cm / main.centre_per_cm**2,
        budget=() if budget is None else [(c.name, c.u) for c in budget.components],
    )


def _safety_notes(source_lines) -> tuple[str, ...]:
    """The green-pointer caution when a source line is green, and an alarm for each infrared
    line found with it (:func:`ftsource.safety.green_pointer_warning`)."""
    from ftsource.safety import green_pointer_warning

    for ln in source_lines:
        w = green_pointer_warning(ln.wavelength_nm)
        if not w:
            continue
        ir = [f for f in source_lines if 800.0 <= f.wavelength_nm <= 815.0
              or 1060.0 <= f.wavelength_nm <= 1068.0]
        if not ir:  # the general caution: nothing found does not rule a leak out
            return (w,)
        return tuple(
            f"INFRARED FOUND: a line at {f.wavelength_nm:.2f} nm (invisible) comes with the "
            "green light — the pointer is a diode-pumped, frequency-doubled laser that leaks "
            "pump or fundamental light; its infrared power is not measured here and may exceed "
            "the green's: do not rely on the visible brightness"
            for f in ir
        )
    return ()


def _check_zpd_across_sweeps(sweep_specs, ifgs):
    """Sweep spectra whose ZPD another sweep of the same stretch of reference contradicts
    (:func:`ftsource.interferogram.zpd.conflicting_zpd`) marked ambiguous: it may be a
    coherence revival seen in a sweep that does not reach the true ZPD. Returns them with the
    indices of the sweeps whose burst is known to be a revival (contradicted by a sweep whose
    own burst stands clearly above all others)."""
    from ftsource.interferogram.zpd import conflicting_zpd

    by_index = {ig.sweep.index: ig for ig in ifgs}
    igs = [by_index[s.sweep_index] for s in sweep_specs]
    if len(igs) < 2:
        return sweep_specs, frozenset()
    spans = [ig.span_cm for ig in igs]
    args = (
        [s.x_zpd_cm if s.zpd_found else np.nan for s in sweep_specs],
        [ig.sweep.segment for ig in igs],
        [(ig.x0_cm, ig.x0_cm + ig.span_cm) for ig in igs],
        [s.peak_cm for s in sweep_specs],
    )
    tol = 0.05 * float(np.median(spans))
    bad = conflicting_zpd(*args, tolerance_cm=tol)
    known = conflicting_zpd(*args, tolerance_cm=tol,
                            clear=[s.zpd_found and not s.zpd_ambiguous for s in sweep_specs])
    revivals = frozenset(s.sweep_index for s, k in zip(sweep_specs, known, strict=True) if k)
    return [replace(s, zpd_ambiguous=True) if b else s
            for s, b in zip(sweep_specs, bad, strict=True)], revivals


def _wobble_notes(source_lines, path, fs, resolution_per_cm) -> tuple[str, ...]:
    """Name the weak lines that sit where an uneven mirror speed would put artefacts
    (:mod:`ftsource.interferogram.wobble`)."""
    from ftsource.interferogram.wobble import (
        ARTEFACT_LEVEL,
        WOBBLE_NOTE_DEPTH,
        artefact_offsets,
        speed_wobble,
    )

    if len(source_lines) < 2:
        return ()
    wob = speed_wobble(path.opd_cm, path.sweeps, fs)
    offsets = artefact_offsets(wob)
    if wob.depth < WOBBLE_NOTE_DEPTH or not offsets.size:
        return ()
    main = max(source_lines, key=lambda f: f.area)
    suspect = [
        f for f in source_lines
        if f is not main and f.area < ARTEFACT_LEVEL * main.area
        and np.min(np.abs(abs(f.centre_per_cm - main.centre_per_cm) - offsets))
        < 2 * resolution_per_cm
    ]
    if not suspect:
        return ()
    where = ", ".join(f"{1e7 / f.centre_per_cm:.3f} nm" for f in suspect)
    return (
        f"the mirror speed varies by ±{wob.depth:.0%} with a period of "
        f"{wob.period_cm * 10:.3g} mm of path; the weak line(s) at {where} sit where that "
        f"wobble puts artefacts beside the main line (±{offsets[0]:.3g} cm⁻¹ and multiples) "
        f"and are weaker than {ARTEFACT_LEVEL:g} of it: they may be artefacts of the scan, not "
        "side modes. Drive the mirror more evenly, or record again at another speed: an "
        "artefact moves with the wobble, a side mode does not",
    )


def _pair_notes(source_lines) -> tuple[str, ...]:
    """Say which lines may be two close lines (``pair_possible``), where the pair would be,
    and what would separate them (docs/measurements.md, "Unresolved pair possible" and "Close
    pairs on a magnitude spectrum")."""
    out = []
    for f in source_lines:
        if not f.pair_possible:
            continue
        here = f"the line at {1e7 / f.centre_per_cm:.4f} nm may be two close lines"
        if f.magnitude_pair:
            a, b = sorted((1e7 / f.magnitude_pair[1], 1e7 / f.magnitude_pair[3]))
            # the pair model's own error on rig-like records (harmonics, quantisation, speed
            # wobble, rounded turnarounds) reached 0.05 of a resolution element
            # (tests/test_resolved_lines.py): a tenth is stated
            tol = 0.1 * 1e7 * f.instrument_fwhm_per_cm / f.centre_per_cm**2
            out.append(
                f"{here}: two unresolved lines near {a:.4f} and {b:.4f} nm (each within about "
                f"±{tol:.2g} nm, a tenth of a resolution element) fit its magnitude "
                "spectrum clearly better than one (without zero path difference in the sweeps "
                "their responses interfere, and no subtraction separates them), so it is "
                "reported as one line whose uncertainty spans both. Scan through zero path "
                "difference (equal arm lengths) and lengthen the mirror travel to measure them "
                "as two lines"
            )
        else:
            out.append(
                f"{here}: a pair of unresolved lines fits the spectrum as well as one broad "
                "line, so its width may be their separation. Lengthen the mirror travel to "
                "tell one from two"
            )
    return tuple(out)


def _burst_notes(sweep_specs) -> tuple[str, ...]:
    """Say when the burst used as a sweep's phase reference may be a coherence revival (or a
    beat maximum of close lines) rather than zero path difference."""
    amb = [s for s in sweep_specs if s.zpd_found and s.zpd_ambiguous]
    if not amb:
        return ()
    spacings = [s.burst_spacing_cm for s in amb if np.isfinite(s.burst_spacing_cm)]
    L_mm = float(np.median([s.L_cm for s in amb])) * 10
    if spacings:
        d_mm = float(np.median(spacings)) * 10
        apart = (f", {d_mm:.4g} mm of path apart (coherence revivals of a multimode laser whose "
                 f"modes are {10 / d_mm:.4g} cm⁻¹ apart, or the beat of close lines)")
    else:
        apart = (" (seen in this sweep or, cut by its end, in another sweep over the same "
                 "path: a coherence revival of a multimode laser, or the beat of close lines)")
    return (
        f"{len(amb)} sweep(s) hold several bursts of nearly equal height{apart}: the strongest "
        "served as the phase reference, but it may be a revival rather than zero path "
        "difference. Line "
        f"positions do not depend on it; the maximum path difference ({L_mm:.4g} mm) and the "
        "resolution count from that burst, and widths and coherence lengths that take it "
        "for zero path difference are not reliable. Scan across the true zero path "
        "difference (the burst that the revivals' heights fall away from) to measure them",
    )


def _field_of_view_factor(source_lines, options) -> float:
    """The Jacquinot factor σ/σ' = 1/(1 − Ω/4π) for an extended source, else 1.

    It applies when the user gave the field stop (aperture diameter and collimator focal
    length) and the main source line is broadband (resolved, FWHM above
    :data:`BROADBAND_FWHM_NM`): an LED or a lamp fills the field stop. A laser beam does not;
    its own divergence sets a far smaller shift, and the result says the correction was not
    applied.

    References
    ----------
    .. [1] P. Jacquinot, J. Opt. Soc. Am. 44, 761-765 (1954).
    """
    if not (options.aperture_diameter_m and options.focal_length_m) or not source_lines:
        return 1.0
    main = max(source_lines, key=lambda f: f.area)
    fwhm_nm = 1e7 * main.fwhm_per_cm / main.centre_per_cm**2
    if not (main.resolved and fwhm_nm > BROADBAND_FWHM_NM):
        return 1.0
    from ftsource.physics.instrument import field_of_view_correction, field_solid_angle

    omega = field_solid_angle(options.aperture_diameter_m, options.focal_length_m)
    return float(field_of_view_correction(1.0, omega))


def _rescale_line(fit, factor: float):
    """A line fit on a wavenumber axis stretched by ``factor`` (centre, widths, area)."""
    def sc(v):
        return None if v is None else v * factor

    return replace(
        fit,
        centre_per_cm=fit.centre_per_cm * factor,
        u_centre_per_cm=fit.u_centre_per_cm * factor,
        area=fit.area * factor,
        u_area=fit.u_area * factor,
        gauss_fwhm_per_cm=fit.gauss_fwhm_per_cm * factor,
        lorentz_fwhm_per_cm=fit.lorentz_fwhm_per_cm * factor,
        fwhm_per_cm=fit.fwhm_per_cm * factor,
        u_fwhm_per_cm=fit.u_fwhm_per_cm * factor,
        fwhm_upper_bound_per_cm=sc(fit.fwhm_upper_bound_per_cm),
        instrument_fwhm_per_cm=fit.instrument_fwhm_per_cm * factor,
        pair_lines=tuple((c * factor, h) for c, h in fit.pair_lines),
        magnitude_pair=(() if not fit.magnitude_pair else
                        (fit.magnitude_pair[0], fit.magnitude_pair[1] * factor,
                         fit.magnitude_pair[2], fit.magnitude_pair[3] * factor,
                         fit.magnitude_pair[4])),
    )


def _aliasing(found, spec, sweep_specs, ifgs, path, fs, beta, sigma_app, factor, sigma_alias):
    """The band where aliases of detectable light may land, and each line's verdict from it
    and from the sweeps' speed diversity (:mod:`ftsource.lines.aliasing`)."""
    from ftsource.interferogram.opd import sweep_speed_at
    from ftsource.lines.aliasing import assess_lines, band_at_risk, speed_step_needed
    from ftsource.lines.sweeps import aliasing_check

    by_index = {ig.sweep.index: ig for ig in ifgs}
    medians, lows, highs, spreads = [], [], [], []
    for s in sweep_specs:
        ig = by_index[s.sweep_index]
        x = ig.x_cm
        lo, hi = np.quantile(x, [0.1, 0.9])
        v = np.asarray(sweep_speed_at(path, ig.sweep, fs, x[(x >= lo) & (x <= hi)]), float)
        v = v[np.isfinite(v) & (v > 0)]
        if v.size == 0:
            continue
        med = float(np.median(v))
        medians.append(med)
        lows.append(float(v.min()))
        highs.append(float(v.max()))
        q25, q75 = np.quantile(v, [0.25, 0.75])
        spreads.append(float((q75 - q25) / (2 * med)))
    # no sweep with a measurable speed: the record's fastest speed still bounds the band
    lo_v = min(lows) if lows else path.max_speed_cm_s
    speeds = np.linspace(lo_v, max([*highs, path.max_speed_cm_s]), 33)
    band = band_at_risk(fs, speeds, beta, shortest_nm=SEARCH_BAND_NM[0])
    grid = (float(sigma_app[0]), float(sigma_app[-1]))
    band = [(max(a, grid[0]), min(b, grid[1])) for a, b in band if b > grid[0] and a < grid[1]]
    if not found:
        return band, []
    # centres back on the apparent axis of the sweep spectra (the medium correction is tiny
    # but the check compares sweeps on their own axis)
    apparent = np.interp([f.centre_per_cm for f in found], sigma_app * factor, sigma_app)
    check = None
    rtol = max(0.01, float(np.median(spreads))) if spreads else 0.01
    if band and len(medians) >= 2 and len(medians) == len(sweep_specs):
        mags = [(sigma_app, np.hypot(s.values, s.imag_residual)) for s in sweep_specs]
        check = aliasing_check(
            mags, medians, fs, resolution_per_cm=spec.resolution_per_cm, speed_rtol=rtol,
            rel_min=ALIAS_CHECK_REL_MIN,
        )
    verdicts = assess_lines(
        apparent, band, check, tolerance_per_cm=3 * spec.resolution_per_cm,
        speed_step_percent=speed_step_needed(rtol), speed_rtol=rtol,
        alias_free_limit_per_cm=sigma_alias,
    )
    return band, verdicts


def _sweep_outliers(spec, sweep_specs, found, fit_cache=None):
    """Sweeps whose own fit of the strongest narrow line is an outlier among the sweeps
    (leave-one-out, :func:`ftsource.lines.sweeps.compare_sweeps`), with the reason for each;
    returns ``(outliers, notes)``."""
    from ftsource.lines.sweeps import compare_sweeps, sweep_line_centres

    if len(sweep_specs) < 4 or not found:
        return [], ()
    main = max(found, key=lambda f: f.area)
    if main.resolved:
        return [], ()
    fits = sweep_line_centres(spec, sweep_specs, main.centre_per_cm, cache=fit_cache)
    if len(fits) < 4:
        return [], ()
    idx, vals, us = (list(t) for t in zip(*fits, strict=True))
    cmp = compare_sweeps(vals, us, [1] * len(vals), label="centre")
    out = [(i, r) for i, k, r in zip(idx, cmp.keep, cmp.reasons, strict=False) if not k]
    if not out:
        return out, ()
    return out, (
        f"{len(out)} sweep(s) were left out as outliers of the line centre (see "
        "the rejected sweeps of the result): look for vibration, a slipping reference or a "
        "loose mount",
    )


def _channel_delay(ifgs, path, fs, kind):
    """Estimate the signal channel's delay from forward/backward disagreement; return it
    when it is significant (then the caller corrects it), else None; with the notes."""
    from ftsource.interferogram.delay import estimate_channel_delay

    directions = {ig.sweep.direction for ig in ifgs}
    if not kind.knows_direction or directions != {-1, 1}:
        return None, ()  # a single channel cannot tell absolute direction across dropouts
    est = None
    for method in ("zpd", "phase"):
        try:
            est = estimate_channel_delay(list(ifgs), method=method, path=path, sample_rate_hz=fs)
        except (AnalysisError, ValueError):
            est = None
        if est is not None and est.ok:
            break
    if est is None or not est.ok or not np.isfinite(est.delay_s):
        return None, ()
    if not (np.isfinite(est.u_delay_s) and est.u_delay_s > 0):
        return None, ()  # too few sweeps to tell a delay from noise
    if abs(est.delay_s) <= 3 * est.u_delay_s:
        return None, ()
    if abs(est.delay_s) > MAX_CHANNEL_DELAY_S:
        return None, (
            f"forward and backward sweeps disagree by the equivalent of a {est.delay_s * 1e3:.3g} "
            "ms channel delay, beyond any plausible acquisition delay: not corrected; check "
            "that the source and reference channels are recorded together",
        )
    return est, (
        f"forward and backward sweeps disagree as a channel delay of {est.delay_s * 1e6:.2f} ± "
        f"{est.u_delay_s * 1e6:.2f} µs (source channel late, {est.method} method); it was "
        "corrected by shifting the source signal in time. Check the acquisition (multiplexed "
        "ADC, unequal amplifier bandwidths, sound-card AC coupling).",
    )


def _wobble_spread(path, fs) -> float:
    """How far (cm⁻¹) the speed wobble spreads a scan artefact: a periodic error whose
    residual depends on the speed comes with side lines at j/P, j = 1 … 3, P the wobble's OPD
    period (:mod:`ftsource.interferogram.wobble`); 0 for an even scan."""
    from ftsource.interferogram.wobble import WOBBLE_NOTE_DEPTH, artefact_offsets, speed_wobble

    wob = speed_wobble(path.opd_cm, path.sweeps, fs)
    offsets = artefact_offsets(wob, orders=3)
    return float(offsets[-1]) if wob.depth >= WOBBLE_NOTE_DEPTH and offsets.size else 0.0


def _flag_lines(found, lam_ref, sigma_alias, kind, record, wobble_spread_per_cm=0.0):
    """Why each line is not a source line (None when it is): a ghost (reference light, side
    line of a distorted reference, harmonic or intermodulation product of a clipped detector;
    :mod:`ftsource.lines.ghosts`) or a line beyond the alias-free limit; returns
    ``(flags, notes)``."""
    from ftsource.lines.ghosts import flag_ghosts

    flags = flag_ghosts(
        [f.centre_per_cm for f in found],
        [f.area for f in found],
        [3 * f.instrument_fwhm_per_cm for f in found],
        reference_per_cm=1e7 / lam_ref if kind.uses_reference_laser else None,
        clipped=clipped_fraction(record.columns["signal"]) > CLIPPED_FRACTION_LIMIT,
        band_edge_per_cm=1e7 / SEARCH_BAND_NM[0],
        reference_harmonic_spread_per_cm=wobble_spread_per_cm,
        # ghosts of a laser are as narrow as the instrument line shape
        eligible=[not f.resolved or f.fwhm_per_cm < 3 * f.instrument_fwhm_per_cm for f in found],
    )
    flags = [
        "alias" if fl is None and f.centre_per_cm > sigma_alias else fl
        for f, fl in zip(found, flags, strict=True)
    ]
    notes = []
    if kind.uses_reference_laser and found:
        main = max(found, key=lambda f: f.area)
        kept = flags[found.index(main)] is None
        if kept and abs(main.centre_per_cm - 1e7 / lam_ref) < 3 * main.instrument_fwhm_per_cm:
            notes.append(
                f"the main line lies at the reference laser's wavelength ({lam_ref:.3f} nm, "
                "within three resolution elements): it is reported as the source, but it could "
                "be reference light reaching the source detector; block the source beam and "
                "record again: a line that stays is reference light"
            )
    n_ghost = sum(fl is not None for fl in flags)
    if n_ghost:
        notes.append(
            f"{n_ghost} spectral feature(s) were flagged as not from the source (reference "
            "ghost, side line of a distorted reference, harmonic or intermodulation product "
            "of a clipped detector, or beyond the alias-free limit); each such line carries "
            "its reason"
        )
    return flags, tuple(notes)
