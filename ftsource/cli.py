"""The ``ftsource`` command line: a thin shell over the Python API.

Only the standard library is imported at module level, so ``ftsource --help`` starts fast;
each command imports what it needs. Every error a user can cause ends as one ``error: ...``
line on standard error and exit status 2; nothing is written when a command fails.
"""

from __future__ import annotations

import argparse
import sys

from ftsource._checks import one_line, quote  # standard library only

__all__ = ["main", "build_parser"]

SAFETY_LINE = (
    "Laser safety: never look into a laser beam or its reflections; green pointers may also "
    "emit invisible infrared. Follow IEC 60825-1 and local laser-safety rules. ftsource "
    "measures wavelength, not hazard class."
)


# Names of ftsource.spectrum.apodization's registry, in its order. Kept here as text so that
# --help imports only the standard library; tests/test_help.py checks they are the registry's.
APODIZATION_NAMES = (
    "boxcar", "triangular", "happ-genzel", "hann", "blackman-harris-3", "blackman-harris-4",
    "norton-beer-weak", "norton-beer-medium", "norton-beer-strong",
)

_HELP_EPILOG = (
    "QTY is a number with its unit, written as one word (632.991nm, 48kHz, 0.5mm/s, 21.5degC) "
    "or quoted ('632.991 nm'). " + SAFETY_LINE
)

#: Longest error line printed (characters); a longer message is cut with "...".
MESSAGE_LIMIT = 2000


class UsageError(Exception):
    """A command line that argparse refuses (unknown option, missing value, bad choice)."""


class _HelpFormatter(argparse.HelpFormatter):
    """argparse's help layout, but never breaking a line inside a hyphenated name
    (``norton-beer-weak``, ``--air-temperature``)."""

    def _split_lines(self, text, width):
        import textwrap

        return textwrap.wrap(" ".join(text.split()), width, break_on_hyphens=False)


class _Parser(argparse.ArgumentParser):
    """argparse, but a refused command line raises :class:`UsageError` instead of printing the
    usage block and calling ``sys.exit``: ``main`` turns it into one ``error:`` line."""

    def __init__(self, *args, **kwargs):
        kwargs.setdefault("formatter_class", _HelpFormatter)
        super().__init__(*args, **kwargs)

    def error(self, message):  # noqa: D102 - argparse API
        if "expected one argument" in message:
            message += " (a value that starts with '-' is written as --option=VALUE)"
        raise UsageError(f"{self.prog}: {message}; see '{self.prog} --help'")


def _split_value_hint(argv) -> str:
    """A hint when the shell split a quantity such as ``633 nm`` into two words.

    Looks for an option's value that is a bare number followed by a word that starts like a
    unit (``--reference-wavelength 633 nm``, ``--sample-rate=48 kHz``); returns
    ``"; ... write 633nm or quote it"`` or ``""``.
    """
    import re

    number = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
    unit = re.compile(r"[A-Za-zµμ°Å%][A-Za-z0-9µμ°Å%/^*.-]*")
    words = [str(w) for w in argv]
    for i, (word, nxt) in enumerate(zip(words, words[1:], strict=False)):
        option, eq, value = word.partition("=")
        if eq and option.startswith("--"):
            pass
        elif i > 0 and words[i - 1].startswith("--") and "=" not in words[i - 1]:
            option, value = words[i - 1], word
        else:
            continue
        if number.fullmatch(value) and unit.fullmatch(nxt):
            return (
                f"; the shell split {option}'s value '{value} {nxt}' at the space: write it "
                f"as one word ({option} {value}{nxt}) or quote it ({option} '{value} {nxt}')"
            )
    return ""


