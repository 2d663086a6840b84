"""DIMACS export of count and always claims: another solver reading the file agrees."""

from __future__ import annotations

import re

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from pysat.formula import CNF
from pysat.solvers import Solver

from checker.engines.budget import Budget
from checker.claims import always, count
from checker.tools.export import export_cnf
from checker.claims.common import Options
from checker.elab import load_namespace
from checker.claims.result import PROVED, REFUTED


def load(tmp_path, text: str, name: str = "t.cnl"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return load_namespace(str(p))


def solve_file(path: str, solver: str = "minisat22"):
    """Solve a DIMACS file as any user would: read it, no access to our objects."""
    cnf = CNF(from_file=path)
    with Solver(name=solver, bootstrap_with=cnf.clauses) as s:
        return s.solve(), s.get_model()


def names(path: str) -> dict[str, int]:
    out = {}
    for line in open(path, encoding="utf-8"):
        m = re.match(r"c var (\d+) (.*)$", line.rstrip("\n"))
        if m:
            out[m.group(2)] = int(m.group(1))
    return out


def decode(path: str, model: list[int], check) -> tuple[int, dict[str, int]]:
    """The code and inputs of a model of the file, read through its header."""
    nm = names(path)
    # a variable in no clause is free: the solver may not report it, any value will do
    val = {abs(l): int(l > 0) for l in model}
    states = check.design.model.states
    code = 0
    for i in check.code:
        code = (code << 1) | val.get(nm[f"{states[i]}@0"], 0)
    inputs = {n: val.get(nm[f"{n}@0"], 0) for n in check.design.model.inputs}
    return code, inputs


CELLAR = """
design rack
  in en
  flop q[3] : T (t = en & q[0] & (q[1] & q[2] | q[3]))
  flop q[2] : T (t = en & q[0] & q[1])
  flop q[1] : T (t = en & q[0] & !q[3])
  flop q[0] : T (t = en)
  out last = q[3] & q[0]
end
check bottles of rack
  code q
  count 0 .. 9
  hold when !en
  always last == at(9)
  always last == at(8)
end
"""


def test_proved_count_claim_is_unsat_in_the_file(tmp_path):
    chk = load(tmp_path, CELLAR).checks[0]
    path = str(tmp_path / "c.cnf")
    stats = export_cnf(chk, chk.claims[0], path)
    sat, _ = solve_file(path)
    assert not sat
    text = open(path, encoding="utf-8").read()
    header = re.search(r"^p cnf (\d+) (\d+)$", text, re.M)
    clauses = [l for l in text.splitlines() if l and not l.startswith(("c", "p"))]
    # DIMACS: the problem line gives the variable and clause counts (the format's own rule).
    assert int(header.group(1)) == stats["vars"] and int(header.group(2)) == stats["clauses"] == len(clauses)
    assert all(l.endswith(" 0") for l in clauses)
    assert max(abs(int(x)) for l in clauses for x in l.split()) <= stats["vars"]
    assert "c SAT means: refuted" in text and "c UNSAT means: proved" in text
    assert count.prove(chk, chk.claims[0], Options(), Budget()).status == PROVED


def test_refuted_count_claim_model_decodes_to_the_counterexample(tmp_path):
    chk = load(tmp_path, CELLAR.replace("en & q[0] & !q[3]", "en & q[0]")).checks[0]
    path = str(tmp_path / "c.cnf")
    export_cnf(chk, chk.claims[0], path)
    sat, model = solve_file(path, "glucose4")
    assert sat
    code, inputs = decode(path, model, chk)
    # 9 with en = 1 is the only failing pair (t = 1011 takes 1001 to 0010).
    assert (code, inputs) == (9, {"en": 1})
    nxt, _, _ = chk.design.model.step(chk.state_of(code), inputs)
    assert chk.code_of(nxt) == 2


def test_always_claims(tmp_path):
    chk = load(tmp_path, CELLAR).checks[0]
    good, bad = [c for c in chk.claims if c.kind == "always"]
    p1, p2 = str(tmp_path / "a1.cnf"), str(tmp_path / "a2.cnf")
    export_cnf(chk, good, p1)
    export_cnf(chk, bad, p2)
    assert not solve_file(p1)[0]
    sat, model = solve_file(p2)
    assert sat
    code, _ = decode(p2, model, chk)
    assert code in (8, 9)  # last == at(8) is 0 at 8 and at 9
    assert always.prove(chk, bad, Options(), Budget()).status == REFUTED


def test_other_claims_are_refused_clearly(tmp_path):
    # `recover` without a bound is a question about every length of run: no one SAT question
    text = CELLAR.replace("  always last == at(8)\n", "  always last == at(8)\n  recover\n")
    chk = load(tmp_path, text).checks[0]
    rec = [c for c in chk.claims if c.kind == "recover"][0]
    with pytest.raises(ValueError, match="recover claim cannot be written as CNF"):
        export_cnf(chk, rec, str(tmp_path / "r.cnf"))


def test_header_names_signals_and_clocks(tmp_path):
    chk = load(tmp_path, CELLAR).checks[0]
    path = str(tmp_path / "c.cnf")
    export_cnf(chk, chk.claims[0], path)
    nm = names(path)
    for s in ["q[3]@0", "q[2]@0", "q[1]@0", "q[0]@0", "en@0"]:
        assert s in nm
    assert any(k.startswith("question ") for k in nm)
    assert len(set(nm.values())) == len(nm)


# --- random designs: the file's verdict is the engine's ------------------------------
@st.composite
def designs(draw):
    width = draw(st.integers(3, 5))
    flops = [f"q[{i}]" for i in range(width)]
    atoms = flops + ["lid", "1"]

    def e(d=2):
        if d == 0 or draw(st.booleans()):
            return draw(st.sampled_from(atoms))
        op = draw(st.sampled_from(["&", "|", "^"]))
        return f"({e(d - 1)} {op} {'!' if draw(st.booleans()) else ''}{e(d - 1)})"
    kind = draw(st.sampled_from(["D", "T", "JK", "SR"]))
    pins = {"D": ["d"], "T": ["t"], "JK": ["j", "k"], "SR": ["s", "r"]}[kind]
    drives = ", ".join(f"{p} = {{{', '.join(e() for _ in range(width))}}}" for p in pins)
    lines = ["design jar", "  in lid", f"  flop q[{width - 1}:0] : {kind} ({drives})", "end"]
    codes = draw(st.lists(st.integers(0, (1 << width) - 1), min_size=1, max_size=8, unique=True))
    rule = draw(st.sampled_from(["", "  hold when !lid\n", "  load 0 when lid\n", "  step when lid\n"]))
    return "\n".join(lines) + f"\ncheck j of jar\n  code q\n  count {' '.join(map(str, codes))}\n{rule}" \
        f"  always {e()}\nend\n"


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(designs())
def test_file_verdict_equals_engine_verdict(tmp_path, text):
    chk = load(tmp_path, text).checks[0]
    for claim, mod in zip(chk.claims, (count, always)):
        path = str(tmp_path / "x.cnf")
        export_cnf(chk, claim, path)
        sat, model = solve_file(path)
        res = mod.prove(chk, claim, Options(), Budget())
        assert res.status == (REFUTED if sat else PROVED)
        if not sat:
            continue
        # A model of the file, read through its header, is a real counterexample.
        code, inputs = decode(path, model, chk)
        assert chk.sequence.contains(code)
        state = chk.state_of(code)
        if claim.kind == "always":
            assert always.prop_value(chk, claim.prop, state, inputs) == 0
        else:
            nxt, _, faults = chk.design.model.step(state, inputs)
            want = count.reference_next(chk, code, inputs)
            assert faults or (want is not None and want != chk.code_of(nxt))
