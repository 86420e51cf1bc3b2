"""Records read memory-mapped (``.npy``, raw binary, ``.wav``) and analysed within a memory
limit below the record's own size in memory.

The records are written here, block by block, by a forward model of a scanned Michelson
interferometer (not :mod:`ftsource.simulate`): the optical path x(t) of a mirror driven
sinusoidally, a quadrature reference ``I = p + a cos φ``, ``Q = q + b sin(φ + α)`` with
``φ = 2π x / λ_ref`` (Heydemann 1981's model of real quadrature errors: offsets, unequal
gains, a phase error), and a monochromatic source ``cos(2π x / λ)`` — the ideal two-beam
interferogram (closed form).
"""

from __future__ import annotations

import json
import os
import struct
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest
import scipy.io.wavfile

from ftsource.errors import RecordError
from ftsource.io.records import read_record

ROOT = Path(__file__).resolve().parent.parent

LAMBDA_REF_NM = 632.991
LAMBDA_SRC_NM = 543.516  # an invented green line
FS = 100_000.0


def _model_block(t: np.ndarray, rng, *, opd_amplitude_cm=0.2, sweep_hz=0.25):
    """Forward model: (signal, ref_i, ref_q) at times ``t`` (s)."""
    x = opd_amplitude_cm * (1.0 - np.cos(2 * np.pi * sweep_hz * t))  # cm of OPD
    phi = 2 * np.pi * x / (LAMBDA_REF_NM * 1e-7)
    ref_i = 0.03 + 0.9 * np.cos(phi) + rng.normal(0, 1e-3, t.size)
    ref_q = -0.02 + 1.1 * np.sin(phi + np.deg2rad(4.0)) + rng.normal(0, 1e-3, t.size)
    signal = 1.0 + 0.5 * np.cos(2 * np.pi * x / (LAMBDA_SRC_NM * 1e-7))
    signal += rng.normal(0, 1e-3, t.size)
    return signal, ref_i, ref_q


def write_npy_record(path: Path, n: int, seed: int = 0, block: int = 1 << 18) -> int:
    """A structured ``.npy`` (time, signal, ref_i, ref_q as float64) written block by block
    so that the test itself never holds the record; returns its size in memory (bytes)."""
    rng = np.random.default_rng(seed)
    # a rig that logs its mirror encoder beside the quadrature reference (the analysis
    # prefers the reference: docs/contract.md)
    dt = np.dtype([("time", "<f8"), ("signal", "<f8"), ("ref_i", "<f8"), ("ref_q", "<f8"),
                   ("position", "<f8")])
    out = np.lib.format.open_memmap(path, mode="w+", dtype=dt, shape=(n,))
    for a in range(0, n, block):
        t = np.arange(a, min(a + block, n)) / FS
        s, i, q = _model_block(t, rng)
        out["time"][a : a + t.size] = t
        out["signal"][a : a + t.size] = s
        out["ref_i"][a : a + t.size] = i
        out["ref_q"][a : a + t.size] = q
        out["position"][a : a + t.size] = 0.1 * (1.0 - np.cos(2 * np.pi * 0.25 * t)) * 1e-2
    out.flush()
    del out
    return n * dt.itemsize


# --------------------------------------------------------------------------------------------
# the readers


def _small(n=4096, seed=1):
    t = np.arange(n) / FS
    s, i, q = _model_block(t, np.random.default_rng(seed), sweep_hz=5.0)
    return t, s, i, q


def test_npy_structured_is_a_view_of_the_file(tmp_path):
    """float64 columns of a structured .npy are read-only views of the mapped file (no copy:
    numpy.shares_memory with numpy's own memory map of it), equal to what numpy wrote."""
    p = tmp_path / "r.npy"
    t, s, i, q = _small()
    arr = np.zeros(t.size, dtype=[("time", "<f8"), ("signal", "<f8"), ("ref_i", "<f8"),
                                  ("ref_q", "<f8")])
    arr["time"], arr["signal"], arr["ref_i"], arr["ref_q"] = t, s, i, q
    np.save(p, arr)
    rec = read_record(p)
    assert rec.source_format == "npy"
    assert list(rec.columns) == ["time", "signal", "ref_i", "ref_q"]
    np.testing.assert_array_equal(rec["signal"], s)
    np.testing.assert_array_equal(rec["ref_q"], q)
    assert not rec["signal"].flags.writeable
    base = rec["signal"]
    while getattr(base, "base", None) is not None:
        base = base.base
    assert isinstance(base, __import__("mmap").mmap)  # backed by the file, not a copy
    assert rec.sample_rate_hz == pytest.approx(FS, rel=1e-9)


