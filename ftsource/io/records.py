"""Read and write records: tables of samples taken at a constant rate.

A record holds the columns named in ``docs/contract.md`` (``time``, ``signal``, ``ref``,
``ref_i``, ``ref_q``, ``position``) as read-only float64 arrays, the sample rate when it is
known, and the metadata found in the file. Three file forms are read:

* text tables (``.csv``, ``.tsv``, ``.txt``, ``.dat``): ``#`` comments, ``# key = value``
  metadata lines before the data, one header line naming the columns, then numbers separated by
  commas, tabs, semicolons or whitespace (sniffed from the header line);
* NumPy ``.npz`` archives, one 1-D array per column and an optional ``metadata`` array of
  ``key = value`` strings (pickled objects are refused);
* WAV files (16-, 24-, 32-bit integer PCM, 8-bit unsigned PCM, 32- or 64-bit float), one
  channel per column, scaled so that integer full scale is 1.0;
* NumPy ``.npy`` arrays (a structured array of named columns, a 2-D array of channels or a
  1-D signal) and raw binary files (``.raw``: interleaved samples of one numeric type, laid
  out by a ``<file>.meta`` sidecar of ``key = value`` lines).

``.npy``, raw and WAV files are memory-mapped, never read whole: a column stored as
little-endian float64 becomes a read-only view of the file (its pages are read when used and
can be dropped again by the operating system), and any other sample type is converted to
float64 in blocks of :data:`CHUNK_SAMPLES` samples. Checks over whole columns (finite values,
increasing time) run block by block too, so reading needs no full-length temporary array.

The rules, the metadata keys and every error message with its fix are in ``docs/records.md``.
"""

from __future__ import annotations

import itertools
import math
import os
import re
import stat
import struct
import tempfile
import warnings
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np

from ftsource._checks import one_line, quote
from ftsource.errors import FtsourceError, OptionError, OutputError, RecordError

__all__ = [
    "Record",
    "atomic_write",
    "read_record",
    "parse_column_map",
    "write_record_csv",
    "write_record_npz",
    "write_record_wav",
    "COLUMN_NAMES",
    "MIN_SAMPLES",
    "TEXT_EXTENSIONS",
    "RATE_TOLERANCE",
    "KNOWN_KEYS",
    "CHUNK_SAMPLES",
    "RECORD_EXTENSIONS",
    "RAW_DTYPES",
]

#: The column names of the contract; ``--columns`` may map only onto these.
COLUMN_NAMES = ("time", "signal", "ref", "ref_i", "ref_q", "position")
#: Fewest samples a record may hold.
MIN_SAMPLES = 64
TEXT_EXTENSIONS = (".csv", ".tsv", ".txt", ".dat")
#: Every extension :func:`read_record` reads (case-insensitive).
RECORD_EXTENSIONS = TEXT_EXTENSIONS + (".npz", ".npy", ".raw", ".wav")
#: Samples per block when a whole column is converted or checked.
CHUNK_SAMPLES = 1 << 20
#: Sample types a raw binary file may declare in its sidecar (``dtype = ...``), with an
#: optional byte order prefix ``<`` (little, the default) or ``>`` (big).
RAW_DTYPES = ("int8", "uint8", "int16", "uint16", "int32", "uint32", "int64", "float32",
              "float64")
#: Relative difference allowed between two statements of the sample rate (time column versus
#: metadata or argument) before they are called a conflict.
RATE_TOLERANCE = 1e-3

_WAV_DEFAULTS = {
    1: ("signal",),
    2: ("signal", "ref"),
    3: ("signal", "ref_i", "ref_q"),
}
_SOURCE_FORMATS = ("text", "npz", "npy", "raw", "wav", "memory")
_KEY = re.compile(r"^[A-Za-z_][A-Za-z0-9_.\-]{0,63}$")
#: Metadata keys the analysis uses (docs/contract.md); a conflicting repeat of one is an error.
KNOWN_KEYS = (
    "sample_rate", "reference_wavelength", "position_unit", "air_temperature", "air_pressure",
    "air_humidity", "description",
)
_METADATA_LINE = re.compile(r"^#\s*(?P<key>[^=#]+?)\s*=\s*(?P<value>.*?)\s*$")


def _norm_key(key: str) -> str:
    return re.sub(r"[\s\-.]+", "_", key.strip().lower())


# --------------------------------------------------------------------------------------------
# Record
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class Record:
    """Samples of one recording, as read from a file or made in memory.

    Parameters
    ----------
    columns : mapping of str to array_like
        Column name (matched case-insensitively, stored in lower case) to 1-D samples. All
        columns have the same length, at least :data:`MIN_SAMPLES`, and finite values. A
        ``signal`` column is required; ``ref_i`` and ``ref_q`` come as a pair; a ``time``
        column must increase strictly.
    sample_rate_hz : float or None
        Samples per second, when known.
    metadata : mapping of str to str
        ``key = value`` pairs from the file, keys in lower case with ``_`` for spaces.
    path : str
        Where the record came from (``"<memory>"`` for one made in memory).
    source_format : str
        ``'text'``, ``'npz'``, ``'npy'``, ``'raw'``, ``'wav'`` or ``'memory'``.

    Notes
    -----
    Arrays are stored as read-only float64 arrays; arrays given by the caller are copied unless
    they are already read-only float64, so the caller's data are never changed.

    References
    ----------
    .. [1] ftsource contract, ``docs/contract.md``, section "Record columns".
    """

    columns: Mapping[str, np.ndarray]
    sample_rate_hz: float | None = None
    metadata: Mapping[str, str] = field(default_factory=dict)
    path: str = "<memory>"
    source_format: str = "memory"

    def __post_init__(self) -> None:
        where = str(self.path)
        object.__setattr__(self, "path", where)
        if self.source_format not in _SOURCE_FORMATS:
            raise ValueError(
                f"source_format {self.source_format!r} is not one of {', '.join(_SOURCE_FORMATS)}"
            )
        if not isinstance(self.columns, Mapping) or not self.columns:
            raise RecordError(f"{where}: holds no columns; a record needs at least 'signal'")
        cols: dict[str, np.ndarray] = {}
        n = None
        for raw_name, values in self.columns.items():
            if not isinstance(raw_name, str) or not raw_name.strip():
                raise RecordError(f"{where}: column name {quote(raw_name)} is not a name")
            name = raw_name.strip().lower()
            if name in cols:
                raise RecordError(
                    f"{where}: column {quote(name)} appears twice (names ignore case)"
                )
            arr = _as_readonly_float(values, where=where, name=name)
            if n is None:
                n = arr.shape[0]
            elif arr.shape[0] != n:
                raise RecordError(
                    f"{where}: column {quote(name)} has {arr.shape[0]} samples but "
                    f"{quote(next(iter(cols)))} has {n}; all columns need the same length"
                )
            bad = _first_nonfinite(arr)
            if bad is not None:
                raise RecordError(
                    f"{where}: column {quote(name)} holds a non-finite value "
                    f"({arr[bad]}) at sample {bad}; remove or fill the gap"
                )
            cols[name] = arr
        assert n is not None
        if n < MIN_SAMPLES:
            raise RecordError(
                f"{where}: holds {n} sample{'s' if n != 1 else ''}; at least {MIN_SAMPLES} "
                "are needed"
            )
        if "signal" not in cols:
            raise RecordError(
                f"{where}: has no 'signal' column (columns: {', '.join(cols)}); name the "
                "detector column 'signal' or map it with --columns signal=NAME"
            )
        if ("ref_i" in cols) != ("ref_q" in cols):
            have, lack = ("ref_i", "ref_q") if "ref_i" in cols else ("ref_q", "ref_i")
            raise RecordError(
                f"{where}: has '{have}' but no '{lack}'; a quadrature reference needs both "
                "(or name a single reference channel 'ref')"
            )
        if "time" in cols:
            _check_time(cols["time"], where=where)
        rate = self.sample_rate_hz
        if rate is not None:
            rate = _check_rate(rate, where=where, name="sample rate")
            if "time" in cols:
                t = cols["time"]
                t_rate = (t.size - 1) / (t[-1] - t[0])
                if abs(t_rate - rate) > RATE_TOLERANCE * t_rate:
                    raise RecordError(
                        f"{where}: the 'time' column gives {t_rate:.6g} Hz but the sample rate "
                        f"is {rate:.6g} Hz; they must agree"
                    )
        object.__setattr__(self, "sample_rate_hz", rate)
        object.__setattr__(self, "columns", MappingProxyType(cols))
        meta = {}
        for k, v in dict(self.metadata or {}).items():
            if not isinstance(k, str) or not isinstance(v, str):
                raise RecordError(f"{where}: metadata must map text to text, got {quote(k)}")
            meta[_norm_key(k)] = v
        object.__setattr__(self, "metadata", MappingProxyType(meta))

    @property
    def n_samples(self) -> int:
        """Number of samples in every column."""
        return int(next(iter(self.columns.values())).shape[0])

    def has(self, name: str) -> bool:
        """Whether the record holds column ``name`` (case-insensitive)."""
        return name.strip().lower() in self.columns

    def __getitem__(self, name: str) -> np.ndarray:
        key = name.strip().lower()
        if key not in self.columns:
            raise RecordError(
                f"{self.path}: has no column {quote(name)} (columns: {', '.join(self.columns)})"
            )
        return self.columns[key]

    @property
    def time(self) -> np.ndarray:
        """Sample times in s: the ``time`` column, else ``arange(n) / sample_rate_hz``.

        Raises
        ------
        RecordError
            If the record has neither a ``time`` column nor a sample rate.
        """
        if "time" in self.columns:
            return self.columns["time"]
        if self.sample_rate_hz is None:
            raise RecordError(
                f"{self.path}: has no 'time' column and no sample rate; give --sample-rate "
                "(e.g. '48 kHz') or a '# sample_rate = 48 kHz' metadata line"
            )
        t = np.arange(self.n_samples, dtype=np.float64) / self.sample_rate_hz
        t.flags.writeable = False
        return t

    @property
    def time_jitter(self) -> float | None:
        """Largest deviation of a time step from the mean step, relative to the mean step.

        ``None`` without a ``time`` column. A few parts in 1e6 are rounding of written time
        stamps; values near 1 or above mean dropped or repeated samples.
        """
        if "time" not in self.columns:
            return None
        return _relative_jitter(self.columns["time"])

    def opd_source(self) -> str | None:
        """Which optical-path source the columns allow, in the contract's order of preference.

        Returns
        -------
        {'quadrature', 'single', 'encoder', None}
            ``'quadrature'`` with ``ref_i`` and ``ref_q``, ``'single'`` with ``ref``,
            ``'encoder'`` with ``position``; ``None`` when there is none (the pipeline then
            needs a mirror speed).
        """
        if "ref_i" in self.columns and "ref_q" in self.columns:
            return "quadrature"
        if "ref" in self.columns:
            return "single"
        if "position" in self.columns:
            return "encoder"
        return None

    @property
    def position_m(self) -> np.ndarray:
        """The ``position`` column in metres, using the ``position_unit`` metadata (default m).

        Raises
        ------
        RecordError
            Without a ``position`` column, or if ``position_unit`` is not a length unit.
        """
        pos = self["position"]
        unit_text = self.metadata.get("position_unit", "m")
        scale = _position_scale(unit_text, where=self.path)
        out = pos * scale
        out.flags.writeable = False
        return out

    def metadata_quantity(self, key: str, physical_type: str):
        """Parse metadata ``key`` as a quantity, or return ``None`` when the key is absent.

        Parameters
        ----------
        key : str
            A metadata key such as ``'reference_wavelength'`` or ``'air_temperature'``.
        physical_type : str
            See :func:`ftsource.quantity.parse_quantity`.

        Returns
        -------
        astropy.units.Quantity or None

        Raises
        ------
        RecordError
            If the value is present but not a valid quantity of that type.
        """
        from ftsource.quantity import parse_quantity

        k = _norm_key(key)
        if k not in self.metadata:
            return None
        try:
            return parse_quantity(
                self.metadata[k], physical_type=physical_type, name=f"{self.path}: metadata {k}"
            )
        except OptionError as exc:
            raise RecordError(str(exc)) from None


