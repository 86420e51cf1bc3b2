"""Tests of ftsource.io.records: reading and writing record files.

Sources (named again beside each check):
- WAV spec: IBM and Microsoft, "Multimedia Programming Interface and Data Specifications 1.0"
  (1991), chapter 3 "WAVE form": RIFF header, ``fmt `` chunk (format tag 1 = PCM, 3 = IEEE
  float), ``data`` chunk, little-endian two's-complement samples (8-bit unsigned, offset 128),
  unknown chunks to be skipped by readers.
- scipy.io.wavfile (general-purpose library from PyPI) as the reference WAV reader; it returns
  24-bit samples left-justified in int32 (its documentation), so ``>> 8`` recovers them.
- numpy.savez / numpy.load (NEP 1, the .npy/.npz format) as the reference for ``.npz``.
- Python's ``csv`` module (standard library) as the reference reader of written text tables.
- Rounding to the nearest integer makes a PCM quantisation error of at most half a step,
  1 / 2**bits of full scale (closed form).
- The record columns, file forms and metadata syntax are the contract, ``docs/contract.md``.
"""

from __future__ import annotations

import csv
import io
import os
import struct
import tempfile
import zipfile

import astropy.units as u
import numpy as np
import pytest
import scipy.io.wavfile as wavfile
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ftsource.errors import OptionError, OutputError, RecordError
from ftsource.io import records
from ftsource.io.records import (
    MIN_SAMPLES,
    Record,
    parse_column_map,
    read_record,
    write_record_csv,
    write_record_npz,
    write_record_wav,
)

N = 256
FS = 8000.0


def _columns(n: int = N, *, time: bool = True, seed: int = 1) -> dict[str, np.ndarray]:
    rng = np.random.default_rng(seed)
    t = np.arange(n) / FS
    cols = {
        "signal": rng.uniform(-0.9, 0.9, n),
        "ref_i": np.cos(2 * np.pi * 300 * t),
        "ref_q": np.sin(2 * np.pi * 300 * t),
    }
    if time:
        cols = {"time": t, **cols}
    return cols


def _write(path, text: str | bytes) -> str:
    data = text.encode("utf-8") if isinstance(text, str) else text
    with open(path, "wb") as fh:
        fh.write(data)
    return str(path)


def _table(rows: int = N, header: str = "time,signal,ref", sep: str = ",", fmt=None) -> str:
    """A valid text table at FS with ``rows`` data lines."""
    lines = [header]
    for i in range(rows):
        vals = fmt(i) if fmt else (i / FS, 0.5 * np.sin(i / 5), np.cos(i / 3))
        lines.append(sep.join(repr(float(v)) for v in vals))
    return "\n".join(lines) + "\n"


def _wav_bytes(samples: np.ndarray, *, bits: int, rate: int, tag: int = 1, extra=b"") -> bytes:
    """A WAV file laid out by hand after the WAV spec: RIFF, fmt (16 bytes), data.

    ``samples`` are integers (frames x channels), packed little-endian two's complement;
    24-bit samples take three bytes each. ``extra`` is inserted as additional chunks before
    the data chunk.
    """
    samples = np.atleast_2d(np.asarray(samples))
    nch = samples.shape[1]
    width = bits // 8
    payload = bytearray()
    for frame in samples:
        for value in frame:
            v = int(value)
            if bits == 8:
                payload += struct.pack("<B", v + 128)
            elif bits == 24:
                payload += (v & 0xFFFFFF).to_bytes(3, "little")
            else:
                payload += v.to_bytes(width, "little", signed=True)
    fmt = struct.pack("<HHIIHH", tag, nch, rate, rate * nch * width, nch * width, bits)
    body = b"WAVE" + b"fmt " + struct.pack("<I", 16) + fmt + extra
    body += b"data" + struct.pack("<I", len(payload)) + bytes(payload)
    if len(payload) % 2:
        body += b"\x00"
    return b"RIFF" + struct.pack("<I", len(body)) + body


# --- round trips ------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "name, delimiter",
    [("r.csv", ","), ("r.tsv", "\t"), ("r.txt", " "), ("r.dat", ";"), ("R.CSV", ",")],
)
def test_text_round_trip_is_exact(tmp_path, name, delimiter):
    cols = _columns()
    path = tmp_path / name
    write_record_csv(path, cols, metadata={"reference_wavelength": "632.991 nm"},
                     delimiter=delimiter)
    rec = read_record(path)
    assert rec.source_format == "text"
    assert list(rec.columns) == list(cols)
    for k, v in cols.items():
        # 17 significant digits restore every binary64 exactly (IEEE 754-2008, 5.12.2)
        np.testing.assert_array_equal(rec[k], v)
    assert rec.metadata["reference_wavelength"] == "632.991 nm"
    # rate from the time column: (n - 1) / (t[-1] - t[0]); t = i / FS (closed form)
    assert rec.sample_rate_hz == pytest.approx(FS, rel=1e-12)
    assert rec.time_jitter < 1e-9  # t = i / FS up to binary rounding
    assert rec.opd_source() == "quadrature"


