"""The table of verdicts that ``check`` prints: a header on every column, claims labelled as
written, file names short, and rows that fit the terminal (read from COLUMNS here)."""

from __future__ import annotations

import os

import pytest

from checker.claims.result import PROVED, Result
from checker.cli import main
from checker.report.text import format_results, result_table, short_names

TWO_RECOVERS = """
# a conveyor-belt tally for a parcel depot: counts 0 .. 5 while `tick`, back to 0 on `reset`
design tally
  in tick, reset
  flop q[2:0] : D (d = mux(reset, mux(tick, q, {q[2] ^ (q[1] & q[0]), q[1] ^ q[0], !q[0]}), 0))
end
check belt of tally
  code q
  count 0 .. 5
  load 0 when reset
  hold when !tick
  recover within 4
  recover when reset
end
"""


def _table(out: str) -> list[str]:
    lines = out.splitlines()
    start = next(i for i, l in enumerate(lines) if l.startswith("verdict"))
    end = next(i for i in range(start, len(lines)) if not lines[i].strip())
    return lines[start:end]


@pytest.mark.parametrize("columns", [80, 200])
def test_table_fits_the_terminal_and_labels_claims(tmp_path, monkeypatch, capsys, columns):
    p = tmp_path / "tally.cnl"
    p.write_text(TWO_RECOVERS)
    monkeypatch.chdir(tmp_path)
    monkeypatch.setenv("COLUMNS", str(columns))
    rc = main(["check", "tally.cnl", os.path.join(os.path.dirname(__file__), "..", "cases", "demo.cnl")])
    out = capsys.readouterr().out
    table = _table(out)
    assert all(len(l) <= columns for l in table), [l for l in table if len(l) > columns]
    header = table[0].split()
    if columns >= 200:
        assert header == ["verdict", "file", "check", "claim", "line", "time", "summary"]
    else:  # a header on every column shown; the summary may move under its row
        assert header[:6] == ["verdict", "file", "check", "claim", "line", "time"]
    body = "\n".join(table)
    assert "recover within 4" in body and "recover when reset" in body
    assert " tally.cnl " in body  # relative to the current folder
    assert "equal case_count_d after clr" in body or "equal case_count_..." in body
    assert rc in (0, 1)


def _res(file, claim="recover", text="", summary="no lockout; worst 3 clock(s)"):
    return Result(file=file, check="c", claim=claim, line=7, status=PROVED, summary=summary, text=text)


def test_far_files_are_named_by_their_shortest_distinct_tail(tmp_path, monkeypatch):
    deep = tmp_path / "a" / "b" / "c"
    deep.mkdir(parents=True)
    monkeypatch.chdir(deep)  # every file below is more than two folders up from here
    a = "/opt/venv/lib/python3.11/site-packages/countersign/cases/demo.cnl"
    b = "/srv/x/other/demo.cnl"
    c = "/srv/x/other/kiln.cnl"
    names = short_names([a, b, c])
    assert names[c] == "kiln.cnl"
    assert names[a] == os.path.join("cases", "demo.cnl") and names[b] == os.path.join("other", "demo.cnl")
    assert "site-packages" not in format_results([_res(a)])


def test_cut_summaries_are_announced():
    long = "a summary " * 30
    rows, cut = result_table([_res("a.cnl", text="recover within 4", summary=long)], columns=100)
    assert cut and all(len(l) <= 100 for l in rows) and rows[2].endswith("...")
    rows, cut = result_table([_res("a.cnl", text="recover within 4", summary="short")], columns=100)
    assert not cut
    text = format_results([_res("a.cnl", summary=long)], columns=100)
    assert "cut to fit 100 columns" in text
    assert "cut to fit" not in format_results([_res("a.cnl", summary=long)])  # not a terminal: whole


def test_near_files_are_relative(tmp_path, monkeypatch):
    (tmp_path / "w" / "sub").mkdir(parents=True)
    monkeypatch.chdir(tmp_path / "w")
    names = short_names([str(tmp_path / "w" / "sub" / "k.cnl"), str(tmp_path / "j.cnl")])
    assert list(names.values()) == [os.path.join("sub", "k.cnl"), os.path.join("..", "j.cnl")]
