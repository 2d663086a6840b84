"""Every claim in cases/ is decided as its file's comments say, with replayed traces.

Each ``# expect: CHECK LINE proved|refuted`` line was worked out by hand (and
confirmed by an independent throw-away explicit-state checker when the cases
were written).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from checker.api import load
from checker.claims.common import replay

CASES = Path(__file__).resolve().parent.parent / "cases"
LINE = re.compile(r"^#\s*expect:\s*(\S+)\s+(\d+)\s+(proved|refuted|open)\s*$")


def _files():
    out = []
    for f in sorted(CASES.rglob("*.cnl")):
        exp = [LINE.match(l.strip()).groups() for l in f.read_text(encoding="utf-8").splitlines()
               if LINE.match(l.strip())]
        if exp:
            out.append(pytest.param(f, exp, id=f.name))
    return out


@pytest.mark.parametrize("path,expect", _files())
def test_case_verdicts(path, expect):
    prog = load(str(path))
    got = {}
    for chk in prog.namespace.checks:
        for r in prog.check(chk.name).run(timeout=120):
            got[(r.check, r.line)] = r
            if r.trace:
                design = chk.design
                if r.claim != "equal":  # equal traces are replayed in both designs by the claim itself
                    replay(design, chk, r.trace)
    want = {(c, int(l)): s for c, l, s in expect}
    assert set(got) == set(want), "claims in the file and expect lines differ"
    wrong = {k: (got[k].status, v, got[k].summary) for k, v in want.items() if got[k].status != v}
    assert not wrong
