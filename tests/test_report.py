"""The report and the standard files: HTML escaping, figures, FITS with a spectral WCS, the
band-limited ECSV, the plot data round trip, `ftsource plot`, and the fitted safety text.

Checks are against astropy (FITS, WCS, ECSV readers), Python's own html.parser, matplotlib's
objects and closed forms named beside them.
"""

from __future__ import annotations

import html.parser
import io
import json
import re
import subprocess
import sys
from dataclasses import replace

import numpy as np
import pytest
from cli_helpers import assert_clean_error, run

from ftsource import simulate as sim
from ftsource.analysis import AnalysisOptions, analyze
from ftsource.measure.plotdata import FIGURE_NAMES, PlotData, spectrum_band
from ftsource.report import figures as fg
from ftsource.report.figures import draw
from ftsource.report.files import spectrum_ecsv, spectrum_fits
from ftsource.report.html import CSP, ReportContent, report_html
from ftsource.report.text import OUTPUT_FILES, format_summary, output_payloads
from ftsource.safety import (
    GREEN_POINTER_WARNING,
    INCOHERENT_SOURCE_NOTE,
    LASER_CAUTION,
    REFERENCE_LASER_CAUTION,
    safety_notes,
)

OPTS = AnalysisOptions(medium="vacuum", reference_wavelength_nm=632.991)
EVIL = "<script>alert('x')</script><img src=x onerror=alert(1)>&amp;\"'"


@pytest.fixture(scope="module")
def laser_result():
    rec = sim.simulate(sim.laser(650.0), sim.Scan(duration_s=1.6, opd_amplitude_cm=0.04),
                       rng=2).record
    return analyze(rec, OPTS)


@pytest.fixture(scope="module")
def payloads(laser_result):
    return output_payloads(laser_result)


# ---- HTML

