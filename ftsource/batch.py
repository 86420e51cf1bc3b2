"""Many records at once: each analysed in its own task, one summary table for all.

:func:`find_records` expands a folder or a glob pattern into record files; :func:`run_batch`
analyses them on any :class:`concurrent.futures.Executor` — a process pool by default, or a
Dask distributed cluster through ``Client.get_executor()`` — or in this process when no
executor is given. Workers never write files: each returns its result's bytes
(:func:`ftsource.report.text.output_payloads`) and this process writes them, each record's
folder all or nothing, as soon as the record is done. So an interrupted batch leaves every
completed record's outputs whole and no temporary file, and a cluster needs no shared disk.

The summary table (ECSV, :data:`SUMMARY_COLUMNS`) has one row per record in the order of
:func:`find_records`; a record that failed is listed with its error, one that did not run
(interrupted batch) says so. Rows hold no timings, so a serial, process-parallel and Dask
run give the same table.
"""

from __future__ import annotations

import glob
import os
from concurrent.futures import CancelledError, as_completed
from dataclasses import dataclass, field
from pathlib import Path

from ftsource.errors import FtsourceError, OptionError

__all__ = [
    "BatchJob",
    "JobOutcome",
    "SUMMARY_COLUMNS",
    "RECORD_SUFFIXES",
    "find_records",
    "plan_jobs",
    "run_job",
    "run_batch",
    "summary_table",
    "write_summary",
    "ignore_interrupts",
    "init_worker",
    "process_pool",
    "THREAD_LIMIT_VARIABLES",
]

#: File name endings taken as records when a folder is given.
RECORD_SUFFIXES = (".csv", ".tsv", ".txt", ".dat", ".npz", ".npy", ".raw", ".wav")
#: The summary table's columns: name, unit (or ""), description.
SUMMARY_COLUMNS = (
    ("record", "", "the record file as found"),
    ("output", "", "folder of the record's result.json and spectrum.ecsv, under the batch's "
                   "output folder (empty when it failed)"),
    ("status", "", "ok, failed, or not run (the batch was interrupted)"),
    ("error", "", "why the record failed (empty when ok)"),
    ("kind", "", "the source's kind, as summary.kind of result.json"),
    ("centre_wavelength_nm", "nm", "vacuum centre wavelength of the main line"),
    ("u_centre_wavelength_nm", "nm", "its standard uncertainty"),
    ("expanded_uncertainty_nm", "nm", "its expanded uncertainty (coverage factor in result.json)"),
    ("fwhm_nm", "nm", "summary.fwhm_nm: the main line's FWHM when resolved (the modes' envelope "
                "for a multimode laser)"),
    ("n_lines", "", "number of spectral features listed in result.json"),
    ("n_warnings", "", "number of warnings in result.json"),
)
_FLOATS = ("centre_wavelength_nm", "u_centre_wavelength_nm", "expanded_uncertainty_nm", "fwhm_nm")
_INTS = ("n_lines", "n_warnings")


@dataclass(frozen=True)
class BatchJob:
    """One record to analyse: where it is, its output folder's name and how to analyse it."""

    path: str
    name: str
    options: object
    columns: str | None = None
    sample_rate: str | None = None
    fft_planning: str = "estimate"
    fft_threads: int = 1
    wisdom: tuple[bytes, ...] | None = None


@dataclass(frozen=True)
class JobOutcome:
    """What a worker returns: the summary row and, when the record could be analysed, the
    bytes of its output files."""

    row: dict
    payloads: dict[str, bytes] | None = None


@dataclass
class BatchResult:
    """The rows of a batch (in record order) and whether it was interrupted."""

    rows: list[dict]
    interrupted: bool = False
    written: list[Path] = field(default_factory=list)

    @property
    def n_failed(self) -> int:
        return sum(r["status"] != "ok" for r in self.rows)


def find_records(spec: str) -> list[str]:
    """Record files of a folder (its files ending in :data:`RECORD_SUFFIXES`, not recursing)
    or of a glob pattern (``**`` recurses), sorted.

    Raises
    ------
    OptionError
        When nothing matches.
    """
    if os.path.isdir(spec):
        found = [str(p) for p in sorted(Path(spec).iterdir())
                 if p.is_file() and p.suffix.lower() in RECORD_SUFFIXES]
        where = f"the folder {spec} holds no record file ({', '.join(RECORD_SUFFIXES)})"
    else:
        found = sorted(p for p in glob.glob(spec, recursive=True) if os.path.isfile(p))
        where = f"the pattern {spec!r} matches no file"
    if not found:
        raise OptionError(f"batch: {where}; give a folder of records or a pattern such as "
                          "'runs/*.npz'")
    return found


