"""Tests of ftsource.batch and ``ftsource batch``.

Oracles: the serial run in this process is the reference for the process-pool and Dask runs
(the same bytes in every file); each row's figures equal those of ``ftsource analyze`` of the
same record (the single-record command, itself tested against closed forms in
test_accuracy.py); astropy's ECSV reader (a general-purpose library) reads the summary back.
Interrupting a batch is tested on a real subprocess sent SIGINT, as a terminal's Ctrl-C is.

Reference: astropy.table (ECSV reader) and dask.distributed (LocalCluster), general-purpose
libraries from PyPI; the laser wavelengths are invented test inputs.
"""

from __future__ import annotations

import io
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from astropy.table import Table
from cli_helpers import run, tree

from ftsource import batch
from ftsource import simulate as S
from ftsource.analysis import AnalysisOptions
from ftsource.errors import OptionError
from ftsource.io.records import write_record_npz
from ftsource.report.text import OUTPUT_FILES

ROOT = Path(__file__).resolve().parent.parent
REF = ["--reference-wavelength", "632.991nm", "--medium", "vacuum"]


def _records(folder: Path, n: int, duration_s: float = 2.0) -> list[Path]:
    """``n`` simulated quadrature records of lasers at 600 + 10 k nm, and one broken file."""
    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for k in range(n):
        scan = S.Scan(duration_s=duration_s)
        sim = S.simulate(S.laser(600.0 + 10 * k), scan, S.ReferenceChannel(), rng=k)
        p = folder / f"rec{k}.npz"
        write_record_npz(p, sim.record)
        paths.append(p)
    (folder / "broken.csv").write_text("time,signal\n")
    return paths


@pytest.fixture(scope="module")
def records(tmp_path_factory):
    folder = tmp_path_factory.mktemp("records")
    _records(folder, 3)
    return folder


def test_find_records_folder_and_glob(records, tmp_path):
    names = [Path(p).name for p in batch.find_records(str(records))]
    assert names == ["broken.csv", "rec0.npz", "rec1.npz", "rec2.npz"]
    assert [Path(p).name for p in batch.find_records(str(records / "rec*.npz"))] == names[1:]
    with pytest.raises(OptionError, match="matches no file"):
        batch.find_records(str(tmp_path / "*.npz"))
    with pytest.raises(OptionError, match="holds no record"):
        batch.find_records(str(tmp_path))


def test_output_names_are_unique(tmp_path):
    jobs = batch.plan_jobs(["a/x.npz", "b/x.npz", "c/X.csv", "d/y.wav"], AnalysisOptions())
    assert [j.name for j in jobs] == ["x", "x-2", "X-3", "y"]


def test_serial_process_pool_and_dask_give_identical_files(records, tmp_path, capsys):
    serial, pool, dask_out = tmp_path / "serial", tmp_path / "pool", tmp_path / "dask"
    status, out, err = run(capsys, ["batch", records, "--out", serial, "--workers", "1", *REF])
    assert status == 1  # one record failed: said in the exit status, not hidden
    assert err == ""  # not a terminal: no progress line
    assert "failed: " in out and "broken.csv" in out
    status, _, _ = run(capsys, ["batch", records, "--out", pool, "--workers", "2", *REF])
    assert status == 1
    from distributed import LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, host="127.0.0.1",
                      dashboard_address=None) as cluster:
        status, _, err = run(capsys, ["batch", records, "--out", dask_out, "--scheduler",
                                      cluster.scheduler_address, *REF])
        from distributed import Client

        with Client(cluster) as client:  # Dask's workers run one BLAS/OpenMP thread each too
            limits = client.run(lambda: {k: os.environ.get(k) for k in
                                         ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS",
                                          "MKL_NUM_THREADS")})
    assert status == 1, err
    assert len(limits) == 2
    assert all(v == {"OMP_NUM_THREADS": "1", "OPENBLAS_NUM_THREADS": "1",
                     "MKL_NUM_THREADS": "1"} for v in limits.values())
    ref = tree(serial)
    assert sorted(ref) == sorted(
        ["summary.ecsv"] + [f"rec{k}/{f}" for k in range(3) for f in OUTPUT_FILES])
    assert tree(pool) == ref
    assert tree(dask_out) == ref


