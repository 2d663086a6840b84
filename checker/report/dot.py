"""The state graph of a counter in the Graphviz DOT language, and its rendering to SVG.

Sequence codes are drawn as ellipses joined by the counting cycle (bold
edges, in sequence order); unused codes as boxes with an edge to each next
code they can take under the admissible inputs; codes of a locked set are
filled and grouped in a cluster per set, and the edges inside a set are
drawn in red. DOT is a plain text format, written here directly (no DOT
library is among the project's dependencies).
"""

from __future__ import annotations

import shutil
import subprocess
from typing import Optional, Union

import numpy as np

from ..elab import Check
from ..engines.explicit import Analysis, worst_key

MAX_NODES = 2048
"""Most codes drawn; past it the graph shows the locked sets and the slowest unused codes."""


class RenderError(Exception):
    """The DOT text could not be turned into an image (no `dot` program, or it failed)."""


def _q(s: str) -> str:
    """A DOT quoted string; a newline in ``s`` becomes DOT's line break."""
    return '"' + s.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n") + '"'


def _label(code: int, width: int) -> str:
    return f"{code}\n{code:0{width}b}" if width <= 16 else str(code)


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


def state_graph_dot(check: Check, source: Union[Analysis, dict], max_nodes: int = MAX_NODES) -> str:
    """Graphviz DOT text of the state graph of ``check``.

    ``source`` is an explicit :class:`Analysis`, or a map document from
    :func:`checker.recovery.recovery_map`: with the analysis it carries the
    whole graph is drawn (up to ``max_nodes`` codes), without one (a map the
    SAT engine made) the runs and locked cycle the map lists.
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
    w = g.width
    codes = _chosen(a, max_nodes)
    drawn = set(int(c) for c in codes)
    locked_of: dict[int, int] = {}
    for i, s in enumerate(a.locked_sets):
        for c in s.tolist():
            locked_of[int(c)] = i
    out = [f"digraph {_q('state graph of ' + check.name)} {{"]
    out.append(f"  // {check.name}: {g.size} codes, {a.unused_count} unused, {len(a.locked_sets)} locked set(s)")
    if len(drawn) < g.size:
        out.append(f"  // partial graph: {len(drawn)} of {g.size} codes drawn")
    out.append("  graph [rankdir=LR, fontname=Helvetica];")
    out.append("  node [fontname=Helvetica, fontsize=10];")
    out.append("  edge [color=gray40];")
    for i, s in enumerate(a.locked_sets):
        inside = [int(c) for c in s.tolist() if int(c) in drawn]
        if not inside:
            continue
        out.append(f"  subgraph cluster_locked_{i} {{")
        out.append(f"    label={_q(f'locked set {i + 1} ({s.size} codes)')}; color=red; fontcolor=red;")
        for c in inside:
            out.append(f"    c{c} [label={_q(_label(c, w))}, shape=box, style=filled, fillcolor=mistyrose, color=red];")
        out.append("  }")
    for c in sorted(drawn):
        if c in locked_of:
            continue
        if g.member[c]:
            out.append(f"  c{c} [label={_q(_label(c, w))}, shape=ellipse, style=filled, fillcolor=lightblue];")
        else:
            st = int(a.steps[c])
            tag = f"\n{st} clk" if st >= 0 else ""
            out.append(f"  c{c} [label={_q(_label(c, w) + tag)}, shape=box];")
    for c in sorted(drawn):
        if g.member[c]:
            nx = int(seq.next(c))
            if nx in drawn:
                out.append(f"  c{c} -> c{nx} [penwidth=2, color=steelblue];")
            continue
        for y in sorted({int(v) for v in g.succ[:, c]}):
            if y not in drawn:
                continue
            if c in locked_of and locked_of.get(y) == locked_of[c]:
                out.append(f"  c{c} -> c{y} [color=red, penwidth=1.5];")
            else:
                out.append(f"  c{c} -> c{y};")
    out.append("}")
    return "\n".join(out) + "\n"


def render_svg(dot_text: str, path: str, program: Optional[str] = None) -> None:
    """Render DOT text to an SVG file with the Graphviz `dot` program.

    Raises :class:`RenderError` with a readable message when the program is
    not installed or fails.
    """
    exe = program or shutil.which("dot")
    if exe is None or shutil.which(exe) is None:
        raise RenderError("cannot write SVG: the Graphviz 'dot' program is not installed "
                          "(write the graph with --dot and render it where Graphviz is available)")
    try:
        proc = subprocess.run([exe, "-Tsvg", "-o", path], input=dot_text.encode("utf-8"),
                              capture_output=True, timeout=120)
    except (OSError, subprocess.TimeoutExpired) as e:
        raise RenderError(f"cannot write SVG: running {exe} failed: {e}") from None
    if proc.returncode != 0:
        msg = proc.stderr.decode("utf-8", "replace").strip().splitlines()
        raise RenderError(f"cannot write SVG: {exe} failed: {msg[0] if msg else 'exit ' + str(proc.returncode)}")


def _from_map(check: Check, doc: dict) -> str:
    """The part of the state graph a map document names: its runs and locked sets."""
    seq = check.sequence
    assert seq is not None
    w = check.width
    locked = {c for s in (doc.get("locked") or []) for c in s}
    nodes: set[int] = set(locked)
    edges: set[tuple[int, int]] = set()
    for e in doc.get("unused", []):
        p = e["path"]
        nodes.update(p)
        edges.update(zip(p, p[1:]))
    out = [f"digraph {_q('state graph of ' + check.name)} {{"]
    out.append(f"  // partial graph: the runs of the map ({len(nodes)} codes of 2^{w})")
    out.append("  graph [rankdir=LR, fontname=Helvetica];")
    out.append("  node [fontname=Helvetica, fontsize=10];")
    for c in sorted(nodes):
        if c in locked:
            out.append(f"  c{c} [label={_q(_label(c, w))}, shape=box, style=filled, fillcolor=mistyrose, color=red];")
        elif seq.contains(c):
            out.append(f"  c{c} [label={_q(_label(c, w))}, shape=ellipse, style=filled, fillcolor=lightblue];")
        else:
            out.append(f"  c{c} [label={_q(_label(c, w))}, shape=box];")
    for x, y in sorted(edges):
        style = " [color=red, penwidth=1.5]" if x in locked and y in locked else ""
        out.append(f"  c{x} -> c{y}{style};")
    out.append("}")
    return "\n".join(out) + "\n"
