"""The command line: usage errors, outputs written all-or-nothing, determinism, real processes.

What is checked and against what:

- exit statuses and the ``--out``/``--overwrite``/``--json`` behaviour are the contract
  (docs/contract.md, "Command line");
- one ``error:`` line on standard error, no traceback, and no partial output file are common
  practice for command-line tools; "all or nothing" for a set of files is the usual
  write-to-a-temporary-file-then-rename pattern (POSIX ``rename(2)`` replaces atomically);
- JSON text must parse with Python's ``json`` module (RFC 8259), and two runs on the same input
  must give the same bytes (common practice for reproducible results: no timestamps);
- the records are synthetic (``ftsource.simulate``, tested against closed forms in
  tests/test_simulate.py) and only serve as valid inputs here; no number is checked.
"""

from __future__ import annotations

import errno
import json
import os
import re
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from cli_helpers import assert_clean_error, nested_dicts, run, tree

import ftsource
from ftsource import simulate as sim
from ftsource.errors import OutputError
from ftsource.io.records import write_record_csv, write_record_npz, write_record_wav
from ftsource.report import text as report

REF = ["--reference-wavelength", "632.991nm"]
FS = 48_000.0
ROOT = Path(ftsource.__file__).resolve().parents[1]





@pytest.fixture(scope="module")
def record_file(tmp_path_factory):
    """A valid quadrature record (0.5 s at 48 kHz) of an invented 650 nm laser, as .npz."""
    d = tmp_path_factory.mktemp("rec")
    rec = sim.simulate(sim.laser(650.0),
                       sim.Scan(sample_rate_hz=FS, duration_s=0.5, sweep_rate_hz=2.0),
                       rng=3).record
    path = d / "laser.npz"
    write_record_npz(path, rec)
    return path


# --------------------------------------------------------------------------------------------
# usage errors: one line, status 2, no SystemExit out of main


@pytest.mark.parametrize(
    "argv, fragment",
    [
        (["analyze"], "the following arguments are required: record"),
        (["analyze", "x.csv", "--no-such-option"], "unrecognized arguments: --no-such-option"),
        (["analyze", "x.csv", "--medium", "water"], "argument --medium: invalid choice: 'water'"),
        (["analyze", "x.csv", "--phase-correction", "guess"], "invalid choice: 'guess'"),
        (["analyze", "x.csv", "--reference-wavelength"], "expected one argument"),
        (["frobnicate"], "invalid choice: 'frobnicate'"),
        (["simulate"], "the following arguments are required: out"),
        (["simulate", "x.csv", "--seed", "many"], "argument --seed: invalid int value: 'many'"),
        (["simulate", "x.csv", "--noise", "loud"], "argument --noise: invalid float value"),
    ],
)
def test_usage_errors_are_one_line(capsys, argv, fragment):
    status, out, err = run(capsys, argv)
    assert_clean_error(status, err, fragment)
    assert "usage:" not in err
    assert out == ""


@pytest.mark.parametrize("argv", [["--help"], ["analyze", "--help"], ["simulate", "-h"]])
def test_help_returns_zero_without_raising(capsys, argv):
    status, out, err = run(capsys, argv)
    assert status == 0
    assert "usage: ftsource" in out
    assert err == ""


def test_version_and_no_command(capsys):
    status, out, _ = run(capsys, ["--version"])
    assert status == 0 and out == f"ftsource {ftsource.__version__}\n"
    status, out, _ = run(capsys, [])
    assert status == 0 and "usage: ftsource" in out


# --------------------------------------------------------------------------------------------
# option values