def build_parser() -> argparse.ArgumentParser:
    from ftsource.interferogram.scale import HENE_VACUUM_WAVELENGTH_NM  # standard library only

    p = _Parser(
        prog="ftsource",
        description=(
            "Characterize a light source from scanned-mirror (Michelson) interferograms: "
            "spectrum, centre wavelength, linewidth, coherence length and modes, each with its "
            "uncertainty."
        ),
        epilog=SAFETY_LINE,
    )
    p.add_argument("--version", action="store_true", help="print the version and exit")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")

    a = sub.add_parser("analyze", help="analyse a recorded scan", epilog=_HELP_EPILOG,
                       description="Analyse a recorded scan: spectrum, centre wavelength, "
                                   "linewidth, coherence length, modes, with uncertainties.")
    a.add_argument("record", help="record file: .csv/.tsv/.txt/.dat, .npz or .wav")
    _add_analysis_options(a)
    a.add_argument("--json", action="store_true",
                   help="print the result JSON instead of the text summary (default: text)")
    a.add_argument("--out", metavar="DIR",
                   help="also write result.json, spectrum.ecsv, spectrum.fits, report.html and "
                        "the figures (fig-*.png) into DIR (default: write nothing)")
    a.add_argument("--overwrite", action="store_true",
                   help="replace result files already in --out (default: refuse)")
    _add_output_options(a)
    a.add_argument("--full-spectrum", action="store_true",
                   help="store every point of the zero-filled spectrum over the detector band "
                        "in spectrum.ecsv/.fits (default: the source's band at the instrument's "
                        "own sampling)")
    _add_fft_options(a)
    a.add_argument(
        "--strict", action="store_true",
        help="exit with status 1 (after writing the result) when no source line is found "
             "(default: exit 0 with a warning)",
    )

    b = sub.add_parser("batch", help="analyse many records in parallel, one summary table",
                       epilog=SAFETY_LINE)
    b.add_argument("records", metavar="DIR|GLOB",
                   help="a folder of records, or a pattern such as 'runs/*.npz' (quote it)")
    b.add_argument("--out", metavar="DIR", required=True,
                   help="write summary.ecsv and each record's results (DIR/<name>/) here "
                        "(required)")
    b.add_argument("--overwrite", action="store_true",
                   help="replace result files already in --out (default: refuse)")
    b.add_argument("--workers", type=int, metavar="N",
                   help="worker processes (default: the number of CPUs; 1 runs in this process)")
    b.add_argument("--scheduler", metavar="ADDRESS",
                   help="run on this Dask distributed scheduler, e.g. tcp://10.0.0.5:8786 "
                        "(needs the [dask] extra; default: a local process pool)")
    _add_analysis_options(b)
    _add_fft_options(b)
    _add_output_options(b)

    s = sub.add_parser("simulate", help="make a record of a known source (planning, testing)",
                       epilog="Every record it writes is invented data. " + _HELP_EPILOG,
                       description="Make a record of a known, invented source through a "
                                   "simulated interferometer (for planning and testing).")
    s.add_argument("out", help="record file to write: .csv/.tsv/.txt/.dat, .npz or .wav "
                               "(a WAV file holds the channels scaled to full scale, 24 bit)")
    s.add_argument("--source", action="append", metavar="SPEC",
                   help="the light: laser:WL[:FWHM], led:WL:FWHM or "
                        "multimode:WL:SPACING:ENVELOPE, lengths with units (e.g. laser:532nm, "
                        "led:590nm:15nm, multimode:650nm:0.08nm:1nm); repeat to add sources "
                        "(default: laser:650nm). An LED's WL and FWHM are the peak and width "
                        "of its density per unit wavelength, the figures analyze reports")
    s.add_argument("--reference", default="quadrature",
                   choices=("quadrature", "single", "encoder", "none"),
                   help="what records the optical path: quadrature (two reference-laser "
                        "channels ref_i, ref_q), single (one channel ref), encoder (a mirror "
                        "position column) or none (default: %(default)s)")
    s.add_argument("--reference-wavelength", default=f"{HENE_VACUUM_WAVELENGTH_NM}nm",
                   metavar="QTY",
                   help="vacuum wavelength of the simulated reference laser (default: "
                        "%(default)s, a He-Ne laser)")
    s.add_argument("--sample-rate", default="48kHz", metavar="QTY",
                   help="samples per second (default: %(default)s, a sound card)")
    s.add_argument("--duration", default="2s", metavar="QTY",
                   help="length of the recording (default: %(default)s)")
    s.add_argument("--opd-centre", default="0mm", metavar="QTY",
                   help="optical path difference at the centre of the travel; 0mm puts zero "
                        "path difference in every sweep (default: %(default)s)")
    s.add_argument("--opd-amplitude", default="1mm", metavar="QTY",
                   help="half the OPD travel (the mirror moves half of it) (default: "
                        "%(default)s)")
    s.add_argument("--sweep-rate", default="1Hz", metavar="QTY",
                   help="full back-and-forth mirror cycles per second (default: %(default)s)")
    s.add_argument("--noise", type=float, default=0.002, metavar="RATIO",
                   help="r.m.s. white noise of the source detector as a bare ratio of its mean "
                        "light level (the fringes swing by 1 about a mean of 1): 0.002 is "
                        "0.2 %% (default: %(default)s)")
    s.add_argument("--medium", choices=("air", "vacuum"), default="vacuum",
                   help="what the beams travel through: vacuum, or air at 20 °C, 101.325 kPa, "
                        "50 %% RH, 450 ppm CO2 (Ciddor 1996) (default: %(default)s)")
    s.add_argument("--seed", type=int, default=0, metavar="N",
                   help="seed of the random noise and speed wobble, a whole number >= 0; the "
                        "same seed gives the same record (default: %(default)s)")
    s.add_argument("--overwrite", action="store_true",
                   help="replace an existing file (default: refuse)")

    d = sub.add_parser("demo", help="analyse the bundled demo records (an invented scenario)",
                       epilog=SAFETY_LINE,
                       description="Analyse the three bundled demo records of an invented "
                                   "scenario and print each summary.")
    d.add_argument("--out", metavar="DIR",
                   help="also write each result into DIR/<record>/ (default: write nothing)")
    d.add_argument("--overwrite", action="store_true",
                   help="replace result files already in DIR (default: refuse)")
    _add_output_options(d)

    pt = sub.add_parser("plot", help="redraw the figures of a saved result.json as PNG files",
                        epilog=_HELP_EPILOG,
                        description="Redraw the figures (fig-*.png) from the 'plot' object of a "
                                    "result.json written by 'analyze --out'.")
    pt.add_argument("result", help="a result.json written by 'analyze --out'")
    pt.add_argument("--out", metavar="DIR",
                    help="folder for the fig-*.png files (default: the result's folder)")
    pt.add_argument("--overwrite", action="store_true",
                    help="replace existing figures (default: refuse)")
    _add_output_options(pt)

    ln = sub.add_parser("lines", help="list and search the bundled reference line lists",
                        epilog=_HELP_EPILOG,
                        description="List and search the bundled reference lines (lamp "
                                    "lines, laser standards, nominal laser labels).")
    ln.add_argument("--element", metavar="SYMBOL",
                    help="only lines of this element, e.g. Ne, Hg (case-insensitive; laser "
                         "entries have none) (default: every list and element)")
    ln.add_argument("--min", dest="min_wl", metavar="QTY",
                    help="shortest wavelength, e.g. 400nm (default: no lower limit)")
    ln.add_argument("--max", dest="max_wl", metavar="QTY",
                    help="longest wavelength, e.g. 700nm (default: no upper limit)")
    ln.add_argument("--near", metavar="QTY",
                    help="only lines within --tolerance of this wavelength (default: off)")
    ln.add_argument("--tolerance", metavar="QTY", default="1nm",
                    help="half-width of the --near window (default: %(default)s)")
    ln.add_argument("--medium", choices=("vacuum", "air"), default="vacuum",
                    help="vacuum or air: which wavelength --min/--max/--near refer to and the "
                         "list is sorted by (default: %(default)s)")
    ln.add_argument("--air-temperature", metavar="QTY",
                    help="with any --air-* option the air column is computed for that air "
                         "(Ciddor 1996), values left out taking analyze's defaults (default: "
                         "standard air as NIST quotes it: dry, 15 °C, 101 325 Pa)")
    ln.add_argument("--air-pressure", metavar="QTY",
                    help="air pressure for the air column, e.g. 1013hPa (default: standard "
                         "air, see --air-temperature)")
    ln.add_argument("--air-humidity", metavar="QTY",
                    help="relative humidity for the air column, e.g. 45%% (default: standard "
                         "air, see --air-temperature)")
    ln.add_argument("--json", action="store_true",
                    help="print a JSON list of rows instead of the table (default: table)")

    c = sub.add_parser("calibrate", help="calibrate the rig with a record of a known line",
                       epilog=_HELP_EPILOG,
                       description="Measure a record of a line of known wavelength and save "
                                   "the rig's correction (its effective reference wavelength).")
    c.add_argument("record", help="record of a source of known wavelength")
    known = c.add_mutually_exclusive_group(required=True)
    known.add_argument("--known-wavelength", metavar="QTY",
                       help="its vacuum wavelength, e.g. 532.24503610nm; needs "
                            "--known-uncertainty unless it is a bundled standard's value "
                            "(required: this or --known-line)")
    known.add_argument("--known-line", metavar="LIST:QTY",
                       help="a bundled entry named by list and wavelength (vacuum or standard "
                            "air), e.g. laser_standards:632.99121258nm or lamp_ne:640.2248nm; "
                            "see 'ftsource lines'. Nominal laser labels are refused (required: "
                            "this or --known-wavelength)")
    c.add_argument("--known-uncertainty", metavar="QTY",
                   help="standard uncertainty of the known wavelength (a length, e.g. "
                        "0.0001nm) (default: the entry's stated one; required when it states "
                        "none, as lamp lines do, and with --known-wavelength)")
    c.add_argument("--save", metavar="FILE", required=True,
                   help="calibration file to write (required)")
    c.add_argument("--overwrite", action="store_true",
                   help="replace an existing FILE (default: refuse)")
    _add_analysis_options(c)

    r = sub.add_parser("response", help="instrument response from a record of a known lamp",
                       epilog=_HELP_EPILOG,
                       description="Measure the relative spectral response of the rig from a "
                                   "record of a lamp of known temperature (blackbody "
                                   "approximation).")
    r.add_argument("record", help="record of a lamp of known spectral distribution")
    r.add_argument("--lamp-temperature", metavar="QTY", required=True,
                   help="distribution temperature (blackbody approximation), e.g. 2856K "
                        "(required)")
    r.add_argument("--lamp-temperature-uncertainty", metavar="QTY", default="30K",
                   help="standard uncertainty of the lamp temperature (default: %(default)s)")
    r.add_argument("--save", metavar="FILE", required=True,
                   help="response file (ECSV) to write (required)")
    r.add_argument("--overwrite", action="store_true",
                   help="replace an existing FILE (default: refuse)")
    _add_analysis_options(r)

    pl = sub.add_parser(
        "plan", help="plan a scan and its optics: travel, speed, rates, aperture, lenses",
        description="Each part runs when its options are given: the scan (--resolution), "
                    "whether a line is resolved (--linewidth), the collimator (--lens1, "
                    "--lens2) and a lens's focal length (--object-distance, --image-distance).",
        epilog=SAFETY_LINE,
    )
    pl.add_argument("--resolution", metavar="QTY",
                    help="wanted resolution (FWHM of the line shape): a wavenumber, e.g. "
                         "0.5/cm, or a length, then at the band's short end, e.g. 0.02nm "
                         "(default: no scan plan)")
    pl.add_argument("--band", metavar="QTY:QTY", default="400nm:1100nm",
                    help="shortest and longest vacuum wavelength to measure (default "
                         "400nm:1100nm)")
    pl.add_argument("--sample-rate", metavar="QTY", default="48kHz",
                    help="recorder sample rate (default 48kHz)")
    pl.add_argument("--bandwidth-fraction", type=float, default=0.45,
                    help="usable fraction of the sample rate: 0.45 for a sound card, 0.5 for "
                         "an ADC with a sharp anti-alias filter (default 0.45)")
    pl.add_argument("--reference-wavelength", metavar="QTY", default="632.991nm",
                    help="vacuum wavelength of the reference laser (default 632.991nm)")
    pl.add_argument("--apodization", metavar="NAME", default="happ-genzel",
                    help="apodization the analysis will use (default happ-genzel)")
    pl.add_argument("--focal-length", metavar="QTY",
                    help="collimator focal length, for the largest field-stop diameter "
                         "(default: none, the solid angle only)")
    pl.add_argument("--linewidth", metavar="QTY",
                    help="expected FWHM of a source line, e.g. 0.001nm (default: no check)")
    pl.add_argument("--wavelength", metavar="QTY",
                    help="wavelength of that line (default: the band's short end)")
    pl.add_argument("--max-opd", metavar="QTY",
                    help="maximum OPD of the scan to check, e.g. 5mm (default: the planned "
                         "scan's)")
    pl.add_argument("--lens1", metavar="QTY",
                    help="focal length of the collimator's first lens, e.g. 25mm (negative "
                         "for a diverging lens; default: no collimator)")
    pl.add_argument("--lens2", metavar="QTY",
                    help="focal length of the second lens (default: no collimator)")
    pl.add_argument("--spacing-error", metavar="QTY", default="0.5mm",
                    help="error of the lens spacing for the residual divergence (default 0.5mm)")
    pl.add_argument("--beam-diameter", metavar="QTY", default="2mm",
                    help="diameter of the beam entering the first lens (default 2mm)")
    pl.add_argument("--object-distance", metavar="QTY",
                    help="object-to-lens distance of a sharp image (default: no lens "
                         "measurement)")
    pl.add_argument("--image-distance", metavar="QTY",
                    help="lens-to-image distance (default: no lens measurement)")
    pl.add_argument("--distance-uncertainty", metavar="QTY", default="1mm",
                    help="standard uncertainty of each distance (default 1mm)")
    pl.add_argument("--json", action="store_true", help="print the plan as JSON (default off)")
    return p


