"""Reference wavelengths: calibration-lamp lines, laser standards and nominal laser lines.

The line lists live as small ECSV tables in ``reference_spectra/`` (shipped inside the wheel as
``ftsource/reference_spectra``). Every table has the same columns:

``wavelength_vac_nm``
    Vacuum wavelength, the primary value used for matching.
``wavelength_air_nm``
    The wavelength in standard air: for atomic lines the value NIST quotes; for lasers a value
    computed from the vacuum one (see each file's metadata).
``relative_intensity``
    Relative intensity on the scale of the row's source (NaN where none was retrieved).
``species``, ``kind``, ``note``, ``status``, ``ref``
    Emitter (``"Ne I"``), kind of entry (``"atomic line"``, ``"standard"``, ``"nominal"``),
    free text, verification status (V, V2, C, M) and a key into the file's ``references``
    metadata.
``u_vac_nm``
    Standard uncertainty of the vacuum value where the source states one (NaN otherwise).

Each file's metadata names its source, version, retrieval date and how the vacuum values were
obtained. See ``docs/reference_spectra.md``.
"""

from __future__ import annotations

import functools
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from ftsource._checks import finite_float
from ftsource._data import data_folder
from ftsource.errors import FtsourceError, OptionError

__all__ = [
    "Candidate",
    "line_list_names",
    "load_line_list",
    "search_lines",
    "identify",
    "ReferenceEntry",
    "pick_entry",
    "entries_with_value",
    "standard_entries",
    "standard_air_to_vacuum_nm",
    "standard_vacuum_to_air_nm",
]

_SUFFIX = ".ecsv"
#: Columns every line list must have.
REQUIRED_COLUMNS = (
    "wavelength_vac_nm",
    "wavelength_air_nm",
    "relative_intensity",
    "species",
    "kind",
    "note",
    "status",
    "ref",
    "u_vac_nm",
)
_MEDIA = ("vacuum", "air")
#: ``air_convention`` of a nominal laser label: it has no medium and is never converted.
_LABEL_AIR = "none (nominal label)"



# --------------------------------------------------------------------------------------------
# standard air
# --------------------------------------------------------------------------------------------
def standard_vacuum_to_air_nm(wl_vac_nm: float | np.ndarray) -> float | np.ndarray:
    """Vacuum to standard-air wavelength (IAU/Morton 2000); one implementation, in
    :func:`ftsource.physics.air.vacuum_to_standard_air_nm`."""
    from ftsource.physics.air import vacuum_to_standard_air_nm

    return vacuum_to_standard_air_nm(wl_vac_nm)


def standard_air_to_vacuum_nm(wl_air_nm: float | np.ndarray) -> float | np.ndarray:
    """Standard-air to vacuum wavelength (IAU/Morton 2000); one implementation, in
    :func:`ftsource.physics.air.standard_air_to_vacuum_nm`."""
    from ftsource.physics.air import standard_air_to_vacuum_nm as _to_vac

    return _to_vac(wl_air_nm)


# --------------------------------------------------------------------------------------------
# files
# --------------------------------------------------------------------------------------------
def _data_folder() -> Path:
    """The folder holding the line lists: the installed package first, then a source tree."""
    return data_folder("*" + _SUFFIX)


def line_list_names() -> list[str]:
    """Names of the line lists shipped with ftsource.

    Returns
    -------
    list of str
        Sorted file stems of the ``*.ecsv`` tables in ``reference_spectra``, e.g.
        ``["lamp_ar", ..., "laser_nominal", "laser_standards"]``.

    References
    ----------
    .. [1] See ``docs/reference_spectra.md`` for the sources of each list.
    """
    return sorted(p.stem for p in _data_folder().glob("*" + _SUFFIX))


