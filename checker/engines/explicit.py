"""Exhaustive search of a counter's state graph: every code, every admissible input.

The successor relation is built bit-parallel: the and-inverter graph is
evaluated over packed 64-bit words, one bit per (input row, code) sample, in
chunks (:data:`CHUNK` samples at a time). From it, without a Python loop per
code, :func:`analyse` computes for every unused code the exact worst number
of clocks it needs to reach the sequence when the inputs are chosen at worst
(the longest path in the successor graph restricted to unused codes), the
codes that can stay unused forever, and every strongly connected set of
unused codes that holds a cycle.

In v1 ``code`` names every flop, so a code is the whole state; the engine
refuses a check whose code leaves a flop out. Repair hints drawn from an
:class:`Analysis` are in :mod:`checker.repair`.

Memory: the tables are compact (:mod:`checker.engines.compact`): 4 bytes per
code and kept input row for the successors (a row that leads nowhere new
from an unused code is folded away), 4 per code for the depths, and what the
analysis holds on top; :func:`feasible` states the bytes a run will need
from the width and the row count alone and refuses a check above
:data:`compact.MEMORY_LIMIT` (8 GiB), or above the memory the machine has
available shared among the claims running at once, before anything is
built. With one input row that is 27 bytes a code at most, with two rows 24:
2^28 codes fit either way (tests/perf/RESULTS_explicit.md).

Time: one vectorised pass per table chunk; then, with one successor per
code, runs of codes counting up by one contracted and the rest ranked, and
the cycles found, by walks between hashed codes (:mod:`checker.engines.walks`);
with several rows, strategy improvement over such one-successor tables
(:mod:`checker.engines.strategy`), and the strongly connected sets of the
locked codes up to :data:`SCC_LIMIT` of them.

The engine before the compact tables (a successor table of at most
:data:`EDGE_LIMIT` edges, pointer jumping over every code) is kept as
``compact=False``: tests and tests/perf/bench_explicit.py hold the two side
by side.
"""

from __future__ import annotations

from collections import deque
from dataclasses import dataclass, field
from typing import Optional

import numpy as np

from .budget import Budget, OutOfBudget
from ..errors import InputError
from ..model import Aig, evaluate
from .sat import DEFAULT_SOLVER, Encoder, Sat
from ..model.simulate import eval_states
from ..model.events import EventModel, packed, unpacked
from ..model.space import CodeSpace
from .cascade import Exploration
from . import compact as C
from . import strategy as S

ASYNC_MAX_WIDTH = 16
"""Widest code of an asynchronous design whose every clock the explicit engine explores."""

MAX_WIDTH = 30
"""Widest code the explicit engine takes (codes and depths are 32-bit; memory decides below this)."""

EDGE_LIMIT = 1 << 25
"""Most edges (codes times admissible input rows) the table of ``compact=False`` may hold."""

INPUT_BITS_LIMIT = 12
"""Most input bits that may reach the next code (rows are their combinations)."""

ENUMERATE_LIMIT = 20
"""Most input bits enumerated at once to find the admissible rows."""

CHUNK = 1 << 20
"""Samples evaluated per bit-parallel pass (a multiple of 64)."""

VECTOR_ROUNDS = 64
"""Vectorised rounds a pass takes before a long thin remainder goes one code at a time."""

QUEUE_FRONTIER = 256
"""Below this many codes decided in a round (after VECTOR_ROUNDS rounds), depth goes by a work queue."""

ONES = np.uint64(0xFFFFFFFFFFFFFFFF)

SCC_LIMIT = 1 << 20
"""Most locked codes, with several input rows, whose strongly connected sets are all listed."""


def _tick(budget: Optional[Budget], depth: int) -> None:
    """Raise :class:`OutOfBudget` at ``depth`` when the budget has run out."""
    if budget is not None:
        budget.check(depth)


@dataclass
class Rows:
    """The admissible input rows: combinations of the input bits that reach the next code.

    ``names`` are those bits; ``values[r]`` row r's bits (0/1, in ``names``
    order); ``full[r]`` a complete input assignment that meets the condition
    and agrees with row r (used in traces).
    """

    names: list[str]
    values: list[list[int]]
    full: list[dict[str, int]]

    def __len__(self) -> int:
        return len(self.values)


