"""What an analysis read and did, besides the source's figures: the input record, the
processing, the instrument's limits, the record's health and the table of lines.

Each builder is a pure function returning a frozen dataclass (and its notes, where it has
any); :class:`ftsource.result.Result` holds them and shapes them into JSON.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass

import numpy as np

from ftsource.interferogram.zpd import phase_reference
from ftsource.measure.values import (
    C_M_S,
    air_wavelength_nm,
    finite_or_none,
    nm_from_per_cm,
    u_nm_from_per_cm,
)

__all__ = [
    "CLIPPED_FRACTION_LIMIT",
    "InputFacts",
    "ProcessingFacts",
    "Rejection",
    "InstrumentFacts",
    "SweepHealth",
    "HealthFacts",
    "LineReport",
    "clipped_fraction",
    "input_facts",
    "processing_facts",
    "glass_facts",
    "GlassFacts",
    "instrument_facts",
    "health_facts",
    "line_reports",
]

#: Above this fraction of samples at the record's extreme value the detector may be clipping.
CLIPPED_FRACTION_LIMIT = 1e-3


@dataclass(frozen=True)
class InputFacts:
    """The record analysed and the physical inputs the analysis used."""

    record: str
    sha256: str
    n_samples: int
    sample_rate_hz: float | None
    opd_source: str | None
    reference_wavelength_nm: float | None
    reference_uncertainty_ppm: float | None
    medium: str
    air: object | None  # ftsource.physics.air.AirConditions in air, else None
    metadata: tuple[tuple[str, str], ...]


@dataclass(frozen=True)
class Rejection:
    """A sweep left out of the co-added spectrum, and why."""

    index: int
    reason: str


@dataclass(frozen=True)
class ProcessingFacts:
    """How the spectrum was made."""

    apodization: str
    phase_correction: str
    n_sweeps: int
    n_sweeps_used: int
    rejected_sweeps: tuple[Rejection, ...]
    opd_step_nm: float | None
    zero_fill: int
    channel_delay_s: float | None
    glass_imbalance: GlassFacts | None = None
    #: What served as the phase reference (:data:`ftsource.interferogram.zpd.PHASE_REFERENCES`).
    phase_reference: str = "none"


@dataclass(frozen=True)
class GlassFacts:
    """Unequal glass in the arms, from the sweeps' phase curvature (mm, µm²; see
    :mod:`ftsource.spectrum.dispersion`)."""

    group_delay_dispersion_um2: float | None
    u_group_delay_dispersion_um2: float | None
    bk7_thickness_mm: float | None
    u_bk7_thickness_mm: float | None
    optical_thickness_difference_mm: float | None
    definition: str


GLASS_DEFINITION = (
    "D = (1/2pi) d2(phase)/d(sigma)2 at the band's centre, the group-delay dispersion in "
    "optical path; bk7_thickness_mm = |D| / (dn_g/dsigma) of SCHOTT N-BK7 (total extra glass "
    "path, all passes); optical_thickness_difference_mm = n(N-BK7) x that"
)


def glass_facts(sweep_spectra, main) -> tuple[GlassFacts | None, tuple[str, ...]]:
    """The glass imbalance the sweeps' phase implies, with the advice to add a compensator
    (None and no note when no sweep needed the dispersion treatment)."""
    from ftsource.measure.classify import BROADBAND_FWHM_NM
    from ftsource.spectrum.dispersion import glass_imbalance

    if main is None or not main.resolved or (
            u_nm_from_per_cm(main.centre_per_cm, main.fwhm_per_cm) <= BROADBAND_FWHM_NM):
        return None, ()  # a narrow line's few bins cannot tell a phase curvature
    g = glass_imbalance([s.dispersion_cm2 for s in sweep_spectra],
                        [s.u_dispersion_cm2 for s in sweep_spectra], main.centre_per_cm)
    if g is None or not g.dispersion_cm2 > 3 * g.u_dispersion_cm2:
        return None, ()
    note = (
        f"the centre burst is chirped: the two arms hold unequal glass, about "
        f"{g.thickness_cm * 10:.2g} mm of N-BK7-like glass in excess in one arm (an "
        f"optical-thickness difference of {g.optical_thickness_cm * 10:.2g} mm); the phase was "
        "corrected with a smooth polynomial in wavenumber. Add a compensator plate of the "
        "beamsplitter's glass and thickness to the other arm"
    )
    return GlassFacts(
        group_delay_dispersion_um2=finite_or_none(g.dispersion_cm2 * 1e8),
        u_group_delay_dispersion_um2=finite_or_none(g.u_dispersion_cm2 * 1e8),
        bk7_thickness_mm=finite_or_none(g.thickness_cm * 10),
        u_bk7_thickness_mm=finite_or_none(g.u_thickness_cm * 10),
        optical_thickness_difference_mm=finite_or_none(g.optical_thickness_cm * 10),
        definition=GLASS_DEFINITION,
    ), (note,)


@dataclass(frozen=True)
class InstrumentFacts:
    """The instrument's limits for this record."""

    max_opd_mm: float | None
    resolution_per_cm: float | None
    resolution_nm: float | None
    min_wavelength_nm: float | None
    line_shape: str


