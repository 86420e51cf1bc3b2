"""Helpers shared by the command-line tests (test_cli.py, test_errors.py, test_messages.py).

Reference: docs/contract.md (exit statuses, the one-line ``error: ...`` rule); the helpers
hold no numerical value of their own.
"""

from __future__ import annotations

import os
from pathlib import Path

from ftsource.cli import main


def run(capsys, argv):
    """Run the command line in-process; return (status, stdout, stderr)."""
    capsys.readouterr()
    status = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return status, out, err


def assert_clean_error(status, err, fragment=""):
    """A usage error as the project promises it: status 2, one `error: ...` line, no
    traceback, and ``fragment`` in it."""
    assert status == 2, f"status {status}, stderr {err!r}"
    assert err.endswith("\n") and err.count("\n") == 1, f"not one line: {err!r}"
    assert err.startswith("error: "), err
    assert "Traceback" not in err and "internal error" not in err, err
    assert fragment in err, f"{fragment!r} not in {err!r}"


def tree(folder: Path) -> dict[str, bytes]:
    """Every file under ``folder`` (hidden ones too) with its bytes."""
    out = {}
    for root, _dirs, files in os.walk(folder):
        for f in files:
            p = Path(root, f)
            out[str(p.relative_to(folder))] = p.read_bytes()
    return out


def nested_dicts(o):
    """Every dict inside a JSON value (a parsed result or schema), depth first."""
    if isinstance(o, dict):
        yield o
        for v in o.values():
            yield from nested_dicts(v)
    elif isinstance(o, list):
        for v in o:
            yield from nested_dicts(v)