def test_summary_rows_match_single_analyses(records, tmp_path, capsys):
    out_dir = tmp_path / "out"
    run(capsys, ["batch", records, "--out", out_dir, "--workers", "1", *REF])
    t = Table.read(out_dir / "summary.ecsv", format="ascii.ecsv")
    assert list(t["status"]) == ["failed", "ok", "ok", "ok"]  # every record listed, in order
    assert "no data rows" in t["error"][0]
    assert t["centre_wavelength_nm"].unit == "nm"
    for k in range(3):
        status, text, _ = run(capsys, ["analyze", records / f"rec{k}.npz", "--json", *REF])
        assert status == 0
        d = json.loads(text)
        row = t[k + 1]
        assert row["output"] == f"rec{k}"
        # the summary table is ECSV, whose float text (astropy's
        # default format) rounded this value to 12 significant digits: agreement to 1e-11
        for key in ("centre_wavelength_nm", "u_centre_wavelength_nm"):
            assert row[key] == pytest.approx(d["summary"][key], rel=1e-11)
        assert row["n_warnings"] == len(d["warnings"])
        saved = json.loads((out_dir / f"rec{k}" / "result.json").read_text())
        assert saved["summary"] == d["summary"]
        # the simulated truth, 600 + 10k nm (vacuum), within 5 standard uncertainties
        assert abs(row["centre_wavelength_nm"] - (600 + 10 * k)) < 5 * row[
            "u_centre_wavelength_nm"] + 1e-3


def test_existing_summary_is_not_overwritten(records, tmp_path, capsys):
    out_dir = tmp_path / "out"
    run(capsys, ["batch", str(records / "rec0.npz"), "--out", out_dir, "--workers", "1", *REF])
    before = tree(out_dir)
    status, _, err = run(capsys, ["batch", str(records / "rec0.npz"), "--out", out_dir, *REF])
    assert status == 2 and "exists already" in err
    assert tree(out_dir) == before


@pytest.mark.parametrize("argv,fragment", [
    (["--workers", "0"], "--workers"),
    (["--workers", "2", "--scheduler", "tcp://127.0.0.1:1"], "exclude"),
    (["--fft-threads", "0"], "threads"),
])
def test_bad_batch_options(records, tmp_path, capsys, argv, fragment):
    status, _, err = run(capsys, ["batch", records, "--out", tmp_path / "o", *REF, *argv])
    assert status == 2 and fragment in err and err.count("\n") == 1
    assert not (tmp_path / "o").exists()


def test_progress_only_on_a_terminal(records, tmp_path):
    class Tty(io.StringIO):
        def isatty(self):
            return True

    jobs = batch.plan_jobs(batch.find_records(str(records / "rec0.npz")),
                           AnalysisOptions(reference_wavelength_nm=632.991, medium="vacuum"))
    tty, pipe = Tty(), io.StringIO()
    batch.run_batch(jobs, tmp_path / "a", progress=tty)
    batch.run_batch(jobs, tmp_path / "b", progress=pipe)
    assert "1/1 records" in tty.getvalue() and pipe.getvalue() == ""


def test_wisdom_file_is_written_and_reused(records, tmp_path, capsys):
    wis = tmp_path / "fft.wisdom"
    args = ["analyze", records / "rec0.npz", *REF, "--fft-wisdom", wis]
    status, first, _ = run(capsys, args)
    assert status == 0 and wis.read_text().startswith("ftsource-fftw-wisdom 1\n")
    status, second, _ = run(capsys, args)
    assert status == 0 and second == first  # the same plans' results
    wis.write_text("not wisdom\n")
    status, _, err = run(capsys, args)
    assert status == 2 and "--fft-wisdom" in err


