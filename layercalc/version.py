"""The version of layercalc (one place; the package metadata and outputs read it here)."""

__version__ = "0.1.0"