def _as_readonly_float(values: Any, *, where: str, name: str) -> np.ndarray:
    if isinstance(values, np.ndarray) and values.dtype == np.float64 and not values.flags.writeable:
        arr = values
    else:
        try:
            src = np.asarray(values)
        except Exception:
            raise RecordError(f"{where}: column {quote(name)} is not an array of numbers") from None
        if src.dtype.kind not in "biuf":
            raise RecordError(
                f"{where}: column {quote(name)} holds {src.dtype} values; numbers are needed"
            )
        arr = np.array(src, dtype=np.float64, copy=True)
    if arr.ndim != 1:
        raise RecordError(
            f"{where}: column {quote(name)} has shape {arr.shape}; each column must be 1-D"
        )
    if arr.flags.writeable:
        arr.flags.writeable = False
    return arr


def _blocks(n: int, step: int = CHUNK_SAMPLES):
    """``(start, stop)`` of consecutive blocks of at most ``step`` samples covering ``n``."""
    return ((a, min(a + step, n)) for a in range(0, n, step))


def _first_nonfinite(arr: np.ndarray) -> int | None:
    """Index of the first NaN or infinity of ``arr``, or None (checked block by block)."""
    for a, b in _blocks(arr.shape[0]):
        bad = np.flatnonzero(~np.isfinite(arr[a:b]))
        if bad.size:
            return a + int(bad[0])
    return None


def _relative_jitter(t: np.ndarray) -> float:
    mean = (t[-1] - t[0]) / (t.size - 1)
    worst = 0.0
    for a, b in _blocks(t.size - 1):
        worst = max(worst, float(np.max(np.abs(np.diff(t[a:b + 1]) - mean))))
    return worst / mean


def _check_time(t: np.ndarray, *, where: str, line_of=None) -> None:
    first = None
    for a, b in _blocks(t.size - 1):
        bad = np.flatnonzero(~(np.diff(t[a:b + 1]) > 0))
        if bad.size:
            first = a + int(bad[0])
            break
    if first is not None:
        i = first + 1
        at = f"line {line_of(i)}" if line_of else f"sample {i}"
        raise RecordError(
            f"{where}: column 'time' does not increase at {at} ({float(t[i - 1])!r} then "
            f"{float(t[i])!r}); "
            "times must increase strictly: sort the rows or remove repeated samples"
        )


def _check_rate(rate: Any, *, where: str, name: str) -> float:
    try:
        value = float(rate)
    except (TypeError, ValueError):
        raise RecordError(f"{where}: {name} {quote(rate)} is not a number of Hz") from None
    if not math.isfinite(value) or value <= 0:
        raise RecordError(
            f"{where}: {name} {value!r} Hz is not allowed; a sample rate is finite and positive"
        )
    return value


def _position_scale(unit_text: str, *, where: str) -> float:
    from ftsource.quantity import parse_quantity

    try:
        q = parse_quantity(f"1 {unit_text}", physical_type="length", name="position_unit")
    except OptionError:
        raise RecordError(
            f"{where}: metadata position_unit = {quote(unit_text)} is not a length unit; "
            "use e.g. 'm', 'mm' or 'um'"
        ) from None
    return float(q.to_value("m"))


# --------------------------------------------------------------------------------------------
# Column mapping
# --------------------------------------------------------------------------------------------


def parse_column_map(text: str | Mapping[str, str], *, name: str = "--columns") -> dict[str, str]:
    """Parse a column mapping such as ``"signal=PD1,ref=2"``.

    Parameters
    ----------
    text : str or mapping
        ``target=source`` pairs separated by commas. Targets are contract column names
        (``time``, ``signal``, ``ref``, ``ref_i``, ``ref_q``, ``position``); sources are
        column names in the file, or 0-based column/channel numbers (``2`` or ``ch2``).
        A mapping is checked the same way.
    name : str
        How the option is named in error messages.

    Returns
    -------
    dict
        Lower-case target to source (source as written, stripped).

    Raises
    ------
    OptionError
        For an empty mapping, an item without ``=``, an unknown target, or a target or source
        named twice.

    References
    ----------
    .. [1] ftsource contract, ``docs/contract.md``, option ``--columns``.
    """
    if isinstance(text, Mapping):
        items = [(str(k), str(v)) for k, v in text.items()]
    elif isinstance(text, str):
        items = []
        for part in text.split(","):
            if not part.strip():
                continue
            if part.count("=") != 1:
                raise OptionError(
                    f"{name}: {quote(part.strip())} is not 'name=column'; "
                    "write e.g. 'signal=PD1,ref=PD2'"
                )
            k, v = part.split("=")
            items.append((k, v))
    else:
        raise OptionError(f"{name}: {quote(text)} is not a column mapping such as 'signal=PD1'")
    if not items:
        raise OptionError(f"{name}: the mapping is empty; write e.g. 'signal=PD1,ref=PD2'")
    out: dict[str, str] = {}
    sources: dict[str, str] = {}
    for k, v in items:
        target = k.strip().lower()
        source = v.strip()
        if target not in COLUMN_NAMES:
            raise OptionError(
                f"{name}: {quote(k.strip())} is not a column name; "
                f"allowed: {', '.join(COLUMN_NAMES)}"
            )
        if not source:
            raise OptionError(f"{name}: {target}= names no column")
        if target in out:
            raise OptionError(f"{name}: {target} is mapped twice")
        skey = _source_key(source)
        if skey in sources:
            raise OptionError(
                f"{name}: column {quote(source)} is mapped to both {sources[skey]} and {target}"
            )
        sources[skey] = target
        out[target] = source
    return out


