"""What every claim shares: the rules as a circuit, trace replay, result records."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Optional, Sequence

from ..elab import Check, Claim, Design
from ..elab.reference import Reference
from ..model import FALSE, TRUE
from ..engines.sat import DEFAULT_SOLVER
from ..model.events import EventModel, packed, unpacked
from ..model.simulate import code_value, state_of_code
from .result import Result, TraceEntry
from ..errors import InputError


@dataclass
class Options:
    """How to run claims: SAT solver name, per-claim timeout (s), engine choice."""

    solver: str = DEFAULT_SOLVER
    timeout: Optional[float] = None
    engine: str = "auto"  # auto, sat, explicit
    isolate: bool = False  # run every claim in a child process, so that Ctrl-C ends it cleanly
    radix: str = "dec"  # how evidence lines show codes: auto, dec, bin, hex (see code_text); the CLI says auto
    parallel: int = 1  # claims running at once on this machine (check --jobs): they share its memory


CODE_RADIXES = ("auto", "dec", "bin", "hex")
"""How readable reports show codes; ``auto`` is binary up to :data:`AUTO_BINARY_WIDTH` bits, hex above."""

AUTO_BINARY_WIDTH = 8


def code_radix(width: int, radix: str = "auto") -> str:
    """The radix ``radix`` stands for at a code width of ``width`` bits (``auto`` resolved)."""
    if radix in ("dec", "bin", "hex"):
        return radix
    if radix == "bcd":
        return "hex"
    return "bin" if width <= AUTO_BINARY_WIDTH else "hex"


def check_radix(check: Check, radix: str) -> str:
    """The radix a check's codes are shown in: ``auto`` is ``bcd`` for a ``count bcd`` check, that
    is hex, whose digits are its decimal digits (``0x59`` is 59), with no decimal of the binary
    value beside it (89 would read as a count); otherwise ``radix`` unchanged."""
    if radix == "auto" and check.sequence is not None and check.sequence.kind == "bcd":
        return "bcd"  # shown as hex, without the binary value's decimal beside it
    return radix


def code_text(code: int, width: int, radix: str = "auto") -> str:
    """A code as the language writes a literal of it: ``12``, ``0b1100`` (``width`` digits) or
    ``0x0C`` (a digit per 4 bits of ``width``), so that it can be pasted into ``--from`` or ``count``."""
    r = code_radix(width, radix)
    if r == "dec":
        return str(code)
    if r == "bin":
        return "0b" + format(code, f"0{max(width, 1)}b")
    return "0x" + format(code, f"0{max(1, (width + 3) // 4)}X")


def decimal_helps(code: int, width: int, radix: str = "auto") -> bool:
    """Whether the decimal beside ``code_text`` tells a reader more than the digits already do."""
    return shows_decimal(width, radix) and code >= (2 if code_radix(width, radix) == "bin" else 10)


def shows_decimal(width: int, radix: str = "auto") -> bool:
    """Whether tables give a code's decimal value in a column beside it: not when the code is
    already decimal, nor for BCD codes, whose hex digits are the decimal digits."""
    return code_radix(width, radix) != "dec" and radix != "bcd"


def code_and_decimal(code: int, width: int, radix: str = "auto") -> str:
    """``code_text`` with the decimal beside it where that helps: ``0b1010 (10)``, ``0x3F (63)``."""
    t = code_text(code, width, radix)
    return f"{t} ({code})" if decimal_helps(code, width, radix) else t


def run_text(codes: Sequence[int], limit: int = 24, fmt: Callable[[int], str] = str) -> str:
    """A run of codes, ``a -> b -> c``; a long one shows its ends and says how many it left out."""
    if len(codes) <= limit:
        return " -> ".join(fmt(c) for c in codes)
    head = " -> ".join(fmt(c) for c in codes[:limit // 2])
    tail = " -> ".join(fmt(c) for c in codes[-limit // 2:])
    return f"{head} -> ... ({len(codes) - limit} more) ... -> {tail}"


SETS_SHOWN = 8
"""Locked sets a readable report lists (``set_lines``); the JSON report lists them all."""

CODES_SHOWN = 32
"""Codes of one locked set a readable report lists."""


def set_lines(sets, fmt: Callable[[int], str] = str, limit: int = SETS_SHOWN,
              more: str = "--json lists every one", total: Optional[int] = None) -> list[str]:
    """The first ``limit`` sets of codes (lists or arrays) as readable lines, each cut short when
    long; every cut says how much was shown of how much, and ``more`` says how to see the rest.
    ``total``: the number of sets when ``sets`` lists only the first of them."""
    lines = []
    total = len(sets) if total is None else total
    for s in sets[:limit]:
        cut = len(s) > CODES_SHOWN
        lines.append("  {" + ", ".join(fmt(int(c)) for c in s[:CODES_SHOWN])
                     + (f", ... ({CODES_SHOWN} of {len(s)} codes shown)" if cut else "") + "}")
    if total > limit:
        lines.append(f"  ({limit} of {total} locked sets shown; {more})")
    return lines


class ReplayError(AssertionError):
    """A counterexample that the simulator does not reproduce: a bug, never printed."""


def rule_target(check: Check, rule) -> list[int]:
    """The next code a rule names, as literals over the code bits, least significant first."""
    seq = check.sequence
    assert seq is not None
    aig = check.design.model.aig
    cur = check.code_lits()
    if rule.kind == "hold":
        return cur
    if rule.kind == "step":
        return seq.next_bits(aig, cur)
    if rule.kind == "back":
        return seq.prev_bits(aig, cur)
    if rule.load_const is not None:
        return [TRUE if (rule.load_const >> i) & 1 else FALSE for i in range(len(cur))]
    assert rule.load_bits is not None
    return list(reversed(rule.load_bits))


def regions(check: Check) -> list[tuple[Optional[int], int, list[int]]]:
    """The rules' regions of the inputs, in written order.

    Each entry is (rule index, or None for the step a block without ``step``
    rules must take when no rule holds; the region's literal over the inputs;
    the next code it requires, lsb first). A region is where that rule is the
    first whose condition holds; regions are disjoint, and inputs outside all
    of them are undecided. Empty regions are left out.
    """
    aig = check.design.model.aig
    none_before = TRUE
    out: list[tuple[Optional[int], int, list[int]]] = []
    for k, r in enumerate(check.rules):
        out.append((k, aig.and_(none_before, r.cond), rule_target(check, r)))
        none_before = aig.and_(none_before, r.cond ^ 1)
    if not any(r.kind == "step" for r in check.rules):
        assert check.sequence is not None
        out.append((None, none_before, check.sequence.next_bits(aig, check.code_lits())))
    return [x for x in out if x[1] != FALSE]


def rule_spec(check: Check) -> tuple[int, list[int]]:
    """The count claim's reference as a circuit over the check's code bits.

    Returns ``(decided, expected)``: ``decided`` is the literal that is 1 when
    the rules decide the next code (some rule's condition holds, or none does
    and the block has no ``step`` rule, so the counter must step);
    ``expected`` the decided next code, least significant bit first.
    """
    aig = check.design.model.aig
    assert check.sequence is not None
    expected = check.sequence.next_bits(aig, check.code_lits())
    decided = FALSE
    for _, region, target in reversed(regions(check)):
        expected = [aig.mux(region, e, t) for e, t in zip(expected, target)]
        decided = aig.or_(decided, region)
    return decided, expected


def stepping(check: Check) -> int:
    """Literal over the inputs: 1 when the rules make the counter step."""
    aig = check.design.model.aig
    return aig.or_all(region for k, region, _ in regions(check)
                      if k is None or check.rules[k].kind == "step")


def reference_of(design: Design) -> Optional[Reference]:
    """The syntax-tree evaluator of ``design``, built once per design.

    None when the design has no syntax blocks (it was not read from .cnl text).
    Asynchronous designs get one too: replay compares its :meth:`Reference.sample`
    and clock sources with the graph at every firing.
    """
    cache = design.__dict__
    if "_reference" not in cache:
        ref: Optional[Reference] = None
        if design.name in design.source:
            try:
                ref = Reference(design.source, design.name)
            except NotImplementedError:
                ref = None
        cache["_reference"] = ref
    return cache["_reference"]


def _first_difference(what: str, names: Sequence[str], graph: dict[str, int], ref: dict[str, int]) -> Optional[str]:
    for n in names:
        if graph.get(n) != ref.get(n):
            return f"{what} {n} is {graph.get(n)} in the graph, {ref.get(n)} from the syntax tree"
    return None


def replay_events(design: Design, idx: Sequence[int], trace: Sequence[TraceEntry]) -> None:
    """Re-fire the recorded order of every clock of an asynchronous design's trace.

    Each firing must be pending at its turn (by the event model's rules) and
    give the recorded code; the clock must then have settled in the next
    entry's code (an entry with no next one shows an order that never settles,
    which must come back to a cascade it has already met).
    """
    model = design.model
    index = {n: i for i, n in enumerate(model.states)}
    ref = reference_of(design)
    if ref is not None:
        _compare_clocks(design, ref)

    def to_state(c: int) -> int:
        return packed(idx, c)

    def to_code(s: int) -> int:
        return unpacked(idx, s)

    for k, entry in enumerate(trace):
        if entry.events is None:
            if k + 1 < len(trace):
                raise ReplayError(f"clock {k} of an asynchronous trace has no recorded order of firings")
            continue
        given = entry.inputs or {}
        em = EventModel(model, {i: given.get(i, 0) & 1 for i in model.inputs})
        state = em.edge(to_state(entry.code))
        seen = {state.key()}
        checked: set[int] = set()
        for j, e in enumerate(entry.events):
            if ref is not None and state.code not in checked:
                checked.add(state.code)
                diff = _sample_difference(model, ref, em, state.code)
                if diff is not None:
                    raise ReplayError(f"{design.name} disagrees with its own source at clock {k}, before firing "
                                      f"{j} ({e['flop']} -> {e['value']}), code {to_code(state.code)}: {diff}")
            f = index[e["flop"]]
            if not any(c.flop == f and c.value == e["value"] for c in state.pending):
                raise ReplayError(f"clock {k}: {e['flop']} -> {e['value']} is not pending at its turn")
            state, firing = em.fire(state, f)
            if to_code(state.code) != e["code"] or firing.depth != e["depth"]:
                raise ReplayError(f"clock {k}: firing {e['flop']} gives code {to_code(state.code)} at depth "
                                  f"{firing.depth}, the trace says {e['code']} at depth {e['depth']}")
            if state.key() in seen and state.pending:
                break
            seen.add(state.key())
        if ref is not None and state.code not in checked:
            diff = _sample_difference(model, ref, em, state.code)
            if diff is not None:
                raise ReplayError(f"{design.name} disagrees with its own source at clock {k}, after its last "
                                  f"firing, code {to_code(state.code)}: {diff}")
        if k + 1 < len(trace):
            if state.pending:
                raise ReplayError(f"clock {k}: the recorded order leaves changes pending")
            if to_code(state.code) != trace[k + 1].code:
                raise ReplayError(f"clock {k}: the order settles in {to_code(state.code)}, the trace says "
                                  f"{trace[k + 1].code}")
        elif not state.pending:
            raise ReplayError(f"clock {k}: the last recorded order settles, so it does not show a cascade "
                              f"that never settles")


def _compare_clocks(design: Design, ref: Reference) -> None:
    """Every flop's clock in the graph (``Model.clocks``) against the syntax tree's."""
    model = design.model
    if ref.states != model.states or ref.inputs != model.inputs:
        raise ReplayError(f"{design.name}: the graph and the syntax tree name different flop or input bits")
    try:
        sources = ref.clock_sources()
    except InputError as e:
        raise ReplayError(f"{design.name}: the graph accepted a clock that the syntax tree refuses: {e}") from None
    clocks = model.clocks or [None] * len(model.states)
    for name, c in zip(model.states, clocks):
        graph = None if c is None else (c[0], model.states[c[1]])
        if graph != sources[name]:
            say = lambda x: "the system clock" if x is None else f"{x[0]} of {x[1]}"  # noqa: E731
            raise ReplayError(f"{design.name} disagrees with its own source: flop {name} is clocked by "
                              f"{say(graph)} in the graph, by {say(sources[name])} from the syntax tree")


def _sample_difference(model, ref: Reference, em: EventModel, code: int) -> Optional[str]:
    """The first flop whose sampled next value, asynchronous clear or preset at ``code`` (state
    indices) differs between the graph's event model and the syntax tree; None if none does."""
    nxt, clr, pre = em.eval(code)
    state = {n: (code >> i) & 1 for i, n in enumerate(model.states)}
    r_nxt, r_clr, r_pre = ref.sample(state, em.inputs)
    for what, graph, tree in (("sampled next value", nxt, r_nxt), ("asynchronous clear", clr, r_clr),
                              ("asynchronous preset", pre, r_pre)):
        for i, n in enumerate(model.states):
            if graph[i] != tree[n]:
                return f"{what} of {n} is {graph[i]} in the graph, {tree[n]} from the syntax tree"
    return None


