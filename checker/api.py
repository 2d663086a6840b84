"""The Python API: every command of the command line is one function here.

    >>> import checker
    >>> prog = checker.load("cases/demo.cnl")
    >>> for chk in prog.checks:
    ...     for r in chk.run(timeout=30):
    ...         print(r.check, r.claim, r.status)

``check_files``, ``map_check``, ``compare_files``, ``simulate`` and
``export_claim`` do what ``countersign check``, ``map``, ``compare``, ``sim``
and ``export`` do, and return records (``Result``, map and compare documents,
``SimRun``) that the ``render_*`` and ``write_*`` functions turn into the
command line's text, JSON and files. Bad input raises :class:`InputError`.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Iterable, Optional, Sequence

from .about import __version__
from .errors import InputError, Pos
from .fileio import collected, output_transaction, shown, write_output
from .engines.names import DEFAULT_SOLVER

# Everything else is imported by the function that needs it, so that `countersign --help`
# and `--version` start without loading the solvers, NumPy, lark or SymPy, and a command
# loads only what its work needs. These names are importable from here all the same:
_LAZY = {
    "report": ("", "report"), "Options": ("claims.common", "Options"), "CODE_RADIXES": ("claims.common", "CODE_RADIXES"),
    "Result": ("claims.result", "Result"), "OPEN": ("claims.result", "OPEN"), "PROVED": ("claims.result", "PROVED"),
    "REFUTED": ("claims.result", "REFUTED"), "Check": ("elab", "Check"), "Design": ("elab", "Design"),
    "Namespace": ("elab", "Namespace"), "solver_names": ("engines.sat", "solver_names"),
    "SimRun": ("tools.simulation", "SimRun"), "MAX_CYCLES": ("tools.simulation", "MAX_CYCLES"),
    "MAX_SIM_VALUES": ("tools.simulation", "MAX_SIM_VALUES"), "MapDoc": ("tools.codemap", "MapDoc"),
    "StateGraph": ("tools.stategraph", "StateGraph"),
}

if TYPE_CHECKING:  # for readers and type checkers only: annotations are never evaluated here
    from .claims.common import Options
    from .claims.result import Result
    from .elab import Check, Design, Namespace
    from .tools.simulation import SimRun
    from .tools.stategraph import StateGraph


def __getattr__(name: str):
    """The names above, imported when first asked for (PEP 562)."""
    if name not in _LAZY:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    import importlib
    module, attr = _LAZY[name]
    mod = importlib.import_module(f"{__package__}.{module or attr}")
    value = mod if not module else getattr(mod, attr)
    globals()[name] = value
    return value

__all__ = [
    "__version__", "DEFAULT_SOLVER", "OPEN", "PROVED", "REFUTED", "CheckHandle", "CheckRun", "InputError",
    "MapRun", "Options", "Pos", "Program", "Result", "SimRun", "Unfinished", "check_files", "compare_files", "demo_path",
    "exit_status", "expand_paths", "export_claim", "export_design", "load", "map_check", "options",
    "output_transaction", "shown", "simulate", "solver_names",
]

MAX_TIMEOUT = 1e6
"""Largest --timeout accepted, in seconds (about 11.5 days)."""

MAX_CODE_BITS = 4096
"""Widest code (the widest vector)."""

MAX_JOBS = 256
"""Most claims ``check --jobs`` runs at once."""


SKIPPED_FOLDERS = frozenset({"node_modules", "site-packages", "__pycache__"})
"""Folder names a folder scan never enters (besides hidden folders and virtual environments)."""


# --- programs and checks --------------------------------------------------------

@dataclass
class CheckHandle:
    """One check block, ready to run."""

    spec: Check

    @property
    def name(self) -> str:
        return self.spec.name

    def run(self, timeout: Optional[float] = None, solver: str = DEFAULT_SOLVER, engine: str = "auto") -> list[Result]:
        """Prove or refute every claim of this check; one Result per claim, in written order."""
        from .claims import run_check
        from .claims.common import Options
        return run_check(self.spec, Options(solver=solver, timeout=timeout, engine=engine))


@dataclass
class Program:
    """A file named by the user, with everything it uses."""

    namespace: Namespace

    @property
    def path(self) -> str:
        return self.namespace.path

    @property
    def designs(self) -> dict[str, Design]:
        return self.namespace.designs

    @property
    def checks(self) -> list[CheckHandle]:
        return [CheckHandle(c) for c in self.namespace.checks]

    def check(self, name: str) -> CheckHandle:
        for c in self.namespace.checks:
            if c.name == name:
                return CheckHandle(c)
        raise KeyError(name)

    def find_check(self, name: str) -> Check:
        """The elaborated check ``name``; an InputError listing the checks when there is none."""
        for c in self.namespace.checks:
            if c.name == name:
                return c
        names = ", ".join(c.name for c in self.namespace.checks) or "none"
        raise InputError(Pos(self.path, 1, 1), f"no check named '{name}' in {self.path} (checks: {names})")

    def find_design(self, name: str) -> Design:
        """The elaborated design ``name``; an InputError listing the designs when there is none."""
        e = self.namespace.part_only.get(name)
        if e is not None:
            raise InputError(Pos(self.path, 1, 1), f"design {name} takes a clock from its own input, so it "
                                                   f"runs only as a part ({e.pos}: {e.message})")
        design = self.designs.get(name)
        if design is None:
            names = ", ".join(self.designs) or "none"
            raise InputError(Pos(self.path, 1, 1), f"no design named '{name}' (designs: {names})")
        return design


def load(path: str) -> Program:
    """Read and elaborate ``path`` and its ``use`` files; raises InputError on bad input."""
    from .elab import load_namespace
    return Program(load_namespace(str(path)))


def options(solver: str = DEFAULT_SOLVER, timeout: Optional[float] = None, engine: str = "auto",
            isolate: bool = False, radix: str = "dec") -> Options:
    """Validated run options; an InputError (at ``<command line>``) for a bad solver or timeout.

    ``isolate`` runs every claim, map and comparison in a child process even
    without a timeout, so that an interrupt (Ctrl-C) stops a solver call
    cleanly; the command line asks for it. ``radix`` is how evidence lines show codes
    (``dec``, ``bin``, ``hex``, or ``auto``: binary up to 8 bits, hex above).
    """
    from .claims.common import CODE_RADIXES, Options
    from .engines.sat import solver_names
    where = Pos("<command line>", 1, 1)
    if solver not in solver_names():
        raise InputError(where, f"unknown solver '{solver}'; python-sat offers: {', '.join(solver_names())}")
    if timeout is not None and not (0 < timeout <= MAX_TIMEOUT):  # also refuses nan and inf
        raise InputError(where, f"--timeout takes a number of seconds above 0 and at most {MAX_TIMEOUT:g}")
    if engine not in ("auto", "sat", "explicit"):
        raise InputError(where, f"unknown engine '{engine}'; the engines are auto, sat, explicit")
    if radix not in CODE_RADIXES:
        raise InputError(where, f"unknown radix '{radix}'; the radixes are {', '.join(CODE_RADIXES)}")
    return Options(solver=solver, timeout=timeout, engine=engine, isolate=isolate, radix=radix)


def _skipped(folder: Path) -> bool:
    name = folder.name
    return name.startswith(".") or name in SKIPPED_FOLDERS or (folder / "pyvenv.cfg").is_file()


def _cnl_files(folder: Path) -> list[str]:
    found: list[str] = []
    for root, dirs, files in os.walk(folder):
        dirs[:] = sorted(d for d in dirs if not _skipped(Path(root) / d))
        found += [str(Path(root) / f) for f in files if f.endswith(".cnl")]
    return sorted(found)


def expand_paths(paths: Iterable[str]) -> list[str]:
    """Files named on the command line: a folder stands for its .cnl files, recursively, sorted.

    Hidden folders, virtual environments (a folder holding ``pyvenv.cfg``) and
    :data:`SKIPPED_FOLDERS` are not searched.
    """
    out: list[str] = []
    for p in paths:
        q = Path(p)
        if q.is_dir():
            out.extend(_cnl_files(q))
        elif not q.exists():
            raise InputError(Pos(p, 1, 1), f"no such file or folder '{p}'")
        else:
            out.append(p)
    return out


# --- check ----------------------------------------------------------------------

@dataclass
class CheckRun:
    """What ``check`` found: every claim's result in order, and the files that could not be read."""

    results: list[Result] = field(default_factory=list)
    errors: list[InputError] = field(default_factory=list)
    widths: dict[tuple[str, str], int] = field(default_factory=dict)  # (file, check) -> code width
    files: list[str] = field(default_factory=list)
    unread: list[InputError] = field(default_factory=list)  # files not read within --timeout: open

    @property
    def status(self) -> int:
        """Exit status: 1 a claim refuted, 3 a claim (or a whole file) open and none refuted, else 0."""
        s = exit_status(self.results)
        return 3 if s == 0 and self.unread else s


