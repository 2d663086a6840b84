"""Depths and cycles of a one-successor graph by walks between sampled nodes, in NumPy.

A graph where every node has one successor (a counter's table under one
input row, or the run-contracted form of it) is ranked without a pass per
doubling over every node. Every node without a predecessor, and about one
node in :data:`SPACING` chosen by a multiplicative hash (Knuth, TAOCP vol. 3,
6.4), starts a walk; all walks advance together, one vectorised step per
clock, and a walk stops when it leaves the graph (into the sequence) or
meets a node another walk has passed. Every node is then passed by exactly
one walk (or lies on a cycle no walk started on), at a known distance from
the walk's start, and each walk points to the walk whose path it met: a
one-successor graph with about one node per :data:`SPACING`, ranked by
pointer jumping (Wyllie 1979). Work is proportional to the number of nodes;
the number of vectorised steps to the longest stretch between two starts
(about SPACING times the logarithm of the number of walks).

Before, every node was ranked by pointer jumping: about log2(2^w) passes over
every code, 28 s for the ranking and 40 s for the cycles of a 24-bit shift
register whose codes are all on long cycles (tests/perf/RESULTS_explicit.md).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Optional

import numpy as np

from .budget import Budget

SPACING = 32
"""About one node in this many starts a walk (a power of two)."""

CHUNK = 1 << 21
"""Walks started, or nodes read, per pass."""

SEQ = np.int32(-1)
LOCKED = np.int32(-2)
_HASH = np.uint32(0x9E3779B1)
_INT32_MAX = np.iinfo(np.int32).max

FEW_CYCLES = 64
"""Up to this many cycles listed, each is picked out by a pass over the nodes on cycles."""

Step = Callable[[np.ndarray], tuple[np.ndarray, Optional[np.ndarray]]]
"""Nodes to (their successors, -1 for one that leaves the graph; the weights of those edges or None for 1)."""


def _tick(budget: Optional[Budget], depth: int = 0) -> None:
    if budget is not None:
        budget.check(depth)


def sampled(lo: int, hi: int) -> np.ndarray:
    """Whether each node lo .. hi-1 is one of the hashed starts (about one in SPACING)."""
    shift = np.uint32(32 - (SPACING.bit_length() - 1))
    return ((np.arange(lo, hi, dtype=np.uint32) * _HASH) >> shift) == 0


@dataclass
class Walks:
    """Where the walks went: ``owner[v]`` the walk that passed node v (-1: none), ``off[v]``
    its distance from that walk's start (when asked for); ``stop[i]`` the node where walk i
    stopped (-1: it left the graph) and ``length[i]`` the distance from its start to there."""

    owner: np.ndarray
    off: Optional[np.ndarray]
    stop: np.ndarray
    length: Optional[np.ndarray]
    passes: list[int]
    """The number of walks after each pass (a walk stops only on the path of one of its own pass or before)."""


Alive = Callable[[int, int], np.ndarray]
"""Nodes lo..hi-1 to whether each belongs to the graph."""


def walk(k: int, step: Step, alive: Optional[Alive] = None, distances: bool = True,
         cover_all: bool = False, budget: Optional[Budget] = None) -> Walks:
    """Walks over nodes 0..k-1 (those ``alive``, when given) from every hashed node, then
    from every node without a predecessor that no walk passed; with ``cover_all`` also from every node no walk passed
    (those lie on cycles without a start). ``distances``: keep ``off`` and ``length``."""
    has_pred = np.zeros(k, dtype=bool)
    for lo in range(0, k, CHUNK):
        _tick(budget)
        hi = min(k, lo + CHUNK)
        nxt, _ = step(np.arange(lo, hi, dtype=np.intp))
        if alive is not None:
            nxt = nxt[alive(lo, hi)]
        has_pred[nxt[nxt >= 0]] = True
    owner = np.full(k, -1, dtype=np.int32)
    off = np.zeros(k, dtype=np.int32) if distances else None
    stops: list[np.ndarray] = []
    lengths: list[np.ndarray] = []
    count = 0
    firsts: list[int] = []
    # hashed starts first, then the nodes without a predecessor (their walks are mostly
    # short and stop on the first ones' paths), then, for cycles, every node left
    passes = [sampled, lambda lo, hi: ~has_pred[lo:hi]]
    if cover_all:
        passes.append(lambda lo, hi: np.ones(hi - lo, dtype=bool))
    for starts_in in passes:
        found = []
        for lo in range(0, k, CHUNK):
            hi = min(k, lo + CHUNK)
            mask = starts_in(lo, hi) & (owner[lo:hi] < 0)
            if alive is not None:
                mask &= alive(lo, hi)
            found.append((np.flatnonzero(mask) + lo).astype(np.int32))
        starts = np.concatenate(found) if found else np.zeros(0, dtype=np.int32)
        del found
        # every start is claimed before any walk moves: a walk stops at the next start
        owner[starts] = np.arange(count, count + starts.size, dtype=np.int32)
        for lo in range(0, starts.size, CHUNK):
            stop, length = _advance(starts[lo:lo + CHUNK], count + lo, owner, off, step, distances, budget)
            stops.append(stop)
            if distances:
                lengths.append(length)
        count += starts.size
        firsts.append(count)
        del starts
    empty = np.zeros(0, dtype=np.int32)
    stop = np.concatenate(stops) if stops else empty
    length = (np.concatenate(lengths) if lengths else empty) if distances else None
    return Walks(owner, off, stop, length, firsts)


def _advance(starts: np.ndarray, first: int, owner: np.ndarray, off: Optional[np.ndarray], step: Step,
             distances: bool, budget: Optional[Budget]) -> tuple[np.ndarray, np.ndarray]:
    """Walk from ``starts`` (numbered ``first``, ``first + 1``, ...) until each leaves the
    graph or meets a node already passed; two walks reaching a node at once: the one
    written last passes it, the others stop there."""
    size = starts.size
    ids = np.arange(first, first + size, dtype=np.int32)
    stop = np.empty(size, dtype=np.int32)
    length = np.zeros(size, dtype=np.int32)
    cur, who = starts.astype(np.intp), np.arange(size, dtype=np.intp)
    dist = np.zeros(size, dtype=np.int32)
    steps = 0
    while cur.size:
        steps += 1
        if steps & 63 == 0:
            _tick(budget)
        nxt, w = step(cur)
        if distances:
            dist = dist + (np.int32(1) if w is None else w)
        end = nxt < 0
        o = owner[np.where(end, 0, nxt)]
        halt = end | (o >= 0)
        if halt.any():
            stop[who[halt]] = np.where(end[halt], SEQ, nxt[halt])
            if distances:
                length[who[halt]] = dist[halt]
            go = ~halt
            nxt, who = nxt[go], who[go]
            if distances:
                dist = dist[go]
        mine = ids[who]
        owner[nxt] = mine
        won = owner[nxt] == mine
        if not won.all():
            lost = ~won
            stop[who[lost]] = nxt[lost]
            if distances:
                length[who[lost]] = dist[lost]
            nxt, who = nxt[won], who[won]
            if distances:
                dist = dist[won]
        if distances:
            off[nxt] = dist
        cur = nxt
    return stop, length


def resolve(ptr: np.ndarray, acc: np.ndarray, budget: Optional[Budget] = None) -> int:
    """Pointer jumping in place: node i is ``acc[i]`` from node ``ptr[i]`` (:data:`SEQ`: from
    the end). On return ``ptr[i]`` is SEQ with ``acc[i]`` the distance from i to the end, or
    :data:`LOCKED` (a cycle). Weights may be negative; a pointer not at the end after
    2^r > len(ptr) hops has met a cycle. Returns the rounds taken."""
    k = ptr.size
    limit = max(1, int(k).bit_length() + 1)
    rounds = 0
    while True:
        rounds += 1
        _tick(budget, rounds)
        left = False
        for lo in range(0, k, CHUNK):
            a = np.flatnonzero(ptr[lo:lo + CHUNK] >= 0) + lo
            if a.size == 0:
                continue
            left = True
            if rounds > limit:
                ptr[a] = LOCKED
                continue
            p = ptr[a]
            q = ptr[p]
            s = acc[a].astype(np.int64) + acc[p]
            # a locked chain's sum grows each lap: clip it (it is never read)
            acc[a] = np.clip(s, -_INT32_MAX, _INT32_MAX)
            ptr[a] = q
        if not left or rounds > limit:
            return rounds


def depths(k: int, step: Step, alive: Optional[Alive] = None,
           budget: Optional[Budget] = None) -> tuple[np.ndarray, int]:
    """Distance from every node to where it leaves the graph (int32; -1: never, a cycle).

    The result is the walks' ``off`` array, rewritten in place."""
    wk = walk(k, step, alive, True, False, budget)
    ptr, acc = wk.stop, wk.length  # rewritten in place into the walks' pointers and weights
    for lo in range(0, ptr.size, CHUNK):
        s = ptr[lo:lo + CHUNK]
        inside = s >= 0
        at = s[inside]
        acc[lo:lo + CHUNK][inside] -= wk.off[at]
        s[inside] = wk.owner[at]
    rounds = 0
    for end in wk.passes:  # each pass's walks point into its own or earlier ones, already resolved
        rounds += resolve(ptr[:end], acc[:end], budget)
    top = np.where(ptr == SEQ, acc, np.int32(-1)).astype(np.int32)
    del ptr, acc
    out = wk.off
    for lo in range(0, k, CHUNK):
        _tick(budget, rounds)
        o = wk.owner[lo:lo + CHUNK]
        t = top[np.maximum(o, 0)] if top.size else np.full(o.size, -1, dtype=np.int32)
        seg = out[lo:lo + CHUNK]
        np.subtract(t, seg, out=seg)
        seg[(o < 0) | (t < 0)] = -1
    return out, rounds


