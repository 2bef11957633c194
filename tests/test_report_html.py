"""The printable reports (tamis.exchange.report_html): what a test, lot and daily report say.

The figures are the API's (``gradation`` and ``evaluate`` through tamis.api.handle, compared here
with what the report prints); the sieve-table arithmetic follows ASTM C136/C136M-14 section 9
(cumulative mass retained, percent passing = 100 x (dry mass - cumulative retained) / dry mass),
checked by hand on the demo test Q-L11-CP. The PDF of the printed page is checked in
e2e/test_report_print.py (headless chromium).
"""

from __future__ import annotations

import copy
import json
import re
import subprocess
import sys
from html.parser import HTMLParser
from pathlib import Path

import pytest

from tamis import SCREENING_NOTICE, api, demo
from tamis.exchange import record, report_html as R, wording

ROOT = Path(__file__).resolve().parent.parent


def demo_records():
    return [record.check_record(r) for r in demo.load_records()]


class Text(HTMLParser):
    """The visible text of a document (no style, no title), and the tags seen."""

    def __init__(self):
        super().__init__()
        self.parts, self.tags, self._skip = [], [], 0

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        if tag in ("style", "title"):
            self._skip += 1

    def handle_endtag(self, tag):
        if tag in ("style", "title"):
            self._skip -= 1

    def handle_data(self, data):
        if not self._skip:
            self.parts.append(data)


def text_of(html: str) -> tuple[str, list[str]]:
    p = Text()
    p.feed(html)
    return re.sub(r"\s+", " ", " ".join(p.parts)), p.tags


def api_call(op, **fields):
    return json.loads(api.handle(json.dumps({"schema": 1, "op": op, "id": 1, **fields})))


def test_a_test_report_holds_the_sieve_table_figures_checks_verdict_caution_and_signatures():
    recs = demo_records()
    got = R.build(recs, ids=["Q-L11-CP"])
    assert got["count"] == 1 and got["title"] == "Test report Q-L11-CP"
    text, tags = text_of(got["html"])
    assert "script" not in tags and "svg" in tags  # self-contained: the chart inline, no script
    for s in ("Project Tallowmere Dam (demo)", "Lot L11", "Sample Q-L11-CP", "Tested by I. Marchetti-Oduya",
              "When 2026-09-29 16:30 UTC", "station 0+280", "Band Zone 2 fine filter band (spec. TD-02)",
              "Base soil CORE-C1, Zone 1 core, sandy lean clay"):
        assert s in text, s
    # Sieve table, C136 section 9 by hand: No. 16 retains 221.0 g; cumulative 107.9 + 221.0 = 328.9 g;
    # passing 100 x (1037.6 - 328.9) / 1037.6 = 68.30 %; the band there is 25-85 %.
    assert "No. 16 1.18 221.0 328.9 31.7 68.3 25–85 in" in text
    assert "No. 200 0.075 54 978.5 94.3 5.7 0–5 OUT" in text
    # The figures, as the evaluate op gives them
    ev = api_call("evaluate", **{k: v for k, v in demo.evaluate_request(
        next(r for r in recs if r["meta"].get("sample_id") == "Q-L11-CP"), {r["record_id"]: r for r in recs}
    ).items() if k not in ("schema", "op", "id")})["result"]
    d15 = wording.num(ev["sample"]["d_mm"]["D15"])
    assert d15 == "0.186" and f" {d15} " in text
    assert "USCS SW-SM well-graded sand with silt" in text
    # every check, with its result, and the failing ones with value and limit
    for c in ev["checks"]:
        if c["status"] != "not_applicable" or c.get("advisory"):
            assert wording.title(c["id"]) in text, c["id"]
    assert "Fines content of the filter ✗ fails 5.7 % <= 5 % [1] design step 8" in text
    assert "Specification band ✗ fails margin -0.696 pts >= 0 pts project specification band" in text
    assert "Verdict: Fails a check (reject)" in text
    assert "Band: No. 200 passing 5.7 % > 5 %" in text and "Fines 5.7 % > 5 %" in text
    assert SCREENING_NOTICE in text
    for role in ("Tested by", "Checked by", "Engineer of record / accepted by"):
        assert role in text
    assert text.count("Signature:") == 3
    # sources named, the long documents once as numbered notes
    assert "[1] USDA NRCS National Engineering Handbook Part 633 Ch. 26" in text
    assert "ASTM C136/C136M-14, mass check after sieving" in text