def _read_ecsv(path):
    """A bundled ECSV table read in a few milliseconds, or None when it is not in the plain
    form read here (then astropy reads it).

    The same table as ``Table.read(path, format="ascii.ecsv")`` (tested for every bundled
    list): the YAML header is parsed by the C loader of PyYAML when it is there (astropy's
    own loader is pure Python and took about 40 ms a list), the rows by the csv module (ECSV
    rows are space-separated with double-quoted strings); an empty field is masked, as
    astropy masks it.

    References
    ----------
    .. [1] Enhanced Character Separated Values (ECSV) format, astropy APE 6 (2014).
    """
    import csv

    import yaml
    from astropy.table import Column, MaskedColumn, Table

    with open(path, encoding="utf-8") as fh:
        lines = fh.read().splitlines()
    head = [ln[2:] if ln.startswith("# ") else ln[1:] for ln in lines if ln.startswith("#")]
    body = [ln for ln in lines if not ln.startswith("#") and ln.strip()]
    if not head or not head[0].startswith("%ECSV") or not body:
        return None
    try:
        hdr = yaml.load("\n".join(head[1:]), Loader=getattr(yaml, "CSafeLoader", yaml.SafeLoader))
        rows = list(csv.reader(body, delimiter=" ", quotechar='"'))
    except (yaml.YAMLError, csv.Error):
        return None
    specs = hdr.get("datatype") if isinstance(hdr, dict) else None
    kinds = {"float64": float, "int64": int, "string": str}
    if (not specs or rows[0] != [c.get("name") for c in specs]
            or any(c.get("datatype") not in kinds or set(c) - {"name", "datatype", "unit",
                   "description", "format"} for c in specs)
            or any(len(r) != len(specs) for r in rows[1:])
            or set(hdr) - {"datatype", "meta", "schema"}):
        return None
    cols = []
    for k, c in enumerate(specs):
        raw = [r[k] for r in rows[1:]]
        mask = [v == "" for v in raw]
        conv = kinds[c["datatype"]]
        try:
            vals = [conv(v) if v != "" else conv() for v in raw]
        except ValueError:
            return None
        data = np.array(vals, dtype=str if conv is str else np.dtype(c["datatype"]))
        kw = {"name": c["name"], "unit": c.get("unit"), "description": c.get("description"),
              "format": c.get("format")}
        cols.append(MaskedColumn(data, mask=mask, **kw) if any(mask) else Column(data, **kw))
    meta = hdr.get("meta") or {}
    if isinstance(meta, list):  # an !!omap: a list of one-entry mappings or of pairs
        meta = dict(kv for m in meta for kv in (m.items() if isinstance(m, dict) else [m]))
    return Table(cols, meta=meta)


def load_line_list(name: str):
    """Load one line list as an astropy Table.

    Parameters
    ----------
    name : str
        A name from :func:`line_list_names`, e.g. ``"lamp_ne"`` or ``"laser_standards"``.

    Returns
    -------
    astropy.table.Table
        The table with the columns listed in the module docstring, sorted by vacuum
        wavelength; its ``meta`` names the source, version, retrieval date and the way the
        vacuum values were obtained. A fresh copy on every call.

    Raises
    ------
    OptionError
        If ``name`` is not one of :func:`line_list_names`.
    FtsourceError
        If the file lacks a required column.

    References
    ----------
    .. [1] NIST Handbook of Basic Atomic Spectroscopic Data (SRD 108), J. E. Sansonetti and
       W. C. Martin; CIPM recommendations on the practical realization of the metre.
    """
    from astropy.table import Table

    names = line_list_names()
    if not isinstance(name, str) or name not in names:
        raise OptionError(f"line list {name!r} is not known: choose one of {', '.join(names)}")
    path = _data_folder() / (name + _SUFFIX)
    table = _read_ecsv(path)
    if table is None:  # not the plain form _read_ecsv reads: astropy's full reader
        table = Table.read(path, format="ascii.ecsv")
    missing = [c for c in REQUIRED_COLUMNS if c not in table.colnames]
    if missing:
        raise FtsourceError(f"line list {name!r} ({path}) lacks columns {missing}")
    table.sort("wavelength_vac_nm")
    table.meta["list_name"] = name
    return table


# --------------------------------------------------------------------------------------------
# searching
# --------------------------------------------------------------------------------------------
def _resolve_lists(lists: str | Iterable[str] | None) -> list[str]:
    if lists is None:
        return line_list_names()
    if isinstance(lists, str):
        lists = [lists]
    lists = list(lists)
    known = line_list_names()
    bad = [x for x in lists if x not in known]
    if bad:
        raise OptionError(f"lists = {bad!r} are not known: choose from {', '.join(known)}")
    return lists


