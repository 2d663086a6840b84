"""The equal claim, against exhaustive comparison, explicit product-machine
search and binary decision diagrams.

The references here are written independently of the engines: they clock
each design with the scalar simulator (``Model.step``) over every state and
input, or search the product of the two designs state pair by state pair in
plain Python, or build the miter as BDDs with pyeda from the and-inverter
graph node by node. Designs are random small netlists (a greenhouse vent,
a ferry gate, a brewery tally) written out as .cnl text.
"""

from __future__ import annotations

import random
from collections import deque

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from checker.engines.budget import Budget
from checker.engines.sat import DEFAULT_SOLVER
from checker.claims import equal
from checker.claims.common import Options
from checker.claims.equal import after_engines
from checker.engines.correspond import signal_correspondence
from checker.engines.product import explicit_search, product
from checker.elab import load_namespace
from checker.errors import InputError
from checker.engines.pdr import Pdr, check_invariant
from checker.claims.result import OPEN, PROVED, REFUTED

SETTINGS = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])


# --- random netlists as expression trees --------------------------------------
def rand_expr(rng: random.Random, names: list[str], depth: int):
    if depth == 0 or rng.random() < 0.25:
        return ("v", rng.choice(names)) if rng.random() < 0.92 else ("c", rng.randint(0, 1))
    op = rng.choice(["&", "|", "^", "!", "mux"])
    if op == "!":
        return ("!", rand_expr(rng, names, depth - 1))
    if op == "mux":
        return ("mux", *(rand_expr(rng, names, depth - 1) for _ in range(3)))
    return (op, rand_expr(rng, names, depth - 1), rand_expr(rng, names, depth - 1))


def text(e) -> str:
    t = e[0]
    if t == "v":
        return e[1]
    if t == "c":
        return str(e[1])
    if t == "!":
        return f"!{text(e[1])}"
    if t == "mux":
        return f"mux({text(e[1])}, {text(e[2])}, {text(e[3])})"
    return f"({text(e[1])} {t} {text(e[2])})"


def subst(e, ren: dict[str, str]):
    if e[0] == "v":
        return ("v", ren.get(e[1], e[1]))
    if e[0] == "c":
        return e
    return (e[0], *(subst(x, ren) for x in e[1:]))


def next_tree(kind: str, q: str, pins: dict):
    """The next-value expression of a flop bit (the contract's table)."""
    qv = ("v", q)
    if kind == "D":
        return pins["d"]
    if kind == "T":
        return ("^", qv, pins["t"])
    if kind == "JK":
        return ("|", ("&", pins["j"], ("!", qv)), ("&", ("!", pins["k"]), qv))
    return ("|", pins["s"], ("&", ("!", pins["r"]), qv))


def realise(kind: str, q: str, d):
    """Pins of a flop of ``kind`` whose next value is ``d`` (no SR fault possible)."""
    if kind == "D":
        return {"d": d}
    if kind == "T":
        return {"t": ("^", ("v", q), d)}
    if kind == "JK":
        return {"j": d, "k": ("!", d)}
    return {"s": d, "r": ("!", d)}


class Net:
    """A small design as trees: flops (name, kind, pins, clear), outputs, inputs."""

    def __init__(self, name, inputs, flops, outputs):
        self.name, self.inputs, self.flops, self.outputs = name, inputs, flops, outputs

    def cnl(self) -> str:
        lines = [f"design {self.name}", f"  in {', '.join(self.inputs)}"]
        for q, kind, pins, clear in self.flops:
            drives = ", ".join(f"{p} = {text(x)}" for p, x in pins.items())
            lines.append(f"  flop {q} : {kind} ({drives})" + (f" clear {clear}" if clear else ""))
        lines += [f"  out {o} = {text(x)}" for o, x in self.outputs]
        return "\n".join(lines + ["end"]) + "\n"

    def next_trees(self) -> dict:
        return {q: next_tree(k, q, p) for q, k, p, _ in self.flops}


def rand_net(rng, name, nflops, inputs, clear=None) -> Net:
    qs = [f"v{i}" for i in range(nflops)]
    names = qs + inputs
    flops = []
    for q in qs:
        kind = rng.choice(["D", "T", "JK", "SR"])
        pins = {p: rand_expr(rng, names, 3) for p in {"D": "d", "T": "t", "JK": "jk", "SR": "sr"}[kind]}
        flops.append((q, kind, pins, clear))
    outs = [(f"o{i}", rand_expr(rng, names, 3)) for i in range(2)]
    return Net(name, inputs, flops, outs)