def test_npy_2d_channels_named_by_count_or_sidecar(tmp_path):
    """A 2-D (samples × channels) .npy names its channels as a WAV file does (3 → signal,
    ref_i, ref_q) unless the sidecar's ``channels`` names them; integers become float64
    exactly (int16 is exact in float64: IEEE 754 has 53-bit significands)."""
    t, s, i, q = _small()
    data = np.round(np.stack([s, i, q], axis=1) * 1e4).astype("<i2")
    p = tmp_path / "c.npy"
    np.save(p, data)
    rec = read_record(p, sample_rate=FS)
    assert list(rec.columns) == ["signal", "ref_i", "ref_q"]
    np.testing.assert_array_equal(rec["ref_i"], data[:, 1].astype(float))
    (tmp_path / "c.npy.meta").write_text("channels = ref_q, signal, ref_i\nsample_rate = 100 kHz\n")
    rec = read_record(p)
    np.testing.assert_array_equal(rec["signal"], data[:, 1].astype(float))
    assert rec.sample_rate_hz == FS


def test_raw_binary_with_sidecar(tmp_path):
    """A raw interleaved big-endian int32 file with a header, laid out by its sidecar, reads
    to the values numpy wrote (numpy.ndarray.tofile)."""
    t, s, i, q = _small()
    data = np.round(np.stack([i, q, s], axis=1) * 2**20).astype(">i4")
    p = tmp_path / "scan.raw"
    with open(p, "wb") as fh:
        fh.write(b"HDR!" * 8)
        data.tofile(fh)
    (tmp_path / "scan.raw.meta").write_text(
        "# written by an invented logger\n"
        "dtype = >int32\nchannels = ref_i, ref_q, signal\nheader_bytes = 32\n"
        "sample_rate = 100 kHz\nreference_wavelength = 632.991 nm\n"
    )
    rec = read_record(p)
    assert rec.source_format == "raw"
    np.testing.assert_array_equal(rec["signal"], data[:, 2].astype(float))
    np.testing.assert_array_equal(rec["ref_i"], data[:, 0].astype(float))
    assert rec.metadata["reference_wavelength"] == "632.991 nm"
    assert rec.sample_rate_hz == FS


@pytest.mark.parametrize(
    ("meta", "expect"),
    [
        (None, "needs the sidecar"),
        ("channels = signal, ref\n", "has no 'dtype'"),
        ("dtype = complex64\nchannels = signal, ref\n", "dtype = 'complex64' is not allowed"),
        ("dtype = int16\n", "has no 'channels'"),
        ("dtype = int16\nchannels = signal, ref, ref_q\n", "not a whole number of frames"),
        ("dtype = int16\nchannels = signal, ref\nheader_bytes = -3\n", "header_bytes"),
        ("dtype = int16\nchannels = signal, , ref\n", "empty name"),
    ],
)
def test_raw_sidecar_errors(tmp_path, meta, expect):
    """Each missing or wrong layout key is named (the file has 1000 frames of 2 int16)."""
    p = tmp_path / "x.raw"
    np.zeros((1000, 2), "<i2").tofile(p)
    if meta is not None:
        (tmp_path / "x.raw.meta").write_text(meta)
    with pytest.raises(RecordError, match=expect.replace("(", r"\(")):
        read_record(p, sample_rate=FS)


def test_npy_refusals(tmp_path):
    """Object arrays are refused without unpickling; shapes beyond 2-D are refused."""
    p = tmp_path / "o.npy"
    np.save(p, np.array([{"a": 1}] * 100, dtype=object), allow_pickle=True)
    with pytest.raises(RecordError, match="pickled"):
        read_record(p, sample_rate=FS)
    p = tmp_path / "3d.npy"
    np.save(p, np.zeros((100, 2, 2)))
    with pytest.raises(RecordError, match="shape"):
        read_record(p, sample_rate=FS)


