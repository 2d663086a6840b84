"""The one circuit model: an and-inverter graph with state, inputs, next-state and outputs."""

from .aig import FALSE, TRUE, Aig, evaluate
from .circuit import Model

__all__ = ["FALSE", "TRUE", "Aig", "Model", "evaluate"]
