"""What elaboration produces: flattened designs and checks, bound to their circuit models."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Optional

from ..errors import Pos
from ..lang import parse as P
from ..model import Model
from ..model.simulate import code_value, state_of_code
from ..model.space import CodeSpace

if TYPE_CHECKING:
    from .sequence import Sequence


@dataclass
class Symbol:
    """A declared name after flattening: its kind and its bits."""

    kind: str  # in, out, node, flop, part
    bits: list[str]  # flattened bit names, msb first
    pos: Pos
    msb: Optional[int] = None
    lsb: Optional[int] = None
    design: Optional[str] = None  # for parts


# --- results -------------------------------------------------------------
@dataclass
class Design:
    """A flattened design with its circuit model."""

    name: str
    pos: Pos
    model: Model
    input_vectors: dict[str, list[str]]
    output_vectors: dict[str, list[str]]
    flop_kinds: dict[str, str]
    vectors: dict[str, "Symbol"]  # flattened name -> symbol (kind, bits msb first)
    source: dict[str, P.DesignBlock] = field(default_factory=dict)  # the syntax blocks it was built from

    @property
    def file(self) -> str:
        return self.pos.file


@dataclass
class Rule:
    """One rule of a check: ``kind`` in hold, load, back, step; ``cond`` a literal."""

    kind: str
    cond: int
    pos: Pos
    load_const: Optional[int] = None
    load_bits: Optional[list[int]] = None  # literals, most significant first


@dataclass
class Claim:
    """One claim of a check block."""

    kind: str  # count, recover, always, equal, settle, glitchfree
    pos: Pos
    within: Optional[int] = None  # recover within N
    cond: Optional[int] = None  # recover when / equal after: a literal over inputs
    prop: Optional[int] = None  # always
    other: Optional[Design] = None  # equal
    mode: Optional[str] = None  # equal: None, 'sequence', 'after'
    other_cond: Optional[int] = None  # equal after: COND built in the other design too
    signals: list[tuple[str, int]] = field(default_factory=list)  # glitchfree: (bit name, literal)
    text: str = ""  # the claim as written (``recover within 4 when tick``), from the syntax tree


@dataclass
class Check:
    """An elaborated check block: its design, code bits, sequence, rules, claims."""

    name: str
    pos: Pos
    design: Design
    code: list[int] = field(default_factory=list)  # state indices, most significant first
    code_pos: Optional[Pos] = None
    sequence: Optional["Sequence"] = None
    sequence_pos: Optional[Pos] = None
    rules: list[Rule] = field(default_factory=list)
    claims: list[Claim] = field(default_factory=list)

    @property
    def width(self) -> int:
        return len(self.code)

    @property
    def space(self) -> CodeSpace:
        """The engines' view of this check: the model, the code and the sequence's membership."""
        assert self.sequence is not None, "a code space needs the check's sequence"
        return CodeSpace(self.design.model, list(self.code), self.sequence.member_array,
                         self.sequence.member, self.code_pos or self.pos)

    def code_lits(self) -> list[int]:
        """State literals of the code, least significant first (for arithmetic)."""
        m = self.design.model
        return [m.state_lits[i] for i in reversed(self.code)]

    def code_of(self, state: dict[str, int]) -> int:
        """The code value of a state given as bit name -> 0/1."""
        return code_value(self.design.model, self.code, state)

    def state_of(self, code: int) -> dict[str, int]:
        """The state (bit name -> 0/1) whose code is ``code``."""
        return state_of_code(self.design.model, self.code, code)


@dataclass
class Namespace:
    """A command-line file and everything it uses."""

    path: str
    designs: dict[str, Design]
    checks: list[Check]
    files: list[str]
    part_only: dict = field(default_factory=dict)  # design name -> why it can be used only as a part
