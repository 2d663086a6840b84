"""One claim's SAT problem as a DIMACS CNF file that any solver can read.

The file holds exactly the formula the count or always engine solves, with
its assumptions turned into clauses: for a count claim one selector variable
per question implies that question's assumptions, and one clause asks for
some selector. A comment header says what SAT and UNSAT mean and names the
variables: ``NAME@0`` is a signal in the checked clock, ``NAME@1`` the flop
bit after the edge, ``!NAME@0`` a variable that is the complement of NAME.
"""

from __future__ import annotations

from ..elab import Check, Claim
from ..fileio import atomic_output, shown, write_output
from ..model import TRUE, Aig
from .event_aiger import EVENT_KINDS, event_circuit
from .netlists import Circuit, aiger_bytes
from ..engines.miter import paired_miter
from ..engines.sat import DEFAULT_SOLVER, Sat, Unrolling
from ..claims.always import build_always
from ..claims.count import build_count
from ..claims.recover import claim_condition


def _name_signals(check: Check, frame: Unrolling) -> None:
    """Record a name for every solver variable that is a named signal at clock 0
    or a next-state bit, unless it already has one."""
    model = check.design.model
    sat = frame.sat
    env = frame.enc.envs[frame.frames[0]]

    def name(var: int, text: str) -> None:
        v = abs(var)
        if v != sat.true and v not in sat.names:
            sat.names[v] = text if var > 0 else "!" + text

    for sig, lit in model.signals.items():
        node = lit >> 1
        if node in env:
            name(env[node] if not lit & 1 else -env[node], f"{sig}@0")
    for s, lit in zip(model.states, model.next_lits):
        node = lit >> 1
        if node in env:
            name(env[node] if not lit & 1 else -env[node], f"{s}@1")


def _name_next(check: Check, sat: Sat, lits: list[int], pattern: str) -> None:
    """Name the solver variables of a next code (lsb first) by flop bit."""
    states = check.design.model.states
    for i, lit in zip(reversed(check.code), lits):
        v = abs(lit)
        if v != sat.true and v not in sat.names:
            text = pattern.format(states[i])
            sat.names[v] = text if lit > 0 else "!" + text


def _header(check: Check, claim: Claim, sat_means: str, unsat_means: str) -> list[str]:
    seq = check.sequence
    code_names = [check.design.model.states[i] for i in check.code]
    return [
        f"countersign: check {check.name} of design {check.design.name}, "
        f"{claim.kind} claim at {shown(claim.pos.file)}:{claim.pos.line}",
        f"sequence: {seq.describe() if seq is not None else '-'}",
        f"code, most significant first: {' '.join(code_names)}",
        f"SAT means: {sat_means}",
        f"UNSAT means: {unsat_means}",
        "variable 1 is the constant true; NAME@0 is a signal in the clock checked, "
        "NAME@1 a flop bit after the clock edge, !NAME a complemented variable",
    ]