def check_files(paths: Sequence[str], opts: Optional[Options] = None, jobs: int = 1,
                keep_going: bool = False, progress: bool = False, cluster: Optional[str] = None) -> CheckRun:
    """Read every file (folders searched for .cnl files), then prove or refute every claim,
    up to ``jobs`` claims at once, or on the Dask scheduler at address ``cluster``
    (verdicts and their order depend on neither).

    Every file is read before any claim runs; when some cannot be read,
    ``errors`` names each and no claim runs, unless ``keep_going`` (the
    command line's ``--junit``, whose report puts the unreadable files beside
    the claims of the others). A run whose files hold no claim at
    all is an InputError (``no claims in ...``), so a CI job pointed at the
    wrong place fails. With ``progress``, a live line per running claim goes to stderr
    (:mod:`checker.report.progress`; the caller decides that stderr is a terminal).
    """
    from .claims import run_claims
    from .claims.common import Options
    from .tools.loading import LoadTimeout, load_within
    opts = opts or Options()
    files = expand_paths(paths)
    out = CheckRun(files=files)
    programs = []
    for f in files:
        try:
            programs.append(Program(load_within(f, opts.timeout)))
        except LoadTimeout as e:
            out.unread.append(e)
        except InputError as e:
            out.errors.append(e)
    if out.errors and not keep_going:
        return out
    checks = [c for p in programs for c in p.namespace.checks]
    if out.errors and not any(c.claims for c in checks):
        return out
    if not any(c.claims for c in checks) and not out.unread:
        where = ", ".join(paths) if paths else "the command line"
        raise InputError(Pos(files[0] if files else "<command line>", 1, 1), f"no claims in {where}")
    if not 1 <= jobs <= MAX_JOBS:
        raise InputError(Pos("<command line>", 1, 1), f"--jobs takes a count from 1 to {MAX_JOBS}")
    for c in checks:
        out.widths[(c.pos.file, c.name)] = c.width
    pairs = [(c, cl) for c in checks for cl in c.claims]
    if progress and cluster is None:
        from .report.progress import LiveProgress
        with LiveProgress() as live:
            out.results.extend(run_claims(pairs, opts, jobs, live))
    else:
        out.results.extend(run_claims(pairs, opts, jobs, cluster=cluster))
    return out