def _element_of(species: str) -> str:
    return species.split()[0] if species else ""


def _check_float(value: Any, name: str, *, positive: bool = False) -> float | None:
    """None, or ``value`` checked by :func:`ftsource._checks.finite_float` (≥ 0, or > 0 when
    ``positive``)."""
    return None if value is None else finite_float(name, value, minimum=0.0, strict=positive)


def search_lines(
    *,
    element: str | None = None,
    min_nm: float | None = None,
    max_nm: float | None = None,
    near_nm: float | None = None,
    tolerance_nm: float | None = None,
    medium: str = "vacuum",
    conditions: Any = None,
    to_air: Callable[[np.ndarray], np.ndarray] | None = None,
    lists: str | Sequence[str] | None = None,
):
    """Select reference lines by element and wavelength.

    Parameters
    ----------
    element : str, optional
        Element symbol (``"Ne"``, ``"Hg"``...), matched against the first word of ``species``
        (case-insensitive). Laser entries have no element and are left out when it is given.
    min_nm, max_nm : float, optional
        Keep lines whose wavelength in ``medium`` lies in ``[min_nm, max_nm]``.
    near_nm, tolerance_nm : float, optional
        Keep lines within ``tolerance_nm`` of ``near_nm`` (both in ``medium``). Give both or
        neither.
    medium : {"vacuum", "air"}
        Which wavelength the limits refer to and the column ``wavelength_nm`` holds.
    conditions : object, optional
        Air conditions for the ``wavelength_air_nm`` column (and for ``wavelength_nm`` when
        ``medium="air"``). Without it the standard-air values stored in the files are used.
        With it, air wavelengths are computed from the vacuum ones by ``to_air(wl_vac_nm)``
        if given, else by ``ftsource.physics.air.vacuum_to_air_nm(wl_vac_nm,
        conditions)`` (Ciddor 1996). Nominal laser labels are never converted.
    to_air : callable, optional
        ``to_air(wl_vac_nm) -> wl_air_nm`` for non-standard air (takes precedence).
    lists : str or sequence of str, optional
        Line lists to search (default all, see :func:`line_list_names`).

    Returns
    -------
    astropy.table.Table
        Matching rows from all selected lists, sorted by ``wavelength_nm``, with columns
        ``list_name, species, kind, wavelength_nm, wavelength_vac_nm, wavelength_air_nm,
        air_convention, relative_intensity, u_vac_nm, status, note`` and ``meta["medium"]``.
        ``air_convention`` says what ``wavelength_air_nm`` is: ``"standard air"`` (the stored
        value: NIST's quoted value for lamp lines, IAU/Morton 2000 for lasers), ``"given
        conditions"`` (computed) or ``"none (nominal label)"``. Possibly empty.

    Raises
    ------
    OptionError
        For an unknown medium or list, negative or inverted limits, ``near_nm`` without
        ``tolerance_nm`` (or the reverse), or ``conditions`` without a way to apply them.

    References
    ----------
    .. [1] NIST Handbook of Basic Atomic Spectroscopic Data: air wavelengths above 200 nm are
       for standard air; D. C. Morton, ApJS 130, 403 (2000).
    """
    from astropy.table import Table, vstack

    if medium not in _MEDIA:
        raise OptionError(f"medium = {medium!r} is not allowed: choose one of {_MEDIA}")
    lo = _check_float(min_nm, "min_nm")
    hi = _check_float(max_nm, "max_nm")
    near = _check_float(near_nm, "near_nm", positive=True)
    tol = _check_float(tolerance_nm, "tolerance_nm")
    if lo is not None and hi is not None and lo > hi:
        raise OptionError(f"min_nm = {lo} is larger than max_nm = {hi}: give min_nm <= max_nm")
    if (near is None) != (tol is None):
        raise OptionError(
            f"near_nm = {near_nm!r} and tolerance_nm = {tolerance_nm!r}: give both or neither"
        )
    names = _resolve_lists(lists)

    converter = None
    if conditions is not None or to_air is not None:  # the air column, in either medium
        if to_air is not None:
            converter = to_air
        else:
            try:
                from ftsource.physics.air import (
                    vacuum_to_air_nm,  # written in parallel; optional here
                )
            except ImportError as exc:
                raise OptionError(
                    "conditions were given but ftsource.physics.air.vacuum_to_air_nm is not "
                    "available: pass to_air=callable, or leave conditions out for standard air"
                ) from exc

            def converter(wl):
                return vacuum_to_air_nm(wl, conditions)

    pieces = []
    for name in names:
        t = load_line_list(name)
        n = len(t)
        piece = Table()
        piece["list_name"] = [name] * n
        piece["species"] = list(t["species"])
        piece["kind"] = list(t["kind"])
        vac = np.asarray(t["wavelength_vac_nm"], dtype=float)
        air = np.asarray(t["wavelength_air_nm"], dtype=float)
        label = np.array([str(k) == "nominal" for k in t["kind"]], dtype=bool)
        if converter is not None:
            # a nominal laser label has no medium: it stays as written
            air = np.where(label, air, np.asarray(converter(vac), dtype=float))
        convention = "given conditions" if converter is not None else "standard air"
        piece["wavelength_nm"] = vac if medium == "vacuum" else air
        piece["wavelength_vac_nm"] = vac
        piece["wavelength_air_nm"] = air
        piece["air_convention"] = [_LABEL_AIR if lab else convention for lab in label]
        piece["relative_intensity"] = np.asarray(t["relative_intensity"], dtype=float)
        piece["u_vac_nm"] = np.asarray(t["u_vac_nm"], dtype=float)
        piece["status"] = list(t["status"])
        piece["note"] = list(t["note"])
        keep = np.ones(n, dtype=bool)
        if element is not None:
            want = str(element).strip().lower()
            keep &= np.array([_element_of(s).lower() == want for s in t["species"]], dtype=bool)
        wl = np.asarray(piece["wavelength_nm"], dtype=float)
        if lo is not None:
            keep &= wl >= lo
        if hi is not None:
            keep &= wl <= hi
        if near is not None:
            keep &= np.abs(wl - near) <= tol
        pieces.append(piece[keep])
    out = vstack(pieces, metadata_conflicts="silent") if pieces else Table()
    if len(out):
        out.sort("wavelength_nm")
    out.meta = {"medium": medium, "standard_air": converter is None}
    return out


