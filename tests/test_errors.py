"""The catalogue of broken records and bad options (docs/errors.md), through the command line.

Every case runs ``ftsource.cli.main([...])`` in-process and checks what a user sees:

- exit status 2 (the contract, docs/contract.md "Exit status"), never 3 ("internal error");
- standard error is exactly one line, ``error: <message>``, holding the catalogue's fragment and
  no traceback;
- nothing is created or changed in ``--out``: an output folder already holding earlier results
  (with ``--overwrite``) keeps them byte for byte and gains no file, and an output folder that
  did not exist is not created.

Broken records are made from synthetic records of ``ftsource.simulate`` (the simulator is
tested against closed forms in tests/test_simulate.py) by damaging them the way home-built rigs,
sound cards and oscilloscopes do (cut files, gaps, clipping, a dropped reference). File layouts
follow the WAV spec (IBM and Microsoft, "Multimedia Programming Interface and Data
Specifications 1.0", 1991, chapter 3) and NumPy's .npy/.npz format (NEP 1). What counts as a
clean error is common practice for command-line tools (one line on standard error, non-zero
status, no partial output).
"""

from __future__ import annotations

import json
import os
import re
import struct
from pathlib import Path

import numpy as np
import pytest
from cli_helpers import assert_clean_error, run, tree

from ftsource import simulate as sim
from ftsource.io.records import write_record_csv, write_record_npz, write_record_wav

REF = ["--reference-wavelength", "632.991nm"]
FS = 48_000.0
OLD_RESULT = b'{"earlier": "result"}\n'
OLD_SPECTRUM = b"# earlier spectrum\n"


# --------------------------------------------------------------------------------------------
# helpers





def _scan(duration=0.5, **kw):
    return sim.Scan(sample_rate_hz=FS, duration_s=duration, sweep_rate_hz=2.0, **kw)


@pytest.fixture(scope="module")
def base():
    """A clean quadrature record of an invented 650 nm laser (0.5 s at 48 kHz)."""
    return sim.simulate(sim.laser(650.0), _scan(), rng=1).record


@pytest.fixture(scope="module")
def single():
    """The same with one reference detector."""
    return sim.simulate(sim.laser(650.0), _scan(), sim.ReferenceChannel(kind="single"),
                        rng=1).record


def _cols(record, drop=()):
    return {k: np.asarray(v) for k, v in record.columns.items() if k not in drop}


def _csv_lines(record, rows=200):
    """A short text table (header first) of the record's first ``rows`` samples."""
    cols = _cols(record)
    lines = [",".join(cols)]
    for i in range(rows):
        lines.append(",".join(repr(float(cols[k][i])) for k in cols))
    return lines


def _write_lines(path, lines):
    Path(path).write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _stereo_wav(record, path):
    cols = _cols(record)
    write_record_wav(path, {"signal": cols["signal"] / 4, "ref": cols["ref_i"] / 2}, FS)
    return path


# --------------------------------------------------------------------------------------------
# the catalogue: each maker writes a record into ``d`` and returns (argv tail, fragment)


def c_missing(d, base, single):
    return [d / "nosuch.csv", *REF], "nosuch.csv: no such file"


def c_empty_name(d, base, single):
    return ["", *REF], "the record file name is empty"


def c_directory(d, base, single):
    (d / "folder.csv").mkdir()
    return [d / "folder.csv", *REF], "folder.csv: is a directory, not a record file"


def c_not_regular_file(d, base, single):
    os.mkfifo(d / "pipe.csv")  # reading a pipe nobody writes to would wait for ever
    return [d / "pipe.csv", *REF], "pipe.csv: is not a regular file (a device, pipe or socket)"


def c_empty(d, base, single):
    (d / "empty.csv").write_bytes(b"")
    return [d / "empty.csv", *REF], "empty.csv: is empty"


def c_comments_only(d, base, single):
    (d / "c.csv").write_text("# sample_rate = 48 kHz\n# only comments\n")
    return [d / "c.csv", *REF], "has no header line and no data"