def exit_status(results: Iterable[Result]) -> int:
    """0 every claim proved, 1 some refuted, 3 some open and none refuted."""
    from .claims.result import OPEN, REFUTED
    statuses = {r.status for r in results}
    return 1 if REFUTED in statuses else 3 if OPEN in statuses else 0


# --- map ------------------------------------------------------------------------

@dataclass
class MapRun:
    """A map document (the contract's ``map --json``) and, when asked for, the state graph."""

    doc: dict
    graph: Optional[StateGraph] = None
    auto_radix: str = "auto"  # what --radix auto means for this check (hex for count bcd)

    @property
    def status(self) -> int:
        """Exit status: 1 a lock, 3 undecided, else 0."""
        if self.doc.get("locked"):
            return 1
        return 3 if self.doc.get("status") == "open" else 0


def _map_work(chk: Check, cond: Optional[int], limit: int, opts: Options, want_graph: bool):
    from .tools.codemap import recovery_map
    from .tools.stategraph import state_graph
    def work(budget):
        doc = recovery_map(chk, cond=cond, limit=limit, opts=opts, budget=budget)
        graph = state_graph(chk, doc) if want_graph else None
        return dict(doc), graph  # the analysis stays here: it can be large
    return work


def map_check(path: str, check: str, when: Optional[str] = None, limit: int = 256,
              opts: Optional[Options] = None, graph: bool = False, progress: bool = False) -> MapRun:
    """Every unused code of ``check`` in ``path``: where it goes and how soon it recovers.

    ``when`` is a condition over the inputs (default: the check's first
    recover claim's, else the stepping inputs). ``opts.timeout`` bounds the
    whole map through the same hard stop claims use; a map that runs out is
    ``"status": "open"``. With ``progress``, a live line on stderr while it runs.
    """
    from .claims.common import Options, check_radix
    from .elab.spec import condition_literal
    from .engines.budget import run_bounded
    from .lang.parse import parse_expr
    from .tools.codemap import MapDoc
    from .tools.loading import LoadTimeout, load_within
    opts = opts or Options()
    if limit < 0:
        raise InputError(Pos("<command line>", 1, 1), "--limit takes a count of 0 or more")
    try:
        chk = Program(load_within(path, opts.timeout)).find_check(check)
    except LoadTimeout as e:  # open, like a map that runs out
        return MapRun({"check": check, "width": None, "sequence_length": None, "unused_count": None,
                       "worst": None, "locked": None, "unused": [], "status": "open",
                       "summary": f"{e.pos.file}: {e.message}"})
    if chk.sequence is None:
        raise InputError(chk.pos, f"check {chk.name} has no count line, so it has no unused codes to map")
    cond = None if when is None else condition_literal(chk.design, parse_expr("--when", when))
    work = _map_work(chk, cond, limit, opts, graph)
    if progress:
        from .report.progress import LiveProgress
        with LiveProgress() as live:
            live.started(0, f"map {chk.name}", opts.timeout)
            value, _, finished = run_bounded(work, opts.timeout, opts.isolate, lambda info: live.told(0, info))
    else:
        value, _, finished = run_bounded(work, opts.timeout, opts.isolate)
    if not finished:
        doc = MapDoc({"check": chk.name, "width": chk.width, "sequence_length": chk.sequence.length(),
                      "unused_count": (1 << chk.width) - chk.sequence.length(), "worst": None,
                      "locked": None, "unused": [], "status": "open"})
        return MapRun(dict(doc), None)
    doc, g = value
    return MapRun(doc, g, check_radix(chk, "auto"))


