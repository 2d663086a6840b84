"""Elaboration: syntax trees to flattened designs (with their models) and checks."""

from .design import Check, Claim, Design, Namespace, Rule, Symbol
from .files import load_namespace, read_file
from .flatten import elaborate_design

__all__ = ["Check", "Claim", "Design", "Namespace", "Rule", "Symbol", "elaborate_design",
           "load_namespace", "read_file"]
