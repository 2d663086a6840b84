"""JUnit XML reports, so that a CI server shows one test per claim.

One test suite per file, one test case per claim: classname ``FILE::CHECK``,
name ``KIND line N``, time the claim's seconds. A refuted claim is a failure
of type ``refuted`` (message: the summary; body: the evidence lines and the
trace). An open claim is a failure of type ``open``: a CI job that runs
proofs must not pass on a proof that ran out of time or depth. With
``open_ok`` (the command line's ``--open-ok``) an open claim is *skipped*
instead. Files that could not be read are one test case each, with an
error; a run that found no claim at all is one error case too.
"""

from __future__ import annotations

import json
from typing import Iterable, Optional, Sequence

from junit_xml import TestCase, TestSuite, to_xml_report_string

from ..claims.result import OPEN, REFUTED, Result
from ..fileio import shown, write_output

SUITE_PREFIX = "countersign"


def _case(r: Result, open_ok: bool = False) -> TestCase:
    f = shown(r.file)  # a file name that is not UTF-8 shows its bytes as \xNN
    tc = TestCase(name=f"{r.claim} line {r.line}", classname=f"{f}::{r.check}",
                  elapsed_sec=round(r.seconds, 6), file=f, line=r.line)
    body = [shown(e) for e in r.evidence]
    if r.trace:
        body.append("trace: " + json.dumps([t.to_json() for t in r.trace]))
    if r.status == REFUTED:
        tc.add_failure_info(message=shown(r.summary or "refuted"), output="\n".join(body), failure_type="refuted")
    elif r.status == OPEN:
        if r.details.get("depth") is not None:
            body.append(f"depth reached: {r.details['depth']}")
        message = f"open: {r.summary}" if r.summary else "open"
        if open_ok:
            tc.add_skipped_info(message=message, output="\n".join(body))
        else:
            tc.add_failure_info(message=shown(message), output="\n".join(body), failure_type="open")
    else:
        tc.stdout = r.summary or None
    return tc


def junit_suites(results: Iterable[Result], errors: Sequence[tuple[str, str]] = (),
                 unread: Sequence[tuple[str, str]] = (), open_ok: bool = False) -> list[TestSuite]:
    """Test suites (one per file, in first-seen order) for ``results``;
    ``errors`` are (file, message) pairs for inputs that could not be checked,
    ``unread`` those not read within the timeout (open, like an open claim:
    a failure of type ``open``, or skipped with ``open_ok``)."""
    by_file: dict[str, list[TestCase]] = {}
    for r in results:
        by_file.setdefault(r.file, []).append(_case(r, open_ok))
    for f, msg in errors:
        f, msg = shown(f), shown(msg)
        tc = TestCase(name="read", classname=f"{f}::(file)", elapsed_sec=0.0, file=f)
        tc.add_error_info(message=msg, error_type="input")
        by_file.setdefault(f, []).append(tc)
    for f, msg in unread:
        f, msg = shown(f), shown(msg)
        tc = TestCase(name="read", classname=f"{f}::(file)", elapsed_sec=0.0, file=f)
        if open_ok:
            tc.add_skipped_info(message=f"open: {msg}")
        else:
            tc.add_failure_info(message=f"open: {msg}", failure_type="open")
        by_file.setdefault(f, []).append(tc)
    return [TestSuite(f"{SUITE_PREFIX}:{shown(f)}", cases, file=shown(f)) for f, cases in by_file.items()]


def junit_text(results: Iterable[Result], errors: Sequence[tuple[str, str]] = (),
               unread: Sequence[tuple[str, str]] = (), open_ok: bool = False) -> str:
    """The JUnit XML document as a string."""
    return to_xml_report_string(junit_suites(results, errors, unread, open_ok), encoding="utf-8")


def write_junit(results: Iterable[Result], path: str, errors: Optional[Sequence[tuple[str, str]]] = None,
                unread: Sequence[tuple[str, str]] = (), open_ok: bool = False) -> None:
    """Write a JUnit XML report of ``results`` (one test case per claim) to ``path``."""
    write_output(path, junit_text(list(results), errors or (), unread, open_ok))