def reencode(rng, net: Net, name: str, rename: dict[str, str] | None = None) -> Net:
    """The same behaviour with every flop realised in a random kind (and flops renamed)."""
    ren = rename or {}
    nt = net.next_trees()
    flops = []
    for q, _, _, clear in net.flops:
        kind = rng.choice(["D", "T", "JK", "SR"])
        nq = ren.get(q, q)
        flops.append((nq, kind, realise(kind, nq, subst(nt[q], ren)), clear))
    if ren:
        rng.shuffle(flops)  # another declaration order: other bit order of the state
    outs = [(o, subst(x, ren)) for o, x in net.outputs]
    return Net(name, net.inputs, flops, outs)


def mutate(rng, net: Net, name: str) -> Net:
    """One random single-gate edit somewhere in the netlist."""
    spots = [("f", i, p) for i, (_, _, pins, _) in enumerate(net.flops) for p in pins] + [("o", i, None) for i in range(len(net.outputs))]
    where = rng.choice(spots)
    names = [q for q, *_ in net.flops] + net.inputs

    def edit(e):
        if e[0] in ("v", "c") or rng.random() < 0.3:
            return rand_expr(rng, names, 1)
        k = rng.randrange(1, len(e))
        return e[:k] + (edit(e[k]),) + e[k + 1:]

    flops = [list(f) for f in net.flops]
    outs = list(net.outputs)
    if where[0] == "f":
        pins = dict(flops[where[1]][2])
        pins[where[2]] = edit(pins[where[2]])
        flops[where[1]][2] = pins
    else:
        o, x = outs[where[1]]
        outs[where[1]] = (o, edit(x))
    return Net(name, net.inputs, [tuple(f) for f in flops], outs)


def load(tmp_path, body: str, name: str = "t.cnl"):
    p = tmp_path / name
    p.write_text(body, encoding="utf-8")
    return load_namespace(str(p))


def prove(check, k: int = 0, engine: str = "auto", budget: Budget | None = None):
    claims = [c for c in check.claims if c.kind == "equal"]
    return equal.prove(check, claims[k], Options(engine=engine), budget or Budget())


# --- independent references ----------------------------------------------------
def bits(n: int, w: int) -> list[int]:
    return [(n >> (w - 1 - i)) & 1 for i in range(w)]


def exhaustive_paired(a, b, codes=None) -> set[tuple[int, int]]:
    """(state code in A's declaration order, input code) where next state or outputs differ."""
    ma, mb = a.model, b.model
    out = set()
    ns, ni = len(ma.states), len(ma.inputs)
    for s in (range(1 << ns) if codes is None else codes):
        st = dict(zip(ma.states, bits(s, ns)))
        for i in range(1 << ni):
            inp = dict(zip(ma.inputs, bits(i, ni)))
            na, oa, _ = ma.step(st, inp)
            nb, ob, _ = mb.step(st, inp)
            if any(na[q] != nb[q] for q in ma.states) or any(oa[o] != ob[o] for o in ma.outputs):
                out.add((s, i))
    return out


def reset_by_enumeration(m, cond_inputs: list[dict]) -> set[tuple]:
    """Every state one clock under a COND input can reach, from every state."""
    got = set()
    for s in range(1 << len(m.states)):
        st = dict(zip(m.states, bits(s, len(m.states))))
        for inp in cond_inputs:
            nxt, _, _ = m.step(st, inp)
            got.add(tuple(nxt[q] for q in m.states))
    return got


def product_bfs(ma, mb, ra: tuple, rb: tuple) -> int | None:
    """Shortest number of clocks after the reset pair until outputs differ (None: never)."""
    ni = len(ma.inputs)
    inputs = [dict(zip(ma.inputs, bits(i, ni))) for i in range(1 << ni)]
    seen = {(ra, rb)}
    q = deque([((ra, rb), 0)])
    while q:
        (sa, sb), d = q.popleft()
        da, db = dict(zip(ma.states, sa)), dict(zip(mb.states, sb))
        for inp in inputs:
            na, oa, _ = ma.step(da, inp)
            nb, ob, _ = mb.step(db, inp)
            if any(oa[o] != ob[o] for o in ma.outputs):
                return d
            key = (tuple(na[x] for x in ma.states), tuple(nb[x] for x in mb.states))
            if key not in seen:
                seen.add(key)
                q.append((key, d + 1))
    return None


