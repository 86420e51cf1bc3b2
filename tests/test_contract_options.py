"""docs/contract.md lists every command with exactly its options (issue 16).

The oracle is the command line itself (the argparse parsers of ``ftsource.cli``): each
command's section of the contract (``### `ftsource NAME` ``) must name in its tables exactly
the options the parser accepts, taking the section "Analysis options" when the command's
section says it "takes the analysis options"; each default the parser holds must appear in
the table's default column (spaces and backticks aside).

Reference: the parsers built with argparse (Python standard library); no numerical values.
"""

from __future__ import annotations

import argparse
import re
from pathlib import Path

import pytest

from ftsource.cli import build_parser

CONTRACT = Path(__file__).resolve().parents[1] / "docs" / "contract.md"
_OPTION = re.compile(r"--[a-z0-9][a-z0-9-]*")


def _sections(text: str) -> dict[str, str]:
    """``### `` headings (backticks dropped) and the text under each, to the next heading."""
    parts = re.split(r"^(#{2,3} .*)$", text, flags=re.MULTILINE)
    return {parts[i].lstrip("#").strip().replace("`", ""): parts[i + 1]
            for i in range(1, len(parts) - 1, 2)}


def table_rows(section: str) -> dict[str, str]:
    """Each option named in the first column of the section's tables, with that row's last
    cell (the default column)."""
    rows = {}
    for line in section.splitlines():
        if not line.startswith("|") or set(line) <= set("|-: "):
            continue
        # '\|' inside a cell (air\|vacuum) is one cell's text, not a column border
        cells = re.split(r"(?<!\\)\|", line.strip().strip("|"))
        first, last = cells[0], cells[-1].strip()
        for option in _OPTION.findall(first):
            rows[option] = last
    return rows


def contract_options(text: str) -> dict[str, dict[str, str]]:
    """``{command: {option: default cell}}`` from the contract's command sections."""
    sections = _sections(text)
    shared = table_rows(sections.get("Analysis options", ""))
    found = {}
    for title, body in sections.items():
        m = re.fullmatch(r"ftsource ([a-z]+)", title)
        if not m:
            continue
        rows = table_rows(body)
        if "takes the analysis options" in " ".join(body.lower().split()):
            rows = {**shared, **rows}
        found[m[1]] = rows
    return found


def parser_options() -> dict[str, dict[str, object]]:
    """``{command: {option: default}}`` from the parsers (help excluded)."""
    out = {}
    for action in build_parser()._actions:
        if isinstance(action, argparse._SubParsersAction):
            for name, sub in action.choices.items():
                out[name] = {
                    opt: a.default
                    for a in sub._actions if not isinstance(a, argparse._HelpAction)
                    for opt in a.option_strings if opt.startswith("--")
                }
    return out


def _flat(text: str) -> str:
    return re.sub(r"[\s`]", "", text)


def test_every_command_has_a_section():
    assert sorted(contract_options(CONTRACT.read_text())) == sorted(parser_options())


@pytest.mark.parametrize("command", sorted(parser_options()))
def test_contract_lists_exactly_the_options(command):
    listed = contract_options(CONTRACT.read_text()).get(command, {})
    actual = parser_options()[command]
    assert sorted(set(actual) - set(listed)) == [], "options missing from docs/contract.md"
    assert sorted(set(listed) - set(actual)) == [], "docs/contract.md lists unknown options"


@pytest.mark.parametrize("command", sorted(parser_options()))
def test_contract_shows_the_defaults(command):
    listed = contract_options(CONTRACT.read_text()).get(command, {})
    wrong = {
        opt: (default, listed.get(opt))
        for opt, default in parser_options()[command].items()
        if default not in (None, False) and _flat(str(default)) not in _flat(listed.get(opt, ""))
    }
    assert wrong == {}, "defaults not in the contract's default column"


def test_the_comparison_can_fail():
    page = (
        "## Command line\n### Analysis options\n| option | meaning | default |\n|---|---|---|\n"
        "| `--medium air\\|vacuum` | x | `air` |\n"
        "### `ftsource a`\nTakes the analysis options and:\n\n| option | m | default |\n"
        "|---|---|---|\n| `--json` | j | off |\n| `--min QTY`, `--max QTY` | r | 2 nm |\n"
        "### `ftsource b`\n| option | m | default |\n|---|---|---|\n| `--seed N` | s | `0` |\n"
    )
    assert contract_options(page) == {
        "a": {"--medium": "`air`", "--json": "off", "--min": "2 nm", "--max": "2 nm"},
        "b": {"--seed": "`0`"},
    }
