"""Claims written as AIGER circuits: the bad state (or the justice property) is reachable
exactly when countersign refutes the claim.

The search here is written in the test and reads only the AIGER file: an
evaluator of its AND gates, a breadth-first search from every initial state
(a latch whose reset is its own literal starts either way, AIGER 1.9), and for
a justice property a cycle, inside one strongly connected set of reachable
states, through a step where the justice literal is 1 (networkx finds the
sets). py-aiger parses each ASCII file whose bad outputs are moved to the
output section (it reads the AIGER 1.0 header only).
"""

from __future__ import annotations

import itertools
from pathlib import Path

import networkx as nx
import pytest

from checker.claims import run_check
from checker.claims.common import Options
from checker.elab import load_namespace
from checker.lang.aiger import AigerData, parse_aiger
from checker.tools.export import export_aiger

ROOT = Path(__file__).resolve().parent.parent
MAX_BITS = 16  # latches + inputs searched exhaustively


class Brute:
    def __init__(self, d: AigerData) -> None:
        self.d = d

    def steps(self, state: tuple) -> tuple[list[tuple], list[int], list[int]]:
        """From ``state``, under every input at once (each value a bit set over the input
        rows): the next state of each row, and the rows where a bad output is 1 or where
        every literal of justice property 0 is 1, as bit sets."""
        rows = 1 << len(self.d.inputs)
        ones = (1 << rows) - 1
        val = {0: 0}
        for k, x in enumerate(self.d.inputs):
            val[x >> 1] = sum(1 << r for r in range(rows) if (r >> k) & 1)
        for (x, _, _), v in zip(self.d.latches, state):
            val[x >> 1] = ones if v else 0
        for lhs, a, b in self.d.ands:
            val[lhs >> 1] = (val[a >> 1] ^ (ones if a & 1 else 0)) & (val[b >> 1] ^ (ones if b & 1 else 0))

        def lit(x):
            return val[x >> 1] ^ (ones if x & 1 else 0)

        nxt = [lit(n) for _, n, _ in self.d.latches]
        succ = [tuple((v >> r) & 1 for v in nxt) for r in range(rows)]
        bad = 0
        for x in self.d.bad:
            bad |= lit(x)
        fair = ones if self.d.justice else 0
        for x in (self.d.justice[0] if self.d.justice else []):
            fair &= lit(x)
        return succ, bad, fair

    def initial(self):
        choices = [(0, 1) if r == x else (r,) for x, _, r in self.d.latches]
        return list(itertools.product(*choices))

    def search(self) -> tuple[bool, bool]:
        """(some bad output reachable, some justice property witnessed by a reachable cycle)."""
        seen = set(self.initial())
        todo = list(seen)
        g = nx.DiGraph()
        marked = []
        bad = False
        while todo:
            s = todo.pop()
            succ, bad_rows, fair_rows = self.steps(s)
            bad |= bad_rows != 0
            for r, t in enumerate(succ):
                g.add_edge(s, t)
                if (fair_rows >> r) & 1:
                    marked.append((s, t))
                if t not in seen:
                    seen.add(t)
                    todo.append(t)
        comp = {}
        for k, scc in enumerate(nx.strongly_connected_components(g)):
            for s in scc:
                comp[s] = k
        fair = any(comp[s] == comp[t] for s, t in marked)
        return bad, fair


def small_claims():
    out = []
    for f in sorted((ROOT / "cases").glob("*.cnl")):
        ns = load_namespace(str(f))
        for chk in ns.checks:
            m = chk.design.model
            for claim in chk.claims:
                if not m.synchronous or claim.kind in ("settle", "glitchfree"):
                    continue  # decided order by order: no AIGER form yet
                bits = len(m.states) + len(m.inputs)
                if claim.kind == "equal" and claim.mode == "after":
                    bits = 2 * (len(m.states) + len(claim.other.model.states) + len(m.inputs)) + 3
                elif claim.kind == "recover":
                    bits += 1 + max(1, (claim.within or 0).bit_length())
                if bits <= MAX_BITS:
                    out.append((f.name, chk.name, claim.pos.line))
    return out


