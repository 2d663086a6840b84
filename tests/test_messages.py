"""Messages a designer reads (issue 11, points 6 and 8): under which inputs a result holds,
what a repair hint's table means, a missing `end`, arithmetic written for logic, counted
nouns, compare's counts, SR faults and the outputs an `equal ... after` run differs in.

Assertions check the behaviour (what is named, which numbers appear), not exact wording.
The designs are a greenhouse vent sequencer and its kin, written for these tests.
"""

from __future__ import annotations

import itertools
import re

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from checker.api import load
from checker.claims.conditions import prime_cover
from checker.cli import main
from checker.errors import InputError
from checker.words import count

# A vent sequencer: three steps 0, 1, 2 on `tick`, back to 0 on `reset`; code 3 is unused
# and stays there unless `purge` is high (so it locks while purge = 0).
VENTS = """
design vents
  in tick, reset, purge
  node at3 = v[1] & v[0]
  node inc[1:0] = {v[0], !v[1] & !v[0]}
  flop v[1:0] : D (d = mux(reset, mux(tick, v, mux(at3, inc, mux(purge, 0b11, 0b00))), 0b00))
end

check vent of vents
  code v
  count 0 .. 2
  load 0 when reset
  hold when !tick
  recover
  recover within 1 when tick & purge
end
"""


def _run(tmp_path, text, name="vent"):
    p = tmp_path / "vents.cnl"
    p.write_text(text, encoding="utf-8")
    return {r.text: r for r in load(str(p)).check(name).run(timeout=60)}


# --- point 6: the inputs a verdict assumes -------------------------------------------------

def test_recover_names_its_condition(tmp_path):
    res = _run(tmp_path, VENTS)
    plain, cond = res["recover"], res["recover within 1 when tick & purge"]
    # no `when`: the stepping inputs, worked by hand from the rules: tick=1, reset=0 (purge free)
    said = plain.details["condition"]
    assert "stepping" in said and "tick=1" in said and "reset=0" in said and "purge" not in said
    assert any("tick=1" in line for line in plain.evidence)
    # with `when`: the condition as the designer wrote it
    assert "tick & purge" in cond.details["condition"]
    assert cond.status == "proved"


def test_a_locked_cycle_shows_the_inputs_that_keep_it(tmp_path):
    res = _run(tmp_path, VENTS)
    r = res["recover"]
    assert r.status == "refuted" and r.details["locked"] == [[3]]
    keep = [line for line in r.evidence if "keep it locked" in line]
    # code 3 stays at 3 only with purge = 0 (by hand: the mux picks 0b00 then)
    assert keep and "purge=0" in keep[0]
    # and the trace's inputs agree with that line
    assert all(t.inputs is None or t.inputs["purge"] == 0 for t in r.trace)


def test_the_repair_hint_explains_its_notation(tmp_path):
    r = _run(tmp_path, VENTS)["recover"]
    text = "\n".join(r.advice)
    assert "a/b" in text or "either" in text  # the notation for several next codes is explained
    header = [line for line in r.advice if "unused code" in line and "proposed" in line]
    assert header, r.advice


@settings(max_examples=200, deadline=None)
@given(st.integers(1, 4).flatmap(lambda n: st.tuples(st.just(n), st.sets(st.integers(0, (1 << n) - 1)))))
def test_prime_cover_covers_exactly_the_ones(case):
    n, ones = case
    cover = prime_cover(set(ones), n)
    covered = {a for a in range(1 << n) if any(a & m == v for v, m in cover)}
    assert covered == set(ones)


def test_the_stepping_inputs_as_cubes_match_brute_force(tmp_path):
    # rules `hold when a & b`, `hold when c`: steps exactly when !c & !(a & b): two cubes
    text = """
design greenhouse
  in a, b, c
  flop q : D (d = mux(a & b | c, !q, q))
end
check g of greenhouse
  code q
  count 0 1
  hold when a & b
  hold when c
  recover
end
"""
    r = _run(tmp_path, text, "g")["recover"]
    said = r.details["condition"].split(":", 1)[1]
    cubes = [dict(re.findall(r"(\w+)=([01])", part)) for part in said.split(" or ")]
    for a, b, c in itertools.product((0, 1), repeat=3):
        val = {"a": str(a), "b": str(b), "c": str(c)}
        in_cover = any(all(val[k] == v for k, v in cube.items()) for cube in cubes)
        assert in_cover == (not c and not (a and b)), (a, b, c, said)


# --- point 8: messages ---------------------------------------------------------------------

def _error(tmp_path, text) -> InputError:
    p = tmp_path / "bad.cnl"
    p.write_text(text, encoding="utf-8")
    with pytest.raises(InputError) as e:
        load(str(p))
    return e.value


def test_a_missing_end_names_the_block_and_its_line(tmp_path):
    e = _error(tmp_path, "design vents\n  in tick\n  flop q : D (d = tick)\n\ncheck c of vents\n  code q\n  count 0 1\nend\n")
    assert "end" in e.message and "line 1" in e.message and "design" in e.message
    assert e.pos.line == 5  # where the next block starts, the place to add it
    e = _error(tmp_path, "design vents\n  in tick\n  flop q : D (d = tick)\n")
    assert "end" in e.message and "line 1" in e.message
    e = _error(tmp_path, "design a\n  in x\n  out y = x\nend\ncheck c of a\n  code q\n")
    assert "check" in e.message and "line 5" in e.message


