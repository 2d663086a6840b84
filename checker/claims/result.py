"""Verdicts: what each claim returns, in the shape of the JSON report."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Optional

PROVED, REFUTED, OPEN = "proved", "refuted", "open"


@dataclass
class TraceEntry:
    """One clock of a counterexample: the code, and the inputs driving the next step."""

    clock: int
    code: int
    inputs: Optional[dict[str, int]] = None  # None on the last entry when no inputs matter
    other_code: Optional[int] = None  # equal claims: the other design's code
    events: Optional[list[dict]] = None  # asynchronous designs: the firings of this clock, in order

    def to_json(self) -> dict:
        d: dict[str, Any] = {"clock": self.clock, "code": self.code}
        if self.inputs is not None:
            d["inputs"] = dict(self.inputs)
        if self.other_code is not None:
            d["other_code"] = self.other_code
        if self.events is not None:
            d["events"] = [dict(e) for e in self.events]
        return d


@dataclass
class Result:
    """The verdict of one claim, with evidence.

    ``details`` holds the claim-specific JSON fields (``worst``, ``locked``,
    ``expected``, ``actual``, ``depth``, ``engine``...); ``evidence`` the text
    lines printed under the claim in the readable report; ``advice`` lines are
    hints that never change the verdict.
    """

    file: str
    check: str
    claim: str
    line: int
    status: str
    seconds: float = 0.0
    summary: str = ""
    trace: Optional[list[TraceEntry]] = None
    details: dict = field(default_factory=dict)
    evidence: list[str] = field(default_factory=list)
    advice: list[str] = field(default_factory=list)
    text: str = ""  # the claim as written, a label for the readable report (not in the JSON)

    def to_json(self) -> dict:
        d: dict[str, Any] = {"file": self.file, "check": self.check, "claim": self.claim,
                             "line": self.line, "status": self.status,
                             "seconds": round(self.seconds, 4), "summary": self.summary}
        d.update(self.details)
        if self.trace is not None:
            d["trace"] = [t.to_json() for t in self.trace]
        if self.advice:
            d["advice"] = list(self.advice)
        return d