def verify_paired_trace(check, other, r) -> None:
    """Re-simulate a paired counterexample in both designs: something differs at clock 0."""
    a = check.design
    idx = check.code or list(range(len(a.model.states)))
    w = len(idx)
    st = {a.model.states[i]: (r.trace[0].code >> (w - 1 - k)) & 1 for k, i in enumerate(idx)}
    assert r.trace[0].other_code == r.trace[0].code  # flops paired by name: the same bits
    inp = r.trace[0].inputs
    na, oa, _ = a.model.step(st, inp)
    nb, ob, _ = other.model.step(st, inp)
    code = lambda s: int("".join(str(s[a.model.states[i]]) for i in idx), 2)  # noqa: E731
    assert code(na) == r.trace[1].code and code(nb) == r.trace[1].other_code
    assert na != nb or oa != ob


def verify_after_trace(check, other, r) -> None:
    """Re-simulate an `after` counterexample in both designs: outputs differ at its end."""
    ma, mb = check.design.model, other.model
    idx = check.code or list(range(len(ma.states)))
    sa = {ma.states[i]: v for i, v in zip(idx, bits(r.trace[0].code, len(idx)))}
    sb = dict(zip(mb.states, bits(r.trace[0].other_code, len(mb.states))))
    for k, e in enumerate(r.trace):
        assert int("".join(str(sa[ma.states[i]]) for i in idx), 2) == e.code
        assert int("".join(str(sb[x]) for x in mb.states), 2) == e.other_code
        na, oa, _ = ma.step(sa, e.inputs)
        nb, ob, _ = mb.step(sb, e.inputs)
        if k == len(r.trace) - 1:
            assert oa != ob, "the last entry must show differing outputs"
        sa, sb = na, nb


# --- paired forms: random pairs against exhaustive comparison --------------------
@SETTINGS
@given(seed=st.integers(0, 2**32 - 1), nflops=st.integers(1, 4), mode=st.sampled_from(["same", "mutant", "other"]))
def test_paired_forms_agree_with_exhaustive_comparison(tmp_path, seed, nflops, mode):
    rng = random.Random(seed)
    a = rand_net(rng, "vent_a", nflops, ["gust", "rain"])
    b = {"same": lambda: reencode(rng, a, "vent_b"), "mutant": lambda: mutate(rng, a, "vent_b"),
         "other": lambda: rand_net(rng, "vent_b", nflops, ["gust", "rain"])}[mode]()
    codes = sorted(rng.sample(range(1 << nflops), rng.randint(1, 1 << nflops)))
    code = "{" + ", ".join(q for q, *_ in a.flops) + "}"
    chk = f"check vent of vent_a\n  code {code}\n  count {' '.join(map(str, codes))}\n  hold when gust\n  equal vent_b\n  equal vent_b on sequence\nend\n"
    ns = load(tmp_path, a.cnl() + b.cnl() + chk)
    check = ns.checks[0]
    da, db = ns.designs["vent_a"], ns.designs["vent_b"]
    full = exhaustive_paired(da, db)
    on_seq = exhaustive_paired(da, db, codes)
    r_full, r_seq = prove(check, 0), prove(check, 1)
    assert r_full.status == (REFUTED if full else PROVED)
    assert r_seq.status == (REFUTED if on_seq else PROVED)
    # the bit-parallel exhaustive engine (engine 'explicit') gives the same verdicts and unused codes
    x_full, x_seq = prove(check, 0, engine="explicit"), prove(check, 1, engine="explicit")
    assert x_full.details["engine"] == "exhaustive simulation"
    assert (x_full.status, x_seq.status) == (r_full.status, r_seq.status)
    assert x_full.details.get("unused_codes") == r_full.details.get("unused_codes")
    if mode == "same":
        assert r_full.status == PROVED  # a re-realised flop keeps its next-state function
    for r, allowed in ((r_full, full), (r_seq, on_seq)):
        if r.status == REFUTED:
            verify_paired_trace(check, db, r)
            pt = r.trace[0]
            assert (pt.code, int("".join(str(pt.inputs[n]) for n in da.model.inputs), 2)) in allowed
    if full and not on_seq:
        # differs only on unused codes: listed exactly, by the exhaustive reference
        unused = sorted({s for s, _ in full})
        assert r_full.details["only_unused"] is True
        assert r_full.details["unused_codes"] == unused and r_full.details["unused_count_exact"]
        assert all(c not in codes for c in unused)
    else:
        assert "only_unused" not in r_full.details


