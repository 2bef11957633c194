"""Golden files: CPython must reproduce every stored response byte for byte.

The same files are replayed inside Pyodide by tests/pyodide/replay_golden.mjs,
so a difference between the two engines shows up as a failure in one of them.
After a deliberate change of output, run ``python tests/golden/regenerate.py``
and read the diff.
"""

import json
import pathlib
import sys

import pytest

GOLDEN = pathlib.Path(__file__).resolve().parent / "golden"
sys.path.insert(0, str(GOLDEN))
import regenerate  # noqa: E402

CASES = regenerate.cases()


def test_there_are_golden_cases_for_gradation_and_evaluate():
    names = [p.name for p in CASES]
    assert sum(n.startswith("gradation-") for n in names) >= 4
    assert sum(n.startswith("evaluate-") for n in names) >= 2


@pytest.mark.parametrize("request_path", CASES, ids=[p.name[: -len(".request.json")] for p in CASES])
def test_response_is_reproduced_byte_for_byte(request_path):
    resp = regenerate.response_path(request_path)
    assert resp.exists(), f"{resp.name} is missing: run tests/golden/regenerate.py"
    stored = resp.read_bytes().decode("utf-8")
    assert not stored.endswith("\n"), "a golden response has no trailing newline"
    got = regenerate.answer(request_path)
    assert got == stored, f"{resp.name} differs; after a deliberate change run tests/golden/regenerate.py"
    json.loads(stored, parse_constant=lambda name: pytest.fail(f"{name} in {resp.name}"))