@pytest.mark.parametrize(
    "extra, fragment",
    [
        (["--sample-rate", "0Hz"], "--sample-rate: '0Hz' is not allowed; it must be above zero"),
        (["--sample-rate", "nan Hz"], "--sample-rate: 'nan Hz' is not a finite number"),
        (["--sample-rate", "48 khz"], "--sample-rate: the unit 'khz'"),
        (["--mirror-speed", "0 mm/s"], "--mirror-speed: '0 mm/s' is not allowed"),
        (["--mirror-speed", "5 mm"], "--mirror-speed: '5 mm' is a length; expected a speed"),
        (["--air-temperature", "20"], "--air-temperature: '20' has no unit"),
        (["--air-pressure", "1 furlong"], "--air-pressure: the unit 'furlong'"),
        (["--air-humidity", "50 hPa"], "--air-humidity: '50 hPa' is an energy density/pressure"),
        (["--reference-uncertainty", "2 Hz"],
         "--reference-uncertainty: '2 Hz' is neither a ratio nor a length"),
        (["--reference-uncertainty=-1ppm"], "--reference-uncertainty must be a finite value ≥ 0"),
        (["--alignment-allowance", "inf"], "--alignment-allowance: 'inf' is not a finite number"),
        (["--apodization", "no-such-window"], "no-such-window"),
        (["--aperture-diameter", "0mm"], "--aperture-diameter: '0mm' is not allowed"),
        (["--reference-wavelength", ""], "--reference-wavelength: ''"),
        (["--columns", "signal"], "--columns: 'signal' is not 'name=column'"),
        (["--calibration", "no-such-calibration.json"], "no-such-calibration.json: cannot be read"),
        (["--response", "no-such-response.ecsv"], "no-such-response.ecsv"),
    ],
)
def test_bad_option_values(capsys, record_file, tmp_path, extra, fragment):
    out_dir = tmp_path / "out"
    status, out, err = run(capsys, ["analyze", record_file, *REF, *extra, "--out", out_dir])
    assert_clean_error(status, err, fragment)
    assert not out_dir.exists()


def test_reference_uncertainty_as_length_needs_the_wavelength(capsys, tmp_path):
    from dataclasses import replace

    rec = sim.simulate(sim.laser(650.0),
                       sim.Scan(sample_rate_hz=FS, duration_s=0.5, sweep_rate_hz=2.0),
                       rng=3).record
    path = tmp_path / "bare.npz"
    write_record_npz(path, replace(rec, metadata={"sample_rate": f"{FS} Hz"}))
    status, _out, err = run(capsys, ["analyze", path, "--reference-uncertainty", "1pm"])
    assert_clean_error(status, err, "the reference wavelength is unknown")


def test_reference_uncertainty_as_length_uses_the_metadata_wavelength(capsys, tmp_path):
    # 1 pm of a 632.991 nm reference is 1e-3/632.991 = 1.5798 ppm (closed form)
    from dataclasses import replace

    rec = sim.simulate(sim.laser(650.0),
                       sim.Scan(sample_rate_hz=FS, duration_s=0.5, sweep_rate_hz=2.0),
                       rng=3).record
    path = tmp_path / "meta.npz"
    write_record_npz(path, replace(rec, metadata={"reference_wavelength": "632.991 nm"}))
    status, out, err = run(capsys, ["analyze", path, "--reference-uncertainty", "1pm",
                                    "--medium", "vacuum", "--json"])
    assert status == 0, err
    d = json.loads(out)
    assert d["input"]["reference_uncertainty_ppm"] == pytest.approx(1e-3 / 632.991 * 1e6,
                                                                    rel=1e-12)


def test_wav_with_zero_rate_header_reads_with_sample_rate_option(tmp_path, capsys, record_file):
    """--sample-rate reaches the reader: it rescues a WAV whose header rate is 0 (WAV spec,
    ch. 3: sample-rate and byte-rate fields at offsets 24 and 28)."""
    with np.load(record_file) as z:
        cols = {"signal": z["signal"] / 4, "ref": z["ref_i"] / 2}
    write_record_wav(tmp_path / "z.wav", cols, FS)
    data = bytearray((tmp_path / "z.wav").read_bytes())
    data[24:32] = bytes(8)
    (tmp_path / "z.wav").write_bytes(bytes(data))
    status, _out, err = run(capsys, ["analyze", tmp_path / "z.wav", *REF])
    assert_clean_error(status, err, "its header gives a sample rate of 0 Hz")
    status, out, err = run(capsys, ["analyze", tmp_path / "z.wav", *REF, "--sample-rate", "48kHz",
                                    "--json"])
    assert status == 0, err
    assert json.loads(out)["input"]["sample_rate_hz"] == FS