# --- paired forms: binary decision diagrams as the reference (up to 12 flops) -----
def aig_to_bdds(model, roots, var):
    """BDDs of ``roots`` (AIG literals), node by node in topological order."""
    from pyeda.boolalg.bdd import BDDZERO
    aig = model.aig
    val = {0: BDDZERO}
    for l, n in zip(model.state_lits + model.input_lits, model.states + model.inputs):
        val[l >> 1] = var[n]
    for node in aig.cone(roots):
        if node in val:
            continue
        a, b = aig.left[node], aig.right[node]
        va = ~val[a >> 1] if a & 1 else val[a >> 1]
        vb = ~val[b >> 1] if b & 1 else val[b >> 1]
        val[node] = va & vb
    out = []
    for r in roots:
        v = val.get(r >> 1, BDDZERO)
        out.append(~v if r & 1 else v)
    return out


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(seed=st.integers(0, 2**32 - 1), nflops=st.integers(5, 12), mutant=st.booleans())
def test_paired_miter_against_bdds(tmp_path, seed, nflops, mutant):
    from pyeda.boolalg.bdd import BDDZERO, bddvar
    rng = random.Random(seed)
    a = rand_net(rng, "dock_a", nflops, ["crate", "halt"])
    b = mutate(rng, a, "dock_b") if mutant else reencode(rng, a, "dock_b")
    codes = sorted(rng.sample(range(1 << nflops), rng.randint(1, 24)))
    code = "{" + ", ".join(q for q, *_ in a.flops) + "}"
    chk = f"check dock of dock_a\n  code {code}\n  count {' '.join(map(str, codes))}\n  step when crate\n  equal dock_b\n  equal dock_b on sequence\nend\n"
    ns = load(tmp_path, a.cnl() + b.cnl() + chk)
    da, db = ns.designs["dock_a"], ns.designs["dock_b"]
    ma, mb = da.model, db.model
    var = {n: bddvar(n.replace("[", "_").replace("]", "_")) for n in ma.states + ma.inputs}
    fa = aig_to_bdds(ma, ma.next_lits + ma.output_lits, var)
    fb = aig_to_bdds(mb, [mb.next_lits[mb.states.index(q)] for q in ma.states] + mb.output_lits, var)
    miter = BDDZERO
    for x, y in zip(fa, fb):
        miter = miter | (x ^ y)
    member = BDDZERO
    for c in codes:  # the sequence as a set of minterms, not the engine's circuit
        term = None
        for q, v in zip(ma.states, bits(c, nflops)):
            lit = var[q] if v else ~var[q]
            term = lit if term is None else term & lit
        member = member | term
    check = ns.checks[0]
    r_full, r_seq = prove(check, 0), prove(check, 1)
    assert (r_full.status == PROVED) == miter.is_zero()
    assert (r_seq.status == PROVED) == (miter & member).is_zero()
    for r, f in ((r_full, miter), (r_seq, miter & member)):
        if r.status == REFUTED:
            pt = {var[q]: v for q, v in zip(ma.states, bits(r.trace[0].code, nflops))}
            pt.update({var[n]: v for n, v in r.trace[0].inputs.items()})
            assert f.restrict(pt).is_one()


# --- after: random pairs against explicit product-machine search ------------------
@SETTINGS
@given(seed=st.integers(0, 2**32 - 1), nflops=st.integers(1, 4), mode=st.sampled_from(["same", "mutant", "mutant", "loose"]))
def test_after_agrees_with_product_search(tmp_path, seed, nflops, mode):
    rng = random.Random(seed)
    a = rand_net(rng, "gate_a", nflops, ["rst", "go"], clear="rst")
    ren = {f"v{i}": f"w{i}" for i in range(nflops)}
    b = reencode(rng, a, "gate_b", ren)
    if mode in ("mutant", "loose"):
        b = mutate(rng, b, "gate_b")
    if mode == "loose":  # a flop without its clear may stay undetermined
        k = rng.randrange(nflops)
        b.flops = [f if i != k else (f[0], f[1], f[2], None) for i, f in enumerate(b.flops)]
    chk = "check gate of gate_a\n  equal gate_b after rst & !go\nend\n"
    ns = load(tmp_path, a.cnl() + b.cnl() + chk)
    da, db = ns.designs["gate_a"], ns.designs["gate_b"]
    cond_in = [{"rst": 1, "go": 0}]
    resets_a = reset_by_enumeration(da.model, cond_in)
    resets_b = reset_by_enumeration(db.model, cond_in)
    check = ns.checks[0]
    r = prove(check)
    if len(resets_a) > 1 or len(resets_b) > 1:
        assert r.status == REFUTED and "undetermined" in r.details
        if len(resets_b) > 1:
            undet = {q for i, q in enumerate(db.model.states) if len({s[i] for s in resets_b}) > 1}
            assert set(r.details["undetermined"]["gate_b"]) == undet
        return
    (ra,), (rb,) = resets_a, resets_b
    want = product_bfs(da.model, db.model, ra, rb)
    assert r.status == (PROVED if want is None else REFUTED), r.summary
    if mode == "same":
        assert r.status == PROVED
    if r.status == REFUTED:
        verify_after_trace(check, db, r)
        assert len(r.trace) == want + 2  # shortest: clock 0 is the condition, clock 1 the reset pair
    ex = prove(check, engine="explicit")
    assert ex.status == r.status
    sat = prove(check, engine="sat")  # the SAT engines alone (auto may have searched explicitly)
    assert sat.status == r.status
    if sat.status == REFUTED:
        verify_after_trace(check, db, sat)
        assert len(sat.trace) == want + 2
    # without BMC first: signal correspondence then IC3/PDR, and IC3/PDR alone, agree too
    prod, init = product(da.model, db.model), list(ra) + list(rb)
    no_bmc = after_engines(prod, init, Options(engine="sat"), Budget(), bmc_first=0)
    alone = after_engines(prod, init, Options(engine="sat"), Budget(), bmc_first=0, correspondence=False)
    assert no_bmc.status == r.status
    assert alone.status == r.status and alone.engine.startswith("ic3/pdr")