@pytest.mark.parametrize("bits", [8, 16, 24, 32, 64])
def test_wav_mapped_equals_scipy(tmp_path, bits):
    """The memory-mapped WAV reader gives scipy.io.wavfile's samples scaled to full scale 1
    (8-bit unsigned: (x − 128)/128; 16/24/32-bit: x/2^(bits−1); 24-bit as scipy returns it,
    left-justified in int32, so x/2^31; 64: float) — scipy is the outside reference."""
    rng = np.random.default_rng(bits)
    n = 5000
    if bits == 64:
        data = rng.uniform(-1, 1, (n, 3))
        scipy.io.wavfile.write(tmp_path / "a.wav", 48000, data)
    elif bits == 24:
        ints = rng.integers(-(2**23), 2**23, (n, 3), dtype=np.int32)
        raw = (ints.astype("<i4").view(np.uint8).reshape(n, 3, 4)[:, :, :3]).tobytes()
        _write_pcm(tmp_path / "a.wav", raw, 3, 24, 48000)
    else:
        dt = {8: np.uint8, 16: np.int16, 32: np.int32}[bits]
        info = np.iinfo(dt)
        data = rng.integers(info.min, info.max, (n, 3), dtype=dt, endpoint=True)
        scipy.io.wavfile.write(tmp_path / "a.wav", 48000, data)
    rec = read_record(tmp_path / "a.wav")
    rate, ref = scipy.io.wavfile.read(tmp_path / "a.wav")
    if ref.dtype.kind == "f":
        want = ref.astype(float)
    elif ref.dtype == np.uint8:
        want = (ref.astype(float) - 128) / 128
    else:
        want = ref.astype(float) / 2.0 ** (8 * ref.dtype.itemsize - 1)
    assert rate == 48000 and rec.sample_rate_hz == 48000
    for j, name in enumerate(("signal", "ref_i", "ref_q")):
        np.testing.assert_array_equal(rec[name], want[:, j])
    assert rec.metadata["wav_sample_format"].startswith(f"{bits}-bit")


def _write_pcm(path, raw: bytes, channels: int, bits: int, rate: int) -> None:
    block = channels * bits // 8
    fmt = struct.pack("<HHIIHH", 1, channels, rate, rate * block, block, bits)
    body = b"WAVE" + b"fmt " + struct.pack("<I", 16) + fmt + b"data" + struct.pack(
        "<I", len(raw)) + raw
    Path(path).write_bytes(b"RIFF" + struct.pack("<I", len(body)) + body)


def test_wav_is_not_read_whole(tmp_path, monkeypatch):
    """A 16-bit WAV is mapped, not decoded by scipy.io.wavfile.read (which reads it whole)."""
    data = np.zeros((4000, 2), np.int16)
    data[:, 0] = np.arange(4000)
    scipy.io.wavfile.write(tmp_path / "m.wav", 8000, data)

    def boom(*a, **k):
        raise AssertionError("the whole file was read")

    monkeypatch.setattr(scipy.io.wavfile, "read", boom)
    rec = read_record(tmp_path / "m.wav")
    assert rec["signal"][3999] == 3999 / 2**15


# --------------------------------------------------------------------------------------------
# analysis within a memory limit below the record's size