def _source_key(source: str) -> str:
    s = source.strip().lower()
    m = re.fullmatch(r"(?:ch)?(\d+)", s)
    return f"#{int(m.group(1))}" if m else s


def _apply_map(
    names: list[str], arrays: list[np.ndarray], mapping: dict[str, str] | None, *, where: str,
    allow_index: bool, default_names: tuple[str, ...] | None = None,
) -> dict[str, np.ndarray]:
    """Name the file's columns: by mapping, else by the file's own (or default) names."""
    lower = [n.strip().lower() for n in names]
    if mapping is None:
        final = list(default_names) + lower[len(default_names):] if default_names else lower
        return dict(zip(final, arrays, strict=True))
    renamed: dict[int, str] = {}
    for target, source in mapping.items():
        s = source.strip().lower()
        if s in lower:
            idx = lower.index(s)
        elif allow_index and re.fullmatch(r"(?:ch)?\d+", s):
            idx = int(s.removeprefix("ch"))
            if idx >= len(names):
                count = len(names)
                what = "channel" if default_names is not None else "column"
                extra = (
                    " (mono); a reference needs a second channel: record the reference "
                    "detector on the other channel of the sound card"
                    if count == 1 and what == "channel" else ""
                )
                raise OptionError(
                    f"--columns: {target}={source} names {what} {idx} but {where} has "
                    f"{count} {what}{'s' if count != 1 else ''}{extra}; {what}s are "
                    "numbered from 0"
                )
        else:
            raise OptionError(
                f"--columns: {target}={source}: {where} has no column {quote(source)}; "
                f"available: {', '.join(names)}"
            )
        renamed[idx] = target
    out: dict[str, np.ndarray] = {}
    targets = set(renamed.values())
    for idx, (nm, arr) in enumerate(zip(lower, arrays, strict=True)):
        if idx in renamed:
            out[renamed[idx]] = arr
        elif nm not in targets:
            out[nm] = arr
    # keep mapped columns first, in contract order, for a tidy listing
    order = [c for c in COLUMN_NAMES if c in out] + [c for c in out if c not in COLUMN_NAMES]
    return {c: out[c] for c in order}


# --------------------------------------------------------------------------------------------
# Reading
# --------------------------------------------------------------------------------------------


def read_record(
    path: str | os.PathLike,
    *,
    columns: str | Mapping[str, str] | None = None,
    sample_rate: Any = None,
) -> Record:
    """Read a record file (text table, ``.npz``, ``.npy``, raw binary or ``.wav``) into a
    :class:`Record`.

    Parameters
    ----------
    path : str or path-like
        The file. Its extension chooses the reader: ``.csv``, ``.tsv``, ``.txt``, ``.dat``
        (text), ``.npz``, ``.npy``, ``.raw`` (with its ``.meta`` sidecar), ``.wav``
        (case-insensitive). ``.npy``, ``.raw`` and ``.wav`` are memory-mapped, not read whole.
    columns : str or mapping, optional
        Column mapping, see :func:`parse_column_map`. Without it, text and ``.npz`` columns
        keep their names and WAV channels are named by count (1: ``signal``; 2: ``signal,
        ref``; 3: ``signal, ref_i, ref_q``; more: the first three as for 3, then ``ch3``,
        ``ch4``, ...).
    sample_rate : Quantity, str or float, optional
        Sample rate (a float is in Hz). Overrides the ``sample_rate`` metadata and a WAV
        header's rate; must agree (within :data:`RATE_TOLERANCE`) with a ``time`` column.

    Returns
    -------
    Record

    Raises
    ------
    RecordError
        If the file is missing, unreadable, malformed, too short, holds non-finite values or
        pickled objects, or states conflicting sample rates.
    OptionError
        If ``columns`` or ``sample_rate`` is not valid, or ``columns`` names a column the file
        does not have.

    References
    ----------
    .. [1] ftsource contract, ``docs/contract.md``: record columns, file forms and metadata.
    .. [2] IBM and Microsoft, "Multimedia Programming Interface and Data Specifications 1.0"
       (1991): the RIFF WAVE layout.
    .. [3] NumPy Enhancement Proposal 1, "A simple file format for NumPy arrays" (``.npz``).
    """
    where = os.fspath(path) if isinstance(path, (str, os.PathLike)) else None
    if not isinstance(where, str):
        raise RecordError(f"record path {quote(path)} is not a file name")
    if not where.strip():
        raise RecordError("the record file name is empty")
    mapping = parse_column_map(columns) if columns is not None else None
    rate_arg = _rate_argument(sample_rate) if sample_rate is not None else None
    if not os.path.exists(where):
        raise RecordError(f"{where}: no such file")
    if os.path.isdir(where):
        raise RecordError(f"{where}: is a directory, not a record file")
    ext = os.path.splitext(where)[1].lower()
    if ext not in RECORD_EXTENSIONS:
        raise RecordError(
            f"{where}: the extension {quote(ext or '(none)')} is not a record form; use "
            f"{', '.join(RECORD_EXTENSIONS[:-1])} or {RECORD_EXTENSIONS[-1]}"
        )
    try:
        info = os.stat(where)
        if not stat.S_ISREG(info.st_mode):
            # a pipe would block and a device never ends: only plain files are records
            raise RecordError(f"{where}: is not a regular file (a device, pipe or socket)")
        size = info.st_size
        if size == 0:
            raise RecordError(f"{where}: is empty")
        with open(where, "rb") as fh:
            head = fh.read(16)
    except OSError as exc:
        raise RecordError(f"{where}: cannot be read ({exc.strerror or exc})") from None
    try:
        if ext == ".npz":
            return _read_npz(where, head, mapping, rate_arg)
        if ext == ".npy":
            return _read_npy(where, head, mapping, rate_arg)
        if ext == ".raw":
            return _read_raw(where, mapping, rate_arg)
        if ext == ".wav":
            return _read_wav(where, mapping, rate_arg)
        return _read_text(where, head, mapping, rate_arg)
    except OSError as exc:
        raise RecordError(f"{where}: cannot be read ({exc.strerror or exc})") from None
    except MemoryError:
        raise RecordError(f"{where}: is too large to read into memory") from None


def _rate_argument(sample_rate: Any) -> float:
    from ftsource.quantity import to_float

    if _is_number(sample_rate):
        value = float(sample_rate)
    else:
        value = to_float(sample_rate, "Hz", name="sample_rate")
    if not math.isfinite(value) or value <= 0:
        raise OptionError(
            f"sample_rate: {quote(sample_rate)} is not allowed; a sample rate is finite and "
            "positive, e.g. '48 kHz'"
        )
    return value


def _is_number(x: Any) -> bool:
    return isinstance(x, (int, float, np.integer, np.floating)) and not isinstance(x, bool)


def _metadata_rate(meta: dict[str, str], where: str) -> float | None:
    if "sample_rate" not in meta:
        return None
    from ftsource.quantity import parse_quantity

    try:
        q = parse_quantity(
            meta["sample_rate"], physical_type="frequency", name=f"{where}: metadata sample_rate"
        )
    except OptionError as exc:
        raise RecordError(str(exc)) from None
    value = float(q.to_value("Hz"))
    if value <= 0:
        raise RecordError(
            f"{where}: metadata sample_rate = {quote(meta['sample_rate'])} is not allowed; "
            "a sample rate is positive"
        )
    return value


def _finish(
    where: str, cols: dict[str, np.ndarray], meta: dict[str, str], rate_arg: float | None,
    header_rate: float | None, source_format: str, *, line_of=None,
    header_label: str = "sample_rate metadata",
) -> Record:
    """Check finiteness and time, settle the sample rate, and build the Record."""
    for name, arr in cols.items():
        bad = _first_nonfinite(arr)
        if bad is not None:
            i = bad
            at = f"line {line_of(i)}" if line_of else f"sample {i}"
            raise RecordError(
                f"{where}: column {quote(name)} holds a non-finite value ({arr[i]}) at {at}; "
                "remove or fill the gap"
            )
    n = next(iter(cols.values())).shape[0] if cols else 0
    if n < MIN_SAMPLES:
        raise RecordError(
            f"{where}: holds {n} sample{'s' if n != 1 else ''}; at least {MIN_SAMPLES} are "
            "needed"
        )
    rate = rate_arg if rate_arg is not None else header_rate
    if "time" in cols:
        t = cols["time"]
        _check_time(t, where=where, line_of=line_of)
        time_rate = (t.size - 1) / (t[-1] - t[0])
        for given, what in ((rate_arg, "sample_rate argument"), (header_rate, header_label)):
            if given is not None and abs(given - time_rate) > RATE_TOLERANCE * time_rate:
                raise RecordError(
                    f"{where}: the 'time' column gives {time_rate:.6g} Hz but the {what} says "
                    f"{given:.6g} Hz; remove one or make them agree"
                )
        rate = float(time_rate)
    for arr in cols.values():
        arr.flags.writeable = False
    return Record(
        columns=cols, sample_rate_hz=rate, metadata=meta, path=where, source_format=source_format
    )