# --- re-encodings that must be equal, and single-gate edits that must not ---------
def ferry(n: int, encoded: bool, edit: str | None = None) -> str:
    """A ferry gate's n positions: binary T-flop counter against a one-hot ring.

    Outputs: ``dock`` (position 0) and either the position in binary
    (``encoded``) or one line per position (decoded).
    """
    k = n.bit_length() - 1
    L = ["design gate_bin", "  in rst, go"]
    bits = []
    for i in range(k):
        terms = ["go"] + [f"b[{j}]" for j in range(i)]
        if edit == "dropped term" and i == k - 1 and len(terms) > 2:
            terms = terms[:-1]
        op = " | " if edit == "and made or" and i == k - 1 else " & "
        bits.append(f"  flop b[{i}] : T (t = {op.join(terms)}) clear rst")
    L += bits[::-1]  # one piece per bit, most significant first
    L.append("  out dock = " + " & ".join(f"!b[{j}]" for j in range(k)))
    hn = lambda i: "h0" if i == 0 else f"h[{i}]"  # noqa: E731
    if encoded:
        L.append(f"  out pos[{k - 1}:0] = b")
    else:
        for i in range(n):
            L.append(f"  out at{i} = " + " & ".join((f"b[{j}]" if (i >> j) & 1 else f"!b[{j}]") for j in range(k)))
    L += ["end", "design gate_hot", "  in rst, go", f"  flop h0 : D (d = mux(go, h0, h[{n - 1}])) preset rst"]
    for i in reversed(range(1, n)):
        a, b = f"h[{i}]", hn(i - 1)
        if edit == "swapped input" and i == n // 2:
            a, b = b, a
        L.append(f"  flop h[{i}] : D (d = mux(go, {a}, {b})) clear rst")
    L.append("  out dock = h0")
    if encoded:
        items = ["or(" + ", ".join(hn(i) for i in range(n) if (i >> j) & 1) + ")" for j in reversed(range(k))]
        L.append(f"  out pos[{k - 1}:0] = {{{', '.join(items)}}}")
    else:
        L += [f"  out at{i} = {hn(i)}" for i in range(n)]
    L += ["end", "check ferry of gate_bin", "  equal gate_hot after rst", "end"]
    return "\n".join(L) + "\n"


@pytest.mark.parametrize("n", [4, 8])
@pytest.mark.parametrize("encoded", [False, True])
def test_one_hot_against_binary(tmp_path, n, encoded):
    ns = load(tmp_path, ferry(n, encoded))
    r = prove(ns.checks[0], engine="sat")
    assert r.status == PROVED, r.summary
    assert prove(ns.checks[0]).status == PROVED  # auto: explicit search while the product is small
    if not encoded:
        # every one-hot flop equals a decoder output, so "the outputs agree" is itself inductive:
        # the step case of k-induction (Sheeran et al. 2000), tried first, proves it; without it,
        # the same equalities are an inductive correspondence (van Eijk 2000), tested below
        assert r.details["engine"] == "k-induction"


@pytest.mark.parametrize("edit", ["swapped input", "and made or", "dropped term"])
@pytest.mark.parametrize("encoded", [False, True])
def test_one_hot_against_binary_edits_are_caught(tmp_path, edit, encoded):
    ns = load(tmp_path, ferry(8, encoded, edit))
    check = ns.checks[0]
    want = product_bfs(ns.designs["gate_bin"].model, ns.designs["gate_hot"].model,
                       (0, 0, 0), (1,) + (0,) * 7)
    for engine in ("auto", "sat"):
        r = prove(check, engine=engine)
        assert r.status == REFUTED, r.summary
        verify_after_trace(check, ns.designs["gate_hot"], r)
        assert len(r.trace) == want + 2


