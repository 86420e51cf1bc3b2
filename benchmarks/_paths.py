"""Imports for the benchmark scripts: the tests' forward model (``tests/rig_model.py``) and,
from a source checkout that is not installed, the checkout's ``ftsource``."""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "tests"))
try:  # run from a source checkout without installing
    import ftsource  # noqa: F401
except ImportError:  # pragma: no cover
    sys.path.insert(0, str(ROOT))
