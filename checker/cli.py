"""The command line: a thin layer over the Python API.

Exit status: 0 every claim proved (map: nothing locked; compare: nothing
differs; sim: ran), 1 a claim refuted (a lock, a difference), 3 a claim left
open and none refuted, 2 bad input or command line (``FILE:LINE:COL: message``
on stderr; with ``--json`` also ``{"error": ...}`` on stdout).
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from pathlib import Path
from typing import Optional, Sequence

from . import __version__
from .errors import InputError, Pos
from .sat import DEFAULT_SOLVER
from .verdict import OPEN, REFUTED

CMDLINE = "<command line>"


class _Parser(argparse.ArgumentParser):
    def error(self, message: str):  # argparse would print usage and exit
        raise InputError(Pos(CMDLINE, 1, 1), message)


def _bad(message: str) -> InputError:
    return InputError(Pos(CMDLINE, 1, 1), message)


def _emit(obj, as_json: bool, text: str) -> None:
    if as_json:
        sys.stdout.write(json.dumps(obj, indent=1) + "\n")
    else:
        sys.stdout.write(text + ("\n" if text and not text.endswith("\n") else ""))


def _exit_for(results) -> int:
    if any(r.status == REFUTED for r in results):
        return 1
    if any(r.status == OPEN for r in results):
        return 3
    return 0


def _options(args):
    from .claims.common import Options
    from .sat import solver_names

    if args.solver not in solver_names():
        raise _bad(f"unknown solver '{args.solver}'; python-sat offers: {', '.join(solver_names())}")
    if args.timeout is not None and not args.timeout > 0:
        raise _bad("--timeout takes a positive number of seconds")
    return Options(solver=args.solver, timeout=args.timeout, engine=args.engine)


def _widths(programs) -> dict:
    return {(c.pos.file, c.name): c.width for p in programs for c in p.namespace.checks}


# --- commands --------------------------------------------------------------
def cmd_check(args) -> int:
    from .api import expand_paths, load
    from .claims import run_check
    from .report.text import format_results

    opts = _options(args)
    files = expand_paths(args.paths)
    # every file is read before any claim runs; each bad file is named, then exit 2
    programs, errors = [], []
    for f in files:
        try:
            programs.append(load(f))
        except InputError as e:
            errors.append(e)
    if errors:
        status = _report_error(errors[0], args.json)
        for e in errors[1:]:
            sys.stderr.write(f"{e.pos}: {e.message}\n")
        return status
    results = []
    for prog in programs:
        for chk in prog.namespace.checks:
            results.extend(run_check(chk, opts))
    if args.junit:
        from .report.junit import write_junit

        write_junit(results, args.junit)
    _emit({"claims": [r.to_json() for r in results]}, args.json, format_results(results, _widths(programs)))
    return _exit_for(results)


def _find_check(prog, name: str, where: str):
    for c in prog.namespace.checks:
        if c.name == name:
            return c
    names = ", ".join(c.name for c in prog.namespace.checks) or "none"
    raise InputError(Pos(where, 1, 1), f"no check named '{name}' in {where} (checks: {names})")


def cmd_map(args) -> int:
    from .api import load
    from .parse import parse_expr
    from .recovery import map_lines, recovery_map
    from .spec import condition_literal

    opts = _options(args)
    prog = load(args.file)
    chk = _find_check(prog, args.check, args.file)
    if chk.sequence is None:
        raise InputError(chk.pos, f"check {chk.name} has no count line, so it has no unused codes to map")
    cond = None
    if args.when is not None:
        cond = condition_literal(chk.design, parse_expr("--when", args.when))
    if args.limit < 0:
        raise _bad("--limit takes a count of 0 or more")
    result = recovery_map(chk, cond=cond, limit=args.limit, opts=opts)
    if args.dot or args.svg:
        from .report.dot import RenderError, render_svg, state_graph_dot

        dot = state_graph_dot(chk, result)
        if args.dot:
            Path(args.dot).write_text(dot, encoding="utf-8")
        if args.svg:
            try:
                render_svg(dot, args.svg)
            except RenderError as e:
                raise _bad(str(e)) from None
    _emit(result, args.json, "\n".join(map_lines(result)))
    if result.get("locked"):
        return 1
    return 3 if result.get("status") == "open" else 0


def cmd_compare(args) -> int:
    from .compare import compare_files, format_compare

    opts = _options(args)
    result = compare_files(args.old, args.new, opts)
    _emit(result, args.json, format_compare(result))
    if result.get("differs"):
        return 1
    return 3 if result.get("open") else 0


def _parse_int(text: str, what: str) -> int:
    try:
        return int(text, 0)
    except ValueError:
        raise _bad(f"{what}: '{text}' is not a number (decimal, 0b binary or 0x hex)") from None


def _input_settings(groups: list[str], design) -> dict[str, int]:
    """Input bit values from ``--set NAME=VALUE`` options (repeated or comma-separated)."""
    fixed: dict[str, int] = {}
    for item in (it for group in groups for it in group.split(",") if it):
        name, eq, value = item.partition("=")
        if not eq:
            raise _bad(f"--set takes NAME=VALUE, not '{item}'")
        v = _parse_int(value, f"--set {name}")
        if name in design.input_vectors:
            bitsn = design.input_vectors[name]
            if v >> len(bitsn):
                raise _bad(f"--set {name}: {value} does not fit its {len(bitsn)} bits")
            for k, b in enumerate(bitsn):
                fixed[b] = (v >> (len(bitsn) - 1 - k)) & 1
        elif name in design.model.inputs:
            if v not in (0, 1):
                raise _bad(f"--set {name}: a single bit is 0 or 1")
            fixed[name] = v
        else:
            known = ", ".join(design.input_vectors) or "none"
            raise _bad(f"--set {name}: design {design.name} has no input '{name}' (inputs: {known})")
    return fixed


def cmd_sim(args) -> int:
    from .api import load
    from .parse import parse_expr
    from .report.text import bits, inputs_text
    from .simulate import code_value, run, state_of_code
    from .spec import flop_indices
    from tabulate import tabulate

    prog = load(args.file)
    design = prog.designs.get(args.design)
    if design is None:
        names = ", ".join(prog.designs) or "none"
        raise InputError(Pos(args.file, 1, 1), f"no design named '{args.design}' (designs: {names})")
    model = design.model
    code = list(range(len(model.states)))
    if args.code is not None:
        code = flop_indices(design, parse_expr("--code", args.code))
    per_clock: list[dict[str, int]]
    fixed = _input_settings(args.set or [], design)
    if args.trace is not None:
        trace, code_from_trace = _read_trace(args.trace, design, args.code is None)
        if code_from_trace is not None:
            code = code_from_trace
        start_code = trace[0].get("code", 0)
        per_clock = [{**fixed, **{k: int(v) for k, v in (e.get("inputs") or {}).items()}} for e in trace]
        cycles = len(trace) - 1 if args.cycles is None else args.cycles
    else:
        start_code = 0 if args.start is None else _parse_int(args.start, "--from")
        per_clock = [fixed]
        cycles = 16 if args.cycles is None else args.cycles
    if cycles < 0 or cycles > 1_000_000:
        raise _bad("--cycles takes a number from 0 to 1000000")
    if start_code < 0 or start_code >> len(code):
        raise _bad(f"--from {start_code} does not fit the {len(code)}-bit code")
    steps = run(model, state_of_code(model, code, start_code), per_clock, cycles)
    if args.vcd:
        from .report.vcd import write_vcd

        write_vcd(design, steps, args.vcd)
    entries = [{"clock": s.clock, "code": code_value(model, code, s.state), "inputs": s.inputs, "outputs": s.outputs}
               for s in steps]
    rows = [[e["clock"], f"{bits(e['code'], len(code))} ({e['code']})", inputs_text(e["inputs"]),
             inputs_text(e["outputs"])] + (["SR fault: " + ", ".join(s.faults)] if s.faults else [])
            for e, s in zip(entries, steps)]
    text = tabulate(rows, headers=["clock", "code", "inputs", "outputs"], tablefmt="simple")
    _emit({"trace": entries}, args.json, text)
    return 0


def _read_trace(path: str, design, want_code: bool):
    """The trace list of a trace file, and the code order of its check where it names one."""
    where = Pos(path, 1, 1)
    try:
        data = json.loads(Path(path).read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(where, f"no such file '{path}'") from None
    except (OSError, UnicodeDecodeError) as e:
        raise InputError(where, f"cannot read '{path}': {e}") from None
    except json.JSONDecodeError as e:
        raise InputError(Pos(path, e.lineno, e.colno), f"not JSON: {e.msg}") from None
    code = None
    if isinstance(data, dict) and isinstance(data.get("claims"), list) and len(data["claims"]) == 1:
        data = data["claims"][0]
    if isinstance(data, dict):
        if want_code and isinstance(data.get("file"), str) and isinstance(data.get("check"), str):
            try:
                from .api import load

                prog = load(data["file"])
                for c in prog.namespace.checks:
                    if c.name == data["check"] and c.design.name == design.name:
                        code = list(c.code)
            except InputError:
                code = None
        data = data.get("trace")
    if not isinstance(data, list) or not data or not all(isinstance(e, dict) for e in data):
        raise InputError(where, "a trace file holds a trace list, or a claim object with a 'trace'")
    for e in data:
        if not isinstance(e.get("code", 0), int) or not isinstance(e.get("inputs") or {}, dict):
            raise InputError(where, "each trace entry has an integer 'code' and an 'inputs' object")
        for k, v in (e.get("inputs") or {}).items():
            if k not in design.model.inputs or v not in (0, 1):
                raise InputError(where, f"trace input '{k}'={v!r} is not an input bit of {design.name} set to 0 or 1")
    return data, code


def demo_path() -> Path:
    """The shipped example, in a checkout or an installed wheel."""
    here = Path(__file__).resolve().parent
    for cand in (here.parent / "cases" / "demo.cnl", here / "cases" / "demo.cnl"):
        if cand.is_file():
            return cand
    raise FileNotFoundError("the shipped example cases/demo.cnl is missing from this installation")


def cmd_demo(args) -> int:
    path = demo_path()
    if not args.json:
        print(f"countersign {__version__}: checking the shipped example {path.name}")
        print("(the bottle-batch counter of a brewery filler line, with a re-implementation to compare)\n")
    args.paths = [str(path)]
    args.junit = None
    status = cmd_check(args)
    if not args.json:
        print("\nThe refuted always claim is deliberate: it shows what a refutation and its trace look like.")
        print(f"Try: countersign map {path} batch    (every unused code and how soon it recovers)")
    # the demo succeeded when it ran; its verdicts are the example's, printed above
    return 0 if status in (0, 1, 3) else status


def cmd_cnf(args) -> int:
    from .api import load
    from .claims.cnf import export_cnf

    prog = load(args.file)
    chk = _find_check(prog, args.check, args.file)
    claims = [c for c in chk.claims if c.pos.line == args.claim]
    if not claims:
        lines = ", ".join(str(c.pos.line) for c in chk.claims) or "none"
        raise InputError(Pos(args.file, args.claim, 1), f"check {chk.name} has no claim on line {args.claim} (claims on lines: {lines})")
    try:
        stats = export_cnf(chk, claims[0], args.output)
    except ValueError as e:
        raise InputError(claims[0].pos, str(e)) from None
    _emit(stats, args.json, f"wrote {args.output}: {stats.get('vars')} variables, {stats.get('clauses')} clauses "
                            "(satisfiable means refuted, unsatisfiable proved; the header says more)")
    return 0


# --- argument parsing --------------------------------------------------------
def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="countersign", description="Prove or refute claims about counter netlists (.cnl files).")
    p.add_argument("--version", action="version", version=f"countersign {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    def common(sp, engine: bool = True):
        sp.add_argument("--json", action="store_true", help="one JSON document on stdout, nothing else there")
        sp.add_argument("--timeout", type=float, default=None, metavar="S", help="seconds per claim; a claim that runs out is open")
        sp.add_argument("--solver", default=DEFAULT_SOLVER, metavar="NAME", help=f"python-sat solver (default {DEFAULT_SOLVER})")
        if engine:
            sp.add_argument("--engine", choices=["auto", "sat", "explicit"], default="auto",
                            help="engine for recover claims and maps (default: chosen per claim)")

    sp = sub.add_parser("check", help="every claim of every check block")
    sp.add_argument("paths", nargs="+", metavar="FILE|FOLDER")
    sp.add_argument("--junit", metavar="FILE", help="also write a JUnit XML report, one test per claim")
    common(sp)
    sp.set_defaults(func=cmd_check)

    sp = sub.add_parser("map", help="every unused code: where it goes and how soon it recovers")
    sp.add_argument("file", metavar="FILE")
    sp.add_argument("check", metavar="CHECK")
    sp.add_argument("--when", metavar="COND", help="input condition (default: the first recover claim's)")
    sp.add_argument("--limit", type=int, default=256, metavar="N", help="list at most N unused codes (default 256)")
    sp.add_argument("--dot", metavar="FILE", help="write the state graph in Graphviz DOT")
    sp.add_argument("--svg", metavar="FILE", help="render the state graph to SVG (needs Graphviz's dot)")
    common(sp)
    sp.set_defaults(func=cmd_map)

    sp = sub.add_parser("compare", help="designs of the same name in two files: equal or not, and where")
    sp.add_argument("old", metavar="OLD")
    sp.add_argument("new", metavar="NEW")
    common(sp, engine=False)
    sp.set_defaults(func=cmd_compare, engine="auto")

    sp = sub.add_parser("sim", help="clock a design, print a table")
    sp.add_argument("file", metavar="FILE")
    sp.add_argument("design", metavar="DESIGN")
    sp.add_argument("--from", dest="start", metavar="CODE", help="starting code (default 0)")
    sp.add_argument("--code", metavar="VEC", help="flop bits the code spells, most significant first (default: all, in order)")
    sp.add_argument("--set", action="append", metavar="NAME=VALUE", help="hold an input bit or vector at VALUE every clock")
    sp.add_argument("--cycles", type=int, default=None, metavar="N", help="clocks to run (default 16)")
    sp.add_argument("--trace", metavar="FILE", help="replay the inputs and start of a JSON trace printed by check")
    sp.add_argument("--vcd", metavar="FILE", help="write the run as an IEEE 1364 value change dump")
    sp.add_argument("--json", action="store_true", help="one JSON document on stdout")
    sp.set_defaults(func=cmd_sim)

    sp = sub.add_parser("demo", help="check the shipped example")
    common(sp)
    sp.set_defaults(func=cmd_demo)

    sp = sub.add_parser("cnf", help="write one claim's SAT problem as DIMACS CNF")
    sp.add_argument("file", metavar="FILE")
    sp.add_argument("check", metavar="CHECK")
    sp.add_argument("--claim", type=int, required=True, metavar="LINE", help="the claim's line number")
    sp.add_argument("-o", "--output", required=True, metavar="FILE", help="where to write the CNF")
    sp.add_argument("--json", action="store_true", help="one JSON document on stdout")
    sp.set_defaults(func=cmd_cnf)
    return p


def _report_error(e: InputError, as_json: bool) -> int:
    """``FILE:LINE:COL: message`` on stderr (and the JSON error on stdout); exit status 2."""
    sys.stderr.write(f"{e.pos}: {e.message}\n")
    if as_json:
        sys.stdout.write(json.dumps(e.to_json()) + "\n")
    return 2


def main(argv: Optional[Sequence[str]] = None) -> int:
    """Run the command line; returns the exit status."""
    argv = list(sys.argv[1:] if argv is None else argv)
    as_json = "--json" in argv
    try:
        parser = build_parser()
        args = parser.parse_args(argv)
        if not getattr(args, "func", None):
            parser.print_help()
            return 2
        return args.func(args)
    except InputError as e:
        return _report_error(e, as_json)
    except RecursionError:
        return _report_error(InputError(Pos(CMDLINE, 1, 1), "input nests too deeply to process"), as_json)
    except OSError as e:  # an output file (--vcd, --dot, --svg, --junit, -o) that cannot be written
        where = e.filename if isinstance(e.filename, str) else CMDLINE
        return _report_error(InputError(Pos(where, 1, 1), f"cannot write '{where}': {e.strerror or e}"), as_json)
    except KeyboardInterrupt:
        sys.stderr.write("interrupted\n")
        return 130
    except Exception as e:  # a bug in countersign, not in the input
        if os.environ.get("COUNTERSIGN_DEBUG"):
            raise
        sys.stderr.write(f"countersign: internal error: {type(e).__name__}: {e}\n"
                         "this is a bug in countersign; set COUNTERSIGN_DEBUG=1 to see where\n")
        return 70


def entry() -> None:
    """Console-script entry point."""
    sys.exit(main())
