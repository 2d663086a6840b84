"""The explicit engine's compact tables against the engine before them, networkx and brute force.

* Random designs (the greenhouse vent steppers and dosing pumps of
  tests/test_explicit.py): the compact engine and the former one
  (``compact=False``) give the same successor table, depths, locked sets and
  worst, with chunks shrunk to 64 codes so that every chunk boundary is met.
* Random one-successor graphs with long runs of ``c -> c+1`` (what the run
  contraction shortcuts): depths and cycles against networkx (a test-only
  reference: shortest paths on the reversed graph, simple cycles).
* The bit-plane transpose against a loop over bits.
* Memory: the peak ``tracemalloc`` sees (NumPy reports its arrays there) stays
  within :func:`compact.memory_needed` less its fixed share, for a counter, for
  a graph without a single run (the widest ranking) and for several rows.
* Refusal: above the limit the check is refused before anything is built,
  with the bytes it would need (an error at the check for ``--engine
  explicit``; ``auto`` says why and uses SAT).
"""

from __future__ import annotations

import json
import tracemalloc

import networkx as nx
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from checker.claims.common import stepping
from checker.engines import compact as C
from checker.engines import explicit as X

from test_explicit import condition, designs, load_text
from test_recover import tail_counter
from test_limits import run

SETTINGS = settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@pytest.fixture
def small_chunks(monkeypatch):
    monkeypatch.setattr(C, "CHUNK", 64)


# --- the compact engine against the former one -------------------------------------

def same_successors(new, old) -> bool:
    """The same next codes from every unused code (the compact table folds rows that add
    nothing there), every kept row one of the former rows with its inputs."""
    unused = np.flatnonzero(~old.member)
    for c in unused.tolist():
        if set(new.succ[:, c].tolist()) != set(old.succ[:, c].tolist()):
            return False
    for r, full in enumerate(new.rows.full):
        i = old.rows.full.index(full)
        if not np.array_equal(new.succ[r], old.succ[i]):
            return False
    return True


@SETTINGS
@given(designs, st.sampled_from([64, 128, 1 << 21]))
def test_compact_matches_the_former_engine(text, chunk):
    check = load_text(text)
    cond = condition(check)
    old = X.explore(check.space, cond, compact=False)
    saved = C.CHUNK
    C.CHUNK = chunk
    try:
        new = X.explore(check.space, cond)
    finally:
        C.CHUNK = saved
    assert new.graph.succ.dtype == np.uint32 and new.steps.dtype == np.int32
    assert same_successors(new.graph, old.graph)
    assert np.array_equal(new.graph.member, old.graph.member)
    assert np.array_equal(new.steps, old.steps)
    assert new.locked_json() == old.locked_json()
    assert (new.worst, new.worst_code, new.unused_count) == (old.worst, old.worst_code, old.unused_count)


@pytest.mark.parametrize("w, last", [(10, 31), (12, (1 << 11) - 1), (9, 0b11 << 7 | 0b11)])
def test_compact_matches_the_former_engine_on_tail_counters(small_chunks, w, last):
    check = load_text(tail_counter(w, last))
    cond = stepping(check)
    old = X.explore(check.space, cond, compact=False)
    new = X.explore(check.space, cond)
    assert np.array_equal(new.steps, old.steps)
    assert new.worst == old.worst and new.locked_json() == old.locked_json()


# --- random one-successor graphs against networkx ------------------------------------

@st.composite
def functional_graphs(draw):
    """(succ, member): mostly c -> c+1 with random jumps, some codes in the sequence."""
    w = draw(st.integers(1, 9))
    n = 1 << w
    succ = (np.arange(n, dtype=np.int64) + 1) % n
    jumps = draw(st.lists(st.tuples(st.integers(0, n - 1), st.integers(0, n - 1)), max_size=12))
    for a, b in jumps:
        succ[a] = b
    member = np.zeros(n, dtype=bool)
    for c in draw(st.lists(st.integers(0, n - 1), max_size=6)):
        member[c] = True
    return succ.astype(np.uint32), member


@SETTINGS
@given(functional_graphs(), st.sampled_from([64, 1 << 21]))
def test_depth_and_cycles_match_networkx(gm, chunk):
    succ, member = gm
    n = succ.size
    saved = C.CHUNK
    C.CHUNK = chunk
    try:
        steps, _ = C.depth_functional(succ, member)
        sets, total = C.functional_cycles(succ, steps)
        assert total == len(sets)
    finally:
        C.CHUNK = saved
    g = nx.DiGraph()
    g.add_nodes_from(range(n))
    g.add_edges_from((c, int(succ[c])) for c in range(n) if not member[c])
    seq = [c for c in range(n) if member[c]]
    # clocks to the sequence: shortest (the only) path on the reversed graph from a sequence code
    dist: dict[int, int] = {}
    rev = g.reverse()
    for s in seq:
        for c, d in nx.single_source_shortest_path_length(rev, s).items():
            dist[c] = min(dist.get(c, d), d)
    for c in range(n):
        want = 0 if member[c] else dist.get(c, -1)
        assert steps[c] == want, c
    unused = g.subgraph([c for c in range(n) if not member[c]])
    cycles = sorted(sorted(cy) for cy in nx.simple_cycles(unused))
    assert [s.tolist() for s in sets] == cycles


# --- the bit-plane transpose -----------------------------------------------------

