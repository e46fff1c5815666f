"""Degreewise worksheet functions (the CALIB_* family)."""

VERSION = "0.1.0"
