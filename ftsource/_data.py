"""Locate data files shipped with ftsource (the ``reference_spectra`` folder).

In an installed wheel the folder is ``ftsource/reference_spectra`` (mapped there by the build);
in a source checkout it is the top-level ``reference_spectra/`` beside the ``ftsource`` package.
"""

from __future__ import annotations

import importlib.resources
from pathlib import Path

from ftsource.errors import FtsourceError

__all__ = ["data_folder", "data_path"]

_FOLDER = "reference_spectra"


def _candidates() -> list[Path]:
    """Folders that may hold the data files, in the order they are tried."""
    folders: list[Path] = []
    try:
        packaged = importlib.resources.files("ftsource") / _FOLDER
        # A plain installation or an editable one gives a real directory; a zipped package
        # would not, and is not supported for data files.
        folders.append(Path(str(packaged)))
    except (ModuleNotFoundError, TypeError):  # pragma: no cover - defensive
        pass
    folders.append(Path(__file__).resolve().parent.parent / _FOLDER)
    return folders


def data_path(name: str) -> Path:
    """Return the path of a data file shipped in ``reference_spectra``.

    Parameters
    ----------
    name : str
        File name inside ``reference_spectra``, e.g. ``"cie1931_2deg_cmf.csv"``. A bare name:
        no directories, no ``..``.

    Returns
    -------
    pathlib.Path
        The existing file, first looked for in the installed package
        (``importlib.resources.files("ftsource") / "reference_spectra"``), then in a source
        checkout (``reference_spectra/`` beside the ``ftsource`` package).

    Raises
    ------
    FtsourceError
        If ``name`` is not a bare file name, or no such file is found in either place.
    """
    if not isinstance(name, str) or not name or Path(name).name != name or name in (".", ".."):
        raise FtsourceError(
            f"data file name {name!r} is not valid: give a bare file name inside {_FOLDER}/"
        )
    tried = []
    for folder in _candidates():
        path = folder / name
        tried.append(str(path))
        if path.is_file():
            return path
    raise FtsourceError(
        f"data file {name!r} was not found (looked in: {'; '.join(tried)}); the ftsource "
        f"installation is incomplete - reinstall it, or run from a source checkout that has "
        f"{_FOLDER}/{name}"
    )


def data_folder(pattern: str) -> Path:
    """Return the ``reference_spectra`` folder that holds files matching ``pattern``.

    Parameters
    ----------
    pattern : str
        A glob pattern for file names, e.g. ``"*.ecsv"``.

    Returns
    -------
    pathlib.Path
        The first folder (installed package, then source checkout) with at least one match.

    Raises
    ------
    FtsourceError
        If neither place holds a matching file.
    """
    tried = []
    for folder in _candidates():
        tried.append(str(folder))
        if folder.is_dir() and any(folder.glob(pattern)):
            return folder
    raise FtsourceError(
        f"no {pattern} files found (looked in: {'; '.join(tried)}); the ftsource installation "
        f"is incomplete - reinstall it, or run from a source checkout that has {_FOLDER}/"
    )