def export_cnf(check: Check, claim: Claim, path: str) -> dict:
    """Write the SAT problem of one count or always claim to ``path`` as DIMACS
    CNF; returns its statistics (variables, clauses, questions)."""
    if claim.kind == "recover" and claim.within is not None:
        return _recover_cnf(check, claim, path)
    if claim.kind == "equal" and claim.mode != "after":
        return _equal_cnf(check, claim, path)
    if claim.kind not in ("count", "always"):
        raise ValueError(f"a {claim.kind} claim cannot be written as CNF: only count, always, "
                         f"'recover within N' and equal claims without 'after' are one SAT question")
    if claim.kind == "count" and not check.design.model.synchronous:
        raise ValueError("the count claim of an asynchronous design is decided order by order, "
                         "not by one SAT question, so it has no CNF")
    with Sat(record=True) as sat:
        if claim.kind == "count":
            p = build_count(check, sat)
            frame = p.frame
            selectors = []
            for k, q in enumerate(p.questions):
                what = "an SR fault" if q.kind == "fault" else (
                    "the default step" if q.rule is None else f"rule {q.rule + 1} ({check.rules[q.rule].kind})")
                fixed = ", ".join(f"{n}={v}" for n, v in q.fixed.items())
                s = sat.new_var(f"question {k + 1}: {what}" + (f" with {fixed}" if fixed else ""))
                _name_next(check, sat, q.actual, f"{{}}@1 in question {k + 1}")
                _name_next(check, sat, q.expected, f"the rules' {{}}@1 in question {k + 1}")
                for a in q.assumptions:
                    sat.add([-s, a])
                # The question substituted these inputs as constants; tie their
                # variables too, so that a model read through the header is whole.
                for n, v in q.fixed.items():
                    var = frame.inputs(0)[check.design.model.inputs.index(n)]
                    sat.add([-s, var if v else -var])
                selectors.append(s)
            sat.add(selectors)
            header = _header(check, claim,
                             "refuted: some code of the sequence steps against the rules, or an SR flop "
                             "has s = r = 1 there (the true question variable says which)",
                             "proved: every code of the sequence steps as the rules say, with no SR fault")
            questions = len(p.questions)
        else:
            a = build_always(check, claim, sat)
            frame = a.frame
            for lit in a.question():
                sat.add([lit])
            header = _header(check, claim,
                             "refuted: in some code of the sequence, under some input, the property is 0",
                             "proved: the property is 1 in every code of the sequence under every input")
            questions = 1
        _name_signals(check, frame)
        with atomic_output(path) as f:  # whole or not at all
            sat.write_dimacs(f, header)
        return {"path": path, "check": check.name, "claim": claim.kind, "line": claim.pos.line,
                "vars": sat.nvars, "clauses": len(sat.log or []), "questions": questions}


def _write_cnf(check: Check, claim: Claim, sat: Sat, path: str, header: list[str], questions: int = 1) -> dict:
    with atomic_output(path) as f:  # whole or not at all
        sat.write_dimacs(f, header)
    return {"path": path, "check": check.name, "claim": claim.kind, "line": claim.pos.line,
            "vars": sat.nvars, "clauses": len(sat.log or []), "questions": questions}


def _recover_cnf(check: Check, claim: Claim, path: str) -> dict:
    """`recover within N` as one question: N + 1 clocks of unused codes, every input but the
    last meeting the claim's condition (bounded model checking, Biere et al. 1999, from any
    unused code). A run of unused codes is either one that takes longer than N clocks or,
    past N, part of a lock, so UNSAT proves the claim as the SAT engine's deepest question does."""
    if not check.design.model.synchronous:
        raise ValueError("the recover claim of an asynchronous design is decided order by order, "
                         "not by one SAT question, so it has no CNF")
    n = claim.within
    assert n is not None
    space = check.space
    with Sat(record=True) as sat:
        cond = claim_condition(check, claim, sat.name)
        un = Unrolling(space.model, sat)
        member = space.member_lit()
        for t in range(n + 1):
            sat.add([-un.lit(t, member)])
            if t < n:
                sat.add([un.lit(t, cond)])
        for t in range(n + 1):
            for s, v in zip(space.model.states, un.state(t)):
                if abs(v) != sat.true and abs(v) not in sat.names:
                    sat.names[abs(v)] = f"{s}@{t}" if v > 0 else f"!{s}@{t}"
            for i, v in zip(space.model.inputs, un.inputs(t)):
                sat.names.setdefault(abs(v), f"{i}@{t}")
        header = _header(check, claim,
                         f"refuted: a code is still unused after {n} clock(s) (NAME@t: the run at clock t)",
                         f"proved: every unused code reaches the sequence within {n} clock(s)")
        return _write_cnf(check, claim, sat, path, header)