def plan_jobs(paths, options, **settings) -> list[BatchJob]:
    """One job per record; output folder names are the file stems, made unique in order by
    ``-2``, ``-3``... (records of the same name in different folders)."""
    jobs, used = [], set()
    for p in paths:
        stem = Path(p).stem or "record"
        name, k = stem, 1
        while name.lower() in used:
            k += 1
            name = f"{stem}-{k}"
        used.add(name.lower())
        jobs.append(BatchJob(str(p), name, options, **settings))
    return jobs


def _empty_row(job: BatchJob, status: str, error: str) -> dict:
    row = {"record": job.path, "output": "", "status": status, "error": error, "kind": ""}
    row.update({k: float("nan") for k in _FLOATS})
    row.update({k: -1 for k in _INTS})
    return row


def run_job(job: BatchJob) -> JobOutcome:
    """Analyse one record (in a worker); an error the record or options cause, or a bug,
    becomes a failed row with its one-line message — never an exception, never a lost row."""
    import warnings

    from ftsource.analysis import analyze
    from ftsource.errors import FtsourceWarning
    from ftsource.io.records import read_record
    from ftsource.report.text import output_payloads
    from ftsource.spectrum.transform import FFTPlanner

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", FtsourceWarning)  # they are in the result
            record = read_record(job.path, columns=job.columns, sample_rate=job.sample_rate)
            planner = FFTPlanner(effort=job.fft_planning, threads=job.fft_threads,
                                 wisdom=job.wisdom)
            result = analyze(record, job.options, planner=planner)
            payloads = output_payloads(result)
            d = result.to_dict()
    except (FtsourceError, OSError) as exc:
        return JobOutcome(_empty_row(job, "failed", _one_line(exc)))
    except MemoryError:
        return JobOutcome(_empty_row(job, "failed", "not enough memory for this record"))
    except Exception as exc:  # noqa: BLE001 - a bug fails this record, not the batch
        return JobOutcome(_empty_row(
            job, "failed", f"internal error ({type(exc).__name__}: {_one_line(exc)})"))
    s = d.get("summary") or {}
    row = _empty_row(job, "ok", "")
    row["output"] = job.name
    row["kind"] = str(s.get("kind") or "")
    for k in _FLOATS:
        v = s.get(k)
        row[k] = float(v) if isinstance(v, (int, float)) else float("nan")
    row["n_lines"] = len(d.get("lines") or [])
    row["n_warnings"] = len(d.get("warnings") or [])
    return JobOutcome(row, payloads)


#: Environment variables that cap the threads of the BLAS/OpenMP libraries numpy and scipy may
#: load (OpenMP, OpenBLAS, MKL, BLIS, Accelerate, numexpr): each worker gets 1, so N workers
#: use N cores rather than N × cores threads fighting over them.
THREAD_LIMIT_VARIABLES = (
    "OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "BLIS_NUM_THREADS",
    "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS",
)


def init_worker() -> None:
    """Process-pool worker initializer: one BLAS/OpenMP thread per worker, and Ctrl-C left to
    the main process (:func:`ignore_interrupts`).

    The variables of :data:`THREAD_LIMIT_VARIABLES` are read when a library loads, so the
    pool starts its workers fresh (``spawn``, :func:`process_pool`) and this runs before the
    first record imports numpy. Libraries already loaded (a worker forked from a process
    that imported numpy) are limited at run time when ``threadpoolctl`` is installed.
    """
    ignore_interrupts()
    for name in THREAD_LIMIT_VARIABLES:
        os.environ[name] = "1"
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:
        return
    threadpool_limits(1)


def process_pool(workers: int):
    """A process pool of ``workers`` fresh interpreters, each set up by :func:`init_worker`
    (one BLAS/OpenMP thread each, Ctrl-C ignored)."""
    import multiprocessing
    import signal
    import threading
    from concurrent.futures import ProcessPoolExecutor

    ex = ProcessPoolExecutor(max_workers=workers, initializer=init_worker,
                             mp_context=multiprocessing.get_context("spawn"))
    if threading.current_thread() is not threading.main_thread():
        return ex  # only the main thread may change signal handlers
    # Start every worker now with Ctrl-C ignored: a process inherits an ignored SIGINT
    # through exec (POSIX), so a Ctrl-C while a worker is still starting, before its
    # initializer runs, cannot kill it and break the pool (the records in flight would then
    # fail instead of being finished and written). The pool spawns one worker per task
    # submitted while none is idle.
    old = signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        for _ in range(workers):
            ex.submit(_started)
    finally:
        signal.signal(signal.SIGINT, old)
    return ex


def _started() -> bool:
    """A task that does nothing: it makes the pool start a worker."""
    return True