class _Tags(html.parser.HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags, self.attrs, self.text = [], [], []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.attrs += [a for a, _ in attrs]

    def handle_data(self, data):
        self.text.append(data)


ALLOWED_TAGS = {"html", "head", "meta", "title", "style", "body", "h1", "h2", "p", "section",
                "table", "thead", "tbody", "tr", "th", "td", "ul", "li", "figure", "img",
                "figcaption"}


def test_every_text_is_escaped():
    """Every field carrying a crafted text: Python's HTML parser finds only the page's own tags
    and attributes (no script, no event handler), and the text reads back unchanged."""
    c = ReportContent(
        title=EVIL, subtitle=EVIL, results_header=(EVIL,), results=((EVIL, 1.0),),
        lines_header=(EVIL,), lines=((EVIL,),), budget_header=(EVIL,), budget=((EVIL,),),
        budget_note=EVIL, health=((EVIL, EVIL, "poor", EVIL, EVIL, EVIL),),
        warnings=(EVIL,), safety=(EVIL,), settings=((EVIL, EVIL),), metadata=((EVIL, EVIL),),
        figures=((EVIL, EVIL, b"\x89PNG"),),
    )
    page = report_html(c)
    p = _Tags()
    p.feed(page)
    assert set(p.tags) <= ALLOWED_TAGS, set(p.tags) - ALLOWED_TAGS
    assert not any(a.startswith("on") for a in p.attrs)
    assert "<script" not in page.lower()
    assert sum(EVIL in t for t in p.text) >= 10


def test_page_forbids_script_and_network():
    """The Content-Security-Policy allows no script and images only from data: URLs (W3C CSP
    Level 3: default-src 'none' blocks every fetch not allowed by another directive)."""
    assert "default-src 'none'" in CSP and "img-src data:" in CSP
    assert "script-src" not in CSP
    page = report_html(ReportContent(title="t"))
    assert f'http-equiv="Content-Security-Policy" content="{CSP}"'.replace("'", "&#x27;") in page


def test_report_content(laser_result, payloads):
    page = payloads["report.html"].decode()
    assert page.count('src="data:image/png;base64,') == len(FIGURE_NAMES)
    for section in ("results", "lines", "health", "warnings", "budget", "settings", "safety"):
        assert f'id="{section}"' in page
    for item in laser_result.scan_health.items:
        assert item.name in page
    assert "coverage factor k" in page and "air wavelength" in page
    for ln in laser_result.lines:  # each line with its own expanded uncertainty
        if ln.expanded_uncertainty_nm is not None:
            assert f">{float(f'{ln.expanded_uncertainty_nm:.3g}')}<" in page
    assert not re.search(r"(src|href)\s*=\s*\"?(https?:|//)", page)  # nothing to fetch
    assert "IEC 60825-1" in page


# ---- figures

def test_figures_return_artists_and_label_units():
    ax = fg.new_axes()
    arts = fg.plot_spectrum([600, 650, 700], [0, 1, 0], lines_nm=[650], line_heights=[1],
                            ils_nm=[649, 650, 651], ils_density=[0, 1, 0], ax=ax)
    assert arts and all(a.axes is ax for a in arts)
    assert "(nm)" in ax.get_xlabel()
    cols = {a.get_color() for a in arts if hasattr(a, "get_color")}
    assert cols <= {v.lower() for v in fg.OKABE_ITO.values()} | set(fg.OKABE_ITO.values())
    for fn, args, unit in (
        (fg.plot_record, ([0, 1], [0, 1]), "(s)"),
        (fg.plot_speed, ([0, 1], [1, 1]), "(mm/s)"),
        (fg.plot_interferogram, ([0, 1], [0, 1], [1, 1]), "(mm)"),
        (fg.plot_sweeps, ([0, 1], [1.0, 1.1], [0.1, 0.1]), "(nm)"),
        (fg.plot_budget, (["a", "b"], [1e-4, 2e-4]), "(nm)"),
    ):
        out = fn(*args)  # ax=None: a new figure
        first = out[0] if isinstance(out, list) else out
        a = first.axes if hasattr(first, "axes") and first.axes is not None else None
        if a is None:  # a container (errorbar, bars)
            a = out.patches[0].axes if hasattr(out, "patches") else first.lines[0].axes
        assert unit in a.get_xlabel() + a.get_ylabel(), fn.__name__


def test_figures_need_no_pyplot_and_import_lazily():
    """Importing the report modules does not import matplotlib; drawing uses the Agg canvas
    without pyplot (checked in a fresh interpreter)."""
    code = (
        "import sys\n"
        "import ftsource.report.figures, ftsource.measure.plotdata, ftsource.report.html\n"
        "import ftsource.report.page\n"
        "assert 'matplotlib' not in sys.modules\n"
        "from ftsource.measure.plotdata import PlotData\n"
        "from ftsource.report.figures import draw\n"
        "figs = draw(PlotData(record_time_s=(0.0, 1.0), record_signal=(0.0, 1.0)))\n"
        "assert 'matplotlib.pyplot' not in sys.modules\n"
        "from matplotlib.backends.backend_agg import FigureCanvasAgg\n"
        "assert all(isinstance(f.canvas, FigureCanvasAgg) for f in figs.values())\n"
    )
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                       timeout=300)
    assert r.returncode == 0, r.stderr


def test_plot_data_round_trip(laser_result):
    d = laser_result.to_dict()["plot"]
    back = PlotData.from_dict(json.loads(json.dumps(d)))
    assert replace(laser_result, plot=back).to_dict()["plot"] == d
    assert set(draw(back)) == set(FIGURE_NAMES)
    assert len(json.dumps(d)) < 400_000  # compact


def test_plot_command(laser_result, tmp_path, capsys):
    out = tmp_path / "o"
    status, text, err = run(capsys, ["plot", "-h"])
    assert status == 0 and "default" in text
    (tmp_path / "r").mkdir()
    res_path = tmp_path / "r" / "result.json"
    res_path.write_bytes(output_payloads(laser_result)["result.json"])
    status, text, err = run(capsys, ["plot", res_path, "--out", out])
    assert status == 0, err
    names = sorted(p.name for p in out.iterdir())
    assert names == sorted(f"fig-{n}.png" for n in FIGURE_NAMES)
    assert text.splitlines() == [f"wrote {out / f'fig-{n}.png'}" for n in FIGURE_NAMES]
    for n in names:
        assert (out / n).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    status, text, err = run(capsys, ["plot", res_path, "--out", out])
    assert_clean_error(status, err, "--overwrite")
    bad = tmp_path / "bad.json"
    bad.write_text('{"schema_version": "2.0"}')
    status, _, err = run(capsys, ["plot", bad])
    assert_clean_error(status, err, "no 'plot' object")