def _equal_cnf(check: Check, claim: Claim, path: str) -> dict:
    """`equal OTHER` (every state) or `equal OTHER on sequence` as the flop-paired miter the claim
    solves: flops and inputs shared by name, SAT when some next-state bit or output differs."""
    a, b = check.design, claim.other
    assert b is not None
    on_seq = claim.mode == "sequence"
    if on_seq and check.sequence is None:
        raise ValueError("'equal ... on sequence' needs the check's count line")
    member = check.sequence.member(a.model.aig, check.code_lits()) if on_seq else None
    m = paired_miter(a.model, b.model, DEFAULT_SOLVER, member, record=True)
    try:
        m.sat.add([m.differ])
        if on_seq:
            m.sat.add([m.restrict])
        where = "in some code of the sequence" if on_seq else "in some state"
        header = _header(check, claim,
                         f"refuted: {where}, under some input, a next-state bit or an output of {a.name} and {b.name} differs",
                         f"proved: {a.name} and {b.name} have the same next state and outputs {where[3:]}")
        return _write_cnf(check, claim, m.sat, path, header)
    finally:
        m.sat.close()


# --- claims as AIGER circuits ----------------------------------------------------------
# Each claim becomes a circuit whose bad-state output (or, for `recover` without a
# bound, whose justice property) can be satisfied exactly when countersign refutes
# the claim. Where a claim ranges over every code, the design's latches start free:
# AIGER 1.9 lets a latch's reset be its own literal (Biere, Heljanko, Wieringa,
# "AIGER 1.9 and beyond", 2011).

def _copy(model, aig: Aig, inputs: dict[str, int], states: dict[str, int], roots: list[int]) -> list[int]:
    """``roots`` of ``model`` rebuilt in ``aig`` over the given input and state leaves (by name)."""
    leaf = {}
    for n, l in zip(model.inputs, model.input_lits):
        leaf[l >> 1] = inputs[n]
    for n, l in zip(model.states, model.state_lits):
        leaf[l >> 1] = states[n]
    return model.aig.copy_into(aig, roots, leaf)


def _differ(aig: Aig, a: list[int], b: list[int]) -> int:
    return aig.or_all(aig.xor(x, y) for x, y in zip(a, b))


def _counter(aig: Aig, c: Circuit, name: str, limit: int) -> int:
    """A saturating counter of clocks (reset 0, stops at ``limit``); returns the literal
    that is 1 when it has reached ``limit``."""
    width = max(1, limit.bit_length())
    bits = [aig.leaf(f"{name}[{k}]") for k in range(width)]
    full = aig.equal_const(bits, limit)
    carry = TRUE
    nxt = []
    for b in bits:
        nxt.append(aig.mux(full, aig.xor(b, carry), b))
        carry = aig.and_(carry, b)
    for k in reversed(range(width)):
        c.latches.append((f"{name}[{k}]", bits[k], nxt[k], 0))
    return full


