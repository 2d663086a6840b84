"""A model read through a code: the engines' view of a check, without the check.

Engines that reason about codes (the exhaustive search, the search for runs
of unused codes) take a :class:`CodeSpace`: which state bits spell the code,
most significant first, and which codes the intended sequence holds. The
claims floor builds one from each check.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Callable

if TYPE_CHECKING:
    import numpy as np

from ..errors import Pos
from .aig import Aig
from .circuit import Model
from .simulate import code_value, state_of_code


@dataclass
class CodeSpace:
    """``model`` seen through ``code`` (state indices, msb first) and a sequence's membership."""

    model: Model
    code: list[int]
    member_array: Callable[[np.ndarray], np.ndarray]  # uint64 codes -> bool, in the sequence
    member_circuit: Callable[[Aig, list[int]], int]  # (graph, code literals lsb first) -> literal
    where: Pos  # the code line, for errors about the code

    @property
    def width(self) -> int:
        return len(self.code)

    def code_lits(self) -> list[int]:
        """State literals of the code, least significant first (for arithmetic)."""
        return [self.model.state_lits[i] for i in reversed(self.code)]

    def member_lit(self) -> int:
        """A literal of the model's graph: 1 when the current code is in the sequence."""
        return self.member_circuit(self.model.aig, self.code_lits())

    def code_of(self, state: dict[str, int]) -> int:
        """The code value of a state given as bit name -> 0/1."""
        return code_value(self.model, self.code, state)

    def state_of(self, code: int) -> dict[str, int]:
        """The state (bit name -> 0/1) whose code is ``code``; bits outside the code are 0."""
        return state_of_code(self.model, self.code, code)