# ---- text --------------------------------------------------------------------------------


def _decode(line: str) -> str:
    """Lines are read as Latin-1 (never fails); recover UTF-8 text where it is UTF-8."""
    try:
        return line.encode("latin-1").decode("utf-8")
    except UnicodeDecodeError:
        return line


def _split(line: str, delimiter: str | None) -> list[str]:
    parts = line.split(delimiter) if delimiter else line.split()
    return [p.strip().strip('"').strip("'").strip() for p in parts]


def _sniff(header: str) -> str | None:
    for d in (",", "\t", ";"):
        if d in header:
            return d
    return None


def _is_number_text(cell: str) -> bool:
    if "_" in cell:
        return False
    try:
        float(cell)
    except ValueError:
        return False
    return True


def _read_text(where: str, head: bytes, mapping, rate_arg) -> Record:
    if head.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise RecordError(f"{where}: is UTF-16 text; save it as UTF-8 (or ASCII) text")
    if head.startswith((b"PK\x03\x04", b"RIFF", b"\x93NUMPY")):
        raise RecordError(
            f"{where}: is a binary file (.npz, .wav or .npy) with a text extension; "
            "give it its proper extension"
        )
    meta: dict[str, str] = {}
    meta_line: dict[str, int] = {}
    header = None
    header_lineno = 0
    with open(where, encoding="latin-1", newline=None) as fh:
        for lineno, raw in enumerate(fh, start=1):
            if "\x00" in raw:
                raise RecordError(
                    f"{where}: line {lineno} holds NUL bytes; this is not a text table"
                )
            line = _decode(raw)
            if lineno == 1:
                line = line.removeprefix("\ufeff")
            stripped = line.strip()
            if not stripped:
                continue
            if stripped.startswith("#"):
                m = _METADATA_LINE.match(stripped)
                if m and _KEY.match(m.group("key")):
                    key = _norm_key(m.group("key"))
                    value = m.group("value")
                    if key in KNOWN_KEYS and key in meta and meta[key] != value:
                        raise RecordError(
                            f"{where}: metadata {key} is given twice with different values "
                            f"(lines {meta_line[key]} and {lineno}); keep one"
                        )
                    meta[key] = value
                    meta_line[key] = lineno
                continue
            header = line.split("#", 1)[0].strip()
            header_lineno = lineno
            break
    if header is None:
        raise RecordError(
            f"{where}: has no header line and no data; the first line that is not a comment "
            "must name the columns, e.g. 'time,signal,ref'"
        )
    delimiter = _sniff(header)
    names = _split(header, delimiter)
    if all(_is_number_text(c) for c in names):
        raise RecordError(
            f"{where}: line {header_lineno} holds numbers where the header should be; add a "
            "first line naming the columns, e.g. 'time,signal,ref'"
        )
    seen: dict[str, int] = {}
    for i, nm in enumerate(names):
        if not nm or not nm.isprintable() or len(nm) > 64:
            raise RecordError(
                f"{where}: line {header_lineno}: column {i} has no usable name "
                f"({quote(nm)}); name every column in the header"
            )
        if nm.lower() in seen:
            raise RecordError(
                f"{where}: line {header_lineno}: column name {quote(nm)} appears twice "
                "(names ignore case)"
            )
        seen[nm.lower()] = i

    reader = _TextData(where, header_lineno, names, delimiter)
    arrays = reader.read()
    cols = _apply_map(names, arrays, mapping, where=where, allow_index=True)
    header_rate = _metadata_rate(meta, where)
    return _finish(where, cols, meta, rate_arg, header_rate, "text", line_of=reader.line_of)


class _TextData:
    """The data lines of a text table, parsed in blocks.

    Each block of lines goes to :func:`numpy.loadtxt` (fast). A block that it refuses is read
    again cell by cell in Python, which either finds the line and cell at fault for the error
    message or parses what loadtxt did not accept (e.g. a line holding only a comment after
    leading blanks).
    """

    BLOCK = 65536

    def __init__(self, where: str, header_lineno: int, names: list[str], delimiter: str | None):
        self.where = where
        self.header_lineno = header_lineno
        self.names = names
        self.delimiter = delimiter

    def read(self) -> list[np.ndarray]:
        ncol = len(self.names)
        parts: list[list[np.ndarray]] = [[] for _ in range(ncol)]
        total = 0
        with open(self.where, encoding="latin-1", newline=None) as fh:
            for _ in itertools.islice(fh, self.header_lineno):
                pass
            first = self.header_lineno + 1
            while True:
                lines = list(itertools.islice(fh, self.BLOCK))
                if not lines:
                    break
                block = self._fast(lines)
                if block is None:
                    block = self._slow(lines, first)
                for j in range(ncol):
                    parts[j].append(block[:, j])
                total += block.shape[0]
                first += len(lines)
        if total == 0:
            raise RecordError(
                f"{self.where}: has a header (line {self.header_lineno}) but no data rows"
            )
        return [np.concatenate(p) if len(p) > 1 else np.ascontiguousarray(p[0]) for p in parts]

    def _fast(self, lines: list[str]) -> np.ndarray | None:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # "input contained no data": a comment block
                block = np.loadtxt(
                    lines, dtype=np.float64, delimiter=self.delimiter, comments="#",
                    ndmin=2, quotechar='"',
                )
        except (ValueError, IndexError, TypeError):
            return None
        if block.shape[0] == 0:
            return np.empty((0, len(self.names)))
        if block.shape[1] != len(self.names):
            return None
        return block

    def _slow(self, lines: list[str], first: int) -> np.ndarray:
        ncol = len(self.names)
        sep = {",": "commas", "\t": "tabs", ";": "semicolons", None: "whitespace"}
        values: list[float] = []
        for k, raw in enumerate(lines):
            lineno = first + k
            if "\x00" in raw:
                raise RecordError(
                    f"{self.where}: line {lineno} holds NUL bytes; this is not a text table"
                )
            line = raw.split("#", 1)[0].strip()
            if not line:
                continue
            cells = _split(line, self.delimiter)
            if len(cells) != ncol:
                raise RecordError(
                    f"{self.where}: line {lineno} has {len(cells)} value"
                    f"{'s' if len(cells) != 1 else ''} but the header (line "
                    f"{self.header_lineno}) names {ncol} columns ({', '.join(self.names)}); "
                    f"values are separated by {sep[self.delimiter]}"
                )
            for j, cell in enumerate(cells):
                if not _is_number_text(cell):
                    what = "is empty" if not cell else f"holds {quote(cell, 30)}, not a number"
                    hint = (
                        "; use '.' as the decimal mark"
                        if re.fullmatch(r"[+-]?\d+,\d+", cell) else ""
                    )
                    raise RecordError(
                        f"{self.where}: line {lineno}: the cell in column "
                        f"{quote(self.names[j])} {what}{hint}"
                    )
                values.append(float(cell))
        return np.array(values, dtype=np.float64).reshape(-1, ncol)

    def line_of(self, row: int) -> int:
        """File line number of data row ``row`` (0-based); for error messages only."""
        k = -1
        with open(self.where, encoding="latin-1", newline=None) as fh:
            for lineno, raw in enumerate(fh, start=1):
                if lineno <= self.header_lineno or not raw.split("#", 1)[0].strip():
                    continue
                k += 1
                if k == row:
                    return lineno
        return -1


# ---- npz ---------------------------------------------------------------------------------