# --- compare --------------------------------------------------------------------

def compare_files(old: str, new: str, opts: Optional[Options] = None) -> dict:
    """Designs of the same name in two files: equal or not, and where; claims whose verdict changed.

    ``opts.timeout`` bounds each design's comparison and each claim; what runs
    out is reported open (``"open": true``), never equal.
    """
    from .claims.common import Options
    from .tools import compare as _compare
    return _compare.compare_files(old, new, opts or Options())


# --- sim ------------------------------------------------------------------------

def _cmdline(message: str) -> InputError:
    return InputError(Pos("<command line>", 1, 1), message)


def simulate(path: str, design: str, start: Optional[str] = None, code: Optional[str] = None,
             settings: Sequence[str] = (), cycles: Optional[int] = None, trace: Optional[str] = None,
             timeout: Optional[float] = None, check: Optional[str] = None, claim: Optional[int] = None,
             inputs: Optional[str] = None) -> SimRun:
    """Clock design ``design`` of ``path``: from code ``start`` (several: ``0,5,9`` or ``0..15``,
    clocked together bit-parallel) with inputs held at ``settings`` or read per clock from the
    CSV or JSON file ``inputs``, for ``cycles`` clocks (default 16, or one per row of ``inputs``);
    or replaying the start and inputs of a JSON ``trace`` (a whole ``check --json`` document:
    the claim on line ``claim``). The code reads the flops as check ``check``'s code line does,
    as ``code`` says, or by default as the file's checks of the design do (else in declaration
    order). ``timeout`` bounds reading the file and the run."""
    from .tools import simulation as S
    req = S.SimRequest(path, design, start, code, list(settings), cycles, trace, check, claim, inputs)

    def work() -> SimRun:
        prog = load(path)
        return S.simulate(req, prog.namespace, prog.find_design(design))
    return _within(timeout, "sim", work)


