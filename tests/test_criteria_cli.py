"""The criteria golden cases replayed through the command line
(``python -m tamis zones FILE``, ``design_band FILE``, ``evaluate FILE``): the
CLI must print exactly the stored response of ``tamis.api.handle``.

The cases and their sources are named in each request's ``_source`` field
(invented scenarios, or W2 percentages from a secondary source).
"""

from __future__ import annotations

import json
import pathlib
import subprocess
import sys

import pytest

GOLDEN = pathlib.Path(__file__).resolve().parent / "golden"
MINE = sorted(p for p in GOLDEN.glob("*.request.json")
              if p.name.startswith(("zones-", "design_band-", "evaluate-filter-terzaghi",
                                    "evaluate-filter-dispersive")))


def test_there_are_cases():
    assert len(MINE) >= 8


@pytest.mark.parametrize("req", MINE, ids=lambda p: p.name[: -len(".request.json")])
def test_cli_prints_the_golden_response(req):
    op = json.loads(req.read_text(encoding="utf-8"))["op"]
    expected = req.with_name(req.name.replace(".request.json", ".response.json")).read_text(encoding="utf-8")
    out = subprocess.run([sys.executable, "-m", "tamis", op, str(req), "--compact"], capture_output=True,
                         text=True, check=False)
    assert out.stdout.rstrip("\n") == expected
    ok = json.loads(expected)["ok"]
    assert out.returncode == (0 if ok else 2)
