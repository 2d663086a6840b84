"""The state graph of a counter in the Graphviz DOT language, and its rendering to SVG.

Sequence codes are drawn as ellipses joined by the counting cycle (bold
edges, in sequence order); unused codes as boxes with an edge to each next
code they can take under the admissible inputs; codes of a locked set are
filled and grouped in a cluster per set, and the edges inside a set are
drawn in red. What to draw comes from :mod:`checker.tools.stategraph`. DOT is a plain text format, written here directly (no DOT
library is among the project's dependencies).
"""

from __future__ import annotations

import shutil
import subprocess
from typing import Optional

from ..fileio import write_output
from ..tools.stategraph import StateGraph


class RenderError(Exception):
    """The DOT text could not be turned into an image (no `dot` program, or it failed)."""


def _q(s: str) -> str:
    """A DOT quoted string; a newline in ``s`` becomes DOT's line break."""
    return '"' + s.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n") + '"'


def _label(code: int, width: int) -> str:
    return f"{code}\n{code:0{width}b}" if width <= 16 else str(code)


_LOCKED = "shape=box, style=filled, fillcolor=mistyrose, color=red"
_SEQUENCE = "shape=ellipse, style=filled, fillcolor=lightblue"
_EDGE = {"count": " [penwidth=2, color=steelblue]", "locked": " [color=red, penwidth=1.5]", "next": ""}


def state_graph_dot(g: StateGraph) -> str:
    """Graphviz DOT text of a state graph (:mod:`checker.tools.stategraph`)."""
    w = g.width
    out = [f"digraph {_q('state graph of ' + g.check)} {{"]
    out += [f"  // {note}" for note in g.notes]
    out.append("  graph [rankdir=LR, fontname=Helvetica];")
    out.append("  node [fontname=Helvetica, fontsize=10];")
    out.append("  edge [color=gray40];")
    for i, size in enumerate(g.locked_sizes):
        inside = [c for c, n in g.nodes.items() if n.locked_set == i]
        if not inside:
            continue
        out.append(f"  subgraph cluster_locked_{i} {{")
        name = f"locked set {i + 1} ({size} {'code' if size == 1 else 'codes'})"
        out.append(f"    label={_q(name)}; color=red; fontcolor=red;")
        out += [f"    c{c} [label={_q(_label(c, w))}, {_LOCKED}];" for c in inside]
        out.append("  }")
    for c, n in g.nodes.items():
        if n.kind == "sequence":
            out.append(f"  c{c} [label={_q(_label(c, w))}, {_SEQUENCE}];")
        elif n.kind == "unused":
            tag = "" if n.steps is None else f"\n{n.steps} clk"
            out.append(f"  c{c} [label={_q(_label(c, w) + tag)}, shape=box];")
    out += [f"  c{x} -> c{y}{_EDGE[kind]};" for x, y, kind in g.edges]
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
        proc = subprocess.run([exe, "-Tsvg"], input=dot_text.encode("utf-8"),
                              capture_output=True, timeout=120)
    except (OSError, subprocess.TimeoutExpired) as e:
        raise RenderError(f"cannot write SVG: running {exe} failed: {e}") from None
    if proc.returncode != 0:
        msg = proc.stderr.decode("utf-8", "replace").strip().splitlines()
        raise RenderError(f"cannot write SVG: {exe} failed: {msg[0] if msg else 'exit ' + str(proc.returncode)}")
    write_output(path, proc.stdout)  # whole or not at all