# --- export ---------------------------------------------------------------------

class Unfinished(Exception):
    """A command ran past its ``--timeout``: nothing it would have written was written (exit 3)."""


def _within(timeout: Optional[float], what: str, work):
    """``work()`` under ``timeout`` through the hard stop; the files it writes are written here,
    only when it finished in time."""
    from .engines.budget import run_bounded
    if timeout is None:
        return work()

    def child(_budget):
        with collected() as outs:
            value = work()
        return value, list(outs)

    value, _, finished = run_bounded(child, timeout)
    if not finished:
        raise Unfinished(f"{what} ran out of time after {timeout:g} s; nothing was written")
    result, outs = value
    for p, data in outs:
        write_output(p, data)
    return result


def export_claim(path: str, check: str, line: int, output: str, timeout: Optional[float] = None) -> dict:
    """Write the claim of check ``check`` on line ``line`` to ``output`` (DIMACS ``.cnf``, or
    AIGER ``.aag``/``.aig``): satisfiable (reachable) exactly when the claim is refuted.
    Returns the counts written. ``timeout`` bounds reading, building and writing."""
    return _within(timeout, "export", lambda: _export_claim(path, check, line, output))


def _export_claim(path: str, check: str, line: int, output: str) -> dict:
    from .tools.export import export_aiger, export_cnf
    chk = load(path).find_check(check)
    claims = [c for c in chk.claims if c.pos.line == line]
    if not claims:
        lines = ", ".join(str(c.pos.line) for c in chk.claims) or "none"
        raise InputError(Pos(path, line, 1), f"check {chk.name} has no claim on line {line} (claims on lines: {lines})")
    ext = Path(output).suffix.lower()
    if ext not in (".cnf", ".aag", ".aig"):
        raise _cmdline(f"a claim is written as DIMACS (.cnf) or AIGER (.aag, .aig): give -o a name "
                       f"ending in one of those, not '{output}'")
    try:
        if ext == ".cnf":
            return export_cnf(chk, claims[0], output)
        return export_aiger(chk, claims[0], output)
    except ValueError as e:
        raise InputError(claims[0].pos, str(e)) from None


def export_design(path: str, design: str, output: str, timeout: Optional[float] = None) -> dict:
    """Write design ``design`` of ``path`` (and its uses) to ``output``, in the format of
    its extension: .aag/.aig AIGER, .blif, .v structural Verilog, .cnl. Returns what was written.
    ``timeout`` bounds reading, building and writing."""
    return _within(timeout, "export", lambda: _export_design(path, design, output))


def _export_design(path: str, design: str, output: str) -> dict:
    from .tools.netlists import FORMATS as DESIGN_FORMATS, NoForm, write_design
    d = load(path).find_design(design)
    if Path(output).suffix.lower() not in DESIGN_FORMATS:
        raise _cmdline(f"a design is written as {', '.join(DESIGN_FORMATS)}: give -o a name ending in one "
                       f"of those, not '{output}'")
    try:
        return write_design(d, output)
    except NoForm as e:
        raise InputError(d.pos, str(e)) from None
    except OSError as e:
        raise _cmdline(f"cannot write '{output}': {e.strerror or e}") from None


