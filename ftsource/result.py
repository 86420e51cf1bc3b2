"""The result of an analysis and the one place its JSON is shaped (:meth:`Result.to_dict`).

:meth:`Result.build` turns the stages' outputs into the figures users came for — the source
kind, the centre wavelength with its JCGM 100 budget, width or its bound, coherence length,
modes, LED figures and colour — and collects every warning. The JSON keys are those of
``docs/contract.md`` (schema ``ftsource/schema/result-2.json``).
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass, field

import numpy as np

from ftsource import __version__
from ftsource.interferogram.scale import OpdKind
from ftsource.measure.broadband import BROADBAND_FWHM_NM

__all__ = ["Result", "SCHEMA_ID", "SCHEMA_VERSION"]

SCHEMA_VERSION = "2.0"
SCHEMA_ID = "https://ftsource.invalid/schema/result-2.json"
C_M_S = 299_792_458.0


def _f(v, digits: int | None = None):
    """A JSON number, or None for missing/non-finite values."""
    if v is None:
        return None
    v = float(v)
    if not math.isfinite(v):
        return None
    return round(v, digits) if digits is not None else v


def _nm(sigma_per_cm: float) -> float:
    return 1e7 / sigma_per_cm


def _u_nm(sigma: float, u_sigma: float) -> float:
    return 1e7 * u_sigma / sigma**2


@dataclass
class Result:
    """Everything an analysis found. Build it with :meth:`build`; read it with :meth:`to_dict`."""

    input: dict
    processing: dict
    instrument: dict
    summary: dict
    lines: list
    uncertainty: dict | None
    health: dict
    warnings: list = field(default_factory=list)
    spectrum: object = field(default=None, repr=False)
    interferograms: tuple = field(default=(), repr=False)

    def add_warning(self, msg: str) -> None:
        if msg and msg not in self.warnings:
            self.warnings.append(msg)

    def to_dict(self) -> dict:
        """The result as JSON-ready plain values (the contract's keys, in a fixed order)."""
        from ftsource.safety import LASER_NOTICE

        return {
            "schema": SCHEMA_ID,
            "schema_version": SCHEMA_VERSION,
            "ftsource_version": __version__,
            "input": self.input,
            "processing": self.processing,
            "instrument": self.instrument,
            "summary": self.summary,
            "lines": self.lines,
            "uncertainty": self.uncertainty,
            "health": self.health,
            "warnings": list(self.warnings),
            "safety": LASER_NOTICE,
        }

    # ------------------------------------------------------------------------------------
    @classmethod
    def build(
        cls,
        *,
        record,
        options,
        path,
        limits,
        spectrum,
        sweep_spectra,
        interferograms,
        lines,
        flags,
        source_lines,
        reference_wavelength_nm,
        notes,
        channel_delay=None,
        rejected=(),
        aliasing=None,
        alias_band=None,
        field_of_view_factor=1.0,
        sweep_fit_cache=None,
    ) -> Result:
        warnings = list(notes.items)
        spec = spectrum
        kind_opd = path.kind.value
        air = options.air if options.medium == "air" else None

        def to_air(wl):
            if air is None:
                return None
            from ftsource.physics.air import WAVELENGTH_RANGE_NM, vacuum_to_air_nm

            if not WAVELENGTH_RANGE_NM[0] <= wl <= WAVELENGTH_RANGE_NM[1]:
                return None
            return float(vacuum_to_air_nm(wl, air, model=options.air_model))

        # ---- input
        digest = hashlib.sha256()
        for name in sorted(record.columns):
            digest.update(name.encode())
            digest.update(np.ascontiguousarray(record.columns[name]).tobytes())
        inp = {
            "record": str(record.path).replace("\\", "/").split("/")[-1],
            "sha256": digest.hexdigest(),
            "n_samples": int(record.n_samples),
            "sample_rate_hz": _f(options.sample_rate_hz or record.sample_rate_hz),
            "opd_source": kind_opd,
            "reference_wavelength_nm": _f(reference_wavelength_nm),
            "reference_uncertainty_ppm": _f(_reference_u_ppm(options))
            if path.kind.uses_reference_laser or options.calibration is not None else None,
            "medium": options.medium,
            "air": None
            if air is None
            else {
                "temperature_c": _f(air.temperature_c),
                "pressure_pa": _f(air.pressure_pa),
                "humidity_percent": _f(air.humidity_percent),
                "co2_ppm": _f(air.co2_ppm),
            },
            "metadata": {str(k): str(v) for k, v in sorted(record.metadata.items())},
        }
        if air is not None and not options.air_given:
            warnings.append(
                "air conditions were not given: standard lab air (20 °C, 101.325 kPa, 50 % RH) "
                "was assumed with wide uncertainties; give --air-temperature, --air-pressure and "
                "--air-humidity (a lab above about 150 m altitude must give its pressure)"
            )

        # ---- processing and health
        used = {s.sweep_index for s in sweep_spectra}
        methods = sorted({s.method for s in sweep_spectra})
        processing = {
            "apodization": options.apodization,
            "phase_correction": methods[0] if len(methods) == 1 else "mixed",
            "n_sweeps": len(path.sweeps),
            "n_sweeps_used": len(used),
            "rejected_sweeps": _rejections(path, used, rejected),
            "opd_step_nm": _f(limits.dx_cm * 1e7),
            "zero_fill": int(options.zero_fill),
            "channel_delay_s": _f(channel_delay.delay_s) if channel_delay is not None else None,
        }
        from ftsource.lines.ghosts import clipped_fraction

        clipped = clipped_fraction(record.columns["signal"])
        if clipped > 1e-3:
            warnings.append(
                f"{clipped:.1%} of the source samples sit at the record's extreme value: the "
                "detector or ADC may be clipping, which creates harmonics; reduce the gain"
            )
        if path.dropouts:
            warnings.append(
                f"the reference dropped out {path.dropouts} time(s): the record was split there "
                "and only the stretches with fringes were used; check the reference beam's "
                "alignment and detector"
            )
        health = {
            "reference_ellipse_residual": _f(path.ellipse_residual),
            "fringe_slips": int(path.fringe_slips),
            "dropouts": int(path.dropouts),
            "clipped_fraction": _f(clipped),
            "sweeps": [
                {
                    "index": int(sw.index),
                    "direction": int(sw.direction),
                    "opd_span_mm": _f(sw.opd_span_cm * 10),
                    "mean_speed_mm_s": _f(sw.mean_speed_cm_s * 10),
                    "used": sw.index in used,
                }
                for sw in path.sweeps
            ],
        }

        # ---- lines
        strongest = max(source_lines, key=lambda f: f.area) if source_lines else None
        line_dicts = []
        if aliasing is None:
            aliasing = [None] * len(lines)
        line_tables: dict = {}  # reference lists read once for all lines of this result
        for f, flag, alias in zip(lines, flags, aliasing, strict=True):
            wl = _nm(f.centre_per_cm)
            if alias is not None and alias.message and (flag is None or alias.verdict == "alias"):
                warnings.append(alias.message)
            line_dicts.append(
                {
                    "wavelength_nm": _f(wl),
                    "wavelength_air_nm": _f(to_air(wl)),
                    "wavenumber_per_cm": _f(f.centre_per_cm),
                    "frequency_thz": _f(C_M_S * f.centre_per_cm * 100 / 1e12),
                    "relative_intensity": _f(f.area / strongest.area) if strongest else None,
                    "snr": _f(f.snr),
                    "resolved": bool(f.resolved),
                    "fwhm_nm": _f(_u_nm(f.centre_per_cm, f.fwhm_per_cm)) if f.resolved else None,
                    "fwhm_upper_bound_nm": None
                    if f.resolved
                    else _f(_u_nm(f.centre_per_cm, f.fwhm_upper_bound_per_cm)),
                    "profile": f.profile,
                    "u_wavelength_nm": _f(_u_nm(f.centre_per_cm, f.u_centre_per_cm)),
                    "flag": flag,
                    "aliasing": alias.verdict if alias is not None else None,
                    **_identify(wl, _u_nm(f.centre_per_cm, f.u_centre_per_cm),
                                reference_wavelength_nm, options, source_line=flag is None,
                                tables=line_tables),
                }
            )
        line_dicts.sort(key=lambda d: d["wavelength_nm"] or 0.0)

        # ---- instrument
        res = spec.resolution_per_cm
        main_sigma = strongest.centre_per_cm if strongest else None
        instrument = {
            "max_opd_mm": _f(spec.max_opd_cm * 10),
            "resolution_per_cm": _f(res),
            "resolution_nm": _f(_u_nm(main_sigma, res)) if main_sigma else None,
            "min_wavelength_nm": _f(limits.min_wavelength_nm),
            "line_shape": f"{options.apodization} ({spec.line_shape.kind})",
        }

        summary, budget_dict = _summary(
            spec, source_lines, strongest, sweep_spectra, interferograms, options, path,
            reference_wavelength_nm, warnings, to_air, field_of_view_factor, sweep_fit_cache,
        )
        if strongest is not None and 1e7 / strongest.centre_per_cm < limits.min_wavelength_nm:
            warnings.append(
                f"the main line lies below the shortest wavelength the time sampling supports "
                f"({limits.min_wavelength_nm:.1f} nm): it may be an alias; sample faster or "
                "scan slower"
            )
        elif alias_band is None or alias_band:
            where = _band_text(alias_band) if alias_band else "the spectrum"
            warnings.append(
                f"light shorter than {limits.min_wavelength_nm:.0f} nm (if the source emits any "
                f"and the detector sees it) is not measured: the time sampling folds it onto "
                f"{where} at these mirror speeds (aliasing); 'aliasing' in lines says what the "
                "sweeps' speeds could tell; sample faster or move the mirror more slowly to "
                "cover shorter wavelengths"
            )
        return cls(inp, processing, instrument, summary, line_dicts, budget_dict, health,
                   warnings, spec, tuple(interferograms))


def _broadband_sweep_scatter(spec, sweep_spectra, mask, ok, response):
    """Standard errors of a band's peak, centroid and FWHM from their scatter over sweeps.

    Each sweep's own spectrum (:func:`ftsource.spectrum.spectrum.coadd` of that sweep alone) gives the
    three figures (:func:`ftsource.measure.broadband.broadband_metrics`, no Monte Carlo); their
    standard error is ``std(ddof=1)/√n`` (Type A, JCGM 100:2008 §4.2), returned with ``n``.
    None with fewer than 3 sweeps whose figures could be taken.
    """
    import warnings as _w

    from ftsource.errors import FtsourceError, FtsourceWarning
    from ftsource.measure.broadband import broadband_metrics
    from ftsource.spectrum.spectrum import coadd

    if len(sweep_spectra) < 3:
        return None
    sig = spec.sigma_per_cm[mask][ok]
    rows = []
    for sw in sweep_spectra:
        one = coadd([sw], spec.sigma_per_cm, spec.line_shape.apodization)
        d = one.density[mask][ok]
        if response is not None:
            d = d / response.at(sig)
        try:
            with _w.catch_warnings():
                _w.simplefilter("ignore", FtsourceWarning)
                b = broadband_metrics(1e7 / sig, d * sig**2 / 1e7, None, n_monte_carlo=0)
        except (FtsourceError, ValueError):
            continue
        row = (b.peak_nm, b.centroid_nm, b.fwhm_nm)
        if all(np.isfinite(row)):
            rows.append(row)
    if len(rows) < 3:
        return None
    a = np.asarray(rows)
    return np.std(a, axis=0, ddof=1) / np.sqrt(len(rows)), len(rows)


def _line_shape_corrected(bb, bb2, resolution_nm, warnings):
    """Peak and FWHM of a broad band with the instrument line shape's first-order bias removed.

    ``bb`` holds the figures of the measured band M = S∗K, ``bb2`` those of M∗K
    (:func:`ftsource.spectrum.spectrum.reconvolve`); each figure becomes ``2 f(M) − f(M∗K)``
    (Richardson extrapolation). Its standard uncertainty adds a quarter of the correction in
    quadrature for the second-order remainder: on the simulated LEDs of the tests the
    remainder was at most 15 % of the correction (docs/measurements.md).
    """
    out = []
    for a, b, u in ((bb.peak_nm, bb2.peak_nm, bb.u_peak_nm),
                    (bb.fwhm_nm, bb2.fwhm_nm, bb.u_fwhm_nm)):
        corr = a - b
        if not np.isfinite(corr):
            out += [a, u]
            continue
        out += [a + corr, float(np.hypot(u, 0.25 * corr)) if np.isfinite(u) else u]
    fwhm_corr = bb.fwhm_nm - bb2.fwhm_nm
    if np.isfinite(fwhm_corr) and abs(fwhm_corr) > 0.05 * bb.fwhm_nm:
        warnings.append(
            f"the band spans only {bb.fwhm_nm / resolution_nm:.1f} resolution elements: the "
            f"instrument line shape widened it by {abs(fwhm_corr):.2g} nm, which was corrected "
            "to first order only; a longer mirror travel would measure it directly"
        )
    return tuple(out)


def _band_text(band, max_ranges: int = 3) -> str:
    """Apparent-wavenumber intervals as wavelength ranges, e.g. ``"640–910 nm"``."""
    merged: list[tuple[float, float]] = []
    for a, b in sorted(band):  # ranges closer than 2 % read as one
        if merged and a <= 1.02 * merged[-1][1]:
            merged[-1] = (merged[-1][0], max(b, merged[-1][1]))
        else:
            merged.append((a, b))
    parts = []
    for a, b in sorted(merged, key=lambda ab: ab[1] - ab[0], reverse=True)[:max_ranges]:
        short_nm = 1e7 / b
        long_end = f"–{1e7 / a:.0f} nm" if a > 100.0 else " nm and beyond"
        parts.append(f"{short_nm:.0f}{long_end}")
    more = " and elsewhere" if len(merged) > max_ranges else ""
    return ", ".join(parts) + more


def _identify(wl_nm, u_fit_nm, lam_ref, options, *, source_line=True, tables=None):
    """``{"identification": ..., "nearest_entries": [...]}`` for one measured line.

    ``nearest_entries`` are the (up to 3) nearest candidate entries of the bundled reference
    lists in vacuum wavelength, nearest first, each with its difference in ppm (measured −
    reference, relative to the reference) and whether it lies within tolerance;
    ``identification`` is the nearest
    of them within tolerance, or None ("no match"). The tolerance is k = 2 times the line's
    fit uncertainty combined with the reference laser's relative uncertainty and the entry's
    own stated uncertainty (:func:`ftsource.linelists.identify`), so a He-Ne-referenced
    measurement is not asked to be better than its own reference. Lines flagged as artefacts
    (``source_line`` False) and lines outside 200-3000 nm get no candidates.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §6 (expanded uncertainty, k = 2).
    """
    from ftsource.linelists import identify

    if not (source_line and np.isfinite(wl_nm) and 200.0 <= wl_nm <= 3000.0):
        return {"identification": None, "nearest_entries": []}
    u = float(np.hypot(u_fit_nm if np.isfinite(u_fit_nm) else 0.0,
                       wl_nm * _reference_u_ppm(options) * 1e-6))
    candidates = [
        {
            "species": c.species,
            "list": c.list_name,
            "kind": c.kind,
            "wavelength_vac_nm": _f(c.wavelength_vac_nm),
            "difference_ppm": _f(c.difference_ppm),
            "within_tolerance": bool(c.within_tolerance),
        }
        for c in identify(wl_nm, u, max_candidates=3, tables=tables)
    ]
    best = next((c for c in candidates if c["within_tolerance"]), None)
    return {
        "identification": None if best is None
        else {k: v for k, v in best.items() if k != "within_tolerance"},
        "nearest_entries": candidates,
    }


def _rejections(path, used, rejected):
    why = {int(i): str(r) for i, r in rejected}
    return [
        {"index": int(sw.index), "reason": why.get(int(sw.index), "too short to resample")}
        for sw in path.sweeps
        if sw.index not in used
    ]


def _reference_u_ppm(options) -> float:
    if options.calibration is not None:
        return float(options.calibration.u_effective_rel * 1e6)
    return float(options.reference_uncertainty_ppm)


def _air_ratio_rel_u(options, path, lam_ref, wl) -> float:
    """u(n_ref/n) for a reference-laser scale, u(n) for a geometric one (encoder, assumed
    speed), by ``options.air_model``; beyond 300–1700 nm at the nearer end (see
    :func:`_air_range_warnings`)."""
    if options.medium == "vacuum":
        return 0.0
    from ftsource.physics.air import WAVELENGTH_RANGE_NM, index_ratio_uncertainty, index_uncertainty

    model = options.air_model
    wl_c = float(np.clip(wl, *WAVELENGTH_RANGE_NM))
    if path.kind.uses_reference_laser:
        return float(index_ratio_uncertainty(lam_ref, wl_c, options.air, model=model))
    return float(index_uncertainty(wl_c, options.air, model=model))


def _air_range_warnings(source_lines, options, warnings) -> None:
    """Warn for reported lines where the air equation was used outside its range: Ciddor's
    300–1700 nm (the index at the nearer end was used), or, for ``edlen``, the visible where
    it is verified. The size of the neglected dispersion is estimated from the standard-air
    formula of Morton 2000 (eq. 8, valid 200–2000 nm)."""
    if options.medium != "air" or not source_lines:
        return
    from ftsource.physics.air import (
        EDLEN_VERIFIED_RANGE_NM,
        STANDARD_AIR_RANGE_NM,
        WAVELENGTH_RANGE_NM,
        standard_air_index,
    )

    def n_std(wl):  # Morton 2000, eq. 8 (standard air), within its range
        return float(standard_air_index(float(np.clip(wl, *STANDARD_AIR_RANGE_NM))))

    lo, hi = WAVELENGTH_RANGE_NM
    wls = sorted(_nm(f.centre_per_cm) for f in source_lines)
    out = [w for w in wls if not lo <= w <= hi]
    name = "Ciddor" if options.air_model == "ciddor" else "modified Edlén"
    if out:
        worst = max(out, key=lambda w: abs(w - np.clip(w, lo, hi)))
        edge = float(np.clip(worst, lo, hi))
        size = abs(n_std(worst) / n_std(edge) - 1) * 1e6
        bound = "about " if STANDARD_AIR_RANGE_NM[0] <= worst <= STANDARD_AIR_RANGE_NM[1] else (
            "at least ")
        shown = ", ".join(f"{w:.2f}" for w in out[:5]) + (
            f" and {len(out) - 5} more" if len(out) > 5 else "")
        warnings.append(
            f"the line(s) at {shown} nm lie outside {lo:.0f}–{hi:.0f} nm, the range of the "
            f"{name} equation for the index of air: the air correction and its uncertainty "
            f"used the index at {edge:.0f} nm, which can be off by {bound}{size:.2g} ppm "
            f"there (standard-air dispersion, Morton 2000); measure in vacuum (--medium "
            "vacuum) or treat these wavelengths as uncertain by that much"
        )
    if options.air_model == "edlen":
        vlo, vhi = EDLEN_VERIFIED_RANGE_NM
        outside = [w for w in wls if not vlo <= w <= vhi and lo <= w <= hi]
        if outside:
            warnings.append(
                f"the modified Edlén equation is verified in the visible ({vlo:.0f}–{vhi:.0f} "
                f"nm) only; the line(s) at {', '.join(f'{w:.2f}' for w in outside[:5])} nm lie "
                "outside it: --air-model ciddor (the default) is the equation for them"
            )


def _empty_summary():
    keys = [
        "centre_wavelength_nm", "centre_wavelength_air_nm", "u_centre_wavelength_nm",
        "expanded_uncertainty_nm", "coverage_factor", "wavenumber_per_cm", "frequency_thz",
        "fwhm_nm", "fwhm_upper_bound_nm", "u_fwhm_nm", "coherence_length_mm",
        "coherence_length_lower_bound_mm", "coherence_length_definition",
        "coherence_length_visibility_mm", "u_coherence_length_mm",
        "u_coherence_length_visibility_mm", "coherence_length_visibility_definition",
        "half_visibility_opd_mm", "peak_wavelength_nm",
        "u_peak_wavelength_nm", "centroid_wavelength_nm", "u_centroid_wavelength_nm",
        "chromaticity_xy", "dominant_wavelength_nm", "modes",
    ]
    d = {"kind": "none", "resolved": None, "detector_weighted": True}
    d.update({k: None for k in keys})
    return d


def _summary(spec, source_lines, strongest, sweep_spectra, ifgs, options, path, lam_ref,
             warnings, to_air, field_of_view_factor=1.0, sweep_fit_cache=None):
    from ftsource.measure import coherence as coh
    from ftsource.measure.uncertainty import wavelength_budget

    s = _empty_summary()
    s["detector_weighted"] = options.response is None
    if strongest is None:
        warnings.append(
            "no line stands above the noise: check that the source reaches the detector, the "
            "detector gain and the column mapping"
        )
        return s, None
    main = strongest
    sig0 = main.centre_per_cm
    wl0 = _nm(sig0)
    fwhm_nm = _u_nm(sig0, main.fwhm_per_cm)
    kind = "narrow"
    if main.resolved and fwhm_nm > BROADBAND_FWHM_NM:
        kind = "broadband"
    comb = None
    if kind == "narrow" and len(source_lines) >= 3:
        from ftsource.measure.modes import find_mode_comb

        comb = find_mode_comb(
            np.array([f.centre_per_cm for f in source_lines]),
            np.array([max(f.area, 0.0) for f in source_lines]),
            u_centres_per_cm=np.array([f.u_centre_per_cm for f in source_lines]),
        )
        if comb is not None:
            kind = "multimode"
    s["kind"] = kind
    centre_nm, u_fit_nm, dof_fit = wl0, _u_nm(sig0, main.u_centre_per_cm), main.dof

    if kind == "multimode":
        w = np.array(comb.intensities) / np.sum(comb.intensities)
        by_sigma = {round(f.centre_per_cm, 6): f for f in source_lines}
        us = np.array([
            by_sigma.get(round(c, 6)).u_centre_per_cm if round(c, 6) in by_sigma else 0.0
            for c in comb.centres_per_cm
        ])
        # the intensity-weighted centroid c = Σ a_i σ_i / Σ a_i moves with the modes' areas as
        # well as their centres: ∂c/∂a_i = (σ_i − c)/Σa (JCGM 100:2008 §5.1.2, uncorrelated)
        ua = np.array([
            by_sigma[round(c, 6)].u_area if round(c, 6) in by_sigma else 0.0
            for c in comb.centres_per_cm
        ])
        ua = np.where(np.isfinite(ua), ua, 0.0)
        lever = (np.asarray(comb.centres_per_cm) - comb.centroid_per_cm) / np.sum(comb.intensities)
        u_centroid_cm = float(np.sqrt(np.sum((w * us) ** 2) + np.sum((lever * ua) ** 2)))
        centre_nm = comb.centroid_nm
        u_fit_nm = _u_nm(comb.centroid_per_cm, u_centroid_cm)
        s["modes"] = {
            "n_modes": int(comb.n_modes),
            "spacing_nm": _f(comb.spacing_nm),
            "u_spacing_nm": _f(comb.u_spacing_nm),
            "spacing_ghz": _f(comb.spacing_ghz),
            "u_spacing_ghz": _f(comb.u_spacing_ghz),
            "envelope_fwhm_nm": _f(comb.envelope_fwhm_nm),
            "cavity_optical_length_mm": _f(comb.cavity_optical_length_cm * 10),
            "revivals_confirmed": _revivals(ifgs, comb, sweep_spectra),
        }

    if kind == "broadband":
        from ftsource.measure.broadband import broadband_metrics
        from ftsource.spectrum.spectrum import reconvolve

        lo = max(sig0 - 4 * main.fwhm_per_cm, 0.0)
        hi = sig0 + 4 * main.fwhm_per_cm
        m = (spec.sigma_per_cm > lo) & (spec.sigma_per_cm < hi)
        sig_m = spec.sigma_per_cm[m]
        dens_s, noise_s = spec.density[m], spec.noise[m]
        twice_s = reconvolve(spec, (lo, hi))[m]
        # the response corrects the whole band or nothing (docs/response_and_calibration.md)
        weighted = True
        if options.response is not None:
            from ftsource.calibrate.response import correct_band

            dens_c, noise_c, applied, msgs = correct_band(sig_m, dens_s, noise_s,
                                                          options.response)
            warnings.extend(msg for msg in dict.fromkeys(msgs) if msg not in warnings)
            if applied:
                dens_s, noise_s, weighted = dens_c, noise_c, False
                twice_s = twice_s / options.response.at(sig_m)
        s["detector_weighted"] = weighted
        ok = np.isfinite(dens_s) & np.isfinite(twice_s)
        wl = 1e7 / sig_m[ok]
        dens = dens_s[ok] * sig_m[ok] ** 2 / 1e7
        noise = noise_s[ok] * sig_m[ok] ** 2 / 1e7
        twice = twice_s[ok] * sig_m[ok] ** 2 / 1e7
        import warnings as _w

        from ftsource.errors import FtsourceWarning

        with _w.catch_warnings(record=True) as caught:
            _w.simplefilter("always", FtsourceWarning)
            bb = broadband_metrics(wl, dens, noise)
            bb2 = broadband_metrics(wl, twice, None, n_monte_carlo=0)
        for c in caught:
            if str(c.message) not in warnings:
                warnings.append(str(c.message))
        peak_nm, u_peak, fwhm_nm, u_fwhm = _line_shape_corrected(
            bb, bb2, _u_nm(sig0, spec.resolution_per_cm), warnings
        )
        u_centroid = bb.u_centroid_nm
        dof_bb = 50.0
        scatter = _broadband_sweep_scatter(
            spec, sweep_spectra, m, ok, None if weighted else options.response
        )
        if scatter is not None:
            # the figures' scatter between sweeps sees what the noise model leaves out (the
            # zero-filled points' correlation, phase-correction noise, drift): the larger of
            # the two statistical estimates is kept, with the scatter's degrees of freedom
            # when it is the larger (docs/measurements.md)
            (u_pk, u_ct, u_fw), n_used = scatter
            ls_peak = math.sqrt(max(u_peak**2 - bb.u_peak_nm**2, 0.0)) if np.isfinite(u_peak) \
                else 0.0
            ls_fwhm = math.sqrt(max(u_fwhm**2 - bb.u_fwhm_nm**2, 0.0)) if np.isfinite(u_fwhm) \
                else 0.0
            u_peak = float(np.hypot(np.fmax(bb.u_peak_nm, u_pk), ls_peak))
            u_fwhm = float(np.hypot(np.fmax(bb.u_fwhm_nm, u_fw), ls_fwhm))
            if not (u_centroid >= u_ct):
                u_centroid, dof_bb = u_ct, float(n_used - 1)
        if not weighted:
            # the response's shape error is correlated across the band: a separate term
            from ftsource.calibrate.response import response_shape_uncertainty
            from ftsource.errors import AnalysisError

            def figures(sg, d):
                b = broadband_metrics(1e7 / sg, d * sg**2 / 1e7, None, n_monte_carlo=0)
                return b.peak_nm, b.centroid_nm, b.fwhm_nm

            try:
                with _w.catch_warnings():  # notes on the perturbed copies are not the data's
                    _w.simplefilter("ignore", FtsourceWarning)
                    u_resp = response_shape_uncertainty(
                        sig_m[ok], dens_s[ok], options.response, figures,
                        centre_per_cm=sig0, width_per_cm=main.fwhm_per_cm,
                    )
            except AnalysisError:
                u_resp = np.full(3, np.nan)
                warnings.append(
                    "the band's figures could not be recomputed with the instrument response "
                    "moved by its uncertainty, so their uncertainties are not given; check the "
                    "response file's u_relative"
                )
            u_peak, u_centroid, u_fwhm = (float(np.hypot(a, b)) for a, b in
                                          zip((u_peak, u_centroid, u_fwhm), u_resp, strict=True))
        s.update(
            peak_wavelength_nm=_f(peak_nm),
            u_peak_wavelength_nm=_f(u_peak),
            centroid_wavelength_nm=_f(bb.centroid_nm),
            u_centroid_wavelength_nm=_f(u_centroid),
        )
        centre_nm, u_fit_nm, dof_fit = bb.centroid_nm, u_centroid, dof_bb
        s["u_fwhm_nm"] = _f(u_fwhm)
        from ftsource.measure.colour import chromaticity_xy, dominant_wavelength_nm

        xy = chromaticity_xy(wl, np.clip(dens, 0, None))
        if xy is not None:
            s["chromaticity_xy"] = [_f(xy[0]), _f(xy[1])]
            s["dominant_wavelength_nm"] = _f(dominant_wavelength_nm(xy))
        if options.response is None:
            warnings.append(
                "broadband figures are detector-weighted: no instrument response correction "
                "was applied (the detector and beamsplitter weight the spectrum; a silicon "
                "photodiode alone moves an 850 nm LED's centroid by about a quarter nm)"
            )
    if kind != "broadband" and options.aperture_diameter_m and options.focal_length_m:
        warnings.append(
            "the field-of-view (aperture) correction applies to extended sources that fill the "
            "field stop, not to a laser beam, whose own divergence sets a far smaller shift: "
            "it was not applied"
        )

    # ---- budget for the centre wavelength
    wl_for_air = centre_nm
    from ftsource.measure.uncertainty import Component

    _air_range_warnings(source_lines, options, warnings)
    opd_scale = path.kind.calibrated_quantity

    extra = []
    if field_of_view_factor != 1.0:
        shift = field_of_view_factor - 1.0  # σ/σ' − 1 = Ω/4π to first order
        omega = 4 * np.pi * (1 - 1 / field_of_view_factor)
        warnings.append(
            f"the wavenumber scale was corrected for the field of view (Jacquinot, "
            f"Ω = {omega:.3g} sr): every wavelength is {shift * 1e6:.2f} ppm shorter than "
            f"measured; the aperture also broadens lines by σΩ/2π = "
            f"{_u_nm(sig0, sig0 * omega / (2 * np.pi)):.3g} nm here (not removed)"
        )
        extra.append(Component(
            "field of view", centre_nm * shift / (2 * np.sqrt(3)),
            note=f"Jacquinot correction of {shift * 1e6:.3g} ppm assumes a uniformly filled "
                 "field stop; half of it is allowed for partial filling (rectangular)",
        ))
    ref_rel = _reference_u_ppm(options) * 1e-6
    cal = options.calibration
    if cal is not None and not path.kind.uses_reference_laser:
        ref_rel = 0.0
        what = "encoder's scale" if path.kind is OpdKind.ENCODER else "mirror speed"
        extra.append(Component(
            "rig calibration", centre_nm * cal.u_effective_rel,
            note=f"relative standard uncertainty {cal.u_effective_rel * 1e6:.3g} ppm of the "
                 f"{what} calibrated from the known line {cal.known_wavelength_nm:.6g} nm",
        ))
    elif path.kind is OpdKind.ENCODER:
        ref_rel = 0.0
        if options.encoder_scale_uncertainty_ppm is not None:
            extra.append(Component(
                "encoder scale", centre_nm * options.encoder_scale_uncertainty_ppm * 1e-6,
                note=f"relative standard uncertainty {options.encoder_scale_uncertainty_ppm:g} ppm "
                     "of the encoder's scale (user input)",
            ))
        # not given: the pipeline's note says it is missing from the budget
    elif path.kind is OpdKind.CONSTANT_SPEED:
        ref_rel = 0.0
        extra.append(Component(
            "assumed mirror speed", centre_nm * options.mirror_speed_uncertainty_ppm * 1e-6,
            note=f"relative standard uncertainty {options.mirror_speed_uncertainty_ppm * 1e-4:g} % "
                 "of the assumed constant mirror speed (user input or default 5 %)",
        ))
    corrected, budget = wavelength_budget(
        centre_nm,
        u_fit_nm=float(u_fit_nm) if np.isfinite(u_fit_nm) else 0.0,
        dof_fit=max(float(dof_fit), 1.0) if np.isfinite(dof_fit) else math.inf,
        reference_rel_u=ref_rel,
        air_ratio_rel_u=_air_ratio_rel_u(options, path, lam_ref, wl_for_air),
        alignment_allowance_rel=(
            0.0 if cal is not None else options.alignment_allowance_ppm * 1e-6
        ),
        alignment_note=(
            "held in the rig calibration, made with the alignment in use (realigning calls "
            "for a new calibration)" if cal is not None else None
        ),
        extra=tuple(extra),
        opd_scale=opd_scale,
    )
    if cal is not None and options.alignment_allowance_ppm > 0:
        warnings.append(
            "the alignment allowance was not applied: the rig calibration already holds the "
            "cosine error of the alignment it was made with (realigning calls for a new one)"
        )
    s["centre_wavelength_nm"] = _f(corrected)
    s["centre_wavelength_air_nm"] = _f(to_air(corrected))
    s["u_centre_wavelength_nm"] = _f(budget.combined)
    s["expanded_uncertainty_nm"] = _f(budget.expanded)
    s["coverage_factor"] = _f(budget.coverage_factor)
    s["wavenumber_per_cm"] = _f(1e7 / corrected)
    s["frequency_thz"] = _f(C_M_S / (corrected * 1e-9) / 1e12)
    if path.kind is OpdKind.CONSTANT_SPEED and cal is not None:
        warnings.append(
            "NO REFERENCE: every wavelength scales with the mirror speed, calibrated here from a "
            "known line; this holds only while the drive runs exactly as it did then"
        )
    elif path.kind is OpdKind.CONSTANT_SPEED:
        warnings.append(
            "NO REFERENCE: every wavelength scales with the assumed mirror speed; the budget "
            "carries its stated uncertainty (default 5 %), which dominates. Calibrate the speed "
            "with a known line (ftsource calibrate) or add a reference laser"
        )

    # ---- consistency between sweeps (a check, not a budget component)
    if kind == "narrow" and len(sweep_spectra) >= 2:
        _sweep_check(spec, sweep_spectra, sig0, warnings, sweep_fit_cache)

    # ---- width, coherence
    s["resolved"] = bool(main.resolved) if kind != "multimode" else None
    if kind in ("narrow", "broadband"):
        if main.resolved:
            s["fwhm_nm"] = _f(fwhm_nm)
            if s["u_fwhm_nm"] is None:
                s["u_fwhm_nm"] = _f(_u_nm(sig0, main.u_fwhm_per_cm))
            try:
                if kind == "broadband":
                    band = (sig0 - 6 * main.fwhm_per_cm, sig0 + 6 * main.fwhm_per_cm)
                    ce = coh.coherence_from_spectrum(spec.sigma_per_cm, spec.density,
                                                     noise=spec.noise, band=band)
                else:
                    # the fitted intrinsic profile (instrument shape removed, wings complete)
                    ce = _profile_coherence(main)
                s["coherence_length_mm"] = _f(ce.length_cm * 10)
                u_lc = ce.u_length_cm if np.isfinite(ce.u_length_cm or np.nan) else np.nan
                if not (u_lc > 0) and main.fwhm_per_cm > 0:
                    # L_c ∝ 1/Δσ for a given profile: the width's relative uncertainty
                    u_lc = ce.length_cm * main.u_fwhm_per_cm / main.fwhm_per_cm
                s["u_coherence_length_mm"] = _f(u_lc * 10)
                s["half_visibility_opd_mm"] = _f(ce.half_visibility_opd_cm * 10)
                s["coherence_length_definition"] = ce.definition
            except Exception as e:  # noqa: BLE001 - an estimate that fails is reported, not fatal
                warnings.append(
                    f"the coherence length could not be computed from the spectrum: {e}"
                )
        else:
            ub = main.fwhm_upper_bound_per_cm
            s["fwhm_upper_bound_nm"] = _f(_u_nm(sig0, ub))
            s["coherence_length_lower_bound_mm"] = _f(coh.coherence_lower_bound_cm(ub) * 10)
            s["coherence_length_definition"] = coh.GOODMAN_DEFINITION
            warnings.append(
                f"the line is not resolved: its width is below "
                f"{_u_nm(sig0, ub):.3g} nm (about 95 % coverage) and only bounds are reported; "
                f"a longer mirror travel (resolution now {_u_nm(sig0, spec.resolution_per_cm):.3g}"
                " nm) is needed to measure it"
            )
        vis = _visibility(ifgs, sweep_spectra)
        if vis is not None and not vis.is_lower_bound:
            s["coherence_length_visibility_mm"] = _f(vis.length_cm * 10)
            s["u_coherence_length_visibility_mm"] = _f((vis.u_length_cm or np.nan) * 10)
            s["coherence_length_visibility_definition"] = f"{vis.definition}; {vis.method}"
            msg = coherence_disagreement(
                s["coherence_length_mm"], s["u_coherence_length_mm"],
                vis.length_cm * 10, s["u_coherence_length_visibility_mm"],
            )
            if msg:
                warnings.append(msg)
    return s, budget.to_dict("_nm")


def coherence_disagreement(lc_mm, u_lc_mm, lv_mm, u_lv_mm, *, floor: float = 0.1):
    """The warning when the two coherence lengths disagree, or None.

    They disagree when ``|L_spec − L_vis| > max(2·√(u_spec² + u_vis²), floor·L_spec)``: two
    standard uncertainties of the difference (k = 2, about 95 %), but never less than 10 % of
    the value, which covers what the uncertainties leave out (the visibility envelope's
    sampling, the spectrum's band limits). Missing values give None.
    """
    if lc_mm is None or lv_mm is None or not (np.isfinite(lc_mm) and np.isfinite(lv_mm)):
        return None
    u = math.hypot(u_lc_mm if u_lc_mm is not None and np.isfinite(u_lc_mm) else 0.0,
                   u_lv_mm if u_lv_mm is not None and np.isfinite(u_lv_mm) else 0.0)
    if abs(lc_mm - lv_mm) <= max(2 * u, floor * lc_mm):
        return None
    return (
        f"the coherence length from the spectrum ({lc_mm:.4g} mm) and from the fringe "
        f"visibility ({lv_mm:.4g} mm) disagree by more than their uncertainties (or 10 %): side "
        "structure in the spectrum, detector nonlinearity or a visibility limited by alignment "
        "may be the cause"
    )


def _profile_coherence(fit):
    """Coherence length (Goodman's integral) of a fitted Voigt profile, from its closed-form
    density on a grid wide enough for the Lorentzian wings (±2000 widths; the tail beyond
    holds < 0.04 % of the area)."""
    from scipy.special import voigt_profile

    from ftsource.measure import coherence as coh
    g, lw = fit.gauss_fwhm_per_cm, fit.lorentz_fwhm_per_cm
    w = max(fit.fwhm_per_cm, 1e-12)
    reach = 2000 * w if lw > 0 else 8 * w
    sig = np.linspace(-reach, reach, 400_001)
    dens = voigt_profile(sig, g / (2 * np.sqrt(2 * np.log(2))), lw / 2)
    ce = coh.coherence_from_spectrum(sig + fit.centre_per_cm, dens)
    return ce


def _sweep_check(spec, sweep_spectra, sig0, warnings, fit_cache=None):
    from ftsource.lines.sweeps import sweep_line_centres
    from ftsource.measure.uncertainty import sweep_consistency

    fits = sweep_line_centres(spec, sweep_spectra, sig0, cache=fit_cache)
    vals = [c for _, c, _ in fits]
    us = [u for _, _, u in fits]
    if len(vals) >= 2:
        c = sweep_consistency(vals, us)
        if not c.consistent:
            warnings.append(
                f"the sweeps disagree more than their fits predict (Birge ratio "
                f"{c.birge_ratio:.2g}): something the fits do not see moves the line between "
                "sweeps (mirror tilt, drifting reference, channel delay); the centre's "
                "uncertainty may be too small"
            )


def _visibility(ifgs, sweep_spectra):
    from ftsource.measure.coherence import coherence_from_visibility

    for ig, sw in zip(ifgs, sweep_spectra, strict=False):
        if sw.zpd_found:
            try:
                return coherence_from_visibility(ig.x_cm, ig.y, zpd_x_cm=sw.x_zpd_cm)
            except Exception:  # noqa: BLE001 - optional estimate
                return None
    return None


def _revivals(ifgs, comb, sweep_spectra):
    from ftsource.measure.modes import check_revivals

    for ig, sw in zip(ifgs, sweep_spectra, strict=False):
        if sw.zpd_found:
            try:
                rc = check_revivals(ig.x_cm, ig.y, comb.spacing_per_cm, zpd_x_cm=sw.x_zpd_cm)
                return rc.confirmed
            except Exception:  # noqa: BLE001 - optional check
                return None
    return None