def test_written_csv_matches_the_stdlib_csv_reader(tmp_path):
    cols = _columns(time=False)
    path = tmp_path / "r.csv"
    write_record_csv(path, cols, sample_rate_hz=FS)
    with open(path, newline="") as fh:
        lines = [ln for ln in fh if not ln.startswith("#")]
    rows = list(csv.reader(io.StringIO("".join(lines))))
    assert rows[0] == ["signal", "ref_i", "ref_q"]
    ref = np.array([[float(c) for c in r] for r in rows[1:]])  # Python's csv as reference
    rec = read_record(path)
    np.testing.assert_array_equal(np.column_stack([rec[c] for c in rows[0]]), ref)
    assert rec.sample_rate_hz == FS  # from "# sample_rate = 8000.0 Hz"
    assert not rec.has("time")
    np.testing.assert_allclose(rec.time, np.arange(N) / FS, rtol=0, atol=0)


@pytest.mark.parametrize("compress", [False, True])
def test_npz_round_trip_is_exact(tmp_path, compress):
    cols = _columns(time=False)
    path = tmp_path / "r.npz"
    write_record_npz(path, cols, sample_rate_hz=FS, metadata={"air_temperature": "20 °C"},
                     compress=compress)
    with np.load(path, allow_pickle=False) as ref:  # numpy.load as reference
        for k, v in cols.items():
            np.testing.assert_array_equal(ref[k], v)
        assert "air_temperature = 20 °C" in ref["metadata"].tolist()
    rec = read_record(path)
    assert rec.source_format == "npz"
    for k, v in cols.items():
        np.testing.assert_array_equal(rec[k], v)
    assert rec.sample_rate_hz == FS
    assert rec.metadata["air_temperature"] == "20 °C"


def test_record_round_trips_through_every_writer(tmp_path):
    rec = read_record(write_and_return(tmp_path / "a.csv", _columns(time=False)))
    write_record_npz(tmp_path / "b.npz", rec)
    write_record_csv(tmp_path / "c.csv", read_record(tmp_path / "b.npz"))
    again = read_record(tmp_path / "c.csv")
    for k in rec.columns:
        np.testing.assert_array_equal(again[k], rec[k])
    assert again.sample_rate_hz == rec.sample_rate_hz == FS


def write_and_return(path, cols):
    write_record_csv(path, cols, sample_rate_hz=FS)
    return path


@pytest.mark.parametrize("bits", [8, 16, 24, 32])
def test_wav_integer_round_trip_within_half_a_step(tmp_path, bits):
    cols = {"signal": _columns()["signal"], "ref": 0.8 * _columns()["ref_i"]}
    path = tmp_path / "r.wav"
    write_record_wav(path, cols, 48000, bits=bits)
    rec = read_record(path)
    assert rec.source_format == "wav"
    assert rec.sample_rate_hz == 48000.0
    assert list(rec.columns) == ["signal", "ref"]  # contract: 2 channels -> signal, ref
    step = 1.0 / 2 ** (bits - 1)
    for k, v in cols.items():
        # rounding to the nearest step: error <= step / 2 (closed form)
        assert np.max(np.abs(rec[k] - v)) <= step / 2 * (1 + 1e-9)
    # scipy.io.wavfile as reference reader of the same file
    rate, data = wavfile.read(path)
    assert rate == 48000
    ints = data.astype(np.int64)
    if bits == 24:
        ints = ints >> 8  # scipy left-justifies 24-bit samples in int32 (its documentation)
    if bits == 8:
        ints = ints - 128  # WAV spec: 8-bit PCM is unsigned with offset 128
    np.testing.assert_array_equal(rec["signal"], ints[:, 0] * step)
    np.testing.assert_array_equal(rec["ref"], ints[:, 1] * step)


@pytest.mark.parametrize("bits, dtype", [("float", np.float32), ("float64", np.float64)])
def test_wav_float_round_trip(tmp_path, bits, dtype):
    cols = _columns(time=False)
    path = tmp_path / "r.wav"
    write_record_wav(path, cols, 44100, bits=bits)
    rate, data = wavfile.read(path)  # scipy.io.wavfile as reference
    assert data.dtype == dtype and rate == 44100
    rec = read_record(path)
    assert list(rec.columns) == ["signal", "ref_i", "ref_q"]  # contract: 3 channels
    for j, k in enumerate(["signal", "ref_i", "ref_q"]):
        np.testing.assert_array_equal(rec[k], data[:, j].astype(np.float64))
        np.testing.assert_array_equal(rec[k], cols[k].astype(dtype).astype(np.float64))


