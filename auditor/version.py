"""The tool's version (single source; pyproject reads it)."""
__version__ = "0.1.0"