def test_the_api_op_gives_the_same_document_and_refuses_bad_choices():
    recs = demo_records()
    out = api_call("report_html", records=recs, ids=["Q-L11-CP"], paper="a4")
    assert out["ok"], out
    assert out["result"]["html"] == R.build(recs, ids=["Q-L11-CP"], paper="a4")["html"]
    assert "@page{size:A4;" in out["result"]["html"]
    one = next(r for r in recs if r["meta"].get("sample_id") == "Q-L11-CP")
    ctx = [r for r in recs if r["record_id"] in (one["meta"]["band_id"], one["meta"]["base_id"])]
    alone = api_call("report_html", records=[one], context=ctx)["result"]["html"]
    assert "Verdict: Fails a check (reject)" in text_of(alone)[0]
    for bad, field in (({"paper": "a3"}, "paper"), ({"report": "week"}, "report"), ({"ids": ["nope"]}, "ids[0]"),
                       ({"report": "day", "day": "29.09.2026"}, "day"), ({"ids": [one["meta"]["band_id"]]}, "ids[0]")):
        resp = api_call("report_html", records=recs, **bad)
        assert not resp["ok"] and resp["error"]["field"] == field, (bad, resp)


def test_without_its_band_a_test_gets_no_verdict_and_says_why():
    recs = demo_records()
    one = next(r for r in recs if r["meta"].get("sample_id") == "Q-L11-CP")
    text, _ = text_of(R.build([one], ids=["Q-L11-CP"])["html"])
    assert "No verdict" in text and "is not among the records given" in text
    assert "Fails a check" not in text and "Meets the checks" not in text
    assert "Sieve analysis" in text and SCREENING_NOTICE in text


def test_typed_text_never_becomes_markup():
    recs = demo_records()
    one = copy.deepcopy(next(r for r in recs if r["meta"].get("sample_id") == "Q-0907-1"))
    one["meta"]["notes"] = '<script>alert("x")</script> & <b>bold</b>'
    one["meta"]["sample_id"] = "<img src=x onerror=alert(1)>"
    recs = [one if r["record_id"] == one["record_id"] else r for r in recs]
    html = R.build(recs, ids=[one["record_id"]])["html"]
    text, tags = text_of(html)
    assert "script" not in tags and "img" not in tags
    assert "<b>bold" not in html and "<img" not in html
    assert '<script>alert("x")</script> & <b>bold</b>' in text


def test_lot_and_daily_reports_list_the_tests_with_verdicts_and_reasons():
    recs = demo_records()
    lot = R.build(recs, kind="lot", lot="L11")
    text, _ = text_of(lot["html"])
    assert lot["count"] == 3 and "Lot report: L11" in text
    for sid in ("Q-L11-SP", "Q-L11-DL", "Q-L11-CP"):
        assert sid in text
    assert "3: 2 accept, 1 reject, 0 review, 0 without verdict" in text
    assert "Band: No. 200 passing 5.7 % > 5 %; Fines 5.7 % > 5 %" in text
    assert "Quantity not recorded on these tests" in text and SCREENING_NOTICE in text
    # the order is the sampling order: stockpile, delivery, compacted
    assert text.index("Q-L11-SP") < text.index("Q-L11-DL") < text.index("Q-L11-CP")
    day = R.build(recs, kind="day", day="2026-09-16")
    dtext, _ = text_of(day["html"])
    assert day["count"] == 2 and "Q-0916-1 " in dtext and "Q-0916-1R" in dtext
    assert "retest of Q-0916-1" in dtext and "Sieving mass balance: 0.889 % > 0.3 %" in dtext