def _add_output_options(a) -> None:
    a.add_argument("--quiet", action="store_true",
                   help="do not print a 'wrote PATH' line per file written (default: print)")


def _wrote(out, paths, quiet: bool) -> None:
    """One ``wrote PATH`` line per file written, unless ``quiet``."""
    if not quiet:
        out.write("".join(f"wrote {p}\n" for p in paths))


def _add_fft_options(a) -> None:
    """FFT options of the commands that analyse records for their results (analyze, batch)."""
    a.add_argument("--fft-wisdom", metavar="FILE",
                   help="FFTW wisdom file: read when it exists, written back with the plans "
                        "made (pays off with --fft-planning measure; default: none)")
    a.add_argument("--fft-threads", type=int, default=1, metavar="N",
                   help="FFTW threads per transform (default: 1)")


def _add_analysis_options(a) -> None:
    """Options shared by analyze, calibrate and response."""
    a.add_argument("--reference-wavelength", metavar="QTY",
                   help="vacuum wavelength of the reference laser, e.g. 632.991nm (default: the "
                        "record's reference_wavelength metadata; without either, an error)")
    a.add_argument("--reference-uncertainty", metavar="QTY",
                   help="its standard uncertainty, as a length or ppm (default: 1.5ppm only "
                        "for a He-Ne's vacuum wavelength (CIPM 2007) or a bundled standard's "
                        "own; required for any other laser)")
    a.add_argument("--alignment-allowance", metavar="QTY", default="0ppm",
                   help="cosine-error allowance a (ratio): the result may be too long by up to a "
                        "(negative: too short); corrected by a/2, u = |a|/sqrt(12) (default: "
                        "%(default)s)")
    a.add_argument("--medium", choices=("air", "vacuum"), default="air",
                   help="what the interferometer's beams travel through: air (the wavelength "
                        "scale is corrected for the air's dispersion and the air enters the "
                        "uncertainty) or vacuum (default: %(default)s)")
    a.add_argument("--air-temperature", metavar="QTY",
                   help="air temperature in the arms, e.g. 21.5degC (default: metadata "
                        "air_temperature, else 20 °C ± 2 K)")
    a.add_argument("--air-pressure", metavar="QTY",
                   help="air pressure, e.g. 1013hPa (default: metadata air_pressure, else "
                        "101.325 kPa ± 2 kPa)")
    a.add_argument("--air-humidity", metavar="QTY",
                   help="relative humidity, e.g. 45%% (default: metadata air_humidity, else "
                        "50 %% ± 20 %%); a bare number above 1 is percent (45 = 45 %%); write "
                        "a fraction as '0.45 fraction'")
    a.add_argument("--air-co2", metavar="QTY",
                   help="CO2 mole fraction, e.g. 420ppm (default: 450 ppm ± 150 ppm)")
    a.add_argument("--air-temperature-uncertainty", metavar="QTY",
                   help="standard uncertainty of the air temperature, e.g. 0.2K (default: "
                        "0.3 K when the temperature is given)")
    a.add_argument("--air-pressure-uncertainty", metavar="QTY",
                   help="standard uncertainty of the pressure, e.g. 50Pa (default: 120 Pa when "
                        "the pressure is given)")
    a.add_argument("--air-humidity-uncertainty", metavar="QTY",
                   help="standard uncertainty of the humidity, e.g. 3%% (default: 3 %% when the "
                        "humidity is given); bare numbers as for --air-humidity")
    a.add_argument("--air-co2-uncertainty", metavar="QTY",
                   help="standard uncertainty of the CO2 fraction, e.g. 50ppm (default: 30 ppm "
                        "when --air-co2 is given)")
    a.add_argument("--air-model", choices=("ciddor", "edlen"), default="ciddor",
                   help="equation for the index of air: ciddor (Ciddor 1996, 300-1700 nm) or "
                        "edlen (Birch & Downs, verified in the visible) (default: %(default)s)")
    a.add_argument("--encoder-scale-uncertainty", metavar="QTY",
                   help="relative standard uncertainty of a position encoder's scale, e.g. 5ppm "
                        "(default: none; a warning says the budget lacks it)")
    a.add_argument("--sample-rate", metavar="QTY",
                   help="samples per second, e.g. 48kHz; overrides the record's sample_rate "
                        "metadata or WAV header and must agree with a time column to 0.1 %% "
                        "(default: from the time column, metadata or WAV header)")
    a.add_argument("--columns", metavar="MAP",
                   help="which column is which, NAME=COLUMN pairs for signal, ref, ref_i, ref_q, "
                        "position, time: e.g. signal=PD1,ref=PD2, or signal=1,ref=0 for WAV "
                        "channels (default: by column name; WAV: 2 channels signal,ref; 3 "
                        "channels signal,ref_i,ref_q)")
    a.add_argument("--mirror-speed", metavar="QTY",
                   help="no reference: assume this constant mirror speed, e.g. 0.5mm/s (the "
                        "path changes at twice it; loudly uncalibrated) (default: off)")
    a.add_argument("--apodization", default="happ-genzel", metavar="NAME",
                   help="weighting of the interferogram before the transform, one of: "
                        + ", ".join(APODIZATION_NAMES) + " (default: %(default)s)")
    a.add_argument("--phase-correction", default="auto",
                   choices=("auto", "mertz", "forman", "magnitude"),
                   help="how the spectrum is made real: auto (Mertz where a sweep holds zero "
                        "path difference, else the magnitude), mertz (Mertz 1965), forman "
                        "(Forman, Steel & Vanasse 1966) or magnitude (|B|, needs no phase but "
                        "biased by noise) (default: %(default)s)")
    a.add_argument("--fft-planning", default="estimate", choices=("estimate", "measure"),
                   help="FFTW planning effort: estimate plans in milliseconds; measure can take "
                        "a minute for long records and then transforms faster (default: "
                        "%(default)s)")
    a.add_argument("--calibration", metavar="FILE",
                   help="rig calibration saved by 'ftsource calibrate' (default: none)")
    a.add_argument("--response", metavar="FILE",
                   help="instrument response curve (ECSV) saved by 'ftsource response' "
                        "(default: none; spectra are as detected)")
    a.add_argument("--aperture-diameter", metavar="QTY",
                   help="field stop diameter, e.g. 10mm, for the field-of-view correction of an "
                        "extended source; needs --focal-length (default: no correction)")
    a.add_argument("--focal-length", metavar="QTY",
                   help="collimator focal length, e.g. 50mm (default: no correction)")


