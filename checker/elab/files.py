"""Files and namespaces: read a file and everything it ``use``s, elaborate it all.

``load_namespace(path)`` reads a file and its uses (each once; a cycle is an
error), elaborates every design and the file's own check blocks.
"""

from __future__ import annotations

import gc
from pathlib import Path
from typing import Optional

from ..errors import InputError, Pos
from ..fileio import read_limited
from ..lang import parse as P
from .design import Design, Namespace
from .flatten import ClockFromInput, check_hierarchy, elaborate_design
from .spec import elaborate_check

MAX_USE_FILES = 1000


def _verilog(path: str, data: bytes) -> P.File:
    from ..lang.verilog import verilog_file
    return verilog_file(path, data)


def _blif(path: str, data: bytes) -> P.File:
    from ..lang.blif import blif_file
    return blif_file(path, data)


def _aiger(path: str, data: bytes) -> P.File:
    from ..lang.aiger import aiger_file
    return aiger_file(path, data)


# ``use`` reads these netlist formats by file extension; anything else is .cnl text
NETLIST_READERS = {".v": _verilog, ".blif": _blif, ".aag": _aiger, ".aig": _aiger}


def read_file(path: str, pos: Optional[Pos] = None) -> P.File:
    """Read and parse one file; a missing or unreadable file, or one that is not a regular
    file (a device, a FIFO), is an InputError, and so is one over the size limit, checked
    before reading."""
    data = read_limited(path, P.MAX_FILE_BYTES, pos or Pos(path, 1, 1), "source file")
    reader = NETLIST_READERS.get(Path(path).suffix.lower())
    if reader is not None:
        return reader(path, data)
    return P.parse_text(path, P.decode_source(path, data))


def _gather(path: str) -> list[P.File]:
    """The file and everything it uses, each read once; a cycle is an error."""
    files: dict[str, P.File] = {}
    order: list[P.File] = []
    onstack: list[str] = []

    def key(p: str) -> str:
        return str(Path(p).resolve())

    # iterative DFS over use edges
    top = read_file(path)
    files[key(path)] = top
    stack: list[tuple[P.File, int]] = [(top, 0)]
    onstack.append(key(path))
    while stack:
        f, i = stack.pop()
        if i < len(f.uses):
            stack.append((f, i + 1))
            u = f.uses[i]
            target = str(Path(f.path).parent / u.path) if not Path(u.path).is_absolute() else u.path
            k = key(target)
            if k in onstack:
                raise InputError(u.pos, f"use cycle: '{u.path}' is already being read")
            if k in files:
                continue
            if len(files) >= MAX_USE_FILES:
                raise InputError(u.pos, f"more than {MAX_USE_FILES} files used (the limit)")
            g = read_file(target, u.pos)
            files[k] = g
            onstack.append(k)
            stack.append((g, 0))
        else:
            onstack.pop()
            order.append(f)
    return order


def load_namespace(path: str) -> Namespace:
    """Read ``path`` and its uses; elaborate every design and the file's own checks."""
    # Reading and elaborating a large file makes some hundred thousand small lists, tuples and
    # dataclasses that live on; the cyclic collector, set off by allocation counts alone, walks
    # all of them again and again (a tenth of a 256-bit tally's whole check). It is paused here;
    # any garbage cycle made meanwhile is collected once it runs again.
    collecting = gc.isenabled()
    gc.disable()
    try:
        return _load_namespace(path)
    finally:
        if collecting:
            gc.enable()


def _load_namespace(path: str) -> Namespace:
    files = _gather(path)
    blocks: dict[str, P.DesignBlock] = {}
    for f in files:
        for d in f.designs:
            old = blocks.get(d.name)
            if old is not None:
                raise InputError(d.pos, f"design '{d.name}' is defined twice (first at {old.pos})")
            blocks[d.name] = d
    check_hierarchy(blocks)  # depth, instances and bits, before anything is flattened
    designs: dict[str, Design] = {}
    part_only: dict[str, InputError] = {}
    for name in blocks:
        try:
            designs[name] = elaborate_design(blocks, name)
        except ClockFromInput as e:  # a stage clocked by its parent: usable as a part only
            part_only[name] = e
    top = files[-1]
    seen: dict[str, Pos] = {}
    checks = []
    for c in top.checks:
        if c.name in seen:
            raise InputError(c.pos, f"check '{c.name}' is defined twice in this file (first at line {seen[c.name].line})")
        seen[c.name] = c.pos
        checks.append(elaborate_check(c, designs, part_only))
    return Namespace(path, designs, checks, [f.path for f in files], part_only)