def test_hand_made_24bit_wav_values(tmp_path):
    # extreme and ordinary 24-bit values, two channels, laid out per the WAV spec
    base = np.array(
        [[0, 1], [-1, 2**23 - 1], [-(2**23), 123456], [-654321, 7], [4096, -4096]], dtype=np.int64
    )
    frames = np.tile(base, (MIN_SAMPLES // len(base) + 1, 1))
    path = _write(tmp_path / "h.wav", _wav_bytes(frames, bits=24, rate=96000))
    rate, data = wavfile.read(path)  # reference reader
    assert rate == 96000
    np.testing.assert_array_equal(data >> 8, frames)
    rec = read_record(path)
    assert rec.sample_rate_hz == 96000.0
    # full scale of 24-bit PCM is 2**23 (two's complement range, WAV spec)
    np.testing.assert_array_equal(rec["signal"], frames[:, 0] / 2**23)
    np.testing.assert_array_equal(rec["ref"], frames[:, 1] / 2**23)
    assert rec["ref"][1] == (2**23 - 1) / 2**23 and rec["signal"][2] == -1.0
    assert rec.metadata["wav_sample_format"] == "24-bit integer"


def test_hand_made_16bit_wav_with_an_unknown_chunk(tmp_path):
    frames = np.arange(-2 * MIN_SAMPLES, 2 * MIN_SAMPLES, dtype=np.int64).reshape(-1, 2) * 100
    # WAV spec: readers skip chunks they do not know (here a LIST chunk, odd size + pad byte)
    extra = b"LIST" + struct.pack("<I", 5) + b"INFOx" + b"\x00"
    path = _write(tmp_path / "h.wav", _wav_bytes(frames, bits=16, rate=8000, extra=extra))
    rec = read_record(path)
    np.testing.assert_array_equal(rec["signal"], frames[:, 0] / 32768)
    np.testing.assert_array_equal(rec["ref"], frames[:, 1] / 32768)


@pytest.mark.parametrize(
    "nch, names",
    [
        (1, ["signal"]),
        (2, ["signal", "ref"]),
        (3, ["signal", "ref_i", "ref_q"]),
        (4, ["signal", "ref_i", "ref_q", "ch3"]),
        (5, ["signal", "ref_i", "ref_q", "ch3", "ch4"]),
    ],
)
def test_wav_default_channel_names(tmp_path, nch, names):
    frames = np.arange(MIN_SAMPLES * nch, dtype=np.int64).reshape(-1, nch)
    path = _write(tmp_path / "c.wav", _wav_bytes(frames, bits=16, rate=1000))
    rec = read_record(path)
    assert list(rec.columns) == names
    for j, name in enumerate(names):
        np.testing.assert_array_equal(rec[name], frames[:, j] / 32768)  # WAV spec full scale


def test_wav_writer_puts_default_sets_in_contract_order(tmp_path):
    cols = {"ref": np.full(N, 0.25), "signal": np.full(N, -0.5)}
    write_record_wav(tmp_path / "o.wav", cols, 1000)
    _, data = wavfile.read(tmp_path / "o.wav")
    assert data[0, 0] == -16384 and data[0, 1] == 8192  # signal first, then ref (contract)


# --- column mapping ----------------------------------------------------------------------------


def test_parse_column_map():
    assert parse_column_map("signal=PD1,ref=2") == {"signal": "PD1", "ref": "2"}
    assert parse_column_map(" Signal = PD1 , REF_I=a, ref_q=b ,") == {
        "signal": "PD1", "ref_i": "a", "ref_q": "b"
    }
    assert parse_column_map({"signal": "x"}) == {"signal": "x"}


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("", "--columns: the mapping is empty"),
        ("signal", "--columns: 'signal' is not 'name=column'"),
        ("signal=a=b", "is not 'name=column'"),
        ("sgnal=PD1", "--columns: 'sgnal' is not a column name; allowed: time, signal, ref"),
        ("signal=", "--columns: signal= names no column"),
        ("signal=a,signal=b", "--columns: signal is mapped twice"),
        ("signal=A,ref=a", "--columns: column 'a' is mapped to both signal and ref"),
        ("signal=1,ref=ch1", "column 'ch1' is mapped to both signal and ref"),
    ],
)
def test_parse_column_map_errors(text, fragment):
    with pytest.raises(OptionError) as info:
        parse_column_map(text)
    assert fragment in str(info.value)


def test_text_mapping_by_name_and_index(tmp_path):
    path = _write(tmp_path / "m.csv", _table(header="time,PD1,PD2"))
    rec = read_record(path, columns="signal=pd1,ref=PD2")  # names ignore case (contract)
    assert list(rec.columns) == ["time", "signal", "ref"]
    rec2 = read_record(path, columns={"signal": "2", "ref": "1"})
    np.testing.assert_array_equal(rec2["signal"], rec["ref"])
    with pytest.raises(OptionError, match=r"has no column 'PD9'; available: time, PD1, PD2"):
        read_record(path, columns="signal=PD9")
    with pytest.raises(OptionError, match=r"names column 7 but .* has 3 columns"):
        read_record(path, columns="signal=7")


def test_mapping_replaces_a_column_of_the_same_name(tmp_path):
    path = _write(tmp_path / "m.csv", _table(header="time,signal,other"))
    rec = read_record(path, columns="signal=other")
    assert list(rec.columns) == ["time", "signal"]
    assert rec["signal"][3] == pytest.approx(np.cos(3 / 3), rel=1e-15)  # the 'other' column


def test_wav_mapping_by_channel(tmp_path):
    frames = np.arange(2 * MIN_SAMPLES, dtype=np.int64).reshape(-1, 2)
    path = _write(tmp_path / "s.wav", _wav_bytes(frames, bits=16, rate=1000))
    rec = read_record(path, columns="signal=1,ref=ch0")
    np.testing.assert_array_equal(rec["signal"], frames[:, 1] / 32768)
    np.testing.assert_array_equal(rec["ref"], frames[:, 0] / 32768)


def test_mono_wav_cannot_supply_a_reference(tmp_path):
    frames = np.arange(MIN_SAMPLES, dtype=np.int64).reshape(-1, 1)
    path = _write(tmp_path / "mono.wav", _wav_bytes(frames, bits=16, rate=1000))
    rec = read_record(path)
    assert list(rec.columns) == ["signal"] and rec.opd_source() is None
    with pytest.raises(OptionError) as info:
        read_record(path, columns="signal=0,ref=1")
    msg = str(info.value)
    assert "names channel 1 but" in msg and "has 1 channel (mono)" in msg
    assert "a reference needs a second channel" in msg