@dataclass
class Graph:
    """The successor relation: ``succ[r, c]`` is the next code of ``c`` under row r."""

    width: int
    succ: np.ndarray  # (rows, 2^width) uint32
    rows: Rows
    member: np.ndarray  # bool, 2^width: in the sequence

    @property
    def size(self) -> int:
        return 1 << self.width

    @property
    def deterministic(self) -> bool:
        return self.succ.shape[0] == 1

    @classmethod
    def of(cls, width: int, succ: np.ndarray, rows: Rows, member: np.ndarray) -> "Graph":
        """The graph of ``succ``, with the rows kept to one when every row gives the same next codes."""
        if len(rows) > 1 and bool(np.all(succ == succ[0])):
            succ = succ[:1].copy()
            rows = Rows(rows.names, rows.values[:1], rows.full[:1])
        return cls(width, succ, rows, member)


@dataclass
class Analysis:
    """What the exhaustive search decided about every code.

    ``steps[c]``: 0 for a sequence code, the worst number of clocks to reach
    the sequence for an unused code, -1 for one that can stay unused forever.
    ``locked_sets``: every strongly connected set of unused codes that holds a
    cycle, each sorted, the sets sorted; ``locked_total`` how many there are
    (more than are listed only when a one-successor graph has more than
    :data:`compact.SETS_LIMIT` cycles). ``worst`` is None when some code can
    stay unused forever; ``worst_code`` the smallest code attaining ``worst``.
    """

    graph: Graph
    steps: np.ndarray
    worst: Optional[int]
    worst_code: Optional[int]
    locked_sets: list[np.ndarray] = field(default_factory=list)
    unused_count: int = 0
    rounds: int = 0
    locked_total: int = -1
    sets_complete: bool = True
    """False when ``locked_sets`` are cycles found, not every strongly connected set (see :func:`analyse`)."""

    def __post_init__(self) -> None:
        if self.locked_total < 0:
            self.locked_total = len(self.locked_sets)

    @property
    def locked(self) -> bool:
        return bool(self.locked_sets)

    @property
    def locked_cut(self) -> bool:
        """Whether some locked sets are not listed (see ``locked_total``)."""
        return self.locked_total > len(self.locked_sets)

    def locked_json(self, limit: Optional[int] = None) -> list[list[int]]:
        """The locked sets as lists of ints; with ``limit``, the first sets that fit in that many codes."""
        out, n = [], 0
        for s in self.locked_sets:
            if limit is not None and n + s.size > limit:
                break
            out.append([int(c) for c in s])
            n += s.size
        return out


# --- feasibility and admissible inputs -----------------------------------

def _input_nodes(space: CodeSpace, roots: list[int]) -> list[int]:
    m = space.model
    leaves = {l >> 1 for l in m.input_lits}
    return [n for n in m.aig.cone(roots) if n in leaves]


def _names_of(space: CodeSpace, nodes: list[int]) -> list[str]:
    m = space.model
    by_node = {l >> 1: n for n, l in zip(m.inputs, m.input_lits)}
    order = {n: i for i, n in enumerate(m.inputs)}
    return sorted((by_node[n] for n in nodes), key=order.__getitem__)


def _next_input_nodes(space: CodeSpace) -> list[int]:
    """The input nodes that reach the next code (through the pins, or an asynchronous clear or preset)."""
    m = space.model
    return _input_nodes(space, [m.next_lits[i] for i in space.code] + list(m.async_clear) + list(m.async_preset))


def feasible(space: CodeSpace, cond: int, solver: str = DEFAULT_SOLVER, parallel: int = 1) -> tuple[bool, str]:
    """Whether the explicit engine can take this check under ``cond``, and why not; the
    memory it needs is held against its limit and against the memory this machine has
    available shared among ``parallel`` claims running at once."""
    require_whole_state(space)
    w = space.width
    if not space.model.synchronous and w > ASYNC_MAX_WIDTH:
        return False, (f"the code is {w} bits wide (the explicit engine explores every order of an "
                       f"asynchronous design's clocks up to {ASYNC_MAX_WIDTH} bits)")
    if w > MAX_WIDTH:
        return False, f"the code is {w} bits wide (the explicit engine takes up to {MAX_WIDTH})"
    nxt = _next_input_nodes(space)
    if len(nxt) > INPUT_BITS_LIMIT:
        return False, f"{len(nxt)} input bits reach the next code (the explicit engine enumerates up to {INPUT_BITS_LIMIT})"
    rows = 1 << len(nxt)
    if C.memory_refusal(C.memory_needed(w, rows), "", parallel) is not None:
        # the exact row count may be smaller: the condition can fix some inputs
        rows = len(admissible_rows(space, cond, solver))
        why = C.memory_refusal(C.memory_needed(w, rows), f"2^{w} codes and {rows} input row(s)", parallel)
        if why is not None:
            return False, why
    return True, ""