# ---- FITS and ECSV

def test_fits_has_a_valid_spectral_wcs(laser_result, payloads):
    """astropy reads the file's WCS as spectral, WAVN in cm⁻¹ (Greisen et al. 2006, table 1);
    the world coordinate of each pixel is the wavenumber the spectrum holds there."""
    from astropy.io import fits
    from astropy.wcs import WCS

    with fits.open(io.BytesIO(payloads["spectrum.fits"])) as h:
        hdr = h[0].header
        data = h[0].data
        assert hdr["CTYPE1"] == "WAVN" and hdr["CUNIT1"] == "cm-1"
        assert h["NOISE"].data.shape == data.shape
        w = WCS(hdr)
    assert w.has_spectral and w.wcs.ctype[0] == "WAVN"
    world = w.pixel_to_world(np.arange(data.size))
    sig = world.to_value("1/cm")
    spec = laser_result.spectrum
    # the density at the brightest pixel sits at the main line's wavenumber
    main = 1e7 / laser_result.to_dict()["summary"]["centre_wavelength_nm"]
    assert abs(sig[np.argmax(data)] - main) < spec.resolution_per_cm
    ref = np.interp(sig, spec.sigma_per_cm, spec.density)
    np.testing.assert_allclose(data, ref, rtol=1e-9, atol=1e-12 * np.max(ref))
    steps = np.diff(sig)
    np.testing.assert_allclose(steps, steps[0], rtol=1e-9)  # linear axis


def test_ecsv_round_trips_at_the_instrument_sampling(laser_result, payloads):
    """astropy's ECSV reader gives the columns back with their units; stored points are every
    zero_fill-th point of the spectrum's grid (no zero-fill points), inside 200–3300 nm."""
    from astropy.table import Table

    t = Table.read(io.BytesIO(payloads["spectrum.ecsv"]), format="ascii.ecsv")
    assert str(t["wavenumber"].unit) == "1 / cm" and str(t["wavelength"].unit) == "nm"
    spec = laser_result.spectrum
    zf = laser_result.to_dict()["processing"]["zero_fill"]
    idx = np.searchsorted(spec.sigma_per_cm, t["wavenumber"])
    np.testing.assert_array_equal(spec.sigma_per_cm[idx], np.asarray(t["wavenumber"]))
    assert np.all(idx % zf == 0)
    np.testing.assert_array_equal(spec.density[idx], np.asarray(t["density_per_wavenumber"]))
    np.testing.assert_allclose(t["wavelength"] * t["wavenumber"], 1e7, rtol=1e-12)
    assert t["wavelength"].min() >= 200 and t["wavelength"].max() <= 3300
    assert len(t) < spec.sigma_per_cm.size / zf


def test_full_spectrum_keeps_every_point(laser_result):
    s = laser_result.spectrum
    kw = dict(line_centres_per_cm=[1e7 / 650.0], zero_fill=4)
    small = spectrum_band(s.sigma_per_cm, s.density, s.noise, s.resolution_per_cm, **kw)
    full = spectrum_band(s.sigma_per_cm, s.density, s.noise, s.resolution_per_cm, full=True,
                         **kw)
    assert full.index.size > 4 * small.index.size
    assert np.all(np.diff(full.index) == 1)
    assert spectrum_ecsv(s.sigma_per_cm, s.density, s.noise, full)
    assert spectrum_fits(s.sigma_per_cm, s.density, s.noise, full)[:6] == b"SIMPLE"


def test_band_keeps_an_led_and_its_wings():
    """A Gaussian band of 30 nm FWHM at 850 nm on white noise: every point above 10⁻³ of the
    peak (closed form: ±1.58 FWHM... ±2.2 FWHM for 10⁻³... here ±2.23·FWHM/2.355·√(2 ln 1000))
    lies inside the stored band."""
    sig = np.linspace(0, 30000, 120001)
    s0 = 1e7 / 850.0
    w = 1e7 * 30.0 / 850.0**2
    d = np.exp(-4 * np.log(2) * ((sig - s0) / w) ** 2)
    noise = np.full_like(sig, 1e-5)
    band = spectrum_band(sig, d, noise, 1.0, zero_fill=1)
    a, b = band.limits_per_cm
    half = w / 2 * np.sqrt(np.log(1000) / np.log(2))  # where d = 1e-3
    assert a <= s0 - half and b >= s0 + half