MIST = """
# greenhouse misting: a 4-stage shift register of mist pulses
design mist_q
  in rst, mist
  flop q[3:0] : D (d = {q[2:0], mist}) clear rst
  out o[3:0] = q
  out any = or(q[3], q[2], q[1], q[0])
end
# the same register built with its bits in the other order
design mist_r
  in rst, mist
  flop r[3:0] : D (d = {mist, r[3:1]}) clear rst
  out o[3:0] = {r[0], r[1], r[2], EDIT}
  out any = or(r[0], r[1], r[2], r[3])
end
check misting of mist_q
  equal mist_r after rst
end
"""


@pytest.mark.parametrize("edit,want", [("r[3]", PROVED), ("r[2]", REFUTED), ("r[3] & mist", REFUTED)])
def test_bit_reversed_register(tmp_path, edit, want):
    ns = load(tmp_path, MIST.replace("EDIT", edit))
    check = ns.checks[0]
    r = prove(check)
    assert r.status == want, r.summary
    if want == REFUTED:
        verify_after_trace(check, ns.designs["mist_r"], r)


def test_deep_difference_is_found_past_the_first_bmc_bound(tmp_path):
    """A swapped mux input at position 16 of 32 shows only 16 clocks after the reset pair."""
    ns = load(tmp_path, ferry(32, True, "swapped input"))
    check = ns.checks[0]
    r = prove(check, engine="sat")
    assert r.status == REFUTED and "ic3/pdr" in r.details["engine"]
    verify_after_trace(check, ns.designs["gate_hot"], r)
    want = product_bfs(ns.designs["gate_bin"].model, ns.designs["gate_hot"].model, (0,) * 5, (1,) + (0,) * 31)
    assert want >= equal.BMC_FIRST and len(r.trace) == want + 2  # shortened to the shortest by BMC


TJK = """
# brewery tally of kegs filled: T flops against the JK-flop realisation (j = k = t)
design kegs_t
  in fill, clr
  flop n[3] : T (t = fill & n[0] & n[1] & n[2]) clear clr
  flop n[2] : T (t = fill & n[0] & n[1]) clear clr
  flop n[1] : T (t = fill & n[0]) clear clr
  flop n[0] : T (t = fill) clear clr
  out full = n[3] & n[2] & n[1] & n[0]
end
design kegs_jk
  in fill, clr
  flop n[3] : JK (j = fill & n[0] & n[1] & n[2], k = fill & n[0] & n[1] & n[2]) clear clr
  flop n[2] : JK (j = J2, k = fill & n[0] & n[1]) clear clr
  flop n[1] : JK (j = fill & n[0], k = fill & n[0]) clear clr
  flop n[0] : JK (j = fill, k = fill) clear clr
  out full = FULL
end
check kegs of kegs_t
  code n
  count 0 .. 15
  hold when !fill
  load 0 when clr
  equal kegs_jk
  equal kegs_jk on sequence
  equal kegs_jk after clr
end
"""


@pytest.mark.parametrize("j2,full,want", [
    ("fill & n[0] & n[1]", "n[3] & n[2] & n[1] & n[0]", PROVED),
    ("fill & n[1] & n[0]", "and(n[0], n[1], n[2], n[3])", PROVED),
    ("fill & n[0]", "n[3] & n[2] & n[1] & n[0]", REFUTED),              # a dropped term
    ("fill & n[0] & n[1]", "n[3] & n[2] & n[1] | n[0]", REFUTED),       # an and made or
    ("n[0] & n[1]", "n[3] & n[2] & n[1] & n[0]", REFUTED),              # a dropped term (fill)
    ("fill & n[0] & n[1]", "n[3] & n[2] & n[1] & fill", REFUTED),       # a swapped input
])
def test_t_against_jk(tmp_path, j2, full, want):
    ns = load(tmp_path, TJK.replace("J2", j2).replace("FULL", full))
    check = ns.checks[0]
    other = ns.designs["kegs_jk"]
    for k in range(3):
        r = prove(check, k)
        assert r.status == want, (k, r.summary)
        if r.status == REFUTED:
            if k < 2:
                verify_paired_trace(check, other, r)
            else:
                verify_after_trace(check, other, r)


# --- the reports: unused codes, names, undetermined flops, budgets ------------------
SIXPACK = """
design pack_t
  in en
  flop q[2] : T (t = en & q[0] & (q[1] | q[2]))
  flop q[1] : T (t = en & q[0] & !q[2])
  flop q[0] : T (t = en)
  out full = q[2] & q[0]
end
design pack_d
  in en
  flop q[2] : D (d = mux(en, q[2], q[1] & q[0] | q[2] & !q[0]))
  flop q[1] : D (d = mux(en, q[1], q[1] ^ q[0] & !q[2]))
  flop q[0] : D (d = mux(en, q[0], !q[0]))
  node wrap = q[2] & q[0]
  out full = wrap
end
check pack of pack_t
  code q
  count 0 .. 5
  hold when !en
  equal pack_d
  equal pack_d on sequence
end
"""


