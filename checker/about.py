"""The version of countersign (one place; the package, the API and the CLI read it here)."""

__version__ = "0.1.0"