def _qty(text, unit, name, *, positive=False):
    """A plain float in ``unit`` from an option's text; ``positive`` refuses zero and below."""
    from ftsource.parameters import positive_value
    from ftsource.quantity import to_float

    return positive_value(text, unit, name) if positive else to_float(text, unit, name=name)


def _options(args):
    """The analysis options of the command line: its flags are the keyword parameters of
    :func:`ftsource.analyze` (:data:`ftsource.parameters.PARAMETERS`), read by the same
    :func:`ftsource.parameters.option_fields`; messages name the flags through
    :func:`ftsource.parameters.cli_terms` in :func:`main`."""
    from ftsource.analysis import AnalysisOptions
    from ftsource.parameters import PARAMETERS, option_fields

    params = {k: getattr(args, k) for k in PARAMETERS
              if k != "columns" and getattr(args, k, None) is not None}
    return AnalysisOptions(**option_fields(**params))


def _no_reference_message(record) -> str:
    """Why a record without any optical-path column cannot be analysed, and what to do."""
    where = record.path
    if record.source_format == "wav" and record.metadata.get("wav_channels") == "1":
        return (
            f"{where}: is a mono WAV file: its one channel is the source detector and there is "
            "no reference channel; record the reference detector on the second channel "
            "(stereo), or give --mirror-speed to assume a constant mirror speed"
        )
    return (
        f"{where}: has no reference channel (ref, or ref_i and ref_q) and no position column "
        f"(columns: {', '.join(record.columns)}); map one with --columns, or give "
        "--mirror-speed to assume a constant mirror speed"
    )


