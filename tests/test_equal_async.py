"""`equal` and `compare` with asynchronous designs: through the codes every order settles in.

Sources:
* A ripple up counter counts in binary like a synchronous one: its stages
  differ only in when they change (the transient codes), not in where the
  clock settles (a fact of the trade: the ripple counter is the textbook
  divider whose settled states are those of the synchronous counter).
* A ripple decade counter that clears itself on a decoded ten can, when the
  clear drops before every flop it drives has changed, let a falling stage
  clock the next one and land on 4 instead of 0 (a fact of the trade, the
  hazard of asynchronously cleared ripple counters).
Cross-check: a random asynchronous design compared with a copy of itself is
equal exactly when every clock from every state settles in one code (brute
force over every firing order, written here from the contract's text).
"""

from __future__ import annotations

import json

from hypothesis import HealthCheck, given, settings

from checker.api import compare_files
from checker.claims import run_claim
from checker.claims.common import Options
from checker.claims.result import OPEN, PROVED, REFUTED
from checker.elab import load_namespace
from checker.model.events import EventModel

from test_firings import designs

RIPPLE = """
# bottle tally on a filler line, ripple stages with an asynchronous reset
design tally_r
  in en, rst
  flop q[0] : T (t = en) clear async rst
  flop q[1] : T (t = 1) clock fall q[0] clear async rst
  flop q[2] : T (t = 1) clock fall q[1] clear async rst
  flop q[3] : T (t = 1) clock fall q[2] clear async rst
  out top = q[3]
end
design tally_s
  in en, rst
  flop q[3] : T (t = en & q[2] & q[1] & q[0]) clear rst
  flop q[2] : T (t = en & q[1] & q[0]) clear rst
  flop q[1] : T (t = en & q[0]) clear rst
  flop q[0] : T (t = en) clear rst
  out top = q[3]
end
design crate_r
  in en, rst
  node ten = q[3] & q[1]
  flop q[0] : T (t = en) clear async ten | rst
  flop q[1] : T (t = 1) clock fall q[0] clear async ten | rst
  flop q[2] : T (t = 1) clock fall q[1] clear async ten | rst
  flop q[3] : T (t = 1) clock fall q[2] clear async ten | rst
  out top = q[3]
end
design crate_s
  in en, rst
  node at9 = q[3] & q[0]
  flop q[3] : T (t = en & (q[2] & q[1] & q[0] | at9)) clear rst
  flop q[2] : T (t = en & q[1] & q[0]) clear rst
  flop q[1] : T (t = en & q[0] & !q[3]) clear rst
  flop q[0] : T (t = en) clear rst
  out top = q[3]
end
check tally of tally_r
  code {q[3], q[2], q[1], q[0]}
  count 0 .. 15
  load 0 when rst
  hold when !en
  equal tally_s on sequence
  equal tally_s after rst
end
check crates of crate_r
  code {q[3], q[2], q[1], q[0]}
  count 0 .. 9
  load 0 when rst
  hold when !en
  equal crate_s on sequence
  equal crate_s after rst
end
"""


def load(tmp_path, text, name="t.cnl"):
    p = tmp_path / name
    p.write_text(text)
    return load_namespace(str(p))


def results(check):
    return [run_claim(check, c, Options(timeout=60, radix="bin")) for c in check.claims]


def test_ripple_counter_equals_the_synchronous_counter_at_settled_codes(tmp_path):
    ns = load(tmp_path, RIPPLE)
    rs = results(ns.checks[0])
    assert [r.status for r in rs] == [PROVED, PROVED, PROVED]
    assert rs[1].details["engine"] == "explicit settled"