def test_differs_only_on_unused_codes(tmp_path):
    ns = load(tmp_path, SIXPACK)
    check = ns.checks[0]
    da, db = ns.designs["pack_t"], ns.designs["pack_d"]
    full = exhaustive_paired(da, db)
    on_seq = exhaustive_paired(da, db, range(6))
    assert full and not on_seq  # the reference: the builds part only on unused code 7
    r = prove(check, 0)
    assert r.status == REFUTED and r.details["only_unused"]
    assert r.details["unused_codes"] == sorted({s for s, _ in full})
    assert r.trace[0].code == 7 and r.details["unused_codes"] == [7]
    assert any("only on unused codes" in l for l in r.evidence)
    assert prove(check, 1).status == PROVED


def test_name_mismatches_are_listed_both_ways(tmp_path):
    body = SIXPACK.replace("design pack_d\n  in en", "design pack_d\n  in en, spare").replace("out full = wrap", "out full = wrap\n  out low = !q[0]")
    with pytest.raises(InputError) as e:
        load(tmp_path, body)
    msg = e.value.message
    assert "only in pack_d: spare" in msg and "only in pack_d: low" in msg
    head, rest = SIXPACK.split("design pack_d\n")
    block, tail = rest.split("end\n", 1)
    renamed = head + "design pack_d\n" + block.replace("q[", "p[") + "end\n" + tail
    with pytest.raises(InputError) as e:
        load(tmp_path, renamed)
    assert "flops differ" in e.value.message and "only in pack_t: q[2], q[1], q[0]" in e.value.message


def test_after_names_the_undetermined_flops(tmp_path):
    body = """
design hopper
  in rst, tick
  flop a : D (d = tick) clear rst
  flop b : D (d = b ^ tick)
  out o = a
end
design hopper2
  in rst, tick
  flop c : T (t = c ^ tick) clear rst
  out o = c
end
check h of hopper
  equal hopper2 after rst
end
"""
    ns = load(tmp_path, body)
    check = ns.checks[0]
    r = prove(check)
    assert r.status == REFUTED
    assert r.details["undetermined"] == {"hopper": ["b"]}
    assert "b" in r.summary
    # the two runs end in different states of hopper, both replayed by the claim
    assert r.trace[1].code != r.details["second_trace"][1]["code"]


def test_after_with_no_input_meeting_the_condition_is_an_error(tmp_path):
    body = SIXPACK.replace("equal pack_d on sequence", "equal pack_d after en & !en")
    ns = load(tmp_path, body)
    with pytest.raises(InputError):
        prove(ns.checks[0], 1)


def test_budget_run_out_is_open_never_proved(tmp_path):
    ns = load(tmp_path, ferry(8, True))
    r = prove(ns.checks[0], budget=Budget(deadline=0.0))
    assert r.status == OPEN and "depth" in r.details


# --- the engines on their own ---------------------------------------------------------
def reach_bad(m, init: list[int], bad_name: str) -> int | None:
    """Shortest clock at which output ``bad_name`` can be 1 (BFS, scalar simulator)."""
    ni = len(m.inputs)
    inputs = [dict(zip(m.inputs, bits(i, ni))) for i in range(1 << ni)]
    start = tuple(init)
    seen, q = {start}, deque([(start, 0)])
    while q:
        s, d = q.popleft()
        st_ = dict(zip(m.states, s))
        for inp in inputs:
            nxt, outs, _ = m.step(st_, inp)
            if outs[bad_name]:
                return d
            t = tuple(nxt[x] for x in m.states)
            if t not in seen:
                seen.add(t)
                q.append((t, d + 1))
    return None


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(seed=st.integers(0, 2**32 - 1), nflops=st.integers(2, 6))
def test_pdr_agrees_with_reachability(tmp_path, seed, nflops):
    rng = random.Random(seed)
    net = rand_net(rng, "silo", nflops, ["auger"])
    # a rare bad: a conjunction of several state bits
    qs = [q for q, *_ in net.flops]
    picked = rng.sample(qs, min(len(qs), rng.randint(2, 4)))
    bad = None
    for q in picked:
        lit = ("v", q) if rng.random() < 0.5 else ("!", ("v", q))
        bad = lit if bad is None else ("&", bad, lit)
    net.outputs = [("alarm", bad)]
    ns = load(tmp_path, net.cnl())
    m = ns.designs["silo"].model
    init = [0] * nflops
    want = reach_bad(m, init, "alarm")
    res = Pdr(m, init, m.output_lits[0]).run()
    assert res.status == (PROVED if want is None else REFUTED)
    if res.status == PROVED:
        assert check_invariant(m, init, m.output_lits[0], res.invariant)
    else:
        st_ = dict(zip(m.states, init))
        for inp in res.inputs[:-1]:
            st_, _, _ = m.step(st_, inp)
        assert m.step(st_, res.inputs[-1])[1]["alarm"] == 1  # the run reaches bad
        assert len(res.inputs) - 1 >= want
    ex = explicit_search(m, init, m.output_lits[0])
    assert (ex.inputs is None) == (want is None)
    if want is not None:
        assert len(ex.inputs) - 1 == want