def replay(design: Design, check: Check, trace: Sequence[TraceEntry], code: Optional[Sequence[int]] = None) -> None:
    """Re-run ``trace`` in the simulator and in the reference; raise ReplayError if anything differs.

    Clock 0 starts at the trace's first code; each entry's inputs drive the
    step to the next entry, whose code must be what the simulator computes.
    At every clock the graph's next state, outputs and SR faults must also
    equal those that :class:`checker.reference.Reference` computes from the
    design's syntax tree, so that a wrong equation in elaboration cannot be
    proved and replayed by the same graph. ``code`` gives the state indices of
    the code in ``design`` (default: the check's code, for the check's own
    design).
    """
    model = design.model
    idx = list(check.code if code is None else code)
    if not model.synchronous:
        replay_events(design, idx, trace)
        return
    ref = reference_of(design)
    state = state_of_code(model, idx, trace[0].code)
    for k in range(len(trace) - 1):
        given = trace[k].inputs or {}
        inp = {i: given.get(i, 0) & 1 for i in model.inputs}
        nxt, outs, faults = model.step(state, inp)
        if ref is not None:
            r_nxt, r_outs, r_faults = ref.step(state, inp)
            diff = (_first_difference("next state bit", model.states, nxt, r_nxt)
                    or _first_difference("output", model.outputs, outs, r_outs)
                    or (None if sorted(faults) == sorted(r_faults) else
                        f"SR faults are {sorted(faults)} in the graph, {sorted(r_faults)} from the syntax tree"))
            if diff is None and (set(ref.states) != set(model.states) or set(ref.outputs) != set(model.outputs)):
                diff = "the graph and the syntax tree name different flop or output bits"
            if diff is not None:
                raise ReplayError(f"{design.name} disagrees with its own source at clock {k} "
                                  f"(the step to clock {k + 1}): {diff}")
        state = nxt
        got = code_value(model, idx, state)
        if got != trace[k + 1].code:
            raise ReplayError(f"trace does not replay in {design.name}: clock {k + 1} gives {got}, trace says {trace[k + 1].code}")