def c_header_only(d, base, single):
    (d / "h.csv").write_text("time,signal,ref_i,ref_q\n")
    return [d / "h.csv", *REF], "h.csv: has a header (line 1) but no data rows"


def c_no_header(d, base, single):
    lines = _csv_lines(base)[1:]
    return [_write_lines(d / "nh.csv", lines), *REF], "line 1 holds numbers where the header"


def c_one_sample(d, base, single):
    (d / "one.csv").write_text("time,signal,ref_i,ref_q\n0,0.1,0.2,0.3\n")
    return [d / "one.csv", *REF], "one.csv: holds 1 sample; at least 64 are needed"


def c_non_numeric(d, base, single):
    lines = _csv_lines(base)
    lines[5] = "0.0001,abc,0.2,0.3"
    return ([_write_lines(d / "nn.csv", lines), *REF],
            "line 6: the cell in column 'signal' holds 'abc', not a number")


def c_empty_cell(d, base, single):
    lines = _csv_lines(base)
    lines[7] = "0.0001,,0.2,0.3"
    return [_write_lines(d / "ec.csv", lines), *REF], "the cell in column 'signal' is empty"


def c_decimal_comma(d, base, single):
    lines = ["time;signal;ref_i;ref_q"] + [
        f"{i / FS:.6f}".replace(".", ",") + ";0,5;0,25;0,75" for i in range(100)
    ]
    return [_write_lines(d / "dc.csv", lines), *REF], "use '.' as the decimal mark"


def c_nan(d, base, single):
    lines = _csv_lines(base)
    lines[10] = "0.0002,nan,0.2,0.3"
    return ([_write_lines(d / "nan.csv", lines), *REF],
            "column 'signal' holds a non-finite value (nan) at line 11")


def c_inf_npz(d, base, single):
    cols = _cols(base)
    cols["ref_q"] = cols["ref_q"].copy()
    cols["ref_q"][123] = np.inf
    np.savez(d / "inf.npz", **cols)
    return [d / "inf.npz", *REF], "column 'ref_q' holds a non-finite value (inf) at sample 123"


def c_short_row(d, base, single):
    lines = _csv_lines(base)
    lines[10] = "0.0002,0.1,0.2"
    return ([_write_lines(d / "sr.csv", lines), *REF],
            "line 11 has 3 values but the header (line 1) names 4 columns")


def c_columns_differ_npz(d, base, single):
    cols = _cols(base)
    cols["ref_i"] = cols["ref_i"][:-7]
    np.savez(d / "len.npz", **cols)
    return [d / "len.npz", *REF], "columns differ in length"


def c_unknown_unit(d, base, single):
    write_record_npz(d / "ok.npz", base)
    return ([d / "ok.npz", "--reference-wavelength", "633 furlongs"],
            "--reference-wavelength: the unit 'furlongs' in '633 furlongs' is not understood")


def c_bare_number(d, base, single):
    write_record_npz(d / "ok.npz", base)
    return ([d / "ok.npz", "--reference-wavelength", "633"],
            "--reference-wavelength: '633' has no unit")


def c_wrong_kind(d, base, single):
    write_record_npz(d / "ok.npz", base)
    return ([d / "ok.npz", "--reference-wavelength", "48kHz"],
            "--reference-wavelength: '48kHz' is a frequency; expected a length")


def c_wavelength_negative(d, base, single):
    write_record_npz(d / "ok.npz", base)
    return ([d / "ok.npz", "--reference-wavelength=-633nm"],
            "--reference-wavelength: '-633nm' is not allowed; it must be above zero")


def c_wavelength_out_of_range(d, base, single):
    write_record_npz(d / "ok.npz", base)
    return [d / "ok.npz", "--reference-wavelength", "5um"], "is outside 200–2000 nm"


def c_sample_rate_zero(d, base, single):
    write_record_npz(d / "nt.npz", _cols(base, drop=("time",)))
    return ([d / "nt.npz", *REF, "--sample-rate", "0Hz"],
            "--sample-rate: '0Hz' is not allowed; it must be above zero")