def test_ripple_decade_with_decoded_clear_differs_from_the_synchronous_one(tmp_path):
    ns = load(tmp_path, RIPPLE)
    count, on_seq, after = results(ns.checks[1])
    assert count.status == on_seq.status == after.status == REFUTED
    # from 9 some order settles in 4 (0b0100): the short pulse of the decoded clear
    assert on_seq.trace[0].code == 9 and on_seq.trace[1].code == 4 and on_seq.trace[1].other_code == 0
    assert 4 in on_seq.details["settled"] and on_seq.details["other_settled"] == [0]
    assert "0b1001" in on_seq.summary
    # the same path is reachable after reset, so the outputs part: top is 1 at 8 and 9 only
    assert after.details["engine"] == "explicit settled"


def test_equal_on_an_asynchronous_design_past_the_explicit_limit(tmp_path):
    """--engine explicit is open past its limit; auto takes the firings miter, which proves it."""
    lines = ["design wide_r", "  in en"] + ["  flop q[0] : T (t = en)"] + \
        [f"  flop q[{i}] : T (t = 1) clock fall q[{i - 1}]" for i in range(1, 20)] + ["end"]
    text = "\n".join(lines) + "\n" + "\n".join(lines).replace("wide_r", "wide_s") + "\n"
    code = ", ".join(f"q[{i}]" for i in reversed(range(20)))
    text += f"check w of wide_r\n  code {{{code}}}\n  count 0 .. {2 ** 20 - 1}\n  hold when !en\n  equal wide_s\nend\n"
    chk = load(tmp_path, text).checks[0]
    r = run_claim(chk, chk.claims[1], Options(engine="explicit", timeout=60))
    assert r.status == OPEN and "settled comparison" in r.summary
    r = run_claim(chk, chk.claims[1], Options(timeout=60))
    assert r.status == PROVED and r.details["engine"] == "firings miter"
    assert any("cannot take this claim" in e for e in r.evidence)


def _settles_uniquely(model, n):
    """Brute force: every order of every clock from every state under every input settles, all in one code."""
    for go in (0, 1):
        em = EventModel(model, {"go": go})
        for code in range(1 << n):
            ends: set[int] = set()
            stack = [(em.edge(code), frozenset())]
            while stack:
                state, seen = stack.pop()
                if not state.pending:
                    ends.add(state.code)
                    continue
                if state.key() in seen:
                    return False  # never settles
                for c in state.pending:
                    nxt, _ = em.fire(state, c.flop)
                    stack.append((nxt, seen | {state.key()}))
            if len(ends) != 1:
                return False
    return True


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(designs())
def test_a_design_equals_its_copy_exactly_when_it_settles_uniquely(tmp_path, spec):
    n, text = spec
    copy = text.replace("design mix", "design mix2")
    code = ", ".join(f"q[{i}]" for i in reversed(range(n)))
    full = text + copy + f"check c of mix\n  code {{{code}}}\n  count 0 .. {2 ** n - 1}\n  equal mix2\nend\n"
    ns = load(tmp_path, full)
    chk = ns.checks[0]
    r = run_claim(chk, chk.claims[1], Options(timeout=60))
    if r.status == OPEN:
        return
    assert (r.status == PROVED) == _settles_uniquely(ns.designs["mix"].model, n), (full, r.summary)


def test_compare_reads_asynchronous_designs_through_settled_codes(tmp_path):
    old = RIPPLE
    new = RIPPLE.replace("flop q[3] : T (t = 1) clock fall q[2] clear async rst",
                         "flop q[3] : T (t = 1) clock rise q[2] clear async rst")
    (tmp_path / "old.cnl").write_text(old)
    (tmp_path / "new.cnl").write_text(new)
    res = compare_files(str(tmp_path / "old.cnl"), str(tmp_path / "new.cnl"), Options(timeout=60))
    by = {d["name"]: d for d in res["designs"]}
    assert by["tally_r"]["status"] == "differs" and by["tally_r"]["differs"]
    assert by["tally_s"]["status"] == "equal"
    assert by["crate_r"]["status"] == "equal"
    assert by["tally_r"]["cube_count"] >= 1
    json.dumps(res)