def test_npz_mapping_by_name_only(tmp_path):
    path = tmp_path / "m.npz"
    np.savez(path, PD1=np.zeros(N), PD2=np.ones(N))
    rec = read_record(path, columns="signal=pd1,ref=pd2")
    assert rec.opd_source() == "single"
    with pytest.raises(OptionError, match=r"has no column '0'; available: PD1, PD2"):
        read_record(path, columns="signal=0")


# --- sample rate ----------------------------------------------------------------------------


def test_sample_rate_sources(tmp_path):
    body = _table(header="signal,ref", fmt=lambda i: (np.sin(i), np.cos(i)))
    plain = _write(tmp_path / "p.csv", body)
    assert read_record(plain).sample_rate_hz is None
    assert read_record(plain, sample_rate=48 * u.kHz).sample_rate_hz == 48000.0
    assert read_record(plain, sample_rate="48 kHz").sample_rate_hz == 48000.0
    assert read_record(plain, sample_rate=1000).sample_rate_hz == 1000.0
    meta = _write(tmp_path / "m.csv", "# sample_rate = 10 kHz\n" + body)
    assert read_record(meta).sample_rate_hz == 10000.0
    # the argument overrides metadata
    assert read_record(meta, sample_rate=2000.0).sample_rate_hz == 2000.0
    with pytest.raises(RecordError, match="has no 'time' column and no sample rate"):
        read_record(plain).time  # noqa: B018


def test_time_column_conflicts(tmp_path):
    path = _write(tmp_path / "t.csv", _table())
    assert read_record(path, sample_rate=FS * (1 + 1e-4)).sample_rate_hz == pytest.approx(FS)
    with pytest.raises(RecordError) as info:
        read_record(path, sample_rate=2 * FS)
    assert "the 'time' column gives 8000 Hz but the sample_rate argument says 16000 Hz" in str(
        info.value
    )
    meta = _write(tmp_path / "tm.csv", "# sample_rate = 4 kHz\n" + _table())
    with pytest.raises(RecordError, match="but the sample_rate metadata says 4000 Hz"):
        read_record(meta)


@pytest.mark.parametrize("bad", [0, -5.0, float("nan"), float("inf"), "-1 kHz", "0 Hz"])
def test_bad_sample_rate_argument(tmp_path, bad):
    path = _write(tmp_path / "p.csv", _table(header="signal,ref", fmt=lambda i: (i, -i)))
    with pytest.raises(OptionError, match="sample_rate: .* (is not allowed|is not a finite)"):
        read_record(path, sample_rate=bad)


@pytest.mark.parametrize(
    "line, fragment",
    [
        ("# sample_rate = 0 Hz", "metadata sample_rate = '0 Hz' is not allowed"),
        ("# sample_rate = -3 kHz", "is not allowed; a sample rate is positive"),
        ("# sample_rate = 48000", "metadata sample_rate: '48000' has no unit"),
        ("# sample_rate = 5 nm", "'5 nm' is a length; expected a frequency"),
        ("# sample_rate = nan Hz", "is not a finite number"),
    ],
)
def test_bad_sample_rate_metadata(tmp_path, line, fragment):
    path = _write(tmp_path / "p.csv", line + "\n" + _table(header="signal", fmt=lambda i: (i,)))
    with pytest.raises(RecordError) as info:
        read_record(path)
    assert fragment in str(info.value) and str(path) in str(info.value)


def test_wav_rate_is_overridden_by_the_argument(tmp_path):
    frames = np.zeros((MIN_SAMPLES, 2), dtype=np.int64)
    path = _write(tmp_path / "r.wav", _wav_bytes(frames, bits=16, rate=48000))
    assert read_record(path).sample_rate_hz == 48000.0
    assert read_record(path, sample_rate="47.99 kHz").sample_rate_hz == 47990.0
    zero = _write(tmp_path / "z.wav", _wav_bytes(frames, bits=16, rate=0))
    with pytest.raises(RecordError, match="its header gives a sample rate of 0 Hz"):
        read_record(zero)
    assert read_record(zero, sample_rate=100).sample_rate_hz == 100.0


# --- bad text input ---------------------------------------------------------------------------


def test_metadata_lines_comments_bom_and_crlf(tmp_path):
    text = (
        "\ufeff# invented test record\n"
        "# Air_Temperature = 21.5 °C\n"
        "# air pressure = 1000 hPa (keys are single words, so this is a comment)\n"
        "# position-unit = mm\n"
        "#reference_wavelength=632.991 nm\n"
        "# a comment with = in it, ignored\n\n"
        + _table(header="time,signal,position").replace("\n", "\r\n")
        + "# trailing comment\n"
    )
    rec = read_record(_write(tmp_path / "m.csv", text))
    assert rec.metadata == {
        "air_temperature": "21.5 °C",
        "position_unit": "mm",
        "reference_wavelength": "632.991 nm",
    }
    assert rec.opd_source() == "encoder"
    np.testing.assert_array_equal(rec.position_m, rec["position"] * 1e-3)  # SI: mm = 1e-3 m
    assert rec.metadata_quantity("air temperature", "temperature") == 21.5 * u.deg_C
    assert rec.metadata_quantity("air_pressure", "pressure") is None


