"""Hard `equal ... after` pairs users meet (issue 13, item 4): a binary tally against its Gray
re-implementation with a decoder on the outputs, and a one-hot ring of lanes against a binary
lane counter with an OR-gate encoder, at 16, 32 and 64 bits; one-gate edits are refuted."""

from __future__ import annotations

import pytest

from checker.claims import equal
from checker.claims.common import Options
from checker.claims.result import PROVED, REFUTED
from checker.elab import load_namespace
from checker.model import TRUE
from checker.engines.budget import Budget
from checker.engines.correspond import signal_correspondence
from checker.engines.pdr import Pdr, check_invariant
from checker.engines.product import explicit_search, product
from hard_equivalences import diverter, valve_tally
from test_equal import product_bfs, verify_after_trace


def load(tmp_path, body: str):
    p = tmp_path / "pair.cnl"
    p.write_text(body, encoding="utf-8")
    return load_namespace(str(p))


def run(ns, engine: str = "auto"):
    chk = ns.checks[0]
    return equal.prove(chk, chk.claims[0], Options(engine=engine), Budget())


def reset_product(ns, a: str, b: str):
    """The product machine of the two designs and its state after `rst` (every flop 0, but the
    ring's h[0], which `rst` presets)."""
    ma, mb = ns.designs[a].model, ns.designs[b].model
    init = [0] * len(ma.states) + [1 if s == "h[0]" else 0 for s in mb.states]
    return product(ma, mb), init


def test_the_gray_design_steps_through_the_reflected_binary_gray_code(tmp_path):
    # fact of the trade: the reflected binary Gray code of i is i xor (i >> 1)
    ns = load(tmp_path, valve_tally(6))
    m = ns.designs["valve_gray"].model
    st = {s: 1 for s in m.states}
    st, outs, _ = m.step(st, {"adv": 0, "rst": 1})
    for i in range(1, 70):
        st, outs, _ = m.step(st, {"adv": 1, "rst": 0})
        g = int("".join(str(st[f"g[{k}]"]) for k in reversed(range(6))), 2)
        assert g == (i % 64) ^ ((i % 64) >> 1)
        _, outs, _ = m.step(st, {"adv": 0, "rst": 0})
        assert int("".join(str(outs[f"n[{k}]"]) for k in reversed(range(6))), 2) == i % 64  # decoded


@pytest.mark.parametrize("bits", [16, 32, 64])
def test_gray_re_implementation_is_proved_by_induction(tmp_path, bits):
    ns = load(tmp_path, valve_tally(bits))
    for engine in ("auto", "sat"):
        r = run(ns, engine)
        assert r.status == PROVED, r.summary
        assert r.details["engine"] == "k-induction" and r.details["induction_depth"] == 1


@pytest.mark.parametrize("bits", [16, 32, 64])
def test_one_hot_lanes_are_proved_by_explicit_product_search(tmp_path, bits):
    ns = load(tmp_path, diverter(bits))
    r = run(ns)
    assert r.status == PROVED, r.summary
    assert r.details["engine"] == "explicit product-machine search"
    assert r.details["product_states"] == bits  # one product state per lane


@pytest.mark.parametrize("kind,bits", [("valve", 4), ("valve", 6), ("lanes", 4), ("lanes", 8)])
def test_small_pairs_agree_with_brute_force_and_every_engine(tmp_path, kind, bits):
    """At small widths every route (breadth-first search of the product written here,
    explicit search, k-induction, signal correspondence, IC3/PDR alone) agrees."""
    body, a, b = (valve_tally(bits), "valve_bin", "valve_gray") if kind == "valve" else (diverter(bits), "lanes_bin", "lanes_ring")
    ns = load(tmp_path, body)
    prod, init = reset_product(ns, a, b)
    assert product_bfs(ns.designs[a].model, ns.designs[b].model, tuple(init[:prod.na]), tuple(init[prod.na:])) is None
    ex = explicit_search(prod.model, init, prod.bad)
    assert ex is not None and ex.inputs is None
    p = Pdr(prod.model, init, prod.bad, solver=Options().solver, budget=Budget()).run()
    assert p.status == "proved" and check_invariant(prod.model, init, prod.bad, p.invariant, TRUE, Options().solver)
    sc = signal_correspondence(prod.model, init, prod.bad, Budget(), Options().solver)
    # the Gray pair is an inductive correspondence (each decoder output equals a binary flop);
    # the ring's encoder outputs match the binary flops only in one-hot states, which no pair of signals says
    assert sc.status == ("proved" if a == "valve_bin" else "unproved")
    assert run(ns, "sat").status == run(ns, "explicit").status == PROVED


@pytest.mark.parametrize("bits", [16, 64])
@pytest.mark.parametrize("kind,mutation", [("valve", "toggle and->or"), ("valve", "decoder xor->xnor"),
                                           ("lanes", "encoder drops lane 3"), ("lanes", "ring skips")])
def test_one_gate_edits_are_refuted_with_a_replayed_trace(tmp_path, bits, kind, mutation):
    body = valve_tally(bits, mutation) if kind == "valve" else diverter(bits, mutation)
    ns = load(tmp_path, body)
    a, b = ("valve_bin", "valve_gray") if kind == "valve" else ("lanes_bin", "lanes_ring")
    prod, init = reset_product(ns, a, b)
    shortest = product_bfs(ns.designs[a].model, ns.designs[b].model, tuple(init[:prod.na]), tuple(init[prod.na:]))
    assert shortest is not None
    for engine in ("auto", "sat"):
        r = run(ns, engine)
        assert r.status == REFUTED, r.summary
        # replayed by the claim in both designs (simulator and reference evaluator), and again here
        verify_after_trace(ns.checks[0], ns.designs[b], r)
        assert len(r.trace) == shortest + 2  # clock 0 is the reset; the counterexample is a shortest one
