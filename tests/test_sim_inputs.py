"""`sim` reads codes as `check` and `map` do, replays a whole `check --json` document, takes
per-clock inputs from a file, and shows vectors as values (issue 11, point 10)."""

from __future__ import annotations

import json
from pathlib import Path

from checker.cli import main

CASES = Path(__file__).resolve().parent.parent / "cases"

# Greenhouse vent sequencer: flops declared lowest bit first, the check reads them highest first,
# so the declaration order and the check's code line spell different numbers for one state.
VENT = """\
design vent
  in go, lamp[1:0]
  flop p[0] : T (t = go)
  flop p[1] : T (t = go & p[0])
  flop p[2] : T (t = go & p[0] & p[1])
  out stage[2:0] = {p[2], p[1], p[0]}
  out lit[1:0] = lamp
end

check steps of vent
  code {p[2], p[1], p[0]}
  count 0 .. 5
  hold when !go
  recover when go
end
"""


def _json(capsys, *args):
    rc = main([*args, "--json"])
    out = capsys.readouterr()
    return rc, (json.loads(out.out) if out.out else None), out.err


def test_check_code_order_agrees_with_map_and_the_default_is_declaration(write, capsys):
    path = write(VENT)
    rc, doc, _ = _json(capsys, "sim", path, "vent", "--check", "steps", "--from", "3", "--set", "go=1",
                       "--cycles", "2")
    assert rc == 0 and [e["code"] for e in doc["trace"]] == [3, 4, 5]  # counts up in the check's order
    # the default is contract v2's: declaration order, p[0] first and most significant, which
    # reads the same states differently (3, 4, 5 written lowest bit first), as --code spells it
    rc, decl, _ = _json(capsys, "sim", path, "vent", "--from", "6", "--set", "go=1", "--cycles", "2")
    assert [e["code"] for e in decl["trace"]] == [6, 1, 5]
    rc, spelled, _ = _json(capsys, "sim", path, "vent", "--code", "{p[0], p[1], p[2]}", "--from", "6",
                           "--set", "go=1", "--cycles", "2")
    assert spelled["trace"] == decl["trace"]
    assert main(["sim", path, "vent", "--from", "6", "--cycles", "1"]) == 0
    assert "--check steps" in capsys.readouterr().out  # the table names the check that orders otherwise
    # map: where each unused code goes under the recover condition; sim from there agrees
    rc, m, _ = _json(capsys, "map", path, "steps")
    for entry in m["unused"]:
        rc, one, _ = _json(capsys, "sim", path, "vent", "--check", "steps", "--from", str(entry["code"]),
                           "--set", "go=1", "--cycles", "1")
        assert one["trace"][1]["code"] == entry["next"], entry
    assert main(["sim", path, "vent", "--check", "nosuch"]) == 2


def test_trace_takes_the_whole_check_document(tmp_path, capsys):
    path = str(CASES / "dock_decade_fault.cnl")
    assert main(["check", path, "--json"]) == 1
    doc = json.loads(capsys.readouterr().out)
    traced = [c for c in doc["claims"] if c.get("trace")]
    assert len(traced) >= 2
    f = tmp_path / "all.json"
    f.write_text(json.dumps(doc))
    design = "dock_decade"
    for claim in traced:
        rc, sim, _ = _json(capsys, "sim", path, design, "--trace", str(f), "--claim", str(claim["line"]))
        assert rc == 0
        assert [e["code"] for e in sim["trace"]] == [e["code"] for e in claim["trace"]]
    # several traces and no --claim; a line with no claim; --claim without --trace: all exit 2
    for args in (["--trace", str(f)], ["--trace", str(f), "--claim", "1"], ["--claim", "3"]):
        rc, err_doc, err = _json(capsys, "sim", path, design, *args)
        assert rc == 2 and "error" in err_doc, args


