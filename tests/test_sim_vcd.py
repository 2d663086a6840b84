"""The VCD of `sim` read back with an independent VCD parser (vcdvcd, a test-only dependency):
each flop changes just after a rising edge of the dump's clock, never at a falling one, and
``$date`` holds the day the dump was written (issue 11, point 11)."""

from __future__ import annotations

import json
import signal
from datetime import datetime, timedelta, timezone

from vcd.reader import TokenKind, tokenize

# vcdvcd sets SIGPIPE to its default action when imported (for its own command line). In the
# test process that would let any write to a closed pipe kill the whole pytest run with exit
# 141 and no report, so the handler Python installed is put back at once.
_SIGPIPE = signal.getsignal(signal.SIGPIPE)
from vcdvcd import VCDVCD  # noqa: E402
signal.signal(signal.SIGPIPE, _SIGPIPE)

from checker.cli import main

# Greenhouse vent sequencer: the vent steps through four positions while `go`.
VENT = """\
design vent
  in go
  flop p[1:0] : D (d = mux(go, p, {p[1] ^ p[0], !p[0]}))
  out wide = p[1] & p[0]
end
"""

# A ripple stage pair (asynchronous): the second bit toggles on the first one's falling edge.
RIPPLE = """\
design ripple
  flop a : T (t = 1)
  flop b : T (t = 1) clock fall a
end
"""


def _signal(v: VCDVCD, suffix: str) -> list[tuple[int, int]]:
    ref = next(r for r in v.references_to_ids if r.split("[")[0].endswith("." + suffix))
    return [(int(t), int(x, 2)) for t, x in v[ref].tv]


def _edges(clk: list[tuple[int, int]], value: int) -> list[int]:
    return [t for (t, x), (_, before) in zip(clk[1:], clk) if x == value and before != value]


def test_flops_change_just_after_the_rising_edge(write, tmp_path, capsys):
    path = write(VENT)
    out = tmp_path / "vent.vcd"
    assert main(["sim", path, "vent", "--set", "go=1", "--cycles", "6", "--vcd", str(out), "--json"]) == 0
    codes = [e["code"] for e in json.loads(capsys.readouterr().out)["trace"]]
    v = VCDVCD(str(out))
    clk = _signal(v, "clk")
    rises, falls = _edges(clk, 1), _edges(clk, 0)
    assert len(rises) == 6 and len(falls) == 6
    p = _signal(v, "p")
    changes = [t for (t, x), (_, before) in zip(p[1:], p) if x != before]
    assert changes, "the vent moves every clock"
    for t in changes:
        last_rise = max(r for r in rises if r <= t)  # some rising edge comes before every change
        assert 0 < t - last_rise < min(f - last_rise for f in falls if f > last_rise), (t, rises, falls)
        assert t not in falls
    # the value after each rising edge is the next code of the run
    after = [[x for tt, x in p if tt <= r + 1][-1] for r in rises]
    assert after == codes[1:]


def test_ripple_firings_follow_the_rising_edge(write, tmp_path):
    path = write(RIPPLE)
    out = tmp_path / "ripple.vcd"
    assert main(["sim", path, "ripple", "--cycles", "4", "--vcd", str(out)]) == 0
    v = VCDVCD(str(out))
    rises = _edges(_signal(v, "clk"), 1)
    for name in ("a", "b"):
        sig = _signal(v, name)
        for t, _ in sig[1:]:
            last_rise = max(r for r in rises if r <= t)
            assert t > last_rise, (name, t, rises)  # a firing takes at least one unit after its edge


def test_date_is_the_real_date(write, tmp_path):
    path = write(VENT)
    out = tmp_path / "vent.vcd"
    assert main(["sim", path, "vent", "--cycles", "1", "--vcd", str(out)]) == 0
    with open(out, "rb") as f:
        dates = [tok.data for tok in tokenize(f) if tok.kind is TokenKind.DATE]
    assert len(dates) == 1
    now = datetime.now(timezone.utc)
    days = {(now + timedelta(days=d)).strftime("%Y-%m-%d") for d in (-1, 0)}  # the run may cross midnight
    assert any(day in dates[0] for day in days), dates


def test_importing_the_vcd_reader_leaves_sigpipe_ignored():
    """A full run once died with exit 141 at a random test: vcdvcd had made SIGPIPE fatal."""
    assert signal.getsignal(signal.SIGPIPE) == signal.SIG_IGN
