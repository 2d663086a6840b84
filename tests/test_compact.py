"""The explicit engine's compact tables against the engine before them, networkx and brute force.

* Random designs (the greenhouse vent steppers and dosing pumps of
  tests/test_explicit.py): the compact engine and the former one
  (``compact=False``) give the same next codes from every unused code (the
  compact table folds away rows that add none), depths, locked sets and
  worst, with chunks shrunk to 64 codes so that every chunk boundary is met;
  the same for a kiln counter whose pause is honoured in the sequence only.
* Random one-successor graphs with long runs of ``c -> c+1`` (what the run
  contraction shortcuts), random tables without runs (trees, merges,
  permutations) and tables of two or three rows: depths, worst depths and
  cycles or strongly connected sets against networkx (a test-only reference:
  shortest and longest paths, strongly connected components), with walks
  started every 4 nodes or so and chunks of 64.
* The bit-plane transpose against a loop over bits.
* Memory: the peak ``tracemalloc`` sees (NumPy reports its arrays there) stays
  within :func:`compact.memory_needed` less its fixed share, for a counter, a
  graph without a single run, one where every code is a leaf or locks
  itself, and two rows that differ everywhere.
* Refusal: above the limit, or above the memory available (a mocked
  ``MemAvailable``) shared among the claims of ``check --jobs``, the check is
  refused before anything is built, with the bytes it would need and the
  bytes there are (an error at the check for ``--engine explicit``; ``auto``
  says why and uses SAT).
* Reports stay short when a hold input also holds every unused code.
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
from checker.engines import strategy as S
from checker.engines import walks as W

from test_explicit import condition, designs, load_text
from test_recover import tail_counter
from test_limits import run

SETTINGS = settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.too_slow])
FIXED = settings(max_examples=100, deadline=None,
                 suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
"""For tests whose fixture only sets constants (the same for every example)."""


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


KILN = """
design kiln
  in run, drop
  flop q[{top}:0] : T (t = c) clear full & run
  node c[{top}:0] = {{c[{top1}:0] & q[{top1}:0], run | above}}
  node above = {above}
  node full = and({low})
end
check trays of kiln
  code q
  count 0 .. {last}
  hold when !run
  recover when run | drop
