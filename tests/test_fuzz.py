"""Fuzz tests (hypothesis) of the record readers and the command line.

The property is the contract's (docs/contract.md, "Exit status") and the issue's: any input
gives either a result or a clean error. For the readers that is a ``Record`` or an
``FtsourceError``; for the command line, status 0 or status 2 with exactly one ``error:`` line
on standard error. Status 3 ("internal error") and any exception leaving ``main`` are failures:
hypothesis then prints the input that caused them. Warnings are errors (pyproject.toml), so a
numerical warning inside the tool also fails a test.

Inputs are random bytes, damaged copies of valid files (file layouts from the WAV spec, IBM and
Microsoft 1991, chapter 3, and NumPy's NEP 1), random text tables with hostile metadata and
names, and random option values. Every test is derandomized (a fixed seed) and keeps no example
database, so runs repeat exactly. Valid records come from ``ftsource.simulate`` (tested against
closed forms in tests/test_simulate.py); no number is checked here.
"""

from __future__ import annotations

import contextlib
import io
import itertools
import json
import os
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from ftsource import simulate as sim
from ftsource.cli import main
from ftsource.errors import FtsourceError
from ftsource.io.records import (
    MIN_SAMPLES,
    Record,
    read_record,
    write_record_csv,
    write_record_npz,
    write_record_wav,
)
from ftsource.report.text import OUTPUT_FILES

EXTENSIONS = (".csv", ".tsv", ".txt", ".dat", ".npz", ".wav")
FS = 48_000.0
_counter = itertools.count()


def fuzz(n):
    return settings(
        max_examples=n,
        derandomize=True,
        database=None,
        deadline=None,
        suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                               HealthCheck.filter_too_much],
    )


def check_record_or_error(path, **kw):
    """read_record gives a sound Record or raises an FtsourceError; nothing else."""
    try:
        rec = read_record(path, **kw)
    except FtsourceError as exc:
        msg = str(exc)
        assert msg and "\n" not in msg.strip(), repr(msg)
        return None
    assert isinstance(rec, Record)
    assert "signal" in rec.columns
    lengths = {a.shape for a in rec.columns.values()}
    assert len(lengths) == 1 and next(iter(lengths))[0] >= MIN_SAMPLES
    for a in rec.columns.values():
        assert a.dtype == np.float64 and np.all(np.isfinite(a)) and not a.flags.writeable
    assert rec.sample_rate_hz is None or (np.isfinite(rec.sample_rate_hz)
                                          and rec.sample_rate_hz > 0)
    return rec


