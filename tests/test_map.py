"""The unused-code map, repair hints and the DOT state graph.

Repair hints are checked against a brute-force search for the smallest set
of codes to redirect (networkx as the test-only acyclicity reference), over
hypothesis-generated designs of a ferry gate with a free input.
"""

from __future__ import annotations

import itertools
import json
import re

import networkx as nx
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from checker.engines import explicit as X
from checker.engines import repair as P
from checker.tools import codemap as R
from checker.claims.common import Options
from checker.elab import load_namespace
from checker.report import dot as D
from checker.report.text import map_lines
from checker.tools.stategraph import state_graph

from test_explicit import load_text, reference_graph, vent_designs, condition
from test_recover import GATE, tail_counter


def load(write, text):
    return load_namespace(write(text)).checks[0]


KEYS = {"check", "width", "sequence_length", "unused_count", "worst", "locked", "unused"}


def test_map_shape_locked(write):
    check = load(write, GATE)
    m = R.recovery_map(check)
    assert set(m) == KEYS
    json.dumps(m)
    assert m["width"] == 4 and m["sequence_length"] == 8 and m["unused_count"] == 8
    assert m["worst"] is None and m["locked"] == [[2, 4, 5, 6, 9, 10, 11, 13]]
    assert [e["code"] for e in m["unused"]] == [2, 4, 5, 6, 9, 10, 11, 13]
    for e in m["unused"]:
        assert e["steps"] is None
        assert e["path"][0] == e["code"] and e["path"][1] == e["next"]
        assert e["path"][-1] in e["path"][:-1]  # around the cycle until a code repeats


def test_map_sorted_worst_first_with_limit_and_truncation(write):
    check = load(write, tail_counter(8, 15))
    full = R.recovery_map(check, limit=1000)
    steps = [e["steps"] for e in full["unused"]]
    assert len(steps) == 240 == full["unused_count"]
    assert steps == sorted(steps, reverse=True) and full["worst"] == steps[0] == 16
    for e in full["unused"]:
        p = e["path"]
        assert len(p) == e["steps"] + 1 and check.sequence.contains(p[-1])
        assert not any(check.sequence.contains(c) for c in p[:-1])
    top = R.recovery_map(check, limit=5)
    assert top["unused"] == full["unused"][:5]
    long = R.recovery_map(load(write, tail_counter(10, 63)), limit=3)
    assert long["worst"] == 64
    e = long["unused"][0]
    assert len(e["path"]) == 64 and e["path_truncated"] is True


def test_map_wide_by_sat(write):
    last = (0b11 << 38) | 0b11
    check = load(write, tail_counter(40, last))
    m = R.recovery_map(check)
    assert set(m) == KEYS
    assert m["worst"] == 4 and m["locked"] == [] and m["unused_count"] == (1 << 40) - last - 1
    (e,) = m["unused"]
    assert e["steps"] == 4 and len(e["path"]) == 5 and check.sequence.contains(e["path"][-1])


def test_map_open_when_out_of_time(write):
    from checker.engines.budget import Budget
    import time

    check = load(write, tail_counter(8, 15))
    m = R.recovery_map(check, budget=Budget(deadline=time.monotonic() - 1))
    assert m["status"] == "open" and m["worst"] is None


def test_map_condition_is_first_recover_claims(write):
    text = GATE.replace("  recover\n  recover within 3 when run\n", "")
    check = load(write, text)  # first recover is now `when run | drop`: hold allowed
    assert R.recovery_map(check)["locked"] == [[2, 4, 5, 6, 9, 10, 11, 13]]
    m = R.recovery_map(check, cond=check.design.model.signals["run"])
    assert m["locked"] == [[2, 4, 5, 6, 9, 10, 11, 13]]


def test_map_text_lines(write):
    lines = map_lines(R.recovery_map(load(write, tail_counter(6, 7)), limit=3))
    assert "worst: 8" in lines[1]
    assert any(l.split()[:2] == ["8", "8"] for l in lines)


# --- repair hints ------------------------------------------------------------

