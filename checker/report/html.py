"""One self-contained HTML page: the verdicts, a state picture per check, a waveform per trace.

Everything is inline (CSS, SVG, a few lines of script that open every claim
for printing); the page names no external address and opens offline. The
page is written by one jinja2 template (``page.html.j2`` beside this file);
this module only computes what the template draws: positions, shapes and
labels, as plain dictionaries.

The state diagram places the sequence on a circle in counting order
(networkx's circular layout) and the unused codes on rings around it, one
ring per recovery depth (networkx's shell layout, each ring ordered by where
its codes lead so that edges stay short); codes that can stay unused forever
take the outermost ring. Ring radii grow with the number of codes on them so
that labels do not overlap. Above :data:`DRAW_LIMIT` codes the picture is a
summary instead: unused codes per recovery depth as a bar chart, the locked
sets and the slowest runs.
"""

from __future__ import annotations

import datetime as _dt
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Optional, Sequence

import jinja2
import networkx as nx

from ..claims.common import code_radix
from ..claims.result import OPEN, PROVED, REFUTED, Result
from ..tools.pictures import WORST_PATHS, CheckPicture, Signals
from ..tools.stategraph import StateGraph

DRAW_LIMIT = 300
"""Most codes (of the whole code width) drawn as a diagram; above it, the summary."""

WAVE_LIMIT = 256
"""Most clocks of a trace drawn in one waveform (the last ones)."""

MAX_BARS = 40
"""Most bars in the summary's chart of recovery depths (more depths are grouped in ranges)."""

SET_LIMIT = 20
"""Most locked sets listed in a summary."""

LIST_LIMIT = 64
"""Most codes written out in one locked set or run of the summary."""

RADIXES = ("dec", "bin", "hex")

# Colours of our own, chosen for contrast (WCAG 2 ratio >= 4.5 for text on
# its background, tested) and told apart by lightness as well as hue, so that
# they survive colour-blind eyes and greyscale printing; every verdict and the
# locked sets also carry a shape, a mark and a pattern of their own.
PALETTE = {
    "ink": "#1c2230", "paper": "#fbfaf6", "muted": "#5a6070", "rule": "#c9ccd3",
    "proved_fg": "#0d4f45", "proved_bg": "#d9efe8",
    "refuted_fg": "#ffffff", "refuted_bg": "#7d1433",
    "open_fg": "#3f2d00", "open_bg": "#e3ad3f",
    "seq_fill": "#dbe7f6", "seq_line": "#2a5592",
    "unused_fill": "#ffffff", "unused_line": "#5a6070",
    "locked_fill": "#fbe3d3", "locked_line": "#9a3412", "locked_hatch": "#d0622a",
    "bus_fill": "#e8f0fa", "bus_line": "#2a5592", "other_fill": "#f1ebf8", "other_line": "#5b3a8e",
    "here_fill": "#fdf0e6",
}

TEXT_PAIRS = [("ink", "paper"), ("muted", "paper"), ("proved_fg", "proved_bg"), ("refuted_fg", "refuted_bg"),
              ("open_fg", "open_bg"), ("ink", "seq_fill"), ("ink", "unused_fill"), ("ink", "locked_fill"),
              ("ink", "bus_fill"), ("ink", "other_fill"), ("locked_line", "paper"), ("seq_line", "paper"),
              ("ink", "here_fill")]
"""(text, background) colour pairs the page uses; each must reach a 4.5:1 contrast."""

VERDICT_ORDER = {REFUTED: 0, OPEN: 1, PROVED: 2}
MARKS = {PROVED: "\u2713", REFUTED: "\u2717", OPEN: "?"}


def fmt_code(code: Optional[int], width: int, radix: str = "dec") -> str:
    """``code`` as the page shows it: decimal, binary of ``width`` digits, or hex; ``auto`` is
    binary up to 8 bits and hex above, as in the text report."""
    if code is None:
        return "\u2013"
    radix = code_radix(width, radix)
    if radix == "bin":
        return format(code, f"0{max(1, width)}b")
    if radix == "hex":
        return format(code, f"0{max(1, (width + 3) // 4)}X")
    return str(code)


# --- the state diagram -------------------------------------------------------

def _cycle_order(g: StateGraph) -> list[int]:
    """Sequence codes in counting order from the sequence's first code."""
    seq = [c for c, n in g.nodes.items() if n.kind == "sequence"]
    nxt = {x: y for x, y, k in g.edges if k == "count"}
    start = g.first if g.first in nxt else (min(seq) if seq else None)
    order: list[int] = []
    seen: set[int] = set()
    c = start
    while c is not None and c not in seen:
        order.append(c)
        seen.add(c)
        c = nxt.get(c)
    return order + sorted(set(seq) - seen)