def c_sample_rate_negative(d, base, single):
    write_record_npz(d / "nt.npz", _cols(base, drop=("time",)))
    return ([d / "nt.npz", *REF, "--sample-rate=-48kHz"],
            "--sample-rate: '-48kHz' is not allowed; it must be above zero")


def c_sample_rate_negative_no_equals(d, base, single):
    write_record_npz(d / "nt.npz", _cols(base, drop=("time",)))
    return ([d / "nt.npz", *REF, "--sample-rate", "-48kHz"],
            "argument --sample-rate: expected one argument (a value that starts with '-' is "
            "written as --option=VALUE)")


def c_metadata_rate_zero(d, base, single):
    write_record_csv(d / "z.csv", _cols(base, drop=("time",)), metadata={"sample_rate": "0 Hz"})
    return [d / "z.csv", *REF], "metadata sample_rate = '0 Hz' is not allowed"


def c_metadata_rate_negative(d, base, single):
    write_record_csv(d / "n.csv", _cols(base, drop=("time",)),
                     metadata={"sample_rate": "-48 kHz"})
    return [d / "n.csv", *REF], "metadata sample_rate = '-48 kHz' is not allowed"


def c_metadata_rate_bare(d, base, single):
    write_record_csv(d / "b.csv", _cols(base, drop=("time",)), metadata={"sample_rate": "48000"})
    return [d / "b.csv", *REF], "metadata sample_rate: '48000' has no unit"


def c_no_sample_rate(d, base, single):
    np.savez(d / "norate.npz", **_cols(base, drop=("time",)))
    return [d / "norate.npz", *REF], "norate.npz: the sample rate is unknown"


def c_wav_rate_zero(d, base, single):
    data = bytearray(_stereo_wav(base, d / "z.wav").read_bytes())
    assert data[12:16] == b"fmt "
    # fmt chunk: sample rate and bytes per second (WAV spec, ch. 3), as a broken writer leaves
    data[24:32] = struct.pack("<II", 0, 0)
    (d / "z.wav").write_bytes(bytes(data))
    return [d / "z.wav", *REF], "its header gives a sample rate of 0 Hz; give the true rate"


def c_time_not_increasing(d, base, single):
    cols = _cols(base)
    t = cols["time"].copy()
    t[100], t[101] = t[101], t[100]
    write_record_csv(d / "t.csv", {**cols, "time": t})
    return [d / "t.csv", *REF], "column 'time' does not increase at line 103"


def c_time_repeated(d, base, single):
    cols = _cols(base)
    t = cols["time"].copy()
    t[50] = t[49]
    np.savez(d / "t.npz", **{**cols, "time": t})
    return [d / "t.npz", *REF], "column 'time' does not increase at sample 50"


def c_time_conflicts_with_rate(d, base, single):
    write_record_npz(d / "ok.npz", base)
    return ([d / "ok.npz", *REF, "--sample-rate", "1kHz"],
            "the 'time' column gives 48000 Hz but the sample_rate argument says 1000 Hz")


def c_quadrature_constant(d, base, single):
    cols = _cols(base)
    n = cols["signal"].size
    np.savez(d / "flat.npz", **{**cols, "ref_i": np.full(n, 0.4), "ref_q": np.full(n, -0.2)})
    return [d / "flat.npz", *REF], "flat.npz: the reference channels carry no fringes"


def c_quadrature_noise(d, base, single):
    cols = _cols(base)
    rng = np.random.default_rng(7)
    n = cols["signal"].size
    np.savez(d / "noise.npz", **{**cols, "ref_i": rng.normal(size=n), "ref_q": rng.normal(size=n)})
    return [d / "noise.npz", *REF], "noise.npz: the quadrature reference channels do not trace"


def c_single_constant(d, base, single):
    cols = _cols(single)
    np.savez(d / "flat1.npz", **{**cols, "ref": np.full(cols["ref"].size, 1.25)})
    return [d / "flat1.npz", *REF], "flat1.npz: no fringes found on the reference channel"