def test_latin1_metadata_is_kept(tmp_path):
    data = b"# air_temperature = 20 \xb0C\n" + _table().encode()
    rec = read_record(_write(tmp_path / "l.csv", data))
    assert rec.metadata["air_temperature"] == "20 °C"


@pytest.mark.parametrize(
    "content, fragment",
    [
        ("", ": is empty"),
        ("# only comments\n\n", "has no header line and no data"),
        ("time,signal\n", "has a header (line 1) but no data rows"),
        ("time,signal\n# c\n\n", "has a header (line 1) but no data rows"),
        ("time,signal\n0,1\n", "holds 1 sample; at least 64 are needed"),
        ("1,2\n3,4\n", "line 1 holds numbers where the header should be"),
        ("time,,ref\n", "line 1: column 1 has no usable name"),
        ("time,Signal,signal\n", "column name 'signal' appears twice"),
        (b"\xff\xfet\x00i\x00", "is UTF-16 text; save it as UTF-8"),
        (b"time,sig\x00nal\n", "line 1 holds NUL bytes"),
        (b"PK\x03\x04rest", "is a binary file (.npz, .wav or .npy) with a text extension"),
    ],
)
def test_bad_text_files(tmp_path, content, fragment):
    path = _write(tmp_path / "bad.csv", content)
    with pytest.raises(RecordError) as info:
        read_record(path)
    msg = str(info.value)
    assert msg.startswith(str(path) + ":") and fragment in msg and "\n" not in msg


def _with_bad_line(tmp_path, lineno: int, line: str, header="time,signal,ref", sep=",") -> str:
    rows = _table(header=header, sep=sep).splitlines()
    rows[lineno - 1] = line
    return _write(tmp_path / "b.csv", "\n".join(rows) + "\n")


@pytest.mark.parametrize(
    "line, fragment",
    [
        ("0.1,abc,3", "line 70: the cell in column 'signal' holds 'abc', not a number"),
        ("0.1,,3", "line 70: the cell in column 'signal' is empty"),
        ("0.1,2,3,4", "line 70 has 4 values but the header (line 1) names 3 columns"),
        ("0.1,2", "line 70 has 2 values but the header (line 1) names 3 columns (time, signal"),
        ("0.1;2,5;3", "line 70 has 2 values"),
        ("0.1,1_000,3", "holds '1_000', not a number"),
    ],
)
def test_bad_cells_name_the_line(tmp_path, line, fragment):
    path = _with_bad_line(tmp_path, 70, line)
    with pytest.raises(RecordError) as info:
        read_record(path)
    assert fragment in str(info.value)


def test_decimal_comma_hint(tmp_path):
    path = _with_bad_line(tmp_path, 5, "0.1;2,5;3", header="time;signal;ref", sep=";")
    with pytest.raises(RecordError, match="holds '2,5', not a number; use '.' as the decimal mark"):
        read_record(path)


@pytest.mark.parametrize(
    "line, fragment",
    [
        (f"{69 / FS},nan,1", "column 'signal' holds a non-finite value (nan) at line 70"),
        (f"{69 / FS},1,-inf", "column 'ref' holds a non-finite value (-inf) at line 70"),
        (f"{69 / FS},1,Infinity", "column 'ref' holds a non-finite value (inf) at line 70"),
    ],
)
def test_non_finite_values_name_column_and_line(tmp_path, line, fragment):
    path = _with_bad_line(tmp_path, 70, line)
    with pytest.raises(RecordError) as info:
        read_record(path)
    assert fragment in str(info.value)


def test_non_finite_line_counts_comments(tmp_path):
    rows = _table().splitlines()
    rows[5] = f"{5 / FS},nan,0"  # data row 4 (0-based), after the comments below: line 9
    text = "# c\n\n# sample_rate = 8 kHz\n" + "\n".join(rows[:3]) + "\n  # mid\n" + "\n".join(
        rows[3:]
    )
    with pytest.raises(RecordError, match=r"non-finite value \(nan\) at line 10"):
        read_record(_write(tmp_path / "c.csv", text))


def test_time_must_increase(tmp_path):
    path = _with_bad_line(tmp_path, 40, f"{37 / FS},0,0")  # repeats the time of line 39
    with pytest.raises(RecordError) as info:
        read_record(path)
    assert "column 'time' does not increase at line 40" in str(info.value)
    assert "sort the rows or remove repeated samples" in str(info.value)


def test_uneven_time_steps_are_reported_not_refused(tmp_path):
    def row(i):
        t = i / FS + (0.5 / FS if i == 100 else 0.0)  # one sample half a step late
        return (t, 0.0, 1.0)

    rec = read_record(_write(tmp_path / "j.csv", _table(fmt=row)))
    assert rec.time_jitter == pytest.approx(0.5, rel=1e-6)  # closed form: half a step


def test_whitespace_and_quotes(tmp_path):
    text = '"time"\t"signal"\n' + "".join(f'{i / FS}\t "{i}" \n' for i in range(N))
    rec = read_record(_write(tmp_path / "q.tsv", text))
    np.testing.assert_array_equal(rec["signal"], np.arange(N))
    text = "time   signal\n" + "".join(f"  {i / FS}    {i}\n" for i in range(N))
    rec = read_record(_write(tmp_path / "w.txt", text))
    np.testing.assert_array_equal(rec["signal"], np.arange(N))


