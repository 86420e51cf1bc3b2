"""Every option of every command explains itself in ``--help`` (issue 16).

The checks walk the argparse parsers that ``ftsource.cli.build_parser`` builds, so an option
added later without help text, without its default or without its accepted values fails here.
What counts as "stated" is the project's own rule for its help texts (issue 16), not a
numerical fact: an option's help names its default with the word "default" (or says the option
is required), shows the default value itself where there is one, and names every accepted
choice.
"""

from __future__ import annotations

import argparse

import pytest
from cli_helpers import assert_clean_error, run
from test_public_api import LIGHT_COMMANDS

from ftsource.cli import APODIZATION_NAMES, build_parser


def _subparsers(parser: argparse.ArgumentParser) -> dict[str, argparse.ArgumentParser]:
    """The top-level parser as "" and each command's parser by its name."""
    found = {"": parser}
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            found.update(action.choices)
    return found


def _expanded_help(parser, action) -> str:
    """The help text as ``--help`` prints it (``%(default)s`` and ``%%`` expanded)."""
    return parser._get_formatter()._expand_help(action)


def help_problems(parser: argparse.ArgumentParser) -> list[str]:
    """Every missing piece of help in ``parser`` and its commands, as readable lines."""
    problems = []
    for name, sub in _subparsers(parser).items():
        where = f"ftsource {name}".strip()
        for action in sub._actions:
            if isinstance(action, (argparse._HelpAction, argparse._SubParsersAction)):
                continue
            label = "/".join(action.option_strings) or action.dest
            if not action.help or action.help == argparse.SUPPRESS:
                problems.append(f"{where} {label}: no help text")
                continue
            text = _expanded_help(sub, action)
            if action.option_strings and action.dest != "version":
                if "default" not in text and not action.required and "required" not in text:
                    problems.append(f"{where} {label}: help does not state the default")
                default = action.default
                if default not in (None, False, argparse.SUPPRESS) and str(default) not in text:
                    problems.append(f"{where} {label}: default {default!r} not shown")
            for choice in action.choices or ():
                if str(choice) not in text:
                    problems.append(f"{where} {label}: accepted value {choice!r} not named")
    return problems


def test_every_option_of_every_command_has_help_with_its_default():
    problems = help_problems(build_parser())
    assert problems == [], "\n".join(problems)


def test_the_help_check_can_fail():
    """The walker finds an option without help, one whose default is not stated, a default
    value that is not shown and a choice that is not named, in a command's parser."""
    p = argparse.ArgumentParser(prog="x")
    sub = p.add_subparsers(dest="command")
    c = sub.add_parser("cmd")
    c.add_argument("--bare")
    c.add_argument("--silent", default="3nm", help="a length")
    c.add_argument("--wrong", default="3nm", help="a length (default: 4nm)")
    c.add_argument("--mode", choices=("a", "bee"), default="a", help="mode (default: a)")
    c.add_argument("--fine", default="5s", help="a time (default: %(default)s)")
    assert help_problems(p) == [
        "ftsource cmd --bare: no help text",
        "ftsource cmd --silent: help does not state the default",
        "ftsource cmd --silent: default '3nm' not shown",
        "ftsource cmd --wrong: default '3nm' not shown",
        "ftsource cmd --mode: accepted value 'bee' not named",
    ]


def test_apodization_names_in_help_are_the_registry():
    """The names --help lists (kept as text so --help loads no numpy) are exactly the
    registry's, in its order, and each is in analyze's help."""
    from ftsource.spectrum.apodization import apodization_names

    assert APODIZATION_NAMES == apodization_names()
    parser = _subparsers(build_parser())["analyze"]
    action = next(a for a in parser._actions if "--apodization" in a.option_strings)
    text = _expanded_help(parser, action)
    assert all(name in text for name in apodization_names())


def test_every_command_is_checked_for_a_light_help():
    """tests/test_public_api.py checks that each command's --help loads only the standard
    library; it must list every command there is."""
    commands = {name for name in _subparsers(build_parser()) if name}
    listed = {argv[0] for argv in LIGHT_COMMANDS if argv[0] != "--help" and len(argv) > 1}
    assert commands <= listed, sorted(commands - listed)


def test_help_shows_units_and_defaults(capsys):
    """Spot checks of the texts the issue names: simulate's defaults and --noise's unit."""
    status, out, _ = run(capsys, ["simulate", "--help"])
    assert status == 0
    flat = " ".join(out.split())
    for fragment in ("(default: 48kHz", "(default: 2s)", "(default: 0.002)", "bare ratio",
                     "(default: quadrature)", "(default: vacuum)"):
        assert fragment in flat, fragment
    status, out, _ = run(capsys, ["analyze", "--help"])
    flat = " ".join(out.split())
    assert "norton-beer-strong (default: happ-genzel)" in flat
    assert "written as one word" in flat


@pytest.mark.parametrize(
    "argv, option, value, unit",
    [
        (["analyze", "scan.csv", "--reference-wavelength", "633", "nm"],
         "--reference-wavelength", "633", "nm"),
        (["simulate", "--sample-rate=48", "kHz", "out.csv"], "--sample-rate", "48", "kHz"),
        (["analyze", "--mirror-speed", "0.5", "mm/s", "scan.csv"], "--mirror-speed", "0.5",
         "mm/s"),
        (["lines", "--near", "6.4e2", "nm"], "--near", "6.4e2", "nm"),
        (["calibrate", "r.csv", "--known-wavelength", "632.99", "nm", "--save", "c.json"],
         "--known-wavelength", "632.99", "nm"),
    ],
)
def test_a_quantity_split_by_the_shell_gets_a_hint(capsys, argv, option, value, unit):
    status, _out, err = run(capsys, argv)
    assert_clean_error(status, err, "unrecognized arguments")
    assert f"write it as one word ({option} {value}{unit})" in err
    assert f"quote it ({option} '{value} {unit}')" in err


@pytest.mark.parametrize(
    "argv",
    [
        ["analyze", "scan.csv", "extra"],
        ["analyze", "scan.csv", "--reference-wavelength", "633nm", "nm"],
        ["simulate", "out.csv", "--seed", "3", "4"],
    ],
)
def test_no_split_hint_without_a_number_and_a_unit(capsys, argv):
    status, _out, err = run(capsys, argv)
    assert_clean_error(status, err, "unrecognized arguments")
    assert "one word" not in err
