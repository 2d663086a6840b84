"""Reports: results and documents to text, JSON, VCD, DOT and JUnit XML."""

from . import dot, json, junit, text, vcd

__all__ = ["dot", "json", "junit", "text", "vcd"]