@dataclass(frozen=True)
class SweepHealth:
    """One sweep of the mirror."""

    index: int
    direction: int
    opd_span_mm: float | None
    mean_speed_mm_s: float | None
    used: bool


@dataclass(frozen=True)
class HealthFacts:
    """How sound the record is (reference, clipping, sweeps)."""

    reference_ellipse_residual: float | None
    fringe_slips: int
    dropouts: int
    clipped_fraction: float | None
    sweeps: tuple[SweepHealth, ...]


@dataclass(frozen=True)
class LineReport:
    """One line of the spectrum as reported (vacuum nm; finite numbers or None)."""

    wavelength_nm: float | None
    wavelength_air_nm: float | None
    wavenumber_per_cm: float | None
    frequency_thz: float | None
    relative_intensity: float | None
    snr: float | None
    resolved: bool
    fwhm_nm: float | None
    fwhm_upper_bound_nm: float | None
    profile: str
    u_wavelength_nm: float | None
    flag: str | None
    aliasing: str | None
    identification: object | None  # ftsource.linelists.Candidate
    nearest_entries: tuple = ()
    pair_possible: bool = False
    #: The line's own expanded uncertainty and coverage factor, by the summary's budget
    #: (:func:`ftsource.measure.budget.line_budget`).
    expanded_uncertainty_nm: float | None = None
    coverage_factor: float | None = None


def clipped_fraction(signal) -> float:
    """Fraction of samples sitting at the record's extreme values (a flat top or bottom): a
    clipped detector, whose harmonics and intermodulation products
    :func:`ftsource.lines.ghosts.flag_ghosts` looks for."""
    s = np.asarray(signal)
    hi, lo = s.max(), s.min()
    return float(max(np.mean(s == hi), np.mean(s == lo))) if s.size else 0.0


_DIGEST_BLOCK = 1 << 20


def _digest(record) -> str:
    digest = hashlib.sha256()
    for name in sorted(record.columns):
        digest.update(name.encode())
        col = record.columns[name]
        for a in range(0, col.shape[0], _DIGEST_BLOCK):  # no full-length copy of a column
            digest.update(np.ascontiguousarray(col[a : a + _DIGEST_BLOCK]).data)
    return digest.hexdigest()


def input_facts(record, options, *, opd_kind, reference_wavelength_nm,
                reference_uncertainty_ppm) -> tuple[InputFacts, tuple[str, ...]]:
    """The input section and its note (air conditions assumed). ``opd_kind`` is an
    :class:`ftsource.interferogram.scale.OpdKind`; the reference's uncertainty is given only
    for a reference laser's scale or a calibrated one."""
    air = options.air if options.medium == "air" else None
    has_reference_u = opd_kind.uses_reference_laser or options.calibration is not None
    facts = InputFacts(
        record=str(record.path).replace("\\", "/").split("/")[-1],
        sha256=_digest(record),
        n_samples=int(record.n_samples),
        sample_rate_hz=finite_or_none(options.sample_rate_hz or record.sample_rate_hz),
        opd_source=opd_kind.value,
        reference_wavelength_nm=finite_or_none(reference_wavelength_nm),
        reference_uncertainty_ppm=finite_or_none(reference_uncertainty_ppm)
        if has_reference_u else None,
        medium=options.medium,
        air=air,
        metadata=tuple((str(k), str(v)) for k, v in sorted(record.metadata.items())),
    )
    notes = ()
    if air is not None and not options.air_given:
        notes = (
            "air conditions were not given: standard lab air (20 °C, 101.325 kPa, 50 % RH) "
            "was assumed with wide uncertainties; give air_temperature, air_pressure and "
            "air_humidity (a lab above about 150 m altitude must give its pressure)",
        )
    return facts, notes


def processing_facts(options, path, limits, sweep_spectra, rejected,
                     channel_delay=None, glass=None) -> ProcessingFacts:
    """The processing section: apodization, phase correction, sweeps used and left out."""
    used = {s.sweep_index for s in sweep_spectra}
    methods = sorted({s.method for s in sweep_spectra})
    why = {int(i): str(r) for i, r in rejected}
    return ProcessingFacts(
        apodization=options.apodization,
        phase_correction=methods[0] if len(methods) == 1 else "mixed",
        n_sweeps=len(path.sweeps),
        n_sweeps_used=len(used),
        rejected_sweeps=tuple(
            Rejection(int(sw.index), why.get(int(sw.index), "too short to resample"))
            for sw in path.sweeps if sw.index not in used
        ),
        opd_step_nm=finite_or_none(limits.dx_cm * 1e7),
        zero_fill=int(options.zero_fill),
        channel_delay_s=finite_or_none(channel_delay.delay_s) if channel_delay is not None
        else None,
        glass_imbalance=glass,
        phase_reference=phase_reference([s.zpd_found for s in sweep_spectra],
                                        [s.zpd_ambiguous for s in sweep_spectra]),
    )