# --------------------------------------------------------------------------------------------
# outputs


def test_out_into_existing_empty_folder(capsys, record_file, tmp_path):
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    status, out, err = run(capsys, ["analyze", record_file, *REF, "--out", out_dir, "--json"])
    assert status == 0, err
    assert sorted(tree(out_dir)) == sorted(report.OUTPUT_FILES)
    assert json.loads((out_dir / "result.json").read_text()) == json.loads(out)
    assert (out_dir / "result.json").read_text() == out


def test_out_folder_is_created(capsys, record_file, tmp_path):
    out_dir = tmp_path / "a" / "b"
    status, _out, err = run(capsys, ["analyze", record_file, *REF, "--out", out_dir])
    assert status == 0, err
    assert sorted(tree(out_dir)) == sorted(report.OUTPUT_FILES)


@pytest.mark.parametrize("existing", [["result.json"], ["spectrum.ecsv"],
                                      ["result.json", "spectrum.ecsv"]])
def test_existing_results_need_overwrite(capsys, record_file, tmp_path, existing):
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    for name in existing:
        (out_dir / name).write_text("earlier\n")
    before = tree(out_dir)
    status, out, err = run(capsys, ["analyze", record_file, *REF, "--out", out_dir])
    assert_clean_error(status, err, "exists already; use --overwrite to replace")
    assert out == ""
    assert tree(out_dir) == before
    status, _out, err = run(capsys, ["analyze", record_file, *REF, "--out", out_dir,
                                     "--overwrite"])
    assert status == 0, err
    assert sorted(tree(out_dir)) == sorted(report.OUTPUT_FILES)
    assert (out_dir / "result.json").read_text() != "earlier\n"


def test_dangling_link_counts_as_existing(capsys, record_file, tmp_path):
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    os.symlink(tmp_path / "elsewhere.json", out_dir / "result.json")
    status, _out, err = run(capsys, ["analyze", record_file, *REF, "--out", out_dir])
    assert_clean_error(status, err, "exists already")
    assert not (tmp_path / "elsewhere.json").exists()


def test_overwrite_replaces_a_link_never_writes_through_it(capsys, record_file, tmp_path):
    victim = tmp_path / "victim.txt"
    victim.write_text("keep me\n")
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    os.symlink(victim, out_dir / "result.json")
    status, _out, err = run(capsys, ["analyze", record_file, *REF, "--out", out_dir,
                                     "--overwrite"])
    assert status == 0, err
    assert victim.read_text() == "keep me\n"
    assert not (out_dir / "result.json").is_symlink()


def test_out_is_a_file(capsys, record_file, tmp_path):
    (tmp_path / "f").write_text("x")
    status, _out, err = run(capsys, ["analyze", record_file, *REF, "--out", tmp_path / "f"])
    assert_clean_error(status, err, "exists and is not a directory")
    assert (tmp_path / "f").read_text() == "x"


def test_output_name_taken_by_a_folder(capsys, record_file, tmp_path):
    out_dir = tmp_path / "out"
    (out_dir / "result.json").mkdir(parents=True)
    status, _out, err = run(capsys, ["analyze", record_file, *REF, "--out", out_dir,
                                     "--overwrite"])
    assert_clean_error(status, err, "result.json is a directory")
    assert tree(out_dir) == {}


class _Fail:
    """Make the n-th call of a function raise an OSError (a full disk, common practice)."""

    def __init__(self, real, n):
        self.real, self.n, self.calls = real, n, 0

    def __call__(self, *a, **k):
        self.calls += 1
        if self.calls == self.n:
            raise OSError(errno.ENOSPC, "No space left on device")
        return self.real(*a, **k)


