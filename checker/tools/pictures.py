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
from ..model.simulate import state_of_code
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

    ``None`` in a list is a value the trace leaves open (the last entry's
    inputs). ``transients[i]``: in an asynchronous design, the codes between
    the edge that ends clock i and settling, in firing order, each as
    ``{"code", "outputs", "flop", "depth"}`` (the last is clock i + 1's code).
    """

    width: int
    codes: list[int]
    other_codes: Optional[list[Optional[int]]]
    inputs: dict[str, list[Optional[int]]]
    outputs: dict[str, list[Optional[int]]]
    input_vectors: dict[str, list[str]]
    output_vectors: dict[str, list[str]]
    note: str = ""
    transients: dict[int, list[dict]] = field(default_factory=dict)


def _field(e, name):
    return e.get(name) if isinstance(e, dict) else getattr(e, name, None)


def _events(tr) -> dict[int, list]:
    """Each trace entry's firings (the contract's ``events``), keyed by the clock whose edge they follow.

    An entry's events end in the next entry's code when they are the cascade
    after its edge, or in its own code when they are the cascade that led to
    it; either way they are filed under the clock whose edge started them.
    """
    out: dict[int, list] = {}
    codes = [t.code for t in tr]
    for i, t in enumerate(tr):
        ev = _field(t, "events") or (t.to_json().get("events") if hasattr(t, "to_json") else None)
        if not ev or not isinstance(ev, (list, tuple)):
            continue
        last = _field(ev[-1], "code")
        if i + 1 < len(codes) and last == codes[i + 1]:
            out[i] = list(ev)
        elif i > 0 and last == codes[i]:
            out[i - 1] = list(ev)
    return out


def trace_signals(chk: Check, result: Result) -> Signals:
    """The signals of ``result``'s trace on ``chk``'s design.

    Outputs are evaluated on the model at each code with that clock's inputs
    (the code is the whole state, so they are what a run shows); in an
    asynchronous design, also at each code seen while the design settles.
    """
    assert result.trace, "a trace to draw"
    d = chk.design
    m = d.model
    tr = result.trace
    inputs = {b: [None if t.inputs is None else int(t.inputs.get(b, 0)) for t in tr] for b in m.inputs}
    other = [t.other_code for t in tr] if any(t.other_code is not None for t in tr) else None
    sig = Signals(chk.width, [t.code for t in tr], other, inputs, {}, dict(d.input_vectors), dict(d.output_vectors))

    def outputs_at(code: int, given: Optional[dict]) -> dict:
        if given is None:
            return {o: None for o in m.outputs}
        inp = {i: int(given.get(i, 0)) & 1 for i in m.inputs}
        return {o: int(v) for o, v in m.step(state_of_code(m, chk.code, code), inp)[1].items()}

    per_entry = [outputs_at(t.code, t.inputs) for t in tr]
    sig.outputs = {o: [row.get(o) for row in per_entry] for o in m.outputs}
    try:
        for i, ev in _events(tr).items():
            sig.transients[i] = [{"code": int(_field(e, "code")), "flop": _field(e, "flop"),
                                  "depth": _field(e, "depth"),
                                  "outputs": outputs_at(int(_field(e, "code")), tr[i].inputs)} for e in ev]
    except (TypeError, ValueError, KeyError):  # events in a shape this report does not know: leave them out
        sig.transients = {}
        sig.note = "the trace's settling events are not drawn (an unknown shape)"
    return sig
