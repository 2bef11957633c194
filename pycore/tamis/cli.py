"""Command line: ``python -m tamis COMMAND ...``.

JSON commands (``gradation``, ``evaluate``, ``zones``, ``design_band``) read a
request from a file or standard input, pass it through :func:`tamis.api.handle`
(the same function the web app calls) and print the JSON response, or a table
with ``--table``. They exit with status 2 when the input is invalid.

Office commands (``merge``, ``report``, ``check``) work on the CSV exchange
files (:mod:`tamis.exchange.office`); ``demo`` prints a tour of the demo project.
"""

from __future__ import annotations

import argparse
import importlib
import json
import os
import sys

from . import SCREENING_NOTICE, __version__
from . import api

JSON_COMMANDS = {
    "gradation": "masses or percent passing of one test -> gradation and lab QA checks",
    "evaluate": "a sample (and optionally its base soil and band) -> checks and verdict",
    "zones": "a zone sequence, finest (core) to coarsest (shell) -> one verdict per interface",
    "design_band": "base soils -> the band a filter must fall in, step by step",
}

#: command -> ("module", "help"); each module has ``add_arguments(parser)`` and ``run(args) -> int``.
OTHER_COMMANDS = {
    "merge": ("tamis.exchange.office", "merge CSV exchange files from several devices into one"),
    "report": ("tamis.exchange.office", "recompute every verdict in a CSV file and print a summary"),
    "check": ("tamis.exchange.office", "validate a CSV exchange file without writing anything"),
    "lots": ("tamis.exchange.lots_office", "the lots of a CSV file: testing frequency, trends, warnings, PWL"),
    "demo": ("tamis.demo", "a short tour of the demo project"),
}


class UserError(Exception):
    """A mistake of the person at the command line (a file that cannot be read or written):
    printed as one line ``error: FILE: problem``, exit status 2, never a traceback."""


def decode_text(data: bytes, name: str) -> str:
    """UTF-8 text of a file's bytes (a leading byte order mark is dropped); :class:`UserError` otherwise."""
    if data[:2] in (b"\xff\xfe", b"\xfe\xff") or (len(data) >= 2 and (data[0] == 0) != (data[1] == 0)):
        raise UserError(f"{name}: the file is UTF-16 text; save it as UTF-8.")
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[:exc.start].count(b"\n") + 1
        raise UserError(f"{name}: byte {exc.start} (0x{data[exc.start]:02x}, line {line}) is not UTF-8; "
                        "save the file as UTF-8.") from None
    return text[1:] if text.startswith("\ufeff") else text


def os_problem(err: OSError) -> str:
    """A person's words for why a file could not be opened."""
    if isinstance(err, FileNotFoundError):
        return "no such file or folder"
    if isinstance(err, IsADirectoryError):
        return "is a folder, not a file"
    if isinstance(err, NotADirectoryError):
        return "a part of the path is not a folder"
    if isinstance(err, PermissionError):
        return "permission denied"
    return err.strerror or type(err).__name__


def _read(path: str) -> str:
    if path == "-":
        return decode_text(sys.stdin.buffer.read(), "standard input")
    if os.path.isdir(path):
        raise UserError(f"{path}: is a folder, not a file.")
    try:
        with open(path, "rb") as fh:
            data = fh.read()
    except OSError as err:
        raise UserError(f"{path}: {os_problem(err)}.") from None
    return decode_text(data, path)


def build_request(command: str, text: str) -> str:
    """Turn file content into a request for ``command``.

    The file may hold a whole request (with ``"op"``), or only its fields
    (``{"test": ...}``, ``{"sample": ..., "base": ...}``); for ``gradation`` a bare
    test object (with ``sieves`` or ``passing``) is accepted too.
    """
    try:
        obj = json.loads(text)
    except ValueError:
        return text  # let the API report the JSON error the same way it does for the app
    if not isinstance(obj, dict):
        return text
    if "op" in obj:
        return text  # a whole request: passed on as it is
    if command == "gradation" and "test" not in obj and ("sieves" in obj or "passing" in obj):
        obj = {"test": obj}
    return json.dumps({"schema": api.SCHEMA, "op": command, "id": None, **obj})


def _run_json(command: str, args) -> int:
    response = api.handle(build_request(command, _read(args.file)))
    if args.table:
        from .cli_text import render
        print(render(command, json.loads(response)))
    else:
        print(response if args.compact else json.dumps(json.loads(response), indent=2))
    resp = json.loads(response)
    if not resp.get("ok"):
        err = resp.get("error", {})
        print(f"error: {err.get('field') or 'request'}: {err.get('message')}", file=sys.stderr)
        return 2
    return 0


def make_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="python -m tamis",
                                description="tamis: sieve tests and filter checks. " + SCREENING_NOTICE)
    p.add_argument("--version", action="version", version=f"tamis {__version__}")
    sub = p.add_subparsers(dest="command", required=True)
    for name, help_text in JSON_COMMANDS.items():
        sp = sub.add_parser(name, help=help_text, description=help_text)
        sp.add_argument("file", help="JSON file, or - for standard input")
        sp.add_argument("--table", action="store_true", help="print a table for people instead of JSON")
        sp.add_argument("--compact", action="store_true", help="print the JSON on one line")
    for name, (mod, help_text) in OTHER_COMMANDS.items():
        sp = sub.add_parser(name, help=help_text, description=help_text)
        importlib.import_module(mod).add_arguments(name, sp)
    return p


def main(argv=None) -> int:
    args = make_parser().parse_args(argv)
    try:
        if args.command in JSON_COMMANDS:
            return _run_json(args.command, args)
        mod = importlib.import_module(OTHER_COMMANDS[args.command][0])
        return mod.run(args.command, args)
    except UserError as err:
        print(f"error: {err}", file=sys.stderr)
        return 2