@pytest.mark.parametrize("prepared", [False, True], ids=["fresh", "earlier-results"])
@pytest.mark.parametrize("where", ["write-second", "rename-second", "write-first"])
def test_failure_while_writing_leaves_nothing(capsys, record_file, tmp_path, monkeypatch,
                                              where, prepared):
    """A write that fails half-way leaves no result.json/spectrum.ecsv and no temporary file;
    with --overwrite, the earlier results are back as they were."""
    out_dir = tmp_path / "out"
    out_dir.mkdir()
    if prepared:
        (out_dir / "result.json").write_text("earlier result\n")
        (out_dir / "spectrum.ecsv").write_text("earlier spectrum\n")
    before = tree(out_dir)
    if where == "write-second":
        monkeypatch.setattr(report, "_write_temp", _Fail(report._write_temp, 2))
    elif where == "write-first":
        monkeypatch.setattr(report, "_write_temp", _Fail(report._write_temp, 1))
    else:
        monkeypatch.setattr(report, "_place", _Fail(report._place, 2))
    args = ["analyze", record_file, *REF, "--out", out_dir] + (["--overwrite"] if prepared else [])
    status, out, err = run(capsys, args)
    monkeypatch.undo()
    assert_clean_error(status, err, "cannot write (No space left on device)")
    assert out == ""
    assert tree(out_dir) == before


def test_failure_shaping_the_output_leaves_nothing(capsys, record_file, tmp_path, monkeypatch):
    def broken(result):
        raise ValueError("Out of range float values are not JSON compliant")

    monkeypatch.setattr(report, "result_json", broken)
    out_dir = tmp_path / "out"
    status, out, err = run(capsys, ["analyze", record_file, *REF, "--json", "--out", out_dir])
    assert status == 3 and err.startswith("error: internal error") and err.count("\n") == 1
    assert out == ""
    assert not out_dir.exists()


def test_metadata_never_becomes_a_path(capsys, tmp_path):
    """Metadata values that look like paths or commands are kept as text, and the only files
    written are the two fixed names in --out."""
    rec = sim.simulate(sim.laser(650.0),
                       sim.Scan(sample_rate_hz=FS, duration_s=0.5, sweep_rate_hz=2.0),
                       rng=3).record
    hostile = {
        "output": "../../escaped.json",
        "out": str(tmp_path / "abs.json"),
        "result": "../result.json",
        "description": "$(touch pwned) `touch pwned2`; rm -rf ~ | tee ../x",
        "record": "../../etc/passwd",
        "path": "..\\..\\windows\\system32",
        "python": "__import__('os').system('touch pwned3')",
        "terminal": "\x1b]0;title\x07\x1b[2J red\u202e",
    }
    work = tmp_path / "work"
    work.mkdir()
    write_record_csv(work / "rec.csv", rec, metadata=hostile)
    out_dir = work / "deep" / "out"
    before = tree(tmp_path)
    cwd = os.getcwd()
    os.chdir(work)
    try:
        status, out, err = run(capsys, ["analyze", "rec.csv", *REF, "--out", out_dir, "--json"])
    finally:
        os.chdir(cwd)
    assert status == 0, err
    after = tree(tmp_path)
    new = sorted(set(after) - set(before))
    assert new == sorted(f"work/deep/out/{n}" for n in report.OUTPUT_FILES)
    d = json.loads(out)
    for k, v in hostile.items():
        assert d["input"]["metadata"][k] == v.strip()
    assert d["input"]["record"] == "rec.csv"
    # nothing that a terminal acts on is printed raw (RFC 8259 escapes keep the text)
    assert "\x1b" not in out and "\u202e" not in out and "\x07" not in out


def test_summary_and_errors_are_printable(capsys, tmp_path):
    rec = sim.simulate(sim.laser(650.0),
                       sim.Scan(sample_rate_hz=FS, duration_s=0.5, sweep_rate_hz=2.0),
                       rng=3).record
    name = "rec\x1b[31m\u202e.csv"
    write_record_csv(tmp_path / name, rec)
    status, out, err = run(capsys, ["analyze", tmp_path / name, *REF])
    assert status == 0, err
    assert all(line.isprintable() for line in out.splitlines())
    (tmp_path / name).write_text("time,signal\n")
    status, out, err = run(capsys, ["analyze", tmp_path / name, *REF])
    assert_clean_error(status, err, "has a header (line 1) but no data rows")
    assert err[:-1].isprintable()


# --------------------------------------------------------------------------------------------
# determinism


