"""Every claim of cases/ that is one SAT question (count, always, `recover within N`, `equal`
without `after`), exported as DIMACS and solved by a standalone SAT solver program: UNSAT
exactly where countersign proves the claim, SAT where it refutes it."""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import pytest

from checker import api
from checker.claims.result import PROVED, REFUTED

CASES = Path(__file__).resolve().parent.parent / "cases"
SOLVERS = ("cadical", "minisat")  # Debian packages of general SAT solvers (.ci/run installs them as root)


def solver_program() -> str | None:
    return next((p for p in map(shutil.which, SOLVERS) if p), None)


def solve(program: str, cnf: Path, tmp: Path) -> bool:
    """True when the standalone program finds the formula satisfiable. Both programs exit 10 for
    SAT and 20 for UNSAT (the SAT competition convention)."""
    args = [program, "-q", str(cnf)] if program.endswith("cadical") else [program, "-verb=0", str(cnf), str(tmp / "model")]
    rc = subprocess.run(args, capture_output=True, text=True, timeout=300).returncode
    assert rc in (10, 20), f"{program} exited {rc}"
    return rc == 10


def one_question(r) -> bool:
    """Whether countersign writes this claim as one DIMACS question."""
    if r.claim == "recover":
        return " within " in f" {r.text} "
    if r.claim == "equal":
        return " after " not in f" {r.text} "
    return r.claim in ("count", "always")


def test_exported_claims_are_unsat_when_proved_and_sat_when_refuted(tmp_path):
    program = solver_program()
    if program is None:
        pytest.skip("no standalone SAT solver program (Debian's cadical or minisat) on this machine")
    run = api.check_files([str(CASES)], api.options(timeout=120), jobs=1)
    checked = {"count": 0, "always": 0, "recover": 0, "equal": 0}
    for r in run.results:
        if r.status not in (PROVED, REFUTED) or not one_question(r):
            continue
        out = tmp_path / f"{Path(r.file).stem}_{r.line}.cnf"
        try:
            api.export_claim(r.file, r.check, r.line, str(out))
        except api.InputError as e:  # an asynchronous design's claims are decided order by order
            assert "asynchronous" in e.message, e.message
            continue
        assert solve(program, out, tmp_path) == (r.status == REFUTED), (r.file, r.line, r.claim, r.status)
        checked[r.claim] += 1
    assert all(n >= 2 for n in checked.values()), checked


def test_recover_within_cnf_is_the_bound_itself(tmp_path):
    """`recover within N` is SAT at N = worst - 1 and UNSAT at N = worst (demo: worst 4, from 12)."""
    program = solver_program()
    if program is None:
        pytest.skip("no standalone SAT solver program (Debian's cadical or minisat) on this machine")
    src = (CASES / "demo.cnl").read_text(encoding="utf-8")
    for n, sat in ((3, True), (4, False)):
        p = tmp_path / "demo.cnl"
        p.write_text(src.replace("recover within 4", f"recover within {n}"), encoding="utf-8")
        line = next(i for i, l in enumerate(p.read_text().splitlines(), 1) if l.strip() == f"recover within {n}")
        out = tmp_path / f"r{n}.cnf"
        api.export_claim(str(p), "batch", line, str(out))
        assert solve(program, out, tmp_path) is sat
