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


def test_one_case_per_claim_with_failures_and_open_ok_skips(tmp_path):
    results = [res(PROVED, 5), res(REFUTED, 6, claim="equal", trace=[TraceEntry(0, 3, {"en": 1}, 2), TraceEntry(1, 4, None, 0)]),
               res(OPEN, 7, claim="recover"), res(PROVED, 3, file="b.cnl", check="vat", seconds=1.5)]
    path = tmp_path / "report.xml"
    write_junit(results, str(path), errors=[("c.cnl", "c.cnl:2:1: unknown design 'x'")])
    root = ET.parse(path).getroot()
    suites = root.findall("testsuite") if root.tag == "testsuites" else [root]
    assert [s.get("name") for s in suites] == ["countersign:a.cnl", "countersign:b.cnl", "countersign:c.cnl"]
    a = suites[0]
    assert (a.get("tests"), a.get("failures"), a.get("skipped"), a.get("errors")) == ("3", "2", "0", "0")
    cases = a.findall("testcase")
    assert [c.get("name") for c in cases] == ["count line 5", "equal line 6", "recover line 7"]
    assert {c.get("classname") for c in cases} == {"a.cnl::silo"}
    assert float(cases[0].get("time")) == 0.25
    fail = cases[1].find("failure")
    assert fail is not None and fail.get("message") == "refuted summary"
    assert '"other_code": 2' in fail.text and "evidence of line 6" in fail.text
    assert cases[2].find("skipped") is None
    opened = cases[2].find("failure")  # a CI job must not pass on a proof that ran out
    assert opened is not None and opened.get("type") == "open" and opened.get("message").startswith("open")
    assert fail.get("type") == "refuted"
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


def test_open_ok_makes_an_open_claim_skipped(tmp_path):
    path = tmp_path / "report.xml"
    write_junit([res(OPEN, 7, claim="recover"), res(REFUTED, 8)], str(path), open_ok=True)
    suite = ET.parse(path).getroot().find("testsuite")
    assert (suite.get("failures"), suite.get("skipped")) == ("1", "1")
    first, second = suite.findall("testcase")
    assert first.find("skipped") is not None and first.find("failure") is None
    assert second.find("failure").get("type") == "refuted"  # --open-ok forgives nothing else


# --- through the command line ---------------------------------------------------------

GOOD = """
# a lift-door cycle counter: counts 0 .. 3 while `shut`
design door
  in shut
  flop c[1:0] : D (d = {c[1] ^ (shut & c[0]), c[0] ^ shut})
end
check door_cycles of door
  code c
  count 0 .. 3
  hold when !shut
end
"""


def _cli(argv):
    from checker.cli import main
    return main(argv)


def test_cli_no_claims_still_writes_one_error_case(tmp_path, capsys):
    empty = tmp_path / "empty"
    empty.mkdir()
    (empty / "notes.txt").write_text("no netlists here\n")
    path = tmp_path / "j.xml"
    assert _cli(["check", str(empty), "--junit", str(path)]) == 2
    assert "no claims in" in capsys.readouterr().err
    suites = ET.parse(path).getroot().findall("testsuite")
    cases = [c for s in suites for c in s.findall("testcase")]
    assert len(cases) == 1
    err = cases[0].find("error")
    assert err is not None and "no claims in" in err.get("message")


def test_cli_unreadable_files_each_give_an_error_case(tmp_path, capsys):
    good = tmp_path / "good.cnl"
    good.write_text(GOOD)
    bad1 = tmp_path / "bad1.cnl"
    bad1.write_text("design x\n  flop q : Q (d = 1)\nend\n")
    bad2 = tmp_path / "bad2.cnl"
    bad2.write_text("check c of nowhere\n  code q\nend\n")
    path = tmp_path / "j.xml"
    assert _cli(["check", str(bad1), str(good), str(bad2), "--junit", str(path)]) == 2
    out = capsys.readouterr()
    assert out.out == "" and out.err.count(": ") >= 2  # both bad files named, no report on stdout
    root = ET.parse(path).getroot()
    errors = {}
    for s in root.findall("testsuite"):
        for c in s.findall("testcase"):
            e = c.find("error")
            if e is not None:
                errors[c.get("file")] = e.get("message")
    assert set(errors) == {str(bad1), str(bad2)}
    ran = [c.get("name") for s in root.findall("testsuite") for c in s.findall("testcase") if c.find("error") is None]
    assert ran == ["count line 9"]  # the good file's claim beside the errors
    for f, msg in errors.items():  # FILE:LINE:COL: message
        assert msg.startswith(f + ":") and msg.split(":")[1].isdigit() and msg.split(":")[2].isdigit()


def test_cli_open_claim_fails_unless_open_ok(tmp_path, capsys, monkeypatch):
    from checker import api
    real = api.check_files

    def opened(paths, opts=None, *args, **kw):  # every claim of the good file, made open as a timeout would
        run = real(paths, opts, *args, **kw)
        for r in run.results:
            r.status = OPEN
        return run
    monkeypatch.setattr(api, "check_files", opened)
    good = tmp_path / "good.cnl"
    good.write_text(GOOD)
    for extra, kind in (([], "failure"), (["--open-ok"], "skipped")):
        path = tmp_path / "j.xml"
        assert _cli(["check", str(good), "--junit", str(path)] + extra) == 3
        capsys.readouterr()
        case = ET.parse(path).getroot().find("testsuite").find("testcase")
        assert case.find(kind) is not None, extra
        if kind == "failure":
            assert case.find("failure").get("type") == "open"