def cycles(k: int, step: Step, alive: Optional[Alive] = None, budget: Optional[Budget] = None,
           limit: int = 1 << 16) -> tuple[list[np.ndarray], int]:
    """The cycles of a one-successor graph on nodes 0..k-1 (``alive`` ones; closed under the
    successor): the first ``limit`` by smallest node, each sorted, and how many there are.

    The walks' graph has a cycle for each cycle of the graph; every node where a walk on
    such a cycle stopped lies on the real cycle, and the real cycle is the stretches from
    those nodes to the next of them, walked once more.
    """
    wk = walk(k, step, alive, False, True, budget)
    owner = wk.owner
    tgt = owner[wk.stop]  # every walk stops at a passed node: the graph is closed
    size = tgt.size
    if size == 0:
        return [], 0
    rounds = max(1, int(size).bit_length() + 1)
    p = tgt.copy()
    for _ in range(rounds):
        _tick(budget)
        p = p[p]
    mark = np.zeros(size, dtype=bool)
    mark[p] = True
    on = np.flatnonzero(mark)  # walks on a cycle of walks
    del p, mark
    q = np.searchsorted(on, tgt[on]).astype(np.int32)
    lab = np.arange(on.size, dtype=np.int32)
    for _ in range(rounds):
        _tick(budget)
        lab = np.minimum(lab, lab[q])
        q = q[q]
    anchors, first = np.unique(wk.stop[on], return_index=True)
    lab = lab[first]
    del tgt, q, wk
    label = owner  # reused: the cycle of each node on one, -1 elsewhere
    label.fill(-1)
    is_anchor = np.zeros(k, dtype=bool)
    is_anchor[anchors] = True
    cur = anchors.astype(np.intp)
    label[cur] = lab
    while cur.size:
        _tick(budget)
        nxt, _ = step(cur)
        go = ~is_anchor[nxt]
        cur, lab = nxt[go], lab[go]
        label[cur] = lab
    del is_anchor
    nodes = np.concatenate([np.flatnonzero(label[lo:lo + CHUNK] >= 0).astype(np.int32) + np.int32(lo)
                            for lo in range(0, k, CHUNK)] or [np.zeros(0, dtype=np.int32)])
    labs = label[nodes]
    del label
    smallest = np.full(on.size, _INT32_MAX, dtype=np.int32)  # labels are positions in ``on``
    np.minimum.at(smallest, labs, nodes)
    heads = np.flatnonzero(smallest < _INT32_MAX)
    count = int(heads.size)
    keep = heads[np.argsort(smallest[heads], kind="stable")[:limit]]  # cycles by smallest node
    if keep.size <= FEW_CYCLES:  # a pass each beats a sort of every node on a cycle
        return [nodes[labs == c] for c in keep.tolist()], count
    rank = np.full(on.size, -1, dtype=np.int32)
    rank[keep] = np.arange(keep.size, dtype=np.int32)
    r = rank[labs]
    kept = r >= 0
    nodes, r = nodes[kept], r[kept]
    srt = np.argsort(r, kind="stable")  # nodes stay ascending within a cycle
    nodes, r = nodes[srt], r[srt]
    cuts = np.flatnonzero(np.diff(r)) + 1
    return np.split(nodes, cuts), count