def ignore_interrupts() -> None:
    """Worker initializer: Ctrl-C reaches the whole process group; only the main process
    handles it (it stops submitting, lets the records in flight finish and writes them)."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _one_line(exc) -> str:
    from ftsource._checks import one_line

    return one_line(exc) or type(exc).__name__


class _Progress:
    """``k/n records`` on one terminal line, rewritten in place; silent when not a terminal."""

    def __init__(self, stream, total: int):
        self.stream = stream
        self.total = total
        self.done = 0
        self.failed = 0
        self.on = bool(stream is not None and getattr(stream, "isatty", lambda: False)())

    def step(self, ok: bool) -> None:
        self.done += 1
        self.failed += not ok
        if self.on:
            width = 30
            fill = width * self.done // max(self.total, 1)
            self.stream.write(f"\r[{'#' * fill}{'.' * (width - fill)}] {self.done}/{self.total}"
                              f" records, {self.failed} failed")
            self.stream.flush()

    def close(self) -> None:
        if self.on and self.done:
            self.stream.write("\n")
            self.stream.flush()


def run_batch(jobs, out_dir, *, executor=None, overwrite: bool = False,
              progress=None) -> BatchResult:
    """Run ``jobs`` and write every record's outputs and ``summary.ecsv`` into ``out_dir``.

    Parameters
    ----------
    jobs : list of BatchJob
        From :func:`plan_jobs`.
    out_dir : path-like
        Output folder (created). Each record's files go to ``out_dir/<job.name>/``.
    executor : concurrent.futures.Executor, optional
        Where the jobs run (a process pool, or ``distributed.Client.get_executor()``); in
        this process, one after the other, when None.
    overwrite : bool
        Replace existing outputs.
    progress : text stream, optional
        A progress line is drawn there when it is a terminal.

    Returns
    -------
    BatchResult
        With ``interrupted`` True when a KeyboardInterrupt stopped it: the records done by
        then are written and listed, the others are rows with status ``not run``.
    """
    from ftsource.report.text import check_outputs, write_payloads

    out = Path(out_dir)
    summary = out / "summary.ecsv"
    if summary.exists() and not overwrite:
        raise OptionError(f"--out {out}: summary.ecsv exists already; use --overwrite")
    for job in jobs:
        check_outputs(out / job.name, overwrite=overwrite)
    out.mkdir(parents=True, exist_ok=True)
    rows: list[dict | None] = [None] * len(jobs)
    bar = _Progress(progress, len(jobs))
    written: list[Path] = []

    def finish(k: int, outcome: JobOutcome) -> None:
        if outcome.payloads is not None:
            written.extend(write_payloads(outcome.payloads, out / jobs[k].name,
                                          overwrite=overwrite))
        rows[k] = outcome.row
        bar.step(outcome.row["status"] == "ok")

    interrupted = False
    futures: dict = {}
    try:
        if executor is None:
            for k, job in enumerate(jobs):
                finish(k, run_job(job))
        else:
            futures = {executor.submit(run_job, job): k for k, job in enumerate(jobs)}
            for fut in as_completed(futures):
                finish(futures[fut], fut.result())
    except KeyboardInterrupt:
        interrupted = True
        for fut in futures:
            fut.cancel()
        if executor is not None:  # let the records in flight finish: they are written too
            try:
                executor.shutdown(wait=True, cancel_futures=True)
            except TypeError:  # an executor without cancel_futures (Dask's)
                executor.shutdown(wait=True)
        for fut, k in futures.items():  # results that arrived meanwhile are kept too
            if rows[k] is None and fut.done() and not fut.cancelled():
                try:
                    outcome = fut.result(timeout=0)
                except (BaseException, CancelledError):  # noqa: BLE001 - interrupted worker
                    continue
                finish(k, outcome)
    finally:
        bar.close()
    final = [r if r is not None else _empty_row(j, "not run", "the batch was interrupted")
             for r, j in zip(rows, jobs, strict=True)]
    write_summary(final, summary)
    return BatchResult(final, interrupted, written)


def summary_table(rows):
    """The summary rows as an astropy Table with units and column descriptions."""
    import numpy as np
    from astropy.table import Table

    t = Table()
    for name, unit, desc in SUMMARY_COLUMNS:
        vals = [r[name] for r in rows]
        if name in _FLOATS:
            col = np.array(vals, dtype=float)
        elif name in _INTS:
            col = np.array(vals, dtype=np.int64)
        else:
            col = np.array([str(v) for v in vals], dtype=str) if vals else np.array([], str)
        t[name] = col
        t[name].description = desc
        if unit:
            t[name].unit = unit
    t.meta["description"] = ("ftsource batch summary: one row per record; NaN where a figure "
                             "does not apply or the record failed, -1 for counts of a record "
                             "that failed")
    return t


def write_summary(rows, path) -> None:
    """Write :func:`summary_table` as ECSV, atomically."""
    import io

    from ftsource.io.records import atomic_write

    buf = io.StringIO()
    summary_table(rows).write(buf, format="ascii.ecsv")
    data = buf.getvalue().encode("utf-8")
    atomic_write(path, lambda fh: fh.write(data), overwrite=True)