def test_same_input_same_bytes(capsys, record_file, tmp_path):
    outs = []
    for k in range(2):
        out_dir = tmp_path / f"out{k}"
        status, out, err = run(capsys, ["analyze", record_file, *REF, "--json", "--out", out_dir])
        assert status == 0, err
        outs.append((out, tree(out_dir)))
    assert outs[0] == outs[1]
    text = outs[0][0]
    # no timestamps: no date or clock time anywhere in the result (common practice)
    assert not re.search(r"\b(19|20)\d\d-\d\d-\d\d", text)
    assert not re.search(r"\b\d\d:\d\d:\d\d\b", text)
    keys = {k for d in nested_dicts(json.loads(text)) for k in d}
    assert not {k for k in keys if re.search(r"date|time(stamp)?$|created|when", k)} - {
        "time"}, keys


def _subprocess(args, cwd, hashseed="0"):
    env = dict(os.environ, PYTHONPATH=str(ROOT), PYTHONHASHSEED=hashseed)
    return subprocess.run([sys.executable, "-m", "ftsource", *map(str, args)], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=300)


def test_processes_agree_byte_for_byte(record_file, tmp_path):
    """Two processes with different hash seeds give the same JSON bytes."""
    a = _subprocess(["analyze", record_file, *REF, "--json"], tmp_path, "1")
    b = _subprocess(["analyze", record_file, *REF, "--json"], tmp_path, "12345")
    assert a.returncode == 0 and b.returncode == 0, a.stderr + b.stderr
    assert a.stdout == b.stdout
    assert a.stderr == "" and b.stderr == ""


# --------------------------------------------------------------------------------------------
# real processes


@pytest.mark.parametrize(
    "args, fragment",
    [
        (["analyze", "missing.csv", *REF], "missing.csv: no such file"),
        (["analyze", "empty.wav", *REF], "empty.wav: is empty"),
        (["analyze", "bad.csv", "--reference-wavelength", "633 furlongs"], "furlongs"),
        (["analyze", "bad.csv", "--medium", "water"], "invalid choice: 'water'"),
        (["analyze", "bad.csv", *REF], "bad.csv: line 2: the cell in column 'signal' holds"),
    ],
)
def test_process_error_is_one_line(tmp_path, args, fragment):
    (tmp_path / "empty.wav").write_bytes(b"")
    (tmp_path / "bad.csv").write_text("time,signal,ref\n0,x,1\n")
    r = _subprocess(args, tmp_path)
    assert r.returncode == 2
    assert r.stdout == ""
    lines = r.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: "), r.stderr
    assert fragment in lines[0]
    assert "Traceback" not in r.stderr
    assert sorted(os.listdir(tmp_path)) == ["bad.csv", "empty.wav"]


def test_process_success_and_help(record_file, tmp_path):
    r = _subprocess(["analyze", record_file, *REF, "--out", "res"], tmp_path)
    assert r.returncode == 0, r.stderr
    assert r.stderr == ""
    assert "centre wavelength (vacuum)" in r.stdout
    assert sorted(os.listdir(tmp_path / "res")) == sorted(report.OUTPUT_FILES)
    r = _subprocess(["analyze", record_file, *REF, "--out", "res"], tmp_path)
    assert r.returncode == 2 and r.stderr.count("\n") == 1 and "--overwrite" in r.stderr
    r = _subprocess(["--help"], tmp_path)
    assert r.returncode == 0 and "usage: ftsource" in r.stdout and r.stderr == ""


# --------------------------------------------------------------------------------------------
# simulate