def _read_npz(where: str, head: bytes, mapping, rate_arg) -> Record:
    if head.startswith(b"\x93NUMPY"):
        raise RecordError(
            f"{where}: holds a single .npy array, not an .npz archive of named columns; save "
            "with numpy.savez(path, signal=..., ref=...)"
        )
    if not head.startswith((b"PK\x03\x04", b"PK\x05\x06")):
        raise RecordError(
            f"{where}: is not an .npz archive (a zip file of .npy arrays, as numpy.savez writes)"
        )
    with open(where, "rb") as fh:
        # numpy.load is given an open file so that a damaged archive cannot leak the handle
        try:
            loaded = np.load(fh, allow_pickle=False)
        except Exception as exc:  # zipfile.BadZipFile, OSError, EOFError, ValueError, ...
            raise RecordError(f"{where}: is a damaged .npz archive ({_one_line(exc)})") from None
        if not isinstance(loaded, np.lib.npyio.NpzFile):
            raise RecordError(f"{where}: is not an .npz archive of named columns")
        with loaded:
            _check_unpacked_size(where, loaded)
            try:
                names, arrays, meta = _npz_members(where, loaded)
            except FtsourceError:
                raise
            except Exception as exc:  # zipfile, zlib, struct, EOF errors of a damaged archive
                raise RecordError(
                    f"{where}: is a damaged .npz archive ({_one_line(exc)})"
                ) from None
    if not names:
        raise RecordError(f"{where}: holds no column arrays; save e.g. signal=..., ref=...")
    lengths = {a.shape[0] for a in arrays}
    if len(lengths) > 1:
        desc = ", ".join(f"{n}: {a.shape[0]}" for n, a in zip(names, arrays, strict=True))
        raise RecordError(f"{where}: columns differ in length ({desc}); all need the same length")
    seen = set()
    for nm in names:
        if nm.strip().lower() in seen:
            raise RecordError(f"{where}: column name {quote(nm)} appears twice (names ignore case)")
        seen.add(nm.strip().lower())
    cols = _apply_map(names, arrays, mapping, where=where, allow_index=False)
    header_rate = _metadata_rate(meta, where)
    return _finish(where, cols, meta, rate_arg, header_rate, "npz")


def _memory_limit() -> int | None:
    """Bytes an archive may unpack to: half the physical memory (None where unknown)."""
    try:
        return os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") // 2
    except (AttributeError, ValueError, OSError):  # not a POSIX system
        return None


def _check_unpacked_size(where: str, loaded) -> None:
    """Refuse an archive whose members unpack to more than :func:`_memory_limit`.

    A compressed archive can be tiny and unpack to many gigabytes (a "zip bomb"); the sizes
    declared in the zip directory bound what reading it can produce, so they are checked
    before anything is unpacked (twice the total: the arrays and their float64 copies).
    """
    limit = _memory_limit()
    if limit is None:
        return
    try:
        infos = loaded.zip.infolist()
    except Exception:  # noqa: BLE001 - a broken directory is reported when members are read
        return
    total = sum(max(int(i.file_size), 0) for i in infos)
    if 2 * total > limit:
        raise RecordError(
            f"{where}: its arrays unpack to {total / 2**20:.0f} MiB, more than this computer's "
            "memory allows for reading; split the record into shorter files"
        )


def _npz_members(
    where: str, loaded
) -> tuple[list[str], list[np.ndarray], dict[str, str]]:
    names: list[str] = []
    arrays: list[np.ndarray] = []
    meta: dict[str, str] = {}
    for key in list(loaded.files):
        try:
            arr = loaded[key]
        except ValueError as exc:
            if "pickle" in str(exc).lower() or "object" in str(exc).lower():
                raise RecordError(
                    f"{where}: refused: holds pickled objects (array {quote(key)}); save "
                    "plain numeric arrays"
                ) from None
            raise
        if not isinstance(arr, np.ndarray):
            raise RecordError(
                f"{where}: member {quote(key)} is not a NumPy array; an .npz record holds "
                "only .npy arrays"
            )
        if key.lower() == "metadata":
            meta = _npz_metadata(arr, where)
            continue
        if arr.dtype.kind not in "biuf":
            raise RecordError(
                f"{where}: array {quote(key)} holds {arr.dtype} values; columns must be "
                "numbers (real integers or floats)"
            )
        if arr.ndim != 1:
            raise RecordError(
                f"{where}: array {quote(key)} has shape {arr.shape}; each column must "
                "be a 1-D array"
            )
        names.append(key)
        arrays.append(np.ascontiguousarray(arr, dtype=np.float64))
    return names, arrays, meta


def _npz_metadata(arr: np.ndarray, where: str) -> dict[str, str]:
    if arr.dtype.kind not in "US" or arr.ndim > 1:
        raise RecordError(
            f"{where}: the 'metadata' array must be 1-D text ('key = value' strings), "
            f"not {arr.dtype} of shape {arr.shape}"
        )
    meta: dict[str, str] = {}
    for item in np.atleast_1d(arr).tolist():
        text = item.decode("utf-8", "replace") if isinstance(item, bytes) else str(item)
        text = text.strip().removeprefix("#").strip()
        if not text:
            continue
        key, eq, value = text.partition("=")
        if not eq or not _KEY.match(key.strip()):
            raise RecordError(
                f"{where}: metadata entry {quote(text)} is not 'key = value'"
            )
        k = _norm_key(key)
        value = value.strip()
        if k in KNOWN_KEYS and k in meta and meta[k] != value:
            raise RecordError(f"{where}: metadata {k} is given twice with different values")
        meta[k] = value
    return meta


def _one_line(exc: BaseException) -> str:
    """A library's exception as part of a one-line message: its type and text."""
    return one_line(f"{type(exc).__name__}: {exc}", 160)


# ---- memory-mapped channels (npy, raw, wav) ----------------------------------------------


@dataclass(frozen=True)
class _Channel:
    """One channel of a memory-mapped file: its samples as stored (a read-only view, maybe
    strided) and the affine map to float64, ``(stored - zero) * scale``."""

    stored: np.ndarray
    scale: float = 1.0
    zero: float = 0.0
    pcm24: bool = False  # stored is (n, 3) little-endian bytes of 24-bit two's complement

    def as_float64(self) -> np.ndarray:
        """The channel as read-only float64: the view itself when the file stores native
        float64 at unit scale, else converted block by block (no whole-file temporary)."""
        src = self.stored
        if (not self.pcm24 and src.dtype == np.float64 and src.dtype.isnative
                and self.scale == 1.0 and self.zero == 0.0):
            out = src.view(np.ndarray)
            out.flags.writeable = False
            return out
        out = np.empty(src.shape[0], dtype=np.float64)
        for a, b in _blocks(src.shape[0]):
            block = _pcm24(src[a:b]) if self.pcm24 else src[a:b]
            np.subtract(block, self.zero, out=out[a:b], dtype=np.float64, casting="unsafe")
            if self.scale != 1.0:
                out[a:b] *= self.scale
        out.flags.writeable = False
        return out


def _pcm24(b: np.ndarray) -> np.ndarray:
    """24-bit little-endian two's-complement samples (rows of 3 bytes) as int32."""
    v = (b[:, 0].astype(np.int32) | (b[:, 1].astype(np.int32) << 8)
         | (b[:, 2].astype(np.int32) << 16))
    return (v << 8) >> 8


def _read_sidecar(where: str, *, required: bool) -> dict[str, str]:
    """The ``key = value`` lines of ``<where>.meta`` (``#`` before a key optional, blank and
    comment lines skipped); ``{}`` when there is none and it is not required."""
    side = where + ".meta"
    if not os.path.isfile(side):
        if required:
            raise RecordError(
                f"{where}: a raw binary record needs the sidecar {side} stating at least "
                "'dtype = int16' (the sample type) and 'channels = signal, ref_i, ref_q' "
                "(the columns in file order); see docs/records.md"
            )
        return {}
    try:
        with open(side, "rb") as fh:
            raw = fh.read((1 << 16) + 1)
    except OSError as exc:
        raise RecordError(f"{side}: cannot be read ({exc.strerror or exc})") from None
    if len(raw) > 1 << 16:
        raise RecordError(f"{side}: is larger than 64 KiB; a sidecar holds a few key = value lines")
    meta: dict[str, str] = {}
    for lineno, line in enumerate(raw.decode("utf-8", "replace").splitlines(), 1):
        text = line.strip().removeprefix("#").strip()
        if not text:
            continue
        key, eq, value = text.partition("=")
        if not eq:
            if line.strip().startswith("#"):
                continue  # a comment
            raise RecordError(f"{side}: line {lineno} {quote(text)} is not 'key = value'")
        if not _KEY.match(key.strip()):
            raise RecordError(f"{side}: line {lineno}: {quote(key.strip())} is not a key")
        k = _norm_key(key)
        if k in meta and meta[k] != value.strip():
            raise RecordError(f"{side}: key {k} is given twice with different values")
        meta[k] = value.strip()
    return meta


def _sidecar_names(where: str, meta: dict[str, str], count: int | None) -> list[str] | None:
    """The column names of the sidecar's ``channels`` key (None without it), checked."""
    text = meta.pop("channels", None)
    if text is None:
        return None
    names = [c.strip() for c in text.split(",")]
    if not all(names):
        raise RecordError(
            f"{where}.meta: channels = {quote(text)} has an empty name; list the columns in "
            "file order, e.g. 'channels = signal, ref_i, ref_q'"
        )
    if count is not None and len(names) != count:
        raise RecordError(
            f"{where}.meta: channels names {len(names)} column(s) but {where} has {count}"
        )
    return names