def c_single_noise(d, base, single):
    cols = _cols(single)
    rng = np.random.default_rng(8)
    np.savez(d / "noise1.npz", **{**cols, "ref": rng.normal(size=cols["ref"].size)})
    return [d / "noise1.npz", *REF], "noise1.npz: no fringes found on the reference channel"


def c_quadrature_all_dropped(d, base, single):
    # the reference is dark for 0.49 s of the 0.5 s record: 98 % (the simulator's truth)
    rec = sim.simulate(sim.laser(650.0), _scan(),
                       sim.ReferenceChannel(dropouts=((0.0, 0.49),)), rng=1).record
    write_record_npz(d / "dark.npz", rec)
    return ([d / "dark.npz", *REF],
            "dark.npz: the quadrature reference has no fringes in 98% of the record")


def c_mono_wav(d, base, single):
    write_record_wav(d / "mono.wav", {"signal": _cols(base)["signal"] / 4}, FS)
    return [d / "mono.wav", *REF], "mono.wav: is a mono WAV file"


def c_mono_wav_mapped(d, base, single):
    write_record_wav(d / "mono.wav", {"signal": _cols(base)["signal"] / 4}, FS)
    return ([d / "mono.wav", *REF, "--columns", "signal=0,ref=1"],
            "names channel 1 but")