# --------------------------------------------------------------------------------------------
# identification
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Candidate:
    """One reference line compared with a measured wavelength.

    Attributes
    ----------
    list_name : str
        Line list the entry comes from.
    species : str
        Emitter or laser, as written in the list.
    wavelength_vac_nm : float
        Reference vacuum wavelength.
    difference_nm : float
        Measured minus reference, nm.
    difference_ppm : float
        ``difference_nm / wavelength_vac_nm × 10⁶``.
    within_tolerance : bool
        ``|difference| <= k · sqrt(u² + u_ref²)``, with ``u_ref`` the entry's stated standard
        uncertainty (0 where none is stated).
    kind : str
        ``"atomic line"``, ``"standard"`` or ``"nominal"``.
    """

    list_name: str
    species: str
    wavelength_vac_nm: float
    difference_nm: float
    difference_ppm: float
    within_tolerance: bool
    kind: str


def identify(
    wavelength_vac_nm: float,
    u_nm: float,
    *,
    k: float = 2.0,
    lists: str | Sequence[str] | None = None,
    max_candidates: int = 3,
    tables: dict | None = None,
) -> list[Candidate]:
    """Compare a measured vacuum wavelength with the reference lists.

    Parameters
    ----------
    wavelength_vac_nm : float
        Measured vacuum wavelength, nm.
    u_nm : float
        Its standard uncertainty, nm (>= 0).
    k : float, default 2.0
        Coverage factor for the acceptance interval (JCGM 100, k = 2 ≈ 95 %).
    lists : str or sequence of str, optional
        Lists to compare against (default all).
    max_candidates : int, default 3
        How many nearest entries to return.
    tables : dict, optional
        An explicit cache the caller owns, list name → loaded table (filled on first use and
        only read afterwards), so identifying many lines reads each list once.

    Returns
    -------
    list of Candidate
        The ``max_candidates`` nearest entries, sorted by ``|difference_nm|``. Each says
        whether it lies within the interval; if none does, the caller should report "no
        match". Empty only if the selected lists have no entries.

    Raises
    ------
    OptionError
        For a non-positive wavelength, negative ``u_nm``, non-positive ``k`` or
        ``max_candidates < 1``.

    Notes
    -----
    The acceptance test uses ``u_ref`` from the ``u_vac_nm`` column: the CIPM uncertainty for
    laser standards, ``tolerance/√3`` for nominal laser lines, and zero for lamp lines whose
    source states no uncertainty (NIST quotes the Handbook digits as significant; add lamp
    effects such as pressure shifts to ``u_nm`` yourself).

    References
    ----------
    .. [1] JCGM 100:2008, Evaluation of measurement data — Guide to the expression of
       uncertainty in measurement, §6 (expanded uncertainty).
    """
    wl = _check_float(wavelength_vac_nm, "wavelength_vac_nm", positive=True)
    u = _check_float(u_nm, "u_nm")
    kk = _check_float(k, "k", positive=True)
    if isinstance(max_candidates, bool) or not isinstance(max_candidates, (int, np.integer)):
        raise OptionError(f"max_candidates = {max_candidates!r} is not an integer >= 1")
    if max_candidates < 1:
        raise OptionError(f"max_candidates = {max_candidates!r} is not allowed: give >= 1")
    found: list[Candidate] = []
    for name in _resolve_lists(lists):
        if tables is None:
            t = load_line_list(name)
        else:  # the caller's explicit cache: one read per list for many lines
            t = tables.get(name)
            if t is None:
                t = tables[name] = load_line_list(name)
        ref = np.asarray(t["wavelength_vac_nm"], dtype=float)
        u_ref = np.nan_to_num(np.asarray(t["u_vac_nm"], dtype=float), nan=0.0)
        diff = wl - ref
        limit = kk * np.sqrt(u**2 + u_ref**2)
        for i in range(len(t)):
            found.append(
                Candidate(
                    list_name=name,
                    species=str(t["species"][i]),
                    wavelength_vac_nm=float(ref[i]),
                    difference_nm=float(diff[i]),
                    difference_ppm=float(diff[i] / ref[i] * 1.0e6),
                    within_tolerance=bool(abs(diff[i]) <= limit[i]),
                    kind=str(t["kind"][i]),
                )
            )
    found.sort(key=lambda c: abs(c.difference_nm))
    return found[: int(max_candidates)]