def _read_npy(where: str, head: bytes, mapping, rate_arg) -> Record:
    if not head.startswith(b"\x93NUMPY"):
        raise RecordError(f"{where}: is not a .npy array (as numpy.save writes)")
    try:
        arr = np.load(where, mmap_mode="r", allow_pickle=False)
    except ValueError as exc:
        if "pickle" in str(exc).lower() or "object" in str(exc).lower():
            raise RecordError(
                f"{where}: refused: holds pickled objects; save plain numbers") from None
        raise RecordError(f"{where}: is a damaged .npy array ({_one_line(exc)})") from None
    except Exception as exc:  # noqa: BLE001 - truncated header, short file, ...
        raise RecordError(f"{where}: is a damaged .npy array ({_one_line(exc)})") from None
    meta = _read_sidecar(where, required=False)
    if arr.dtype.names:
        if arr.ndim != 1:
            raise RecordError(
                f"{where}: a structured array of columns must be 1-D, not of shape {arr.shape}"
            )
        names = list(arr.dtype.names)
        for nm in names:
            if arr.dtype[nm].kind not in "biuf" or arr.dtype[nm].shape:
                raise RecordError(
                    f"{where}: field {quote(nm)} holds {arr.dtype[nm]} values; columns must be "
                    "real numbers"
                )
        chans = [_Channel(arr[nm]) for nm in names]
        if _sidecar_names(where, meta, len(names)) is not None:
            raise RecordError(
                f"{where}.meta: 'channels' names the columns of a plain array; this one's "
                "fields already have names"
            )
        defaults = None
    else:
        if arr.dtype.kind not in "biuf":
            raise RecordError(
                f"{where}: holds {arr.dtype} values; a record holds real numbers"
            )
        if arr.ndim == 1:
            arr = arr[:, None]
        if arr.ndim != 2:
            raise RecordError(
                f"{where}: has shape {arr.shape}; give a 1-D signal, a 2-D array of samples × "
                "channels or a structured array of named columns"
            )
        count = arr.shape[1]
        if count == 0:
            raise RecordError(f"{where}: holds no channels")
        chans = [_Channel(arr[:, j]) for j in range(count)]
        names = _sidecar_names(where, meta, count)
        defaults = None
        if names is None:
            names = [f"ch{j}" for j in range(count)]
            defaults = _WAV_DEFAULTS.get(count, _WAV_DEFAULTS[3])
    return _mapped_record(where, names, chans, mapping, rate_arg, meta, "npy", defaults)


def _mapped_record(where, names, chans, mapping, rate_arg, meta, source_format, defaults):
    """Name the channels, convert those kept to float64 and finish the record."""
    seen = set()
    for nm in names:
        if nm.strip().lower() in seen:
            raise RecordError(f"{where}: column name {quote(nm)} appears twice (names ignore case)")
        seen.add(nm.strip().lower())
    picked = _apply_map(names, chans, mapping, where=where, allow_index=True,
                        default_names=defaults)
    cols = {name: ch.as_float64() for name, ch in picked.items()}
    header_rate = _metadata_rate(meta, where)
    return _finish(where, cols, meta, rate_arg, header_rate, source_format,
                   header_label="sample_rate metadata of its sidecar")


def _raw_dtype(where: str, text: str | None) -> np.dtype:
    if text is None:
        raise RecordError(
            f"{where}.meta: has no 'dtype' key; state the sample type, one of "
            f"{', '.join(RAW_DTYPES)} (prefix '>' for big-endian)"
        )
    t = text.strip().lower()
    order = ">" if t.startswith(">") else "<"
    base = t.lstrip("<>")
    if base not in RAW_DTYPES:
        raise RecordError(
            f"{where}.meta: dtype = {quote(text)} is not allowed; use one of "
            f"{', '.join(RAW_DTYPES)} (prefix '>' for big-endian)"
        )
    return np.dtype(base).newbyteorder(order)


