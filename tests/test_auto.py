"""Engine `auto` decides what some engine decides quickly (issue 13, item 5).

Random differential testing found two kinds of claim that `auto` left open:

* `equal ... after` pairs whose product machine has about a hundred
  reachable states but whose first difference (or whose proof) lies deeper
  than bounded search goes: the explicit product search decides them at
  once, the SAT engines do not. Reproduced here by a greenhouse misting
  timer written twice: a binary count of 104 steps, and a 7-bit shift
  register with feedback ``s6 ^ s5`` (x^7 + x^6 + 1, primitive over GF(2),
  so its period is 127: a fact of the trade, checked below by stepping it)
  reloaded after 104 steps. The two are equal; a variant pulses one step early.
* `recover` with long tails (150 clocks and more): exhaustive search decides
  them, unrolled SAT runs need as many frames as the tail is long.

No assertion here is on time: the claims run with a 30 s timeout, as in the
report, and must come back decided, by the engine that decides them.
"""

from __future__ import annotations

import pytest

from checker.claims import run_claim
from checker.claims.common import Options
from checker.engines.bmc import bmc
from checker.engines.budget import Budget
from checker.engines.product import product
from checker.claims.equal import reset_state

from test_explicit import load_text
from test_recover import tail_counter

PERIOD = 104


def _shift(s: int) -> int:
    return ((s << 1) | (((s >> 6) ^ (s >> 5)) & 1)) & 127


def _state_after(k: int) -> int:
    s = 1
    for _ in range(k):
        s = _shift(s)
    return s


def _is(value: int, name: str, width: int = 7) -> str:
    return " & ".join(f"{'' if (value >> i) & 1 else '!'}{name}[{i}]" for i in reversed(range(width)))


def misting_timers(early: bool = False) -> str:
    """The misting timer as a binary count and as a shift register (``early``: it pulses one step early)."""
    top = " & ".join(f"q[{i}]" for i in reversed(range(7)) if ((PERIOD - 1) >> i) & 1)
    pulse = _is(_state_after(PERIOD - 2), "s") if early else "at_end"
    return f"""
# Greenhouse misting timer: one mist pulse every {PERIOD} steps of the fan clock.
design mist_count
  in go, clr
  node top = {top}
  node c[6:0] = {{c[5:0] & q[5:0], go}}
  flop q[6:0] : T (t = c) clear clr | (top & go)
  out mist = top
end

design mist_shift
  in go, clr
  node at_end = {_is(_state_after(PERIOD - 1), "s")}
  node reload = clr | (at_end & go)
  flop s[6:1] : D (d = mux(go, s[6:1], s[5:0])) clear reload
  flop s[0] : D (d = mux(go, s[0], s[6] ^ s[5])) preset reload
  out mist = {pulse}
end

check timer of mist_count
  equal mist_shift after clr
end
"""


def test_the_shift_register_has_period_127():
    # x^7 + x^6 + 1 is primitive over GF(2) (fact of the trade): every nonzero state comes back after 127 steps
    s, n = 1, 0
    while True:
        s, n = _shift(s), n + 1
        if s == 1:
            break
    assert n == 127


@pytest.mark.parametrize("early, status", [(False, "proved"), (True, "refuted")])
def test_auto_decides_equal_after_with_a_deep_product(early, status):
    check = load_text(misting_timers(early))
    claim = check.claims[-1]
    r = run_claim(check, claim, Options(engine="auto", timeout=30.0))
    assert r.status == status, r.summary
    assert r.details["engine"] == "explicit product-machine search"
    states = r.details["product_states"]
    assert 64 < states <= 2 * PERIOD  # above the former cap of 64; about a hundred
    if early:
        assert r.trace[-1].clock == PERIOD - 1  # the first difference: deeper than 72 clocks
    else:
        assert r.details["depth"] >= 72


def test_bounded_search_of_72_clocks_finds_no_difference():
    """Why the SAT engines leave the early timer open: its difference lies past 72 clocks."""
    check = load_text(misting_timers(early=True))
    claim = check.claims[-1]
    a, b = check.design, claim.other
    ra = reset_state(a, claim.cond, "cadical195", Budget())
    rb = reset_state(b, claim.other_cond, "cadical195", Budget())
    prod = product(a.model, b.model)
    r = bmc(prod.model, ra.state + rb.state, prod.bad, 72, Budget(), "cadical195", lambda d: None)
    assert r.inputs is None


@pytest.mark.parametrize("w, within", [(16, None), (16, 200)])
def test_auto_decides_long_recovery_tails(w, within):
    # a batch counter whose unused codes need up to 2^(w/2) = 256 clocks
    claim_text = "recover" if within is None else f"recover within {within}"
    check = load_text(tail_counter(w, (1 << (w // 2)) - 1, claim_text))
    claim = [c for c in check.claims if c.kind == "recover"][0]
    r = run_claim(check, claim, Options(engine="auto", timeout=30.0))
    assert r.details["engine"] == "explicit"
    if within is None:
        assert r.status == "proved" and r.details["worst"] == 1 << (w // 2)
    else:
        assert r.status == "refuted" and len(r.trace) == within + 1
