"""The command line: a thin layer over the Python API.

Exit status: 0 every claim proved (map: nothing locked; compare: nothing
differs; sim: ran), 1 a claim refuted (a lock, a difference), 3 a claim left
open and none refuted, 2 bad input or command line (``FILE:LINE:COL: message``
on stderr; with ``--json`` also ``{"error": ...}`` on stdout).
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
from typing import Callable, Optional, Sequence, Union

from . import api
from .api import InputError, Pos, __version__

CMDLINE = "<command line>"


class _Parser(argparse.ArgumentParser):
    def error(self, message: str):  # argparse would print usage and exit
        raise InputError(Pos(CMDLINE, 1, 1), message)


def _emit(as_json: bool, doc: Union[str, Callable[[], str]], text: Union[str, Callable[[], str]]) -> None:
    """Print the JSON document or the text; either may be a function, so only the one asked for is
    built (the text report of a check loads modules and walks results that --json never shows)."""
    if as_json:
        sys.stdout.write(doc() if callable(doc) else doc)
        return
    text = text() if callable(text) else text
    sys.stdout.write(api.shown(text) + ("\n" if text and not text.endswith("\n") else ""))


def _options(args) -> api.Options:
    return api.options(args.solver, args.timeout, getattr(args, "engine", "auto"), isolate=True,
                       radix=_radix(args))


def _radix(args) -> str:
    """How text output shows codes: --radix, else auto (binary up to 8 bits, hex above)."""
    return getattr(args, "radix", None) or "auto"


def _columns() -> Optional[int]:
    """The terminal's width that tables must fit: when stdout is a terminal or COLUMNS is set."""
    if "COLUMNS" in os.environ or sys.stdout.isatty():
        return shutil.get_terminal_size().columns
    return None


def _live(args) -> bool:
    """A live progress line per running claim: only on a terminal's stderr, never with --json or --quiet."""
    return not args.json and not getattr(args, "quiet", False) and sys.stderr.isatty()


def _n(n: int, noun: str) -> str:
    """``1 flop``, ``3 flops``: a counted noun for a message."""
    return f"{n} {noun}" if n == 1 else f"{n} {noun}s"


def _html_radix(args) -> str:
    """The HTML page shows codes as the text report does: --radix, else auto."""
    return getattr(args, "radix", None) or "auto"


# --- commands --------------------------------------------------------------
def cmd_check(args) -> int:
    try:
        run = api.check_files(args.paths, _options(args), getattr(args, "jobs", 1), keep_going=bool(args.junit),
                              progress=_live(args), cluster=getattr(args, "cluster", None))
    except InputError as e:  # no claims at all, a missing path: a CI job still gets its report
        if args.junit:
            api.write_junit_error(e, args.junit)
            return _report_error(e, args.json)
        raise
    if args.junit:
        api.write_junit(run, args.junit, getattr(args, "open_ok", False))
    if getattr(args, "html", None) and not run.errors:
        api.write_html_check(run, args.html, _options(args), _html_radix(args))
    if run.errors:  # every bad file is named (with --junit the claims of the good ones ran for its report)
        status = _report_error(run.errors[0], args.json)
        for e in run.errors[1:]:
            sys.stderr.write(api.shown(f"{e.pos}: {e.message}") + "\n")
        return status
    _emit(args.json, lambda: api.json_check(run), lambda: api.render_check(run, _radix(args), _columns()))
    return run.status


def cmd_map(args) -> int:
    m = api.map_check(args.file, args.check, args.when, args.limit, _options(args),
                      graph=bool(args.dot or args.svg or args.html), progress=_live(args))
    if args.dot:
        api.write_dot(m, args.dot)
    if args.svg:
        api.write_svg(m, args.svg)
    if args.html:
        api.write_html_map(m, args.html, args.file, _options(args), _html_radix(args))
    _emit(args.json, lambda: api.json_map(m), lambda: api.render_map(m, _radix(args)))
    return m.status


def cmd_compare(args) -> int:
    doc = api.compare_files(args.old, args.new, _options(args))
    _emit(args.json, lambda: api.json_compare(doc), lambda: api.render_compare(doc))
    if doc.get("differs"):
        return 1
    return 3 if doc.get("open") else 0


def _seconds(args) -> Optional[float]:
    """A validated --timeout (the same bounds as check's)."""
    return api.options(timeout=args.timeout).timeout


def cmd_sim(args) -> int:
    run = api.simulate(args.file, args.design, args.start, args.code, args.set or [], args.cycles, args.trace,
                       timeout=_seconds(args), check=args.check, claim=args.claim, inputs=args.inputs)
    if args.vcd:
        api.write_vcd(run, args.vcd)
    out = api.json_sim(run) if args.json else api.render_sim(run, args.events, _radix(args))  # only the one asked for
    _emit(args.json, out, out)
    return 0