def test_comment_lines_that_numpy_loadtxt_refuses_are_still_read(tmp_path):
    rows = _table(header="time,signal", fmt=lambda i: (i / FS, i)).splitlines()
    text = "\n".join(rows[:10]) + "\n   # indented comment\n" + "\n".join(rows[10:]) + "\n"
    rec = read_record(_write(tmp_path / "i.csv", text))
    assert rec.n_samples == N


def test_duplicate_metadata_with_different_values(tmp_path):
    text = "# sample_rate = 1 kHz\n# sample_rate = 2 kHz\n"
    text += _table(header="signal", fmt=lambda i: (i,))
    with pytest.raises(RecordError, match=r"metadata sample_rate is given twice .*lines 1 and 2"):
        read_record(_write(tmp_path / "d.csv", text))


# --- paths ------------------------------------------------------------------------------------


def test_path_problems(tmp_path, monkeypatch):
    with pytest.raises(RecordError, match="missing.csv: no such file"):
        read_record(tmp_path / "missing.csv")
    (tmp_path / "dir.csv").mkdir()
    with pytest.raises(RecordError, match="dir.csv: is a directory, not a record file"):
        read_record(tmp_path / "dir.csv")
    odd = _write(tmp_path / "r.xlsx", "x")
    with pytest.raises(RecordError, match=r"the extension '.xlsx' is not a record form; use .csv"):
        read_record(odd)
    with pytest.raises(RecordError, match="is not a file name"):
        read_record(42)

    good = _write(tmp_path / "g.csv", _table())

    def refuse(*args, **kwargs):
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(records, "open", refuse, raising=False)
    with pytest.raises(RecordError, match=r"g.csv: cannot be read \(Permission denied\)"):
        read_record(good)


# --- npz --------------------------------------------------------------------------------------


def test_npz_refuses_pickled_objects(tmp_path):
    path = tmp_path / "p.npz"
    np.savez(path, signal=np.zeros(N), ref=np.array([{"a": 1}] * N, dtype=object))
    with pytest.raises(RecordError, match=r"p.npz: refused: holds pickled objects \(array 'ref'\)"):
        read_record(path)