def _angle(p: Sequence[float]) -> float:
    return math.atan2(p[1], p[0]) % (2 * math.pi)


def diagram(g: StateGraph, radix: str, key: str) -> dict:
    """Positions, shapes and edges of the state diagram of ``g`` (drawn in full)."""
    w = g.width
    labels = {c: fmt_code(c, w, radix) for c in g.nodes}
    chars = max((len(s) for s in labels.values()), default=1)
    half = max(13.0, 3.9 * chars + 7)  # half the width of a node
    pitch = 2 * half + 14  # centre to centre along a ring
    order = _cycle_order(g)
    succ: dict[int, list[int]] = {}
    for x, y, _ in g.edges:
        succ.setdefault(x, []).append(y)
    rings: dict[Any, list[int]] = {}
    for c, n in g.nodes.items():
        if n.kind == "unused" and n.steps is not None:
            rings.setdefault(n.steps, []).append(c)
        elif n.kind != "sequence":
            rings.setdefault("stay", []).append(c)
    ring_keys = sorted(k for k in rings if k != "stay") + (["stay"] if "stay" in rings else [])
    pos: dict[int, tuple[float, float]] = {}
    radius = max((pitch + 14) * len(order) / (2 * math.pi), 0.0 if len(order) <= 1 else pitch / 1.5)
    if order:
        unit = nx.circular_layout(order, scale=1.0) if len(order) > 1 else {order[0]: (0.0, 0.0)}
        pos.update({c: (float(unit[c][0]) * radius, float(unit[c][1]) * radius) for c in order})
    ring_radii = []
    r = radius
    for k in ring_keys:
        codes = rings[k]

        def where(c: int) -> float:  # the mean angle of the placed codes it leads to
            placed = [pos[y] for y in succ.get(c, []) if y in pos and y != c]
            if not placed:
                return 7.0 + (g.nodes[c].locked_set or 0)
            return sum(_angle(p) for p in placed) / len(placed)

        codes.sort(key=lambda c: (g.nodes[c].locked_set if k == "stay" and g.nodes[c].locked_set is not None
                                  else -1, where(c), c))
        r = max(r + 2.4 * half + 14, pitch * (1.8 if k == "stay" else 1.0) * len(codes) / (2 * math.pi))
        ring_radii.append((k, r))
        step = pitch * (1.8 if k == "stay" else 1.0) / r  # the least angle between two codes (room for cycles)
        want = [where(c) if where(c) < 7.0 else None for c in codes]
        free = [a for a in want if a is not None]
        angles: list[float] = []
        for a in want:  # towards the codes it leads to, spread apart where they would overlap
            a = a if a is not None else (angles[-1] + step if angles else (free[0] if free else 0.0))
            angles.append(max(a, angles[-1] + step) if angles else a)
        if len(codes) > 1 and angles[-1] - angles[0] > 2 * math.pi - step:
            # a crowded ring: evenly spaced in that order (networkx's shell layout)
            unit = nx.shell_layout(codes, nlist=[codes], scale=1.0, rotate=0)
            angles = [math.atan2(float(unit[c][1]), float(unit[c][0])) + (free[0] if free else 0.0) for c in codes]
        for c, a in zip(codes, angles):
            pos[c] = (math.cos(a) * r, math.sin(a) * r)
    pos = {c: (y, -x) for c, (x, y) in pos.items()}  # a quarter turn: the first code at the top
    extent = max([r] + [abs(v) for p in pos.values() for v in p]) + 2 * half + 24
    size = 2 * extent
    nodes = []
    for c, n in g.nodes.items():
        x, y = pos[c]
        if n.kind == "sequence":
            what = "a code of the sequence"
        elif n.kind == "locked":
            what = f"locked set {n.locked_set + 1}: can stay among unused codes forever"
        elif n.steps is None:
            what = "unused: can be held out of the sequence forever (it leads into a locked set)"
        else:
            what = f"unused: back in the sequence within {n.steps} clock{'s' if n.steps != 1 else ''}"
        nodes.append({"id": f"{key}-n{c}", "code": c, "label": labels[c], "kind": n.kind,
                      "stay": n.kind == "unused" and n.steps is None, "steps": n.steps,
                      "set": None if n.locked_set is None else n.locked_set + 1,
                      "x": round(x + extent, 1), "y": round(y + extent, 1), "half": half,
                      "title": f"{labels[c]} ({c}): {what}"})
    edges = []
    pairs = {(x, y) for x, y, _ in g.edges}
    for x, y, kind in g.edges:
        (x1, y1), (x2, y2) = pos[x], pos[y]
        if x == y:
            d = math.hypot(x1, y1)
            ox, oy = (x1 / d, y1 / d) if d else (0.0, -1.0)  # a loop on the outside of the node
            cx, cy = x1 + extent, y1 + extent
            sx, sy = cx + ox * half - oy * 8, cy + oy * half + ox * 8
            ex, ey = cx + ox * half + oy * 8, cy + oy * half - ox * 8
            path = (f"M{sx:.1f},{sy:.1f} C{sx + ox * 34 - oy * 14:.1f},{sy + oy * 34 + ox * 14:.1f} "
                    f"{ex + ox * 34 + oy * 14:.1f},{ey + oy * 34 - ox * 14:.1f} {ex:.1f},{ey:.1f}")
        else:
            dx, dy = x2 - x1, y2 - y1
            d = math.hypot(dx, dy) or 1.0
            cut = min(half + 2, d / 2 - 1)
            sx, sy = x1 + dx / d * cut + extent, y1 + dy / d * cut + extent
            ex, ey = x2 - dx / d * (cut + 3) + extent, y2 - dy / d * (cut + 3) + extent
            if (y, x) in pairs:  # both ways: two arcs, one either side of the line
                mx, my = (sx + ex) / 2 - dy / d * 14, (sy + ey) / 2 + dx / d * 14
                path = f"M{sx:.1f},{sy:.1f} Q{mx:.1f},{my:.1f} {ex:.1f},{ey:.1f}"
            else:
                path = f"M{sx:.1f},{sy:.1f} L{ex:.1f},{ey:.1f}"
        edges.append({"id": f"{key}-e{x}-{y}", "src": x, "dst": y, "kind": kind, "d": path})
    rings_out = [{"r": round(rr, 1), "label": ("stays unused" if k == "stay" else
                                                f"{k} clock{'s' if k != 1 else ''}"),
                  "x": round(extent - rr * 0.7071 - 4, 1), "y": round(extent + rr * 0.7071 + 4, 1)}
                 for k, rr in ring_radii]  # at the lower left, where few edges run
    return {"key": key, "size": round(size, 1), "cx": extent, "cy": extent, "nodes": nodes, "edges": edges,
            "rings": rings_out, "font": 11 if chars <= 6 else 9}