def demo_path() -> Path:
    """The shipped example, in a checkout or an installed wheel."""
    here = Path(__file__).resolve().parent
    for cand in (here.parent / "cases" / "demo.cnl", here / "cases" / "demo.cnl"):
        if cand.is_file():
            return cand
    raise FileNotFoundError("the shipped example cases/demo.cnl is missing from this installation")


# --- reports --------------------------------------------------------------------

def render_check(run: CheckRun, radix: str = "dec", columns: Optional[int] = None) -> str:
    """The readable report of a check run; ``radix`` (``auto``, ``dec``, ``bin``, ``hex``) shows its
    codes; ``columns``, a terminal's width, is what the table of verdicts must fit."""
    from . import report
    text = report.text.format_results(run.results, run.widths, radix, columns)
    return "\n".join([f"{e.pos.file}: open: {e.message}" for e in run.unread] + [text])


def render_map(m: MapRun, radix: str = "dec") -> str:
    """The readable map table; ``radix`` shows its codes."""
    from . import report
    return report.text.map_text(m.doc, m.auto_radix if radix == "auto" else radix)


def render_compare(doc: dict) -> str:
    """The readable report of a comparison."""
    from .tools import compare as _compare
    return _compare.format_compare(doc)


def render_sim(s: SimRun, events: bool = False, radix: str = "auto") -> str:
    """The readable table of a simulated run (a table per start code when there are several),
    input and output vectors as values; with ``events``, the firings between clocks of an
    asynchronous design under each row; ``radix`` shows its codes and vectors."""
    from .model.events import unpacked
    from .report.simtable import sim_table
    from .claims.common import code_and_decimal
    m = s.design.model
    parts = []
    if s.order != "declaration":
        parts.append(f"codes read in the bit order of {s.order}")
    for r in s.runs():
        codes = r.codes()
        notes = {t: "SR fault: " + ", ".join(f) for t, f in r.faults().items()}
        evs: dict[int, list[str]] = {}
        for t, st in enumerate(r.steps):
            if not st.settled:
                notes[t] = "; ".join(filter(None, [notes.get(t), "the cascade after this clock did not settle"]))
            if events and st.events:
                evs[t] = [f"  t+{when}: {m.states[f.flop]} -> {f.value}  "
                          f"{code_and_decimal(unpacked(r.code, f.code), len(r.code), radix)}" for when, f in st.events]
        if s.others:
            parts.append(f"from {code_and_decimal(codes[0], len(r.code), radix)}:")
        parts.append(sim_table(codes, len(r.code), r.vectors("in"), r.vectors("out"), radix, notes, evs))
    return "\n\n".join(parts)


def json_check(run: CheckRun) -> str:
    """``check --json``; files not read within the timeout are listed under ``unread``."""
    from . import report
    doc = report.json.claims(run.results)
    if run.unread:
        doc["unread"] = [{"file": e.pos.file, "message": e.message} for e in run.unread]
    return report.json.dumps(doc)


def json_map(m: MapRun) -> str:
    """``map --json``."""
    from . import report
    return report.json.dumps(m.doc)


def json_compare(doc: dict) -> str:
    """``compare --json``."""
    from . import report
    return report.json.dumps(doc)


def json_sim(s: SimRun) -> str:
    """``sim --json``: ``{"trace": [...]}``; with several start codes ``{"runs": [{"from", "trace"}]}``."""
    from . import report
    if not s.others:
        return report.json.dumps_sim([(None, s.iter_entries())])
    return report.json.dumps_sim([(r.codes()[0], r.iter_entries()) for r in s.runs()])


def json_error(e: InputError) -> str:
    """The error document of bad input."""
    from . import report
    return report.json.dumps(report.json.error(e))


def write_junit(run: CheckRun, path: str, open_ok: bool = False) -> None:
    """A JUnit XML report of a check run: one test per claim, one error case per unreadable file.

    An open claim is a failure of type ``open``; with ``open_ok`` it is skipped."""
    from . import report
    errors = [(str(e.pos.file), f"{e.pos}: {e.message}") for e in run.errors]
    report.junit.write_junit(run.results, path, errors, [(str(e.pos.file), e.message) for e in run.unread],
                             open_ok)


