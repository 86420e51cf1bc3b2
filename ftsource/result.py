"""The result of an analysis, and the one place its JSON is shaped (:meth:`Result.to_dict`).

:class:`Result` is a frozen container of what the stages measured — the typed sections of
:mod:`ftsource.measure.facts` and the :class:`~ftsource.measure.figures.SourceFigures` — and
of the notes of every stage (``warnings``). It measures nothing. The JSON keys are those of
``docs/contract.md`` (schema ``ftsource/schema/result-2.json``).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ftsource import __version__

__all__ = ["Result", "SCHEMA_ID", "SCHEMA_VERSION"]

SCHEMA_VERSION = "2.1"
SCHEMA_ID = "https://ftsource.invalid/schema/result-2.json"

#: The keys of ``summary``, in the contract's order (each a field of SourceFigures).
_SUMMARY_KEYS = (
    "kind", "resolved", "detector_weighted",
    "centre_wavelength_nm", "centre_wavelength_air_nm", "u_centre_wavelength_nm",
    "expanded_uncertainty_nm", "coverage_factor", "wavenumber_per_cm", "frequency_thz",
    "fwhm_nm", "fwhm_upper_bound_nm", "u_fwhm_nm", "coherence_length_mm",
    "coherence_length_lower_bound_mm", "coherence_length_definition",
    "coherence_length_method", "coherence_length_visibility_mm", "u_coherence_length_mm",
    "u_coherence_length_visibility_mm", "coherence_length_visibility_definition",
    "half_visibility_opd_mm", "peak_wavelength_nm",
    "u_peak_wavelength_nm", "centroid_wavelength_nm", "u_centroid_wavelength_nm",
    "chromaticity_xy", "dominant_wavelength_nm", "modes", "fwhm_definition",
)
_MODE_KEYS = (
    "n_modes", "spacing_nm", "u_spacing_nm", "spacing_ghz", "u_spacing_ghz",
    "envelope_fwhm_nm", "cavity_optical_length_mm", "revivals_confirmed",
)
_LINE_KEYS = (
    "wavelength_nm", "wavelength_air_nm", "wavenumber_per_cm", "frequency_thz",
    "relative_intensity", "snr", "resolved", "fwhm_nm", "fwhm_upper_bound_nm", "profile",
    "pair_possible", "u_wavelength_nm", "expanded_uncertainty_nm", "coverage_factor", "flag",
    "aliasing",
)


def _num(v):
    """A JSON number: a finite float, or None."""
    from ftsource.measure.values import finite_or_none

    return finite_or_none(v)


class _Figure:
    """A field of the result's :class:`~ftsource.measure.figures.SourceFigures` read as an
    astropy Quantity in ``unit`` (None where the data gave none)."""

    def __init__(self, field: str, unit: str, doc: str):
        self.field, self.unit, self.__doc__ = field, unit, doc

    def __get__(self, result, owner=None):
        if result is None:
            return self
        return _quantity(getattr(result.figures, self.field), self.unit)


@dataclass(frozen=True)
class Result:
    """Everything an analysis found (:func:`ftsource.analysis.analyze` builds it).

    Attributes
    ----------
    input : ftsource.measure.facts.InputFacts
    processing : ftsource.measure.facts.ProcessingFacts
    instrument : ftsource.measure.facts.InstrumentFacts
    figures : ftsource.measure.figures.SourceFigures
        The source's kind and figures, with the centre wavelength's budget.
    lines : tuple of ftsource.measure.facts.LineReport
    health : ftsource.measure.facts.HealthFacts
    scan_health : ftsource.measure.health.ScanHealth
        The scan-health items (value, verdict, threshold, source, advice).
    warnings : tuple of str
        What the data could not support and what to change, in the order found.
    spectrum : ftsource.spectrum.spectrum.Spectrum
    interferograms : tuple of ftsource.interferogram.resample.Interferogram
    plot : ftsource.measure.plotdata.PlotData or None
        What the figures need (None: no figures, e.g. a result built by hand).

    The main figures are also properties giving astropy Quantities (``centre_wavelength``,
    ``expanded_uncertainty``, ``linewidth``, ``coherence_length``, ...), None where the data
    gave none; :meth:`to_dict` gives the same numbers as JSON.
    """

    input: object
    processing: object
    instrument: object
    figures: object
    lines: tuple
    health: object
    scan_health: object = None
    warnings: tuple[str, ...] = ()
    spectrum: object = field(default=None, repr=False)
    interferograms: tuple = field(default=(), repr=False)
    plot: object = field(default=None, repr=False)

    def to_dict(self) -> dict:
        """The result as JSON-ready plain values (the contract's keys, in a fixed order)."""
        from ftsource.safety import LASER_NOTICE

        budget = self.figures.budget
        return {
            "schema": SCHEMA_ID,
            "schema_version": SCHEMA_VERSION,
            "ftsource_version": __version__,
            "input": _input(self.input),
            "processing": _processing(self.processing),
            "instrument": {
                "max_opd_mm": self.instrument.max_opd_mm,
                "resolution_per_cm": self.instrument.resolution_per_cm,
                "resolution_nm": self.instrument.resolution_nm,
                "min_wavelength_nm": self.instrument.min_wavelength_nm,
                "line_shape": self.instrument.line_shape,
            },
            "summary": _summary(self.figures),
            "lines": [_line(ln) for ln in self.lines],
            "uncertainty": None if budget is None else budget.to_dict("_nm"),
            "health": _health(self.health, self.scan_health),
            "warnings": list(self.warnings),
            "safety": LASER_NOTICE,
            "plot": None if self.plot is None else _plot(self.plot),
        }

    # ---- the figures as astropy Quantities (None where the data gave none) -------------
    @property
    def kind(self) -> str:
        """The source's kind: ``"narrow"``, ``"multimode"``, ``"broadband"`` or ``"none"``."""
        return self.figures.kind

    centre_wavelength = _Figure(
        "centre_wavelength_nm", "nm",
        "Centre wavelength in vacuum (corrected, the budget's measurand).")
    centre_wavelength_air = _Figure(
        "centre_wavelength_air_nm", "nm",
        "Centre wavelength in the analysis's air (None in vacuum or outside 300–1700 nm).")
    u_centre_wavelength = _Figure(
        "u_centre_wavelength_nm", "nm",
        "Combined standard uncertainty of the centre wavelength (JCGM 100).")
    expanded_uncertainty = _Figure(
        "expanded_uncertainty_nm", "nm",
        "Expanded uncertainty of the centre wavelength (about 95 % coverage).")
    wavenumber = _Figure("wavenumber_per_cm", "1/cm", "Vacuum wavenumber of the centre.")
    frequency = _Figure("frequency_thz", "THz", "Optical frequency of the centre.")
    linewidth = _Figure(
        "fwhm_nm", "nm",
        "FWHM of the main line or band (None when not resolved: see linewidth_upper_bound).")
    u_linewidth = _Figure("u_fwhm_nm", "nm", "Standard uncertainty of the linewidth.")
    linewidth_upper_bound = _Figure(
        "fwhm_upper_bound_nm", "nm",
        "Upper bound of the FWHM of an unresolved line (about 95 % coverage).")
    coherence_length = _Figure(
        "coherence_length_mm", "mm",
        "Coherence length from the spectrum (Goodman's integral definition).")
    u_coherence_length = _Figure(
        "u_coherence_length_mm", "mm", "Standard uncertainty of the coherence length.")
    coherence_length_lower_bound = _Figure(
        "coherence_length_lower_bound_mm", "mm",
        "Lower bound of the coherence length of an unresolved line.")
    peak_wavelength = _Figure(
        "peak_wavelength_nm", "nm", "Peak wavelength of a broad band (vacuum).")
    centroid_wavelength = _Figure(
        "centroid_wavelength_nm", "nm", "Centroid wavelength of a broad band (vacuum).")

    @property
    def coverage_factor(self) -> float | None:
        """The coverage factor k of :attr:`expanded_uncertainty`."""
        return self.figures.coverage_factor

    @property
    def mode_spacing(self):
        """Mode spacing of a multimode laser (wavelength)."""
        m = self.figures.modes
        return None if m is None else _quantity(m.spacing_nm, "nm")


def _quantity(value, unit):
    """``value`` in ``unit`` as an astropy Quantity, or None."""
    if value is None:
        return None
    import astropy.units as u

    return value * u.Unit(unit)



def _input(i) -> dict:
    air = i.air
    return {
        "record": i.record,
        "sha256": i.sha256,
        "n_samples": i.n_samples,
        "sample_rate_hz": i.sample_rate_hz,
        "opd_source": i.opd_source,
        "reference_wavelength_nm": i.reference_wavelength_nm,
        "reference_uncertainty_ppm": i.reference_uncertainty_ppm,
        "medium": i.medium,
        "air": None if air is None else {
            "temperature_c": _num(air.temperature_c),
            "pressure_pa": _num(air.pressure_pa),
            "humidity_percent": _num(air.humidity_percent),
            "co2_ppm": _num(air.co2_ppm),
        },
        "metadata": dict(i.metadata),
    }


def _processing(p) -> dict:
    return {
        "apodization": p.apodization,
        "phase_correction": p.phase_correction,
        "phase_reference": p.phase_reference,
        "n_sweeps": p.n_sweeps,
        "n_sweeps_used": p.n_sweeps_used,
        "rejected_sweeps": [{"index": r.index, "reason": r.reason} for r in p.rejected_sweeps],
        "opd_step_nm": p.opd_step_nm,
        "zero_fill": p.zero_fill,
        "channel_delay_s": p.channel_delay_s,
        "glass_imbalance": None if p.glass_imbalance is None else {
            k: getattr(p.glass_imbalance, k) for k in (
                "group_delay_dispersion_um2", "u_group_delay_dispersion_um2",
                "bk7_thickness_mm", "u_bk7_thickness_mm", "optical_thickness_difference_mm",
                "definition")
        },
    }


def _summary(f) -> dict:
    out = {k: getattr(f, k) for k in _SUMMARY_KEYS}
    if f.chromaticity_xy is not None:
        out["chromaticity_xy"] = list(f.chromaticity_xy)
    if f.modes is not None:
        out["modes"] = {k: getattr(f.modes, k) for k in _MODE_KEYS}
    return out


def _candidate(c) -> dict:
    return {
        "species": c.species,
        "list": c.list_name,
        "kind": c.kind,
        "wavelength_vac_nm": _num(c.wavelength_vac_nm),
        "difference_ppm": _num(c.difference_ppm),
    }


def _line(ln) -> dict:
    out = {k: getattr(ln, k) for k in _LINE_KEYS}
    out["identification"] = None if ln.identification is None else _candidate(ln.identification)
    out["nearest_entries"] = [
        {**_candidate(c), "within_tolerance": bool(c.within_tolerance)}
        for c in ln.nearest_entries
    ]
    return out


def _health(h, scan) -> dict:
    items = () if scan is None else scan.items
    return {
        "reference_ellipse_residual": h.reference_ellipse_residual,
        "fringe_slips": h.fringe_slips,
        "dropouts": h.dropouts,
        "clipped_fraction": h.clipped_fraction,
        "sweeps": [
            {
                "index": s.index,
                "direction": s.direction,
                "opd_span_mm": s.opd_span_mm,
                "mean_speed_mm_s": s.mean_speed_mm_s,
                "used": s.used,
            }
            for s in h.sweeps
        ],
        "items": [
            {"name": i.name, "value": _num(i.value), "unit": i.unit, "verdict": i.verdict,
             "threshold": i.threshold, "source": i.source, "advice": i.advice}
            for i in items
        ],
    }


def _plot(p) -> dict:
    """The figures' numbers, each to :data:`ftsource.measure.plotdata.DIGITS` significant
    digits (None for a non-finite one)."""
    from dataclasses import fields

    from ftsource.measure.plotdata import DIGITS

    def conv(v):
        if isinstance(v, tuple | list):
            return [conv(e) for e in v]
        if v is None or isinstance(v, bool | str | int):
            return v
        v = _num(v)
        return None if v is None else float(f"{v:.{DIGITS}g}")

    return {f.name: conv(getattr(p, f.name)) for f in fields(p)}
