"""Start-up loads only what a command needs (issue 11, point 13): `--help` and `--version`
load no solver, NumPy, lark or SymPy, and `check` loads the modules of the claim kinds it
runs only. Checked from sys.modules in a fresh interpreter; the time itself is measured in
tests/perf/bench_startup.py, not here."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
HEAVY = ["numpy", "lark", "pysat", "sympy", "tabulate", "jinja2", "networkx", "vcd", "pyeda", "junit_xml"]

PROBE = """
import io, json, sys
from checker import cli
sys.stdout = io.StringIO()
try:
    rc = cli.main(sys.argv[1:])
except SystemExit as e:
    rc = e.code
sys.stdout = sys.__stdout__
print(json.dumps({"rc": rc, "modules": sorted(sys.modules)}))
"""


def _modules(*argv: str) -> tuple[int, set[str]]:
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    out = subprocess.run([sys.executable, "-c", PROBE, *argv], capture_output=True, text=True, env=env,
                         cwd=str(ROOT), check=True).stdout
    doc = json.loads(out.strip().splitlines()[-1])
    return doc["rc"], set(doc["modules"])


def _roots(mods: set[str]) -> set[str]:
    return {m.split(".")[0] for m in mods}


def test_help_and_version_load_no_heavy_library():
    for argv in (["--help"], ["--version"], ["sim", "--help"], ["check", "--help"]):
        rc, mods = _modules(*argv)
        assert rc == 0, argv
        assert not _roots(mods) & set(HEAVY), (argv, sorted(_roots(mods) & set(HEAVY)))


def test_check_loads_only_the_claim_kinds_it_runs(tmp_path):
    # a greenhouse vent sequencer with one count claim: no other claim kind, no SymPy
    f = tmp_path / "vent.cnl"
    f.write_text("design vent\n  in go\n  flop p[1:0] : D (d = mux(go, p, {p[1] ^ p[0], !p[0]}))\nend\n"
                 "check steps of vent\n  code p\n  count 0 .. 3\n  step when go\n  hold when !go\nend\n")
    rc, mods = _modules("check", str(f), "--jobs", "1")
    assert rc == 0
    assert "checker.claims.count" in mods
    # (recover is read by the text report for its lists of locked sets, so it is not in this list)
    others = {f"checker.claims.{k}" for k in ("always", "equal", "settle", "glitchfree")}
    others |= {f"checker.engines.{k}" for k in ("pdr", "correspond", "product", "miter")}
    assert not mods & others, sorted(mods & others)
    assert "sympy" not in _roots(mods)
    # an lfsr above 24 bits may need SymPy (primality of a factor of 2^n - 1 missing from the
    # cited table): loaded then, on first use. Taps 32 22 2 1: a maximal-length 32-bit
    # register, a fact of the trade; its claim is proved either way.
    g = tmp_path / "stir.cnl"
    g.write_text("design stir\n  flop s[31:0] : D (d = {s[30:0], s[31] ^ s[21] ^ s[1] ^ s[0]})\nend\n"
                 "check noise of stir\n  code s\n  count lfsr 32 22 2 1\nend\n")
    rc, mods = _modules("check", str(g), "--jobs", "1")
    assert rc == 0 and "checker.elab.gf2" in mods