def c_wav_truncated(d, base, single):
    data = _stereo_wav(base, d / "cut.wav").read_bytes()
    (d / "cut.wav").write_bytes(data[: len(data) // 2])
    return [d / "cut.wav", *REF], "cut.wav: is truncated: its data chunk declares"


def c_wav_header_cut(d, base, single):
    data = _stereo_wav(base, d / "cut.wav").read_bytes()
    (d / "cut.wav").write_bytes(data[:30])
    return [d / "cut.wav", *REF], "its 'fmt ' chunk is damaged or truncated"


def c_wav_not_riff(d, base, single):
    (d / "x.wav").write_bytes(b"OggS" + bytes(100))
    return [d / "x.wav", *REF], "x.wav: is not a RIFF WAVE file"


def c_npz_truncated(d, base, single):
    write_record_npz(d / "cut.npz", base)
    data = (d / "cut.npz").read_bytes()
    (d / "cut.npz").write_bytes(data[: len(data) // 2])
    return [d / "cut.npz", *REF], "cut.npz: is a damaged .npz archive"


def c_npz_single_npy(d, base, single):
    with open(d / "one.npz", "wb") as fh:
        np.save(fh, _cols(base)["signal"])
    return [d / "one.npz", *REF], "holds a single .npy array, not an .npz archive"


def c_npz_not_zip(d, base, single):
    (d / "t.npz").write_text("time,signal\n1,2\n")
    return [d / "t.npz", *REF], "t.npz: is not an .npz archive"


def c_no_signal(d, base, single):
    cols = _cols(base)
    cols["pd1"] = cols.pop("signal")
    np.savez(d / "ns.npz", **cols)
    return [d / "ns.npz", *REF], "has no 'signal' column (columns: "


def c_half_quadrature(d, base, single):
    np.savez(d / "half.npz", **_cols(base, drop=("ref_q",)))
    return [d / "half.npz", *REF], "has 'ref_i' but no 'ref_q'"


def c_columns_typo_target(d, base, single):
    write_record_npz(d / "ok.npz", base)
    return ([d / "ok.npz", *REF, "--columns", "sgnal=signal"],
            "--columns: 'sgnal' is not a column name; allowed:")


def c_columns_unknown_source(d, base, single):
    write_record_npz(d / "ok.npz", base)
    return ([d / "ok.npz", *REF, "--columns", "signal=PD9"],
            "--columns: signal=PD9: ")


def c_extension(d, base, single):
    (d / "rec.xlsx").write_bytes(b"PK\x03\x04")
    return [d / "rec.xlsx", *REF], "the extension '.xlsx' is not a record form"


def c_utf16(d, base, single):
    (d / "u.csv").write_bytes("time,signal\n0,1\n".encode("utf-16"))
    return [d / "u.csv", *REF], "u.csv: is UTF-16 text"


def c_nul_bytes(d, base, single):
    (d / "nul.csv").write_bytes(b"time,signal\n0,1\x00\x00\n")
    return [d / "nul.csv", *REF], "holds NUL bytes"


def c_binary_with_text_extension(d, base, single):
    write_record_npz(d / "ok.npz", base)
    (d / "ok.csv").write_bytes((d / "ok.npz").read_bytes())
    return [d / "ok.csv", *REF], "is a binary file (.npz, .wav or .npy) with a text extension"


def c_metadata_conflict(d, base, single):
    lines = ["# reference_wavelength = 632.991 nm", "# reference_wavelength = 532 nm",
             *_csv_lines(base)]
    return [_write_lines(d / "mc.csv", lines)], "metadata reference_wavelength is given twice"


def c_scan_too_short(d, base, single):
    rec = sim.simulate(sim.laser(650.0), _scan(opd_amplitude_cm=0.0005), rng=1).record
    write_record_npz(d / "tiny.npz", rec)
    return ([d / "tiny.npz", *REF],
            "tiny.npz: no usable sweep found in the quadrature reference: the mirror must "
            "travel at least 32 reference fringes")


def c_no_reference_wavelength(d, base, single):
    meta = {k: v for k, v in base.metadata.items() if k != "reference_wavelength"}
    write_record_npz(d / "nowl.npz", _cols(base), metadata=meta)
    return [d / "nowl.npz"], "nowl.npz: the reference wavelength is unknown: give --reference"


def c_metadata_wavelength_bad(d, base, single):
    meta = {**base.metadata, "reference_wavelength": "632.991 bananas"}
    write_record_npz(d / "badwl.npz", _cols(base), metadata=meta)
    return [d / "badwl.npz"], "reference_wavelength (metadata): the unit 'bananas'"


def c_no_reference_at_all(d, base, single):
    np.savez(d / "sig.npz", **_cols(base, drop=("ref_i", "ref_q")))
    return [d / "sig.npz", *REF], "sig.npz: has no reference channel (ref, or ref_i and ref_q)"


def c_npz_pickled(d, base, single):
    obj = np.empty(100, dtype=object)
    obj[:] = list(range(100))
    np.savez(d / "obj.npz", signal=obj, ref=np.zeros(100))
    return [d / "obj.npz", *REF], "obj.npz: refused: holds pickled objects (array 'signal')"


def c_npz_complex(d, base, single):
    cols = _cols(base)
    np.savez(d / "cx.npz", **{**cols, "signal": cols["signal"] * (1 + 1j)})
    return [d / "cx.npz", *REF], "array 'signal' holds complex128 values"


def c_npz_2d(d, base, single):
    cols = _cols(base)
    np.savez(d / "2d.npz", **{**cols, "signal": np.stack([cols["signal"]] * 2)})
    return [d / "2d.npz", *REF], "each column must be a 1-D array"


def c_response_python_tag(d, base, single):
    write_record_npz(d / "ok.npz", base)
    (d / "evil.ecsv").write_text(PYTHON_TAG_ECSV.format(trap=d / "trap.txt"), encoding="utf-8")
    return ([d / "ok.npz", *REF, "--response", d / "evil.ecsv"],
            "evil.ecsv: not a readable ECSV response curve")


def c_calibration_not_json(d, base, single):
    write_record_npz(d / "ok.npz", base)
    (d / "cal.json").write_text("{'python': True}")
    return ([d / "ok.npz", *REF, "--calibration", d / "cal.json"],
            "cal.json: not a JSON rig calibration")


# An ECSV header (astropy APE 6: YAML after '# ---') with a tag that a YAML loader allowing
# Python objects would run; a safe loader refuses it.
PYTHON_TAG_ECSV = """# %ECSV 1.0
# ---
# datatype:
# - {{name: wavelength, unit: nm, datatype: float64}}
# - {{name: response, datatype: float64}}
# meta: {{kind: !!python/object/apply:os.mkdir ['{trap}']}}
# schema: astropy-2.0
wavelength response
500.0 1.0
600.0 1.0
"""


CATALOGUE = [v for k, v in sorted(globals().items()) if k.startswith("c_")]


# --------------------------------------------------------------------------------------------
# the users' side: docs/errors.md shows each message in full (issue 8: "the exact message users
# get"); a file name in the docs' examples (x.csv, cal.json, r.ecsv) stands for any file of that
# form, and `…` for values that differ from record to record

DOCS = Path(__file__).parents[1] / "docs" / "errors.md"
_DOC_ROW = re.compile(r"^\| `(\w+)` \| `([^`]*)` \|", re.MULTILINE)  # | `id` | `message` |
_DOC_WILD = re.compile(r"…|\b[\w-]+(\.(?:csv|tsv|txt|dat|npz|wav|xlsx|json|ecsv))\b")


def doc_pattern(documented: str) -> re.Pattern:
    """A documented message as a pattern: file names and ``…`` are wildcards, all else literal."""
    parts, pos = [], 0
    for m in _DOC_WILD.finditer(documented):
        parts.append(re.escape(documented[pos:m.start()]))
        parts.append(".+?" if m.group() == "…" else r"[^\s/]+" + re.escape(m.group(1)))
        pos = m.end()
    parts.append(re.escape(documented[pos:]))
    return re.compile("".join(parts), re.DOTALL)


def documented_messages() -> dict[str, str]:
    """``{case id: message}`` from the catalogue tables of docs/errors.md."""
    rows: dict[str, str] = {}
    for m in _DOC_ROW.finditer(DOCS.read_text(encoding="utf-8")):
        assert m[1] not in rows, f"`{m[1]}` has two rows in docs/errors.md"
        rows[m[1]] = m[2]
    return rows


def documented_warnings() -> list[str]:
    """The warnings quoted in docs/errors.md's part on damaged records that still give a result
    (a code span wrapped over two lines reads as one line, as Markdown renders it)."""
    doc = DOCS.read_text(encoding="utf-8")
    part = doc.split("## Damaged records that still give a result", 1)[1].split("\n## ", 1)[0]
    return [" ".join(span.split()) for span in re.findall(r"`([^`]+)`", part)]


def assert_documented(name, err, folder):
    """The line the user saw is, word for word, the one docs/errors.md shows for case ``name``
    (the test's folder is cut from file paths: the docs show file names only)."""
    shown = err.rstrip("\n").replace(f"{folder}{os.sep}", "")
    documented = documented_messages()[name]
    assert doc_pattern(documented).fullmatch(shown), (
        f"docs/errors.md row `{name}` says\n  {documented}\nbut users get\n  {shown}"
    )


def assert_warning_documented(warning):
    assert any(doc_pattern(w).fullmatch(warning) for w in documented_warnings()), (
        f"warning not quoted in docs/errors.md (damaged records that still give a result): "
        f"{warning!r}"
    )


@pytest.mark.parametrize("case", CATALOGUE, ids=lambda f: f.__name__[2:])
def test_catalogue_earlier_results_untouched(case, tmp_path, capsys, base, single):
    """Each broken input: one clean error line; earlier results in --out stay as they were."""
    argv, fragment = case(tmp_path, base, single)
    out_dir = tmp_path / "results"
    out_dir.mkdir()
    (out_dir / "result.json").write_bytes(OLD_RESULT)
    (out_dir / "spectrum.ecsv").write_bytes(OLD_SPECTRUM)
    before = tree(out_dir)
    status, out, err = run(capsys, ["analyze", *argv, "--out", out_dir, "--overwrite", "--json"])
    assert_clean_error(status, err, fragment)
    assert_documented(case.__name__[2:], err, tmp_path)
    assert out == ""
    assert tree(out_dir) == before


@pytest.mark.parametrize("case", CATALOGUE, ids=lambda f: f.__name__[2:])
def test_catalogue_no_output_folder_made(case, tmp_path, capsys, base, single):
    argv, fragment = case(tmp_path, base, single)
    out_dir = tmp_path / "new" / "results"
    status, out, err = run(capsys, ["analyze", *argv, "--out", out_dir])
    assert_clean_error(status, err, fragment)
    assert_documented(case.__name__[2:], err, tmp_path)
    assert not (tmp_path / "new").exists()


def test_catalogue_is_documented():
    """Every case has its row in docs/errors.md, showing one whole `error:` line: nothing cut
    short with '...' (only `…` stands for values, and the catalogue tests above check the
    rest of each row word for word against what the command line prints)."""
    rows = documented_messages()
    missing = [case.__name__[2:] for case in CATALOGUE if case.__name__[2:] not in rows]
    assert not missing, f"cases without a row in docs/errors.md: {missing}"
    for name, message in rows.items():
        assert message.startswith("error: ") and "\n" not in message, (name, message)
        assert "..." not in message.replace("signal=..., ref=...", ""), (name, message)


def test_documented_message_pattern_is_strict():
    """The docs-to-message comparison passes the same line and fails on any other."""
    p = doc_pattern("error: x.csv: line … holds NUL bytes; this is not a text table")
    assert p.fullmatch("error: nul.csv: line 2 holds NUL bytes; this is not a text table")
    for other in (
        "error: nul.npz: line 2 holds NUL bytes; this is not a text table",  # another form
        "error: nul.csv: line 2 holds NUL bytes; this is not a text table!",  # text added
        "error: nul.csv: line 2 holds NUL bytes",  # text missing
        "error: sub/nul.csv: line 2 holds NUL bytes; this is not a text table",  # a folder
        "error: nul.csv: line 2 holds nul bytes; this is not a text table",  # case differs
        "error: nul.csv: line  holds NUL bytes; this is not a text table",  # no value
    ):
        assert not p.fullmatch(other), other


# --------------------------------------------------------------------------------------------
# pickled objects are refused, never unpickled


class _Trap:
    """Unpickling this creates a file: proof that a reader unpickled it."""

    def __init__(self, path):
        self.path = str(path)

    def __reduce__(self):
        return (Path.touch, (Path(self.path),))


def _trap_npz(path, trap, **extra):
    arr = np.empty(3, dtype=object)
    arr[:] = [_Trap(trap), _Trap(trap), _Trap(trap)]
    np.savez(path, signal=arr, **extra)


def test_pickled_npz_is_refused_without_unpickling(tmp_path, capsys, base):
    trap = tmp_path / "unpickled.txt"
    _trap_npz(tmp_path / "evil.npz", trap, ref=np.zeros(3))
    # the trap is real: the same archive, loaded with pickles allowed, springs it
    decoy = tmp_path / "decoy"
    decoy.mkdir()
    _trap_npz(decoy / "same.npz", decoy / "sprung.txt", ref=np.zeros(3))
    with np.load(decoy / "same.npz", allow_pickle=True) as z:
        z["signal"]
    assert (decoy / "sprung.txt").exists()
    status, _out, err = run(capsys, ["analyze", tmp_path / "evil.npz", *REF])
    assert_clean_error(status, err, "evil.npz: refused: holds pickled objects (array 'signal')")
    assert not trap.exists()


def test_python_tags_in_a_response_file_are_not_run(tmp_path, capsys, base):
    import yaml  # PyYAML, the YAML library astropy's ECSV reader uses

    # the trap is real: a loader that allows Python objects springs it (in another folder)
    decoy = tmp_path / "decoy"
    header = PYTHON_TAG_ECSV.format(trap=decoy).split("# ---\n")[1].split("\nwavelength")[0]
    yaml.unsafe_load("\n".join(line[2:] for line in header.splitlines()))
    assert decoy.is_dir()
    argv, fragment = c_response_python_tag(tmp_path, base, None)
    status, _out, err = run(capsys, ["analyze", *argv])
    assert_clean_error(status, err, fragment)
    assert not (tmp_path / "trap.txt").exists()


def test_npz_that_unpacks_beyond_memory_is_refused(tmp_path, capsys, base, monkeypatch):
    """A zip archive declares each member's unpacked size (PKWARE APPNOTE 4.4.9); an archive
    that would unpack beyond the memory limit is refused before anything is unpacked."""
    from ftsource.io import records
    write_record_npz(tmp_path / "big.npz", base, compress=True)
    monkeypatch.setattr(records, "_memory_limit", lambda: 1 << 16)
    status, _out, err = run(capsys, ["analyze", tmp_path / "big.npz", *REF])
    assert_clean_error(status, err, "big.npz: its arrays unpack to")
    monkeypatch.undo()
    status, _out, err = run(capsys, ["analyze", tmp_path / "big.npz", *REF])
    assert status == 0, err


def test_pickled_metadata_is_refused(tmp_path, capsys, base):
    trap = tmp_path / "unpickled.txt"
    meta = np.empty(1, dtype=object)
    meta[0] = _Trap(trap)
    np.savez(tmp_path / "evil.npz", **_cols(base), metadata=meta)
    status, _out, err = run(capsys, ["analyze", tmp_path / "evil.npz", *REF])
    assert_clean_error(status, err, "refused: holds pickled objects (array 'metadata')")
    assert not trap.exists()


# --------------------------------------------------------------------------------------------
# damaged but usable records: a result with the damage named


def _analyze_json(capsys, argv):
    status, out, err = run(capsys, ["analyze", *argv, "--json", "--medium", "vacuum"])
    assert status == 0, err
    assert err == ""
    return json.loads(out)


def test_clipped_detector_gives_result_with_clipping_warning(tmp_path, capsys):
    """A detector clipping at 1.6 (source fringes span 0.1 to 2.1): the result says so."""
    rec = sim.simulate(sim.laser(650.0), _scan(), detector=sim.Detector(clip_level=1.6),
                       rng=1).record
    write_record_npz(tmp_path / "clip.npz", rec)
    d = _analyze_json(capsys, [tmp_path / "clip.npz", *REF])
    assert d["health"]["clipped_fraction"] > 1e-3
    clipping = [w for w in d["warnings"] if "clipping" in w]
    assert len(clipping) == 1, d["warnings"]
    assert_warning_documented(clipping[0])
    # the line itself is still found (truth 650 nm; tolerance: one resolution element)
    wl = d["summary"]["centre_wavelength_nm"]
    assert abs(wl - 650.0) < d["instrument"]["resolution_nm"]


def test_wav_clipped_at_full_scale_gives_clipping_warning(tmp_path, capsys, base):
    """A sound card driven past full scale: integer PCM saturates at ±1 (WAV spec scaling)."""
    cols = _cols(base)
    write_record_wav(tmp_path / "hot.wav",
                     {"signal": cols["signal"] * 0.9 - 0.4, "ref": cols["ref_i"] / 2}, FS,
                     clip=True)
    d = _analyze_json(capsys, [tmp_path / "hot.wav", *REF])
    clipping = [w for w in d["warnings"] if "clipping" in w]
    assert len(clipping) == 1, d["warnings"]
    assert_warning_documented(clipping[0])


def test_reference_dropout_leaves_a_result_from_the_rest(tmp_path, capsys):
    """The reference beam blocked for 0.1 s of 0.5 s: the sweeps outside it still give the
    line (truth 650 nm, within one resolution element), and the dropout is counted and named
    in a warning, word for word as docs/errors.md quotes it."""
    rec = sim.simulate(sim.laser(650.0), _scan(),
                       sim.ReferenceChannel(dropouts=((0.2, 0.1),)), rng=1).record
    write_record_npz(tmp_path / "drop.npz", rec)
    d = _analyze_json(capsys, [tmp_path / "drop.npz", *REF])
    assert d["health"]["dropouts"] == 1  # one blocked stretch, well inside the record
    warning = (
        "the reference dropped out 1 time(s): the record was split there and only the "
        "stretches with fringes were used; check the reference beam's alignment and detector"
    )
    assert warning in d["warnings"], d["warnings"]
    assert_warning_documented(warning)
    assert d["processing"]["n_sweeps_used"] >= 1
    wl = d["summary"]["centre_wavelength_nm"]
    assert abs(wl - 650.0) < d["instrument"]["resolution_nm"]
