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


Alive = Callable[[int, int], np.ndarray]
"""Nodes lo..hi-1 to whether each belongs to the graph."""

Pick = Callable[[int, int], np.ndarray]
"""Nodes lo..hi-1 to whether each starts a walk (among those alive and not yet passed)."""


def _has_pred(k: int, step: Step, alive: Optional[Alive], budget: Optional[Budget]) -> np.ndarray:
    """Whether some node of the graph leads to each node."""
    has_pred = np.zeros(k, dtype=bool)
    for lo in range(0, k, CHUNK):
        _tick(budget)
        hi = min(k, lo + CHUNK)
        nxt, _ = step(np.arange(lo, hi, dtype=np.intp))
        if alive is not None:
            nxt = nxt[alive(lo, hi)]
        has_pred[nxt[nxt >= 0]] = True
    return has_pred


def _starts(lo: int, hi: int, pick: Pick, owner: np.ndarray, alive: Optional[Alive]) -> np.ndarray:
    mask = pick(lo, hi) & (owner[lo:hi] < 0)
    if alive is not None:
        mask &= alive(lo, hi)
    return (np.flatnonzero(mask) + lo).astype(np.int32)


def _claim(k: int, pick: Pick, owner: np.ndarray, alive: Optional[Alive], first: int) -> np.ndarray:
    """Every start ``pick`` names, numbered from ``first`` and claimed in ``owner`` (counted
    first, so that the list is built once)."""
    total = sum(_starts(lo, min(k, lo + CHUNK), pick, owner, alive).size for lo in range(0, k, CHUNK))
    starts = np.empty(total, dtype=np.int32)
    at = 0
    for lo in range(0, k, CHUNK):
        got = _starts(lo, min(k, lo + CHUNK), pick, owner, alive)
        starts[at:at + got.size] = got
        at += got.size
    owner[starts] = np.arange(first, first + total, dtype=np.int32)
    return starts


def _walk_all(starts: np.ndarray, first: int, owner: np.ndarray, off: Optional[np.ndarray], step: Step,
              budget: Optional[Budget]) -> tuple[np.ndarray, Optional[np.ndarray]]:
    """Walks from claimed ``starts``, :data:`CHUNK` at a time: (stop, length) of each."""
    stop = np.empty(starts.size, dtype=np.int32)
    length = np.empty(starts.size, dtype=np.int32) if off is not None else None
    for lo in range(0, starts.size, CHUNK):
        st, ln = _advance(starts[lo:lo + CHUNK], first + lo, owner, off, step, off is not None, budget)
        stop[lo:lo + st.size] = st
        if length is not None:
            length[lo:lo + ln.size] = ln
    return stop, length


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


def _pointers(stop: np.ndarray, length: np.ndarray, owner: np.ndarray, off: np.ndarray) -> None:
    """Walks' stops and lengths rewritten in place into pointers to walks and weights: a walk
    that stopped on walk j's path at distance d from j's start is ``length - d`` before j."""
    for lo in range(0, stop.size, CHUNK):
        s = stop[lo:lo + CHUNK]
        inside = s >= 0
        at = s[inside]
        length[lo:lo + CHUNK][inside] -= off[at]
        s[inside] = owner[at]


def depths(k: int, step: Step, alive: Optional[Alive] = None,
           budget: Optional[Budget] = None) -> tuple[np.ndarray, int]:
    """Distance from every node to where it leaves the graph (int32; -1: never, a cycle).

    First the walks from hashed nodes, ranked together (about one walk per
    SPACING nodes); then, a chunk at a time, the walks from nodes without a
    predecessor (trees hanging off the first walks' paths, often one node in
    two), each chunk ranked on its own: such a walk stops on a path walked
    before, or on one of its own chunk, never on a later one (nothing leads
    to a node without a predecessor). At most 13.5 bytes a node besides the
    graph; the result is the walks' distance array, rewritten in place.
    """
    has_pred = _has_pred(k, step, alive, budget)
    owner = np.full(k, -1, dtype=np.int32)
    off = np.zeros(k, dtype=np.int32)
    starts = _claim(k, sampled, owner, alive, 0)
    ptr, acc = _walk_all(starts, 0, owner, off, step, budget)
    first = starts.size
    del starts
    _pointers(ptr, acc, owner, off)
    rounds = resolve(ptr, acc, budget)
    acc[ptr != SEQ] = -1
    del ptr

    def leaf(lo: int, hi: int) -> np.ndarray:
        return ~has_pred[lo:hi]

    more = sum(_starts(lo, min(k, lo + CHUNK), leaf, owner, alive).size for lo in range(0, k, CHUNK))
    dist = np.empty(first + more, dtype=np.int32)  # clocks from each walk's start, -1: never
    dist[:first] = acc
    del acc
    for lo in range(0, k, CHUNK):
        got = _starts(lo, min(k, lo + CHUNK), leaf, owner, alive)
        if got.size == 0:
            continue
        owner[got] = np.arange(first, first + got.size, dtype=np.int32)
        p, a = _walk_all(got, first, owner, off, step, budget)
        _pointers(p, a, owner, off)
        done = (p >= 0) & (p < first)  # onto an earlier walk: its distance is known
        d = dist[p[done]]
        p[done] = np.where(d < 0, LOCKED, SEQ)
        a[done] += np.maximum(d, 0)
        mine = p >= first
        p[mine] -= np.int32(first)
        rounds = max(rounds, resolve(p, a, budget))
        dist[first:first + got.size] = np.where(p == SEQ, a, np.int32(-1))
        first += got.size
    del has_pred
    out = off
    for lo in range(0, k, CHUNK):
        _tick(budget, rounds)
        o = owner[lo:lo + CHUNK]
        t = dist[np.maximum(o, 0)] if dist.size else np.full(o.size, -1, dtype=np.int32)
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
    owner = np.full(k, -1, dtype=np.int32)
    has_pred = _has_pred(k, step, alive, budget)
    stops = []
    count = 0
    for pick in (sampled, lambda lo, hi: ~has_pred[lo:hi], lambda lo, hi: np.ones(hi - lo, dtype=bool)):
        starts = _claim(k, pick, owner, alive, count)  # a third pass: cycles no walk reached
        stops.append(_walk_all(starts, count, owner, None, step, budget)[0])
        count += starts.size
        del starts
    del has_pred
    stop = np.concatenate(stops)
    del stops
    tgt = owner[stop]  # every walk stops at a passed node: the graph is closed
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
    anchors, first = np.unique(stop[on], return_index=True)
    lab = lab[first]
    del tgt, q, stop
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
