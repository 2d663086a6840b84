"""The solver chosen with --solver (Options.solver) is the only one ever built.

Every python-sat solver is made through ``pysat.solvers.Solver``; a spy on
its constructor records the names asked for while whole commands run in this
process (no --timeout, so nothing runs in a forked child).
"""

from __future__ import annotations

import re
from pathlib import Path

import pysat.solvers
import pytest

import checker
from checker.engines import explicit as X
from checker.tools import codemap as R
from checker.engines import repair
from checker.cli import build_parser, main
from checker.claims.common import Options
from checker.engines.sat import DEFAULT_SOLVER

CHOSEN = "glucose4"  # neither the default nor the solver some helpers used to hard-code
CASES = Path(__file__).resolve().parent.parent / "cases"

# A greenhouse vent flap with two position bits: code 0 is home; a gust makes
# 1 go to 3 instead of 2, so the unused codes 1, 2, 3 hold two cycles
# (1 2 3 and 1 3) and the smallest set breaking both is found by SAT.
VENT = """\
design vent
  in gust
  flop q[1] : D (d = q[1] ^ q[0])
  flop q[0] : D (d = q[1] | (q[0] & gust))
end
check stepper of vent
  code q
  count 0
  recover
end
"""


class _Seen:
    """The solver names written to a file by every process of the test (the command line runs
    each claim in a forked child, which inherits the spy but not the parent's memory)."""

    def __init__(self, path: Path) -> None:
        self.path = path

    def names(self) -> list[str]:
        return self.path.read_text().split() if self.path.exists() else []

    def __iter__(self):
        return iter(self.names())

    def __len__(self) -> int:
        return len(self.names())


@pytest.fixture
def built(monkeypatch, tmp_path):
    """Names of the solvers constructed while the test runs, in this process or its children."""
    seen = _Seen(tmp_path / "solvers.txt")
    orig = pysat.solvers.Solver.__init__

    def spy(self, name="m22", *args, **kwargs):
        with open(seen.path, "a") as f:
            f.write(name + "\n")
        orig(self, name, *args, **kwargs)

    monkeypatch.setattr(pysat.solvers.Solver, "__init__", spy)
    return seen


def calls_of(monkeypatch, module, attr: str, where: Path) -> _Seen:
    """The calls of ``module.attr``, in this process or its children (to show that a path was taken)."""
    seen = _Seen(where / f"calls-{attr}.txt")
    orig = getattr(module, attr)

    def wrapper(*args, **kwargs):
        with open(seen.path, "a") as f:
            f.write(attr + "\n")
        return orig(*args, **kwargs)

    monkeypatch.setattr(module, attr, wrapper)
    return seen


def test_the_spy_sees_the_default(built):
    assert main(["check", str(CASES / "sixpack_d.cnl")]) in (0, 1)
    assert built and set(built) == {DEFAULT_SOLVER}


@pytest.mark.parametrize("engine", ["auto", "sat", "explicit"])
def test_check_uses_only_the_chosen_solver(built, monkeypatch, capsys, tmp_path, engine):
    # With no enumeration the admissible input rows come from SAT as well.
    monkeypatch.setattr(X, "ENUMERATE_LIMIT", 0)
    rows = calls_of(monkeypatch, X, "_rows_by_sat", tmp_path)
    files = sorted(CASES.glob("*.cnl"))
    for f in files:
        # explicit: some checks are too wide for it, an input error (2) there
        assert main(["check", str(f), "--solver", CHOSEN, "--engine", engine]) in (0, 1, 2), f
    capsys.readouterr()
    assert built and set(built) == {CHOSEN}
    if engine != "sat":
        assert rows


def test_map_and_repair_use_only_the_chosen_solver(built, monkeypatch, capsys, tmp_path):
    monkeypatch.setattr(X, "ENUMERATE_LIMIT", 0)
    rows = calls_of(monkeypatch, X, "_rows_by_sat", tmp_path)
    exact = calls_of(monkeypatch, repair, "_exact_fvs", tmp_path)
    vent = tmp_path / "vent.cnl"
    vent.write_text(VENT, encoding="utf-8")
    for f, chk in [(vent, "stepper"), (CASES / "washer_jets.cnl", "jets"), (CASES / "mash_timer_fault.cnl", "rest")]:
        assert main(["map", str(f), chk, "--solver", CHOSEN]) in (0, 1), f
        assert main(["check", str(f), "--solver", CHOSEN]) in (0, 1), f
    capsys.readouterr()
    spec = checker.api.load(str(vent)).check("stepper").spec
    hints = R.repair_hints(spec, opts=Options(solver=CHOSEN))
    assert hints is not None and hints["redirect"] in ([1], [3]) and hints["exact"]
    assert rows and exact
    assert built and set(built) == {CHOSEN}


def test_compare_uses_only_the_chosen_solver(built, capsys):
    for old, new in [("sixpack_d.cnl", "sixpack_d.cnl"), ("demo.cnl", "demo.cnl")]:
        assert main(["compare", str(CASES / old), str(CASES / new), "--solver", CHOSEN]) == 0
    capsys.readouterr()
    assert built and set(built) == {CHOSEN}


def test_the_default_is_spelled_once():
    assert Options().solver == DEFAULT_SOLVER
    for cmd in (["check", "x.cnl"], ["map", "x.cnl", "c"], ["compare", "a", "b"], ["demo"]):
        assert build_parser().parse_args(cmd).solver == DEFAULT_SOLVER
    # No source file but checker/engines/names.py (where the default lives, so that the command
    # line can show it without loading a solver) names a solver as a string literal.
    quoted = re.compile(r"""["'](%s)["']""" % "|".join(re.escape(n) for n in pysat_names()))
    root = Path(checker.__file__).resolve().parent
    spelled = [f"{p.relative_to(root)}: {m.group(0)}" for p in sorted(root.rglob("*.py"))
               if p.name != "names.py" for m in quoted.finditer(p.read_text(encoding="utf-8"))]
    assert spelled == []


def pysat_names() -> list[str]:
    out = []
    for attr, names in vars(pysat.solvers.SolverNames).items():
        if not attr.startswith("_"):
            out += list(names)
    return sorted(set(out), key=len, reverse=True)