def write_junit_error(e: InputError, path: str) -> None:
    """A JUnit XML report of a run that stopped on ``e`` (such as ``no claims in ...``): one error case."""
    from . import report
    report.junit.write_junit([], path, [(str(e.pos.file), f"{e.pos}: {e.message}")])


def write_vcd(s: SimRun, path: str) -> None:
    """The run as an IEEE 1364 value change dump (one run: one start code)."""
    from . import report
    if s.others:
        raise _cmdline("--vcd writes one run: give --from a single code")
    report.vcd.write_vcd(s.design, s.as_steps(), path)


def write_dot(m: MapRun, path: str) -> None:
    """The map's state graph in Graphviz DOT."""
    from . import report
    assert m.graph is not None, "map_check(graph=True) draws the graph"
    write_output(path, report.dot.state_graph_dot(m.graph))


def write_svg(m: MapRun, path: str) -> None:
    """The map's state graph rendered to SVG with Graphviz's dot; an InputError when it cannot be."""
    from . import report
    assert m.graph is not None, "map_check(graph=True) draws the graph"
    try:
        report.dot.render_svg(report.dot.state_graph_dot(m.graph), path)
    except report.dot.RenderError as e:
        raise _cmdline(str(e)) from None


# --- HTML -----------------------------------------------------------------------

RADIXES = ("auto", "dec", "bin", "hex")
"""How codes are shown in the HTML report (``--radix``)."""


def _html_facts(files: list[str], checks: list[Check], opts: Options, radix: str):
    from .report import html as H
    if radix not in RADIXES:
        raise _cmdline(f"unknown radix '{radix}'; the radixes are {', '.join(RADIXES)}")
    return H.RunFacts(files=list(files), designs=sorted({c.design.name for c in checks}),
                      checks=[c.name for c in checks], version=__version__, solver=opts.solver,
                      engine=opts.engine, timeout=opts.timeout, radix=radix)


def write_html_check(run: CheckRun, path: str, opts: Optional[Options] = None, radix: str = "dec") -> None:
    """One self-contained HTML page of a check run: verdicts, a state picture per check, a waveform per trace.

    Each check with a count line gets its unused-code map by exhaustive
    search, bounded by ``opts.timeout`` like a claim; where that search cannot
    run or runs out, its picture is a summary of what the claims found.
    """
    from .claims.common import Options
    from .report import html as H
    from .tools import pictures as P
    opts = opts or Options()
    checks = [c for f in run.files for c in load(f).namespace.checks]
    facts = _html_facts(run.files, checks, opts, radix)
    by_key = {(c.pos.file, c.name): c for c in checks}
    pics = [P.check_picture(c, opts, [r for r in run.results if (r.file, r.check) == (c.pos.file, c.name)])
            for c in checks]
    waves = {}
    for i, r in enumerate(run.results):
        chk = by_key.get((r.file, r.check))
        if not r.trace or chk is None:
            continue
        other = next((c.other.name for c in chk.claims if c.pos.line == r.line and c.other is not None), "")
        waves[i] = H.waveform(P.trace_signals(chk, r), radix, f"w{i}", other)
    write_output(path, H.check_page(run.results, pics, waves, facts))


def write_html_map(m: MapRun, path: str, file: str, opts: Optional[Options] = None, radix: str = "dec") -> None:
    """The map ``m`` (made by ``map_check(file, ..., graph=True)``) as one self-contained HTML page."""
    from .claims.common import Options
    from .report import html as H
    from .tools import pictures as P
    opts = opts or Options()
    chk = load(file).find_check(m.doc["check"])
    facts = _html_facts([file], [chk], opts, radix)
    pic = P.CheckPicture(chk.pos.file, chk.name, chk.design.name, chk.width, m.doc.get("sequence_length"),
                         doc=m.doc, graph=m.graph)
    if m.doc.get("status") == "open":
        pic.note = "the map ran out of time: nothing to draw"
    write_output(path, H.map_page(pic, facts))
