"""`recover` on asynchronous designs by the chained firings engine, against the explicit one and a fact.

Source (a fact of the trade, worked out by hand for this file): an n-bit
ripple up counter whose top stage (clocked by the fall of stage n-2) is
cleared asynchronously by the decode of itself and stage j (1 <= j <= n-3)
counts 2^j .. 2^(n-1) + 2^j - 1: the wrap of the lower n-1 stages sets the
top stage, the count goes on to 2^(n-1) + 2^j, where the decode clears the
top stage in the same clock, giving 2^j. Its unused codes recover within
2^j + 1 clocks, and all-ones needs exactly that many: from all-ones the
clear of the top stage is pending when the lower stages wrap, and in the
order where the fall of stage n-2 (which clocks the top stage after the
decode has dropped, since stage j fell first) comes before the clear
fires, the top stage ends at 0, so the clock settles in 0; from 0 the count
needs 2^j clocks to reach 2^j. Codes 0 .. 2^j - 1 need at most 2^j, codes
with the top stage set and stage j clear reach stage j within 2^j clocks,
and those with both set are cleared in one clock.

Cross-checks: on random small asynchronous designs (hypothesis, the
generator of tests/test_firings.py), the verdict, the worst and the lock of
every recover claim agree between the explicit engine and the chained
firings engine.
"""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

from checker.claims import run_claim
from checker.claims.common import Options
from checker.claims.result import OPEN, PROVED, REFUTED
from checker.elab import load_namespace
from checker.errors import InputError
from test_firings import designs, ripple


def load(tmp_path, text):
    p = tmp_path / "t.cnl"
    p.write_text(text)
    return load_namespace(str(p))


def catcher(n: int, j: int, claims: str) -> str:
    """The ripple counter of the module docstring: a bottle-crate tally whose top stage catches the wrap."""
    lines = ["# crate tally on a bottling line: the top stage catches the wrap and clears on a decode",
             "design tally", "  in en", "  flop q[0] : T (t = en)"]
    lines += [f"  flop q[{i}] : T (t = 1) clock fall q[{i - 1}]" for i in range(1, n - 1)]
    lines.append(f"  flop q[{n - 1}] : T (t = 1) clock fall q[{n - 2}] clear async q[{n - 1}] & q[{j}]")
    code = ", ".join(f"q[{i}]" for i in reversed(range(n)))
    lines += ["end", "check crates of tally", f"  code {{{code}}}", f"  count {2 ** j} .. {2 ** (n - 1) + 2 ** j - 1}",
              "  hold when !en", claims, "end"]
    return "\n".join(lines) + "\n"


@pytest.mark.parametrize("n, j, engines", [(6, 1, ["explicit", "sat"]), (8, 2, ["explicit", "sat"]),
                                           (24, 3, ["auto"]), (32, 2, ["auto"])])
def test_the_wrap_catcher_recovers_within_two_to_the_j_plus_one_clocks(tmp_path, n, j, engines):
    worst = 2 ** j + 1
    chk = load(tmp_path, catcher(n, j, f"  recover\n  recover within {worst}\n"
                                       f"  recover within {worst - 1}")).checks[0]
    for engine in engines:
        rs = [run_claim(chk, c, Options(engine=engine, timeout=300)) for c in chk.claims[1:]]
        assert [r.status for r in rs] == [PROVED, PROVED, REFUTED], (engine, [r.summary for r in rs])
        for r in rs:
            assert r.details["worst"] == worst
            assert r.details["worst_code"] == 2 ** n - 1
        if n > 16:
            assert all(r.details["engine"] == "firings" for r in rs)
        # the refutation's run: all-ones, then 0 (the race), then counting up, all unused
        trace = rs[2].trace
        assert [t.code for t in trace] == [2 ** n - 1] + list(range(worst - 1))
        assert all(t.events is not None for t in trace[:-1])


def test_the_firings_engine_names_its_bound_and_replays_its_worst_run(tmp_path):
    chk = load(tmp_path, catcher(24, 2, "  recover")).checks[0]
    r = run_claim(chk, chk.claims[1], Options(timeout=300))
    assert r.status == PROVED and r.details["engine"] == "firings"
    assert r.details["bound"] == "sat" and r.details["firings"] >= 24
    assert any("explicit engine not used" in e for e in r.evidence)
    assert any(e.startswith("worst: 5 clocks, from code 16777215") for e in r.evidence)


@pytest.mark.parametrize("n", [6])
def test_a_short_clear_pulse_locks_the_decoded_ripple_divider(tmp_path, n):
    """The divider of tests/test_firings.py, cleared from stages n-1 and 1: a clear that drops before
    every stage has changed lets the falls ripple on, and some unused codes go round for ever."""
    chk = load(tmp_path, ripple(n, clear=True, extra_checks="  recover")).checks[0]
    claim = chk.claims[-1]
    sat = run_claim(chk, claim, Options(engine="sat", timeout=300))
    assert sat.status == REFUTED and sat.details["locked"] and sat.details["locked_complete"] is False
    cycle = sat.details["locked"][0]
    codes = [t.code for t in sat.trace]
    assert codes[-1] in codes[:-1] and set(codes[codes.index(codes[-1]):-1]) == set(cycle)
    ex = run_claim(chk, claim, Options(engine="explicit", timeout=300))
    assert ex.status == REFUTED
    assert any(set(cycle) <= set(s) for s in ex.details["locked"])


def test_explicit_engine_refuses_a_wide_asynchronous_recover(tmp_path):
    chk = load(tmp_path, catcher(20, 2, "  recover")).checks[0]
    with pytest.raises(InputError, match="explicit engine cannot take this asynchronous design"):
        run_claim(chk, chk.claims[1], Options(engine="explicit", timeout=60))


def test_out_of_time_is_open_with_the_depth(tmp_path):
    chk = load(tmp_path, catcher(32, 6, "  recover")).checks[0]
    r = run_claim(chk, chk.claims[1], Options(engine="sat", timeout=3))
    assert r.status == OPEN and r.details["worst"] is None


# --- cross-checks against the explicit engine on random small designs -------------------------

@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(designs(), st.integers(0, 14), st.integers(0, 3), st.booleans())
def test_recover_verdicts_agree_between_engines(tmp_path, spec, last, within, anyinput):
    n, text = spec
    last = min(last, 2 ** n - 2)
    code = ", ".join(f"q[{i}]" for i in reversed(range(n)))
    when = " when 1" if anyinput else ""
    text += (f"check c of mix\n  code {{{code}}}\n  count 0 .. {last}\n  hold when !go\n"
             f"  recover{when}\n  recover within {within}{when}\nend\n")
    chk = load(tmp_path, text).checks[0]
    for claim in chk.claims[1:]:
        ex = run_claim(chk, claim, Options(engine="explicit", timeout=120))
        sat = run_claim(chk, claim, Options(engine="sat", timeout=120))
        if OPEN in (ex.status, sat.status):
            continue
        assert ex.status == sat.status, (text, claim.text, ex.summary, sat.summary)
        if ex.status == PROVED or sat.details.get("worst") is not None:
            assert ex.details["worst"] == sat.details["worst"], (text, claim.text, ex.summary, sat.summary)
        if sat.details.get("locked"):
            cycle = set(sat.details["locked"][0])
            assert any(cycle <= set(s) for s in ex.details["locked"]), (text, claim.text)
        elif ex.status == REFUTED and ex.details.get("locked"):
            # the explicit engine found a lock: the SAT engine must have refuted by a lock or a never-settling clock
            assert "locked" in sat.summary or "never settles" in sat.summary, (text, sat.summary)