def test_inputs_per_clock_from_csv_and_json(write, tmp_path, capsys):
    path = write(VENT)
    csv = tmp_path / "run.csv"
    csv.write_text("# one row per clock\ngo,lamp\n1,0b10\n0,3\n1,0x1\n")
    rc, doc, _ = _json(capsys, "sim", path, "vent", "--check", "steps", "--inputs", str(csv))
    assert rc == 0
    trace = doc["trace"]
    assert len(trace) == 4  # one clock per row, then the state after the last
    assert [e["code"] for e in trace] == [0, 1, 1, 2]  # go = 1, 0, 1
    assert [e["inputs"]["lamp[1]"] * 2 + e["inputs"]["lamp[0]"] for e in trace] == [2, 3, 1, 1]
    js = tmp_path / "run.json"
    js.write_text(json.dumps([{"go": 1, "lamp": 2}, {"go": 0, "lamp": "0b11"}, {"go": 1, "lamp": 1}]))
    rc, doc2, _ = _json(capsys, "sim", path, "vent", "--check", "steps", "--inputs", str(js))
    assert rc == 0 and doc2["trace"] == trace


def test_a_bad_inputs_file_is_file_line_col(write, tmp_path, capsys):
    path = write(VENT)
    cases = [("bad.csv", "go,lamp\n1,0\n1,4\n", 3, 3),          # 4 does not fit two bits
             ("bad2.csv", "go,lamp,fan\n1,0,1\n", 1, 9),         # no input fan
             ("bad3.csv", "go,lamp\n1\n", 2, 1),                 # a row one field short
             ("bad.json", '[{"go": 1},\n {"go": 1, "fan": 0}]', 2, 12),
             ("bad2.json", '[{"go": 1},\n {"go": }]', 2, 9)]     # not JSON
    for name, text, line, col in cases:
        f = tmp_path / name
        f.write_text(text)
        rc, doc, err = _json(capsys, "sim", path, "vent", "--inputs", str(f))
        assert rc == 2, name
        assert doc["error"]["file"] == str(f) and (doc["error"]["line"], doc["error"]["col"]) == (line, col), \
            (name, doc)
        assert err.startswith(f"{f}:{line}:{col}: ")


def test_vectors_are_values_in_the_table(write, capsys):
    path = write(VENT)
    assert main(["sim", path, "vent", "--check", "steps", "--from", "5", "--set", "go=0,lamp=2", "--cycles", "1"]) == 0
    text = capsys.readouterr().out
    assert "lamp=0b10" in text and "stage=0b101" in text and "lit=0b10" in text
    assert "lamp[1]" not in text and "stage[0]" not in text
    assert main(["sim", path, "vent", "--check", "steps", "--from", "5", "--set", "go=0,lamp=2", "--cycles", "1",
                 "--radix", "dec"]) == 0
    text = capsys.readouterr().out
    assert "lamp=2" in text and "stage=5" in text


def test_many_start_codes_run_together(write, capsys):
    path = write(VENT)
    rc, doc, _ = _json(capsys, "sim", path, "vent", "--check", "steps", "--from", "0..2,5", "--set", "go=1", "--cycles", "2")
    assert rc == 0
    assert [r["from"] for r in doc["runs"]] == [0, 1, 2, 5]
    for r in doc["runs"]:
        rc, one, _ = _json(capsys, "sim", path, "vent", "--check", "steps", "--from", str(r["from"]), "--set", "go=1", "--cycles", "2")
        assert one["trace"] == r["trace"]


def test_trace_of_a_check_without_a_code_line_replays(tmp_path, capsys):
    """A check with no code line reads codes in declaration order (equal's convention); its trace
    replays in that order instead of as a code of no bits."""
    src = tmp_path / "lamps.cnl"
    src.write_text("design lamp\n  in go\n  flop p[1:0] : D (d = mux(go, p, {p[1] ^ p[0], !p[0]}))\n"
                   "  out top = p[1] & p[0]\nend\n"
                   "design lamp2\n  in go\n  flop p[1:0] : D (d = mux(go, p, {p[1] ^ p[0], p[0]}))\n"
                   "  out top = p[1] & p[0]\nend\n"
                   "check steps of lamp\n  equal lamp2\nend\n")
    rc, doc, _ = _json(capsys, "check", str(src))
    assert rc == 1
    claim = doc["claims"][0]
    js = tmp_path / "run.json"
    js.write_text(json.dumps(doc))
    rc, sim, _ = _json(capsys, "sim", str(src), "lamp", "--trace", str(js), "--claim", str(claim["line"]))
    assert rc == 0
    assert [e["code"] for e in sim["trace"]] == [e["code"] for e in claim["trace"]]