def reachable_pairs_hold(m, init, pairs) -> bool:
    """Every pair of literals is equal in every reachable state under every input (BFS)."""
    from checker.model import evaluate
    ni = len(m.inputs)
    seen, q = {tuple(init)}, deque([tuple(init)])
    while q:
        s = q.popleft()
        for i in range(1 << ni):
            inp = dict(zip(m.inputs, bits(i, ni)))
            lv = {l >> 1: v for l, v in zip(m.state_lits, s)}
            lv.update({l >> 1: inp[n] for n, l in zip(m.inputs, m.input_lits)})
            vals = evaluate(m.aig, lv, [x for pr in pairs for x in pr] + m.next_lits, 1)
            k = 2 * len(pairs)
            if not all(vals[2 * j] == vals[2 * j + 1] for j in range(len(pairs))):
                return False
            t = tuple(vals[k:])
            if t not in seen:
                seen.add(t)
                q.append(t)
    return True


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(seed=st.integers(0, 2**32 - 1), nflops=st.integers(1, 4), runs=st.integers(1, 8), steps=st.integers(1, 3))
def test_signal_correspondence_prunes_what_simulation_missed(tmp_path, seed, nflops, runs, steps):
    """With almost no simulation, nearly every candidate is false: the SAT
    refinement alone must leave only true invariants, and never prove a pair
    of designs whose outputs can differ."""
    rng = random.Random(seed)
    a = rand_net(rng, "kiln_a", nflops, ["rst", "fan"], clear="rst")
    b = mutate(rng, reencode(rng, a, "kiln_b", {f"v{i}": f"w{i}" for i in range(nflops)}), "kiln_b")
    ns = load(tmp_path, a.cnl() + b.cnl())
    da, db = ns.designs["kiln_a"], ns.designs["kiln_b"]
    p = product(da.model, db.model)
    init = [rng.randint(0, 1) for _ in p.model.states]
    sc = signal_correspondence(p.model, init, p.bad, Budget(), DEFAULT_SOLVER, runs=runs, steps=steps, seed=seed)
    assert reachable_pairs_hold(p.model, init, sc.pairs)
    if sc.status == "proved":
        assert product_bfs(da.model, db.model, tuple(init[:nflops]), tuple(init[nflops:])) is None


@pytest.mark.parametrize("encoded", [False, True])
def test_signal_correspondence_is_an_invariant(tmp_path, encoded):
    """Every proved correspondence holds in every reachable state under every input.

    Decoded outputs: each one-hot flop h[i] equals the binary side's decoder
    gate for position i at reset and, if all do now, at the next clock, so the
    correspondence is inductive and makes the outputs equal (van Eijk 2000).
    Encoded outputs: no candidate says that exactly one h is set, and without
    that the step fails (from h[1] = h[2] = 1 with b = 3, which agrees with
    b[j] = or of the h with bit j and dock = h0, one clock with go gives b = 0
    but h[1] | h[3] = 1), so every candidate is pruned and nothing is proved.
    """
    ns = load(tmp_path, ferry(4, encoded))
    da, db = ns.designs["gate_bin"], ns.designs["gate_hot"]
    p = product(da.model, db.model)
    init = [0, 0, 1, 0, 0, 0]
    assert p.model.states[:3] == ["a:b[1]", "a:b[0]", "b:h0"]
    sc = signal_correspondence(p.model, init, p.bad, Budget(), DEFAULT_SOLVER)
    assert reachable_pairs_hold(p.model, init, sc.pairs)
    if encoded:
        assert (sc.status, sc.pairs) == ("unproved", [])
    else:
        assert sc.status == "proved"
        hot = {l >> 1 for s, l in zip(p.model.states, p.model.state_lits) if s.startswith("b:h")}
        assert len(hot) == 4 and hot <= {l >> 1 for pair in sc.pairs for l in pair}

