"""Version of lensinfer (single source, read by hatchling)."""

__version__ = "0.1.0.dev0"
