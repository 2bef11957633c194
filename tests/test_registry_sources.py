"""One registry: the ``source`` of every check the core emits is the registry's.

Every check in the answers to the golden requests, to the demo project's
``evaluate`` and ``zones`` requests and to evaluations against each band preset
(lab QA, band, filter, stability and estimate checks, in every layer) must carry
exactly :func:`tamis.registry.source_text` of its id, its rule set (the answer's
``rules.criteria``) and, for a band check, the band's own source.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from conftest import dicts_with
from tamis import api, demo, registry
from tamis.lab.bands import PRESETS, SRC_USER_BAND

GOLDEN = Path(__file__).resolve().parent / "golden"


def _checks(obj):
    """Every check dict in a response (any dict with an id, a status and a source)."""
    return dicts_with(obj, {"id", "status", "source", "advisory"})


def _requests() -> list[dict]:
    reqs = [json.loads(p.read_text(encoding="utf-8")) for p in sorted(GOLDEN.glob("*.request.json"))]
    records = demo.load_records()
    by_id, by_sample = demo.index(records)
    reqs += [demo.evaluate_request(r, by_id) for r in demo.deliveries(records)]
    reqs.append(demo.zones_request(by_sample))
    reqs += [demo.stability_request(by_sample[key]) for _, key in demo.ZONE_SEQUENCE]
    sample = demo.deliveries(records)[0]["test"]
    for preset in PRESETS:
        band = {k: v for k, v in preset.items() if k in ("name", "limits", "fm_min", "fm_max",
                                                          "max_between_sieves_pct", "source")}
        reqs.append({"schema": 1, "op": "evaluate", "id": preset["name"], "sample": sample, "band": band})
    return reqs


def _expected(check: dict, request: dict, result: dict) -> str:
    e = registry.entry(check["id"], (result.get("rules") or {}).get("criteria", ""))
    if e.carries == registry.GIVEN:
        band = request.get("band") or {}
        return registry.source_text(check["id"], given=band.get("source") or SRC_USER_BAND)
    return registry.source_text(check["id"], e.variant)


REQUESTS = _requests()


def test_the_requests_reach_checks_of_every_family():
    ids = set()
    for req in REQUESTS:
        resp = json.loads(api.handle(json.dumps(req)))
        ids |= {c["id"] for c in _checks(resp.get("result"))}
    families = {i.split(".")[0] for i in ids}
    assert {"qa", "band", "filter", "stability", "permeability"} <= families
    assert {"qa.mass_balance", "qa.sieve_overload", "qa.specimen_mass", "band.compliance",
            "band.fineness_modulus", "band.between_sieves"} <= ids
    assert ids <= set(registry.check_ids())


@pytest.mark.parametrize("req", REQUESTS, ids=lambda r: f"{r.get('op')}-{r.get('id')}")
def test_every_emitted_source_is_the_registrys(req):
    resp = json.loads(api.handle(json.dumps(req)))
    if not resp["ok"]:
        return  # an error answer carries no check
    for check in _checks(resp["result"]):
        assert check["source"] == _expected(check, req, resp["result"]), check["id"]


def test_a_band_check_names_the_band_source_and_only_a_band_check_can():
    assert registry.source_text("band.compliance", given="spec. TD-02") == "spec. TD-02"
    with pytest.raises(ValueError):
        registry.source_text("band.compliance")
    with pytest.raises(ValueError):
        registry.source_text("qa.mass_balance", given="anything")


def test_the_composed_source_names_document_edition_locator_and_provenance():
    e = registry.entry("filter.fines")
    assert registry.source_text("filter.fines") == f"{e.source}, {e.edition}, {e.locator} [{e.provenance}]"