def test_quantities_give_the_test_frequency_when_records_carry_them():
    recs = demo_records()
    lot = [r for r in recs if r["meta"].get("lot") == "L11"]
    for r, q in zip(lot, (120.0, 80.0, 100.0)):
        r["meta"]["quantity_m3"] = q
    text, _ = text_of(R.build(recs, kind="lot", lot="L11")["html"])
    assert "300 m³ in 3 tests: one test per 100 m³" in text
    assert "120 m³" in text


def test_cli_writes_the_report_and_keeps_the_table(tmp_path):
    csv_path = ROOT / "demo_data" / "demo_project.csv"
    out = tmp_path / "r.html"
    run = lambda *a: subprocess.run([sys.executable, "-m", "tamis", "report", str(csv_path), *a],  # noqa: E731
                                    capture_output=True, text=True, timeout=120)
    p = run("--html", str(out), "--test", "Q-L11-CP", "--test", "D-0922-1", "--paper", "letter")
    assert p.returncode == 0, p.stderr
    text, tags = text_of(out.read_text(encoding="utf-8"))
    assert tags.count("article") == 2 and "Q-L11-CP" in text and "D-0922-1" in text
    assert "wrote Test reports (2 tests) to" in p.stderr
    p = run("--html", str(out), "--lot", "L11")
    assert p.returncode == 0 and "Lot report: L11" in text_of(out.read_text(encoding="utf-8"))[0]
    p = run("--html", str(out), "--lot", "L99")
    assert p.returncode == 2 and "no test of lot L99" in p.stderr
    p = run("--html", str(out), "--test", "NOPE")
    assert p.returncode == 2 and "NOPE" in p.stderr
    p = run("--lot", "L11")
    assert p.returncode == 2 and "--html" in p.stderr
    p = run()  # the table, as before
    assert p.returncode == 0 and "20 tests: 15 accept, 5 reject" in p.stdout


@pytest.mark.parametrize("sid", ["Q-0907-1", "D-0922-1", "S-0918-T"])
def test_every_demo_verdict_and_reason_is_the_csvs(sid):
    """The report and the CSV's calc columns say the same (one wording, one computation)."""
    from tamis.exchange import summaries as S
    recs = demo_records()
    idx = {r["record_id"]: r for r in recs}
    one = next(r for r in recs if r["meta"].get("sample_id") == sid)
    s = S.compute_summary(one, idx)
    text, _ = text_of(R.build(recs, ids=[sid])["html"])
    assert f"({s['verdict']})" in text
    for line in s["reasons"]:
        assert line in text


def test_the_apps_policy_allows_the_reports_style_blocks_and_no_other():
    """The report frame inherits the app's Content-Security-Policy (CSP Level 3, policy inheritance of
    srcdoc documents): its style blocks are allowed by their hashes, listed in index.html and serve.py.
    After a change of the report's style sheet, print the new list with
    ``python -c "from tamis.exchange.report_html import style_hashes; print(' '.join(style_hashes()))"``."""
    want = set(R.style_hashes())
    assert len(want) == 4
    html = R.build(demo_records(), ids=["Q-L11-CP"])["html"]
    import base64
    import hashlib
    blocks = re.findall(r"<style>(.*?)</style>", html, re.S)
    assert len(blocks) == 2
    for b in blocks:
        assert f"'sha256-{base64.b64encode(hashlib.sha256(b.encode()).digest()).decode()}'" in want
    assert "style=" not in html  # no style attribute: the policy allows none
    for path in ("webapp/index.html", "scripts/serve.py"):
        src = (ROOT / path).read_text(encoding="utf-8")
        m = re.search(r"style-src 'self' ([^;\"]*)", src)
        assert m, path
        assert set(m.group(1).split()) == want, path