def test_npz_damaged_and_wrong_forms(tmp_path):
    good = tmp_path / "g.npz"
    write_record_npz(good, _columns(time=False), sample_rate_hz=FS)
    data = good.read_bytes()
    cut = _write(tmp_path / "cut.npz", data[: len(data) // 2])
    with pytest.raises(RecordError, match="cut.npz: is a damaged .npz archive"):
        read_record(cut)
    npy = tmp_path / "one.npz"
    with open(npy, "wb") as fh:
        np.save(fh, np.zeros(N))
    with pytest.raises(RecordError, match="holds a single .npy array, not an .npz archive"):
        read_record(npy)
    junk = _write(tmp_path / "junk.npz", b"hello, not a zip")
    with pytest.raises(RecordError, match="is not an .npz archive"):
        read_record(junk)


@pytest.mark.parametrize(
    "arrays, fragment",
    [
        ({"signal": np.zeros((N, 2))}, "array 'signal' has shape (256, 2); each column must be"),
        ({"signal": np.array(["a"] * N)}, "array 'signal' holds <U1 values; columns must be"),
        ({"signal": np.zeros(N, complex)}, "holds complex128 values"),
        ({"signal": np.zeros(N), "ref": np.zeros(N - 1)}, "columns differ in length"),
        ({"metadata": np.array(["a = b"])}, "holds no column arrays"),
        ({"signal": np.zeros(N), "metadata": np.array(["no equals"])}, "is not 'key = value'"),
        ({"signal": np.zeros(N), "metadata": np.zeros(3)}, "the 'metadata' array must be 1-D"),
        ({"signal": np.zeros(N), "Signal": np.zeros(N)}, "column name 'Signal' appears twice"),
        ({"signal": np.zeros(10)}, "holds 10 samples; at least 64 are needed"),
        ({"signal": np.r_[np.zeros(N - 1), np.nan]}, "a non-finite value (nan) at sample 255"),
    ],
)
def test_npz_bad_content(tmp_path, arrays, fragment):
    path = tmp_path / "b.npz"
    np.savez(path, **arrays)
    with pytest.raises(RecordError) as info:
        read_record(path)
    assert fragment in str(info.value)


def test_npz_member_that_is_not_an_array(tmp_path):
    path = tmp_path / "z.npz"
    with zipfile.ZipFile(path, "w") as zf:
        zf.writestr("signal.txt", "not an array")
    with pytest.raises(RecordError, match="member 'signal.txt' is not a NumPy array"):
        read_record(path)


# --- wav --------------------------------------------------------------------------------------


def test_wav_truncated_and_malformed(tmp_path):
    frames = np.zeros((MIN_SAMPLES, 2), dtype=np.int64)
    data = _wav_bytes(frames, bits=16, rate=8000)
    cut = _write(tmp_path / "cut.wav", data[:-10])
    with pytest.raises(RecordError) as info:
        read_record(cut)
    assert "cut.wav: is truncated: its data chunk declares 256 bytes but only 246 are" in str(
        info.value
    )
    head = _write(tmp_path / "head.wav", data[:30])
    with pytest.raises(RecordError, match="its 'fmt ' chunk is damaged or truncated"):
        read_record(head)
    tiny = _write(tmp_path / "tiny.wav", b"RIFF")
    with pytest.raises(RecordError, match=r"is too short \(4 bytes\) to be a WAV file"):
        read_record(tiny)
    other = _write(tmp_path / "o.wav", b"OggS" + bytes(100))
    with pytest.raises(RecordError, match="is not a RIFF WAVE file"):
        read_record(other)
    nodata = _write(tmp_path / "n.wav", data[:36])
    with pytest.raises(RecordError, match="has no complete 'data' chunk"):
        read_record(nodata)
    short = _write(tmp_path / "s.wav", _wav_bytes(frames[:10], bits=16, rate=8000))
    with pytest.raises(RecordError, match="holds 10 samples; at least 64 are needed"):
        read_record(short)


def test_wav_unsupported_format_is_a_record_error(tmp_path):
    frames = np.zeros((MIN_SAMPLES, 1), dtype=np.int64)
    path = _write(tmp_path / "a.wav", _wav_bytes(frames, bits=16, rate=8000, tag=6))  # A-law
    with pytest.raises(RecordError, match="a.wav: cannot be decoded as WAV"):
        read_record(path)


# --- Record ---------------------------------------------------------------------------------


def test_record_in_memory_and_immutability():
    sig = np.linspace(-1, 1, N)
    rec = Record({"Signal": sig, "REF": np.zeros(N, dtype=np.int16)}, sample_rate_hz=FS)
    assert rec.has("signal") and rec.has("ref") and not rec.has("time")
    assert rec.n_samples == N and rec.opd_source() == "single" and rec.path == "<memory>"
    assert rec["ref"].dtype == np.float64
    assert sig.flags.writeable  # the caller's array is untouched (copied)
    with pytest.raises(ValueError, match="read-only"):
        rec["signal"][0] = 5.0
    with pytest.raises(TypeError):
        rec.columns["x"] = sig  # the mapping itself is read-only
    np.testing.assert_array_equal(rec.time, np.arange(N) / FS)
    assert rec.time_jitter is None


@pytest.mark.parametrize(
    "cols, fragment",
    [
        ({"ref": np.zeros(N)}, "has no 'signal' column (columns: ref); name the detector column"),
        ({"signal": np.zeros(N), "ref_i": np.zeros(N)}, "has 'ref_i' but no 'ref_q'"),
        ({"signal": np.zeros(N), "ref_q": np.zeros(N)}, "has 'ref_q' but no 'ref_i'"),
        ({"signal": np.zeros(N), "ref": np.zeros(N + 1)}, "has 257 samples but 'signal' has 256"),
        ({"signal": np.zeros(3)}, "holds 3 samples; at least 64"),
        ({"signal": np.zeros((N, 1))}, "has shape (256, 1); each column must be 1-D"),
        ({"signal": ["a"] * N}, "holds <U1 values; numbers are needed"),
        ({}, "holds no columns"),
        ({"signal": np.zeros(N), "time": np.zeros(N)}, "'time' does not increase at sample 1"),
    ],
)
def test_record_validation(cols, fragment):
    with pytest.raises(RecordError) as info:
        Record(cols)
    assert fragment in str(info.value)


def test_record_rate_checks():
    with pytest.raises(RecordError, match="sample rate -1.0 Hz is not allowed"):
        Record({"signal": np.zeros(N)}, sample_rate_hz=-1.0)
    t = np.arange(N) / FS
    with pytest.raises(RecordError, match="the 'time' column gives 8000 Hz but the sample rate"):
        Record({"time": t, "signal": np.zeros(N)}, sample_rate_hz=2 * FS)


@pytest.mark.parametrize(
    "cols, source",
    [
        ({"ref_i": 1, "ref_q": 1, "ref": 1, "position": 1}, "quadrature"),
        ({"ref": 1, "position": 1}, "single"),
        ({"position": 1}, "encoder"),
        ({}, None),
    ],
)
def test_opd_source_order_of_preference(cols, source):
    # contract: ref_i+ref_q, then ref, then position
    rec = Record({"signal": np.zeros(N), **{k: np.zeros(N) for k in cols}})
    assert rec.opd_source() == source


def test_position_unit_must_be_a_length():
    rec = Record({"signal": np.zeros(N), "position": np.ones(N)}, metadata={"position_unit": "s"})
    with pytest.raises(RecordError, match="metadata position_unit = 's' is not a length unit"):
        rec.position_m  # noqa: B018
    assert Record({"signal": np.zeros(N), "position": np.ones(N)}).position_m[0] == 1.0


def test_metadata_quantity_error_names_the_key():
    rec = Record({"signal": np.zeros(N)}, metadata={"reference_wavelength": "633"})
    with pytest.raises(RecordError, match="metadata reference_wavelength: '633' has no unit"):
        rec.metadata_quantity("reference_wavelength", "length")


# --- writers ----------------------------------------------------------------------------------


def test_writers_are_atomic_and_respect_overwrite(tmp_path):
    cols = _columns(time=False)
    path = tmp_path / "w.csv"
    write_record_csv(path, cols, sample_rate_hz=FS)
    with pytest.raises(OutputError, match="w.csv: exists already"):
        write_record_csv(path, cols, sample_rate_hz=FS, overwrite=False)
    with pytest.raises(OutputError, match="is a directory"):
        write_record_npz(tmp_path, cols)
    with pytest.raises(OutputError, match="cannot be written"):
        write_record_wav(tmp_path / "nodir" / "x.wav", cols, 8000)
    # a failing write leaves neither a partial file nor a temporary file behind
    with pytest.raises(OptionError):
        write_record_wav(tmp_path / "big.wav", {"signal": np.full(N, 2.0)}, 8000)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["w.csv"]


def test_wav_writer_options(tmp_path):
    with pytest.raises(OptionError, match="samples reach 2 of full scale; 16-bit PCM holds -1 to"):
        write_record_wav(tmp_path / "a.wav", {"signal": np.full(N, 2.0)}, 8000)
    write_record_wav(tmp_path / "c.wav", {"signal": np.full(N, 2.0)}, 8000, clip=True)
    assert read_record(tmp_path / "c.wav")["signal"][0] == 32767 / 32768  # 16-bit full scale
    with pytest.raises(OptionError, match="48000.5 is not allowed in a WAV header"):
        write_record_wav(tmp_path / "d.wav", {"signal": np.zeros(N)}, 48000.5)
    with pytest.raises(OptionError, match="bits: '12' is not one of"):
        write_record_wav(tmp_path / "e.wav", {"signal": np.zeros(N)}, 8000, bits=12)
    with pytest.raises(OptionError, match="the 'time' column gives 8000 Hz but sample_rate_hz"):
        write_record_wav(tmp_path / "f.wav", _columns(), 16000)
    write_record_wav(tmp_path / "g.wav", _columns(), 8000)  # consistent time column is dropped
    assert list(read_record(tmp_path / "g.wav").columns) == ["signal", "ref_i", "ref_q"]
    rec = Record({"signal": np.zeros(N)}, sample_rate_hz=22050.0)
    write_record_wav(tmp_path / "h.wav", rec)
    assert wavfile.read(tmp_path / "h.wav")[0] == 22050  # scipy.io.wavfile as reference


def test_csv_writer_refuses_unwritable_names_and_metadata(tmp_path):
    with pytest.raises(OptionError, match="cannot be a text column name"):
        write_record_csv(tmp_path / "a.csv", {"a,b": np.zeros(N)})
    with pytest.raises(OptionError, match="cannot be written; keys are names"):
        write_record_csv(tmp_path / "a.csv", {"signal": np.zeros(N)}, metadata={"k": "x\ny"})


# --- fuzz: whatever the bytes, only RecordError escapes -------------------------------------


# the fixture below is module-scoped: one directory, each example overwrites its file
FIXTURE_OK = [HealthCheck.function_scoped_fixture]


@pytest.fixture(scope="module")
def fuzz_dir():
    with tempfile.TemporaryDirectory() as d:
        yield d


def _valid_samples(directory: str) -> dict[str, bytes]:
    out = {}
    cols = _columns(n=MIN_SAMPLES, time=False)
    for ext, writer in (
        (".csv", lambda p: write_record_csv(p, cols, sample_rate_hz=FS)),
        (".npz", lambda p: write_record_npz(p, cols, sample_rate_hz=FS)),
        (".wav", lambda p: write_record_wav(p, cols, 8000, bits=24)),
    ):
        p = os.path.join(directory, "valid" + ext)
        writer(p)
        with open(p, "rb") as fh:
            out[ext] = fh.read()
    return out


def _read_only_record_error(path: str) -> None:
    try:
        read_record(path)
    except RecordError as exc:
        assert "\n" not in str(exc)


@settings(max_examples=200, deadline=None, suppress_health_check=FIXTURE_OK)
@given(data=st.binary(max_size=2048), ext=st.sampled_from([".csv", ".txt", ".npz", ".wav"]))
def test_fuzz_random_bytes(fuzz_dir, data, ext):
    _read_only_record_error(_write(os.path.join(fuzz_dir, "f" + ext), data))


@settings(max_examples=300, deadline=None, suppress_health_check=FIXTURE_OK)
@given(
    ext=st.sampled_from([".csv", ".npz", ".wav"]),
    cut=st.integers(min_value=0, max_value=10**6),
    flips=st.lists(st.tuples(st.integers(0, 10**6), st.integers(0, 255)), max_size=6),
)
def test_fuzz_damaged_valid_files(fuzz_dir, ext, cut, flips):
    if not hasattr(test_fuzz_damaged_valid_files, "samples"):
        test_fuzz_damaged_valid_files.samples = _valid_samples(fuzz_dir)
    data = bytearray(test_fuzz_damaged_valid_files.samples[ext])
    for pos, value in flips:
        data[pos % len(data)] = value
    data = bytes(data[: max(1, len(data) - cut % len(data))]) if cut % 3 == 0 else bytes(data)
    _read_only_record_error(_write(os.path.join(fuzz_dir, "d" + ext), data))


@settings(max_examples=200, deadline=None, suppress_health_check=FIXTURE_OK)
@given(
    text=st.text(
        alphabet=st.sampled_from(list("0123456789.,;\t e+-#=\nnaifNAIF_\"'abcxyz°")), max_size=600
    )
)
def test_fuzz_text_tables(fuzz_dir, text):
    _read_only_record_error(_write(os.path.join(fuzz_dir, "t.csv"), "time,signal\n" + text))