def memory_needed(space: CodeSpace, cond: int, solver: str = DEFAULT_SOLVER) -> int:
    """The bytes an explicit run of this check under ``cond`` will hold at most (before it starts)."""
    return C.memory_needed(space.width, len(admissible_rows(space, cond, solver)))


def require_whole_state(space: CodeSpace) -> None:
    """v1: the code names every flop, so a code is the whole state; refuse otherwise."""
    n = len(space.model.states)
    if sorted(space.code) != list(range(n)):
        raise InputError(space.where, "recovery needs a code that names every flop of the design (v1)")


def admissible_rows(space: CodeSpace, cond: int, solver: str = DEFAULT_SOLVER) -> Rows:
    """Every combination of the inputs that reach the next code allowed by ``cond``.

    A combination is admissible when some assignment of the other inputs
    meets ``cond``. Raises :class:`ValueError` when ``cond`` holds for no input
    at all (the caller turns that into an input error at the claim).
    """
    nxt_nodes = _next_input_nodes(space)
    names = _names_of(space, nxt_nodes)
    every = _names_of(space, sorted(set(nxt_nodes) | set(_input_nodes(space, [cond]))))
    if len(every) <= ENUMERATE_LIMIT:
        values, full = _rows_by_enumeration(space, cond, names, every)
    else:
        values, full = _rows_by_sat(space, cond, names, every, solver)
    if not values:
        raise ValueError("no input meets the condition")
    return Rows(names, values, full)


def _rows_by_enumeration(space: CodeSpace, cond: int, names: list[str],
                         every: list[str]) -> tuple[list[list[int]], list[dict[str, int]]]:
    """Rows by evaluating ``cond`` on every combination of the inputs in ``every`` at once."""
    m = space.model
    lit_of = dict(zip(m.inputs, m.input_lits))
    n = 1 << len(every)
    idx = np.arange(n, dtype=np.uint32)
    leaves = {lit_of[name] >> 1: ((idx >> np.uint32(j)) & np.uint32(1)).astype(bool)
              for j, name in enumerate(every)}
    combos = np.flatnonzero(eval_states(m, [cond], leaves, n)[0])
    key = np.zeros(combos.size, dtype=np.uint32)
    for j, name in enumerate(names):
        key |= ((combos >> every.index(name)) & 1).astype(np.uint32) << np.uint32(j)
    _, first = np.unique(key, return_index=True)  # the first combination of each row
    values, full = [], []
    for c in combos[np.sort(first)].tolist():
        bits = {name: (c >> j) & 1 for j, name in enumerate(every)}
        values.append([bits[name] for name in names])
        full.append({name: bits.get(name, 0) for name in m.inputs})
    return values, full


def _rows_by_sat(space: CodeSpace, cond: int, names: list[str], every: list[str],
                 solver: str) -> tuple[list[list[int]], list[dict[str, int]]]:
    """Rows by one SAT call per combination of ``names`` (too many condition inputs to enumerate)."""
    m = space.model
    lit_of = dict(zip(m.inputs, m.input_lits))
    values, full = [], []
    with Sat(solver) as sat:
        enc = Encoder(m.aig, sat)
        env = enc.new_env({})
        c_lit = enc.lit(env, cond)
        in_lits = {name: enc.lit(env, lit_of[name]) for name in every}
        for combo in range(1 << len(names)):
            bits = [(combo >> j) & 1 for j in range(len(names))]
            assume = [c_lit] + [in_lits[nm] if b else -in_lits[nm] for nm, b in zip(names, bits)]
            if sat.solve(assume):
                values.append(bits)
                full.append({name: (sat.value(in_lits[name]) if name in in_lits else 0) for name in m.inputs})
    return values, full


# --- the successor table --------------------------------------------------

def _low_pattern(k: int) -> np.uint64:
    """The 64-bit word whose bit i is bit k of i (k < 6)."""
    v = 0
    for i in range(64):
        if (i >> k) & 1:
            v |= 1 << i
    return np.uint64(v)