# ---- size of a long record's outputs

def test_outputs_of_a_2_22_sample_record_stay_small(tmp_path):
    """2²² samples (87 s at 48 kHz) of sweeps ±5 mm long (half a million points in each
    zero-filled spectrum: its full table would be tens of MB): every output file together
    below 10 MB."""
    scan = sim.Scan(duration_s=2**22 / 48_000, opd_amplitude_cm=0.5, sweep_rate_hz=0.1)
    rec = sim.simulate(sim.laser(650.0), scan, rng=5).record
    assert rec.n_samples == 2**22
    res = analyze(rec, OPTS)
    files = output_payloads(res)
    total = sum(len(b) for b in files.values())
    assert set(files) == set(OUTPUT_FILES)
    assert total < 10_000_000, {k: len(v) for k, v in files.items()}


# ---- text summary and safety

def test_summary_lists_each_source_line(laser_result):
    """Each source line on its own line: its vacuum wavelength rounded to its standard
    uncertainty (JCGM 100:2008 §7.2.6), relative intensity and width or bound."""
    from ftsource.report.numbers import round_to_uncertainty

    text = format_summary(laser_result)
    d = laser_result.to_dict()
    src = [ln for ln in d["lines"] if ln["flag"] is None]
    assert src
    for ln in src:
        wl, _ = round_to_uncertainty(ln["wavelength_nm"], ln["u_wavelength_nm"])
        row = next(t for t in text.splitlines() if t.startswith(f"line {wl} nm"))
        assert "relative intensity" in row and "FWHM" in row
    assert "IEC 60825-1" in text


def test_safety_fits_the_source():
    """Laser cautions for lasers; the green-pointer infrared caution only within ±3 nm of 532 nm
    (1064/2, closed form); a short line for LEDs and lamps; IEC 60825-1 always."""
    laser = safety_notes("narrow", [650.0])
    assert LASER_CAUTION in laser and GREEN_POINTER_WARNING not in laser
    green = safety_notes("narrow", [532.1])
    assert GREEN_POINTER_WARNING in green
    assert GREEN_POINTER_WARNING not in safety_notes("narrow", [520.0])
    led = safety_notes("broadband", [590.0], reference_laser=False)
    assert led == [INCOHERENT_SOURCE_NOTE] and LASER_CAUTION not in led
    assert REFERENCE_LASER_CAUTION in safety_notes("broadband", [590.0])
    for notes in (laser, green, led):
        assert any("IEC 60825-1" in n for n in notes)


def test_analyze_out_prints_one_line_per_file(tmp_path, capsys):
    rec = sim.simulate(sim.laser(650.0), sim.Scan(duration_s=1.0, opd_amplitude_cm=0.03),
                       rng=1).record
    from ftsource.io.records import write_record_npz

    write_record_npz(tmp_path / "r.npz", rec)
    argv = ["analyze", tmp_path / "r.npz", "--reference-wavelength", "632.991nm",
            "--medium", "vacuum", "--out", tmp_path / "o"]
    status, out, err = run(capsys, argv)
    assert status == 0, err
    wrote = [ln for ln in out.splitlines() if ln.startswith("wrote ")]
    assert wrote == [f"wrote {tmp_path / 'o' / n}" for n in OUTPUT_FILES]
    status, out, err = run(capsys, [*argv, "--overwrite", "--quiet"])
    assert status == 0 and "wrote" not in out + err


def test_demo_writes_a_report_per_record(tmp_path, capsys):
    from ftsource.demo import demo_records

    status, out, err = run(capsys, ["demo", "--out", tmp_path / "d", "--quiet"])
    assert status == 0, err
    for r in demo_records()[1]:
        folder = tmp_path / "d" / r["file"].rsplit(".", 1)[0]
        page = (folder / "report.html").read_text(encoding="utf-8")
        assert "<script" not in page.lower() and "Scan health" in page


def test_report_for_a_result_without_plot_data(laser_result):
    files = output_payloads(replace(laser_result, plot=None))
    assert files["report.html"].count(b"data:image/png;base64,") == len(FIGURE_NAMES)