def _in_cli_terms(result):
    """The result with its warnings naming the command line's flags where the library names
    its keyword parameters (:func:`ftsource.parameters.cli_terms`)."""
    from dataclasses import replace

    from ftsource.parameters import cli_terms

    return replace(result, warnings=tuple(cli_terms(w) for w in result.warnings))


def _cmd_analyze(args, out, err) -> int:
    from ftsource.analysis import analyze
    from ftsource.errors import AnalysisError, OptionError
    from ftsource.io.records import read_record
    from ftsource.report.text import check_outputs, format_summary, result_json, write_outputs

    # Cheap checks first: options, then the output directory, then the record.
    options = _options(args)
    if args.out is not None:
        check_outputs(args.out, overwrite=args.overwrite)
    record = read_record(args.record, columns=args.columns, sample_rate=options.sample_rate_hz)
    if record.opd_source() is None and options.mirror_speed_m_s is None:
        raise AnalysisError(_no_reference_message(record))
    planner = _planner(args)
    try:
        result = analyze(record, options, planner=planner)
    except (AnalysisError, OptionError) as exc:
        # the stages do not know the file; name it, as every other message does (a message
        # about an option already starts with the option's name, spelled as its flag)
        from ftsource.parameters import cli_terms

        msg = cli_terms(str(exc))
        if msg.startswith("-"):
            raise type(exc)(msg) from None
        raise type(exc)(f"{record.path}: {msg}") from None
    result = _in_cli_terms(result)
    # Everything the user will see is made before anything is written: a failure while
    # shaping the output leaves no file behind.
    text = result_json(result) if args.json else format_summary(result) + "\n"
    written = []
    if args.out is not None:
        written = write_outputs(result, args.out, overwrite=args.overwrite,
                                full_spectrum=args.full_spectrum)
    _save_wisdom(planner, args)
    out.write(text)
    _wrote(out, written, args.quiet or args.json)  # with --json stdout is the JSON alone
    if args.strict and not any(ln["flag"] is None for ln in result.to_dict()["lines"]):
        err.write(
            "error: no source found (--strict): no spectral line stands above the noise; check "
            "that the source reaches the detector, its gain and the column mapping\n"
        )
        return 1
    return 0


def _cmd_plot(args, out, err) -> int:
    from ftsource.report.page import redraw

    _wrote(out, redraw(args.result, args.out, overwrite=args.overwrite), args.quiet)
    return 0


def _planner(args):
    """The FFT planner of ``--fft-planning``, ``--fft-threads`` and ``--fft-wisdom`` (read when
    the file exists)."""
    import os

    from ftsource.spectrum.transform import FFTPlanner

    wisdom = None
    if args.fft_wisdom is not None and os.path.exists(args.fft_wisdom):
        wisdom = FFTPlanner.load_wisdom(args.fft_wisdom)
    return FFTPlanner(effort=args.fft_planning, threads=args.fft_threads, wisdom=wisdom)


def _save_wisdom(planner, args) -> None:
    """Write ``--fft-wisdom`` back (atomically) with the plans made in this run."""
    if args.fft_wisdom is not None:
        planner.save_wisdom(args.fft_wisdom)


def _cmd_batch(args, out, err) -> int:
    import os

    from ftsource import batch
    from ftsource.errors import OptionError

    if args.workers is not None and args.workers < 1:
        raise OptionError(f"--workers {args.workers} is not allowed; give 1 or more")
    if args.workers is not None and args.scheduler is not None:
        raise OptionError("--workers and --scheduler exclude each other: the cluster's workers "
                          "do the work")
    options = _options(_analysis_defaults(args))
    paths = batch.find_records(args.records)
    planner = _planner(args)  # checks the FFT options and reads the wisdom once
    jobs = batch.plan_jobs(
        paths, options, columns=args.columns, sample_rate=args.sample_rate,
        fft_planning=args.fft_planning, fft_threads=args.fft_threads,
        wisdom=planner.export_wisdom() if args.fft_wisdom is not None else None,
    )
    workers = args.workers or min(len(jobs), os.cpu_count() or 1)
    if args.scheduler is not None:
        try:
            from distributed import Client
        except ImportError:
            raise OptionError(
                "--scheduler needs Dask distributed; install it with "
                "pip install 'ftsource[dask]'"
            ) from None
        try:
            client = Client(args.scheduler, timeout="10s")
        except OSError as exc:
            raise OptionError(
                f"--scheduler {args.scheduler}: cannot reach the scheduler ({exc})"
            ) from None
        with client:
            res = batch.run_batch(jobs, args.out, executor=client.get_executor(),
                                  overwrite=args.overwrite, progress=err)
    elif workers == 1:
        res = batch.run_batch(jobs, args.out, overwrite=args.overwrite, progress=err)
    else:
        with batch.process_pool(workers) as ex:
            res = batch.run_batch(jobs, args.out, executor=ex, overwrite=args.overwrite,
                                  progress=err)
    for r in res.rows:
        if r["status"] != "ok":
            why = r["error"] if r["error"].startswith(r["record"]) else (
                f"{r['record']}: {r['error']}")
            out.write(f"{r['status']}: {why}\n")
    _wrote(out, [*res.written, os.path.join(args.out, "summary.ecsv")], args.quiet)
    n = len(res.rows)
    out.write(f"batch: {n} record(s), {n - res.n_failed} analysed, {res.n_failed} not; "
              f"summary in {os.path.join(args.out, 'summary.ecsv')}\n")
    if res.interrupted:
        raise KeyboardInterrupt
    return 1 if res.n_failed else 0