def _read_raw(where: str, mapping, rate_arg) -> Record:
    meta = _read_sidecar(where, required=True)
    dtype = _raw_dtype(where, meta.pop("dtype", None))
    names = _sidecar_names(where, meta, None)
    if names is None:
        raise RecordError(
            f"{where}.meta: has no 'channels' key; list the columns in file order, e.g. "
            "'channels = signal, ref_i, ref_q'"
        )
    header = meta.pop("header_bytes", "0")
    try:
        offset = int(header)
        if offset < 0:
            raise ValueError
    except ValueError:
        raise RecordError(
            f"{where}.meta: header_bytes = {quote(header)} is not allowed; give the number of "
            "bytes before the first sample (an integer ≥ 0)"
        ) from None
    size = os.path.getsize(where) - offset
    frame = dtype.itemsize * len(names)
    if size <= 0 or size % frame:
        raise RecordError(
            f"{where}: {max(size, 0)} bytes of samples after a {offset}-byte header are not a "
            f"whole number of frames of {frame} bytes ({len(names)} channels of {dtype.name}); "
            "check dtype, channels and header_bytes in the sidecar, or the file is truncated"
        )
    frames = np.memmap(where, dtype=dtype, mode="r", offset=offset,
                       shape=(size // frame, len(names)))
    chans = [_Channel(frames[:, j]) for j in range(len(names))]
    return _mapped_record(where, names, chans, mapping, rate_arg, meta, "raw", None)


# ---- wav ---------------------------------------------------------------------------------


@dataclass(frozen=True)
class _WavLayout:
    """Where a WAV file's samples are: format tag (the sub-format of an extensible file),
    channels, rate, bits per sample, bytes per frame, data offset and size, byte order."""

    tag: int
    channels: int
    rate: int
    bits: int
    block: int
    offset: int
    size: int
    little_endian: bool


def _wav_layout(where: str) -> _WavLayout:
    """Walk the RIFF chunks and refuse truncated or malformed files before decoding.

    scipy.io.wavfile returns the part of a truncated data chunk with only a warning; a record
    with missing samples must be refused instead.
    """
    size = os.path.getsize(where)
    with open(where, "rb") as fh:
        head = fh.read(12)
        if len(head) < 12:
            raise RecordError(f"{where}: is too short ({size} bytes) to be a WAV file")
        riff, _, wave = struct.unpack("<4sI4s", head)
        if riff not in (b"RIFF", b"RIFX") or wave != b"WAVE":
            raise RecordError(f"{where}: is not a RIFF WAVE file (starts with {head[:4]!r})")
        endian = "<" if riff == b"RIFF" else ">"
        pos = 12
        fmt = None
        fmt_pos = fmt_size = 0
        while pos + 8 <= size:
            fh.seek(pos)
            cid, csize = struct.unpack(endian + "4sI", fh.read(8))
            if cid == b"fmt ":
                if csize < 16 or pos + 8 + csize > size:
                    raise RecordError(f"{where}: its 'fmt ' chunk is damaged or truncated")
                fmt = struct.unpack(endian + "HHIIHH", fh.read(16))
                fmt_pos, fmt_size = pos, csize
            elif cid == b"data":
                if fmt is None:
                    raise RecordError(f"{where}: has a 'data' chunk before its 'fmt ' chunk")
                have = size - pos - 8
                if csize > have:
                    raise RecordError(
                        f"{where}: is truncated: its data chunk declares {csize} bytes but "
                        f"only {have} are present; the recording was cut short"
                    )
                block = fmt[4]
                if block == 0 or csize % block:
                    raise RecordError(
                        f"{where}: its data chunk ({csize} bytes) is not a whole number of "
                        f"frames of {block} bytes; the file is damaged"
                    )
                tag = fmt[0]
                if tag == 0xFFFE and fmt_size >= 40:  # WAVE_FORMAT_EXTENSIBLE: the sub-format
                    fh.seek(fmt_pos + 8 + 24)
                    tag = struct.unpack(endian + "H", fh.read(2))[0]
                return _WavLayout(tag, fmt[1], fmt[2], fmt[5], block, pos + 8, csize,
                                  endian == "<")
            pos += 8 + csize + (csize & 1)
    raise RecordError(f"{where}: has no complete 'data' chunk (truncated or not a WAV file)")


def _wav_dtype(lay: _WavLayout) -> np.dtype | None:
    """The NumPy type of one sample of a memory-mappable WAV layout (24-bit PCM: 3 bytes as
    ``uint8``), or None for a layout left to scipy's reader (big-endian RIFX, other codecs)."""
    if not lay.little_endian or lay.channels < 1:
        return None
    if lay.tag == 1 and lay.bits in (8, 16, 24, 32, 64):
        kind = {8: "u1", 16: "<i2", 24: "u1", 32: "<i4", 64: "<i8"}[lay.bits]
    elif lay.tag == 3 and lay.bits in (32, 64):
        kind = {32: "<f4", 64: "<f8"}[lay.bits]
    else:
        return None
    if lay.block != lay.channels * lay.bits // 8:
        return None
    return np.dtype(kind)


def _read_wav(where: str, mapping, rate_arg) -> Record:
    lay = _wav_layout(where)
    dtype = _wav_dtype(lay)
    if dtype is None:
        return _read_wav_scipy(where, lay.bits, mapping, rate_arg)
    n = lay.size // lay.block
    if n == 0:
        raise RecordError(f"{where}: holds 0 samples; at least {MIN_SAMPLES} are needed")
    if lay.bits == 24:
        frames = np.memmap(where, dtype=np.uint8, mode="r", offset=lay.offset,
                           shape=(n, lay.channels, 3))
        chans = [_Channel(frames[:, j, :], 2.0**-23, 0.0, pcm24=True)
                 for j in range(lay.channels)]
    else:
        frames = np.memmap(where, dtype=dtype, mode="r", offset=lay.offset,
                           shape=(n, lay.channels))
        if dtype.kind == "f":
            scale, zero = 1.0, 0.0
        elif dtype.kind == "u":
            scale, zero = 1.0 / 128.0, 128.0
        else:
            scale, zero = 2.0 ** (1 - 8 * dtype.itemsize), 0.0
        chans = [_Channel(frames[:, j], scale, zero) for j in range(lay.channels)]
    names = [f"ch{j}" for j in range(lay.channels)]
    defaults = _WAV_DEFAULTS.get(lay.channels, _WAV_DEFAULTS[3])
    picked = _apply_map(names, chans, mapping, where=where, allow_index=True,
                        default_names=defaults)
    cols = {name: ch.as_float64() for name, ch in picked.items()}
    header_rate = _wav_header_rate(where, lay.rate, rate_arg)
    kind = "float" if lay.tag == 3 else "integer"
    meta = {"wav_channels": str(lay.channels), "wav_sample_format": f"{lay.bits}-bit {kind}"}
    return _finish(where, cols, meta, rate_arg, header_rate, "wav", header_label="WAV header")


def _wav_header_rate(where: str, file_rate: int, rate_arg) -> float | None:
    if file_rate:
        return float(file_rate)
    if rate_arg is None:
        raise RecordError(
            f"{where}: its header gives a sample rate of 0 Hz; give the true rate with "
            "--sample-rate"
        )
    return None


def _read_wav_scipy(where: str, bits: int, mapping, rate_arg) -> Record:
    """WAV layouts that are not memory-mapped (big-endian RIFX, unusual codecs): read whole
    by scipy.io.wavfile, which also names what it cannot decode."""
    import scipy.io.wavfile as wavfile

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # unknown chunks (LIST, ...) are skipped silently
            file_rate, data = wavfile.read(where, mmap=False)
    except FtsourceError:
        raise
    except Exception as exc:  # ValueError for unsupported formats, struct.error, EOFError, ...
        raise RecordError(f"{where}: cannot be decoded as WAV ({_one_line(exc)})") from None
    if data.ndim == 1:
        data = data[:, None]
    nch = data.shape[1]
    if nch == 0:
        raise RecordError(f"{where}: holds no channels")
    values = _wav_scale(data, where)
    arrays = [np.ascontiguousarray(values[:, j]) for j in range(nch)]
    del values
    names = [f"ch{j}" for j in range(nch)]
    defaults = _WAV_DEFAULTS.get(nch, _WAV_DEFAULTS[3])
    cols = _apply_map(names, arrays, mapping, where=where, allow_index=True, default_names=defaults)
    header_rate = _wav_header_rate(where, file_rate, rate_arg)
    kind = "float" if data.dtype.kind == "f" else "integer"
    meta = {"wav_channels": str(nch), "wav_sample_format": f"{bits}-bit {kind}"}
    return _finish(where, cols, meta, rate_arg, header_rate, "wav", header_label="WAV header")


def _wav_scale(data: np.ndarray, where: str) -> np.ndarray:
    """Scale WAV samples to float64 with integer full scale at 1.0.

    scipy.io.wavfile returns 24-bit samples in int32 with the 24 bits left-justified, so 24-
    and 32-bit integer PCM both scale by 2**31 here (for 24-bit that is the shift right by 8
    followed by division by 2**23).
    """
    kind, size = data.dtype.kind, data.dtype.itemsize
    if kind == "f":
        with np.errstate(invalid="ignore", over="ignore"):  # NaN/inf are refused afterwards
            return data.astype(np.float64)
    if kind == "u" and size == 1:
        return (data.astype(np.float64) - 128.0) / 128.0
    if kind == "i":
        return data.astype(np.float64) / float(2 ** (8 * size - 1))
    raise RecordError(f"{where}: holds {data.dtype} samples, which this reader does not handle")


# --------------------------------------------------------------------------------------------
# Writing
# --------------------------------------------------------------------------------------------


def _columns_of(record_like: Record | Mapping[str, Any]) -> dict[str, np.ndarray]:
    src = record_like.columns if isinstance(record_like, Record) else record_like
    if not isinstance(src, Mapping) or not src:
        raise OptionError("columns: give a Record or a non-empty mapping of name to samples")
    out = {}
    for k, v in src.items():
        name = str(k).strip().lower()
        arr = np.asarray(v, dtype=np.float64)
        if arr.ndim != 1:
            raise OptionError(f"columns: {quote(name)} has shape {arr.shape}; columns are 1-D")
        out[name] = arr
    if len({a.shape[0] for a in out.values()}) != 1:
        raise OptionError("columns: all columns need the same length")
    return out


def _metadata_for(
    record_like, sample_rate_hz: float | None, metadata: Mapping[str, str] | None,
    cols: Mapping[str, np.ndarray],
) -> dict[str, str]:
    meta: dict[str, str] = {}
    if isinstance(record_like, Record):
        meta.update(record_like.metadata)
        if sample_rate_hz is None:
            sample_rate_hz = record_like.sample_rate_hz
    for k, v in (metadata or {}).items():
        meta[_norm_key(str(k))] = str(v)
    for k, v in meta.items():
        if not _KEY.match(k) or "\n" in v or "\r" in v:
            raise OptionError(
                f"metadata: {quote(k)} = {quote(v)} cannot be written; keys are names and "
                "values are single lines"
            )
    for k in ("wav_channels", "wav_sample_format"):
        meta.pop(k, None)
    if sample_rate_hz is not None and "time" not in cols:
        rate = _check_rate_option(sample_rate_hz)
        meta["sample_rate"] = f"{rate!r} Hz"
    elif "time" in cols:
        meta.pop("sample_rate", None)
    return meta


def _check_rate_option(rate: Any) -> float:
    try:
        value = float(rate)
    except (TypeError, ValueError):
        raise OptionError(f"sample_rate_hz: {quote(rate)} is not a number of Hz") from None
    if not math.isfinite(value) or value <= 0:
        raise OptionError(f"sample_rate_hz: {value!r} is not allowed; it is finite and positive")
    return value


def atomic_write(path: str | os.PathLike, write, *, overwrite: bool) -> None:
    target = os.fspath(path)
    if os.path.isdir(target):
        raise OutputError(f"{target}: is a directory; give a file name")
    if not overwrite and os.path.exists(target):
        raise OutputError(f"{target}: exists already; allow overwriting or choose another name")
    folder = os.path.dirname(os.path.abspath(target))
    try:
        fd, tmp = tempfile.mkstemp(
            dir=folder, prefix="." + os.path.basename(target) + ".", suffix=".tmp"
        )
    except OSError as exc:
        raise OutputError(f"{target}: cannot be written ({exc.strerror or exc})") from None
    try:
        with os.fdopen(fd, "wb") as fh:
            write(fh)
        mode = os.stat(target).st_mode & 0o7777 if os.path.exists(target) else 0o644
        os.chmod(tmp, mode)
        os.replace(tmp, target)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if isinstance(exc, OSError) and not isinstance(exc, FtsourceError):
            raise OutputError(f"{target}: cannot be written ({exc.strerror or exc})") from None
        raise


def write_record_csv(
    path: str | os.PathLike,
    record_like: Record | Mapping[str, Any],
    *,
    sample_rate_hz: float | None = None,
    metadata: Mapping[str, str] | None = None,
    delimiter: str = ",",
    overwrite: bool = True,
) -> None:
    """Write a record as a text table that :func:`read_record` reads back exactly.

    Parameters
    ----------
    path : str or path-like
        The file to write (written to a temporary file first, then moved into place).
    record_like : Record or mapping of str to array_like
        The columns (and, for a Record, its metadata and sample rate).
    sample_rate_hz : float, optional
        Written as ``# sample_rate = ... Hz`` when there is no ``time`` column.
    metadata : mapping, optional
        Extra ``# key = value`` lines (override the Record's).
    delimiter : {',', '\\t', ';', ' '}
        Column separator.
    overwrite : bool
        Replace an existing file (default) or raise :class:`OutputError`.

    Notes
    -----
    Numbers are written with 17 significant digits, enough to restore every float64 exactly.

    References
    ----------
    .. [1] IEEE 754-2008, section 5.12.2: 17 significant decimal digits round-trip binary64.
    """
    if delimiter not in (",", "\t", ";", " "):
        raise OptionError(f"delimiter: {quote(delimiter)} is not one of ',', tab, ';', ' '")
    cols = _columns_of(record_like)
    meta = _metadata_for(record_like, sample_rate_hz, metadata, cols)
    for name in cols:
        if not name or any(ch in name for ch in ",\t; #\"'") or not name.isprintable():
            raise OptionError(f"columns: {quote(name)} cannot be a text column name")
    table = np.column_stack(list(cols.values()))

    def write(fh):
        lines = [f"# {k} = {v}\n" for k, v in meta.items()]
        lines.append(delimiter.join(cols) + "\n")
        fh.write("".join(lines).encode("utf-8"))
        np.savetxt(fh, table, fmt="%.17g", delimiter=delimiter)

    atomic_write(path, write, overwrite=overwrite)


def write_record_npz(
    path: str | os.PathLike,
    record_like: Record | Mapping[str, Any],
    *,
    sample_rate_hz: float | None = None,
    metadata: Mapping[str, str] | None = None,
    compress: bool = False,
    overwrite: bool = True,
) -> None:
    """Write a record as an ``.npz`` archive: one array per column plus ``metadata``.

    Parameters
    ----------
    path : str or path-like
        The file to write (written to a temporary file first, then moved into place).
    record_like : Record or mapping of str to array_like
        The columns (and, for a Record, its metadata and sample rate).
    sample_rate_hz : float, optional
        Stored as the metadata entry ``sample_rate = ... Hz`` when there is no ``time`` column.
    metadata : mapping, optional
        Extra metadata entries (override the Record's).
    compress : bool
        Use :func:`numpy.savez_compressed`.
    overwrite : bool
        Replace an existing file (default) or raise :class:`OutputError`.

    References
    ----------
    .. [1] NumPy Enhancement Proposal 1, "A simple file format for NumPy arrays".
    """
    cols = _columns_of(record_like)
    meta = _metadata_for(record_like, sample_rate_hz, metadata, cols)
    if "metadata" in cols:
        raise OptionError("columns: 'metadata' is reserved in .npz records")
    arrays: dict[str, np.ndarray] = dict(cols)
    if meta:
        arrays["metadata"] = np.array([f"{k} = {v}" for k, v in meta.items()], dtype=str)
    saver = np.savez_compressed if compress else np.savez

    def write(fh):
        saver(fh, **arrays)

    atomic_write(path, write, overwrite=overwrite)


_WAV_BITS = (8, 16, 24, 32, "float", "float64")


def write_record_wav(
    path: str | os.PathLike,
    columns: Record | Mapping[str, Any],
    sample_rate_hz: float | None = None,
    *,
    bits: int | str = 16,
    clip: bool = False,
    overwrite: bool = True,
) -> None:
    """Write columns as a WAV file, one channel per column.

    Parameters
    ----------
    path : str or path-like
        The file to write (written to a temporary file first, then moved into place).
    columns : Record or mapping of str to array_like
        Samples in full-scale units (integer full scale is 1.0). When the names are exactly
        one of the contract's default channel sets (``signal``; ``signal, ref``; ``signal,
        ref_i, ref_q``) they are written in that order so that they read back by name;
        otherwise in the mapping's order. A ``time`` column is dropped after checking that it
        matches ``sample_rate_hz``.
    sample_rate_hz : float
        A whole number of Hz (the WAV header stores an integer). Taken from a Record when
        omitted.
    bits : {16, 24, 32, 8, 'float', 'float64'}
        Integer PCM depth, or IEEE float (32-bit ``'float'``, 64-bit ``'float64'``).
    clip : bool
        Clip integer PCM to full scale instead of refusing samples outside [-1, 1].
    overwrite : bool
        Replace an existing file (default) or raise :class:`OutputError`.

    Notes
    -----
    Integer samples are ``round(x * 2**(bits-1))`` limited to the integer range, so +1.0 is
    stored as the largest code, ``1 - 2**(1-bits)`` (8-bit is unsigned with offset 128).
    The file has a ``fmt`` chunk with format tag 1 (PCM) or 3 (IEEE float; then also a
    ``fact`` chunk) and a ``data`` chunk, little-endian.

    References
    ----------
    .. [1] IBM and Microsoft, "Multimedia Programming Interface and Data Specifications 1.0"
       (1991), chapter 3, "WAVE form": fmt, fact and data chunks.
    """
    if bits not in _WAV_BITS:
        raise OptionError(f"bits: {quote(bits)} is not one of 8, 16, 24, 32, 'float', 'float64'")
    if isinstance(columns, Record) and sample_rate_hz is None:
        sample_rate_hz = columns.sample_rate_hz
    if sample_rate_hz is None:
        raise OptionError("sample_rate_hz: a WAV file needs a sample rate")
    rate = _check_rate_option(sample_rate_hz)
    if rate != round(rate) or rate > 0xFFFFFFFF:
        raise OptionError(
            f"sample_rate_hz: {rate!r} is not allowed in a WAV header; it holds a whole "
            "number of Hz up to 4294967295"
        )
    cols = _columns_of(columns)
    if "time" in cols:
        t = cols.pop("time")
        if t.size > 1:
            t_rate = (t.size - 1) / (t[-1] - t[0]) if t[-1] != t[0] else math.inf
            if not abs(t_rate - rate) <= RATE_TOLERANCE * rate:
                raise OptionError(
                    f"columns: the 'time' column gives {t_rate:.6g} Hz but sample_rate_hz is "
                    f"{rate:.6g}; a WAV file stores only the rate"
                )
    if not cols:
        raise OptionError("columns: nothing to write besides 'time'")
    names = list(cols)
    for default in _WAV_DEFAULTS.values():
        if set(names) == set(default):
            names = list(default)
            break
    data = np.column_stack([cols[n] for n in names])
    if not np.all(np.isfinite(data)):
        raise OptionError("columns: hold non-finite values; a WAV file cannot store them")
    payload, tag, width = _wav_encode(data, bits, clip)
    nch = data.shape[1]
    block = nch * width
    fmt = struct.pack("<HHIIHH", tag, nch, int(rate), int(rate) * block, block, width * 8)
    chunks = b"fmt " + struct.pack("<I", len(fmt)) + fmt
    if tag == 3:
        fmt = fmt + struct.pack("<H", 0)
        chunks = b"fmt " + struct.pack("<I", len(fmt)) + fmt
        chunks += b"fact" + struct.pack("<II", 4, data.shape[0])
    pad = b"\x00" if len(payload) % 2 else b""
    body = b"WAVE" + chunks + b"data" + struct.pack("<I", len(payload))
    riff_size = len(body) + len(payload) + len(pad)
    if riff_size > 0xFFFFFFFF:
        raise OptionError("columns: too many samples for one WAV file (over 4 GiB)")

    def write(fh):
        fh.write(b"RIFF" + struct.pack("<I", riff_size) + body)
        fh.write(payload)
        fh.write(pad)

    atomic_write(path, write, overwrite=overwrite)


def _wav_encode(data: np.ndarray, bits, clip: bool) -> tuple[bytes, int, int]:
    if bits == "float":
        return data.astype("<f4").tobytes(), 3, 4
    if bits == "float64":
        return data.astype("<f8").tobytes(), 3, 8
    full = float(2 ** (bits - 1))
    peak = float(np.max(np.abs(data))) if data.size else 0.0
    if not clip and peak > 1.0:
        raise OptionError(
            f"columns: samples reach {peak:.6g} of full scale; {bits}-bit PCM holds -1 to 1; "
            "scale the data or pass clip=True"
        )
    ints = np.rint(data * full)
    lo, hi = -full, full - 1
    ints = np.clip(ints, lo, hi).astype(np.int64)
    if bits == 8:
        return (ints + 128).astype(np.uint8).tobytes(), 1, 1
    if bits == 16:
        return ints.astype("<i2").tobytes(), 1, 2
    if bits == 32:
        return ints.astype("<i4").tobytes(), 1, 4
    # 24-bit: three little-endian bytes per sample
    u32 = ints.astype("<i4").view("<u4").reshape(-1, 1).view(np.uint8)
    return np.ascontiguousarray(u32[:, :3]).tobytes(), 1, 3