@settings(max_examples=60, deadline=None)
@given(st.integers(1, 30), st.integers(1, 4), st.randoms(use_true_random=False))
def test_planes_to_codes_is_a_transpose(bits, words, rnd):
    size = 64 * words
    codes = [rnd.getrandbits(bits) for _ in range(size)]
    planes = []
    for b in range(bits):
        ws = []
        for k in range(words):
            v = 0
            for i in range(64):
                v |= ((codes[64 * k + i] >> b) & 1) << i
            ws.append(v)
        planes.append(np.array(ws, dtype=np.uint64))
    assert C.planes_to_codes(planes, size).tolist() == codes


# --- memory --------------------------------------------------------------------------

def _peak(fn) -> int:
    tracemalloc.start()
    try:
        fn()
        return tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()


LFSR_LOCKED = """
design noise
  flop q[{top}:0] : D (d = {{q[{top1}:0], q[{top}] ^ q[{tap}]}})
end
check n of noise
  code q
  count 1
  recover
end
"""


@pytest.mark.parametrize("text, rows", [
    (tail_counter(16, (1 << 15) - 1), 1),  # a counter: a few long runs
    (LFSR_LOCKED.format(top=15, top1=14, tap=14), 1),  # a shift register: no run, everything ranked and locked
])
def test_peak_memory_within_the_stated_bound(monkeypatch, text, rows):
    monkeypatch.setattr(C, "CHUNK", 1 << 12)  # the chunk's share is then small beside the tables
    check = load_text(text)
    cond = stepping(check)
    assert len(X.admissible_rows(check.space, cond)) == rows
    peak = _peak(lambda: X.explore(check.space, cond))
    bound = C.memory_needed(check.width, rows) - C.BASE_BYTES
    assert peak <= bound + (1 << 20), (peak, bound)


def test_peak_memory_with_several_rows(monkeypatch):
    monkeypatch.setattr(C, "CHUNK", 1 << 12)
    n = 14  # the dosing pump of tests/test_explicit.py, at 14 bits
    top = (1 << n) - 1
    text = f"""
design pump
  in gust, frost
  flop q[{n - 1}:0] : T (t = (c1 & !(gust ^ frost)) | (c2 & (gust ^ frost)))
  node c1[{n - 1}:0] = {{c1[{n - 2}:0] & q[{n - 2}:0], 1}}
  node c2[{n - 1}:0] = {{c2[{n - 2}:1] & q[{n - 2}:1], 1, 0}}
end
check dose of pump
  code q
  count 0 {top - 1} {top}
  recover when gust
end
"""
    check = load_text(text)
    cond = check.claims[-1].cond
    rows = len(X.admissible_rows(check.space, cond))
    assert rows == 2
    peak = _peak(lambda: X.explore(check.space, cond))
    assert peak <= C.memory_needed(n, rows) - C.BASE_BYTES + (1 << 20)


def test_the_bound_lets_28_bits_in_and_not_29():
    assert C.memory_needed(28, 1) <= C.MEMORY_LIMIT < C.memory_needed(29, 1)
    assert C.memory_needed(26, 2) <= C.MEMORY_LIMIT < C.memory_needed(27, 2)


# --- refusal before the run --------------------------------------------------------

def test_over_the_limit_is_refused_with_the_bytes(monkeypatch, write):
    monkeypatch.setattr(C, "MEMORY_LIMIT", 64 << 20)
    text = tail_counter(22, (0b11 << 20) | 0b11)  # every unused code back within 4 clocks: SAT proves it
    check = load_text(text)
    ok, why = X.feasible(check.space, stepping(check))
    need = C.memory_needed(22, 1)
    assert not ok and C.gib(need) in why and "64 MiB" in why
    with pytest.raises(ValueError):
        X.build_graph(check.space, X.admissible_rows(check.space, stepping(check)))
    p = write(text)
    rc, out, err = run(["check", p, "--engine", "explicit", "--jobs", "1", "--json"])
    assert rc == 2 and "Traceback" not in err
    e = json.loads(out)["error"]
    assert "would need" in e["message"] and C.gib(need) in e["message"]
    rc, out, err = run(["check", p, "--jobs", "1", "--json"])
    claim = [c for c in json.loads(out)["claims"] if c["claim"].startswith("recover")][0]
    assert claim["engine"] == "sat" and claim["status"] == "proved"
    rc, out, err = run(["check", p, "--jobs", "1"])
    assert "explicit engine not used" in out and "would need" in out


def test_a_recover_result_says_the_memory_stated_before_the_run():
    from checker.claims import run_claim
    from checker.claims.common import Options

    check = load_text(tail_counter(12, 63))
    claim = [c for c in check.claims if c.kind == "recover"][0]
    r = run_claim(check, claim, Options(engine="explicit"))
    assert r.status == "proved" and r.details["memory_bound"] == C.memory_needed(12, 1)
    assert any(f"at most {C.gib(C.memory_needed(12, 1))}" in line for line in r.evidence)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(designs, st.integers(1, 40), st.sampled_from([8, 64, 1 << 21]))
def test_the_map_picks_the_slowest_codes_a_chunk_at_a_time(text, limit, chunk):
    """The map's order (locked first, then slowest, then smallest code) against a plain sort."""
    from checker.tools import codemap

    check = load_text(text)
    a = X.explore(check.space, condition(check))
    saved = codemap.ORDER_CHUNK
    codemap.ORDER_CHUNK = chunk
    try:
        got = codemap._order(a, limit).tolist()
    finally:
        codemap.ORDER_CHUNK = saved
    unused = [c for c in range(a.graph.size) if not a.graph.member[c]]
    key = {c: (1 << 40) if a.steps[c] < 0 else int(a.steps[c]) for c in unused}
    assert got == sorted(unused, key=lambda c: (-key[c], c))[:limit]