def _brute_smallest(g: nx.DiGraph, seq: set[int]) -> int:
    unused = [c for c in g.nodes if c not in seq]
    sub = g.subgraph(unused)
    cyclic = sorted({c for comp in nx.strongly_connected_components(sub) for c in comp
                     if len(comp) > 1 or sub.has_edge(c, c)})
    for k in range(len(cyclic) + 1):
        for pick in itertools.combinations(cyclic, k):
            if nx.is_directed_acyclic_graph(sub.subgraph(set(unused) - set(pick))):
                return k
    raise AssertionError("unreachable")


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(vent_designs(max_flops=4))
def test_repair_set_is_smallest_and_removes_every_lock(text):
    check = load_text(text)
    cond = condition(check)
    a = X.explore(check.space, cond)
    plan = P.repair_plan(a, check.sequence.first())
    g, seq = reference_graph(check, cond)
    if not a.locked:
        assert plan.codes == []
        return
    assert plan.exact
    assert len(plan.codes) == _brute_smallest(g, seq)
    after = P.redirected(a, plan.codes, check.sequence.first())
    assert not after.locked and after.worst is not None and plan.worst_after == after.worst


def test_repair_hints_dict_and_within(write):
    check = load(write, GATE)
    h = R.repair_hints(check, within=3)
    assert h["redirect"] == [2] and h["exact"] and h["target"] == 0
    assert h["table"][0] == {"code": 2, "next_now": [5], "next_new": 0}
    assert h["worst_after"] is not None and h["worst_after"] <= 3
    assert any("repair hint" in l for l in h["lines"])


def test_repair_hints_for_slow_design(write):
    check = load(write, tail_counter(8, 15))
    h = R.repair_hints(check, within=4)
    assert h["redirect"] == [] and h["for_within"] and h["worst_after"] <= 4


def test_wide_design_has_no_explicit_hints(write):
    assert R.repair_hints(load(write, tail_counter(40, 3))) is None


# --- DOT -----------------------------------------------------------------------

def test_dot_graph(write):
    check = load(write, GATE)
    a = R.analyse(check)
    text = D.state_graph_dot(state_graph(check, a))
    assert text.startswith("digraph ") and text.rstrip().endswith("}")
    nodes = set(re.findall(r"^\s*c(\d+) \[", text, re.M))
    assert nodes == {str(c) for c in range(16)}
    assert "cluster_locked_0" in text
    edges = re.findall(r"c(\d+) -> c(\d+)", text)
    assert ("2", "5") in edges and ("0", "1") in edges  # a locked edge and the counting cycle
    assert text.count("color=red, penwidth=1.5") == 8  # the 8 edges of the locked cycle
    assert '\\n' in text and '\\\\n' not in text  # DOT line breaks in labels


def test_dot_partial_for_large_graph(write):
    check = load(write, tail_counter(12, 255))
    a = R.analyse(check)
    text = D.state_graph_dot(state_graph(check, a, max_nodes=100))
    assert "partial graph" in text
    nodes = set(re.findall(r"^\s*c(\d+) \[", text, re.M))
    assert 0 < len(nodes) <= 100
    for x, y in re.findall(r"c(\d+) -> c(\d+)", text):
        assert x in nodes and y in nodes


def test_render_svg_without_dot(monkeypatch, tmp_path):
    monkeypatch.setattr(D.shutil, "which", lambda name: None)
    with pytest.raises(D.RenderError, match="not installed"):
        D.render_svg("digraph g {}\n", str(tmp_path / "g.svg"))


def test_render_svg_failing_program(tmp_path):
    with pytest.raises(D.RenderError, match="failed"):
        D.render_svg("digraph g {}\n", str(tmp_path / "g.svg"), program="false")


def test_dot_from_map_document(write):
    check = load(write, GATE)
    doc = R.recovery_map(check)
    assert D.state_graph_dot(state_graph(check, doc)) == D.state_graph_dot(state_graph(check, doc.analysis))
    wide = load(write, tail_counter(40, (0b11 << 38) | 0b11))
    m = R.recovery_map(wide)
    assert m.analysis is None
    text = D.state_graph_dot(state_graph(wide, m))
    path = m["unused"][0]["path"]
    for x, y in zip(path, path[1:]):
        assert f"c{x} -> c{y};" in text