# --------------------------------------------------------------------------------------------
# single entries (known lines for calibration)
# --------------------------------------------------------------------------------------------
#: How far (nm) a wavelength given to :func:`pick_entry` may lie from the entry it names.
PICK_WINDOW_NM = 0.05
#: The next entry must be at least this many times farther than the one picked.
PICK_MARGIN = 10.0


@dataclass(frozen=True)
class ReferenceEntry:
    """One row of a bundled line list.

    Attributes
    ----------
    list_name, species, kind, status : str
        As in the list (``kind`` is ``"atomic line"``, ``"standard"`` or ``"nominal"``).
    wavelength_vac_nm, wavelength_air_nm : float
        The stored vacuum and standard-air values.
    u_vac_nm : float
        Standard uncertainty stated by the source; NaN where none is stated.
    u_r : float
        Relative standard uncertainty where the list states one (laser standards), else
        ``u_vac_nm / wavelength_vac_nm`` (NaN where neither is stated).
    """

    list_name: str
    species: str
    kind: str
    wavelength_vac_nm: float
    wavelength_air_nm: float
    u_vac_nm: float
    status: str
    u_r: float = float("nan")

    @property
    def is_standard(self) -> bool:
        """True for a wavelength standard (CIPM recommended value)."""
        return self.kind == "standard"

    @property
    def is_nominal(self) -> bool:
        """True for a nominal laser label, which is never a standard."""
        return self.kind == "nominal"


def _entries(name: str) -> list[ReferenceEntry]:
    """The entries of one bundled list (a fresh list of the immutable entries)."""
    return list(_stored_entries(name))