def cmd_demo(args) -> int:
    path = api.demo_path()
    if not args.json:
        print(f"countersign {__version__}: checking the shipped example {path.name}")
        print("(the bottle-batch counter of a brewery filler line, with a re-implementation to compare)\n")
    args.paths = [str(path)]
    args.junit = args.html = None
    status = cmd_check(args)
    if not args.json:
        print("\nThe refuted always claim is deliberate: it shows what a refutation and its trace look like.")
        print(f"Try: countersign map {path} batch    (every unused code and how soon it recovers)")
    # the demo succeeded when it ran; its verdicts are the example's, printed above
    return 0 if status in (0, 1, 3) else status


def cmd_export(args) -> int:
    if args.claim is None:
        stats = api.export_design(args.file, args.name, args.output, timeout=_seconds(args))
        _emit(args.json, api.report.json.dumps(stats),
              f"wrote {args.output}: design {stats['design']}, {_n(stats['inputs'], 'input bit')}, "
              f"{_n(stats['flops'], 'flop')}, {_n(stats['outputs'], 'output bit')}")
        return 0
    stats = api.export_claim(args.file, args.name, args.claim, args.output, timeout=_seconds(args))
    if stats.get("format") == "aiger":
        text = (f"wrote {args.output}: {stats['latches']} latches, {stats['ands']} AND gates; "
                f"{stats['property']} (the comments say more)")
    else:
        text = (f"wrote {args.output}: {stats.get('vars')} variables, {stats.get('clauses')} clauses "
                "(satisfiable means refuted, unsatisfiable proved; the header says more)")
    _emit(args.json, api.report.json.dumps(stats), text)
    return 0