def test_ctrl_c_keeps_completed_records_and_leaves_no_temporary_file(tmp_path):
    folder = tmp_path / "many"
    _records(folder, 8, duration_s=4.0)
    out_dir = tmp_path / "out"
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    # A process started in the background by a non-interactive shell (a CI script's `cmd &`)
    # has Ctrl-C ignored, and children inherit an ignored signal through exec: start the batch
    # with Ctrl-C handled, as from a terminal (a handled signal is reset to the default on exec)
    old = signal.signal(signal.SIGINT, signal.default_int_handler)
    try:
        proc = subprocess.Popen(
            [sys.executable, "-m", "ftsource", "batch", str(folder), "--out", str(out_dir),
             "--workers", "2", *REF],
            stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env, start_new_session=True,
        )
    finally:
        signal.signal(signal.SIGINT, old)
    deadline = time.monotonic() + 300
    while not any(out_dir.glob("rec*/spectrum.ecsv")) and time.monotonic() < deadline:
        if proc.poll() is not None:
            break
        time.sleep(0.05)
    assert proc.poll() is None, "the batch ended before it could be interrupted"
    os.killpg(proc.pid, signal.SIGINT)  # what Ctrl-C in a terminal does: the whole group
    out, err = proc.communicate(timeout=300)
    assert proc.returncode == 130, (out + err).decode()[-3000:]
    assert err.decode().strip().splitlines()[-1] == "error: interrupted"
    assert "Traceback" not in err.decode()
    files = tree(out_dir)
    assert not [f for f in files if "tmp" in f.lower()]  # no temporary file anywhere
    t = Table.read(out_dir / "summary.ecsv", format="ascii.ecsv")
    assert len(t) == 9  # every record is listed
    done = [r for r in t if r["status"] == "ok"]
    assert 1 <= len(done) < 8 and set(t["status"]) <= {"ok", "failed", "not run"}
    for r in done:  # each completed record is whole
        d = json.loads(files[f"{r['output']}/result.json"])
        assert np.isclose(d["summary"]["centre_wavelength_nm"], r["centre_wavelength_nm"])
        assert f"{r['output']}/spectrum.ecsv" in files
    for r in t:
        if r["status"] == "not run":
            assert not any(f.startswith(Path(r["record"]).stem + "/") for f in files)


def _worker_threads() -> dict:
    """Run in a pool worker: its thread-limit variables, and whether numpy was loaded before
    them (it reads them once, when it loads)."""
    env = {k: os.environ.get(k) for k in batch.THREAD_LIMIT_VARIABLES}
    return {"env": env, "pid": os.getpid()}


def test_pool_workers_run_one_blas_thread_each(monkeypatch):
    """Each worker of the command's process pool has every BLAS/OpenMP thread variable at 1
    (common practice: OpenBLAS, MKL and OpenMP read them when they load), set in a fresh
    interpreter before any record is read — even when the parent asks for more threads."""
    monkeypatch.setenv("OMP_NUM_THREADS", "8")
    monkeypatch.setenv("OPENBLAS_NUM_THREADS", "8")
    with batch.process_pool(2) as ex:
        assert ex._mp_context.get_start_method() == "spawn"
        outs = [f.result() for f in [ex.submit(_worker_threads) for _ in range(4)]]
    assert {o["pid"] for o in outs} - {os.getpid()}  # ran in other processes
    for o in outs:
        assert o["env"] == {k: "1" for k in batch.THREAD_LIMIT_VARIABLES}
    assert os.environ["OMP_NUM_THREADS"] == "8"  # the parent's own environment is untouched


def _openblas_threads() -> int:
    """Run in a pool worker: load numpy and ask its bundled OpenBLAS how many threads it
    runs (OpenBLAS's own ``openblas_get_num_threads``, found in the process's memory map)."""
    import ctypes

    import numpy  # noqa: F401 - loads OpenBLAS

    libs = {line.split()[-1] for line in open("/proc/self/maps") if "openblas" in line}
    for lib in sorted(libs):
        cdll = ctypes.CDLL(lib)
        for sym in ("scipy_openblas_get_num_threads64_", "openblas_get_num_threads64_",
                    "openblas_get_num_threads"):
            if hasattr(cdll, sym):
                return int(getattr(cdll, sym)())
    raise AssertionError(f"no OpenBLAS found among {libs}")


def test_worker_numpy_loads_single_threaded(monkeypatch):
    """numpy loaded in a pool worker runs its OpenBLAS with one thread, even when the parent's
    environment asks for 8 (OpenBLAS reads OPENBLAS_NUM_THREADS when it loads: its own
    documentation)."""
    monkeypatch.setenv("OPENBLAS_NUM_THREADS", "8")
    monkeypatch.setenv("OMP_NUM_THREADS", "8")
    with batch.process_pool(1) as ex:
        assert ex.submit(_openblas_threads).result() == 1