end
"""


@pytest.mark.parametrize("w", [8, 11])
def test_a_pause_honoured_in_the_sequence_only_matches_the_former_engine(small_chunks, w):
    """Two input rows that differ at a few unused codes (the clear waits for the pause) and a
    long tail: the same depths, worst and rows as the retrograde analysis of the former engine."""
    half = w // 2
    text = KILN.format(top=w - 1, top1=w - 2, above=" | ".join(f"q[{i}]" for i in range(half, w)),
                       low=", ".join(f"q[{i}]" for i in range(half)), last=(1 << half) - 1)
    check = load_text(text)
    cond = check.claims[-1].cond
    old = X.explore(check.space, cond, compact=False)
    new = X.explore(check.space, cond)
    assert new.graph.succ.shape[0] == 2 and same_successors(new.graph, old.graph)
    assert np.array_equal(new.steps, old.steps)
    assert new.worst == old.worst == (1 << w) - (1 << half) and new.locked_json() == old.locked_json() == []


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


@st.composite
def random_tables(draw, rows: int = 1):
    """(succ[rows, n], member): successors drawn at random (trees, merges, short and long
    cycles, no runs to contract), or a random permutation (every code on a cycle)."""
    w = draw(st.integers(1, 9))
    n = 1 << w
    rnd = np.random.default_rng(draw(st.integers(0, 2 ** 32 - 1)))
    kind = draw(st.sampled_from(["random", "permutation", "near"]))
    out = []
    for _ in range(rows):
        if kind == "random":
            succ = rnd.integers(0, n, n)
        elif kind == "permutation":
            succ = rnd.permutation(n)
        else:  # mostly a step of a few codes forward: long paths and big cycles
            succ = (np.arange(n) + rnd.integers(1, 4, n)) % n
        out.append(succ)
    member = rnd.random(n) < draw(st.sampled_from([0.0, 0.02, 0.2]))
    return np.array(out, dtype=np.uint32), member


def reference_depths(succ: np.ndarray, member: np.ndarray) -> tuple[list[int], list[list[int]]]:
    """Worst clocks to the sequence over every row (-1: some run stays out forever) and the
    strongly connected sets of unused codes holding a cycle, by networkx."""
    n = succ.shape[1]
    g = nx.DiGraph()
    g.add_nodes_from(c for c in range(n) if not member[c])
    g.add_edges_from((c, int(y)) for c in range(n) if not member[c] for y in succ[:, c] if not member[y])
    sets = sorted(sorted(s) for s in nx.strongly_connected_components(g)
                  if len(s) > 1 or g.has_edge(next(iter(s)), next(iter(s))))
    cyclic = set().union(*sets) if sets else set()
    locked = {c for c in g if c in cyclic or any(d in cyclic for d in nx.descendants(g, c))}
    steps = [0 if member[c] else -1 for c in range(n)]
    for c in reversed(list(nx.topological_sort(g.subgraph(set(g) - locked)))):
        steps[c] = 1 + max((steps[int(y)] for y in succ[:, c]), default=0)
    return steps, sets


@pytest.fixture
def tiny_walks(monkeypatch):
    """Chunks of 64 nodes and a start every 4 or so: every batch boundary and merge is met."""
    monkeypatch.setattr(W, "CHUNK", 64)
    monkeypatch.setattr(W, "SPACING", 4)
    monkeypatch.setattr(C, "CHUNK", 64)


@FIXED
@given(random_tables())
def test_walks_rank_random_tables_like_networkx(tiny_walks, table):
    succ, member = table
    steps, _ = C.depth_functional(succ[0], member)
    sets, total = C.functional_cycles(succ[0], steps)
    want, want_sets = reference_depths(succ, member)
    assert steps.tolist() == want
    assert [s.tolist() for s in sets] == want_sets and total == len(want_sets)


@FIXED
@given(random_tables(), st.integers(1, 3))
def test_cycles_listed_up_to_a_limit_are_the_smallest(tiny_walks, table, limit):
    succ, member = table
    steps, _ = C.depth_functional(succ[0], member)
    sets, total = C.functional_cycles(succ[0], steps, limit=limit)
    _, want = reference_depths(succ, member)
    assert total == len(want) and [s.tolist() for s in sets] == want[:limit]


@FIXED
@given(st.integers(2, 3).flatmap(random_tables))
def test_several_rows_worst_depths_like_networkx(tiny_walks, table):
    """Strategy improvement against the longest paths and cycles networkx finds."""
    succ, member = table
    steps, _, strat, _ = S.worst_depths(succ, member)
    want, want_sets = reference_depths(succ, member)
    assert steps.tolist() == want
    unused = ~member
    assert all(int(strat[c]) in succ[:, c].tolist() for c in np.flatnonzero(unused).tolist())
    g = X.Graph(succ.shape[1].bit_length() - 1, succ, X.Rows([], [[]] * succ.shape[0], [{}] * succ.shape[0]), member)
    a = X.analyse(g)
    assert a.locked_json() == want_sets and a.sets_complete
    old = X.analyse(g, compact=False)
    assert np.array_equal(old.steps, steps) and old.locked_json() == want_sets


def test_beyond_the_set_limit_the_strategy_cycles_are_listed(monkeypatch):
    """Above SCC_LIMIT locked codes with several rows, the cycles of one admissible run each
    are listed and the listing says it is not every set."""
    monkeypatch.setattr(X, "SCC_LIMIT", 4)
    n = 16
    hold = np.arange(n, dtype=np.uint32)  # every code stays put under row 0
    step = ((np.arange(n) + 1) % n).astype(np.uint32)
    member = np.zeros(n, dtype=bool)
    member[0] = True
    g = X.Graph(4, np.array([hold, step]), X.Rows([], [[], []], [{}, {}]), member)
    a = X.analyse(g)
    assert not a.sets_complete and a.worst is None
    assert a.locked_total == len(a.locked_sets) >= 1
    for s in a.locked_sets:  # each listed cycle is a real one
        assert all(int(step[c]) in s.tolist() or int(hold[c]) in s.tolist() for c in s.tolist())


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


STUCK = """
design latch
  flop q[{top}:0] : D (d = mux(far, {{q[{top1}:0], q[{top}]}}, {fill}))
  node far = {far}
end
check hatch of latch
  code q
  count 1 2 4
  recover