# --- argument parsing --------------------------------------------------------
def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="countersign", description="Prove or refute claims about counter netlists (.cnl files).")
    p.add_argument("--version", action="version", version=f"countersign {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    def common(sp, engine: bool = True):
        sp.add_argument("--json", action="store_true", help="one JSON document on stdout, nothing else there")
        sp.add_argument("--quiet", "-q", action="store_true",
                        help="no live progress lines on stderr (they are shown only on a terminal)")
        sp.add_argument("--timeout", type=float, default=None, metavar="S", help="seconds per claim; a claim that runs out is open")
        sp.add_argument("--solver", default=api.DEFAULT_SOLVER, metavar="NAME",
                        help=f"python-sat solver (default {api.DEFAULT_SOLVER})")
        if engine:
            sp.add_argument("--engine", choices=["auto", "sat", "explicit"], default="auto",
                            help="engine for recover claims and maps, and for count, settle, glitchfree and "
                                 "equal ... after on asynchronous designs (default: chosen per claim)")

    def radix_option(sp):
        sp.add_argument("--radix", choices=api.RADIXES, default=None,
                        help="how codes are shown; auto (the default, text and HTML alike) is binary up to "
                             "8 bits and hex above, with the decimal beside it; JSON keeps integers")

    def html_options(sp):
        sp.add_argument("--html", metavar="FILE", help="also write one self-contained HTML report")
        radix_option(sp)

    sp = sub.add_parser("check", help="every claim of every check block")
    sp.add_argument("paths", nargs="+", metavar="FILE|FOLDER")
    sp.add_argument("--junit", metavar="FILE", help="also write a JUnit XML report, one test per claim "
                                                     "(an open claim is a failure of type open)")
    sp.add_argument("--open-ok", action="store_true",
                    help="in the JUnit report, an open claim is skipped rather than failed (the exit status stays 3)")
    sp.add_argument("--jobs", type=int, default=os.cpu_count() or 1, metavar="N",
                    help="claims run at once (default: the number of cores); verdicts do not depend on it")
    sp.add_argument("--cluster", metavar="ADDRESS",
                    help="run the claims on the Dask scheduler at ADDRESS instead (tcp://HOST:PORT; "
                         "needs countersign[cluster]); verdicts do not depend on it")
    html_options(sp)
    common(sp)
    sp.set_defaults(func=cmd_check)

    sp = sub.add_parser("map", help="every unused code: where it goes and how soon it recovers")
    sp.add_argument("file", metavar="FILE")
    sp.add_argument("check", metavar="CHECK")
    sp.add_argument("--when", metavar="COND", help="input condition (default: the first recover claim's)")
    sp.add_argument("--limit", type=int, default=256, metavar="N", help="list at most N unused codes (default 256)")
    sp.add_argument("--dot", metavar="FILE", help="write the state graph in Graphviz DOT")
    sp.add_argument("--svg", metavar="FILE", help="render the state graph to SVG (needs Graphviz's dot)")
    html_options(sp)
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
    sp.add_argument("--from", dest="start", metavar="CODE", help="starting code (default 0); several (0,5,9 or 0..15) "
                                                                 "run together, a table each")
    sp.add_argument("--code", metavar="VEC", help="flop bits the code spells, most significant first (default: as the "
                                                  "file's checks of the design order them, else in declaration order)")
    sp.add_argument("--check", metavar="NAME", help="read codes in the bit order of check NAME's code line")
    sp.add_argument("--inputs", metavar="FILE", help="inputs per clock from a CSV (header of input names) or JSON "
                                                     "(a list of objects) file, one row per clock")
    sp.add_argument("--set", action="append", metavar="NAME=VALUE", help="hold an input bit or vector at VALUE every clock")
    sp.add_argument("--cycles", type=int, default=None, metavar="N", help="clocks to run (default 16)")
    sp.add_argument("--trace", metavar="FILE", help="replay the inputs and start of a JSON trace printed by check "
                                                    "(a claim, or the whole check --json document)")
    sp.add_argument("--claim", type=int, metavar="LINE", help="with --trace of a whole document: the claim on LINE")
    sp.add_argument("--vcd", metavar="FILE", help="write the run as an IEEE 1364 value change dump")
    sp.add_argument("--events", action="store_true",
                    help="an asynchronous design: print the firings between clocks (unit delays)")
    radix_option(sp)
    sp.add_argument("--json", action="store_true", help="one JSON document on stdout")
    sp.add_argument("--timeout", type=float, default=None, metavar="S",
                    help="seconds for the whole run, reading the file included; past it nothing is written (exit 3)")
    sp.set_defaults(func=cmd_sim)

    sp = sub.add_parser("demo", help="check the shipped example")
    common(sp)
    sp.set_defaults(func=cmd_demo)

    sp = sub.add_parser("export", help="a design NAME to .aag/.aig/.blif/.v/.cnl, or a claim (--claim LINE of "
                                        "check NAME) to .cnf DIMACS or .aag/.aig AIGER")
    sp.add_argument("file", metavar="FILE")
    sp.add_argument("name", metavar="NAME", help="the design, or the check (with --claim)")
    sp.add_argument("--claim", type=int, metavar="LINE", help="the claim's line number")
    sp.add_argument("-o", "--output", required=True, metavar="OUT", help="where to write; the extension picks the format")
    sp.add_argument("--json", action="store_true", help="one JSON document on stdout")
    sp.add_argument("--timeout", type=float, default=None, metavar="S",
                    help="seconds for the whole export, reading the file included; past it nothing is written (exit 3)")
    sp.set_defaults(func=cmd_export)
    return p


def _report_error(e: InputError, as_json: bool) -> int:
    """``FILE:LINE:COL: message`` on stderr (and the JSON error on stdout); exit status 2."""
    sys.stderr.write(api.shown(f"{e.pos}: {e.message}") + "\n")
    if as_json:
        sys.stdout.write(api.json_error(e))
    return 2


def main(argv: Optional[Sequence[str]] = None) -> int:
    """Run the command line; returns the exit status."""
    argv = list(sys.argv[1:] if argv is None else argv)
    for stream in (sys.stdout, sys.stderr):  # a file name that is not UTF-8 prints as \xNN, never fails
        if hasattr(stream, "reconfigure"):
            stream.reconfigure(errors="backslashreplace")
    as_json = "--json" in argv
    try:
        parser = build_parser()
        args = parser.parse_args(argv)
        if not getattr(args, "func", None):
            parser.print_help()
            return 2
        with api.output_transaction():  # output files appear only when the command gets this far
            return args.func(args)
    except InputError as e:
        return _report_error(e, as_json)
    except api.Unfinished as e:  # sim or export past --timeout: open, nothing written
        sys.stderr.write(f"{CMDLINE}:1:1: {e}\n")
        if as_json:
            sys.stdout.write(api.report.json.dumps({"status": "open", "message": str(e)}))
        return 3
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
    leave(main())


def leave(status: int) -> None:
    """End the process with ``status`` once the output is flushed and the exit handlers have run,
    without taking the interpreter apart: freeing every graph, clause list and module one object
    at a time took 0.05 to 0.2 s of a check's process, after its last line was printed. Python's
    ordinary exit is kept when a flush fails (it reports the closed stream as before), when
    another thread still runs (it waits for that thread), and under a profiler, tracer or
    debugger (``python -m cProfile`` writes its numbers after the program returns)."""
    import atexit
    import threading
    try:
        sys.stdout.flush()
        sys.stderr.flush()
    except (OSError, ValueError):
        sys.exit(status)
    if threading.active_count() > 1 or sys.getprofile() is not None or sys.gettrace() is not None:
        sys.exit(status)
    atexit._run_exitfuncs()
    try:
        sys.stdout.flush()
        sys.stderr.flush()
    except (OSError, ValueError):
        sys.exit(status)
    os._exit(status)
