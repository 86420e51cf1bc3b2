"""Tests of ftsource._data.data_path, the locator of files in ``reference_spectra``.

No published value is involved: the oracle is the package layout itself (common practice for
Python packages: data shipped inside the package, found with importlib.resources, PEP 302 /
the importlib.resources documentation).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from ftsource._data import data_path
from ftsource.errors import FtsourceError


def test_finds_shipped_cmf_table():
    path = data_path("cie1931_2deg_cmf.csv")
    assert isinstance(path, Path)
    assert path.is_file()
    assert path.parent.name == "reference_spectra"


def test_missing_file_is_a_clear_error():
    with pytest.raises(FtsourceError, match="no_such_file.csv") as info:
        data_path("no_such_file.csv")
    assert "reference_spectra" in str(info.value)


@pytest.mark.parametrize("bad", ["", ".", "..", "../pyproject.toml", "sub/file.csv", None, 3])
def test_refuses_anything_but_a_bare_name(bad):
    with pytest.raises(FtsourceError, match="data file name"):
        data_path(bad)