end
"""


def stuck(bits: int, fill: str) -> str:
    """A hatch position latch: above 7 every code goes to ``fill`` (itself: a lock per code;
    0: every code a leaf of one cycle)."""
    return STUCK.format(top=bits - 1, top1=bits - 2, fill=fill, far=" | ".join(f"q[{i}]" for i in range(3, bits)))


def pump(bits: int) -> str:
    """The dosing pump of tests/test_explicit.py: one or two steps up, as the inputs say."""
    top = (1 << bits) - 1
    return f"""
design pump
  in gust, frost
  flop q[{bits - 1}:0] : T (t = (c1 & !(gust ^ frost)) | (c2 & (gust ^ frost)))
  node c1[{bits - 1}:0] = {{c1[{bits - 2}:0] & q[{bits - 2}:0], 1}}
  node c2[{bits - 1}:0] = {{c2[{bits - 2}:1] & q[{bits - 2}:1], 1, 0}}
end
check dose of pump
  code q
  count 0 {top - 1} {top}
  recover when gust
end
"""


@pytest.mark.parametrize("text, rows", [
    (tail_counter(16, (1 << 15) - 1), 1),  # a counter: a few long runs
    (LFSR_LOCKED.format(top=15, top1=14, tap=14), 1),  # a shift register: no run, everything ranked and locked
    (stuck(16, "0"), 1),  # every unused code a leaf
    (stuck(16, "q"), 1),  # every unused code its own lock
    (pump(16), 2),  # two rows that differ at every code
])
def test_peak_memory_within_the_stated_bound(monkeypatch, text, rows):
    monkeypatch.setattr(C, "CHUNK", 1 << 10)  # the chunk's share is then small beside the tables
    monkeypatch.setattr(W, "CHUNK", 1 << 10)
    check = load_text(text)
    cond = condition(check)
    assert len(X.admissible_rows(check.space, cond)) == rows
    got = []
    peak = _peak(lambda: got.append(X.explore(check.space, cond)))
    # the records of listed cycles (counted once in the fixed share) are not per code
    records = 256 * len(got[0].locked_sets)
    bound = C.memory_needed(check.width, rows) - C.base_bytes(check.width)
    assert peak <= bound + records + (1 << 20), (peak, bound)


def test_peak_memory_with_several_rows(monkeypatch):
    monkeypatch.setattr(C, "CHUNK", 1 << 10)
    monkeypatch.setattr(W, "CHUNK", 1 << 10)
    n = 14  # the dosing pump at 14 bits, recover when gust
    check = load_text(pump(n))
    cond = check.claims[-1].cond
    rows = len(X.admissible_rows(check.space, cond))
    assert rows == 2
    peak = _peak(lambda: X.explore(check.space, cond))
    assert peak <= C.memory_needed(n, rows) - C.base_bytes(n) + (1 << 20)


def test_the_bound_lets_28_bits_in_and_not_29():
    assert C.memory_needed(28, 1) <= C.MEMORY_LIMIT < C.memory_needed(29, 1)
    # two input rows at 28 bits (the retrograde analysis before took 26 at most)
    assert C.memory_needed(28, 2) <= C.MEMORY_LIMIT < C.memory_needed(29, 2)
    assert C.memory_needed(28, 3) <= C.MEMORY_LIMIT < C.memory_needed(28, 4)


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


# --- the memory this machine has ---------------------------------------------------

def fake_meminfo(tmp_path, monkeypatch, available: int) -> None:
    """Point the engine at a /proc/meminfo whose MemAvailable is ``available`` bytes."""
    f = tmp_path / "meminfo"
    f.write_text(f"MemTotal:       99999999 kB\nMemFree:        1 kB\nMemAvailable:   {available // 1024} kB\n")
    monkeypatch.setattr(C, "MEMINFO", str(f))


def test_available_memory_is_read_and_missing_means_unknown(tmp_path, monkeypatch):
    fake_meminfo(tmp_path, monkeypatch, 3 << 30)
    assert C.available_memory() == 3 << 30
    monkeypatch.setattr(C, "MEMINFO", str(tmp_path / "absent"))
    assert C.available_memory() is None and C.memory_refusal(C.MEMORY_LIMIT, "x") is None
    (tmp_path / "old").write_text("MemTotal: 5 kB\nMemFree: 1 kB\n")  # kernels before 3.14
    monkeypatch.setattr(C, "MEMINFO", str(tmp_path / "old"))
    assert C.available_memory() is None


def test_a_check_above_the_available_memory_is_refused_before_the_run(tmp_path, monkeypatch):
    check = load_text(tail_counter(12, 63))
    need = C.memory_needed(12, 1)
    fake_meminfo(tmp_path, monkeypatch, need - (1 << 20))
    built = []
    monkeypatch.setattr(C, "folded_successors", lambda *a, **k: built.append(1))
    ok, why = X.feasible(check.space, stepping(check))
    assert not ok and f"would need {C.gib(need)}" in why and f"{C.gib(need - (1 << 20))} available" in why
    fake_meminfo(tmp_path, monkeypatch, need + (need >> 1))  # fits alone, not beside a second claim
    assert X.feasible(check.space, stepping(check)) == (True, "")
    ok, why = X.feasible(check.space, stepping(check), parallel=2)
    assert not ok and "2 claims running at once" in why and C.gib((need + (need >> 1)) // 2) in why
    assert built == []  # nothing was allocated


def test_jobs_share_the_memory_in_the_refusal(tmp_path, monkeypatch, write):
    """`check --jobs 2` on two claims: each explicit run gets half of what is available."""
    text = tail_counter(12, 63, "recover\n  recover within 4096")
    need = C.memory_needed(12, 1)
    fake_meminfo(tmp_path, monkeypatch, need + (need >> 1))
    p = write(text)
    rc, out, err = run(["check", p, "--engine", "explicit", "--jobs", "1", "--json"])
    assert rc == 0, err
    rc, out, err = run(["check", p, "--engine", "explicit", "--jobs", "2", "--json"])
    assert rc == 2 and "Traceback" not in err
    msg = json.loads(out)["error"]["message"]
    assert "would need" in msg and "2 claims running at once" in msg
    rc, out, err = run(["check", p, "--jobs", "2", "--json"])  # auto: SAT, saying why
    claims = json.loads(out)["claims"]
    assert all(c["engine"] == "sat" and c["status"] == "proved" for c in claims)


# --- readable reports when the hold input also holds unused codes --------------------

HELD = """
design vent
  in run, drop
  flop p[{top}:0] : D (d = mux(run, p, {{p[{top1}:0], !p[{top}]}}))
