"""The single place the ttvkit version lives."""

__version__ = "0.1.0"
