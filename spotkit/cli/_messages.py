"""Messages that name what the user can type: library words turned into the command's options.

The library raises :class:`~spotkit.errors.SpotkitError` messages in its own words: parameter
names (``change_at``, ``window_slots``) and, for files, the ``spotkit ingest`` options that
fix them (``--map``, ``--unit``). On the command line those words must be options of the
command that was run. :func:`cli_message` rewrites a message for the command (sub)parser
that raised it:

- a library parameter with an option of that command becomes the option (``needs
  change_at`` -> ``needs --change-at``);
- an option the command lacks (``compare`` has no ``--map``) gets a hint naming the
  command that has it, with the two commands to run;
- an input that is a spreadsheet workbook (``.xlsx``, ``.ods`` ...) that could not be read
  gets the hint to save it as CSV.

This module imports no other command module; :mod:`spotkit.cli.app` calls it.
"""
from __future__ import annotations

import argparse
import re
from pathlib import Path

#: library parameter names -> the option that sets them on the command line (only names that
#: cannot be ordinary words; an entry is used only when the command has that option)
PARAMETER_OPTIONS = {
    "change_at": "--change-at",
    "window_slots": "--window",
    "n_boot": "--boot",
    "min_pairs": "--min-pairs",
    "distance_edges": "--distance-edges",
    "elevation_edges": "--elevation-edges",
    "bearing_width_deg": "--bearing-width",
    "layer_height_km": "--layer-height",
    "day_hours": "--day-hours",
    "threshold_correction": "--threshold-correction",
    "missed_reports": "--missed-reports",
    "require_open_path": "--no-open-path-check",
    "block_slots": "--block-slots",
    "effect_db": "--effect",
    "max_reject_share": "--max-reject-share",
    "chunk_rows": "--chunk-rows",
    "memory_mb": "--memory-mb",
    "tau_db": "--tau",
    "tau_from": "--tau-from",
    "constants": "--set",
    "date_order": "--date-order",
    "target_width_db": "--target-width",
    "margin_db": "--margin",
    "max_hours": "--max-hours",
    "radius_km": "--radius-km",
}

#: phrases of library messages whose parameter is an ordinary word: (pattern, option)
PHRASE_OPTIONS = (
    (re.compile(r"\bneeds a schedule\b"), "needs --schedule", "--schedule"),
    (re.compile(r"\bgive home\b"), "give --home", "--home"),
    (re.compile(r"the call of B is missing \(b=(None|'\s*')\)"),
     "the call of B is missing: give --b CALL", "--b"),
)

#: options of the file readers: a command without them sends the user through ingest
INGEST_OPTIONS = ("--map", "--unit", "--region", "--delimiter", "--header")

#: suffixes of spreadsheet workbooks (and their first bytes: zip, OLE2)
SPREADSHEET_SUFFIXES = (".xlsx", ".xlsm", ".xls", ".ods", ".numbers")
_SPREADSHEET_MAGIC = (b"PK\x03\x04", b"\xd0\xcf\x11\xe0")

_OPTION_RE = re.compile(r"(?<![\w-])(--[a-z][a-z0-9-]*)")


def command_parser(parser: argparse.ArgumentParser,
                   argv) -> tuple[list[str], argparse.ArgumentParser]:
    """The words of the (sub)command in ``argv`` (``["plan", "duration"]``) and its parser."""
    words: list[str] = []
    current = parser
    for token in argv or ():
        choices = _subcommands(current)
        if token in choices:
            words.append(token)
            current = choices[token]
        elif not token.startswith("-") and not choices:
            break
    return words, current


def _subcommands(parser) -> dict:
    for action in parser._actions:  # argparse keeps its sub-parsers only here
        if isinstance(action, argparse._SubParsersAction):
            return action.choices
    return {}


def _options(parser) -> set[str]:
    return {s for action in parser._actions for s in action.option_strings}


def _commands_with(parser, option: str, words=()) -> list[str]:
    """Every command (as ``"spotkit ingest"``) whose parser has ``option``."""
    found = []
    subs = _subcommands(parser)
    if not subs and option in _options(parser):
        found.append(" ".join(("spotkit", *words)))
    for name, sub in subs.items():
        found += _commands_with(sub, option, (*words, name))
    return found


def cli_message(message: str, parser: argparse.ArgumentParser, argv) -> str:
    """``message`` in the words of the command that ``argv`` ran (see the module docstring).

    Parameters
    ----------
    message : str
        The text of a :class:`~spotkit.errors.SpotkitError`.
    parser : argparse.ArgumentParser
        The whole ``spotkit`` parser (:func:`spotkit.cli.app.build_parser`).
    argv : sequence of str
        The arguments of the run.

    Returns
    -------
    str

    Examples
    --------
    >>> from spotkit.cli.app import build_parser
    >>> cli_message("the before-after design needs change_at (the moment the antenna changed)",
    ...             build_parser(), ["compare", "x.parquet"])
    'the before-after design needs --change-at (the moment the antenna changed)'
    """
    words, sub = command_parser(parser, argv)
    if not words:
        return message
    command = " ".join(("spotkit", *words))
    has = _options(sub)
    for name, option in PARAMETER_OPTIONS.items():
        if option in has:
            message = re.sub(rf"(?<![\w-]){name}(?![\w])", option, message)
    for pattern, replacement, option in PHRASE_OPTIONS:
        if option in has:
            message = pattern.sub(replacement, message)
    hints = []
    missing = [o for o in dict.fromkeys(_OPTION_RE.findall(message)) if o not in has]
    reader = [o for o in missing if o in INGEST_OPTIONS]
    if reader and _commands_with(parser, reader[0]) == ["spotkit ingest"]:
        named = [t for t in argv if not t.startswith("-") and t not in words and t in message]
        source = named[0] if named else "FILE"
        example = "--map FIELD=COLUMN" if reader[0] == "--map" else f"{reader[0]} ..."
        these = " and ".join(reader) + (" are options" if len(reader) > 1 else " is an option")
        hints.append(f"{these} of spotkit ingest, not of {command}: run 'spotkit ingest "
                     f"{source} {example} -o spots.parquet', then '{command} spots.parquet "
                     "...'")
        missing = [o for o in missing if o not in reader]
    for option in missing:
        others = _commands_with(parser, option)
        if others:
            hints.append(f"{command} has no {option}; {', '.join(others)} "
                         f"{'has' if len(others) == 1 else 'have'} it")
    hints.append(_spreadsheet_hint(message, argv))
    hints = [h for h in hints if h]
    if not hints:
        return message
    return ". ".join([message.rstrip().rstrip("."), *hints])


def _spreadsheet_hint(message: str, argv) -> str:
    """The hint to save a workbook as CSV, when an input named in ``message`` is one."""
    for token in argv or ():
        if token.startswith("-") or token not in message:
            continue
        path = Path(token)
        workbook = path.suffix.lower() in SPREADSHEET_SUFFIXES
        if not workbook and path.is_file():
            try:
                with open(path, "rb") as fh:
                    head = fh.read(4)
            except OSError:
                continue
            # a zip or OLE2 file: not a text table (a gzip CSV starts with 1f 8b)
            workbook = head in _SPREADSHEET_MAGIC
        if workbook:
            return (f"{token} is a spreadsheet workbook; if the workbook is the trouble, save "
                    "the sheet from the spreadsheet program as CSV (comma-separated text) "
                    "and give spotkit that file")
    return ""


__all__ = ["PARAMETER_OPTIONS", "INGEST_OPTIONS", "SPREADSHEET_SUFFIXES", "cli_message",
           "command_parser"]