@functools.lru_cache(maxsize=64)
def _stored_entries(name: str) -> tuple[ReferenceEntry, ...]:
    """The entries of one bundled list, read once per process: the files are package data
    that never change while it runs, and the OPD scale, identification and the checks of a
    reference wavelength each ask for them (reading all lists took ~0.1 s per analysis)."""
    t = load_line_list(name)
    return tuple(
        ReferenceEntry(
            list_name=name,
            species=str(t["species"][i]),
            kind=str(t["kind"][i]),
            wavelength_vac_nm=float(t["wavelength_vac_nm"][i]),
            wavelength_air_nm=float(t["wavelength_air_nm"][i]),
            u_vac_nm=float(t["u_vac_nm"][i]),
            status=str(t["status"][i]),
            u_r=float(t["u_r"][i]) if "u_r" in t.colnames
            else float(t["u_vac_nm"][i]) / float(t["wavelength_vac_nm"][i]),
        )
        for i in range(len(t))
    )


def pick_entry(list_name: str, wavelength_nm: float) -> ReferenceEntry:
    """The entry of one list that a user names by its wavelength.

    Parameters
    ----------
    list_name : str
        A name from :func:`line_list_names`.
    wavelength_nm : float
        The entry's vacuum or standard-air wavelength, with as many digits as it takes to
        single it out (e.g. ``632.99121258`` for the iodine-stabilised He-Ne, ``640.2248`` for
        the Ne I line quoted in air).

    Returns
    -------
    ReferenceEntry
        The entry nearest to ``wavelength_nm`` in either column.

    Raises
    ------
    OptionError
        If no entry lies within :data:`PICK_WINDOW_NM`, or if another entry is less than
        :data:`PICK_MARGIN` times farther than the nearest one (ambiguous: give more digits).
    """
    wl = _check_float(wavelength_nm, "wavelength_nm", positive=True)
    entries = _entries(_resolve_lists(list_name)[0])
    if not entries:  # pragma: no cover - every shipped list has rows
        raise OptionError(f"line list {list_name!r} is empty")
    dist = [min(abs(e.wavelength_vac_nm - wl), abs(e.wavelength_air_nm - wl)) for e in entries]
    order = sorted(range(len(entries)), key=dist.__getitem__)
    best = entries[order[0]]
    d1 = dist[order[0]]
    if d1 > PICK_WINDOW_NM:
        raise OptionError(
            f"{list_name} has no entry within {PICK_WINDOW_NM} nm of {wl:g} nm; the nearest is "
            f"{best.species} at {best.wavelength_vac_nm:.12g} nm (vacuum); see 'ftsource lines'"
        )
    if len(order) > 1:
        d2 = dist[order[1]]
        other = entries[order[1]]
        if d2 < PICK_MARGIN * d1 or d2 == 0.0:
            raise OptionError(
                f"{wl:g} nm does not single out one entry of {list_name}: {best.species} at "
                f"{best.wavelength_vac_nm:.12g} nm and {other.species} at "
                f"{other.wavelength_vac_nm:.12g} nm (vacuum) are both near; give more digits"
            )
    return best


def standard_entries() -> list[ReferenceEntry]:
    """Every bundled wavelength standard (CIPM recommended values), from all lists.

    Returns
    -------
    list of ReferenceEntry
        The entries whose ``kind`` is ``"standard"``.
    """
    return [e for name in line_list_names() for e in _entries(name) if e.is_standard]


def entries_with_value(wavelength_vac_nm: float, *, rel: float = 1e-12) -> list[ReferenceEntry]:
    """Entries whose stored vacuum (or, for nominal labels, written) value equals a number.

    Used to recognise a value copied from a list, e.g. a nominal laser label given as a
    "known" wavelength.

    Parameters
    ----------
    wavelength_vac_nm : float
        The value, nm.
    rel : float, default 1e-12
        Relative tolerance of the comparison (floating-point round-off only).

    Returns
    -------
    list of ReferenceEntry
        Possibly empty.
    """
    wl = _check_float(wavelength_vac_nm, "wavelength_vac_nm", positive=True)
    return [
        e
        for name in line_list_names()
        for e in _entries(name)
        if abs(e.wavelength_vac_nm - wl) <= rel * wl
    ]
