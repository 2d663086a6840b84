"""JUnit XML reports: one test case per claim, read back with the standard XML parser.

The shape checked here is the one CI servers read (fact of the trade, common
practice; the junit-xml package writes it): ``<testsuites>`` holding one
``<testsuite name tests failures errors skipped>`` per file, each holding
``<testcase classname name time>`` with a ``<failure>``, ``<skipped>`` or
``<error>`` child when the case did not pass.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

from checker.claims import run_check
from checker.claims.common import Options
from checker.elab import load_namespace
from checker.report.junit import junit_text, write_junit
from checker.claims.result import OPEN, PROVED, REFUTED, Result, TraceEntry


def res(status, line, check="silo", file="a.cnl", claim="count", seconds=0.25, trace=None):
    return Result(file=file, check=check, claim=claim, line=line, status=status, seconds=seconds,
                  summary=f"{status} summary", trace=trace, evidence=[f"evidence of line {line}"])


def test_one_case_per_claim_with_failures_and_skips(tmp_path):
    results = [res(PROVED, 5), res(REFUTED, 6, claim="equal", trace=[TraceEntry(0, 3, {"en": 1}, 2), TraceEntry(1, 4, None, 0)]),
               res(OPEN, 7, claim="recover"), res(PROVED, 3, file="b.cnl", check="vat", seconds=1.5)]
    path = tmp_path / "report.xml"
    write_junit(results, str(path), errors=[("c.cnl", "c.cnl:2:1: unknown design 'x'")])
    root = ET.parse(path).getroot()
    suites = root.findall("testsuite") if root.tag == "testsuites" else [root]
    assert [s.get("name") for s in suites] == ["countersign:a.cnl", "countersign:b.cnl", "countersign:c.cnl"]
    a = suites[0]
    assert (a.get("tests"), a.get("failures"), a.get("skipped"), a.get("errors")) == ("3", "1", "1", "0")
    cases = a.findall("testcase")
    assert [c.get("name") for c in cases] == ["count line 5", "equal line 6", "recover line 7"]
    assert {c.get("classname") for c in cases} == {"a.cnl::silo"}
    assert float(cases[0].get("time")) == 0.25
    fail = cases[1].find("failure")
    assert fail is not None and fail.get("message") == "refuted summary"
    assert '"other_code": 2' in fail.text and "evidence of line 6" in fail.text
    assert cases[2].find("skipped") is not None and cases[2].find("skipped").get("message").startswith("open")
    assert cases[0].find("failure") is None and cases[0].find("skipped") is None
    assert suites[1].findall("testcase")[0].get("classname") == "b.cnl::vat"
    err = suites[2].find("testcase").find("error")
    assert err is not None and "unknown design" in err.get("message")


def test_real_claims_round_trip(tmp_path):
    body = """
# greenhouse shade motor: counts 0 .. 3 while `roll`
design shade
  in roll
  flop s[1] : T (t = roll & s[0])
  flop s[0] : T (t = roll)
  out shut = s[1] & s[0]
end
design shade_d
  in roll
  flop s[1:0] : D (d = {s[1] ^ (roll & s[0]), s[0] ^ roll})
  out shut = s[1] | s[0]
end
check shade_steps of shade
  code s
  count 0 .. 3
  hold when !roll
  always !shut | at(3)
  equal shade_d
end
"""
    p = tmp_path / "g.cnl"
    p.write_text(body, encoding="utf-8")
    ns = load_namespace(str(p))
    results = [r for c in ns.checks for r in run_check(c, Options())]
    root = ET.fromstring(junit_text(results))
    cases = root.iter("testcase")
    got = {c.get("name"): ("failure" if c.find("failure") is not None else "pass") for c in cases}
    want = {f"{r.claim} line {r.line}": ("failure" if r.status == REFUTED else "pass") for r in results}
    assert got == want
    assert got["equal line 19"] == "failure"  # the outputs differ: and against or
    assert got["count line 16"] == "pass"