@pytest.mark.parametrize(
    "extra, fragment",
    [
        (["--noise", "nan"], "--noise nan is not allowed"),
        (["--noise=-1"], "--noise -1.0 is not allowed"),
        (["--seed=-1"], "--seed -1 is not allowed"),
        (["--duration", "0s"], "--duration: '0s' is not allowed"),
        (["--duration", "1ms"], "gives 48 samples; allowed 64–5e7"),
        (["--duration", "10 furlongs"], "--duration: the unit 'furlongs'"),
        (["--sample-rate", "48000.5Hz"], "a WAV file holds a whole number of Hz"),
        (["--opd-amplitude", "0mm"], "--opd-amplitude: '0mm' is not allowed"),
        (["--sweep-rate", "0Hz"], "--sweep-rate: '0Hz' is not allowed"),
        (["--source", "laser"], "--source 'laser' is not understood"),
        (["--source", "laser:0nm"], "the wavelength must lie between 10 nm and 100 µm"),
        (["--source", "led:590nm:1000nm"], "the FWHM must be above 0 and at most half"),
        (["--source", "multimode:650nm:1e-9nm:1nm"], "at most 1000 mode spacings"),
        (["--source", "laser:650"], "has no unit"),
        (["--source", "lamp:650nm"], "--source 'lamp:650nm' is not understood"),
    ],
)
def test_simulate_bad_values(capsys, tmp_path, extra, fragment):
    status, out, err = run(capsys, ["simulate", tmp_path / "x.wav", "--duration", "0.25s",
                                    *extra])
    assert_clean_error(status, err, fragment)
    assert os.listdir(tmp_path) == []


def test_simulate_refuses_to_replace(capsys, tmp_path):
    (tmp_path / "x.csv").write_text("mine\n")
    status, _out, err = run(capsys, ["simulate", tmp_path / "x.csv", "--duration", "0.25s"])
    assert_clean_error(status, err, "exists already; use --overwrite to replace it")
    assert (tmp_path / "x.csv").read_text() == "mine\n"
    status, _out, err = run(capsys, ["simulate", tmp_path / "x.xlsx", "--duration", "0.25s"])
    assert_clean_error(status, err, "unknown record type '.xlsx'")
    status, _out, err = run(capsys, ["simulate", tmp_path, "--duration", "0.25s"])
    assert_clean_error(status, err)


@pytest.mark.parametrize("suffix", [".csv", ".npz", ".wav"])
def test_simulate_then_analyze(capsys, tmp_path, suffix):
    path = tmp_path / f"sim{suffix}"
    status, out, err = run(capsys, ["simulate", path, "--duration", "0.5s", "--sweep-rate", "2Hz",
                                    "--opd-amplitude", "0.5mm"])
    assert status == 0, err
    assert "invented data" in out
    status, out, err = run(capsys, ["analyze", path, *REF, "--json"])
    assert status == 0, err
    assert json.loads(out)["summary"]["kind"] in ("narrow", "none", "multimode", "broadband")


# --------------------------------------------------------------------------------------------
# demo and writing details


def test_demo_refuses_before_analysing_when_a_result_exists(capsys, tmp_path):
    from ftsource.demo import demo_records

    _scenario, records = demo_records()
    last = Path(records[-1]["file"]).stem
    (tmp_path / last).mkdir()
    (tmp_path / last / "result.json").write_text("earlier\n")
    before = tree(tmp_path)
    status, out, err = run(capsys, ["demo", "--out", tmp_path])
    assert_clean_error(status, err, "exists already; use --overwrite to replace")
    assert out == ""
    assert tree(tmp_path) == before
    assert sorted(os.listdir(tmp_path)) == [last]


def test_write_without_hard_links(record_file, tmp_path, monkeypatch):
    """On a file system without hard links (FAT on a USB stick) results are still written,
    and --overwrite still restores earlier files when the second write fails."""
    from ftsource.analysis import AnalysisOptions, analyze
    from ftsource.io.records import read_record

    result = analyze(read_record(record_file), AnalysisOptions(reference_wavelength_nm=632.991))

    def no_links(*a, **k):
        raise PermissionError(errno.EPERM, "Operation not permitted")

    monkeypatch.setattr(report.os, "link", no_links)
    out_dir = tmp_path / "out"
    report.write_outputs(result, out_dir)
    first = tree(out_dir)
    assert sorted(first) == sorted(report.OUTPUT_FILES)
    with pytest.raises(OutputError, match="exists already"):
        report.write_outputs(result, out_dir)
    monkeypatch.setattr(report, "_place", _Fail(report._place, 2))
    with pytest.raises(OutputError, match="No space left"):
        report.write_outputs(result, out_dir, overwrite=True)
    assert tree(out_dir) == first
    # results are readable by everyone like any other file the user writes (common practice)
    assert (out_dir / "result.json").stat().st_mode & 0o777 == 0o644
