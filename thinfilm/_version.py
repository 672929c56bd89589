"""Package version (a leaf module, so that any stage can record it)."""

__version__ = "0.1.0"