def inputs_text(check: Optional[Check], inputs: Optional[dict[str, int]]) -> str:
    """Inputs (or outputs) for people: with a check, its input vectors as one binary
    number each; every other bit as NAME=0|1; ``-`` when there are none."""
    if not inputs:
        return "-"
    done: set[str] = set()
    parts = []
    vectors = {} if check is None else check.design.input_vectors
    for name, bits in vectors.items():
        if len(bits) == 1 and bits[0] == name:
            parts.append(f"{name}={inputs.get(name, 0)}")
        else:
            parts.append(f"{name}=0b" + "".join(str(inputs.get(b, 0)) for b in bits))
        done.update(bits)
    parts += [f"{n}={v}" for n, v in inputs.items() if n not in done]
    return " ".join(parts) if parts else "-"


def trace_lines(check: Optional[Check], trace: list[TraceEntry], width: Optional[int] = None,
                radix: str = "auto") -> list[str]:
    """A trace as a small table: clock, code (in ``radix``, see :func:`code_text`) and its
    decimal unless the radix is decimal, the other design's code (equal claims), inputs.
    ``width`` defaults to the check's code width."""
    w = width if width is not None else check.width if check is not None else 1
    other = any(t.other_code is not None for t in trace)
    dec = shows_decimal(w, radix)
    rows = [("clock", "code") + (("decimal",) if dec else ()) + (("other",) if other else ()) + ("inputs",)]
    for t in trace:
        rows.append((str(t.clock), code_text(t.code, w, radix)) + ((str(t.code),) if dec else ())
                    + (("" if t.other_code is None else code_text(t.other_code, w, radix),) if other else ())
                    + ("" if t.inputs is None else inputs_text(check, t.inputs),))
    widths = [max(len(r[k]) for r in rows) for k in range(len(rows[0]))]
    return ["  ".join(c.ljust(widths[k]) for k, c in enumerate(r)).rstrip() for r in rows]


def make_result(check: Check, claim: Claim, status: str, summary: str = "", **kw) -> Result:
    """A :class:`Result` for ``claim`` of ``check`` (file, names and line filled in)."""
    kw.setdefault("text", claim.text)
    return Result(file=claim.pos.file, check=check.name, claim=claim.kind, line=claim.pos.line,
                  status=status, summary=summary, **kw)
