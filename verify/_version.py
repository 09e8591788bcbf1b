"""Version of the ctally distribution (read by hatchling)."""

__version__ = "0.1.0"
