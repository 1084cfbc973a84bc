"""The version of tauspec (one place; recorded in every batch result)."""

__version__ = "0.1.0"