end
check phases of vent
  code p
  count johnson
  hold when !run
  recover when run | drop
end
"""


def test_a_hold_that_holds_unused_codes_gives_a_short_report():
    """A 10-bit vent phase ring whose hold input also holds unused codes: every unused code
    is locked by itself, so the repair takes them all, says why, and every listing is cut."""
    from checker.claims import run_claim
    from checker.claims.common import Options

    check = load_text(HELD.format(top=9, top1=8))
    claim = check.claims[-1]
    r = run_claim(check, claim, Options(engine="explicit"))
    unused = (1 << 10) - 20
    assert r.status == "refuted" and r.details["unused_count"] == unused
    assert sum(r.details["locked_sizes"]) == unused and r.details["locked_complete"]
    assert any("(8 of " in line and "locked sets shown" in line for line in r.evidence)
    assert f"redirecting {unused} unused codes" in r.advice[0] and f"(16 of {unused} shown)" in r.advice[0]
    assert any(f"of {unused} codes shown" in line for line in r.advice)
    assert any("goes to itself under some input" in line for line in r.advice)
    assert len(r.evidence) + len(r.advice) < 100


def test_beyond_the_set_limit_the_report_says_the_sets_are_not_separated(monkeypatch):
    from checker.claims import run_claim
    from checker.claims.common import Options

    monkeypatch.setattr(X, "SCC_LIMIT", 64)
    check = load_text(HELD.format(top=9, top1=8))
    r = run_claim(check, check.claims[-1], Options(engine="explicit"))
    assert r.status == "refuted" and r.details["locked_complete"] is False
    assert any("are not separated above 64 locked codes" in line for line in r.evidence)
    assert r.advice and r.advice[0].startswith("no repair hint")
    a = X.explore(check.space, check.claims[-1].cond)
    assert not a.sets_complete and a.locked_total == len(a.locked_sets)
    for cyc in a.locked_sets:  # every listed cycle is one some choice of inputs keeps going
        inside = set(cyc.tolist())
        assert all(inside & set(a.graph.succ[:, c].tolist()) for c in inside)