def _parse_source(spec: str):
    from ftsource import simulate as sim
    from ftsource.errors import OptionError

    parts = spec.split(":")
    kind, vals = parts[0].strip().lower(), parts[1:]
    name = f"--source {quote(spec)}"
    usage = (
        f"{name} is not understood; use laser:WL[:FWHM], led:WL:FWHM or "
        "multimode:WL:SPACING:ENVELOPE with lengths such as 650nm"
    )
    shapes = {"laser": (1, 2), "led": (2,), "multimode": (3,)}
    if kind not in shapes or len(vals) not in shapes[kind]:
        raise OptionError(usage)
    nums = [_qty(v, "nm", name) for v in vals]
    wl = nums[0]
    if not 10.0 <= wl <= 1e5:
        raise OptionError(f"{name}: the wavelength must lie between 10 nm and 100 µm")
    if kind == "laser":
        fwhm = nums[1] if len(nums) == 2 else 0.0
        if not 0.0 <= fwhm <= wl / 10:
            raise OptionError(f"{name}: the FWHM must lie between 0 and a tenth of the wavelength")
        return sim.laser(wl, fwhm_nm=fwhm)
    if kind == "led":
        if not 0.0 < nums[1] <= wl / 2:
            raise OptionError(f"{name}: the FWHM must be above 0 and at most half the wavelength")
        return sim.led(wl, nums[1])
    spacing, envelope = nums[1], nums[2]
    if not (0.0 < envelope <= wl / 10 and 0.0 < spacing and envelope / spacing <= 1000):
        raise OptionError(
            f"{name}: the mode spacing and the envelope must be above 0, the envelope at most a "
            "tenth of the wavelength and at most 1000 mode spacings"
        )
    return sim.multimode(wl, spacing, envelope)


def _cmd_simulate(args, out, err) -> int:
    import math
    from pathlib import Path

    from ftsource import simulate as sim
    from ftsource.errors import OptionError, OutputError
    from ftsource.io.records import write_record_csv, write_record_npz, write_record_wav

    target = Path(args.out)
    suffix = target.suffix.lower()
    if suffix not in (".npz", ".wav", ".csv", ".tsv", ".txt", ".dat"):
        raise OptionError(
            f"{quote(args.out)}: unknown record type {quote(suffix or '(none)')}; use .csv, .npz "
            "or .wav"
        )
    if target.is_dir():
        raise OutputError(f"{target}: is a directory; give a file name")
    if target.exists() and not args.overwrite:
        raise OutputError(f"{target} exists already; use --overwrite to replace it")
    if not (math.isfinite(args.noise) and args.noise >= 0):
        raise OptionError(f"--noise {args.noise!r} is not allowed; give a finite value ≥ 0")
    if args.seed < 0:
        raise OptionError(f"--seed {args.seed} is not allowed; give a whole number ≥ 0")
    sources = [_parse_source(s) for s in (args.source or ["laser:650nm"])]
    lines = tuple(ln for s in sources for ln in s.lines)
    model = sim.SourceModel(lines, label=" + ".join(s.label for s in sources))
    fs = _qty(args.sample_rate, "Hz", "--sample-rate", positive=True)
    duration = _qty(args.duration, "s", "--duration", positive=True)
    if not 64 <= duration * fs <= 50_000_000:
        raise OptionError(
            f"--duration × --sample-rate gives {duration * fs:.6g} samples; allowed 64–5e7"
        )
    if fs != round(fs) and suffix == ".wav":
        raise OptionError(f"--sample-rate {fs!r} Hz: a WAV file holds a whole number of Hz")
    scan = sim.Scan(
        sample_rate_hz=fs,
        duration_s=duration,
        opd_centre_cm=_qty(args.opd_centre, "cm", "--opd-centre"),
        opd_amplitude_cm=_qty(args.opd_amplitude, "cm", "--opd-amplitude", positive=True),
        sweep_rate_hz=_qty(args.sweep_rate, "Hz", "--sweep-rate", positive=True),
    )
    if not (abs(scan.opd_centre_cm) + scan.opd_amplitude_cm <= 100.0):
        raise OptionError("--opd-centre and --opd-amplitude reach beyond 1 m of path difference")
    ref = sim.ReferenceChannel(
        kind=args.reference,
        wavelength_nm=_qty(args.reference_wavelength, "nm", "--reference-wavelength",
                           positive=True),
    )
    if ref.kind in ("quadrature", "single"):
        msg = sim.undersampling_message(scan, ref.wavelength_nm)
        if msg:
            raise OptionError(msg)
    result = sim.simulate(model, scan, ref, sim.Detector(noise_rms=args.noise),
                          medium=args.medium, rng=args.seed)
    rec = result.record
    if suffix == ".npz":
        write_record_npz(target, rec, overwrite=args.overwrite)
    elif suffix == ".wav":
        cols = {k: v for k, v in rec.columns.items() if k != "time"}
        peak = max(float(abs(v).max()) for v in cols.values())
        cols = {k: v / (1.05 * peak) for k, v in cols.items()} if peak > 0 else cols
        write_record_wav(target, cols, fs, bits=24, overwrite=args.overwrite)
    else:
        write_record_csv(target, rec, overwrite=args.overwrite)
    out.write(f"wrote {target} ({scan.n_samples} samples of {model.label}; invented data)\n")
    return 0


def _cmd_demo(args, out, err) -> int:
    from pathlib import Path

    from ftsource.demo import demo_records, run_demo
    from ftsource.report.text import check_outputs

    if args.out is not None:
        # refuse before the first record is analysed, not after some results are written
        _scenario, records = demo_records()
        for r in records:
            check_outputs(Path(args.out) / Path(r["file"]).stem, overwrite=args.overwrite)
    return run_demo(out, out_dir=args.out, overwrite=args.overwrite, quiet=args.quiet)


