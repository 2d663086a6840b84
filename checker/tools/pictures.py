"""What the HTML report draws, as plain data: a state picture per check, the signals of every trace.

:func:`check_picture` computes a check's unused-code map and state graph
(the same :func:`~checker.tools.codemap.recovery_map` and
:func:`~checker.tools.stategraph.state_graph` the ``map`` command uses), on
the explicit engine only and within the run's timeout: where the explicit
engine cannot take the check, or runs out, the picture falls back to what
the check's claims found. :func:`trace_signals` replays a trace through the
cycle simulator to add the outputs a waveform shows.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Optional

from ..claims.common import Options
from ..claims.result import Result
from ..elab import Check
from ..engines.budget import run_bounded
from ..errors import InputError
from ..model.simulate import code_value, run, state_of_code
from .codemap import recovery_map
from .stategraph import StateGraph, state_graph

WORST_PATHS = 5
"""Map entries kept for a picture's list of slowest unused codes."""


@dataclass
class CheckPicture:
    """One check as the report draws it: the map document and state graph when they could be made."""

    file: str
    check: str
    design: str
    width: int
    sequence_length: Optional[int]
    doc: Optional[dict] = None  # the map document (``map --json`` shape), at most WORST_PATHS entries
    graph: Optional[StateGraph] = None
    note: str = ""  # why there is no map, when there is none
    claims: list[Result] = field(default_factory=list)  # this check's results, for the fallback summary


def _work(chk: Check, opts: Options, limit: int):
    def work(budget):
        doc = recovery_map(chk, limit=limit, opts=opts, budget=budget)
        return dict(doc), (state_graph(chk, doc) if doc.get("status") != "open" else None)
    return work


def check_picture(chk: Check, opts: Options, results: Optional[list[Result]] = None,
                  limit: int = WORST_PATHS) -> CheckPicture:
    """The map and state graph of ``chk`` by exhaustive search, bounded by ``opts.timeout``.

    Never raises for a check the explicit engine cannot take (too wide, too
    many inputs, no input meeting the condition): ``note`` says why and the
    report draws a summary from the claims instead.
    """
    pic = CheckPicture(chk.pos.file, chk.name, chk.design.name, chk.width,
                       None if chk.sequence is None else chk.sequence.length(), claims=list(results or []))
    if chk.sequence is None:
        pic.note = "no count line: no sequence to draw"
        return pic
    try:
        value, _, finished = run_bounded(_work(chk, replace(opts, engine="explicit"), limit), opts.timeout)
    except InputError as e:
        pic.note = e.message
        return pic
    if not finished or value[0].get("status") == "open":
        pic.note = f"the exhaustive map ran out of time ({opts.timeout:g} s)" if opts.timeout else \
            "the exhaustive map did not finish"
        return pic
    pic.doc, pic.graph = value
    return pic


@dataclass
class Signals:
    """A trace as signals per clock: inputs and outputs by bit, the code, the other design's code.

    ``None`` in a list is a value the trace leaves open (the last entry's inputs).
    """

    width: int
    codes: list[int]
    other_codes: Optional[list[Optional[int]]]
    inputs: dict[str, list[Optional[int]]]
    outputs: dict[str, list[Optional[int]]]
    input_vectors: dict[str, list[str]]
    output_vectors: dict[str, list[str]]
    note: str = ""


def trace_signals(chk: Check, result: Result) -> Signals:
    """The signals of ``result``'s trace on ``chk``'s design, outputs from the cycle simulator.

    When the simulator does not reproduce the trace's codes (a trace from
    another model of time), the outputs are left out and ``note`` says so.
    """
    assert result.trace, "a trace to draw"
    d = chk.design
    m = d.model
    tr = result.trace
    inputs = {b: [None if t.inputs is None else int(t.inputs.get(b, 0)) for t in tr] for b in m.inputs}
    other = [t.other_code for t in tr] if any(t.other_code is not None for t in tr) else None
    sig = Signals(chk.width, [t.code for t in tr], other, inputs, {}, dict(d.input_vectors), dict(d.output_vectors))
    steps = run(m, state_of_code(m, chk.code, tr[0].code), [t.inputs or {} for t in tr], len(tr) - 1)
    if any(code_value(m, chk.code, s.state) != t.code for s, t in zip(steps, tr)):
        sig.note = "outputs not shown: the cycle simulator does not reproduce this trace's codes"
        return sig
    sig.outputs = {o: [None if t.inputs is None else int(s.outputs.get(o, 0)) for s, t in zip(steps, tr)]
                   for o in m.outputs}
    return sig
