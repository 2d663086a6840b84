"""The solver countersign uses unless told otherwise: a name, importable without loading a solver."""

DEFAULT_SOLVER = "cadical195"
"""python-sat's CaDiCaL 1.9.5."""