def _cmd_lines(args, out, err) -> int:
    import json
    import math

    import numpy as np

    from ftsource.linelists import search_lines

    standard_air_text = (
        "standard air (dry, 15 °C, 101 325 Pa, 450 ppm CO2), the convention of NIST's tables: "
        "lamp lines as NIST quotes them, laser standards computed with the IAU/Morton 2000 "
        "formula (ApJS 130:403, eq. 8)"
    )

    def lines_air():
        """``(AirConditions, model, names given)`` from the ``--air-*`` options, or None.

        Parsed by the same code as analyze's (:func:`_options` over a namespace holding the
        defaults of :func:`_add_analysis_options`): units, ranges and the uncertainties of
        given and assumed values are the same.
        """
        names = [k for k in vars(args) if k.startswith("air_") and getattr(args, k) is not None]
        if not names:
            return None
        shared = _Parser(prog="ftsource lines")
        _add_analysis_options(shared)
        ns = shared.parse_args([])
        ns.medium = "air"
        for k in names:
            setattr(ns, k, getattr(args, k))
        opts = _options(_analysis_defaults(ns))
        return opts.air, getattr(opts, "air_model", "ciddor"), tuple(opts.air_given)

    kw = {}
    if args.min_wl:
        kw["min_nm"] = _qty(args.min_wl, "nm", "--min")
    if args.max_wl:
        kw["max_nm"] = _qty(args.max_wl, "nm", "--max")
    if args.near:
        kw["near_nm"] = _qty(args.near, "nm", "--near")
        kw["tolerance_nm"] = _qty(args.tolerance, "nm", "--tolerance")
    air = lines_air()
    air_text, conditions, u_index = standard_air_text, None, {}
    if air is not None:
        from ftsource.physics.air import index_uncertainty, vacuum_to_air_nm

        cond, model, given = air
        conditions = {"temperature_c": cond.temperature_c, "pressure_pa": cond.pressure_pa,
                      "humidity_percent": cond.humidity_percent, "co2_ppm": cond.co2_ppm}
        kw["to_air"] = lambda wl: vacuum_to_air_nm(wl, cond, model=model)
        kw["conditions"] = cond
        parts = [f"{cond.temperature_c:g} °C", f"{cond.pressure_pa:g} Pa",
                 f"{cond.humidity_percent:g} % RH", f"{cond.co2_ppm:g} ppm CO2"]
        keys = ("temperature", "pressure", "humidity", "co2")
        shown = [p + ("" if k in given else " (assumed)")
                 for p, k in zip(parts, keys, strict=True)]
        air_text = (f"air at {', '.join(shown)}, computed from vacuum with the "
                    f"{'Ciddor 1996' if model == 'ciddor' else 'Edlén (Birch & Downs)'} "
                    "equation")
    table = search_lines(element=args.element, medium=args.medium, **kw)
    if air is not None and len(table):
        computed = np.array([c == "given conditions" for c in table["air_convention"]])
        if computed.any():
            vac = np.asarray(table["wavelength_vac_nm"], dtype=float)[computed]
            u_n = np.atleast_1d(index_uncertainty(vac, air[0], air[1]))
            u_index = dict(zip(np.flatnonzero(computed).tolist(), u_n.tolist(), strict=True))

    def num(x):
        x = float(x)
        return x if math.isfinite(x) else None

    rows = []
    for i, r in enumerate(table):
        conv = str(r["air_convention"])
        rows.append({
            "wavelength_nm": num(r["wavelength_nm"]),
            "wavelength_vac_nm": num(r["wavelength_vac_nm"]),
            "wavelength_air_nm": num(r["wavelength_air_nm"]),
            "air_convention": conv,
            "air_conditions": conditions if conv == "given conditions" else None,
            "u_air_index": u_index.get(i),
            "u_vac_nm": num(r["u_vac_nm"]),
            "kind": str(r["kind"]),
            "species": str(r["species"]),
            "list_name": str(r["list_name"]),
            "relative_intensity": num(r["relative_intensity"]),
            "status": str(r["status"]),
        })
    if args.json:
        out.write(json.dumps(rows, indent=2) + "\n")
        return 0

    def stored(x):  # as written in the list, without padding digits
        return "—" if x is None else f"{x:.8f}".rstrip("0").rstrip(".")

    out.write(f"{len(rows)} line(s), sorted by {args.medium} wavelength\n"
              f"air column: {air_text}; nominal laser labels have no medium\n")
    if air is not None and u_index:
        out.write(f"air index uncertainty from these conditions: u(n) = "
                  f"{max(u_index.values()) * 1e6:.2g} ppm (k = 1); not in the u column\n")
    if rows:
        out.write(f"  {'vacuum nm':>14}  {'air nm':>14}  {'u(vacuum) nm':>12}  "
                  f"{'rel. int.':>9}  {'kind':<11}  species [list]\n")
    for r in rows:
        air_nm = r["wavelength_air_nm"]
        air_s = (f"{air_nm:.6f}" if r["air_convention"] == "given conditions" and air_nm
                 else stored(air_nm))
        u_s = "—" if r["u_vac_nm"] is None else f"{r['u_vac_nm']:.2g}"
        ri = r["relative_intensity"]
        ri_s = "—" if ri is None else f"{ri:g}"
        out.write(f"  {stored(r['wavelength_vac_nm']):>14}  {air_s:>14}  {u_s:>12}  "
                  f"{ri_s:>9}  {r['kind']:<11}  {r['species']} [{r['list_name']}]\n")
    return 0


def _analysis_defaults(args):
    """Fill the analyze-only attributes that calibrate/response do not define."""
    for name, value in (("json", False), ("out", None), ("calibration", None), ("response", None)):
        if not hasattr(args, name):
            setattr(args, name, value)
    return args


#: The calibrate options that :func:`ftsource.calibrate.known.known_line` names in messages.
_KNOWN_NAMES = {"wavelength": "--known-wavelength", "line": "--known-line",
                "uncertainty": "--known-uncertainty"}


