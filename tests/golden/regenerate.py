"""Rewrite every golden response from its request.

    python tests/golden/regenerate.py [--only PREFIX] [--check]

Each ``<name>.request.json`` is passed, as the exact text of the file, to
``tamis.api.handle``; the string it returns is written to
``<name>.response.json`` with no trailing newline. ``tests/test_golden.py``
(CPython) and ``tests/pyodide/replay_golden.mjs`` (Pyodide under Node) then
check that each engine reproduces every byte. ``--check`` writes nothing and
lists the cases whose stored response differs (exit status 1 if any).

Regenerate only after a deliberate change of the core's output, and read the
diff of the response files before committing them.
"""

from __future__ import annotations

import argparse
import pathlib
import sys

HERE = pathlib.Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent.parent / "pycore"))

from tamis import api  # noqa: E402


def cases(only: str | None = None) -> list[pathlib.Path]:
    """The request files, sorted, optionally only those whose name starts with ``only``."""
    reqs = sorted(HERE.glob("*.request.json"))
    return [p for p in reqs if only is None or p.name.startswith(only)]


def response_path(request: pathlib.Path) -> pathlib.Path:
    return request.with_name(request.name[: -len(".request.json")] + ".response.json")


def answer(request: pathlib.Path) -> str:
    return api.handle(request.read_text(encoding="utf-8"))


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--only", help="only cases whose name starts with this prefix")
    ap.add_argument("--check", action="store_true", help="write nothing; list the cases that differ")
    args = ap.parse_args(argv)
    differ = 0
    for req in cases(args.only):
        out, resp = answer(req), response_path(req)
        old = resp.read_text(encoding="utf-8") if resp.exists() else None
        if old != out:
            differ += 1
            print(("differs: " if args.check else "rewrote: ") + resp.name)
            if not args.check:
                resp.write_text(out, encoding="utf-8", newline="")
    print(f"{len(cases(args.only))} cases, {differ} {'differ' if args.check else 'rewritten'}")
    return 1 if (args.check and differ) else 0


if __name__ == "__main__":
    raise SystemExit(main())