_LIMITED = textwrap.dedent(
    """
    import json, resource, sys, warnings
    sys.path.insert(0, {root!r})
    warnings.simplefilter("ignore")
    import numpy as np
    import ftsource.analysis, ftsource.io.records, ftsource.spectrum.transform
    import ftsource.lines.fitting, ftsource.measure.figures, ftsource.result
    import scipy.ndimage, scipy.optimize, scipy.signal, scipy.interpolate, astropy.table
    import ftsource.measure.facts, ftsource.interferogram.delay

    def vm_data():
        for line in open("/proc/self/status"):
            if line.startswith("VmData:"):
                return int(line.split()[1]) * 1024

    # imports, caches and plans of a first, small analysis are not the record's cost
    ftsource.analyze({warm!r}, reference_wavelength="632.991 nm", medium="vacuum")
    # free heap kept by malloc would otherwise count in the base and serve the record:
    # give it back first (glibc's malloc_trim), so the limit is what may still be mapped
    import ctypes, gc
    gc.collect()
    ctypes.CDLL("libc.so.6").malloc_trim(0)
    base = vm_data()
    limit = base + int({budget})
    resource.setrlimit(resource.RLIMIT_DATA, (limit, limit))
    mode = sys.argv[1]
    try:
        if mode == "whole":
            np.load({path!r})  # the record read into memory, as a non-mapping reader would
            print(json.dumps(dict(ok=True)))
        else:
            res = ftsource.analyze({path!r}, reference_wavelength="632.991 nm",
                                   medium="vacuum")
            print(json.dumps(dict(ok=True, centre=res.centre_wavelength.to_value("nm"),
                                  base=base, limit=limit)))
    except MemoryError:
        print(json.dumps(dict(ok=False, error="MemoryError")))
    except Exception as exc:
        print(json.dumps(dict(ok=False, error=type(exc).__name__ + ": " + str(exc))))
    """
)


#: The memory the analysis may add, as a fraction of the record's size in memory (measured
#: need on the reference machine: 0.88–0.90; what it keeps is listed in
#: docs/batch_and_big_records.md).
BUDGET = 0.95


def test_analysis_within_a_data_limit_below_the_record_size(tmp_path):
    """A 2²²-sample record (160 MiB as five float64 columns) is analysed by a process whose private
    memory may grow by only 0.95 of that after its imports (RLIMIT_DATA); the same limit stops
    reading the record whole (control: the limit bites). The centre wavelength is the forward
    model's within 1 ppm.

    RLIMIT_DATA bounds the process's private memory (heap and anonymous mappings, where
    arrays live); RLIMIT_AS would also count the read-only mapping of the file itself, whose
    pages the operating system reads on demand and may drop again (Linux getrlimit(2))."""
    n = 1 << 22
    path = tmp_path / "long.npy"
    size = write_npy_record(path, n)
    assert size == 160 * 2**20
    warm = tmp_path / "short.npy"
    write_npy_record(warm, 1 << 17, seed=1)
    code = _LIMITED.format(root=str(ROOT), path=str(path), warm=str(warm),
                           budget=BUDGET * size)
    env = dict(os.environ, OMP_NUM_THREADS="1", OPENBLAS_NUM_THREADS="1", MKL_NUM_THREADS="1")

    def run(mode):
        proc = subprocess.run([sys.executable, "-c", code, mode], capture_output=True,
                              text=True, env=env, timeout=600, check=False)
        assert proc.stdout.strip(), proc.stderr[-3000:]
        return json.loads(proc.stdout.strip().splitlines()[-1])

    whole = run("whole")
    assert whole == {"ok": False, "error": "MemoryError"}
    out = run("analyze")
    assert out["ok"], out
    assert out["limit"] - out["base"] < size
    # the forward model's line, exactly LAMBDA_SRC_NM in vacuum (closed form)
    assert abs(out["centre"] / LAMBDA_SRC_NM - 1) < 1e-6


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_percentiles_by_blocks_equal_numpy(monkeypatch, seed):
    """The health figures' percentiles of a long column (gathered bin by bin, no copy) are
    numpy.percentile's to the last bit (numpy is the reference), for continuous, quantised,
    clipped and few-valued samples."""
    from ftsource.measure import health

    monkeypatch.setattr(health, "PERCENTILE_BLOCK", 1000)
    monkeypatch.setattr(health, "PERCENTILE_BINS", 64)
    rng = np.random.default_rng(seed)
    n = 25_013
    for x in (rng.normal(size=n), np.round(rng.normal(size=n) * 30),
              np.clip(rng.normal(size=n), -1.0, 0.3), rng.integers(0, 3, n).astype(float)):
        for q in ([1.0, 99.0], [0.0, 50.0, 100.0], [37.3]):
            np.testing.assert_array_equal(health.percentiles(x, q), np.percentile(x, q))