OWN = """\
# A cooling-fan stage sequencer for a server rack (a scenario of our own): three stages
# switched in a 0..5 cycle; a wrong variant and a lock-prone variant beside it.
design fans
  in go, rst
  node at5 = q[2] & q[0]
  flop q[2:0] : D (d = mux(go, q, {q[2] ^ (q[1] & q[0]), q[1] ^ q[0], !q[0]} & !at5)) clear rst
  out top = at5
end
design fans_lock
  in go, rst
  node at5 = q[2] & !q[1] & q[0]
  flop q[2:0] : D (d = mux(go, q, {q[2] ^ (q[1] & q[0]), q[1] ^ q[0], !q[0]} & !at5)) clear rst
  out top = q[2] & q[0]
end
design fans_alt
  in go, rst
  node at5 = q[2] & q[0]
  flop q[2:0] : T (t = mux(go, 0b000, {q[1] & q[0] | at5, q[0] & !at5, 1} )) clear rst
  out top = at5
end
check a of fans
  code q
  count 0 .. 5
  load 0 when rst
  hold when !go
  recover within 1
  recover within 2
  recover
  always top == at(5)
  always top == at(4)
  equal fans_alt
  equal fans_lock
  equal fans_lock on sequence
  equal fans_lock after rst
end
check b of fans_lock
  code q
  count 0 .. 5
  load 0 when rst
  hold when !go
  recover
  recover within 3
end
"""


def _verdicts(path: str) -> dict[tuple[str, int], str]:
    ns = load_namespace(path)
    return {(c.name, r.line): r.status for c in ns.checks for r in run_check(c, Options())}


def _cross_check(tmp_path, path: str, check: str, line: int, verdict: str) -> None:
    ns = load_namespace(path)
    chk = next(c for c in ns.checks if c.name == check)
    claim = next(c for c in chk.claims if c.pos.line == line)
    out = tmp_path / f"{check}_{line}.aag"
    export_aiger(chk, claim, str(out))
    data = out.read_bytes()
    text = data.decode()
    assert f"claim at {path}:{line}" in text  # the comments name the claim, file and line
    d = parse_aiger(str(out), data)
    bad, fair = Brute(d).search()
    if verdict == "open":
        pytest.skip("countersign left this claim open")
    assert (bad or fair) == (verdict == "refuted"), f"{check} line {line}: countersign says {verdict}"
    binary = tmp_path / f"{check}_{line}.aig"
    export_aiger(chk, claim, str(binary))
    db = parse_aiger(str(binary), binary.read_bytes())
    assert db.ands == d.ands and db.latches == d.latches  # one numbering, two forms
    if d.bad and not d.justice:
        py_aiger_reads(text)


def py_aiger_reads(text: str) -> None:
    """py-aiger (test-only, an outside reader) parses an ASCII file we wrote with bad-state
    outputs: it reads the AIGER 1.0 header, so the bad outputs are moved to outputs first."""
    aiger = pytest.importorskip("aiger")
    head, rest = text.split("\n", 1)
    m_, i_, l_, o_, a_, b_ = map(int, head.split()[1:7])
    body = [f"o{o_ + int(ln[1:].split()[0])} {ln.split(' ', 1)[1]}" if ln[:1] == "b" and ln[1:2].isdigit()
            else ln for ln in rest.split("\n")]
    circ = aiger.parse(f"aag {m_} {i_} {l_} {o_ + b_} {a_}\n" + "\n".join(body))
    assert len(circ.outputs) == o_ + b_ and len(circ.latches) == l_ and len(circ.inputs) == i_


def _own_claims():
    import tempfile
    p = Path(tempfile.mkdtemp()) / "fans.cnl"
    p.write_text(OWN)
    return [(c.name, cl.pos.line) for c in load_namespace(str(p)).checks for cl in c.claims]


@pytest.mark.parametrize("check,line", _own_claims())
def test_own_claims_both_ways(tmp_path, check, line):
    p = tmp_path / "fans.cnl"
    p.write_text(OWN)
    verdicts = _verdicts(str(p))
    _cross_check(tmp_path, str(p), check, line, verdicts[(check, line)])


def test_own_claims_cover_both_verdicts(tmp_path):
    p = tmp_path / "fans.cnl"
    p.write_text(OWN)
    got = _verdicts(str(p))
    kinds = {}
    ns = load_namespace(str(p))
    for c in ns.checks:
        for cl in c.claims:
            kinds.setdefault((cl.kind, cl.mode), set()).add(got[(c.name, cl.pos.line)])
    assert kinds[("recover", None)] == {"proved", "refuted"}
    assert kinds[("always", None)] == {"proved", "refuted"}
    assert "refuted" in kinds[("equal", None)] and "proved" in kinds[("equal", None)]


CASE_CLAIMS = small_claims()


@pytest.mark.parametrize("case,check,line", CASE_CLAIMS)
def test_case_claims(tmp_path, case, check, line):
    path = str(ROOT / "cases" / case)
    _cross_check(tmp_path, path, check, line, _verdicts(path)[(check, line)])


def test_some_case_claims_are_small_enough():
    assert len(CASE_CLAIMS) >= 5