def health_facts(record, path, sweep_spectra) -> tuple[HealthFacts, tuple[str, ...]]:
    """The health section and its notes (clipping, reference dropouts)."""
    used = {s.sweep_index for s in sweep_spectra}
    clipped = clipped_fraction(record.columns["signal"])
    notes = []
    if clipped > CLIPPED_FRACTION_LIMIT:
        notes.append(
            f"{clipped:.1%} of the source samples sit at the record's extreme value: the "
            "detector or ADC may be clipping, which creates harmonics; reduce the gain"
        )
    if path.dropouts:
        notes.append(
            f"the reference dropped out {path.dropouts} time(s): the record was split there "
            "and only the stretches with fringes were used; check the reference beam's "
            "alignment and detector"
        )
    facts = HealthFacts(
        reference_ellipse_residual=finite_or_none(path.ellipse_residual),
        fringe_slips=int(path.fringe_slips),
        dropouts=int(path.dropouts),
        clipped_fraction=finite_or_none(clipped),
        sweeps=tuple(
            SweepHealth(
                index=int(sw.index),
                direction=int(sw.direction),
                opd_span_mm=finite_or_none(sw.opd_span_cm * 10),
                mean_speed_mm_s=finite_or_none(sw.mean_speed_cm_s * 10),
                used=sw.index in used,
            )
            for sw in path.sweeps
        ),
    )
    return facts, tuple(notes)


def instrument_facts(spec, limits, main, apodization) -> InstrumentFacts:
    """The instrument section: OPD reach, resolution (also in nm at the main line ``main``,
    None without one), alias-free limit and line shape."""
    res = spec.resolution_per_cm
    return InstrumentFacts(
        max_opd_mm=finite_or_none(spec.max_opd_cm * 10),
        resolution_per_cm=finite_or_none(res),
        resolution_nm=finite_or_none(u_nm_from_per_cm(main.centre_per_cm, res))
        if main is not None else None,
        min_wavelength_nm=finite_or_none(limits.min_wavelength_nm),
        line_shape=f"{apodization} ({spec.line_shape.kind})",
    )


def line_reports(lines, flags, aliasing, *, options, reference_uncertainty_ppm,
                 main=None, budget=None, widths: bool = True
                 ) -> tuple[tuple[LineReport, ...], tuple[str, ...]]:
    """The table of lines, sorted by wavelength, and the aliasing notes of its lines.

    ``widths=False`` leaves out every line's width and width bound (sweeps without ZPD whose
    fringe envelope decays across them: the magnitude line shape is not the instrument's,
    docs/measurements.md, "Width bounds without ZPD").

    ``main`` is the strongest source line (intensities are relative to it); ``aliasing``
    holds each line's verdict (:mod:`ftsource.lines.aliasing`) or is None. ``budget``, when
    given, maps a line fit to its ``(expanded_uncertainty_nm, coverage_factor)``
    (:func:`ftsource.measure.budget.line_budget`).
    """
    from ftsource.lines.identify import identify_line

    if aliasing is None:
        aliasing = [None] * len(lines)
    tables: dict = {}  # reference lists read once for all lines of this result
    notes, out = [], []
    for f, flag, alias in zip(lines, flags, aliasing, strict=True):
        wl = nm_from_per_cm(f.centre_per_cm)
        u_wl = u_nm_from_per_cm(f.centre_per_cm, f.u_centre_per_cm)
        if alias is not None and alias.message and (flag is None or alias.verdict == "alias"):
            notes.append(alias.message)
        ident = identify_line(wl, u_wl, reference_uncertainty_ppm, source_line=flag is None,
                              tables=tables, resolution_nm=u_nm_from_per_cm(
                                  f.centre_per_cm, f.instrument_fwhm_per_cm))
        big_u, k = budget(f) if budget is not None else (None, None)
        out.append(LineReport(
            wavelength_nm=finite_or_none(wl),
            wavelength_air_nm=finite_or_none(air_wavelength_nm(wl, options)),
            wavenumber_per_cm=finite_or_none(f.centre_per_cm),
            frequency_thz=finite_or_none(C_M_S * f.centre_per_cm * 100 / 1e12),
            relative_intensity=finite_or_none(f.area / main.area) if main else None,
            snr=finite_or_none(f.snr),
            resolved=bool(f.resolved),
            fwhm_nm=finite_or_none(u_nm_from_per_cm(f.centre_per_cm, f.fwhm_per_cm))
            if f.resolved and widths else None,
            fwhm_upper_bound_nm=None if f.resolved or not widths
            else finite_or_none(u_nm_from_per_cm(f.centre_per_cm, f.fwhm_upper_bound_per_cm)),
            profile=f.profile,
            u_wavelength_nm=finite_or_none(u_wl),
            flag=flag,
            aliasing=alias.verdict if alias is not None else None,
            identification=ident.best,
            nearest_entries=ident.nearest,
            pair_possible=bool(getattr(f, "pair_possible", False)),
            expanded_uncertainty_nm=finite_or_none(big_u),
            coverage_factor=finite_or_none(k),
        ))
    out.sort(key=lambda r: r.wavelength_nm or 0.0)
    return tuple(out), tuple(notes)