@pytest.mark.parametrize("op, meant", [("+", "|"), ("*", "&")])
def test_arithmetic_written_for_logic_gets_a_hint(tmp_path, op, meant):
    e = _error(tmp_path, f"design a\n  in x, y\n  out z = x {op} y\nend\n")
    assert f"'{meant}'" in e.message.split(";")[-1] or f"'{meant}' for" in e.message


def test_the_expected_symbols_are_never_cut(tmp_path):
    e = _error(tmp_path, "design a\n  in x, y\n  flop q : D (d = x y)\nend\n")
    assert "..." not in e.message
    # every symbol that may follow an expression there, written out (clock, clear, preset after the pins)
    for word in ("'&'", "'|'", "'^'", "')'"):
        assert word in e.message


def test_counted_nouns_agree_with_their_number(tmp_path, capsys):
    assert count(1, "clock") == "1 clock" and count(2, "clock") == "2 clocks" and count(0, "code") == "0 codes"
    assert count(3, "set of unused codes") == "3 sets of unused codes"
    assert main(["check", "cases/", "--jobs", "1"]) in (1, 3)
    out = capsys.readouterr().out
    assert "(s)" not in out
    assert not re.search(r"\b1 (clocks|codes|sets|rows|bits)\b", out)
    assert not re.search(r"\b([02-9]|\d\d+) (clock|code|set|row|bit)\b(?! of)", out)
    e = _error(tmp_path, "design a\n  in x\n  out y = x\nend\ncheck c of a\n  code y\nend\n")  # any error
    assert "(s)" not in e.message


def test_an_sr_fault_names_the_flop_not_expected_equals_got(capsys):
    r = next(r for r in load("cases/cip_valves_fault.cnl").check("cip").run(timeout=60) if r.claim == "count")
    assert r.status == "refuted" and r.details["fault"] == "v[1]"
    text = "\n".join(r.evidence)
    assert "v[1]" in text and "s = 1" in text and "r = 1" in text
    for line in r.evidence:
        m = re.match(r"expected (.*), got (.*)$", line)
        assert not (m and m.group(1) == m.group(2)), line


def test_equal_after_prints_the_differing_output_values():
    r = next(r for r in load("cases/sixpack_rework_fault.cnl").check("rework").run(timeout=60) if r.line == 54)
    assert r.status == "refuted"
    values = r.details["output_values"]
    assert set(values) == set(r.details["outputs_differ"]) == {"full"}
    pair = values["full"]
    assert sorted(pair.values()) == [0, 1]
    # the values are printed, each beside its design's name
    shown = [line for line in r.evidence if "full" in line and "sixpack_d" in line and "sixpack_rework" in line]
    assert shown and "0" in shown[-1] and "1" in shown[-1]


def test_compare_counts_what_it_lists(tmp_path, capsys):
    old = tmp_path / "old.cnl"
    new = tmp_path / "new.cnl"
    old.write_text(VENTS, encoding="utf-8")
    # NEW: one gate edited (code 1 now steps to 0, so the count claim fails) and one claim more
    edited = VENTS.replace("{v[0], !v[1] & !v[0]}", "{0, !v[1] & !v[0]}")
    edited = edited.replace("  recover\n", "  recover\n  recover when reset\n", 1)
    assert edited != VENTS
    new.write_text(edited, encoding="utf-8")
    assert main(["compare", str(old), str(new)]) == 1
    lines = capsys.readouterr().out.strip().splitlines()
    last = lines[-1]
    m = re.match(r"(\d+) differences?: ", last)
    assert m, last
    counted = int(m.group(1))
    diff_lines = [l for l in lines[:-1] if re.match(r"design \S+: (differs|only in)", l)
                  or re.match(r"claim .*: proved in OLD, \w+ in NEW", l)]
    assert counted == len(diff_lines) == 2
    others = [l for l in lines[:-1] if re.match(r"claim .*(only in|in OLD, proved in NEW)", l)]
    m2 = re.search(r"(\d+) other verdict changes?", last)
    assert others and m2 and int(m2.group(1)) == len(others)


def test_cut_name_lists_in_equal_evidence_say_how_many(tmp_path):
    from checker.claims.equal import _names
    names = [f"o{k}" for k in range(9)]
    text = _names(names)
    assert "6 of 9" in text and "o5" in text and "o6" not in text
    assert _names(names[:3]) == "o0, o1, o2"


def test_bcd_codes_read_in_hex_by_default(capsys):
    # a BCD code's hex digits are its decimal digits: 160 = 0xA0, 176 = 0xB0 (positional notation)
    assert main(["check", "cases/pallet_tally.cnl", "--jobs", "1"]) == 0
    out = capsys.readouterr().out
    assert "0xA0 -> 0xA1" in out and "0xA9 -> 0xB0" in out and "0b10100000" not in out
    assert main(["check", "cases/pallet_tally.cnl", "--jobs", "1", "--radix", "bin"]) == 0
    assert "0b10100000 -> 0b10100001" in capsys.readouterr().out
    assert main(["map", "cases/pallet_tally.cnl", "tally"]) == 0
    assert "0xA0 -> 0xA1" in capsys.readouterr().out