def cli(argv):
    """Run main in-process; return (status, stdout, stderr). Fails on status 3 or an escape."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            status = main([str(a) for a in argv])
        except BaseException as exc:  # noqa: BLE001 - the property: nothing escapes main
            raise AssertionError(f"{type(exc).__name__} escaped main for argv={argv!r}") from exc
    o, e = out.getvalue(), err.getvalue()
    assert status != 3, f"internal error for argv={argv!r}: {e}"
    assert status in (0, 2), (status, argv, e)
    if status == 2:
        assert e.startswith("error: ") and e.count("\n") == 1 and e.endswith("\n"), (argv, e)
        assert e[:-1].isprintable(), repr(e)
        assert "Traceback" not in e
    else:
        assert e == "", (argv, e)
    return status, o, e


@pytest.fixture(scope="module")
def sandbox(tmp_path_factory):
    return tmp_path_factory.mktemp("fuzz")


@pytest.fixture(scope="module")
def valid(sandbox):
    """Small valid files of every form, as bytes, and a valid record path for CLI runs."""
    rec = sim.simulate(sim.laser(650.0),
                       sim.Scan(sample_rate_hz=FS, duration_s=0.5, sweep_rate_hz=2.0),
                       rng=5).record
    small = {k: np.asarray(v)[:300] for k, v in rec.columns.items()}
    files = {}
    for name, writer in [
        ("a.csv", lambda p: write_record_csv(p, small, metadata={"description": "x"})),
        ("b.tsv", lambda p: write_record_csv(p, {k: v for k, v in small.items() if k != "time"},
                                             sample_rate_hz=FS, delimiter="\t")),
        ("c.npz", lambda p: write_record_npz(p, rec.columns, compress=True)),
        ("d.npz", lambda p: write_record_npz(p, small, metadata={"sample_rate": "48 kHz"})),
        ("e.wav", lambda p: write_record_wav(p, {"signal": small["signal"] / 3,
                                                 "ref": small["ref_i"] / 2}, FS, bits=16)),
        ("f.wav", lambda p: write_record_wav(p, {"signal": small["signal"] / 3,
                                                 "ref_i": small["ref_i"] / 2,
                                                 "ref_q": small["ref_q"] / 2}, FS, bits=24)),
        ("g.wav", lambda p: write_record_wav(p, {"signal": small["signal"] / 3}, FS,
                                             bits="float")),
    ]:
        writer(sandbox / name)
        files[name] = (sandbox / name).read_bytes()
    # a short, fast record for the command-line runs (0.25 s, two sweeps)
    short = sim.simulate(sim.laser(650.0),
                         sim.Scan(sample_rate_hz=FS, duration_s=0.25, sweep_rate_hz=2.0,
                                  opd_amplitude_cm=0.02), rng=5).record
    full = sandbox / "laser.npz"
    write_record_npz(full, short)
    return files, full


def _fresh(sandbox, suffix):
    return sandbox / f"x{next(_counter)}{suffix}"


# --------------------------------------------------------------------------------------------
# readers


MAGIC = {
    ".npz": [b"PK\x03\x04", b"PK\x05\x06", b"\x93NUMPY"],
    ".wav": [b"RIFF\x24\x00\x00\x00WAVEfmt ", b"RIFX\x00\x00\x00\x24WAVE", b"RIFF"],
    ".csv": [b"\xef\xbb\xbf", b"\xff\xfe", b"time,signal,ref\n", b"# sample_rate = 1 kHz\n"],
}


@fuzz(1800)
@given(ext=st.sampled_from(EXTENSIONS), data=st.data())
def test_random_bytes_as_any_record_form(sandbox, ext, data):
    magic = MAGIC.get(ext, MAGIC[".csv"])
    head = data.draw(st.sampled_from([b"", *magic]), label="head")
    body = data.draw(st.binary(max_size=1500), label="body")
    path = sandbox / f"bytes{ext}"
    path.write_bytes(head + body)
    check_record_or_error(path)


@fuzz(700)
@given(data=st.data())
def test_damaged_valid_files(valid, sandbox, data):
    files, _ = valid
    name = data.draw(st.sampled_from(sorted(files)), label="file")
    raw = bytearray(files[name])
    how = data.draw(st.sampled_from(["flip", "cut", "both", "insert"]), label="how")
    if how in ("flip", "both"):
        for _ in range(data.draw(st.integers(1, 8), label="n_flips")):
            # damage the headers more often than the samples
            hi = min(len(raw), 200) if data.draw(st.booleans(), label="head") else len(raw)
            i = data.draw(st.integers(0, hi - 1), label="at")
            raw[i] = data.draw(st.integers(0, 255), label="byte")
    if how in ("cut", "both"):
        raw = raw[: data.draw(st.integers(0, len(raw)), label="cut")]
    if how == "insert":
        i = data.draw(st.integers(0, len(raw)), label="at")
        raw[i:i] = data.draw(st.binary(min_size=1, max_size=40), label="inserted")
    path = sandbox / ("damaged" + Path(name).suffix)
    path.write_bytes(bytes(raw))
    check_record_or_error(path)


HOSTILE = [
    "../../../etc/passwd", "..\\..\\boot.ini", "/tmp/ftsource-owned", "~/.bashrc",
    "$(touch pwned)", "`touch pwned`", "; rm -rf ~", "| tee out.json", "&& shutdown",
    "__import__('os').system('touch pwned')", "{{7*7}}", "%s%s%n", "\x1b[2J\x1b]0;t\x07",
    "\u202eevil", "nan", "inf", "-48 kHz", "0 Hz", "48 kHz", "632.991 nm", "1e999 Hz",
    "result.json", "spectrum.ecsv", "", " ", "=", "#", '"', "'",
]
KEYS = [
    "sample_rate", "reference_wavelength", "position_unit", "air_temperature", "air_pressure",
    "air_humidity", "description", "output", "out", "path", "file", "result", "record",
    "Sample-Rate", "sample.rate", "x" * 70, "../key", "$(key)",
]
NAMES = ["time", "signal", "ref", "ref_i", "ref_q", "position", "Signal", "TIME", "pd1", "ch0",
         "ch9", "metadata", "../x", "$(x)", "a b", '"signal"', "'ref'", "", "signal#x"]
CELL_TEXT = ["nan", "inf", "-inf", "1,5", "abc", "", "0x10", "1e", "1_000", "--1", "+.5",
             "1e400", "NaN", "\x1b", "\u00a0", "1.0.0", "'1'", '"2"', "#", "1 2"]


@st.composite
def tables(draw, *, readable=False):
    """Text tables in the record syntax, valid-ish: random metadata lines and names,
    separators and cells; with ``readable`` mostly well-formed numbers under contract names."""
    lines = []
    for _ in range(draw(st.integers(0, 6))):
        key = draw(st.sampled_from(KEYS) | st.from_regex(r"[A-Za-z_][A-Za-z0-9_.\-]{0,12}",
                                                          fullmatch=True))
        value = draw(st.sampled_from(HOSTILE) | st.text(max_size=30))
        lines.append(f"# {key} = {value}")
    if draw(st.booleans()):
        lines.append("# a plain comment: " + draw(st.text(max_size=20)))
    sep = draw(st.sampled_from([",", "\t", ";", " ", "  "]))
    if readable:
        pool = ["time", "signal", "ref", "ref_i", "ref_q", "position"]
        names = draw(st.lists(st.sampled_from(pool), min_size=1, max_size=4, unique=True))
        if "signal" not in names:
            names = ["signal", *names]
    else:
        names = draw(st.lists(st.sampled_from(NAMES) | st.text(max_size=8), min_size=1,
                              max_size=5))
    lines.append(sep.join(names))
    n_rows = draw(st.integers(60, 220) if readable else st.integers(0, 90))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    values = rng.normal(size=(n_rows, len(names)))
    if readable and "time" in names:
        values[:, names.index("time")] = np.arange(n_rows) / FS
    rows = [[repr(float(v)) for v in row] for row in values]
    for _ in range(draw(st.integers(0, 3 if readable else 6))):  # damage a few cells
        if not rows:
            break
        i = draw(st.integers(0, len(rows) - 1))
        j = draw(st.integers(0, len(names) - 1))
        if j < len(rows[i]):
            rows[i][j] = draw(st.sampled_from(CELL_TEXT) | st.text(max_size=6))
    if not readable and rows and draw(st.booleans()):
        rows[draw(st.integers(0, len(rows) - 1))].pop()  # a short row
    lines += [sep.join(r) for r in rows]
    end = draw(st.sampled_from(["\n", "\r\n", "\r"]))
    return end.join(lines) + end


@fuzz(700)
@given(text=tables(), ext=st.sampled_from([".csv", ".tsv", ".txt", ".dat"]),
       encoding=st.sampled_from(["utf-8", "latin-1", "utf-8-sig"]))
def test_random_tables(sandbox, text, ext, encoding):
    path = sandbox / f"table{ext}"
    path.write_bytes(text.encode(encoding, errors="replace"))
    before = sorted(os.listdir(sandbox))
    rec = check_record_or_error(path)
    assert sorted(os.listdir(sandbox)) == before  # no path in the table was used
    if rec is not None:
        for v in rec.metadata.values():
            assert isinstance(v, str)


# --------------------------------------------------------------------------------------------
# command line

QUANTITY_UNITS = ["nm", "um", "µm", "mm", "m", "pm", "Hz", "kHz", "MHz", "s", "ms", "degC", "°C",
                  "C", "K", "hPa", "mbar", "Pa", "kPa", "%", "ppm", "ppb", "mm/s", "m/s", "rad",
                  "furlongs", "khz", "", "nm nm", "1/cm"]


@st.composite
def quantities(draw):
    kind = draw(st.integers(0, 9))
    if kind <= 5:
        num = draw(st.sampled_from(["0", "-1", "1e-300", "1e300", "nan", "inf", "632.991", "48",
                                    "20", "1013", "50", "0.5", "1.5", "-0.0", "2e3"])
                   | st.floats(allow_nan=True, allow_infinity=True).map(repr))
        space = draw(st.sampled_from(["", " ", "\u00a0"]))
        return f"{num}{space}{draw(st.sampled_from(QUANTITY_UNITS))}"
    if kind <= 7:
        return draw(st.sampled_from(HOSTILE))
    return draw(st.text(max_size=15))


#: Sound values for each option (the contract's examples, docs/contract.md); the fuzz mixes
#: them with hostile ones so that both the success and the error paths are exercised.
ANALYZE_OPTIONS = {
    "--reference-wavelength": ["632.991nm", "632.8 nm", "0.632991um", "632.991 nm"],
    "--reference-uncertainty": ["1.5ppm", "0.01%", "1e-6", "0.001nm", "0ppm"],
    "--alignment-allowance": ["0ppm", "2ppm", "-3ppm", "1e-5"],
    "--air-temperature": ["20degC", "21.5 °C", "293.15K", "25C"],
    "--air-pressure": ["1013.25hPa", "1013 mbar", "101.325kPa", "95000Pa"],
    "--air-humidity": ["50%", "45 %RH", "0.3 fraction", "45", "0%"],
    "--sample-rate": ["48kHz", "48000Hz", "48000.0 Hz"],
    "--mirror-speed": ["0.5mm/s", "1 mm/s"],
    "--aperture-diameter": ["2mm", "25 mm"],
    "--focal-length": ["100mm", "0.2m"],
}


def option_value(sound):
    return st.one_of(st.sampled_from(sound), st.sampled_from(sound), quantities())


@st.composite
def analyze_argv(draw):
    argv = []
    for opt, sound in ANALYZE_OPTIONS.items():
        if draw(st.integers(0, 3)) == 0:
            argv.append(f"{opt}={draw(option_value(sound))}")
    if draw(st.booleans()):
        argv += ["--medium", draw(st.sampled_from(["air", "vacuum"]))]
    if draw(st.integers(0, 4)) == 0:
        argv += ["--apodization", draw(st.sampled_from(
            ["happ-genzel", "boxcar", "hann", "triangle", "nope", "Happ-Genzel"])
            | st.text(max_size=8))]
    if draw(st.integers(0, 4)) == 0:
        argv += ["--phase-correction", draw(st.sampled_from(["auto", "mertz", "forman",
                                                             "magnitude"]))]
    if draw(st.integers(0, 4)) == 0:
        argv.append("--columns=" + draw(st.sampled_from(
            ["signal=signal", "signal=ref_i,ref_i=signal", "ref=ref_i", "signal=0",
             "signal=PD1", "signal=signal,ref=ref_i,ref_i=ref_q", "time=time"])
            | st.text(max_size=20)))
    return argv


@fuzz(150)
@given(opts=analyze_argv())
def test_cli_random_option_values(valid, sandbox, opts):
    _, record = valid
    out_dir = sandbox / f"out{next(_counter)}"
    status, out, _err = cli(["analyze", record, "--json", "--out", out_dir, *opts])
    event(f"status {status}")
    if status == 0:
        d = json.loads(out)
        assert sorted(os.listdir(out_dir)) == sorted(OUTPUT_FILES)
        assert json.loads((out_dir / "result.json").read_text(encoding="utf-8")) == d
    else:
        assert out == ""
        assert not out_dir.exists()


@fuzz(200)
@given(text=tables(readable=True), opts=st.lists(st.sampled_from(
    [["--sample-rate", "48kHz"], ["--medium", "vacuum"], ["--mirror-speed", "0.1mm/s"],
     ["--reference-wavelength", "632.991nm"], ["--columns", "ref=signal"]]), max_size=3))
def test_cli_random_tables(sandbox, text, opts):
    path = _fresh(sandbox, ".csv")
    path.write_text(text, encoding="utf-8")
    status, _out, _err = cli(["analyze", path, *itertools.chain.from_iterable(opts)])
    event(f"status {status}")


@fuzz(200)
@given(ext=st.sampled_from(EXTENSIONS), body=st.binary(max_size=600))
def test_cli_random_bytes(sandbox, ext, body):
    path = sandbox / f"cli-bytes{ext}"
    path.write_bytes(body)
    out_dir = sandbox / "cli-bytes-out"
    status, _out, _err = cli(["analyze", path, "--reference-wavelength", "632.991nm",
                              "--out", out_dir])
    assert status == 2 or len(body) > 0
    assert not out_dir.exists() or status == 0


SOURCES = ["laser:650nm", "laser:532nm:0.1nm", "led:590nm:20nm", "multimode:650nm:0.2nm:2nm",
           "laser:-5nm", "laser:0nm", "laser:1e9nm", "led:590nm:0nm", "multimode:650nm:0nm:1nm",
           "laser:650", "laser:", ":", "led:1nm:1e6nm", "laser:650nm:nan nm"]


@fuzz(150)
@given(
    ext=st.sampled_from([".csv", ".npz", ".wav", ".dat"]),
    sources=st.lists(st.sampled_from(SOURCES[:4]) | st.sampled_from(SOURCES)
                     | st.text(max_size=12), max_size=2),
    reference=st.sampled_from(["quadrature", "single", "encoder", "none"]),
    rate=option_value(["8kHz", "48kHz", "96000Hz", "44.1kHz", "1Hz", "0.5MHz"]),
    centre=option_value(["0mm", "0.2mm", "-0.1mm", "10m"]),
    amplitude=option_value(["0.5mm", "1um", "1mm", "2m"]),
    sweep=option_value(["1Hz", "5Hz", "0.1Hz", "1kHz"]),
    noise=st.sampled_from(["0", "0.01", "1", "1e300"]),
    seed=st.integers(0, 2**32),
    ref_wl=option_value(["632.991nm", "1550nm", "10nm"]),
)
def test_cli_simulate_random_values(sandbox, ext, sources, reference, rate, centre, amplitude,
                                    sweep, noise, seed, ref_wl):
    path = _fresh(sandbox, ext)
    argv = ["simulate", path, "--duration", "0.1s", "--reference", reference,
            f"--sample-rate={rate}", f"--opd-centre={centre}", f"--opd-amplitude={amplitude}",
            f"--sweep-rate={sweep}", "--noise", noise, "--seed", str(seed),
            f"--reference-wavelength={ref_wl}"]
    for s in sources:
        argv.append(f"--source={s}")
    status, _out, err = cli(argv)
    event(f"status {status}")
    assert path.exists() == (status == 0)
    leftovers = [p for p in os.listdir(sandbox) if p.endswith(".tmp")]
    assert leftovers == []


@fuzz(150)
@given(
    element=st.none() | st.sampled_from(["Ne", "Hg", "He", "ne", "Xx", ""]) | st.text(max_size=6),
    lo=st.none() | quantities(), hi=st.none() | quantities(), near=st.none() | quantities(),
    tol=st.none() | quantities(), medium=st.sampled_from(["vacuum", "air"]), as_json=st.booleans(),
)
def test_cli_lines_random_values(element, lo, hi, near, tol, medium, as_json):
    argv = ["lines", "--medium", medium]
    for opt, v in (("--element", element), ("--min", lo), ("--max", hi), ("--near", near),
                   ("--tolerance", tol)):
        if v is not None:
            argv.append(f"{opt}={v}")
    if as_json:
        argv.append("--json")
    status, out, _err = cli(argv)
    event(f"status {status}")
    if status == 0 and as_json:
        assert isinstance(json.loads(out), list)


@fuzz(200)
@given(option=st.sampled_from(["--calibration", "--response"]),
       head=st.sampled_from([b"", b"{", b'{"kind": "ftsource-rig-calibration", ',
                             b"# %ECSV 1.0\n# ---\n", b"# %ECSV 1.0\n# ---\n# meta: !!python/"]),
       body=st.binary(max_size=400) | st.text(max_size=200).map(str.encode))
def test_cli_random_calibration_and_response_files(valid, sandbox, option, head, body):
    """Side files given by option are data only: random content is a clean error."""
    _, record = valid
    path = sandbox / ("side.json" if option == "--calibration" else "side.ecsv")
    path.write_bytes(head + body)
    status, _out, _err = cli(["analyze", record, "--reference-wavelength", "632.991nm", option,
                              path])
    assert status == 2
