"""The state graph of a check as plain data: what a picture of it shows.

Sequence codes in their counting cycle, unused codes with an edge to each
next code they can take under the admissible inputs and their recovery
depth, locked sets marked. Built from an exhaustive analysis (the whole
graph, up to a number of codes) or from a map document (the runs and locked
cycles it lists). Reports draw it (:mod:`checker.report.dot`); none of them
reads an engine's internals.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional, Union

import numpy as np

from ..elab import Check
from ..words import count
from ..engines.explicit import Analysis, worst_key

MAX_NODES = 2048
"""Most codes drawn; past it the graph shows the locked sets and the slowest unused codes."""


@dataclass
class Node:
    """One code: 'sequence', 'unused' or 'locked'; ``steps`` to recover (unused, when known)."""

    kind: str
    steps: Optional[int] = None
    locked_set: Optional[int] = None


@dataclass
class StateGraph:
    """Codes and edges to draw. Edge kinds: 'count' (the sequence), 'next', 'locked' (inside a set)."""

    check: str
    width: int
    nodes: dict[int, Node] = field(default_factory=dict)
    edges: list[tuple[int, int, str]] = field(default_factory=list)
    locked_sizes: list[int] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    first: Optional[int] = None  # the sequence's first code
    depth_counts: Optional[dict[Optional[int], int]] = None  # recovery depth -> unused codes (None: can stay unused)
    complete: bool = False  # every code of the width is among ``nodes``


def _chosen(a: Analysis, max_nodes: int) -> np.ndarray:
    """The codes to draw: every code when few; else locked sets, slowest unused and their runs."""
    n = a.graph.size
    if n <= max_nodes:
        return np.arange(n)
    pick: list[np.ndarray] = []
    budget = max_nodes
    for s in a.locked_sets:
        if s.size > budget:
            break
        pick.append(s)
        budget -= s.size
    unused = np.flatnonzero(~a.graph.member)
    if budget > 0 and unused.size:
        key = worst_key(a.steps[unused])
        take = min(budget // 2, unused.size)
        if take > 0:
            top = unused[np.argpartition(-key, take - 1)[:take]]
            pick.append(top)
            # their successors, so every drawn edge ends at a drawn code
            pick.append(np.unique(a.graph.succ[:, top].ravel()).astype(np.int64))
    if not pick:
        return np.zeros(0, dtype=np.int64)
    codes = np.unique(np.concatenate(pick))
    return codes[:max_nodes]


def state_graph(check: Check, source: Union[Analysis, dict], max_nodes: int = MAX_NODES) -> StateGraph:
    """The state graph of ``check`` from an exhaustive analysis or from a map document.

    With an :class:`Analysis` (or a map document carrying one) the whole graph
    is given, up to ``max_nodes`` codes; from a map the SAT engine made, the
    runs and locked cycle the map lists.
    """
    if isinstance(source, Analysis):
        a = source
    elif getattr(source, "analysis", None) is not None:
        a = source.analysis  # type: ignore[union-attr]
    else:
        return _from_map(check, source)
    g = a.graph
    seq = check.sequence
    assert seq is not None
    out = StateGraph(check.name, g.width, locked_sizes=[int(s.size) for s in a.locked_sets], first=seq.first())
    depths, counts = np.unique(a.steps[~g.member], return_counts=True)
    out.depth_counts = {(None if d < 0 else int(d)): int(n) for d, n in zip(depths.tolist(), counts.tolist())}
    out.notes.append(f"{check.name}: {g.size} codes, {a.unused_count} unused, {count(len(a.locked_sets), 'locked set')}")
    drawn = {int(c) for c in _chosen(a, max_nodes)}
    if len(drawn) < g.size:
        out.notes.append(f"partial graph: {len(drawn)} of {g.size} codes drawn")
    out.complete = len(drawn) == g.size
    locked_of = {int(c): i for i, s in enumerate(a.locked_sets) for c in s.tolist()}
    for c in sorted(drawn):
        if c in locked_of:
            out.nodes[c] = Node("locked", None, locked_of[c])
        elif g.member[c]:
            out.nodes[c] = Node("sequence")
        else:
            st = int(a.steps[c])
            out.nodes[c] = Node("unused", st if st >= 0 else None)
    for c in sorted(drawn):
        if g.member[c]:
            nx = int(seq.next(c))
            if nx in drawn:
                out.edges.append((c, nx, "count"))
            continue
        for y in sorted({int(v) for v in g.succ[:, c]}):
            if y in drawn:
                same = c in locked_of and locked_of.get(y) == locked_of[c]
                out.edges.append((c, y, "locked" if same else "next"))
    return out


def _from_map(check: Check, doc: dict) -> StateGraph:
    """The part of the state graph a map document names: its runs and locked sets."""
    seq = check.sequence
    assert seq is not None
    sets = doc.get("locked") or []
    out = StateGraph(check.name, check.width, locked_sizes=[len(s) for s in sets], first=seq.first())
    locked_of = {c: i for i, s in enumerate(sets) for c in s}
    nodes: set[int] = set(locked_of)
    edges: set[tuple[int, int]] = set()
    for e in doc.get("unused", []):
        p = e["path"]
        nodes.update(p)
        edges.update(zip(p, p[1:]))
    out.notes.append(f"partial graph: the runs of the map ({len(nodes)} codes of 2^{check.width})")
    for c in sorted(nodes):
        if c in locked_of:
            out.nodes[c] = Node("locked", None, locked_of[c])
        else:
            out.nodes[c] = Node("sequence" if seq.contains(c) else "unused")
    for x, y in sorted(edges):
        out.edges.append((x, y, "locked" if x in locked_of and y in locked_of else "next"))
    return out
