"""How text output shows codes (``--radix``), and that no list is cut without saying so.

Facts used: 160 = 0xA0 = 0b10100000 and 169 = 0xA9 (positional notation);
there are 14 binary necklaces of length 6 (OEIS A000031), so a 6-bit shift
ring that only rotates has 14 cycles of codes, and with the one-hot cycle as
its sequence, 13 cycles of unused codes: 13 locked sets.
"""

from __future__ import annotations

import json
import re

import pytest

from checker.claims.common import code_and_decimal, code_radix, code_text
from checker.cli import main

JETS = "cases/washer_jets.cnl"  # a 4-bit Johnson ring whose 8 unused codes lock


def run(capsys, argv):
    rc = main(argv)
    out = capsys.readouterr().out
    return rc, out


def test_code_text_writes_the_languages_literals():
    assert code_text(160, 8, "hex") == "0xA0" and code_text(169, 8, "hex") == "0xA9"
    assert code_text(160, 8, "bin") == "0b10100000"
    assert code_text(5, 4, "bin") == "0b0101"
    assert code_text(5, 12, "hex") == "0x005"
    assert code_text(160, 8, "dec") == "160"
    # auto: binary up to 8 bits, hex above
    assert code_radix(8) == "bin" and code_radix(9) == "hex" and code_radix(64, "dec") == "dec"
    assert code_text(160, 8) == "0b10100000" and code_text(160, 12) == "0x0A0"
    # the decimal beside it only where it tells more than the digits
    assert code_and_decimal(1, 4) == "0b0001" and code_and_decimal(5, 4) == "0b0101 (5)"
    assert code_and_decimal(9, 12) == "0x009" and code_and_decimal(160, 12) == "0x0A0 (160)"
    assert code_and_decimal(160, 12, "dec") == "160"
    for w in (1, 4, 8, 9, 17):  # the literal reads back as the code
        for c in {0, 1, (1 << w) - 1, (1 << w) // 3}:
            for r in ("bin", "hex", "dec"):
                assert int(code_text(c, w, r), 0) == c


def _codes_in_evidence(out: str) -> list[str]:
    block = out.split("jets, recover: refuted")[1].split("\n\n")[0]
    return re.findall(r"\b(?:0b[01]+|0x[0-9A-F]+|\d+)\b", block.split("cycle:")[1].splitlines()[0])


def test_check_text_codes_follow_radix(capsys):
    rc, auto = run(capsys, ["check", JETS])
    assert rc == 1
    # the Johnson lock reads in binary by default (4-bit code)
    assert "{0b0010, 0b0100, 0b0101, 0b0110, 0b1001, 0b1010, 0b1011, 0b1101}" in auto
    cyc = _codes_in_evidence(auto)
    assert cyc[0] == "0b0010" and all(c.startswith("0b") and len(c) == 6 for c in cyc)
    _, dec = run(capsys, ["check", JETS, "--radix", "dec"])
    assert _codes_in_evidence(dec) == [str(int(c, 0)) for c in cyc]
    _, hexa = run(capsys, ["check", JETS, "--radix", "hex"])
    assert _codes_in_evidence(hexa) == [f"0x{int(c, 0):X}" for c in cyc]
    # repair hints follow too
    assert "| repair hint" in hexa and "0b" not in hexa


def test_json_keeps_integers_whatever_the_radix(capsys):
    docs = []
    for radix in ("bin", "hex", "dec"):
        rc, out = run(capsys, ["check", JETS, "--json", "--radix", radix])
        docs.append(json.loads(out))
    for d in docs:
        rec = [c for c in d["claims"] if c["claim"] == "recover" and c["status"] == "refuted"][0]
        assert rec["locked"] == [[2, 4, 5, 6, 9, 10, 11, 13]]
        assert all(isinstance(t["code"], int) for t in rec["trace"])
    assert [c["trace"] for c in docs[0]["claims"] if "trace" in c] == [c["trace"] for c in docs[1]["claims"] if "trace" in c]


def test_map_and_sim_tables_follow_radix(capsys):
    rc, auto = run(capsys, ["map", JETS, "jets"])
    assert rc == 1
    rows = [l.split() for l in auto.splitlines() if l.strip().startswith("0b") and "locked" in l]
    assert rows and all(r[0].startswith("0b") and int(r[0], 0) == int(r[1]) for r in rows)  # decimal beside
    _, dec = run(capsys, ["map", JETS, "jets", "--radix", "dec"])
    assert "0b" not in dec and "decimal" not in dec
    rc, sim = run(capsys, ["sim", JETS, "washer_jets", "--from", "5", "--cycles", "3"])
    assert rc == 0 and "0b0101 (5)" in sim and "0b1011 (11)" in sim  # 5 -> 11 (the file's hand simulation)
    _, simhex = run(capsys, ["sim", JETS, "washer_jets", "--from", "5", "--cycles", "3", "--radix", "hex"])
    assert "0xB (11)" in simhex


BEACON = """
# mast beacon: six lamps, one lit, the light walks round the mast each clock
design beacon
  flop r[5:0] : D (d = {r[4:0], r[5]})
end
check lamps of beacon
  code r
  count ring
  recover
end
"""


def test_locked_sets_cut_says_how_many_and_how_to_see_more(tmp_path, capsys):
    p = tmp_path / "beacon.cnl"
    p.write_text(BEACON)
    rc, out = run(capsys, ["check", str(p)])
    assert rc == 1
    assert "13 sets" in out
    shown = [l for l in out.splitlines() if l.strip().startswith("{")]
    assert len(shown) == 8
    note = [l for l in out.splitlines() if "locked sets shown" in l]
    assert len(note) == 1 and "8 of 13" in note[0] and "--json" in note[0]
    rc, out = run(capsys, ["check", str(p), "--json"])
    assert len(json.loads(out)["claims"][1]["locked"]) == 13
    rc, out = run(capsys, ["map", str(p), "lamps", "--limit", "5"])
    assert rc == 1
    note = [l for l in out.splitlines() if "unused codes listed" in l]
    assert len(note) == 1 and "5 of 58" in note[0] and "--limit" in note[0]


def test_compare_cubes_cut_says_so():
    from checker.tools.compare import CUBES_SHOWN, compare_lines
    cubes = [{"text": f"q={i}"} for i in range(CUBES_SHOWN + 8)]
    doc = {"designs": [{"name": "d", "status": "differs", "everywhere": False, "next_differs": ["q"],
                        "outputs_differ": [], "cube_count": len(cubes), "complete": True, "cubes": cubes}],
           "only_old": [], "only_new": [], "claims": {"now_failing": [], "now_holding": []},
           "reasons": ["d differs"], "differs": True}
    lines = compare_lines(doc)
    assert sum(1 for l in lines if l.strip().startswith("q=")) == CUBES_SHOWN
    note = [l for l in lines if "cubes shown" in l]
    assert len(note) == 1 and f"{CUBES_SHOWN} of {CUBES_SHOWN + 8}" in note[0] and "--json" in note[0]
    doc["designs"][0]["cubes"] = cubes[:3]
    assert not any("cubes shown" in l for l in compare_lines(doc))


SHADE = """
# greenhouse shade motor, two builds whose `shut` output disagrees (and against or)
design shade
  in roll
  flop s[1] : T (t = roll & s[0])
  flop s[0] : T (t = roll)
  out shut = s[1] & s[0]
end
design shade_d
  in roll
  flop s[1:0] : D (d = {s[1] ^ (roll & s[0]), s[0] ^ roll})
  out shut = s[1] | s[0]
end
check shade_steps of shade
  code s
  count 0 .. 3
  hold when !roll
  equal shade_d
end
"""


def test_equal_evidence_follows_radix(tmp_path, capsys):
    p = tmp_path / "shade.cnl"
    p.write_text(SHADE)
    _, out = run(capsys, ["check", str(p), "--json"])
    claim = [c for c in json.loads(out)["claims"] if c["claim"] == "equal"][0]
    first = claim["trace"][0]
    _, text = run(capsys, ["check", str(p), "--radix", "bin"])
    assert f"clock 0: code {code_text(first['code'], 2, 'bin')} (shade_d: {code_text(first['other_code'], 2, 'bin')})" in text
    _, text = run(capsys, ["check", str(p), "--radix", "dec"])
    assert f"clock 0: code {first['code']} (shade_d: {first['other_code']})" in text


def test_bcd_codes_are_hex_without_the_binary_values_decimal(capsys):
    # A count bcd check shows codes in hex, whose digits are the BCD digits (0x59 reads 59);
    # the binary value's decimal beside it (89) would read as a count, so it is left out.
    assert code_and_decimal(0x59, 8, "bcd") == "0x59" and code_text(0xA0, 8, "bcd") == "0xA0"
    rc, out = run(capsys, ["check", "cases/pallet_tally.cnl"])
    assert rc == 0
    assert "from code 0xA0:" in out and "(160)" not in out
    rc, out = run(capsys, ["check", "cases/pallet_tally.cnl", "--radix", "hex"])
    assert "from code 0xA0 (160):" in out  # asked for hex: the plain hex report, decimal beside


def test_a_locked_listing_cut_in_the_json_too_says_how_many_the_json_gives(capsys, tmp_path):
    # 20 flops that hold any code with a high bit set: 2^20 - 2 locked sets of one code each,
    # more than a result lists (LOCKED_LIST_LIMIT codes), so the JSON's list is cut as well
    hi = " | ".join(f"q[{i}]" for i in range(1, 20))
    f = tmp_path / "jam.cnl"
    f.write_text("design jam\n  flop q[19:0] : D (d = mux(hi, {q[19:1], !q[0]}, q))\n"
                 f"  node hi = {hi}\nend\ncheck c of jam\n  code q\n  count 0 1\n  recover\nend\n")
    rc, out = run(capsys, ["check", str(f), "--jobs", "1"])
    assert rc == 1
    assert f"(8 of {2**20 - 2} locked sets shown; --json lists the first 65536)" in out
    rc, out = run(capsys, ["check", str(f), "--jobs", "1", "--json"])
    doc = next(c for c in json.loads(out)["claims"] if c["claim"] == "recover")
    assert len(doc["locked"]) == 65536 and doc["locked_complete"] is False