def _cmd_calibrate(args, out, err) -> int:
    from pathlib import Path

    from ftsource.calibrate.calibration import save_calibration
    from ftsource.errors import OutputError
    from ftsource.io.records import read_record
    from ftsource.rig import calibrate_rig

    def known():
        """The known line, checked by :func:`ftsource.calibrate.known.known_line`; here only
        the options' text becomes numbers."""
        from ftsource.calibrate.known import known_line

        u = None
        if args.known_uncertainty is not None:
            u = _qty(args.known_uncertainty, "nm", "--known-uncertainty")
        wl = None
        if args.known_wavelength is not None:
            wl = _qty(args.known_wavelength, "nm", "--known-wavelength", positive=True)
        return known_line(wavelength_nm=wl, line=args.known_line, u_nm=u, names=_KNOWN_NAMES)

    target = Path(args.save)
    if target.exists() and not args.overwrite:
        raise OutputError(f"--save {target}: exists already; use --overwrite to replace it")
    line = known()
    options = _options(_analysis_defaults(args))
    record = read_record(args.record, columns=args.columns, sample_rate=options.sample_rate_hz)
    cal, _ = calibrate_rig(record, options, line.wavelength_nm, line.u_nm,
                           label=Path(args.record).name)
    save_calibration(target, cal, overwrite=args.overwrite)
    out.write(_calibration_text(cal, line.description, target))
    return 0


def _calibration_text(cal, what: str, target) -> str:
    """What ``calibrate`` prints: the numbers of the saved file, under the file's own key
    names and with its signs, each rounded to its uncertainty (JCGM 100:2008 §7.2.6)."""
    from ftsource.report.numbers import format_with_uncertainty, round_to_uncertainty

    measured, u_measured = round_to_uncertainty(cal.measured_wavelength_nm, cal.u_measured_nm)
    deviation = format_with_uncertainty(cal.deviation_ppm, cal.u_deviation_ppm, "ppm",
                                        sign=True)
    eff = cal.effective_reference_wavelength_nm
    effective = format_with_uncertainty(eff, cal.u_effective_rel * eff, "nm")
    reads = "long" if cal.deviation_ppm < 0 else "short"
    return (
        f"known line: {what}\n"
        f"measured {measured} nm (u = {u_measured} nm)\n"
        f"deviation_ppm: {deviation} (effective reference wavelength / nominal - 1); "
        f"uncorrected, the rig reads {reads} by that much\n"
        f"effective reference wavelength: {effective}\n"
        f"wrote {target}\n"
        "use it with: ftsource analyze RECORD --calibration " + str(target) + "\n"
    )


def _cmd_response(args, out, err) -> int:
    from pathlib import Path

    from ftsource.analysis import analyze
    from ftsource.calibrate.response import calibrate_response
    from ftsource.errors import OutputError
    from ftsource.io.records import read_record

    target = Path(args.save)
    if target.exists() and not args.overwrite:
        raise OutputError(f"--save {target}: exists already; use --overwrite to replace it")
    t = _qty(args.lamp_temperature, "K", "--lamp-temperature", positive=True)
    ut = _qty(args.lamp_temperature_uncertainty, "K", "--lamp-temperature-uncertainty")
    options = _options(_analysis_defaults(args))
    record = read_record(args.record, columns=args.columns, sample_rate=options.sample_rate_hz)
    result = analyze(record, options)
    spec = result.spectrum
    curve = calibrate_response(spec.sigma_per_cm, spec.density, spec.noise, lamp="blackbody",
                               temperature_k=t, u_temperature_k=ut)
    curve.to_file(target, overwrite=args.overwrite)
    lo, hi = curve.valid_band_per_cm
    out.write(
        f"relative response from {1e7 / hi:.0f} to {1e7 / lo:.0f} nm "
        f"(blackbody at {t:g} K ± {ut:g} K: tungsten's emissivity is not flat, so this is an "
        f"approximation)\nwrote {target}\n"
        "use it with: ftsource analyze RECORD --response " + str(target) + "\n"
    )
    return 0


def _cmd_plan(args, out, err) -> int:
    import json

    from ftsource.plan import plan_report

    report, lines = plan_report(args)
    out.write(json.dumps(report, indent=2) + "\n" if args.json else "\n".join(lines) + "\n")
    return 0


def main(argv=None) -> int:
    """Run the command line; returns the exit status.

    0: done (a result may carry warnings). 1: ``analyze --strict`` found no source line (the
    result is still written and printed). 2: the user's input cannot be used, reported as one
    ``error: ...`` line on standard error; nothing is written. 3: a bug in ftsource (one
    ``error: internal error ...`` line). 130: interrupted. No exception leaves this function
    (``--help`` returns 0 instead of raising ``SystemExit``).
    """
    out, err = sys.stdout, sys.stderr
    parser = build_parser()
    argv = sys.argv[1:] if argv is None else list(argv)
    try:
        args = parser.parse_args(argv)
    except UsageError as e:
        err.write(f"error: {one_line(str(e) + _split_value_hint(argv), MESSAGE_LIMIT)}\n")
        return 2
    except SystemExit as e:  # --help prints and exits through argparse
        return e.code if isinstance(e.code, int) else (0 if e.code is None else 2)
    if args.version:
        from ftsource import __version__
        out.write(f"ftsource {__version__}\n")
        return 0
    if args.command is None:
        parser.print_help(out)
        return 0
    handler = {
        "analyze": _cmd_analyze,
        "batch": _cmd_batch,
        "simulate": _cmd_simulate,
        "demo": _cmd_demo,
        "lines": _cmd_lines,
        "calibrate": _cmd_calibrate,
        "response": _cmd_response,
        "plan": _cmd_plan,
        "plot": _cmd_plot,
    }[args.command]
    import warnings

    from ftsource.errors import AnalysisError, FtsourceError, FtsourceWarning, OptionError

    try:
        with warnings.catch_warnings():
            # warnings are copied into the result; do not print them twice
            warnings.simplefilter("ignore", FtsourceWarning)
            return handler(args, out, err)
    except (FtsourceError, OSError) as e:
        if isinstance(e, (AnalysisError, OptionError)):
            # the library names its parameters (reference_wavelength); here they are flags
            from ftsource.parameters import cli_terms

            e = cli_terms(str(e))
        err.write(f"error: {one_line(e, MESSAGE_LIMIT)}\n")
        return 2
    except MemoryError:
        err.write("error: not enough memory for this record; analyse a shorter recording\n")
        return 2
    except KeyboardInterrupt:
        err.write("error: interrupted\n")
        return 130
    except Exception as e:  # noqa: BLE001 - a bug must still end in one line, not a traceback
        err.write(
            f"error: internal error ({one_line(f'{type(e).__name__}: {e}', 300)}); please "
            "report it with the record and the command line\n"
        )
        return 3


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
