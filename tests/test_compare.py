"""compare OLD NEW: exactly the behaviours an edit changed, against exhaustive simulation.

The reference clocks both versions of a design with the scalar simulator
(``Model.step``) in every state under every input and collects the points
where a next-state bit or an output differs; the cubes that ``compare``
reports must cover exactly those points.
"""

from __future__ import annotations

import random

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from checker.tools.compare import compare_files, compare_lines
from checker.elab import load_namespace
from test_equal import bits, mutate, rand_net, reencode

SETTINGS = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])


def write(tmp_path, name: str, body: str) -> str:
    p = tmp_path / name
    p.write_text(body, encoding="utf-8")
    return str(p)


def differing_points(old, new, codes=None):
    """(state dict, input dict) points where the two versions differ, as frozensets."""
    mo, mn = old.model, new.model
    ns, ni = len(mo.states), len(mo.inputs)
    out, flops, outs = set(), set(), set()
    for s in range(1 << ns) if codes is None else codes:
        st_ = dict(zip(mo.states, bits(s, ns)))
        for i in range(1 << ni):
            inp = dict(zip(mo.inputs, bits(i, ni)))
            a, oa, _ = mo.step(st_, inp)
            b, ob, _ = mn.step(st_, inp)
            f = {q for q in mo.states if a[q] != b[q]}
            o = {x for x in mo.outputs if oa[x] != ob[x]}
            if f or o:
                out.add(frozenset({**st_, **inp}.items()))
                flops |= f
                outs |= o
    return out, flops, outs


def cube_points(cube: dict, names: list[str]):
    free = [n for n in names if n not in cube]
    for k in range(1 << len(free)):
        p = dict(cube)
        p.update(zip(free, bits(k, len(free))))
        yield frozenset(p.items())


def covered(entry: dict, names: list[str], restrict=None) -> set:
    pts = set()
    for c in entry["cubes"]:
        cube = {**c["flops"], **c["inputs"]}
        for p in cube_points(cube, names):
            if restrict is None or restrict(dict(p)):
                pts.add(p)
    return pts


@SETTINGS
@given(seed=st.integers(0, 2**32 - 1), nflops=st.integers(1, 4), kind=st.sampled_from(["edit", "edit", "same"]))
def test_compare_lists_exactly_what_the_edit_changed(tmp_path, seed, nflops, kind):
    rng = random.Random(seed)
    old = rand_net(rng, "boiler", nflops, ["burn", "vent"])
    new = mutate(rng, old, "boiler") if kind == "edit" else reencode(rng, old, "boiler")
    codes = sorted(rng.sample(range(1 << nflops), rng.randint(1, 1 << nflops)))
    code = "{" + ", ".join(q for q, *_ in old.flops) + "}"
    chk = f"check heat of boiler\n  code {code}\n  count {' '.join(map(str, codes))}\n  hold when vent\nend\n"
    po = write(tmp_path, "old.cnl", old.cnl() + chk)
    pn = write(tmp_path, "new.cnl", new.cnl() + chk)
    res = compare_files(po, pn)
    do, dn = load_namespace(po).designs["boiler"], load_namespace(pn).designs["boiler"]
    names = do.model.states + do.model.inputs
    pts, flops, outs = differing_points(do, dn)
    (d,) = res["designs"]
    assert d["everywhere"] == (not pts)
    assert res["differs"] == bool(pts)
    if kind == "same":
        assert not pts and not res["differs"]
    if pts:
        assert d["complete"]
        assert covered(d, names) == pts  # every differing point, and nothing else
        assert set(d["next_differs"]) == flops and set(d["outputs_differ"]) == outs
    code_of = lambda p: int("".join(str(p[q]) for q in do.model.states), 2)  # noqa: E731
    seq_pts, _, _ = differing_points(do, dn, codes)
    assert len(d["sequences"]) == 2  # the check of each file
    for s in d["sequences"]:
        assert s["equal"] == (not seq_pts)
        if seq_pts:
            # inside the sequence the cubes hold exactly the differing points
            assert covered(s, names, lambda p: code_of(p) in codes) == seq_pts


def test_identical_copy_and_designs_in_one_file_only(tmp_path):
    body = """
design trough
  in pour
  flop f[1:0] : D (d = {f[0], pour})
  out wet = f[1] | f[0]
end
"""
    po = write(tmp_path, "old.cnl", body)
    pn = write(tmp_path, "same.cnl", body)
    res = compare_files(po, pn)
    assert not res["differs"] and res["designs"][0]["status"] == "equal"
    assert compare_lines(res)[-1] == "no design behaves differently"
    extra = write(tmp_path, "more.cnl", body + body.replace("design trough", "design sluice"))
    res = compare_files(po, extra)
    assert res["only_new"] == ["sluice"] and res["only_old"] == [] and res["differs"]


def test_flops_and_interface_differ(tmp_path):
    body = """
design trough
  in pour
  flop f[1:0] : D (d = {f[0], pour})
  out wet = f[1] | f[0]
end
"""
    po = write(tmp_path, "old.cnl", body)
    flops = body.replace("f[", "g[").replace("flop f", "flop g")
    res = compare_files(po, write(tmp_path, "flops.cnl", flops))
    d = res["designs"][0]
    assert d["status"] == "flops differ" and res["differs"]
    assert d["flops"] == {"only_old": ["f[1]", "f[0]"], "only_new": ["g[1]", "g[0]"]}
    iface = body.replace("out wet", "out damp")
    d = compare_files(po, write(tmp_path, "iface.cnl", iface))["designs"][0]
    assert d["status"] == "interface differs" and d["outputs"] == {"only_old": ["wet"], "only_new": ["damp"]}


BREW = """
# mash-tun step timer: 0 .. 5 then back to 0, holds while `pause`
design mash
  in pause, clr
  flop t[2] : D (d = mux(pause, t[2] & !t[0] | t[1] & t[0], t[2])) clear clr
  flop t[1] : D (d = mux(pause, (t[1] ^ t[0]) & !t[2], t[1])) clear clr
  flop t[0] : D (d = mux(pause, !t[0] & !wrap, t[0])) clear clr
  node wrap = t[2] & t[0]
  out done = wrap
end
check mash_steps of mash
  code t
  count 0 .. 5
  load 0 when clr
  hold when pause
  always !(t[2] & t[1])
end
"""


def test_claims_that_held_and_now_fail(tmp_path):
    po = write(tmp_path, "old.cnl", BREW)
    broken = BREW.replace("(t[1] ^ t[0])", "(t[1] | t[0])")  # an xor made or
    res = compare_files(po, write(tmp_path, "new.cnl", broken))
    old_status = {(r["check"], r["claim"]): r["status"] for r in res["claims"]["results_old"]}
    assert old_status[("mash_steps", "count")] == "proved"
    failing = [(c["check"], c["claim"]) for c in res["claims"]["now_failing"]]
    assert ("mash_steps", "count") in failing and res["differs"]
    # the reverse edit: the claim that failed in OLD holds in NEW
    back = compare_files(write(tmp_path, "b_old.cnl", broken), write(tmp_path, "b_new.cnl", BREW))
    assert [(c["check"], c["claim"]) for c in back["claims"]["now_holding"]] == [("mash_steps", "count")]
    lines = compare_lines(res)
    assert any(l.startswith("claim count (check mash_steps") for l in lines)
