"""The Python API: load files, run their checks, get results shaped like the JSON.

    >>> import checker
    >>> prog = checker.load("cases/demo.cnl")
    >>> for chk in prog.checks:
    ...     for r in chk.run(timeout=30):
    ...         print(r.check, r.claim, r.status)
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Iterable, Optional

from .claims import run_check
from .claims.common import Options
from .elab import Check, Design, Namespace, load_namespace
from .errors import InputError, Pos
from .engines.sat import DEFAULT_SOLVER
from .claims.result import Result


@dataclass
class CheckHandle:
    """One check block, ready to run."""

    spec: Check

    @property
    def name(self) -> str:
        return self.spec.name

    def run(self, timeout: Optional[float] = None, solver: str = DEFAULT_SOLVER, engine: str = "auto") -> list[Result]:
        """Prove or refute every claim of this check; one Result per claim, in written order."""
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


def load(path: str) -> Program:
    """Read and elaborate ``path`` and its ``use`` files; raises InputError on bad input."""
    return Program(load_namespace(str(path)))


def expand_paths(paths: Iterable[str]) -> list[str]:
    """Files named on the command line: a folder stands for its .cnl files, recursively, sorted."""
    out: list[str] = []
    for p in paths:
        q = Path(p)
        if q.is_dir():
            found = sorted(str(f) for f in q.rglob("*.cnl") if f.is_file())
            out.extend(found)
        elif not q.exists():
            raise InputError(Pos(p, 1, 1), f"no such file or folder '{p}'")
        else:
            out.append(p)
    return out
