"""ftsource: characterize a light source from scanned-mirror (Michelson) interferograms.

Public API (imported lazily, so ``import ftsource`` and ``ftsource --help`` stay fast):

=======================  ============================================================
``analyze``              the whole job: a record (or its file) and keyword quantities in,
                         a :class:`Result` out
``AnalysisOptions``      reference wavelength, air, apodization, phase correction, ...
``read_record``          read a CSV/TSV/whitespace table, ``.npz`` or ``.wav`` record
``Record``               the samples of one recording
``Result``               what an analysis found; ``Result.to_dict()`` is the JSON
``write_outputs``        write ``result.json``, the spectrum files, the report and figures
``FFTPlanner``           explicitly cached FFTW plans
``simulate``             the forward model (module): records from a known source
``FtsourceError``        base of every error ftsource raises on purpose
``FtsourceWarning``      the warning class (texts are also in ``Result.warnings``)
``AnalysisWarning``      what ``analyze`` issues: each of ``Result.warnings``, once
=======================  ============================================================

Example (``scan.csv`` is a record file)::

    import astropy.units as u
    import ftsource

    result = ftsource.analyze("scan.csv", reference_wavelength=632.991 * u.nm,
                              medium="air", air_temperature=21 * u.deg_C)
    result.centre_wavelength, result.expanded_uncertainty   # astropy Quantities
    result.to_dict()                                          # the JSON

The stage packages (``io``, ``interferogram``, ``spectrum``, ``lines``, ``measure``,
``calibrate``, ``physics``, ``report``) are importable on their own; DEVELOPERS.md maps them.
"""

__version__ = "0.1.0"

__all__ = [
    "analyze",
    "AnalysisOptions",
    "read_record",
    "Record",
    "Result",
    "write_outputs",
    "FFTPlanner",
    "simulate",
    "FtsourceError",
    "FtsourceWarning",
    "AnalysisWarning",
    "__version__",
]

_LAZY = {
    "analyze": ("ftsource.analysis", "analyze"),
    "AnalysisOptions": ("ftsource.analysis", "AnalysisOptions"),
    "read_record": ("ftsource.io.records", "read_record"),
    "Record": ("ftsource.io.records", "Record"),
    "Result": ("ftsource.result", "Result"),
    "write_outputs": ("ftsource.report.text", "write_outputs"),
    "FFTPlanner": ("ftsource.spectrum.transform", "FFTPlanner"),
    "simulate": ("ftsource.simulate", None),
    "FtsourceError": ("ftsource.errors", "FtsourceError"),
    "FtsourceWarning": ("ftsource.errors", "FtsourceWarning"),
    "AnalysisWarning": ("ftsource.errors", "AnalysisWarning"),
}


def __getattr__(name):
    if name in _LAZY:
        import importlib

        module, attr = _LAZY[name]
        mod = importlib.import_module(module)
        return mod if attr is None else getattr(mod, attr)
    raise AttributeError(f"module 'ftsource' has no attribute {name!r}")


def __dir__():
    return sorted(__all__)