def _packed_bits(base: int, nw: int, k: int) -> np.ndarray:
    """Words of bit k of the sample numbers base, base+1, ... (base a multiple of 64)."""
    if k < 6:
        return np.full(nw, _low_pattern(k), dtype=np.uint64)
    words = (np.arange(nw, dtype=np.uint64) + np.uint64(base >> 6)) >> np.uint64(k - 6)
    return (words & np.uint64(1)) * ONES


def _pack(bits: np.ndarray) -> np.ndarray:
    """Bool array (length a multiple of 64) to little-endian 64-bit words."""
    return np.packbits(bits, bitorder="little").view(np.uint64)


def build_graph(space: CodeSpace, rows: Rows, budget: Optional[Budget] = None, compact: bool = True) -> Graph:
    """The next code of every code under every admissible row, bit-parallel in chunks.

    ``compact`` (the default) builds the table with :func:`compact.successors`
    within :data:`compact.MEMORY_LIMIT`; False builds it as the engine did
    before, one byte per bit, within :data:`EDGE_LIMIT` edges.
    """
    w = space.width
    if compact:
        need = C.memory_needed(w, len(rows))
        if w > MAX_WIDTH or need > C.MEMORY_LIMIT:
            raise ValueError(f"the explicit engine would need {C.gib(need)}, over its {C.gib(C.MEMORY_LIMIT)}")
        member = C.members(space, budget)
        succ, kept = C.folded_successors(space, rows.values, rows.names, member, budget)
        rows = Rows(rows.names, [rows.values[r] for r in kept], [rows.full[r] for r in kept])
        return Graph(w, succ, rows, member)
    m = space.model
    n = 1 << w
    total = n * len(rows)
    if w > 25 or total > EDGE_LIMIT:
        raise ValueError(f"{total} edges exceed the explicit engine's limits")
    aig: Aig = m.aig
    roots = [m.next_lits[i] for i in space.code]  # msb first
    code_nodes = [m.state_lits[i] >> 1 for i in space.code]
    lit_of = dict(zip(m.inputs, m.input_lits))
    row_bits = np.asarray(rows.values, dtype=bool).reshape(len(rows), len(rows.names))
    padded = -(-total // 64) * 64
    out = np.empty(padded, dtype=np.uint32)
    chunk = max(64, min(CHUNK, padded))
    for base in range(0, padded, chunk):
        _tick(budget, 0)
        if budget is not None:
            budget.note(engine="explicit", searched=min(base, total), of=total)
        size = min(chunk, padded - base)
        nw = size // 64
        leaves = {node: _packed_bits(base, nw, w - 1 - pos) for pos, node in enumerate(code_nodes)}
        if rows.names:
            r = np.minimum(np.arange(base, base + size, dtype=np.int64) >> w, len(rows) - 1)
            for j, name in enumerate(rows.names):
                leaves[lit_of[name] >> 1] = _pack(row_bits[r, j])
        vals = evaluate(aig, leaves, roots, np.full(nw, ONES, dtype=np.uint64))
        acc = np.zeros(size, dtype=np.uint32)
        for pos, v in enumerate(vals):
            v = np.broadcast_to(v, (nw,))
            bits = np.unpackbits(np.ascontiguousarray(v).view(np.uint8), bitorder="little")
            acc |= bits.astype(np.uint32) << np.uint32(w - 1 - pos)
        out[base:base + size] = acc
    member = space.member_array(np.arange(n, dtype=np.uint64))
    return Graph.of(w, out[:total].reshape(len(rows), n), rows, member)


# --- depth ------------------------------------------------------------------

def _rounds_for(n: int) -> int:
    return max(1, int(n).bit_length() + 1)


def _depth_functional(g: Graph, budget: Optional[Budget]) -> tuple[np.ndarray, int]:
    """Steps to the sequence when every code has one successor: pointer jumping.

    Wyllie's list ranking (Wyllie 1979): each undecided code keeps a pointer
    ``ptr = succ^acc(c)`` over codes that are all unused; a round doubles
    every pointer, so after log2(2^w) + 1 rounds a code not yet decided can
    never reach the sequence.
    """
    n = g.size
    steps = np.full(n, -1, dtype=np.int32)
    steps[g.member] = 0
    ptr = g.succ[0].astype(np.int32)
    acc = np.ones(n, dtype=np.int32)
    act = np.flatnonzero(~g.member).astype(np.int32)
    rounds = 0
    for rounds in range(1, _rounds_for(n) + 1):
        _tick(budget, rounds)
        if budget is not None:
            budget.note(engine="explicit", step="recovery depths", depth=rounds)
        p = ptr[act]
        dp = steps[p]
        done = dp >= 0
        if done.any():
            steps[act[done]] = acc[act[done]] + dp[done]
            act = act[~done]
            p = p[~done]
        if act.size == 0:
            break
        acc[act] = acc[act] + acc[p]
        ptr[act] = ptr[p]
    return steps, rounds


def _depth_game(g: Graph, budget: Optional[Budget]) -> tuple[np.ndarray, int]:
    """Worst steps to the sequence with several successors per code.

    Retrograde analysis (Kahn's topological peeling, run backwards from the
    sequence): a code is decided in round r when its last successor was
    decided in round r-1; each round touches only the predecessors of the
    codes decided in the round before.
    """
    n, m = g.size, g.succ.shape[0]
    unused = np.flatnonzero(~g.member).astype(np.int32)
    steps = np.full(n, -1, dtype=np.int32)
    steps[g.member] = 0
    if unused.size == 0:
        return steps, 0
    dst = g.succ[:, unused].ravel()
    order = np.argsort(dst, kind="stable")
    src_sorted = np.tile(unused, m)[order].astype(np.int32)
    del order
    offs = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(np.bincount(dst, minlength=n), out=offs[1:])
    del dst
    pending = np.zeros(n, dtype=np.int32)
    pending[unused] = m
    frontier = np.flatnonzero(g.member).astype(np.int32)
    r = 0
    while frontier.size:
        _tick(budget, r)
        if budget is not None:
            budget.note(engine="explicit", step="recovery depths", depth=r)
        if r >= VECTOR_ROUNDS and frontier.size < QUEUE_FRONTIER:
            # a long thin tail: vector rounds would cost more than their work
            _depth_queue(g, steps, pending, offs, src_sorted, frontier, budget)
            return steps, r
        r += 1
        starts = offs[frontier]
        lens = offs[frontier + 1] - starts
        total = int(lens.sum())
        if total == 0:
            break
        shift = np.repeat(starts - np.concatenate(([0], np.cumsum(lens)[:-1])), lens)
        preds = src_sorted[shift + np.arange(total)]
        uq, cnt = np.unique(preds, return_counts=True)
        pending[uq] -= cnt.astype(np.int32)
        frontier = uq[pending[uq] == 0]
        steps[frontier] = r
    return steps, r


def _depth_queue(g: Graph, steps: np.ndarray, pending: np.ndarray, offs: np.ndarray,
                 src_sorted: np.ndarray, frontier: np.ndarray, budget: Optional[Budget]) -> None:
    """Finish the retrograde analysis from ``frontier`` with a work queue (same answers as rounds)."""
    succ = g.succ
    queue = deque(int(x) for x in frontier)
    done = 0
    while queue:
        v = queue.popleft()
        done += 1
        if done & 0xFFFF == 0 and budget is not None:
            if budget.expired():
                raise OutOfBudget(int(steps.max()))  # the max only once out of time: it costs a pass
            budget.note(engine="explicit", step="recovery depths", decided=done)
        for p in src_sorted[offs[v]:offs[v + 1]].tolist():
            pending[p] -= 1
            if pending[p] == 0:
                steps[p] = 1 + int(steps[succ[:, p]].max())
                queue.append(p)


# --- cycles -----------------------------------------------------------------

def _functional_cycles(locked: np.ndarray, succ: np.ndarray) -> list[np.ndarray]:
    """The cycles of a one-successor graph on ``locked`` (closed under ``succ``)."""
    n = locked.size
    pos = np.searchsorted(locked, succ[locked]).astype(np.int64)
    rounds = _rounds_for(n)
    p = pos.copy()
    for _ in range(rounds):  # after 2^rounds >= n steps every code sits on its cycle
        p = p[p]
    on = np.unique(p)
    q = np.searchsorted(on, pos[on])
    lab = np.arange(on.size)
    for _ in range(rounds):
        lab = np.minimum(lab, lab[q])
        q = q[q]
    return _groups(locked[on], lab)


def _groups(codes: np.ndarray, labels: np.ndarray) -> list[np.ndarray]:
    order = np.lexsort((codes, labels))
    lab, cod = labels[order], codes[order]
    cuts = np.flatnonzero(np.diff(lab)) + 1
    return [np.sort(s) for s in np.split(cod, cuts)]


def scc_cycles(n: int, src: np.ndarray, dst: np.ndarray) -> list[np.ndarray]:
    """Strongly connected sets holding a cycle in a graph on nodes 0..n-1.

    Vectorised: trimming of nodes without predecessors or successors, then
    the colouring method (Orzan 2004): every node takes the smallest node
    that reaches it; a node that keeps its own colour is a root, and its set
    is the nodes of its colour that reach it, found backwards. Each pass
    takes at most :data:`VECTOR_ROUNDS` rounds; a graph with long chains
    left after that goes to Tarjan's algorithm (Tarjan 1972), one node at a time.
    """
    src = np.asarray(src, dtype=np.int64)
    dst = np.asarray(dst, dtype=np.int64)
    loop = src == dst
    selfloop = np.zeros(n, dtype=bool)
    selfloop[src[loop]] = True
    src, dst = src[~loop], dst[~loop]
    alive = np.ones(n, dtype=bool)
    out: list[np.ndarray] = []
    idx = np.arange(n)

    def retire(dead: np.ndarray) -> None:
        out.extend(np.array([x]) for x in np.flatnonzero(dead & selfloop))

    while True:
        for _ in range(VECTOR_ROUNDS):  # trim
            e = alive[src] & alive[dst]
            has_in = np.zeros(n, dtype=bool)
            has_out = np.zeros(n, dtype=bool)
            has_in[dst[e]] = True
            has_out[src[e]] = True
            keep = alive & has_in & has_out
            if np.array_equal(keep, alive):
                break
            retire(alive & ~keep)
            alive = keep
        if not alive.any():
            break
        e = alive[src] & alive[dst]
        s, t = src[e], dst[e]
        color = np.where(alive, idx, n)
        settled = False
        for _ in range(VECTOR_ROUNDS):
            new = color.copy()
            np.minimum.at(new, t, color[s])
            if np.array_equal(new, color):
                settled = True
                break
            color = new
        if not settled:
            out.extend(_tarjan_cycles(n, s, t, alive, selfloop))
            break
        mark = alive & (color == idx)
        same = color[s] == color[t]
        while True:
            grow = same & mark[t] & ~mark[s]
            if not grow.any():
                break
            mark[s[grow]] = True
        for grp in _groups(idx[mark], color[mark]):
            if grp.size > 1 or selfloop[grp[0]]:
                out.append(grp)
        alive &= ~mark
    return _sorted_sets(out)


def _sorted_sets(sets: list[np.ndarray]) -> list[np.ndarray]:
    """Sets of sorted codes in lexicographic order."""
    return sorted(sets, key=lambda a: tuple(a.tolist()))


def _tarjan_cycles(n: int, src: np.ndarray, dst: np.ndarray, alive: np.ndarray,
                   selfloop: np.ndarray) -> list[np.ndarray]:
    """Tarjan's strongly connected components (iterative) on the ``alive`` nodes."""
    e = alive[src] & alive[dst]
    s, t = src[e], dst[e]
    order = np.argsort(s, kind="stable")
    adj = t[order].tolist()
    offs = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(np.bincount(s, minlength=n), out=offs[1:])
    off = offs.tolist()
    index = [-1] * n
    low = [0] * n
    on = [False] * n
    stack: list[int] = []
    out: list[np.ndarray] = []
    counter = 0
    for root in np.flatnonzero(alive).tolist():
        if index[root] >= 0:
            continue
        work = [(root, off[root])]
        index[root] = low[root] = counter
        counter += 1
        stack.append(root)
        on[root] = True
        while work:
            v, i = work[-1]
            if i < off[v + 1]:
                work[-1] = (v, i + 1)
                w = adj[i]
                if index[w] < 0:
                    index[w] = low[w] = counter
                    counter += 1
                    stack.append(w)
                    on[w] = True
                    work.append((w, off[w]))
                elif on[w]:
                    low[v] = min(low[v], index[w])
                continue
            work.pop()
            if work:
                u = work[-1][0]
                low[u] = min(low[u], low[v])
            if low[v] == index[v]:
                comp = []
                while True:
                    w = stack.pop()
                    on[w] = False
                    comp.append(w)
                    if w == v:
                        break
                if len(comp) > 1 or selfloop[v]:
                    out.append(np.array(sorted(comp), dtype=np.int64))
    return out


def inner_edges(g: Graph, members: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The edges of ``g`` between codes of ``members`` (sorted), as positions into ``members``.

    One edge per row and code, so an edge two rows share comes twice.
    """
    k = members.size
    dst = g.succ[:, members].ravel().astype(np.int64)  # row-major: entry i is code i % k's successor
    t = np.minimum(np.searchsorted(members, dst), k - 1)
    inside = np.flatnonzero(members[t] == dst)
    return inside % k, t[inside]


def _cycles(g: Graph, steps: np.ndarray) -> list[np.ndarray]:
    """Every strongly connected set of locked codes that holds a cycle, sorted."""
    locked = np.flatnonzero(steps < 0).astype(np.int64)
    if locked.size == 0:
        return []
    if g.deterministic:
        return _sorted_sets(_functional_cycles(locked, g.succ[0].astype(np.int64)))
    # scc_cycles lists sets in order, and positions map to codes in order
    return [locked[x] for x in scc_cycles(locked.size, *inner_edges(g, locked))]


# --- the analysis -------------------------------------------------------------

def analyse(g: Graph, budget: Optional[Budget] = None, compact: bool = True) -> Analysis:
    """Exact worst steps of every unused code, the locked codes and every locked cycle set.

    Several rows (compact): strategy improvement over one-successor tables
    (:mod:`checker.engines.strategy`); the locked sets are the strongly
    connected sets of the whole graph up to :data:`SCC_LIMIT` locked codes,
    and beyond it the cycles the final strategy reaches from the smallest
    :data:`compact.SETS_LIMIT` locked codes (each an admissible run that
    stays out forever; ``sets_complete`` is then False, and ``locked_total``
    counts those cycles).
    ``compact=False`` ranks as the engine did before the compact tables
    (pointer jumping over every code, retrograde rounds, 64-bit cycle search)."""
    strat = None
    if g.deterministic and compact:
        steps, rounds = C.depth_functional(g.succ[0], g.member, budget)
    elif g.deterministic:
        steps, rounds = _depth_functional(g, budget)
    elif compact:
        steps, rounds, strat, _ = S.worst_depths(g.succ, g.member, budget)
    else:
        steps, rounds = _depth_game(g, budget)
    count = g.size - int(np.count_nonzero(g.member))
    if count == 0:
        return Analysis(g, steps, 0, None, [], 0, rounds)
    complete = True
    if g.deterministic and compact:
        sets, total = C.functional_cycles(g.succ[0], steps, budget)
    elif strat is not None and int(np.count_nonzero(steps < 0)) > SCC_LIMIT:
        # beyond the limit: the cycles the strategy reaches from the smallest locked codes
        sets, total = C.functional_cycles(strat, steps, budget, first=C.SETS_LIMIT)
        complete = False
    else:
        del strat
        sets = _cycles(g, steps)
        total = len(sets)
    if sets or bool((steps < 0).any()):  # a sequence code's steps are 0
        return Analysis(g, steps, None, None, sets, count, rounds, total, complete)
    worst_code = int(np.argmax(steps))
    return Analysis(g, steps, int(steps[worst_code]), worst_code, sets, count, rounds)


def explore(space: CodeSpace, cond: int, budget: Optional[Budget] = None, solver: str = DEFAULT_SOLVER,
            compact: bool = True) -> Analysis:
    """Build the successor graph of ``space`` under ``cond`` and analyse it (an asynchronous
    design's successors are its settled codes, every order of every clock). ``compact=False``:
    the engine before the compact tables, for comparison."""
    rows = admissible_rows(space, cond, solver)
    if not space.model.synchronous:
        return analyse(build_settled_graph(space, rows, budget), budget, compact)
    with C.small_pages():
        return analyse(build_graph(space, rows, budget, compact), budget, compact)


class NeverSettles(Exception):
    """From an unused code, under one input row, some order of firings never settles."""

    def __init__(self, code: int, inputs: dict[str, int]) -> None:
        super().__init__(f"from code {code} an order of firings never settles")
        self.code = code
        self.inputs = inputs


def build_settled_graph(space: CodeSpace, rows: Rows, budget: Optional[Budget] = None) -> Graph:
    """The settled successors of every code under every admissible row (an asynchronous design).

    Every order of each clock is explored (:mod:`checker.engines.cascade`);
    a clock with several settled codes gives each its own row, so the
    analysis chooses among them at worst, as it does among inputs. A clock
    from an unused code that never settles raises :class:`NeverSettles`.
    """
    w = space.width
    n = 1 << w
    member = space.member_array(np.arange(n, dtype=np.uint64))
    per_row: list[list[list[int]]] = []
    for r in range(len(rows)):
        em = EventModel(space.model, rows.full[r])
        succ: list[list[int]] = []
        for c in range(n):
            if c % 256 == 0:
                _tick(budget, 0)
                if budget is not None:
                    budget.note(engine="explicit", searched=r * n + c, of=len(rows) * n)
            ex = Exploration(em)
            _, out = ex.explore(packed(space.code, c))
            if out.never:
                if not member[c]:
                    raise NeverSettles(c, rows.full[r])
                succ.append([c])
                continue
            succ.append(sorted(unpacked(space.code, s) for s in out.settled))
        per_row.append(succ)
    k = max(len(s) for succ in per_row for s in succ)
    table = np.empty((len(rows) * k, n), dtype=np.uint32)
    values, full = [], []
    for r, succ in enumerate(per_row):
        for j in range(k):
            table[r * k + j] = [s[min(j, len(s) - 1)] for s in succ]
            values.append(rows.values[r])
            full.append(rows.full[r])
    return Graph.of(w, table, Rows(rows.names, values, full), member)


# --- runs ------------------------------------------------------------------------

def worst_key(steps: np.ndarray) -> np.ndarray:
    """``steps`` as int64 sort keys, worst largest: a locked code (-1) above every count."""
    d = steps.astype(np.int64)
    return np.where(d < 0, np.int64(1) << 40, d)


def worst_step(a: Analysis, codes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """For each code, the row and next code of a worst run (a locked successor first)."""
    cand = a.graph.succ[:, codes]  # (rows, k)
    row = np.argmax(worst_key(a.steps[cand]), axis=0)
    return row, cand[row, np.arange(codes.size)]


def worst_run(a: Analysis, code: int, clocks: int) -> tuple[list[int], list[int]]:
    """Codes and rows of a worst run from ``code``: ``clocks`` steps, or until the sequence.

    Returns (codes, rows) with ``len(rows) == len(codes) - 1``.
    """
    codes, rows = [int(code)], []
    while len(rows) < clocks and not a.graph.member[codes[-1]]:
        r, nx = worst_step(a, np.array(codes[-1:], dtype=np.int64))
        rows.append(int(r[0]))
        codes.append(int(nx[0]))
    return codes, rows


def cycle_run(a: Analysis, members: np.ndarray, limit: int) -> tuple[list[int], list[int], bool]:
    """A shortest run from the smallest code of sorted ``members`` back to it, inside ``members``.

    Breadth-first over the set; returns (codes, rows, complete). When no
    cycle of at most ``limit`` clocks is found, the run follows the set for
    ``limit`` clocks and ``complete`` is False.
    """
    succ = a.graph.succ

    def within(x: int) -> bool:
        i = int(np.searchsorted(members, x))
        return i < members.size and int(members[i]) == x

    start = int(members[0])
    parent: dict[int, int] = {}
    frontier = [start]
    depth = 0
    while frontier and depth < limit:
        depth += 1
        grown = []
        for x in frontier:
            for y in {int(v) for v in succ[:, x]}:
                if y == start:
                    chain = [x]
                    while chain[-1] != start:
                        chain.append(parent[chain[-1]])
                    codes = list(reversed(chain)) + [start]
                    return codes, _fix_rows(a, codes), True
                if y not in parent and within(y):
                    parent[y] = x
                    grown.append(y)
        frontier = grown
    codes = [start]
    for _ in range(limit):
        col = succ[:, codes[-1]]
        codes.append(next(int(v) for v in col if within(int(v))))
    return codes, _fix_rows(a, codes), False


def _fix_rows(a: Analysis, codes: list[int]) -> list[int]:
    """The row that takes each code of a run to the next one."""
    succ = a.graph.succ
    return [int(np.flatnonzero(succ[:, x] == y)[0]) for x, y in zip(codes, codes[1:])]