def export_aiger(check: Check, claim: Claim, path: str) -> dict:
    """Write ``claim`` of ``check`` as an AIGER circuit (``.aag`` ASCII or ``.aig`` binary)."""
    designs = [check.design] + ([claim.other] if claim.other is not None else [])
    model = check.design.model
    seq = check.sequence
    assert seq is not None
    where = f"{claim.pos.file}:{claim.pos.line}"
    head = [f"countersign: check {check.name} of design {check.design.name}, {claim.kind} claim at {where}",
            f"sequence: {seq.describe()}",
            "code, most significant first: " + " ".join(model.states[i] for i in check.code)]
    if claim.kind in ("settle", "glitchfree") or (claim.kind in EVENT_KINDS and not model.synchronous):
        c, more = event_circuit(check, claim)
        c.comments = head + more
        return _write_aiger(c, check, claim, path)
    if not all(d.model.synchronous for d in designs) and claim.kind != "always":
        raise ValueError("an equal claim about an asynchronous design has no AIGER form: countersign does not "
                         "compare asynchronous designs yet")
    aig = Aig()
    c = Circuit(aig)
    ins = {n: aig.leaf(n) for n in model.inputs}
    c.inputs = list(ins.items())
    st = {n: aig.leaf(n) for n in model.states}
    member_src = seq.member(model.aig, check.code_lits())

    def free_latches(nexts: list[int]) -> None:
        for (n, l), nx in zip(st.items(), nexts):
            c.latches.append((n, l, nx, None))

    if claim.kind in ("count", "always", "equal") and not (claim.kind == "equal" and claim.mode == "after"):
        roots = list(model.next_lits) + [member_src]
        if claim.kind == "count":
            from ..claims.common import rule_spec
            decided, expected = rule_spec(check)
            actual = [model.next_lits[i] for i in reversed(check.code)]
            extra = [decided] + expected + actual + [f for _, f in model.faults]
        elif claim.kind == "always":
            extra = [claim.prop]
        else:
            extra = list(model.output_lits)
        got = _copy(model, aig, ins, st, roots + extra)
        nexts, member, rest = got[:len(model.states)], got[len(model.states)], got[len(model.states) + 1:]
        free_latches(nexts)
        if claim.kind == "count":
            w = len(check.code)
            decided, expected, actual, faults = rest[0], rest[1:1 + w], rest[1 + w:1 + 2 * w], rest[1 + 2 * w:]
            bad = aig.and_(member, aig.or_(aig.and_(decided, _differ(aig, actual, expected)), aig.or_all(faults)))
            meaning = ("a code of the sequence steps against the rules, or an SR flop has s = r = 1 there")
        elif claim.kind == "always":
            bad = aig.and_(member, rest[0] ^ 1)
            meaning = "the property is 0 in a code of the sequence under some input"
        else:
            other = claim.other
            om = other.model
            o_st = {n: st[n] for n in om.states}
            o_in = {n: ins[n] for n in om.inputs}
            o_got = _copy(om, aig, o_in, o_st, list(om.next_lits) + list(om.output_lits))
            mine = dict(zip(model.states, nexts))
            theirs = dict(zip(om.states, o_got[:len(om.states)]))
            my_out = dict(zip(model.outputs, rest))
            their_out = dict(zip(om.outputs, o_got[len(om.states):]))
            diff = aig.or_(_differ(aig, [mine[n] for n in model.states], [theirs[n] for n in model.states]),
                           _differ(aig, [my_out[n] for n in model.outputs], [their_out[n] for n in model.outputs]))
            bad = aig.and_(member, diff) if claim.mode == "sequence" else diff
            head.append(f"miter of {check.design.name} and {other.name}: one set of latches (flops paired by name) "
                        f"drives both designs")
            meaning = (f"{check.design.name} and {other.name} differ in a next state bit or an output"
                       + (" in a code of the sequence" if claim.mode == "sequence" else ""))
        c.bad.append((f"{claim.kind} claim at {where}", bad))
        head.append("latches start free (every code); the bad output can become 1 exactly when "
                    f"the claim is refuted: {meaning}")
    elif claim.kind == "recover":
        from ..claims.common import stepping
        cond_src = claim.cond if claim.cond is not None else stepping(check)
        got = _copy(model, aig, ins, st, list(model.next_lits) + [member_src, cond_src])
        nexts, member, cond = got[:len(model.states)], got[-2], got[-1]
        free_latches(nexts)
        valid = aig.leaf("run_ok")
        # run_ok: every code so far unused and every input so far met the condition
        nxt_valid = aig.and_all([valid, member ^ 1, cond])
        c.latches.append(("run_ok", valid, nxt_valid, 1))
        if claim.within is not None:
            full = _counter(aig, c, "clocks", claim.within)
            c.bad.append((f"recover within {claim.within} at {where}", aig.and_all([valid, member ^ 1, full])))
            head.append(f"latches start free (every code); clocks counts up to {claim.within} and stays; the bad "
                        f"output can become 1 exactly when some unused code stays unused for {claim.within} {'clock' if claim.within == 1 else 'clocks'} "
                        f"under inputs meeting the condition (the claim is refuted)")
        else:
            c.justice.append((f"recover at {where}", [nxt_valid]))
            head.append("latches start free (every code); the justice property holds on a run exactly when the "
                        "run stays among unused codes forever under inputs meeting the condition (a lockout: "
                        "the claim is refuted)")
    elif claim.kind == "equal":  # after COND
        other = claim.other
        om = other.model
        ins2 = {n: aig.leaf("again." + n) for n in model.inputs}
        c.inputs += [("again." + n, l) for n, l in ins2.items()]
        copies = []
        for tag, mdl, inputs in (("a", model, ins), ("a2", model, ins2), ("b", om, ins), ("b2", om, ins2)):
            states = {n: aig.leaf(f"{tag}.{n}") for n in mdl.states}
            cond_src = claim.cond if mdl is model else claim.other_cond
            got = _copy(mdl, aig, {n: inputs[n] for n in mdl.inputs}, states,
                        list(mdl.next_lits) + list(mdl.output_lits) + [cond_src])
            k = len(mdl.states)
            copies.append((tag, mdl, states, got[:k], dict(zip(mdl.outputs, got[k:-1])), got[-1]))
        started = aig.leaf("started")
        valid = aig.leaf("run_ok")
        c.latches.append(("started", started, TRUE, 0))
        first_ok = aig.and_(copies[0][5], copies[1][5])  # COND holds for both input copies
        c.latches.append(("run_ok", valid, aig.and_(valid, aig.or_(started, first_ok)), 1))
        for tag, mdl, states, nexts, _, _ in copies:
            for (n, l), nx in zip(states.items(), nexts):
                c.latches.append((f"{tag}.{n}", l, aig.mux(started, nx, l) if tag.endswith("2") else nx, None))
        a, a2, b, b2 = copies
        undetermined = aig.or_(_differ(aig, list(a[2].values()), list(a2[2].values())),
                               _differ(aig, list(b[2].values()), list(b2[2].values())))
        outs = _differ(aig, [a[4][n] for n in model.outputs], [b[4][n] for n in model.outputs])
        first = aig.leaf("first_clock_done")
        c.latches.append(("first_clock_done", first, started, 0))
        bad = aig.and_all([valid, started, aig.or_(aig.and_(first ^ 1, undetermined), outs)])
        c.bad.append((f"equal after at {where}", bad))
        head.append(f"two copies of {check.design.name} (latches a.NAME, a2.NAME) and of {other.name} (b.NAME, "
                    f"b2.NAME) start free; the first clock applies the condition to both input copies (NAME and "
                    f"again.NAME); the bad output can become 1 exactly when that clock leaves a design in more "
                    f"than one state, or the outputs of a and b "
                    f"differ afterwards (the claim is refuted)")
        del b2
    else:
        raise ValueError(f"a {claim.kind} claim cannot be written as AIGER yet")
    c.comments = head
    return _write_aiger(c, check, claim, path)


def _write_aiger(c: Circuit, check: Check, claim: Claim, path: str) -> dict:
    """Write circuit ``c`` of a claim as AIGER in the form of ``path``'s extension; returns its statistics."""
    from pathlib import Path

    ext = Path(path).suffix.lower()
    data = aiger_bytes(c, binary=ext == ".aig")
    write_output(path, data)
    prop = "a bad-state output" if c.bad else "a justice property"
    return {"path": path, "check": check.name, "claim": claim.kind, "line": claim.pos.line, "format": "aiger",
            "inputs": len(c.inputs), "latches": len(c.latches), "ands": _ands(data),
            "property": prop}


def _ands(data: bytes) -> int:
    return int(data.split(b"\n", 1)[0].split()[5])