def bars(depth_counts: dict, width: int = 640) -> dict:
    """A bar chart of unused codes per recovery depth (and those that can stay unused).

    Up to :data:`MAX_BARS` depths get a bar each; more are grouped into
    :data:`MAX_BARS` ranges of equal span (``lo``..``hi`` clocks, inclusive).
    """
    known = sorted((k, v) for k, v in depth_counts.items() if k is not None)
    groups: list[tuple[int, int, int]] = []  # (lo, hi, count)
    if len(known) <= MAX_BARS:
        groups = [(k, k, v) for k, v in known]
    else:
        lo, hi = known[0][0], known[-1][0]
        raw = -(-(hi - lo + 1) // MAX_BARS)
        # a round width: 1, 2, 5, 10, 20, 25, 50 ...
        span = int(min(w for e in range(20) for w in (10 ** e, 2 * 10 ** e, 2.5 * 10 ** e, 5 * 10 ** e)
                       if w >= raw and w % 1 == 0))
        for k, v in known:
            start = lo + (k - lo) // span * span
            if groups and groups[-1][0] == start:
                groups[-1] = (start, groups[-1][1], groups[-1][2] + v)
            else:
                groups.append((start, min(hi, start + span - 1), v))
    items: list[tuple[str, bool, int, Optional[int], Optional[int]]] = [
        (f"{a} clock{'s' if a != 1 else ''}" if a == b else f"{a}\u2013{b} clocks", False, v, a, b)
        for a, b, v in groups]
    if None in depth_counts:
        items.append(("can stay unused", True, depth_counts[None], None, None))
    top = max((it[2] for it in items), default=1) or 1
    row = 20
    label_w = 150
    out = []
    for i, (label, stay, v, a, b) in enumerate(items):
        out.append({"label": label, "stay": stay, "count": v, "lo": a, "hi": b, "y": 8 + i * row,
                    "w": round(max(1.0, (width - label_w - 80) * v / top), 1)})
    return {"rows": out, "width": width, "height": 16 + len(items) * row, "label_w": label_w}


def _claim_facts(pic: CheckPicture, radix: str) -> list[str]:
    """What the check's recover claims found, for a check without a map."""
    out = []
    for r in pic.claims:
        if r.claim != "recover":
            continue
        line = f"line {r.line}: {r.status}: {r.summary}"
        out.append(line)
        for s in (r.details.get("locked") or [])[:8]:
            out.append("  locked set: " + ", ".join(fmt_code(c, pic.width, radix) for c in s[:LIST_LIMIT])
                       + (" \u2026" if len(s) > LIST_LIMIT else ""))
    return out


def picture(pic: CheckPicture, radix: str, key: str) -> dict:
    """What the template draws for one check: the diagram, or the summary."""
    g = pic.graph
    doc = pic.doc or {}
    view: dict[str, Any] = {"key": key, "file": pic.file, "check": pic.check, "design": pic.design,
                            "width": pic.width, "sequence_length": pic.sequence_length, "note": pic.note,
                            "unused_count": doc.get("unused_count"), "worst": doc.get("worst"),
                            "locked": doc.get("locked"), "diagram": None, "summary": None}
    if view["unused_count"] is None and pic.sequence_length is not None:
        view["unused_count"] = (1 << pic.width) - pic.sequence_length
    if g is not None and g.complete and (1 << g.width) <= DRAW_LIMIT:
        view["diagram"] = diagram(g, radix, key)
        return view
    summary: dict[str, Any] = {"bars": None, "locked": [], "more_sets": 0, "paths": [], "facts": []}
    if g is not None and g.depth_counts:
        summary["bars"] = bars(g.depth_counts)
    sets = doc.get("locked") or []
    summary["more_sets"] = max(0, len(sets) - SET_LIMIT)
    for s in sets[:SET_LIMIT]:
        summary["locked"].append({"size": len(s), "codes": [fmt_code(c, pic.width, radix) for c in s[:LIST_LIMIT]],
                                  "more": len(s) > LIST_LIMIT})
    for e in doc.get("unused", [])[:WORST_PATHS]:
        summary["paths"].append({"code": fmt_code(e["code"], pic.width, radix), "steps": e["steps"],
                                 "path": [fmt_code(c, pic.width, radix) for c in e["path"]],
                                 "more": bool(e.get("path_truncated"))})
    if pic.doc is None:
        summary["facts"] = _claim_facts(pic, radix)
    if g is not None and not (g.complete and (1 << g.width) <= DRAW_LIMIT):
        view["note"] = (f"{1 << g.width} codes: more than the {DRAW_LIMIT} drawn in full, so a summary"
                        if g.width < 64 else "a summary")
    view["summary"] = summary
    return view


# --- waveforms ----------------------------------------------------------------

SETTLE_BAND = 0.5
"""Part of a clock's column that shows the codes an asynchronous design passes while it settles."""


def _runs(slots: Sequence[tuple[float, float, Any]]) -> list[tuple[float, float, Any]]:
    """Slots (start, end, value) with equal neighbours merged."""
    out: list[tuple[float, float, Any]] = []
    for x0, x1, v in slots:
        if out and out[-1][2] == v and out[-1][1] == x0:
            out[-1] = (out[-1][0], x1, v)
        else:
            out.append((x0, x1, v))
    return out


def _groups(bits: dict[str, list], vectors: dict[str, list[str]]) -> list[tuple[str, list[str]]]:
    """Signals to draw: each vector of two or more bits as one bus, other bits alone, in declared order."""
    done: set[str] = set()
    out = []
    for name, members in vectors.items():
        members = [b for b in members if b in bits]
        if not members:
            continue
        out.append((name, members))
        done.update(members)
    out += [(b, [b]) for b in bits if b not in done]
    return out


def _timeline(sig: Signals) -> list[tuple[float, float, int, Optional[int]]]:
    """(start, end, entry, firing) in clock columns: each entry, preceded by the codes its design
    passed while settling into it (firing k of the cascade after the previous edge), if any."""
    out: list[tuple[float, float, int, Optional[int]]] = []
    for i in range(len(sig.codes)):
        ev = sig.transients.get(i - 1, [])
        between = len(ev) - 1  # the last firing gives this entry's code
        start = float(i)
        if between > 0:
            for k in range(between):
                out.append((i + SETTLE_BAND * k / between, i + SETTLE_BAND * (k + 1) / between, i - 1, k))
            start = i + SETTLE_BAND
        out.append((start, float(i + 1), i, None))
    return out


def waveform(sig: Signals, radix: str, key: str, other_name: str = "") -> dict:
    """Rows of a waveform: clock, inputs, the code as a bus, the other design's code, outputs.

    In an asynchronous design the first part of a clock's column shows the
    codes (and outputs) passed while settling after the edge, one slot per
    firing, so a ripple or a glitch shows. A trace longer than
    :data:`WAVE_LIMIT` clocks is drawn from its last :data:`WAVE_LIMIT`
    (where it fails), with the clocks numbered as in the trace.
    """
    skip = max(0, len(sig.codes) - WAVE_LIMIT)
    if skip:
        cut = slice(skip, None)
        sig = Signals(sig.width, sig.codes[cut], None if sig.other_codes is None else sig.other_codes[cut],
                      {k: v[cut] for k, v in sig.inputs.items()}, {k: v[cut] for k, v in sig.outputs.items()},
                      sig.input_vectors, sig.output_vectors,
                      (sig.note + "; " if sig.note else "") + f"clocks 0 to {skip - 1} are not drawn",
                      {i - skip: ev for i, ev in sig.transients.items() if i >= skip})
    n = len(sig.codes)
    line = _timeline(sig)
    labels = [fmt_code(c, sig.width, radix) for c in sig.codes]
    chars = max([len(s) for s in labels] + [3])
    col = max(64, 7.2 * chars + 20)
    if sig.transients:  # room for the settling slots' labels, within reason
        most = max(len(ev) - 1 for ev in sig.transients.values())
        col = max(col, min(400.0, (7.2 * chars + 14) * most / SETTLE_BAND))
    label_w = 150
    row_h, gap = 24, 10
    rows: list[dict] = []

    def slots(get) -> list[tuple[float, float, Any]]:
        return [(x0, x1, get(i, k)) for x0, x1, i, k in line]

    def bit_row(name: str, get) -> dict:
        return {"kind": "bit", "name": name, "runs": [{"x0": a, "x1": b, "v": v} for a, b, v in _runs(slots(get))]}

    def bus_row(name: str, get, width: int, cls: str) -> dict:
        runs = []
        for a, b, v in _runs(slots(get)):
            text = fmt_code(v, width, radix)
            runs.append({"x0": a, "x1": b, "v": v, "title": text,
                         "text": text if (b - a) * col >= 7.2 * len(text) + 12 else ""})
        return {"kind": "bus", "name": name, "cls": cls, "runs": runs}

    def transient_values(i: int, key_: str, name: Optional[str] = None) -> list:
        ev = sig.transients.get(i, [])
        return [e[key_] if name is None else e[key_].get(name) for e in ev]

    def signal_rows(values: dict[str, list], vectors: dict[str, list[str]], side: str) -> None:
        def value(b: str, i: int, k: Optional[int]):
            if side == "out" and k is not None:
                return transient_values(i, "outputs", b)[k]
            return values[b][i]

        for name, members in _groups(values, vectors):
            if len(members) == 1:
                rows.append({**bit_row(members[0], lambda i, k, b=members[0]: value(b, i, k)), "side": side})
                continue

            def vec(i: int, k: Optional[int], members=members):
                bits_ = [value(b, i, k) for b in members]
                return None if any(v is None for v in bits_) else int("".join(str(v) for v in bits_), 2)
            rows.append({**bus_row(name, vec, len(members), "vec"), "side": side})

    rows.append({"kind": "clock", "name": "clock", "side": ""})
    signal_rows(sig.inputs, sig.input_vectors, "in")
    rows.append({**bus_row("code", lambda i, k: sig.codes[i] if k is None else transient_values(i, "code")[k],
                           sig.width, "code"), "side": ""})
    if sig.other_codes is not None:
        others = sig.other_codes
        rows.append({**bus_row(f"code of {other_name}" if other_name else "other code",
                               lambda i, k: others[i] if k is None else None, sig.width, "other"), "side": ""})
    signal_rows(sig.outputs, sig.output_vectors, "out")
    for i, r in enumerate(rows):
        r["y"] = 24 + i * (row_h + gap)
    height = 24 + len(rows) * (row_h + gap) + 6
    settle = [{"x0": i + 1, "x1": i + 1 + SETTLE_BAND, "firings": len(ev)} for i, ev in sorted(sig.transients.items())
              if len(ev) > 1 and i + 1 < n]
    return {"key": key, "n": n, "col": round(col, 1), "label_w": label_w, "row_h": row_h, "rows": rows,
            "width": round(label_w + n * col + 12, 1), "height": height, "codes": sig.codes,
            "note": sig.note, "clocks": list(range(n)), "first": skip, "settle": settle}


# --- pages --------------------------------------------------------------------

@dataclass
class RunFacts:
    """What the page header says about a run."""

    files: list[str]
    designs: list[str]
    checks: list[str]
    version: str
    solver: str
    engine: str
    timeout: Optional[float]
    radix: str
    written: str = field(default_factory=lambda: _dt.datetime.now().astimezone().isoformat(timespec="seconds"))


def _env() -> jinja2.Environment:
    return jinja2.Environment(loader=jinja2.FileSystemLoader(str(Path(__file__).resolve().parent)),
                              autoescape=True, trim_blocks=True, lstrip_blocks=True,
                              undefined=jinja2.StrictUndefined, keep_trailing_newline=True)


def _clip(text: str, most: int = 300) -> str:
    return text if len(text) <= most else text[:most] + " \u2026"


def _claim_view(i: int, r: Result, wave: Optional[dict], pic_key: Optional[str]) -> dict:
    skip = {"trace", "locked"}
    facts = [(k, v) for k, v in r.to_json().items()
             if k not in ("file", "check", "claim", "line", "status", "seconds", "summary", "advice") and k not in skip]
    return {"id": f"claim-{i}", "status": r.status, "mark": MARKS.get(r.status, "?"), "file": r.file,
            "check": r.check, "claim": r.claim, "line": r.line, "seconds": f"{r.seconds:.2f}",
            "summary": r.summary, "evidence": list(r.evidence), "advice": list(r.advice),
            "facts": [(k, v if isinstance(v, (int, float)) or v is None else _clip(str(v))) for k, v in facts],
            "wave": wave, "picture": pic_key}


def check_page(results: Sequence[Result], pictures: Sequence[CheckPicture], waves: dict[int, dict],
               facts: RunFacts) -> str:
    """The report of a check run: summary, claims (refuted and open first), a picture per check.

    ``waves`` maps an index into ``results`` to its :func:`waveform`; each
    picture is drawn with :func:`picture`.
    """
    views = [picture(p, facts.radix, f"d{k}") for k, p in enumerate(pictures)]
    key_of = {(p.file, p.check): v["key"] for p, v in zip(pictures, views)}
    claims = [_claim_view(i, r, waves.get(i), key_of.get((r.file, r.check))) for i, r in enumerate(results)]
    claims.sort(key=lambda c: (VERDICT_ORDER.get(c["status"], 3), int(c["id"].split("-")[1])))
    counts = {s: sum(1 for r in results if r.status == s) for s in (REFUTED, OPEN, PROVED)}
    total = sum(r.seconds for r in results)
    return _env().get_template("page.html.j2").render(
        kind="check", facts=facts, claims=claims, counts=counts, total=len(results), seconds=f"{total:.2f}",
        pictures=views, palette=PALETTE, marks=MARKS, doc=None, entries=[])


def map_page(pic: CheckPicture, facts: RunFacts) -> str:
    """The report of one map: the check's picture and its list of unused codes."""
    view = picture(pic, facts.radix, "d0")
    doc = pic.doc or {}
    w = pic.width
    entries = [{"code": fmt_code(e["code"], w, facts.radix), "steps": e["steps"],
                "next": fmt_code(e["next"], w, facts.radix),
                "path": [fmt_code(c, w, facts.radix) for c in e["path"]], "more": bool(e.get("path_truncated"))}
               for e in doc.get("unused", [])]
    return _env().get_template("page.html.j2").render(
        kind="map", facts=facts, claims=[], counts={}, total=0, seconds="", pictures=[view], palette=PALETTE,
        marks=MARKS, doc=doc, entries=entries)


def contrast(fg: str, bg: str) -> float:
    """The WCAG 2 contrast ratio of two ``#rrggbb`` colours (1 to 21)."""
    def lum(h: str) -> float:
        ch = [int(h[i:i + 2], 16) / 255 for i in (1, 3, 5)]
        lin = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in ch]
        return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]
    a, b = sorted((lum(fg), lum(bg)), reverse=True)
    return (a + 0.05) / (b + 0.05)
