"""docs/criteria.md is generated from the registry; it must not drift."""

from __future__ import annotations

import importlib.util
import pathlib
import re

from tamis import registry

ROOT = pathlib.Path(__file__).resolve().parent.parent


def _gen():
    spec = importlib.util.spec_from_file_location("gen_criteria_docs", ROOT / "scripts" / "gen_criteria_docs.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_committed_docs_match_the_registry():
    assert (ROOT / "docs" / "criteria.md").read_text(encoding="utf-8") == _gen().render(), \
        "run: python scripts/gen_criteria_docs.py"


def test_every_registered_id_is_documented():
    text = (ROOT / "docs" / "criteria.md").read_text(encoding="utf-8")
    for cid in registry.check_ids():
        assert f"`{cid}`" in text


def test_registry_lists_the_lab_ids_and_every_id_the_criteria_emit():
    ids = set(registry.check_ids())
    assert {"qa.mass_balance", "qa.sieve_overload", "qa.specimen_mass", "band.compliance"} <= ids
    core = ROOT / "pycore" / "tamis"
    src = "".join(p.read_text(encoding="utf-8") for p in list(core.glob("*.py")) + list(core.glob("criteria/*.py")))
    emitted = set(re.findall(r'"((?:qa|band|filter|stability|permeability)\.[a-z_]+)"', src))
    assert emitted and emitted <= ids, emitted - ids


def test_every_entry_has_a_provenance_tag():
    for e in registry.ENTRIES:
        assert any(e.provenance.startswith(t) for t in registry.PROVENANCE_TAGS), e.id
        assert e.source and e.edition and e.locator
